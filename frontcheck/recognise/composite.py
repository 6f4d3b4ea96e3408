"""A composite front end: a discrete in-amp first stage (two op-amps, a feedback resistor on
each, a gain network between their inverting inputs; :mod:`.input_pair`) whose two outputs
drive the inputs of an integrated in-amp, the second stage (docs/engineering.md sec. 3b).

It is one stage of kind ``composite``, never a differential-output pair beside an in-amp or
two difference amplifiers. Its roles name each part's place in words: ``first_stage_p`` and
``first_stage_n`` (the op-amp units on IN+ and IN-), ``feedback_p``, ``feedback_n`` and
``gain_resistor`` (G1 = 1 + (Rf1 + Rf2)/RG), ``second_stage`` (the integrated part), its own
external gain parts as ``second_stage_RG`` (``second_stage_RF`` ...) and, where each output
reaches the in-amp through one series resistor branch (an input filter's or a protection
resistor), that branch as ``second_stage_input_p`` / ``second_stage_input_n``.

* With part data for the integrated in-amp, the stage's SubCircuit is the whole chain (the
  pair, then the part expanded by :mod:`.integrated`), from the pair's + inputs to the part's
  OUT, referred to its REF: the gain is G1 x G2. ``Stage.first_stage`` holds the pair alone
  (ports 'in_p', 'in_n', 'out', 'out_n') so that analysis states G1 with its own worst case.
* Without part data the SubCircuit is the pair alone, read as the differential output
  o+ - o- (as a ``diff-output`` stage): G1 is stated and G2 needs part data
  (``Stage.first_stage`` is None). The integrated part stays in ``Recognition.unsupported``,
  so the rules that read only its wiring still run on it.
"""

from __future__ import annotations

from frontcheck.circuit import Stage, SubCircuit
from frontcheck.recognise import input_pair
from frontcheck.recognise.common import Unsupported, NetlistView, supply_notes

__all__ = ["KIND", "find"]

KIND = "composite"


def find(view: NetlistView, used: set[str], stages: list[Stage],
         unsupported: list[Unsupported]) -> list[Stage]:
    """Composite stages among unclaimed op-amp pairs whose outputs are an integrated in-amp's
    two inputs. A matching integrated stage (part data) is taken out of ``stages`` and becomes
    the second stage; unit names are added to ``used``."""
    out: list[Stage] = []
    for pair in input_pair.candidates(view, used):
        if pair.followers:
            continue
        where, ref = input_pair.destination(view, pair)
        o_p, o_n = pair.outputs
        series: tuple = ()
        if where in ("inamp", "crossed"):
            ins = (o_p, o_n) if where == "inamp" else (o_n, o_p)
        else:
            found = _through_series(view, pair)
            if found is None:
                continue
            ins, where, series = found
        second = next((s for s in stages if s.kind == "integrated-inamp"
                       and (s.circuit.ports.get("in_p"), s.circuit.ports.get("in_n")) == ins),
                      None)
        lacking = next((u for u in unsupported if u.kind == "integrated-inamp"
                        and (u.pins.get("in_p"), u.pins.get("in_n")) == ins), None)
        if second is None and lacking is None:
            continue
        if second is not None:
            stages.remove(second)
        out.append(_stage(view, pair, second, lacking, crossed=where == "crossed",
                          series=series))
        used.update(u.name for u in pair.units)
    return out


def _through_series(view: NetlistView, pair: input_pair.InputPair):
    """The in-amp inputs the pair's outputs reach each through one series resistor branch (an
    input filter's resistors, a protection resistor), or directly: ((in-amp IN+ net, IN- net),
    'inamp' or 'crossed', (branch from o+, branch from o-)); None when they reach no one
    in-amp's two inputs so."""
    from frontcheck.component import pin_role

    reach = []
    for o in pair.outputs:
        ends = {o: None}
        feedback = {g.far for g in (pair.rf_p, pair.rf_n) if g is not None}
        for far, g in view.groups(o, ports=set(pair.outputs) | set(pair.inputs)).items():
            if far not in feedback and not view.fixed(far):
                ends[far] = g
        pins = {}
        for net, g in ends.items():
            for r, pin in view.pin_nodes(net):
                role = pin_role(view.comps[r].pins[pin]) if view.kind.get(r) == "inamp" else None
                if role in ("inp", "inn"):
                    pins[(r, role)] = (net, g)
        reach.append(pins)
    for ref in sorted({r for r, _ in reach[0]} & {r for r, _ in reach[1]}):
        for roles, where in ((("inp", "inn"), "inamp"), (("inn", "inp"), "crossed")):
            a, b = reach[0].get((ref, roles[0])), reach[1].get((ref, roles[1]))
            if a is None or b is None or (a[1] is None and b[1] is None):
                continue
            ins = (a[0], b[0]) if where == "inamp" else (b[0], a[0])
            return ins, where, (a[1], b[1])
    return None


