"""DC paths in the whole design: bias-current return of every amplifier input, the source
behind the REF pin, and the resistance of the source driving the stage inputs.

These look beyond the stage's SubCircuit into the Netlist, with a DC view of it: resistors,
inductors, ferrite beads, fuses, closed jumpers, 0-ohm links and sources conduct; capacitors
are open; op-amp outputs, supply rails and grounds are nets of defined potential.

Public helpers (the rules call them directly):

* ``bias_paths(netlist, stage, rails=None) -> list[BiasPath]``
* ``ref_source(netlist, stage, rails=None) -> RefSource | None``
* ``source_impedances(netlist, stage, rails=None) -> SourceLoading``
* ``thevenin(netlist, net, rails=None, exclude=()) -> Thevenin``
* ``filter_ahead(netlist, stage, rails=None) -> SubCircuit | None`` (the stage extended back
  through an input RFI filter drawn ahead of its ports)

A transistor follower inside an op-amp's loop (a rail splitter) holds its emitter net as an
op-amp output does; an input fed from a connector has an unknown source resistance.
"""

from __future__ import annotations

import math
import re
from collections import deque
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from frontcheck.analysis import tolerance
from frontcheck.analysis.result import BiasPath, RefSource, SourceLoading
from frontcheck.disjoint_sets import DisjointSets
from frontcheck.circuit import Sourced, Stage, SubCircuit
from frontcheck.netlist import Netlist
from frontcheck.rail_names import stated_voltage
from frontcheck.recognise.common import OpUnit, View, is_ground_name, pin_role

# Two-terminal parts that are (close to) 0 ohm at DC: inductors, ferrite beads, fuses, jumpers,
# net ties. A jumper drawn open ('..._Open' symbols) is left open.
_SHORT_LIB = re.compile(r"(?:^|:)(?:L|L_.*|Inductor.*|Ferrite.*|FerriteBead.*|Fuse.*|Polyfuse.*|"
                        r"Jumper.*|SolderJumper.*|NetTie.*)$", re.I)
_SHORT_PREFIX = ("L", "FB", "F", "JP", "NT")
_SOURCE_LIB = re.compile(r"(?:^|:)(?:Battery.*|V|VDC|VSIN|VPULSE|Voltage.*)$", re.I)
_SOURCE_PREFIX = ("BT", "V")
_CONNECTOR_PREFIX = ("J", "P", "CN", "X", "CON")
_TRANSISTOR_PREFIX = ("Q", "T", "M")
_POWER_NAME = re.compile(r"^(?:[+-]?\d+(?:[.,]\d+)?V\d*|[+-]\d*V\d+|VCC.*|VDD.*|VEE.*|VSS.*|AVDD|AVCC|"
                         r"AVSS|DVDD|VPOS|VNEG|V\+|V-|\+VS|-VS)$", re.I)


def _base(net: str) -> str:
    return net.rsplit("/", 1)[-1]


def _prefix(ref: str) -> str:
    m = re.match(r"^[A-Za-z]+", ref)
    return m.group(0).upper() if m else ""


