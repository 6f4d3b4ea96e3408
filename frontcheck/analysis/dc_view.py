"""The DC picture of a whole design, and walks over it.

:class:`DCView` sorts the parts of a Netlist the way DC sees them: resistors, inductors,
ferrite beads, fuses, closed jumpers, 0-ohm links and sources conduct; capacitors are open;
op-amp outputs, supply rails and grounds are nets of defined potential, and so is a net an
IC's output pin drives (a DAC, a reference), though its impedance and voltage are unknown. A transistor follower
inside an op-amp's loop (a rail splitter) holds its emitter net as an op-amp output does.
:func:`walk` is the breadth-first search the bias-return and source analyses share.
"""

from __future__ import annotations

import math
import re
from collections import deque
from dataclasses import dataclass, field
from typing import Mapping

from frontcheck.circuit import Sourced
from frontcheck.component import pin_role
from frontcheck.disjoint_sets import DisjointSets
from frontcheck.netlist import Component, Netlist
from frontcheck.netlist_view import NetlistView, OpUnit
from frontcheck.rail_names import is_ground_name, is_supply_name, stated_voltage
from frontcheck.shared_index import first_index
from frontcheck.values import default_origin, parse_value

__all__ = ["DCView", "walk", "path_parts"]

# Two-terminal parts that are (close to) 0 ohm at DC: inductors, ferrite beads, fuses, jumpers,
# net ties. A jumper drawn open ('..._Open' symbols) is left open.
_SHORT_LIB = re.compile(r"(?:^|:)(?:L|L_.*|Inductor.*|Ferrite.*|FerriteBead.*|Fuse.*|Polyfuse.*|"
                        r"Jumper.*|SolderJumper.*|NetTie.*)$", re.I)
_SHORT_PREFIX = ("L", "FB", "F", "JP", "NT")
_SOURCE_LIB = re.compile(r"(?:^|:)(?:Battery.*|V|VDC|VSIN|VPULSE|Voltage.*)$", re.I)
_SOURCE_PREFIX = ("BT", "V")
_CONNECTOR_PREFIX = ("J", "P", "CN", "X", "CON")
_TRANSISTOR_PREFIX = ("Q", "T", "M")
# Kinds whose output pins drive a net without a model here (amplifiers are modelled apart).
_IC_KINDS = ("other", "comparator", "fda", "ota")


_TRIMMER_LIB = re.compile(r"(?:^|:)(?:R_Pot.*|R_Trim.*|Potentiometer.*|Trimmer.*|.*_Pot|Pot_.*)$", re.I)
_TRIMMER_PREFIX = ("RV", "VR", "POT", "TR", "RP")


def _is_trimmer(ref: str, lib: str, c: Component) -> bool:
    """A three-pin potentiometer or trimmer (KiCad's Device:R_Potentiometer family, or an RV
    reference)."""
    return len(c.pins) == 3 and (_TRIMMER_LIB.search(lib) is not None
                                 or _prefix(ref) in _TRIMMER_PREFIX)


def _prefix(ref: str) -> str:
    m = re.match(r"^[A-Za-z]+", ref)
    return m.group(0).upper() if m else ""


@dataclass
class OtherParts:
    """How DC sees the parts recognition calls 'other'."""

    shorts: list[tuple[str, str, str]] = field(default_factory=list)    # (ref, a, b)
    sources: list[tuple[str, str, str]] = field(default_factory=list)   # (ref, a, b)
    connectors: dict[str, list[tuple[str, str]]] = field(default_factory=dict)  # net -> [(ref, pin)]
    # element name -> (reference, 0 = end 1 to wiper / 1 = wiper to end 3, total ohms)
    trimmers: dict[str, tuple[str, int, float]] = field(default_factory=dict)
    trimmer_elements: list[tuple[str, str, str, str]] = field(default_factory=list)  # (name, ref, a, b)


def sort_other_parts(v: NetlistView) -> OtherParts:
    """Connectors, shorts, sources and trimmers among the parts recognition calls 'other'."""
    out = OtherParts()
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
                    out.connectors.setdefault(n, []).append((ref, p))
            continue
        if _is_trimmer(ref, lib, c):
            _add_trimmer(v, ref, c, out)
            continue
        if len(c.pins) != 2 or len(nets) != 2 or nets[0] == nets[1]:
            continue
        if "open" in lib.lower().rsplit(":", 1)[-1]:
            continue
        if _SHORT_LIB.search(lib) or pre in _SHORT_PREFIX:
            out.shorts.append((ref, nets[0], nets[1]))
        elif _SOURCE_LIB.search(lib) or pre in _SOURCE_PREFIX:
            out.sources.append((ref, nets[0], nets[1]))
    return out


def _add_trimmer(v: NetlistView, ref: str, c: Component, out: OtherParts) -> None:
    """A potentiometer or trimmer: two elements, end 1 to the wiper and the wiper to end
    3, whose split over the travel is unknown (:func:`thevenin` states the range).
    Their nominal ohms are NaN until a travel position is given."""
    pins = sorted(c.pins, key=lambda p: (not (c.pins[p].name or "").upper().startswith("W"), p))
    wiper = pins[0] if (c.pins[pins[0]].name or "").upper().startswith("W") else "2"
    ends = sorted(p for p in c.pins if p != wiper)
    nets = [v.net_of.get((ref, p)) for p in (ends[0], wiper, ends[-1])]
    if len(ends) != 2 or not all(nets):
        return
    try:
        total = float(parse_value(c.value or "", "ohm"))
    except ValueError:
        total = math.nan
    for k, (a, b) in enumerate(((nets[0], nets[1]), (nets[1], nets[2]))):
        name = f"{ref}:{'ab'[k]}"
        out.trimmer_elements.append((name, ref, a, b))
        out.trimmers[name] = (ref, k, total)


