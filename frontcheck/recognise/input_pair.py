"""The first stage of an in-amp, found once for every recogniser that builds on it: two op-amps
A+ (+ input = IN+, output o+, feedback Rf+ from o+ to its inverting node m+) and A- (the same
on IN-), with the gain network RG between m+ and m- (docs/engineering.md sec. 3: differential
gain G1 = 1 + (Rf+ + Rf-)/RG, common mode passed at gain 1).

Where the two outputs go decides what the pair is part of: a difference stage (a discrete
three-op-amp in-amp, :mod:`.three_opamp`), an integrated in-amp's inputs (a composite front
end, :mod:`.composite`), or neither (a differential-output input stage feeding a fully
differential amplifier or an ADC). :func:`match` tells whether two units are such a pair,
:func:`candidates` lists the pairs among unclaimed units and :func:`destination` says where
a pair's outputs go.

Variants: Rf+ != Rf-; any branch a series/parallel combination (written 'R9+R10',
'R9||R10'); a split RG with a centre tap (``taps``); no RG (first-stage gain 1); two
followers (no feedback resistors, gain 1), unless one of them buffers a divider or a
reference-named net (then it is a REF buffer, not an input amplifier).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from frontcheck.recognise import difference
from frontcheck.recognise.common import Group, OpUnit, NetlistView

__all__ = ["InputPair", "ROLE_NAMES", "candidates", "destination", "first_stage", "match",
           "partners"]

#: Role names of a pair's parts. Written so that no role can be read as a reference
#: designator of the design (a 'R4' role beside the design's own R4 misleads).
ROLE_NAMES = {"a_p": "input amp (IN+ side)", "a_n": "input amp (IN- side)",
              "rf_p": "Rf1", "rf_n": "Rf2", "rg": "RG", "rg_a": "RGa", "rg_b": "RGb"}

@dataclass
class InputPair:
    """Two op-amp units wired as an in-amp's first stage."""

    a_p: OpUnit                    # + input on IN+
    a_n: OpUnit                    # + input on IN-
    rf_p: Group | None             # None for two followers
    rf_n: Group | None
    rg: Group | None               # direct gain network between the inverting nodes
    taps: list[tuple[str, Group, Group]] = field(default_factory=list)

    @property
    def units(self) -> tuple[OpUnit, OpUnit]:
        return self.a_p, self.a_n

    @property
    def inputs(self) -> tuple[str, str]:
        return self.a_p.inp, self.a_n.inp

    @property
    def outputs(self) -> tuple[str, str]:
        return self.a_p.out, self.a_n.out

    @property
    def followers(self) -> bool:
        return self.rf_p is None

    def groups(self) -> list[Group]:
        """Every resistor branch of the pair (feedback, RG, split-RG halves)."""
        out = [g for g in (self.rf_p, self.rf_n, self.rg) if g is not None]
        for _, ga, gb in self.taps:
            out += [ga, gb]
        return out

    def rg_expr(self) -> str | None:
        """The gain network as one expression ('R9', 'R9+R10', '(R7+R8)||R9'), or None."""
        parts = [self.rg.expr] if self.rg is not None else []
        parts += [f"{ga.expr}+{gb.expr}" for _, ga, gb in self.taps]
        if not parts:
            return None
        return "||".join(f"({p})" if len(parts) > 1 and "+" in p else p for p in parts)

    def rg_ohms(self, view: NetlistView) -> float:
        """Nominal ohms of the whole gain network; inf without one; NaN when unreadable."""
        g = 1.0 / view.group_ohms(self.rg) if self.rg is not None else 0.0
        for _, ga, gb in self.taps:
            g += 1.0 / (view.group_ohms(ga) + view.group_ohms(gb))
        return 1.0 / g if g else math.inf

    def gain(self, view: NetlistView) -> float:
        """Differential gain 1 + (Rf+ + Rf-)/RG (docs/engineering.md sec. 3); 1 for followers
        or without RG; NaN when a value cannot be read."""
        if self.followers:
            return 1.0
        rg = self.rg_ohms(view)
        rf = view.group_ohms(self.rf_p) + view.group_ohms(self.rf_n)
        if math.isnan(rg) or math.isnan(rf):
            return math.nan
        return 1.0 + rf / rg if rg > 0 else math.inf

    def roles(self) -> dict[str, str]:
        """Role -> element expression for the pair's resistors ('Rf1', 'Rf2', 'RG', 'RGa',
        'RGb'), the names the rules read."""
        out: dict[str, str] = {}
        if self.rf_p is not None:
            out.update({ROLE_NAMES["rf_p"]: self.rf_p.expr, ROLE_NAMES["rf_n"]: self.rf_n.expr})
        rg = self.rg_expr()
        if rg:
            out[ROLE_NAMES["rg"]] = rg
        if len(self.taps) == 1 and self.rg is None:
            _, ga, gb = self.taps[0]
            out.update({ROLE_NAMES["rg_a"]: ga.expr, ROLE_NAMES["rg_b"]: gb.expr})
        return out