class DCView:
    """The DC picture of a Netlist: conducting elements, defined-potential nets, connectors."""

    def __init__(self, netlist: Netlist, rails: Mapping[str, Sourced] | None = None,
                 parts=None):
        # ``parts`` (the part library) gives the models of op-amps outside a stage that
        # analysis solves with it (frontcheck.analysis.neighbourhood).
        self.view = View(netlist, parts, rails=dict(rails or {}))
        self.rails = dict(rails or {})
        v = self.view
        self.resistors = [(e.name, e.ref, e.a, e.b) for e in v.resistors]
        self.shorts: list[tuple[str, str, str]] = []     # (ref, a, b)
        self.sources: list[tuple[str, str, str]] = []
        self.connectors: dict[str, list[tuple[str, str]]] = {}   # net -> [(ref, pin)]
        for ref, c in v.comps.items():
            if v.kind[ref] != "other":
                continue
            pre = _prefix(ref)
            lib = c.lib_id or ""
            nets = [v.net_of.get((ref, p)) for p in sorted(c.pins)]
            nets = [n for n in nets if n]
            if lib.lower().startswith("connector") or pre in _CONNECTOR_PREFIX:
                for p in c.pins:
                    n = v.net_of.get((ref, p))
                    if n:
                        self.connectors.setdefault(n, []).append((ref, p))
                continue
            if len(c.pins) != 2 or len(nets) != 2 or nets[0] == nets[1]:
                continue
            if "open" in lib.lower().rsplit(":", 1)[-1]:
                continue
            if _SHORT_LIB.search(lib) or pre in _SHORT_PREFIX:
                self.shorts.append((ref, nets[0], nets[1]))
            elif _SOURCE_LIB.search(lib) or pre in _SOURCE_PREFIX:
                self.sources.append((ref, nets[0], nets[1]))
        self._zero = {r for r in {e[1] for e in self.resistors} if self._ohms(r) == 0.0}
        self._links: dict[str, list[tuple[str, str, str]]] | None = None
        self._cap_links: dict[str, list[tuple[str, str, str]]] | None = None
        self._groups = None
        self._merging: frozenset[str] | None = None
        self.outputs: dict[str, str] = {}       # net -> 'U2B output'
        for u in v.units:
            if u.out:
                self.outputs.setdefault(u.out, f"{u.name} output")
        for net, nodes in v.nodes.items():
            for ref, pin in nodes:
                c = v.comps[ref]
                p = c.pins.get(pin)
                if p is None or net in self.outputs:
                    continue
                if p.type == "power_out" or (v.kind[ref] in ("inamp", "diffamp", "opamp")
                                             and pin_role(p) == "out"):
                    self.outputs[net] = f"{ref} {'output' if p.type != 'power_out' else 'supply output'}"
        # A transistor follower inside an op-amp's loop (a rail splitter, a boosted buffer):
        # the net on the transistors' emitters/sources that the op-amp senses at its inverting
        # input (directly or through one feedback resistor), with the bases/gates driven from
        # the op-amp output (through at most three resistors, diodes or shorts), is held by
        # the loop at DC as a plain follower's output is.
        self.loop_buffers: dict[str, OpUnit] = {}
        links: dict[str, list[str]] = {}
        for _, _, a, b in self.resistors:
            links.setdefault(a, []).append(b)
            links.setdefault(b, []).append(a)
        for ref, a, b in self.shorts:
            links.setdefault(a, []).append(b)
            links.setdefault(b, []).append(a)
        for ref, c in v.comps.items():
            if v.kind[ref] == "other" and _prefix(ref) == "D" and len(c.pins) == 2:
                na, nb = (v.net_of.get((ref, p)) for p in sorted(c.pins))
                if na and nb and na != nb:
                    links.setdefault(na, []).append(nb)
                    links.setdefault(nb, []).append(na)
        for u in v.units:
            if not (u.inn and u.out and u.inp) or self.is_rail(u.out):
                continue
            drive, frontier = {u.out}, [u.out]
            for _ in range(3):
                frontier = [m for n in frontier for m in links.get(n, []) if m not in drive
                            and not self.is_rail(m)]
                drive.update(frontier)
            sensed = [u.inn] + [e.b if e.a == u.inn else e.a for e in v.r_at.get(u.inn, [])]
            for net in sensed:
                if net == u.out or net in self.outputs or self.is_rail(net):
                    continue
                qs = []
                for ref, pin in v.nodes.get(net, []):
                    if v.kind.get(ref) != "other" or _prefix(ref) not in _TRANSISTOR_PREFIX:
                        continue
                    others = {v.net_of.get((ref, p)) for p in v.comps[ref].pins if p != pin}
                    if others & (drive - {net}):
                        qs.append(ref)
                if qs:
                    self.outputs[net] = f"{u.name} output through {'/'.join(sorted(set(qs)))}"
                    self.loop_buffers[net] = u

    def _ohms(self, ref: str) -> float:
        try:
            return float(self.view.ohms(ref))
        except Exception:
            return math.nan

    def rail_voltage(self, net: str) -> float | None:
        if net in self.rails:
            return float(self.rails[net].value)
        # What the name states (frontcheck.rail_names): GND is 0 V; VSS, GNDS, EARTH, COM and
        # sheet-local names state no voltage, although they are rails (is_rail).
        return stated_voltage(net)

    def is_rail(self, net: str) -> bool:
        return net in self.rails or is_ground_name(net) or bool(_POWER_NAME.match(_base(net)))

    def defined(self, net: str) -> str | None:
        """Why ``net`` has a defined potential ('GND', 'U2B output'), or None."""
        if self.is_rail(net):
            return net
        return self.outputs.get(net)

    def graph(self, exclude: set[str] = frozenset()):
        """Nets joined by every DC-conducting element not named in ``exclude``, as a networkx
        MultiGraph (edge data ``part``). The analysis itself walks :meth:`links` instead."""
        import networkx as nx

        g = nx.MultiGraph()
        g.add_nodes_from(self.view.nodes)
        for name, ref, a, b in self.resistors:
            if name not in exclude and ref not in exclude:
                g.add_edge(a, b, part=name)
        for ref, a, b in self.shorts + self.sources:
            if ref not in exclude:
                g.add_edge(a, b, part=ref)
        return g

    def resistive_groups(self, exclude: set[str] = frozenset()):
        """Nets merged by shorts, sources and 0-ohm resistors, and the resistors between the
        merged groups, for :func:`thevenin`: (union-find, {root: member nets},
        {element: (list index, net a, net b, ohms)}, {root: [(other root, element, ohms,
        reference)]}). Parts in ``exclude`` are left out of the merging; the caller skips the
        excluded resistors of the adjacency as it walks. The common case (no short, source or
        0-ohm resistor excluded) is built once per view: rebuilt per stage it made a check
        quadratic in the design's size."""
        if self._merging is None:
            self._merging = frozenset(
                {ref for ref, _, _ in self.shorts} | {ref for ref, _, _ in self.sources}
                | {name for name, ref, _, _ in self.resistors if ref in self._zero}
                | {ref for _, ref, _, _ in self.resistors if ref in self._zero})
        if not (exclude and not self._merging.isdisjoint(exclude)):
            if self._groups is None:
                self._groups = self._build_groups(frozenset())
            return self._groups
        return self._build_groups(exclude)

    def _build_groups(self, exclude):
        uf = DisjointSets()
        for ref, a, b in self.shorts:
            if ref not in exclude:
                uf.union(a, b)
        for ref, a, b in self.sources:
            if ref not in exclude:
                uf.union(a, b)
        res: dict[str, tuple[int, str, str, float]] = {}
        for name, ref, a, b in self.resistors:
            if name in exclude or ref in exclude:
                continue
            if ref in self._zero:
                uf.union(a, b)
            else:
                res[name] = (len(res), a, b, self._ohms(ref))
        members: dict[str, list[str]] = {}
        for n in self.view.nodes:
            members.setdefault(uf.find(n), []).append(n)
        adj: dict[str, list[tuple[str, str, float, str]]] = {}
        refs = {name: ref for name, ref, _, _ in self.resistors}
        for name, (_, a, b, r) in res.items():
            ga, gb = uf.find(a), uf.find(b)
            if ga == gb:
                continue
            adj.setdefault(ga, []).append((gb, name, r, refs[name]))
            adj.setdefault(gb, []).append((ga, name, r, refs[name]))
        return uf, members, res, adj

    def links(self, capacitors: bool = False) -> list[dict[str, list[tuple[str, str, str]]]]:
        """Adjacency of the nets: net -> [(other net, part, reference)] over the DC-conducting
        parts (resistors, then shorts and sources, in list order), followed when
        ``capacitors`` by a second map over the capacitors. Built once per view and shared by
        every stage's walk: a walk only visits the island around its start, so rebuilding a
        whole-design graph per stage would make a check quadratic in the design's size."""
        if self._links is None:
            adj: dict[str, list[tuple[str, str, str]]] = {}
            for name, ref, a, b in self.resistors:
                adj.setdefault(a, []).append((b, name, ref))
                adj.setdefault(b, []).append((a, name, ref))
            for ref, a, b in self.shorts + self.sources:
                adj.setdefault(a, []).append((b, ref, ref))
                adj.setdefault(b, []).append((a, ref, ref))
            self._links = adj
        if not capacitors:
            return [self._links]
        if self._cap_links is None:
            cap: dict[str, list[tuple[str, str, str]]] = {}
            for ref, a, b in self.view.capacitors:
                cap.setdefault(a, []).append((b, ref, ref))
                cap.setdefault(b, []).append((a, ref, ref))
            self._cap_links = cap
        return [self._links, self._cap_links]


