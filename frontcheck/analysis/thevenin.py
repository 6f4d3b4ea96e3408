"""Thevenin equivalent of the resistive network around one net of a whole design.

Shorts (inductors, ferrites, fuses, jumpers, 0-ohm resistors) merge nets; supplies and grounds
are ideal sources at their voltage; op-amp outputs are ideal sources whose voltage is known
when the op-amp is a follower of a net whose own Thevenin voltage is known. A net that an IC
output no part data models drives (a DAC, a reference), directly or through resistors, is
'driven' with its impedance and voltage unknown: never 'floating', and never a guessed 0 ohm.
"""

from __future__ import annotations

import math
from collections import deque
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from frontcheck import formatting
from frontcheck.analysis.dc_view import DCView
from frontcheck.circuit import Sourced
from frontcheck.disjoint_sets import DisjointSets
from frontcheck.netlist import Netlist

__all__ = ["Thevenin", "thevenin"]


@dataclass
class Thevenin:
    """Resistive network seen from one net: ``ohms`` (None = floating), open-circuit ``volts``
    (None = unknown), what drives it and which parts form it."""

    net: str
    ohms: float | None
    volts: float | None
    kind: str            # 'rail' | 'low-impedance' | 'resistive' | 'driven' | 'floating'
                         # ('driven': an IC output no part data models, impedance unknown)
    driver: str
    parts: list[str] = field(default_factory=list)


def thevenin(netlist: Netlist | None, net: str, rails: Mapping[str, Sourced] | None = None,
             exclude: set[str] = frozenset(), dc: DCView | None = None, _depth: int = 0) -> Thevenin:
    """Thevenin equivalent of the resistive network around ``net``, parts in ``exclude`` left out.

    Shorts (inductors, ferrites, fuses, jumpers, 0-ohm resistors) merge nets; supplies and
    grounds are ideal sources at their voltage; op-amp outputs are ideal sources whose voltage
    is known when the op-amp is a follower of a net whose own Thevenin voltage is known.

    References
    ----------
    L. Thevenin, "Extension de la loi d'Ohm aux circuits electromoteurs complexes", Annales
    Telegraphiques, 1883 (the equivalent); nodal analysis as in Ho, Ruehli, Brennan 1975.
    """
    dc = dc or DCView(netlist, rails)
    uf, members, res, adj = dc.resistive_groups(exclude)

    def fixed(group) -> tuple[bool, float | None, str]:
        for n in members.get(group, [group]):
            if dc.is_rail(n):
                return True, dc.rail_voltage(n), n
        for n in members.get(group, [group]):
            if n in dc.outputs:
                return True, _output_voltage(dc, n, uf, exclude, _depth), dc.outputs[n]
        ic = _ic_output(dc, members, group)
        if ic is not None:
            return True, None, ic
        return False, None, ""

    start = uf.find(net)
    driven = _ic_output(dc, members, start)
    if driven is not None:
        return Thevenin(net, None, None, "driven", f"{driven}, impedance unknown")
    f0 = fixed(start)
    if f0[0]:
        kind = "rail" if any(dc.is_rail(n) for n in members.get(start, [start])) else "low-impedance"
        return Thevenin(net, 0.0, f0[1], kind, f0[2])
    free, fixed_groups, parts = _reach(start, adj, exclude, fixed)
    if not fixed_groups:
        return Thevenin(net, None, None, "floating", "nothing of defined potential", sorted(parts))
    reached = sorted(parts, key=lambda name: res[name][0])    # in list order: sums stay the same
    trims = sorted({dc.trimmers[name][0] for name in reached if name in dc.trimmers})
    if trims:
        return _over_travel(net, dc, free, fixed_groups, reached, res, uf, trims)
    if any(math.isnan(res[name][3]) for name in reached):
        return Thevenin(net, None, None, "resistive", "unreadable resistor value", sorted(parts))
    rth, volts = _solve(free, fixed_groups, [res[name] for name in reached], uf)
    names = sorted({fx[2] for fx in fixed_groups.values()})
    rnames = sorted(parts)
    driver = f"{'/'.join(rnames)} from {', '.join(names)}"
    ics = [fx[2] for g, fx in fixed_groups.items() if _ic_output(dc, members, g) is not None]
    if ics:
        # The resistors give only a lower bound: the IC output's own impedance is unknown.
        return Thevenin(net, None, None, "driven", f"{driver}; {ics[0]} is an output no part "
                        f"data models: impedance unknown (at least {formatting.ohms(rth)})",
                        rnames)
    return Thevenin(net, rth, volts, "resistive", driver, rnames)


#: Wiper positions tried for a trimmer in a source network (fractions of its travel).
TRAVEL = tuple(np.linspace(0.0, 1.0, 101))


