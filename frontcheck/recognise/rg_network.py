"""The resistance a gain network puts between two pins, read from the wiring as drawn.

A gain network between an in-amp's RG pins may be any combination of resistors in series and
in parallel, and may hold a potentiometer or trimmer. Its elements are collected from one pin
through joints that nothing but these elements touches (a joint with anything else on it, such
as a centre tap driven by a buffer, ends the network there) and reduced step by step: parallel
elements between the same two nets merge, a joint where exactly two elements meet joins them
in series, a joint only one element reaches carries no current and is dropped. What is left is
one element between the two pins, or, for a bridge that no such step reduces, nothing.

A potentiometer counts by how it is wired (docs/engineering.md sec. 3c):

* wiper tied to one of its ends: a rheostat, anywhere from 0 to its value over its travel;
* wiper left open: its whole value, a fixed resistor;
* wiper on a third net of the network: two elements, x R and (1 - x) R, with the same travel x.

The wiper's setting is not in the design, so such a network is stated as the range of its
resistance over the travel (each wiper from one end to the other; several wipers also set
alike), never as one value. A part without a readable value is named; its network's value is
unknown (a rheostat without a value still gives the least resistance, at the end of its
travel where it is shorted).
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass, field
from typing import Callable

from frontcheck import formatting as fmt
from frontcheck.component import potentiometer_pins
from frontcheck.netlist_view import NetlistView
from frontcheck.values import parse_value

__all__ = ["Element", "RGNetwork", "between"]

Travel = dict[str, float]


@dataclass(frozen=True)
class Element:
    """One two-terminal piece: a resistor (or network element), a potentiometer used as a
    rheostat or fixed resistor, or one side of a potentiometer whose wiper goes elsewhere."""

    name: str            # 'R5', 'RN1.2', 'RV1', 'RV1 (end 1 to wiper)'
    ref: str
    a: str
    b: str
    ohms: float          # value of the part (NaN when not readable)
    pot: str = ""        # '' fixed | 'rheostat' | 'lower' (x R) | 'upper' ((1 - x) R)

    def at(self, travel: Travel) -> float:
        """Ohms at the given wiper travel (0..1 per potentiometer reference)."""
        if not self.pot:
            return self.ohms
        x = travel.get(self.ref, 0.5)
        share = x if self.pot in ("rheostat", "lower") else 1.0 - x
        return 0.0 if share == 0 else share * self.ohms


@dataclass
class RGNetwork:
    """The network found between ``near`` and ``far``, and its resistance over the travel of
    any potentiometer in it. ``lo``/``hi`` are NaN where a value is missing (or, for ``hi``,
    where it is unbounded by what the design says)."""

    near: str
    far: str
    elements: list[Element]
    expr: str                           # 'R5+RV1', '(R1+R2)||R3'; names joined by ', ' if no form
    lo: float = math.nan
    hi: float = math.nan
    reducible: bool = True              # series and parallel steps reduced it to one element
    pots: list[str] = field(default_factory=list)
    unknown: list[str] = field(default_factory=list)   # references without a readable value

    @property
    def refs(self) -> list[str]:
        return sorted({e.ref for e in self.elements}, key=_natural)

    @property
    def fixed(self) -> bool:
        """Resistors only, every value readable, reducible: one value, no range."""
        return not self.pots and not self.unknown and self.reducible

    def describe(self) -> str:
        """What the network gives, in words: 'R5+RV1 = 1.00 kΩ to 11.0 kΩ over RV1's travel'."""
        head = f"{self.expr}"
        if not self.reducible:
            return (f"{head}: a bridge of resistors that no series or parallel step reduces; "
                    "its resistance is not stated")
        if self.unknown:
            who = ", ".join(self.unknown)
            pots = [r for r in self.unknown if r in self.pots]
            what = (f"the pot {', '.join(pots)} has no value" if pots and len(pots) == len(self.unknown)
                    else f"{who} {'has' if len(self.unknown) == 1 else 'have'} no readable value")
            if math.isfinite(self.lo):
                return f"{head}: at least {fmt.ohms(self.lo)}, the upper end is unknown ({what})"
            return f"{head}: unknown ({what})"
        if self.pots:
            travel = "travel" if len(self.pots) == 1 else "travels"
            return (f"{head} = {fmt.ohms(self.lo)} to {fmt.ohms(self.hi)} over "
                    f"{', '.join(self.pots)}'s {travel} (the wiper setting is not in the design)")
        return f"{head} = {fmt.ohms(self.lo)}"