def _walk(links: list[dict[str, list[tuple[str, str, str]]]], start: str, stop,
          exclude: set[str] = frozenset()) -> tuple[dict[str, tuple[str, str] | None], list[str]]:
    """Breadth-first search from ``start`` not expanding past nets where ``stop(net)``, over
    the adjacency maps ``links`` (see :meth:`DCView.links`) without the parts (by element
    name or reference) in ``exclude``. A net's neighbours are taken in the order their parts
    are listed, each through the first part that joins them.
    Returns parents {net: (previous net, part)} and the visiting order."""
    parent: dict[str, tuple[str, str] | None] = {start: None}
    order = [start]
    queue = deque([start])
    while queue:
        n = queue.popleft()
        if n != start and stop(n):
            continue
        for adj in links:
            for m, part, ref in adj.get(n, ()):
                if m in parent or part in exclude or ref in exclude:
                    continue
                parent[m] = (n, part)
                order.append(m)
                queue.append(m)
    return parent, order


def _path_parts(parent, net) -> list[str]:
    parts = []
    while parent.get(net):
        net, part = parent[net][0], parent[net][1]
        parts.append(part)
    return parts[::-1]


def bias_paths(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
               dc: DCView | None = None) -> list[BiasPath]:
    """DC bias-return path of every amplifier input of ``stage``.

    Each input net must reach, through DC-conducting parts, a net of defined potential (a
    supply or ground, or an op-amp output): status 'ok'. Reaching only a connector pin is
    'connector' (the source off the board must provide it: a declaration is needed); reaching
    nothing is 'none'. Inputs of a part's internal op-amps are checked only where they are
    the part's own input pins (their other nets are inside the part).

    References
    ----------
    docs/engineering.md sec. 6 (input bias current needs a DC return inside the input CM range)
    [practice].
    """
    dc = dc or DCView(netlist, rails if rails is not None else stage.circuit.rails)
    g = dc.links()
    ports = stage.circuit.ports
    port_label = {ports.get("in_p"): "+IN", ports.get("in_n"): "-IN"}
    out, seen = [], set()
    for o in stage.circuit.opamps:
        for role, net in (("+in", o.inp), ("-in", o.inn)):
            if o.internal:
                if net not in port_label or net is None:
                    continue
                label = f"{o.ref} {port_label[net]}"
            else:
                label = f"{o.name} {role}"
            if net is None or net not in dc.view.nodes or (label, net) in seen:
                continue
            seen.add((label, net))
            out.append(_bias_of(dc, g, label, net))
    return out