def _take_values(view: NetlistView, other) -> None:
    """The resistor values ``other`` (recognition's view of the same design) has read, for
    ``view``: a value, its tolerance from a field or the value string, and an unreadable
    value's note depend on the part alone; only an assumed tolerance is the view's own
    default (values.resistance_of). Reading the values again cost as much as the rest of
    the DC view."""
    got = getattr(other, "_values", None)
    if not got or other is view:
        return
    mine, origin = view._values, default_origin(view.default_from)
    for ref, (ohms, tol, note) in got.items():
        if ref not in mine and ref in view.comps:
            if tol.source == "default":
                tol = Sourced(view.default_tol, "default", origin)
            mine[ref] = (ohms, tol, note)


class DCView:
    """The DC picture of a Netlist: conducting elements, defined-potential nets, connectors."""

    def __init__(self, netlist: Netlist, rails: Mapping[str, Sourced] | None = None,
                 parts=None):
        # ``parts`` (the part library) gives the models of op-amps outside a stage that
        # analysis solves with it (frontcheck.analysis.neighbourhood).
        self.view = NetlistView(netlist, parts, rails=dict(rails or {}))
        _take_values(self.view, first_index(netlist, parts))
        self.rails = dict(rails or {})
        self._rail: dict[str, bool] = {}        # is_rail of each net asked (the rails are fixed)
        self.resistors = [(e.name, e.ref, e.a, e.b) for e in self.view.resistors]
        other = sort_other_parts(self.view)
        self.shorts = other.shorts
        self.sources = other.sources
        self.connectors = other.connectors
        self.trimmers = other.trimmers
        self.resistors += other.trimmer_elements
        # A connector marked DNP keeps its pads on the board: whatever is soldered or plugged
        # there (an electrode lead, a test clip) is a source off the board as for a fitted one.
        unfitted = {ref for ref in self.view.dnp if _prefix(ref) in _CONNECTOR_PREFIX
                    or (netlist.components[ref].lib_id or "").lower().startswith("connector")}
        for net in (netlist.nets if unfitted else ()):
            for node in net.nodes:
                if node.ref in unfitted:
                    self.connectors.setdefault(net.name, []).append((node.ref, node.pin))
        self._zero = {r for r in {e[1] for e in self.resistors} if self._ohms(r) == 0.0}
        self._links: dict[str, list[tuple[str, str, str]]] | None = None
        self._cap_links: dict[str, list[tuple[str, str, str]]] | None = None
        self._groups = None
        self._merging: frozenset[str] | None = None
        self.outputs: dict[str, str] = {}       # net -> 'U2B output'
        # net -> 'U5 pin 3 (VOUT)': driven by an IC output no part data models
        self.ic_outputs: dict[str, str] = {}
        self._find_driven_outputs()
        self.loop_buffers: dict[str, OpUnit] = {}
        self._find_loop_buffers()

    def _find_driven_outputs(self) -> None:
        """Op-amp unit outputs, then amplifier output pins and supply outputs."""
        v = self.view
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
        # Output pins of other ICs (a DAC, a voltage reference, a logic gate): the net is
        # driven, but nothing here models the driver, so its impedance and voltage are unknown.
        for net, nodes in v.nodes.items():
            if net in self.outputs or self.is_rail(net):
                continue
            for ref, pin in nodes:
                p = v.comps[ref].pins.get(pin)
                if p is not None and p.type == "output" and v.kind[ref] in _IC_KINDS \
                        and _prefix(ref) not in _CONNECTOR_PREFIX:
                    self.ic_outputs.setdefault(net, f"{ref} pin {pin} ({p.name or 'output'})")

    def _drive_links(self) -> dict[str, list[str]]:
        """Net -> nets one resistor, short or two-pin diode away (how an op-amp output
        reaches the bases or gates of a follower it drives)."""
        v = self.view
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
        return links

    def _find_loop_buffers(self) -> None:
        # A transistor follower inside an op-amp's loop (a rail splitter, a boosted buffer):
        # the net on the transistors' emitters/sources that the op-amp senses at its inverting
        # input (directly or through one feedback resistor), with the bases/gates driven from
        # the op-amp output (through at most three resistors, diodes or shorts), is held by
        # the loop at DC as a plain follower's output is.
        v = self.view
        links = self._drive_links()
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

    def element_ohms(self, name: str, ref: str, travel: float | None = None) -> float:
        """Ohms of one conducting element; a trimmer element at wiper ``travel`` (0..1 from
        end 1), NaN without one (its split is unknown)."""
        t = self.trimmers.get(name)
        if t is None:
            return self._ohms(ref)
        if travel is None:
            return math.nan
        share = travel if t[1] == 0 else 1.0 - travel
        return max(share, 1e-9) * t[2]         # an end of the travel: a near-short

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
        got = self._rail.get(net)
        if got is None:
            got = self._rail[net] = (net in self.rails or is_ground_name(net)
                                     or is_supply_name(net))
        return got

    def defined(self, net: str) -> str | None:
        """Why ``net`` has a defined potential ('GND', 'U2B output', 'U5 pin 3 (VOUT)'), or
        None. An IC output no part data models is driven, at an unknown voltage."""
        if self.is_rail(net):
            return net
        return self.outputs.get(net) or self.ic_outputs.get(net)

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
                res[name] = (len(res), a, b, self.element_ohms(name, ref))
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


def walk(links: list[dict[str, list[tuple[str, str, str]]]], start: str, stop,
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


def path_parts(parent, net) -> list[str]:
    """The parts on the path the walk took from its start to ``net``, in order."""
    parts = []
    while parent.get(net):
        net, part = parent[net][0], parent[net][1]
        parts.append(part)
    return parts[::-1]

