"""The input stage of an in-amp on its own: two op-amps, each with a feedback resistor from its
output to its inverting input, a gain resistor between the two inverting inputs, the signal on
the two + inputs and the two outputs going on as a differential pair (to a fully differential
amplifier or an ADC) rather than into a difference stage (docs/engineering.md sec. 3, the first
stage of the three-op-amp in-amp: differential gain 1 + (Rf1 + Rf2)/RG, common mode passed at
gain 1; sec. 3a says what CMRR means for such a pair).

Such a pair is a stage of kind ``diff-output``: its SubCircuit has the ports 'in_p' (the +
input of the first op-amp), 'in_n', 'out' (the first op-amp's output) and 'out_n' (the
second's), and analysis reads the differential output out - out_n. It is never reported as two
broken difference amplifiers, whose suggested fix (a resistor from a + input to a reference)
would break it. Role names are words ('feedback_p', 'feedback_n', 'gain_resistor'), never
letters-and-digits that read like the design's own reference designators. A gain resistor
without a value ('R', 'RG', '?', empty) is a near miss naming it, and the pair is accounted for
without numbers.

:func:`input_pair` is the pair test on its own, for recognisers of larger stages built on such
a pair.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from frontcheck.circuit import Stage, SubCircuit
from frontcheck.recognise.common import Group, NearMiss, OpUnit, NetlistView, supply_notes
from frontcheck.recognise.input_pair import partners
from frontcheck.recognise.three_opamp import _input_stage

__all__ = ["InputPair", "KIND", "ROLES", "find", "input_pair"]

KIND = "diff-output"
#: Role names of the pair's parts (words, so that no role reads like a reference designator);
#: the two halves of a gain resistor split at a centre tap are the last two.
ROLES = ("feedback_p", "feedback_n", "gain_resistor", "gain_resistor_p", "gain_resistor_n")


@dataclass
class InputPair:
    a1: OpUnit                     # + input side: its output is the pair's 'out'
    a2: OpUnit                     # - input side: its output is 'out_n'
    feedback_1: Group
    feedback_2: Group
    gain_resistor: Group | None    # between the inverting inputs directly
    gain: float                    # differential gain, NaN when a value cannot be read
    taps: list = field(default_factory=list)   # (centre-tap net, half from m1, half from m2)

    def rg_expr(self) -> str:
        """The whole gain network: 'R5', 'R5+R9' (split at a centre tap), '(R5+R9)||R8'."""
        parts = [self.gain_resistor.expr] if self.gain_resistor is not None else []
        parts += [f"{ga.expr}+{gb.expr}" for _, ga, gb in self.taps]
        return "||".join(f"({p})" if len(parts) > 1 and "+" in p else p for p in parts)

    def reason(self, name: str) -> str:
        """Why unit ``name`` of a pair without a readable gain is in no analysed stage."""
        other = self.a2.name if name == self.a1.name else self.a1.name
        rg = self.rg_expr() or "the gain network"
        return (f"differential-output in-amp input stage with {other}: gain 1 + "
                f"({self.feedback_1.expr} + {self.feedback_2.expr})/{rg} not readable (the gain "
                "resistor has no value), so not analysed")


def input_pair(view: NetlistView, a1: OpUnit, a2: OpUnit) -> InputPair | None:
    """``a1`` and ``a2`` wired as an in-amp input stage with a gain network between their
    inverting inputs (one resistor or group, or halves meeting at a centre tap), or None
    (followers, other parts on an inverting input). ``gain`` is NaN when a value cannot be
    read."""
    found = _input_stage(view, a1, a2)
    if found is None or found[0] is None:
        return None
    rf1, rf2, rg, taps = found
    if rg is None and not taps:
        return None                          # no gain network: two unity-gain followers
    g = 1.0 / view.group_ohms(rg) if rg is not None else 0.0
    for _, ga, gb in taps:
        g += 1.0 / (view.group_ohms(ga) + view.group_ohms(gb))
    ohms = 1.0 / g if g else math.inf
    total = view.group_ohms(rf1) + view.group_ohms(rf2)
    gain = 1 + total / ohms if math.isfinite(ohms) and ohms > 0 else math.nan
    return InputPair(a1, a2, rf1, rf2, rg, gain, list(taps))


def find(view: NetlistView, used: set[str]) -> tuple[list[Stage], list[InputPair], list[NearMiss]]:
    """Stages of unclaimed op-amp pairs wired as an in-amp input stage (run after the
    recognisers whose stages contain such a pair), the pairs whose gain resistor has no value
    (accounted for, not analysed) and their near misses. Unit names are added to ``used``."""
    stages: list[Stage] = []
    unread: list[InputPair] = []
    misses: list[NearMiss] = []
    units = [u for u in view.units if u.name not in used]
    later = partners(view, units)
    for i, a1 in enumerate(units):
        for a2 in (units[j] for j in later[i]):
            if {a1.name, a2.name} & used:
                continue
            pair = input_pair(view, a1, a2)
            if pair is None:
                continue
            used.update({a1.name, a2.name})
            if math.isfinite(pair.gain):
                stages.append(_stage(view, pair))
                break
            unread.append(pair)
            groups = ([pair.gain_resistor] if pair.gain_resistor is not None else []) + \
                [g for _, ga, gb in pair.taps for g in (ga, gb)]
            what = {r: "gain resistor" for g in groups for r in g.refs}
            for g in (pair.feedback_1, pair.feedback_2):
                what.update({r: "feedback resistor" for r in g.refs})
            bad = next((r for r in what if not math.isfinite(view.ohms(r))), next(iter(what)))
            refs = sorted({a1.ref, a2.ref, *(r for g in groups for r in g.refs)} | {bad})
            misses.append(NearMiss(
                "inamp-input", refs,
                f"{a1.name}/{a2.name} form an in-amp input stage, but the {what[bad]} {bad} has "
                f"no value ('{view.comps[bad].value}'): the gain cannot be stated",
                bad, f"value of the {what[bad]} {bad}", view.location(bad)))
            break
    return stages, unread, misses


def _stage(view: NetlistView, pair: InputPair) -> Stage:
    a1, a2 = pair.a1, pair.a2
    notes: list[str] = []
    groups = [pair.feedback_1, pair.feedback_2] + (
        [pair.gain_resistor] if pair.gain_resistor is not None else [])
    for x, ga, gb in pair.taps:
        groups += [ga, gb]
        notes.append(f"the gain resistor is split: {ga.expr} and {gb.expr} meet at net {x!r} "
                     "(centre tap); a load on the tap is solved and varied with the stage")
    elems = [e for g in groups for e in g.elements]
    resistors = [view.resistor(e, notes) for e in elems]
    ops = [view.opamp(u, notes) for u in (a1, a2)]
    notes += supply_notes([a1, a2])
    notes.append(f"differential output {a1.out} - {a2.out}: the pair passes the input common "
                 "mode to both outputs at gain 1; the stage it feeds must reject it "
                 "(docs/engineering.md sec. 3a)")
    roles = {"feedback_p": pair.feedback_1.expr, "feedback_n": pair.feedback_2.expr,
             "gain_resistor": pair.rg_expr()}
    if len(pair.taps) == 1 and pair.gain_resistor is None:
        roles.update({"gain_resistor_p": pair.taps[0][1].expr,
                      "gain_resistor_n": pair.taps[0][2].expr})
    nets = {r.a for r in resistors} | {r.b for r in resistors}
    circuit = SubCircuit(
        resistors=resistors,
        capacitors=view.capacitors_within(nets, notes, driven={a1.inp, a2.inp}),
        opamps=ops,
        ports={"in_p": a1.inp, "in_n": a2.inp, "out": a1.out, "out_n": a2.out},
        rails=view.rails_for(ops, nets),
    )
    refs = sorted({a1.ref, a2.ref} | {e.ref for e in elems})
    names = [a1.name, a2.name]
    return Stage(id="+".join(names), kind=KIND, references=refs, amplifiers=names,
                 roles=roles, circuit=circuit, notes=notes)