def _bias_of(dc: DCView, g, label: str, net: str) -> BiasPath:
    if dc.defined(net):
        return BiasPath(label, net, "ok", f"{dc.defined(net)} directly")
    parent, order = _walk(g, net, lambda n: dc.defined(n) is not None)
    for n in order:
        why = dc.defined(n)
        if why:
            via = _path_parts(parent, n)
            return BiasPath(label, net, "ok", f"{why} via {', '.join(via)}", via)
    for n in order:
        if n in dc.connectors:
            ref, pin = dc.connectors[n][0]
            via = _path_parts(parent, n)
            return BiasPath(label, net, "connector",
                            f"{ref} pin {pin}" + (f" via {', '.join(via)}" if via else ""),
                            via + [ref])
    return BiasPath(label, net, "none", "", _blocking_capacitors(dc, set(order)))


def _blocking_capacitors(dc: DCView, island: set[str]) -> list[str]:
    """Capacitors from the input's DC island to the outside: the coupling capacitors that
    leave the input without a DC return (what the designer must look at)."""
    v = dc.view
    caps = set()
    for n in island:
        for ref, _ in v.nodes.get(n, []):
            if v.kind.get(ref) != "capacitor":
                continue
            nets = {v.net_of.get((ref, p)) for p in v.comps[ref].pins}
            if nets - island - {None}:
                caps.add(ref)
    return sorted(caps)