def first_stage(view: NetlistView, a1: OpUnit, a2: OpUnit):
    """Rf1, Rf2 and the RG network of two input amps, or None when they are not wired as the
    first stage of an in-amp. Returns (rf1, rf2, rg_direct, taps) with taps a list of
    (tap net, branch from m1, branch from m2); two followers give (None, None, None, [])."""
    for a in (a1, a2):
        if not (a.inp and a.inn and a.out) or a.inp == a.out or a.inp == a.inn:
            return None
        if view.driven_by_output(a.inp) or view.fixed(a.inp):
            return None
    if a1.inp == a2.inp:
        return None
    f1, f2 = a1.inn == a1.out, a2.inn == a2.out
    if f1 and f2:
        # Two followers: one of them may be the REF buffer of a divider rather than an input
        # buffer. A bridge drives both inputs from dividers, so only a lone divider-fed (or
        # reference-named) follower marks the pair as not an input stage.
        if _reference_source(view, a1.inp) != _reference_source(view, a2.inp):
            return None
        return None, None, None, []
    if f1 or f2:
        return None            # one follower, one gain stage: not a balanced first stage
    m1, m2, o1, o2 = a1.inn, a2.inn, a1.out, a2.out
    ports = {m1, m2, o1, o2, a1.inp, a2.inp}
    g1 = view.groups(m1, ports=ports)
    g2 = view.groups(m2, ports=ports)
    rf1, rf2 = g1.pop(o1, None), g2.pop(o2, None)
    if rf1 is None or rf2 is None:
        return None
    rg = g1.pop(m2, None)
    g2.pop(m1, None)
    taps = [(x, g1[x], g2[x]) for x in sorted(set(g1) & set(g2))]
    if set(g1) - {t[0] for t in taps} or set(g2) - {t[0] for t in taps}:
        return None            # another resistor on an inverting node (e.g. to ground)
    for x, _, _ in taps:
        if x in ports or view.fixed(x):
            return None
    return rf1, rf2, rg, taps


def _reach(view: NetlistView, net: str) -> set[str]:
    """Every net a resistor chain from ``net`` passes or ends on, following series joints as
    :meth:`NetlistView.groups` does with no port but ``net``. A larger port set only stops a chain
    earlier, so the far nets of ``view.groups(net, ports)`` are in this set for any ports."""
    out = {net}
    for r in view.r_at.get(net, []):
        chain, far, seen = r, r.other(net), {net}
        out.add(far)
        while far not in seen and view.is_series_node(far, {net}):
            seen.add(far)
            chain = next(x for x in view.r_at[far] if x is not chain)
            far = chain.other(far)
            out.add(far)
    return out


