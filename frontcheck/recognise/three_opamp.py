"""Discrete three-op-amp instrumentation amplifier (docs/engineering.md sec. 3).

A1 (+in = IN+, output o1, Rf1 from o1 to its inverting node m1) and A2 (+in = IN-, o2, Rf2
from o2 to m2) share the gain network RG between m1 and m2; a difference stage (Ra: o2 -> n,
Rb: n -> OUT, Rc: o1 -> p, Rd: p -> REF, the R1..R4 of the difference amplifier) subtracts
their outputs.

Variants: Rf1 != Rf2; RG made of several resistors in series or parallel (role 'RG' written
as 'R9+R10' or 'R9||R10'); a split RG with a centre tap (roles 'RGa' from m1 and 'RGb' from
m2 to the tap, the tap left as an internal node of the stage and named in the notes); no RG at
all (two voltage followers feeding a difference stage, first-stage gain 1, as in differential
probes).
"""

from __future__ import annotations

from frontcheck.circuit import Stage, SubCircuit
from frontcheck.recognise import difference
from frontcheck.recognise.common import Group, OpUnit, NetlistView, supply_notes
from frontcheck.recognise.input_pair import first_stage as _input_stage

__all__ = ["find"]


def find(view: NetlistView, used: set[str]) -> list[Stage]:
    out = []
    for d in view.units:
        if d.name in used or not (d.inn and d.inp and d.out):
            continue
        gn = view.groups(d.inn, ports={d.out, d.inp})
        gp = view.groups(d.inp, ports={d.out, d.inn})
        if d.out not in gn or len(gn) != 2 or len(gp) != 2:
            continue
        s_n = next(x for x in gn if x != d.out)
        for a2 in view.unit_by_out.get(s_n, []):
            for s_p in gp:
                for a1 in view.unit_by_out.get(s_p, []):
                    if len({a1.name, a2.name, d.name}) < 3 or used & {a1.name, a2.name}:
                        continue
                    first = _input_stage(view, a1, a2)
                    if first is None:
                        continue
                    m = difference.match(view, d, inputs=(s_p, s_n))
                    if m is None:
                        continue
                    out.append(_stage(view, a1, a2, m, first))
                    used.update({a1.name, a2.name, d.name})
                    break
                if d.name in used:
                    break
            if d.name in used:
                break
    return out


def _stage(view: NetlistView, a1: OpUnit, a2: OpUnit, m: difference.DiffMatch, first) -> Stage:
    rf1, rf2, rg, taps = first
    notes = list(m.notes)
    groups: list[Group] = [g for g in (rf1, rf2, rg) if g is not None]
    for _, ga, gb in taps:
        groups += [ga, gb]
    groups += [m.r1, m.r2, m.r3, m.r4]
    elems = [e for g in groups for e in g.elements]
    resistors = [view.resistor(e, notes) for e in elems]
    ops = [view.opamp(u, notes) for u in (a1, a2, m.unit)]
    notes += supply_notes([a1, a2, m.unit])
    roles = {"Ra": m.r1.expr, "Rb": m.r2.expr, "Rc": m.r3.expr, "Rd": m.r4.expr}
    if rf1 is not None:
        roles.update({"Rf1": rf1.expr, "Rf2": rf2.expr})
    rg_parts = [rg.expr] if rg is not None else []
    for x, ga, gb in taps:
        rg_parts.append(f"{ga.expr}+{gb.expr}")
        if len(taps) == 1:
            roles.update({"RGa": ga.expr, "RGb": gb.expr})
        notes.append(f"RG is split: {ga.expr} and {gb.expr} meet at net {x!r} (centre tap)")
        others = sorted({f"{r}.{p}" for r, p in view.pin_nodes(x)} -
                        {f"{e.ref}.{p}" for e in ga.elements + gb.elements
                         for r, p in view.pin_nodes(x) if r == e.ref})
        if others:
            notes.append(f"the centre tap {x!r} also connects to {', '.join(others)}; analysis "
                         "solves and varies that load with the stage (at the tolerance corners it "
                         "turns common mode into differential signal)")
    if rg_parts:
        roles["RG"] = "||".join(f"({p})" if len(rg_parts) > 1 and "+" in p else p for p in rg_parts)
    elif rf1 is None:
        notes.append("no gain resistor: the input amplifiers are voltage followers (first-stage gain 1)")
    else:
        notes.append("no gain resistor between the input amplifiers' inverting nodes: "
                     "first-stage gain 1")
    nets = {r.a for r in resistors} | {r.b for r in resistors}
    circuit = SubCircuit(
        resistors=resistors,
        capacitors=view.capacitors_within(nets, notes, driven={a1.inp, a2.inp, m.ref}),
        opamps=ops,
        ports={"in_p": a1.inp, "in_n": a2.inp, "ref": m.ref, "out": m.unit.out},
        rails=view.rails_for(ops, nets),
    )
    refs = sorted({a1.ref, a2.ref, m.unit.ref} | {e.ref for e in elems})
    names = [a1.name, a2.name, m.unit.name]
    return Stage(id="+".join(names), kind="three-opamp", references=refs, amplifiers=names,
                 roles=roles, circuit=circuit, notes=notes)