# --------------------------------------------------------------------------------------------
# Thevenin equivalents


@dataclass
class Thevenin:
    """Resistive network seen from one net: ``ohms`` (None = floating), open-circuit ``volts``
    (None = unknown), what drives it and which parts form it."""

    net: str
    ohms: float | None
    volts: float | None
    kind: str            # 'rail' | 'low-impedance' | 'resistive' | 'floating'
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
        return False, None, ""

    start = uf.find(net)
    f0 = fixed(start)
    if f0[0]:
        kind = "rail" if any(dc.is_rail(n) for n in members.get(start, [start])) else "low-impedance"
        return Thevenin(net, 0.0, f0[1], kind, f0[2])
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
    if not fixed_groups:
        return Thevenin(net, None, None, "floating", "nothing of defined potential", sorted(parts))
    reached = sorted(parts, key=lambda name: res[name][0])    # in list order: sums stay the same
    if any(math.isnan(res[name][3]) for name in reached):
        return Thevenin(net, None, None, "resistive", "unreadable resistor value", sorted(parts))
    idx = {gname: i for i, gname in enumerate(free)}
    n = len(free)
    G = np.zeros((n, n))
    b = np.zeros(n)
    bad = np.zeros(n)   # injections from fixed nodes of unknown voltage
    for name in reached:
        _, a, bb, r = res[name]
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
    names = sorted({fx[2] for fx in fixed_groups.values()})
    rnames = sorted(parts)
    driver = f"{'/'.join(rnames)} from {', '.join(names)}"
    return Thevenin(net, rth, volts, "resistive", driver, rnames)


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


def _stage_parts(stage: Stage) -> set[str]:
    return {r.name for r in stage.circuit.resistors if not r.internal}