def partners(view: NetlistView, units: list[OpUnit], solo: bool = False) -> list[list[int]]:
    """For each unit (by position in ``units``) the later positions that can be its partner in
    a pair with a gain network (:func:`first_stage` with an RG or a centre tap), in order;
    with ``solo`` also the pairs without one (each inverting node's only branch its feedback
    resistor: any two such units are a pair of first-stage gain 1).

    A pair needs a resistor chain from a1's inverting node to a2's (the RG) or to a net a
    chain from a2's also reaches (the tap, never a supply): candidates come from an index of
    the nets each inverting node reaches, so the search is linear in the number of units for
    a design of many stages (the pair test on every two units was quadratic). Followers and
    units without a resistor from output to inverting input have no partner."""
    reach: list[set[str]] = []
    for u in units:
        ok = u.inn and u.out and u.inp and u.inn != u.out
        reach.append(_reach(view, u.inn) if ok else set())
    by_inn: dict[str, list[int]] = {}
    by_net: dict[str, list[int]] = {}
    for i, (u, nets) in enumerate(zip(units, reach)):
        if u.out not in nets:
            reach[i] = set()          # no feedback chain: never a first-stage amp
            continue
        by_inn.setdefault(u.inn, []).append(i)
        for x in nets:
            if not view.fixed(x):
                by_net.setdefault(x, []).append(i)
    # The branches of an inverting node are the same whatever op-amp nets are ports (no such
    # net is a series joint), so the unit's own ports give them.
    alone = [bool(r) and solo and set(view.groups(u.inn, ports={u.out, u.inp})) == {u.out}
             for u, r in zip(units, reach)]
    later_alone = [i for i, a in enumerate(alone) if a]
    out: list[list[int]] = []
    for i, nets in enumerate(reach):
        found: set[int] = set()
        for x in nets:
            found.update(by_inn.get(x, ()))
            found.update(by_net.get(x, ()))
        if alone[i]:
            found.update(later_alone)
        out.append(sorted(j for j in found if j > i and reach[j]))
    return out


def match(view: NetlistView, a1: OpUnit, a2: OpUnit) -> InputPair | None:
    """The pair with ``a1`` on IN+ and ``a2`` on IN-, or None when not wired as one."""
    found = first_stage(view, a1, a2)
    if found is None:
        return None
    rf1, rf2, rg, taps = found
    return InputPair(a1, a2, rf1, rf2, rg, list(taps))


def candidates(view: NetlistView, used: set[str] = frozenset(), *,
               followers: bool = False) -> list[InputPair]:
    """Pairs among op-amp units not in ``used``, each unit in one pair at most (first found
    in unit order). Two followers count only with ``followers=True`` (a pair of buffers is
    an input stage only when something downstream says so)."""
    out: list[InputPair] = []
    taken: set[str] = set(used)
    units = [u for u in view.units if u.name not in taken]
    # Two followers may pair with any others; without them the indexed search (linear in a
    # design of many stages) finds every pair the test of all two units would.
    later = None if followers else partners(view, units, solo=True)
    for i, a1 in enumerate(units):
        for a2 in (units[i + 1:] if later is None else [units[j] for j in later[i]]):
            if {a1.name, a2.name} & taken:
                continue
            p = match(view, a1, a2)
            if p is None or (p.followers and not followers):
                continue
            out.append(p)
            taken.update({a1.name, a2.name})
            break
    return out


def destination(view: NetlistView, pair: InputPair) -> tuple[str, str | None]:
    """Where the pair's outputs go: ('inamp', ref) when they are the two inputs of one
    integrated in-amp (o+ on its IN+, o- on its IN-, directly), ('crossed', ref) when o+ is
    on the in-amp's IN- (the sign of the whole front end flips), ('other', None) otherwise
    (a difference stage, an ADC, a fully differential amplifier)."""
    from frontcheck.component import pin_role

    o_p, o_n = pair.outputs
    at_p = {r for r, pin in view.pin_nodes(o_p)
            if view.kind.get(r) == "inamp" and pin_role(view.comps[r].pins[pin]) == "inp"}
    at_n = {r for r, pin in view.pin_nodes(o_n)
            if view.kind.get(r) == "inamp" and pin_role(view.comps[r].pins[pin]) == "inn"}
    both = sorted(at_p & at_n)
    if both:
        return "inamp", both[0]
    cross_p = {r for r, pin in view.pin_nodes(o_p)
               if view.kind.get(r) == "inamp" and pin_role(view.comps[r].pins[pin]) == "inn"}
    cross_n = {r for r, pin in view.pin_nodes(o_n)
               if view.kind.get(r) == "inamp" and pin_role(view.comps[r].pins[pin]) == "inp"}
    crossed = sorted(cross_p & cross_n)
    if crossed:
        return "crossed", crossed[0]
    return "other", None


def _reference_source(view: NetlistView, net: str) -> bool:
    """The + input of a reference buffer: a divider between supplies, or a net named as a
    reference. Such an op-amp feeds REF; it is not an input amplifier."""
    if difference._REF_NAME.search(net):
        return True
    g = view.groups(net)
    return len(g) >= 2 and all(view.fixed(x) for x in g)