def _natural(s: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", s)]


def _pot_value(view: NetlistView, ref: str) -> float:
    try:
        v = float(parse_value(view.comps[ref].value or "", "ohm"))
    except (ValueError, TypeError):
        return math.nan
    return v if v > 0 else math.nan


def _elements(view: NetlistView) -> list[Element]:
    """Every resistor element and every potentiometer of the view, as two-terminal pieces."""
    out = [Element(e.name, e.ref, e.a, e.b, view.ohms(e.ref)) for e in view.resistors]
    for ref, c in view.comps.items():
        if view.kind[ref] == "resistor":
            continue
        pins = potentiometer_pins(c)
        if pins is None:
            continue
        e1, w, e2 = (view.net_of.get((ref, p)) for p in pins)
        if e1 is None or e2 is None:
            continue
        r = _pot_value(view, ref)
        if view.is_open(w) or w is None:
            if e1 != e2:
                out.append(Element(ref, ref, e1, e2, r))
        elif w in (e1, e2):
            if e1 != e2:
                out.append(Element(ref, ref, e1, e2, r, "rheostat"))
        else:
            if w != e1:
                out.append(Element(f"{ref} (end {pins[0]} to wiper)", ref, e1, w, r, "lower"))
            if w != e2:
                out.append(Element(f"{ref} (wiper to end {pins[2]})", ref, w, e2, r, "upper"))
    return out


def _collect(view: NetlistView, elements: list[Element], near: str, far: str,
             stops: set[str]) -> list[Element] | None:
    """The elements between ``near`` and ``far`` through joints that only these elements
    touch; None when ``far`` is not reached or an element leaves such a joint for another net
    (then the network is not a two-terminal one, e.g. a centre tap loaded to ground)."""
    at: dict[str, list[Element]] = {}
    for e in elements:
        at.setdefault(e.a, []).append(e)
        at.setdefault(e.b, []).append(e)
    owned = {(e.ref, p) for e in elements for p in view.comps[e.ref].pins}

    def joint(net: str) -> bool:
        if net in stops or net in (near, far) or view.fixed(net):
            return False
        return all(node in owned for node in view.pin_nodes(net))

    inner: set[str] = set()
    todo = [near]
    while todo:
        net = todo.pop()
        for e in at.get(net, []):
            other = e.b if net == e.a else e.a
            if other not in inner and joint(other):
                inner.add(other)
                todo.append(other)
    ends = inner | {near, far}
    found = [e for e in elements if e.a in ends and e.b in ends
             and (e.a in inner or e.b in inner or {e.a, e.b} == {near, far})]
    if any(not (e.a in ends and e.b in ends) for net in inner for e in at.get(net, [])):
        return None
    if not any(far in (e.a, e.b) for e in found):
        return None
    return found


Fn = Callable[[Travel], float]


def _parallel(f: Fn, g: Fn) -> Fn:
    def both(t: Travel) -> float:
        a, b = f(t), g(t)
        if a == 0 or b == 0:
            return 0.0
        return 1.0 / (1.0 / a + 1.0 / b)
    return both


def _series(f: Fn, g: Fn) -> Fn:
    return lambda t: f(t) + g(t)


def _wrap(expr: str, op: str) -> str:
    """Parenthesise a sub-expression that binds looser than the operator joining it."""
    if op == "+" and "||" in expr and not (expr.startswith("(") and expr.endswith(")")):
        return f"({expr})"
    if op == "||" and "+" in expr and not (expr.startswith("(") and expr.endswith(")")):
        return f"({expr})"
    return expr


def _reduce(near: str, far: str, elements: list[Element]) -> tuple[Fn, str] | None:
    """Series and parallel steps down to one element between ``near`` and ``far``."""
    edges: list[tuple[str, str, Fn, str]] = [(e.a, e.b, e.at, e.name) for e in elements]
    changed = True
    while changed:
        changed = False
        # parallel: same two nets
        merged: dict[frozenset, tuple[str, str, Fn, str]] = {}
        for a, b, f, x in edges:
            key = frozenset((a, b))
            if key in merged:
                pa, pb, pf, px = merged[key]
                names = sorted([_wrap(px, "||"), _wrap(x, "||")], key=_natural)
                merged[key] = (pa, pb, _parallel(pf, f), "||".join(names))
                changed = True
            else:
                merged[key] = (a, b, f, x)
        edges = list(merged.values())
        degree: dict[str, list[int]] = {}
        for i, (a, b, _, _) in enumerate(edges):
            degree.setdefault(a, []).append(i)
            degree.setdefault(b, []).append(i)
        for net, idx in degree.items():
            if net in (near, far):
                continue
            if len(idx) == 1:                   # a dangling branch carries no current
                edges.pop(idx[0])
                changed = True
                break
            if len(idx) == 2:
                (a1, b1, f1, x1), (a2, b2, f2, x2) = edges[idx[0]], edges[idx[1]]
                end1 = b1 if a1 == net else a1
                end2 = b2 if a2 == net else a2
                names = [_wrap(x1, "+"), _wrap(x2, "+")]
                if end1 == far or end2 == near:
                    names.reverse()
                    end1, end2 = end2, end1
                new = (end1, end2, _series(f1, f2), "+".join(names))
                edges = [e for i, e in enumerate(edges) if i not in idx] + [new]
                changed = True
                break
    if len(edges) == 1 and {edges[0][0], edges[0][1]} == {near, far}:
        return edges[0][2], edges[0][3]
    return None


#: Wiper settings tried per potentiometer (fractions of its travel); with several, every
#: combination of these and all of them set alike in steps of 1 %.
_SETTINGS = (0.0, 0.25, 0.5, 0.75, 1.0)


def _settings(pots: list[str]) -> list[Travel]:
    out = [dict(zip(pots, combo)) for combo in itertools.product(_SETTINGS, repeat=len(pots))]
    out += [{p: i / 100 for p in pots} for i in range(101)]
    return out


def between(view: NetlistView, near: str, far: str, stops: set[str] = frozenset(),
            elements: list[Element] | None = None) -> RGNetwork | None:
    """The network of resistors and potentiometers between nets ``near`` and ``far`` (through
    joints nothing else touches, never through ``stops``), or None when none joins them."""
    if near == far:
        return None
    elements = _elements(view) if elements is None else elements
    found = _collect(view, elements, near, far, set(stops))
    if not found:
        return None
    found.sort(key=lambda e: _natural(e.name))
    pots = sorted({e.ref for e in found if e.pot}, key=_natural)
    unknown = sorted({e.ref for e in found if not math.isfinite(e.ohms)}, key=_natural)
    reduced = _reduce(near, far, found)
    if reduced is None:
        return RGNetwork(near, far, found, ", ".join(e.name for e in found), reducible=False,
                         pots=pots, unknown=unknown)
    fn, expr = reduced
    values = [fn(t) for t in (_settings(pots) if pots else [{}])]
    finite = [v for v in values if math.isfinite(v)]
    net = RGNetwork(near, far, found, expr, pots=pots, unknown=unknown)
    if len(finite) == len(values):
        net.lo, net.hi = min(finite), max(finite)
    elif all(e.pot == "rheostat" or math.isfinite(e.ohms) for e in found):
        # value-less rheostats only: at the shorted end of their travel they add nothing,
        # which bounds the network from below (resistance grows with each element's value)
        low = fn({p: 0.0 for p in pots})
        net.lo = low if math.isfinite(low) else math.nan
    return net