def filter_ahead(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
                 dc: DCView | None = None) -> SubCircuit | None:
    """The stage extended back through an input RFI filter drawn ahead of its input ports.

    The filter of docs/engineering.md sec. 7, found in the design around the ports 'in_p' and
    'in_n': one series resistor into each port from a net of undefined potential (the source side),
    a capacitor Cc from each port to a net of defined potential (supply, ground, an op-amp or
    buffer output: AC ground), optionally Cd across the two ports; every leg needs its Cc, or
    the legs share a Cd. Resistors from a port to a net of defined potential (bias returns)
    load the filter and are kept. The returned SubCircuit is the stage with those parts added,
    its input ports moved to the source side of the series resistors, and the nets of defined
    potential they reach added as rails (at their known voltage, else 0 V: only their being
    fixed matters to the filter's AC response). None when no such filter is drawn, or a value
    in it cannot be read.

    References
    ----------
    docs/engineering.md sec. 7 (series R per leg, Cc per leg to ground, Cd across) [derived].
    """
    from dataclasses import replace

    from frontcheck.circuit import Capacitor
    from frontcheck.errors import InputError
    from frontcheck.values import capacitance_of

    sub = stage.circuit
    p, n = sub.ports.get("in_p"), sub.ports.get("in_n")
    if not p or not n or p == n:
        return None
    dc = dc or DCView(netlist, rails if rails is not None else sub.rails)
    v = dc.view
    own = {r.name for r in sub.resistors} | {c.name for c in sub.capacitors} | set(stage.references)
    if dc.defined(p) or dc.defined(n):
        return None
    series: dict[str, object] = {}
    bias: list[object] = []
    for port in (p, n):
        legs = []
        for e in v.r_at.get(port, []):
            if e.name in own or e.ref in own:
                continue
            far = e.other(port)
            if dc.defined(far):
                bias.append(e)
            elif far not in (p, n):
                legs.append(e)
        if len(legs) != 1:
            return None          # no series leg, or several: not the sec. 7 shape
        series[port] = legs[0]
    caps, has_cc, has_cd = [], {p: False, n: False}, False
    for ref, a, b in v.capacitors:
        if ref in own:
            continue
        if {a, b} == {p, n}:
            has_cd = True
        elif a in (p, n) and dc.defined(b):
            has_cc[a] = True
        elif b in (p, n) and dc.defined(a):
            has_cc[b] = True
        else:
            continue
        caps.append((ref, a, b))
    if not ((has_cc[p] and has_cc[n]) or has_cd):
        return None
    notes: list[str] = []
    extra_rails: dict[str, Sourced] = {}

    def fixed_net(net: str) -> None:
        if net in sub.rails or net in extra_rails:
            return
        volts = dc.rail_voltage(net)
        if volts is None:
            volts = thevenin(None, net, dc=dc).volts
        extra_rails[net] = Sourced(float(volts) if volts is not None else 0.0, "default",
                                   f"{net} taken as AC ground for the input filter")

    new_r = []
    for port, e in series.items():
        r = v.resistor(e, notes)
        # Orient the series resistor source side -> port.
        new_r.append(replace(r, a=e.other(port), b=port))
    for e in bias:
        new_r.append(v.resistor(e, notes))
        fixed_net(e.b if e.a in (p, n) else e.a)
    new_c = []
    for ref, a, b in caps:
        try:
            f, t = capacitance_of(v.comps[ref], 0.1, "assumed for capacitors")
        except (InputError, ValueError):
            return None
        new_c.append(Capacitor(ref, a, b, f, t))
        for net in (a, b):
            if net not in (p, n):
                fixed_net(net)
    if any(math.isnan(r.ohms.value) or math.isnan(r.tol.value) for r in new_r):
        return None
    ports = {**sub.ports, "in_p": series[p].other(p), "in_n": series[n].other(n)}
    if ports["in_p"] == ports["in_n"]:
        return None
    return replace(sub, resistors=list(sub.resistors) + new_r,
                   capacitors=list(sub.capacitors) + new_c, ports=ports,
                   rails={**sub.rails, **extra_rails})


def ref_source(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
               dc: DCView | None = None, ideal_opamps: bool = True) -> RefSource | None:
    """What drives the stage's REF net, its Thevenin resistance and voltage, and their cost.

    The REF net's source resistance Rth is in series with the stage's REF-side resistor. Its
    CMRR limit (that Rth alone, all else ideal) and the fractional gain error it causes come
    from the stage's own equations with Rth added; for a difference amplifier they approach
    (1+G) R4/Rth and r/(2(1+G)), r = Rth/R4.

    Returns None when the stage has no REF port.

    References
    ----------
    docs/engineering.md sec. 5 [derived, ngspice-exact]: G = 1, 10 k, Rth = 10 ohm -> 66.03 dB,
    Ad = 1.00025.
    """
    net = stage.circuit.ports.get("ref")
    if net is None:
        return None
    dc = dc or DCView(netlist, rails if rails is not None else stage.circuit.rails)
    th = thevenin(netlist, net, exclude=_stage_parts(stage), dc=dc)
    out = RefSource(net, th.kind, th.ohms, th.volts, th.driver, parts=list(th.parts))
    if th.kind == "floating":
        out.driver = "nothing: REF is floating"
        return out
    if th.ohms:
        out.cmrr_db, out.gain_error = ref_cost(stage, th.ohms, ideal_opamps)
    elif th.ohms == 0.0:
        out.cmrr_db, out.gain_error = math.inf, 0.0
    return out