def _pair_circuit(view: NetlistView, pair: input_pair.InputPair, notes: list[str]):
    resistors = [view.resistor(e, notes) for g in pair.groups() for e in g.elements]
    ops = [view.opamp(u, notes) for u in pair.units]
    nets = {r.a for r in resistors} | {r.b for r in resistors}
    (i_p, i_n), (o_p, o_n) = pair.inputs, pair.outputs
    return SubCircuit(
        resistors=resistors,
        capacitors=view.capacitors_within(nets, notes, driven={i_p, i_n}),
        opamps=ops,
        ports={"in_p": i_p, "in_n": i_n, "out": o_p, "out_n": o_n},
        rails=view.rails_for(ops, nets),
    )


def _stage(view: NetlistView, pair: input_pair.InputPair, second: Stage | None,
           lacking: Unsupported | None, crossed: bool, series: tuple = ()) -> Stage:
    notes: list[str] = []
    first = _pair_circuit(view, pair, notes)
    links = [g for g in series if g is not None]
    link_res = [view.resistor(e, notes) for g in links for e in g.elements]
    notes += supply_notes(pair.units)
    ic = second.amplifiers[0] if second is not None else lacking.ref
    ic_roles = dict(second.roles if second is not None else lacking.roles)
    roles = {"first_stage_p": pair.a_p.name, "first_stage_n": pair.a_n.name}
    roles.update({k: v for k, v in (("feedback_p", pair.rf_p.expr),
                                    ("feedback_n", pair.rf_n.expr),
                                    ("gain_resistor", pair.rg_expr())) if v})
    for key, g in zip(("second_stage_input_p", "second_stage_input_n"), series):
        if g is not None:
            roles[key] = g.expr
    if links:
        notes.append("the first stage reaches the second through "
                     + " and ".join(g.expr for g in links) + " (series resistors into the "
                     "in-amp's high-impedance inputs: no signal current, so no change to the "
                     "gain with ideal inputs)")
    roles["second_stage"] = ic
    roles.update({f"second_stage_{k}": v for k, v in ic_roles.items()
                  if not v.startswith(f"{ic}.")})        # external parts only
    if not pair.rg_expr():
        notes.append("no gain resistor between the first-stage inverting inputs: G1 = 1")
    if crossed:
        notes.append(f"the first stage's IN+ side ({pair.a_p.name}) drives {ic}'s inverting "
                     "input: the front end inverts (total gain negative)")
    refs = {u.ref for u in pair.units} | {e.ref for g in pair.groups() + links for e in g.elements}
    names = [u.name for u in pair.units] + [ic]
    if second is None:
        notes.append(f"{ic} (the integrated second stage) has no part data: the figures are "
                     f"those of the first stage's differential output {pair.outputs[0]} - "
                     f"{pair.outputs[1]} (G1); G2 and the total gain G1 x G2 need {ic}'s part "
                     "data (docs/engineering.md sec. 3b)")
        refs |= {ic} | {p for v in ic_roles.values() for p in _refs_in(v)}
        return Stage(id="+".join(names), kind=KIND, references=sorted(refs), amplifiers=names,
                     roles=roles, circuit=first, notes=notes)
    sub = second.circuit
    nets = {x for r in link_res for x in (r.a, r.b)}
    chain = SubCircuit(
        resistors=first.resistors + link_res + sub.resistors,
        capacitors=_unique(first.capacitors + view.capacitors_within(nets, notes)
                           + sub.capacitors),
        opamps=first.opamps + sub.opamps,
        ports={"in_p": first.ports["in_p"], "in_n": first.ports["in_n"],
               "ref": sub.ports["ref"], "out": sub.ports["out"]},
        rails={**first.rails, **sub.rails},
    )
    notes += second.notes
    refs |= set(second.references)
    return Stage(id="+".join(names), kind=KIND, references=sorted(refs), amplifiers=names,
                 roles=roles, circuit=chain, notes=notes, first_stage=first)


def _unique(caps: list) -> list:
    seen: set[str] = set()
    return [c for c in caps if not (c.name in seen or seen.add(c.name))]


def _refs_in(expr: str) -> list[str]:
    import re

    return re.findall(r"[A-Za-z#_]+\d+[A-Za-z]?", expr)
