"""Discrete two-op-amp instrumentation amplifier (common in low-cost biopotential boards).

A1: non-inverting on one input (its +in is the stage's ``in_n``), inverting node m1 with
R1 from m1 to REF and R2 from its output o1 back to m1. A2: R3 from o1 to its inverting node
m2, R4 from m2 to the output, +in = the other input (``in_p``). An optional RG joins m1 and
m2. With R2/R1 = R3/R4 (well matched)

    Vout = Vref + (1 + R4/R3 + 2 R4/RG) (V(in_p) - V(in_n))

[source: C. Kitchin, L. Counts, *A Designer's Guide to Instrumentation Amplifiers*, 3rd ed.,
Analog Devices, 2006, ch. 2, two-op-amp in-amp [from memory]; the names R1..R4 here are ours].

Roles: 'R1' (m1 -> REF), 'R2' (o1 -> m1), 'R3' (o1 -> m2), 'R4' (m2 -> out), 'RG' (m1 - m2,
absent when not fitted).
"""

from __future__ import annotations

from frontcheck.circuit import Stage, SubCircuit
from frontcheck.recognise import difference
from frontcheck.recognise.common import OpUnit, NetlistView, supply_notes

__all__ = ["find"]


def _match(view: NetlistView, a1: OpUnit, a2: OpUnit, r3, gn2: dict):
    m1, o1, p1 = a1.inn, a1.out, a1.inp
    m2, o2, p2 = a2.inn, a2.out, a2.inp
    if not (m1 and o1 and p1) or len({m1, o1, p1}) < 3 or p1 == p2:
        return None
    if view.driven_by_output(p1) or view.fixed(p1):
        return None
    rg = None
    rest = dict(gn2)
    if rest:
        if set(rest) != {m1}:
            return None
        rg = rest.pop(m1)
    g1 = view.groups(m1, ports={o1, p1, m2, o2, p2})
    r2 = g1.pop(o1, None)
    if r2 is None:
        return None
    rg1 = g1.pop(m2, None)
    if (rg1 is None) != (rg is None) or len(g1) != 1:
        return None
    (ref, r1), = g1.items()
    if ref in (p1, p2, o2) or ref == o1:
        return None
    if p2 == ref or difference.ref_score(view, p2) >= 2:
        return None       # A2's + input is a reference: an amplifier cascade, not an in-amp
    for inp in (p1, p2):
        if any(view.driven_by_output(far) for far in view.groups(inp, ports={m1, m2})):
            return None   # an input fed from another amplifier through a divider
    return r1, r2, r3, rg, ref


def find(view: NetlistView, used: set[str]) -> list[Stage]:
    out = []
    for a2 in view.units:
        if a2.name in used:
            continue
        m2, o2, p2 = a2.inn, a2.out, a2.inp
        if not (m2 and o2 and p2) or len({m2, o2, p2}) < 3:
            continue
        if view.driven_by_output(p2) or view.fixed(p2):
            continue
        gn2 = view.groups(m2, ports={o2, p2})
        r4 = gn2.pop(o2, None)
        if r4 is None:
            continue
        for o1 in list(gn2):
            for a1 in view.unit_by_out.get(o1, []):
                if a1.name in used or a1.name == a2.name:
                    continue
                rest = {k: v for k, v in gn2.items() if k != o1}
                got = _match(view, a1, a2, gn2[o1], rest)
                if got is None:
                    continue
                out.append(_stage(view, a1, a2, r4, *got))
                used.update({a1.name, a2.name})
                break
            if a2.name in used:
                break
    return out


def _stage(view: NetlistView, a1: OpUnit, a2: OpUnit, r4, r1, r2, r3, rg, ref) -> Stage:
    notes: list[str] = []
    groups = [r1, r2, r3, r4] + ([rg] if rg is not None else [])
    elems = [e for g in groups for e in g.elements]
    resistors = [view.resistor(e, notes) for e in elems]
    ops = [view.opamp(u, notes) for u in (a1, a2)]
    notes += supply_notes([a1, a2])
    roles = {"R1": r1.expr, "R2": r2.expr, "R3": r3.expr, "R4": r4.expr}
    if rg is not None:
        roles["RG"] = rg.expr
    else:
        notes.append("no gain resistor between the inverting nodes: gain 1 + R4/R3")
    nets = {r.a for r in resistors} | {r.b for r in resistors}
    circuit = SubCircuit(
        resistors=resistors,
        capacitors=view.capacitors_within(nets, notes, driven={a1.inp, a2.inp, ref}),
        opamps=ops,
        ports={"in_p": a2.inp, "in_n": a1.inp, "ref": ref, "out": a2.out},
        rails=view.rails_for(ops, nets),
    )
    refs = sorted({a1.ref, a2.ref} | {e.ref for e in elems})
    names = [a1.name, a2.name]
    return Stage(id="+".join(names), kind="two-opamp", references=refs, amplifiers=names,
                 roles=roles, circuit=circuit, notes=notes)