def ref_cost(stage: Stage, rth: float, ideal_opamps: bool = True) -> tuple[float, float]:
    """(CMRR in dB from ``rth`` at REF alone, fractional gain error) of ``stage``.

    References
    ----------
    docs/engineering.md sec. 5: CMRR_ref ~ (1+G) R4/Rth (x G1 for a three-op-amp in-amp),
    Ad ~ G [1 + r/(2(1+G))] [derived, ngspice-exact].
    """
    return _port_cost(stage, {"ref": rth}, ideal_opamps)


def _port_cost(stage: Stage, series: dict[str, float], ideal_opamps: bool) -> tuple[float, float]:
    sub = stage.circuit
    k = len(tolerance.variables(sub).names)
    zero = np.zeros((1, k))
    base = tolerance.make_context(sub, None, ideal_opamps).evaluate(zero, use_opamp_cmrr=False)
    with_s = tolerance.make_context(sub, series, ideal_opamps).evaluate(zero, use_opamp_cmrr=False)
    # Ad of the circuit as drawn (with the series resistance) over the Acm it adds.
    db = float(tolerance.cmrr_db(with_s.ad, with_s.acm - base.acm, with_s.ad[0])[0])
    return db, float(with_s.ad[0] / base.ad[0] - 1.0)


def _connector_feed(dc: DCView, net: str, exclude: set[str]) -> str | None:
    """'J1 pin 2' when a connector pin is reached from ``net`` through resistors, shorts and
    capacitors (an AC-coupled input is still fed from there) before any net of defined
    potential; None otherwise."""
    parent, order = _walk(dc.links(capacitors=True), net, lambda n: dc.defined(n) is not None,
                          exclude)
    for n in order:
        if n in dc.connectors and not dc.defined(n):
            ref, pin = dc.connectors[n][0]
            via = _path_parts(parent, n)
            return f"{ref} pin {pin}" + (f" via {', '.join(via)}" if via else "")
    return None


def source_impedances(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
                      dc: DCView | None = None, ideal_opamps: bool = True) -> SourceLoading:
    """Thevenin resistance of the source driving each input port, and its cost.

    A resistive source in the design (a bridge, a divider) adds its resistance to the stage's
    input resistors; a difference amplifier's two input resistances (R1, R3+R4) differ, so even
    equal source resistances unbalance its ratios. Gain error and CMRR from the source alone
    come from the stage's equations with the two resistances added in series with the inputs.
    Unknown (None) where an input is fed from a connector (through resistors or capacitors):
    the source is off the board, and the parts on the board are its load.

    References
    ----------
    docs/engineering.md sec. 4, last paragraph (loading of the unequal input resistances) [derived].
    """
    dc = dc or DCView(netlist, rails if rails is not None else stage.circuit.rails)
    ex = _stage_parts(stage)
    legs = {}
    details = []
    for role in ("in_p", "in_n"):
        net = stage.circuit.ports.get(role)
        if net is None:
            legs[role] = None
            continue
        plug = _connector_feed(dc, net, ex)
        if plug is not None:
            # The signal comes from off the board: what the design shows at this input (bias
            # resistors, a divider) is its load, not its source.
            legs[role] = None
            details.append(f"{role} {net}: fed from connector {plug}, source resistance unknown")
            continue
        th = thevenin(netlist, net, exclude=ex, dc=dc)
        legs[role] = th.ohms
        details.append(f"{role} {net}: {th.kind}, {th.driver}")
    out = SourceLoading(legs["in_p"], legs["in_n"], None, None, "; ".join(details))
    if legs["in_p"] is not None and legs["in_n"] is not None:
        if legs["in_p"] == 0.0 and legs["in_n"] == 0.0:
            out.gain_error, out.cmrr_db = 0.0, math.inf
        else:
            out.cmrr_db, out.gain_error = _port_cost(stage, {"in_p": legs["in_p"], "in_n": legs["in_n"]},
                                                     ideal_opamps)
    return out