def _over_travel(net: str, dc: DCView, free, fixed_groups, reached, res, uf, trims) -> Thevenin:
    """The Thevenin resistance of a network with trimmers in it, over their travel: every
    leg counts, but the wiper position is not in the design, so the resistance is a range
    (stated in the driver text) and no single value is given. Each trimmer is set alike
    along its travel (one setting at a time for one trimmer; for several, the range of the
    common setting, said so)."""
    rnames = sorted(reached)
    names = sorted({fx[2] for fx in fixed_groups.values()})
    driver = f"{'/'.join(rnames)} from {', '.join(names)}"
    if any(math.isnan(res[n][3]) for n in reached if n not in dc.trimmers) or any(
            math.isnan(dc.trimmers[n][2]) for n in reached if n in dc.trimmers):
        return Thevenin(net, None, None, "resistive", "unreadable resistor value", rnames)
    values = []
    for x in TRAVEL:
        els = [res[n][:3] + (dc.element_ohms(n, "", x),) if n in dc.trimmers else res[n]
               for n in reached]
        values.append(_solve(free, fixed_groups, els, uf)[0])
    lo, hi = min(values), max(values)
    what = "trimmer " + ", ".join(trims) + (" (set alike)" if len(trims) > 1 else "")
    return Thevenin(net, None, None, "resistive",
                    f"{driver}; with {what} anywhere in its travel the resistance is "
                    f"{formatting.ohms(lo)} to {formatting.ohms(hi)}: set by the wiper, not "
                    "stated", rnames)


def _ic_output(dc: DCView, members, group: str) -> str | None:
    """The IC output that drives a merged group, when no rail or modelled output does."""
    nets = members.get(group, [group])
    if any(dc.is_rail(n) or n in dc.outputs for n in nets):
        return None
    return next((dc.ic_outputs[n] for n in nets if n in dc.ic_outputs), None)


def _reach(start: str, adj, exclude, fixed) -> tuple[list[str], dict, set[str]]:
    """Breadth-first over the merged groups from ``start``, stopping at fixed groups: the free
    groups (``start`` first), the fixed groups reached {group: fixed(group)}, and the
    resistors crossed."""
    free, fixed_groups, parts = [start], {}, set()
    queue = deque([start])
    seen = {start}
    while queue:
        gnode = queue.popleft()
        for other, name, r, ref in adj.get(gnode, ()):
            if name in exclude or ref in exclude:
                continue
            parts.add(name)
            if other in seen:
                continue
            seen.add(other)
            fx = fixed(other)
            if fx[0]:
                fixed_groups[other] = fx
            else:
                free.append(other)
                queue.append(other)
    return free, fixed_groups, parts


def _solve(free: list[str], fixed_groups: dict, elements: list[tuple[int, str, str, float]],
           uf: DisjointSets) -> tuple[float, float | None]:
    """Nodal solve over the free groups: (resistance, open-circuit voltage) seen at
    ``free[0]``; the voltage is None when a fixed group of unknown voltage moves it."""
    idx = {gname: i for i, gname in enumerate(free)}
    n = len(free)
    G = np.zeros((n, n))
    b = np.zeros(n)
    bad = np.zeros(n)   # injections from fixed nodes of unknown voltage
    for _, a, bb, r in elements:
        ga, gb = uf.find(a), uf.find(bb)
        if ga == gb:
            continue
        g = 1.0 / r
        for x, y in ((ga, gb), (gb, ga)):
            if x in idx:
                G[idx[x], idx[x]] += g
                if y in idx:
                    G[idx[x], idx[y]] -= g
                elif y in fixed_groups:
                    v = fixed_groups[y][1]
                    if v is None:
                        bad[idx[x]] += g
                    else:
                        b[idx[x]] += g * v
    # Free nets that reach no fixed net float on their own; a tiny leak keeps G solvable
    # without changing what the start net sees.
    G += np.eye(n) * 1e-18 * max(1.0, float(np.max(np.abs(G))))
    e = np.zeros(n)
    e[0] = 1.0
    rth = float(np.linalg.solve(G, e)[0])
    volts = float(np.linalg.solve(G, b)[0])
    if np.any(bad) and abs(float(np.linalg.solve(G, bad)[0])) > 1e-12:
        volts = None
    return rth, volts


def _output_voltage(dc: DCView, net: str, uf: DisjointSets, exclude, depth: int) -> float | None:
    """Voltage of an op-amp output that follows (its inverting input on its output) a net
    whose Thevenin voltage is known."""
    if depth > 4:
        return None
    u = dc.loop_buffers.get(net)
    if u is not None:
        return thevenin(None, u.inp, exclude=exclude, dc=dc, _depth=depth + 1).volts
    for u in dc.view.unit_by_out.get(net, []):
        if u.inn and u.inp and uf.find(u.inn) == uf.find(u.out):
            th = thevenin(None, u.inp, exclude=exclude, dc=dc, _depth=depth + 1)
            return th.volts
    return None

