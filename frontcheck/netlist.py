"""The netlist every later stage works on: components, their pins, and nets of (ref, pin) nodes.

A Netlist comes either from a schematic (frontcheck.kicad.connectivity) or from a netlist file
KiCad exported (frontcheck.kicad.netfile); recognition and analysis never know which.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Iterator


@dataclass(frozen=True)
class Location:
    """Where a thing is written: a file (as given on the command line or found through the
    hierarchy) and a 1-based line. ``line`` is None for netlist files that carry no lines."""

    file: str
    line: int | None = None


@dataclass
class Pin:
    """A library pin of a placed component (all placed units together)."""

    number: str
    name: str = ""          # "" when the pin has no name (KiCad's "~" in older files)
    type: str = "passive"   # KiCad electrical type: input, output, power_in, passive, ...
    unit: int = 0           # 0 = common to all units


@dataclass
class Component:
    """One annotated part (all its placed units), as KiCad lists it in a netlist."""

    ref: str
    value: str = ""
    lib_id: str = ""
    footprint: str = ""
    fields: dict[str, str] = field(default_factory=dict)   # every field, Value/Footprint too
    pins: dict[str, Pin] = field(default_factory=dict)     # by pin number (placed units only)
    dnp: bool = False
    in_bom: bool = True
    exclude_from_sim: bool = False
    sheet_path: str = "/"               # human sheet path, "/" or "/Channel 1/"
    uuids: tuple[str, ...] = ()         # placed-unit UUIDs (stable identity for fingerprints)
    location: Location | None = None    # file and line of the (first) placed unit

    def field(self, *names: str, default: str | None = None) -> str | None:
        """First non-empty field among ``names`` (case-insensitive)."""
        lower = {k.lower(): v for k, v in self.fields.items()}
        for n in names:
            v = lower.get(n.lower())
            if v not in (None, ""):
                return v
        return default


@dataclass(frozen=True)
class Node:
    """One pin in a net."""

    ref: str
    pin: str
    pinfunction: str = ""   # the pin's name, as KiCad writes it ("" when unnamed)
    pintype: str = ""


@dataclass
class Net:
    name: str
    nodes: list[Node] = field(default_factory=list)


@dataclass
class Netlist:
    """Components and nets of a whole design (all sheet instances)."""

    components: dict[str, Component] = field(default_factory=dict)
    nets: list[Net] = field(default_factory=list)
    source: str = ""          # what was read (project, sheet or netlist file)
    notes: list[str] = field(default_factory=list)   # odd but readable things seen on load

    @cached_property
    def net_of(self) -> dict[tuple[str, str], Net]:
        """(ref, pin number) -> its net."""
        return {(n.ref, n.pin): net for net in self.nets for n in net.nodes}

    def net_by_name(self, name: str) -> Net | None:
        for net in self.nets:
            if net.name == name:
                return net
        return None

    def pins_of(self, ref: str) -> Iterator[tuple[str, Net]]:
        """(pin number, net) of every connected pin of ``ref``."""
        for (r, p), net in self.net_of.items():
            if r == ref:
                yield p, net

    def graph(self):
        """A networkx bipartite view: component nodes ("C", ref) and net nodes ("N", name);
        an edge per pin, with ``pin`` as edge data (a MultiGraph, so a two-pin part across
        one net keeps both edges)."""
        import networkx as nx

        g = nx.MultiGraph()
        for ref in self.components:
            g.add_node(("C", ref), kind="component")
        for net in self.nets:
            g.add_node(("N", net.name), kind="net")
            for n in net.nodes:
                g.add_edge(("C", n.ref), ("N", net.name), pin=n.pin)
        return g

    def partition(self) -> set[frozenset[tuple[str, str]]]:
        """Nets as sets of (ref, pin): what two netlists must share to be the same circuit."""
        return {frozenset((n.ref, n.pin) for n in net.nodes) for net in self.nets if net.nodes}

    def to_json(self) -> dict:
        """The contract of ``frontcheck netlist --format json`` (docs/architecture.md sec. 4)."""
        return {
            "nets": [
                {"name": net.name, "nodes": [[n.ref, n.pin] for n in net.nodes]}
                for net in self.nets
            ]
        }
