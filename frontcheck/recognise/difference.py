"""Discrete difference amplifier: one op-amp and four resistors (docs/engineering.md sec. 1).

Roles: R1 from the inverting-side input to the inverting node n, R2 from n to the output, R3
from the non-inverting-side input to the non-inverting node p, R4 from p to REF. Each role may
be several resistors (series through an untouched joint, or in parallel); ``Stage.roles``
writes them as 'R5+R6' or 'R13||R37'.

What is not part of the stage: series resistors and RC filters in front of R1/R3 (the port is
the far end of R1/R3), capacitors across R2 or R4 (carried in the SubCircuit, open at DC).

A difference stage must take a differential signal: two inputs that are different nets and not
supplies. An inverting amplifier whose + input sits on a divider between supplies, or a
non-inverting amplifier with an input attenuator, has the same four resistors but one input on a
supply: it stays silent. The exception is a shunt: an input on ground (or any supply) is a
legitimate difference input when a low-value resistor joins the two inputs (low-side current
sensing).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

from frontcheck.circuit import Stage, SubCircuit
from frontcheck.recognise.common import Group, NearMiss, OpUnit, NetlistView, supply_notes

__all__ = ["DiffMatch", "match", "stage_from_match", "find", "near_misses"]

# A resistor joining the two inputs counts as a sense shunt when it is this much smaller than
# the input resistors (common practice: shunts are milliohms to ohms, input resistors kilohms).
SHUNT_RATIO = 0.01

_REF_NAME = re.compile(r"REF|MID|HALF|VCM|BIAS|VGND|/2$|\{SLASH\}2$|V(?:CC|DD)_?2$", re.I)


@dataclass
class DiffMatch:
    unit: OpUnit
    r1: Group
    r2: Group
    r3: Group
    r4: Group
    s_n: str          # far end of R1: the inverting-side input port
    s_p: str          # far end of R3: the non-inverting-side input port
    ref: str          # far end of R4
    notes: list[str] = field(default_factory=list)


def _ratio_error(view: NetlistView, r1: Group, r2: Group, r3: Group, r4: Group) -> float:
    try:
        a = view.group_ohms(r2) / view.group_ohms(r1)
        b = view.group_ohms(r4) / view.group_ohms(r3)
        e = abs(math.log(a / b))
    except (ZeroDivisionError, ValueError):
        return math.nan
    return e


def ref_score(view: NetlistView, net: str, s_n: str | None = None) -> int:
    """How much a net looks like a reference: supplies and ground most, then a net shared with
    the inverting input (shunt sensing across the reference), a buffer output or a net named as
    a reference or mid-supply."""
    if view.fixed(net):
        return 3
    if net == s_n:
        return 2
    if _REF_NAME.search(net):
        return 2
    for u in view.unit_by_out.get(net, []):
        if u.inn == u.out:          # a follower drives it
            return 2
    return 0


def match(view: NetlistView, u: OpUnit, inputs: tuple[str, str] | None = None) -> DiffMatch | None:
    """The four resistor roles around op-amp unit ``u``, or None when it is not wired as a
    difference stage. ``inputs`` (non-inverting side, inverting side) forces which far nets
    are inputs (used by the in-amp recognisers, whose inputs are op-amp outputs)."""
    n, p, o = u.inn, u.inp, u.out
    if not (n and p and o) or len({n, p, o}) < 3:
        return None
    if view.driven_by_output(p) or any(x is not u for x in view.unit_by_out.get(n, [])):
        return None
    if view.fixed(p) or view.fixed(n):
        return None            # an input node on a supply is no summing node
    gn = view.groups(n, ports={o, p})
    gp = view.groups(p, ports={o, n})
    r2 = gn.pop(o, None)
    notes: list[str] = []
    if r2 is None or o in gp or len(gn) != 1:
        return None
    if len(gp) == 3:
        gp = _split_r4(view, u, gp, notes)
    if gp is None or len(gp) != 2:
        return None
    (s_n, r1), = gn.items()
    if s_n in (p, o):
        return None
    (a, ga), (b, gb) = gp.items()
    if o in (a, b) or n in (a, b):
        return None
    if inputs is not None:
        want_p, want_n = inputs
        if s_n != want_n or want_p not in (a, b):
            return None
        r3, r4, s_p, ref = (ga, gb, a, b) if a == want_p else (gb, ga, b, a)
        return DiffMatch(u, r1, r2, r3, r4, s_n, s_p, ref, notes)
    e1 = _ratio_error(view, r1, r2, ga, gb)     # R3 = a-branch, REF = b
    e2 = _ratio_error(view, r1, r2, gb, ga)     # R3 = b-branch, REF = a
    sa, sb = ref_score(view, a, s_n), ref_score(view, b, s_n)
    pick_b_as_ref: bool
    if not math.isnan(e1) and not math.isnan(e2) and abs(e1 - e2) > 0.05:
        pick_b_as_ref = e1 < e2
    elif sa != sb:
        pick_b_as_ref = sb > sa
    else:
        pick_b_as_ref = a > b    # stable, arbitrary: say so
        notes.append(f"{u.name}: the resistor ratios and nets do not tell which of "
                     f"{a!r} and {b!r} is the reference; {b if pick_b_as_ref else a!r} assumed")
    if pick_b_as_ref:
        return DiffMatch(u, r1, r2, ga, gb, s_n, a, b, notes)
    return DiffMatch(u, r1, r2, gb, ga, s_n, b, a, notes)


def _split_r4(view: NetlistView, u: OpUnit, gp: dict[str, Group], notes: list[str]):
    """R4 split into two resistors to two supplies (a Thevenin reference, common on single
    supplies): merge them into one R4 branch whose port is one of the two supply nets; the
    other stays a fixed net of the stage. None when the three branches are not of that form."""
    fixed = [x for x in gp if view.fixed(x)]
    if len(fixed) != 2:
        return None
    (sig,) = [x for x in gp if x not in fixed]
    unknown = [x for x in fixed if view.rail(x) is None]
    if len(unknown) > 1:
        return None            # neither supply's voltage is known: no reference to speak of
    nonzero = [x for x in fixed if (view.rail(x) is not None and view.rail(x).value != 0.0)]
    port = unknown[0] if unknown else (nonzero[0] if nonzero else sorted(fixed)[0])
    other = next(x for x in fixed if x != port)
    merged = Group(gp[port].near, port, gp[port].chains + gp[other].chains)
    notes.append(f"{u.name}: R4 is split, {gp[port].expr} to {port!r} and {gp[other].expr} to "
                 f"{other!r} (a Thevenin reference); the 'ref' port is {port!r}")
    return {sig: gp[sig], port: merged}


def _has_shunt(view: NetlistView, m: DiffMatch) -> bool:
    """A low-value resistor joins the two inputs: the stage senses the voltage across it."""
    limit = SHUNT_RATIO * min(view.group_ohms(m.r1), view.group_ohms(m.r3))
    g = view.groups(m.s_p, ports={m.s_n}).get(m.s_n)
    if g is None:
        return False
    v = view.group_ohms(g)
    return not math.isnan(v) and (math.isnan(limit) or v <= limit)


def differential_inputs(view: NetlistView, m: DiffMatch) -> bool:
    """True when the stage takes a differential signal (see the module docstring)."""
    if m.s_n == m.s_p:
        return False
    if view.fixed(m.s_n) or view.fixed(m.s_p):
        return _has_shunt(view, m)
    return True


def stage_from_match(view: NetlistView, m: DiffMatch) -> Stage:
    notes = list(m.notes)
    elems = m.r1.elements + m.r2.elements + m.r3.elements + m.r4.elements
    resistors = [view.resistor(e, notes) for e in elems]
    op = view.opamp(m.unit, notes)
    notes += supply_notes([m.unit])
    nets = {r.a for r in resistors} | {r.b for r in resistors}
    roles = {"R1": m.r1.expr, "R2": m.r2.expr, "R3": m.r3.expr, "R4": m.r4.expr}
    if m.s_n == m.ref:
        notes.append(f"the inverting-side input and REF are one net ({m.ref!r}): the stage "
                     "measures the voltage between its + input and its reference")
    for role, g in (("R1", m.r1), ("R2", m.r2), ("R3", m.r3), ("R4", m.r4)):
        if view.is_zero(g):
            notes.append(f"{role} ({g.expr}) is 0 ohm")
    circuit = SubCircuit(
        resistors=resistors,
        capacitors=view.capacitors_within(nets, notes, driven={m.s_p, m.s_n, m.ref}),
        opamps=[op],
        ports={"in_p": m.s_p, "in_n": m.s_n, "ref": m.ref, "out": m.unit.out},
        rails=view.rails_for([op], nets),
    )
    refs = sorted({m.unit.ref} | {e.ref for e in elems})
    return Stage(id=m.unit.name, kind="difference", references=refs, amplifiers=[m.unit.name],
                 roles=roles, circuit=circuit, notes=notes)


def find(view: NetlistView, used: set[str]) -> list[Stage]:
    """Difference stages among op-amp units not already claimed (``used`` holds unit names)."""
    out = []
    for u in view.units:
        if u.name in used:
            continue
        m = match(view, u)
        if m is None or not differential_inputs(view, m):
            continue
        if any(view.is_zero(g) for g in (m.r1, m.r2, m.r3, m.r4)):
            continue          # reported as a near miss instead
        used.add(u.name)
        out.append(stage_from_match(view, m))
    return out


def near_misses(view: NetlistView, used: set[str]) -> list[NearMiss]:
    """Op-amps wired like a difference stage but with a role shorted (a 0-ohm link) or no
    feedback at all."""
    out: list[NearMiss] = []
    for u in view.units:
        if u.name in used:
            continue
        m = match(view, u)
        if m is not None and differential_inputs(view, m):
            zeros = [role for role, g in (("R1", m.r1), ("R2", m.r2), ("R3", m.r3), ("R4", m.r4))
                     if view.is_zero(g)]
            if zeros:
                refs = sorted({u.ref} | {e.ref for g in (m.r1, m.r2, m.r3, m.r4) for e in g.elements})
                out.append(NearMiss(
                    "difference", refs,
                    f"{u.name} is wired as a difference amplifier but "
                    + ", ".join(f"{r} ({g.expr})" for r, g in (("R1", m.r1), ("R2", m.r2),
                                                               ("R3", m.r3), ("R4", m.r4)) if r in zeros)
                    + " is a 0-ohm link: the resistor ratio is broken and common-mode rejection lost",
                    u.ref, " and ".join(f"{r} resistor" for r in zeros), view.location(u.ref)))
            continue
        nm = _open_loop(view, u) or _no_r4(view, u)
        if nm is not None:
            out.append(nm)
    return out


def _signal_groups(view: NetlistView, u: OpUnit):
    """(n, p, o, groups at n, groups at p) of an op-amp whose two inputs could both carry
    signals (neither fixed nor driven by an output), or None: the start of every near-miss
    test of a difference stage."""
    n, p, o = u.inn, u.inp, u.out
    if not (n and p and o) or len({n, p, o}) < 3 or view.driven_by_output(p) \
            or view.fixed(p) or view.fixed(n):
        return None
    return n, p, o, view.groups(n, ports={o, p}), view.groups(p, ports={o, n})


def _no_r4(view: NetlistView, u: OpUnit) -> NearMiss | None:
    """R1, R2 and R3 in place with two different signals on the inputs, but nothing from the
    non-inverting node to a reference: the ratio R4/R3 is missing, so the two inputs see
    different gains. Not reported when either input is a supply or a reference-like net (an
    inverting amplifier with a bias-compensation resistor, a non-inverting one with a series
    input resistor)."""
    found = _signal_groups(view, u)
    if found is None:
        return None
    n, p, o, gn, gp = found
    r2 = gn.pop(o, None)
    if r2 is None or len(gn) != 1 or len(gp) != 1 or o in gp:
        return None
    (s_n, r1), = gn.items()
    (s_p, r3), = gp.items()
    if s_n == s_p or any(view.fixed(x) or ref_score(view, x) >= 2 for x in (s_n, s_p)):
        return None
    if view.caps_at(p):
        return None            # a capacitor at the + node: a filter, not a missing resistor
    refs = sorted({u.ref} | {e.ref for g in (r1, r2, r3) for e in g.elements})
    dnp = view.dnp_at(p)
    return NearMiss(
        "difference", refs,
        f"{u.name} takes {s_n!r} through {r1.expr} and {s_p!r} through {r3.expr}, with "
        f"feedback {r2.expr}, but no resistor from its + input to a reference"
        + (f" ({', '.join(dnp)} there is marked DNP)" if dnp else "")
        + ": the two inputs get different gains and common mode is not rejected",
        u.ref, "resistor from the + input to the reference", view.location(u.ref))


def _open_loop(view: NetlistView, u: OpUnit) -> NearMiss | None:
    """R1, R3 and R4 in place, both inputs signals, but nothing from the output back to the
    inverting node: the difference stage's feedback resistor R2 is missing."""
    found = _signal_groups(view, u)
    if found is None:
        return None
    n, p, o, gn, gp = found
    if o in gn or o in gp or len(gn) != 1 or len(gp) != 2:
        return None
    if any({c[1], c[2]} & {n, p} for c in view.caps_at(o)):
        return None            # an integrator or filter, not a missing resistor
    (s_n, r1), = gn.items()
    if view.fixed(s_n) or ref_score(view, s_n) >= 2:
        return None
    if not [x for x in gp if x != s_n and not view.fixed(x) and ref_score(view, x) < 2]:
        return None            # + input on a divider between references: a comparator
    refs = sorted({u.ref} | {e.ref for g in [r1, *gp.values()] for e in g.elements})
    dnp = sorted(set(view.dnp_at(n)) & set(view.dnp_at(o)))
    return NearMiss(
        "difference", refs,
        f"{u.name} has input resistors on both inputs ({r1.expr} to the inverting input, "
        f"{' and '.join(g.expr for g in gp.values())} at the non-inverting input) but no "
        "feedback from its output to the inverting input"
        + (f" ({', '.join(dnp)} there is marked DNP)" if dnp else "") + ": it runs open loop",
        u.ref, "feedback resistor from the output to the inverting input", view.location(u.ref))
