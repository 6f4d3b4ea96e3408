"""Connectivity: turn a sheet hierarchy into the netlist KiCad 9 would export.

The rules are those measured in docs/kicad-connectivity.md (KiCad 9.0.2 is the oracle where 9
and 10 differ). Work is linear in the size of the design: the geometry of each sheet file is
computed once (``geometry``), and nets are formed with one union-find over
  * geometric groups of each sheet instance, ("s", instance, group),
  * ("L", instance, text) name nodes: local and hierarchical labels, and the local side of
    global labels and power symbols (same text on the same sheet instance = one net),
  * ("G", text) name nodes: global labels, power symbols, hidden power_in pins.
Net names follow docs/kicad-connectivity.md secs. 3 and 4 (``netnames``): highest driver
priority; among strong local drivers the one nearest the root; then names without ``-Pad``
first; then code-point order.
"""

from __future__ import annotations

import gc

from frontcheck.disjoint_sets import DisjointSets
from frontcheck.kicad.busnames import BusMember, bus_members
from frontcheck.kicad.components import ComponentTable, resolve_vars
from frontcheck.kicad.geometry import (GLOBAL, LABEL_PRIORITY, LOCAL_POWER, POWER, SHEET_PIN,
                                       Geometry, PinItem, lib_of, sheet_geometry)
from frontcheck.kicad.hierarchy import Hierarchy, SheetInstance
from frontcheck.kicad.netnames import (Candidate, NetParts, PinRef, _natural_key, escape,
                                       natural_compare, natural_key_for, net_sort_key,
                                       pin_display_name, unit_letter)
from frontcheck.kicad.schematic import POWER_NAME_FROM_VALUE, LibSymbol
from frontcheck.netlist import Net, Netlist, Node

__all__ = ["build_netlist", "natural_compare", "net_sort_key", "natural_key_for",
           "bus_members", "BusMember", "pin_display_name", "_natural_key"]


def build_netlist(h: Hierarchy, variables: dict[str, str] | None = None,
                  source: str = "") -> Netlist:
    """Connect every sheet instance of ``h`` and return the Netlist (KiCad 9 semantics)."""
    # The pass allocates many small objects and frees none of them until it returns; the
    # cyclic collector's repeated full scans would make it superlinear in design size.
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        b = _NetBuilder(h, variables or {})
        for ii in range(len(h.instances)):
            b.add_instance(ii)
        b.join_jumpers()
        return Netlist(components=b.components.ordered(), nets=b.nets(), source=source,
                       notes=b.notes)
    finally:
        if was_enabled:
            gc.enable()


class _NetBuilder:
    """One pass over the sheet instances, collecting union-find links, name candidates and
    pins; :meth:`nets` then reads the nets off the union-find."""

    def __init__(self, h: Hierarchy, variables: dict[str, str]):
        self.h = h
        self.variables = variables
        self.aliases: dict[str, list[str]] = {}
        for sch in h.files.values():
            for k, v in sch.bus_aliases.items():
                self.aliases.setdefault(k, v)
        self.geoms = {id(sch): sheet_geometry(sch, self.aliases) for sch in h.files.values()}
        self.geoms_by_units: dict[tuple, Geometry] = {}
        self.refs_of: dict[int, list[tuple[str, int]]] = {}
        self.uf = DisjointSets()
        self.cands: dict = {}                 # uf key -> list[Candidate]
        self.pin_items: list = []             # (uf key, PinRef, counts)
        self.nc_keys: list = []
        self.notes: list[str] = [w for sch in h.files.values() for w in sch.warnings]
        self.components = ComponentTable(variables, self.notes)
        # (library symbol, unit, body style, file version) -> display name -> pin numbers of
        # that name in the placed unit: the same for every instance that places it
        self.unit_names: dict[tuple, dict[str, set[str]]] = {}
        self.jumper_pins: dict[str, dict[str, list]] = {}
        self.jumper_libs: dict[str, LibSymbol] = {}

    def cand(self, key, prio, depth, name, rank=0) -> None:
        self.cands.setdefault(key, []).append(Candidate(prio, depth, name, rank))

    def refs(self, ii: int) -> list[tuple[str, int]]:
        """(reference, unit) of each placed symbol of instance ``ii``."""
        refs = self.refs_of.get(ii)
        if refs is None:
            inst = self.h.instances[ii]
            refs = self.refs_of[ii] = [self.h.reference(inst, sym)
                                       for sym in inst.schematic.symbols]
        return refs

    def geometry(self, ii: int) -> Geometry:
        """The geometry of instance ``ii``: its file's, unless the instance places other
        units of its symbols than the file's own (unit) says."""
        sch = self.h.instances[ii].schematic
        units = tuple(u for _, u in self.refs(ii))
        if units == tuple(sym.unit for sym in sch.symbols):
            return self.geoms[id(sch)]
        key = (id(sch), units)
        if key not in self.geoms_by_units:
            self.geoms_by_units[key] = sheet_geometry(sch, self.aliases, units)
        return self.geoms_by_units[key]

    def add_instance(self, ii: int) -> None:
        inst = self.h.instances[ii]
        g = self.geometry(ii)
        self.nc_keys.extend(("s", ii, r) for r in g.nc_groups)
        self._labels(ii, inst, g)
        bus_sets = self._buses(ii, inst, g)
        self._symbols(ii, inst)
        refs = self.refs(ii)
        roots = g.root_of_pin
        for k, item in enumerate(g.pins):
            self._pin(ii, inst, item, ("s", ii, roots[k]), refs)
        for ci in inst.children:
            self._child(ii, inst, g, ci, bus_sets)

    def _labels(self, ii: int, inst: SheetInstance, g: Geometry) -> None:
        for li, lb in enumerate(inst.schematic.labels):
            if li in g.bus_group_of_label:
                continue
            key = ("s", ii, g.root_of_label[li])
            if lb.kind == "global":
                self.uf.union(key, ("G", lb.text))
                self.uf.union(key, ("L", ii, lb.text))
                self.cand(key, GLOBAL, inst.depth, escape(lb.text))
            else:
                self.uf.union(key, ("L", ii, lb.text))
                self.cand(key, LABEL_PRIORITY[lb.kind], inst.depth,
                          inst.path + escape(lb.text))

    def _buses(self, ii: int, inst: SheetInstance, g: Geometry) -> dict[int, list]:
        """Member name nodes of each bus, named like the bus's driving label."""
        bus_sets: dict[int, list] = {}
        for gid, (prio, kind, text) in g.bus_drivers.items():
            members = bus_members(text, self.aliases) or []
            bus_sets[gid] = members
            for m in members:
                key = ("L", ii, m.full)
                if kind == "global":
                    self.uf.union(key, ("G", m.full))
                    self.cand(key, GLOBAL, inst.depth, escape(m.full))
                else:
                    self.uf.find(key)
                    self.cand(key, prio, inst.depth, inst.path + escape(m.full))
        return bus_sets

    def _symbols(self, ii: int, inst: SheetInstance) -> None:
        sch = inst.schematic
        for (ref, unit), sym in zip(self.refs(ii), sch.symbols):
            lib = lib_of(sch, sym)
            # Power symbols are never listed by KiCad 9, whatever their reference
            # (docs/kicad-connectivity.md sec. 6).
            is_power = lib is not None and lib.power is not None
            if ref.startswith("#") or not sym.on_board or is_power:
                continue
            if lib is None:
                self.notes.append(f"{ref}: library symbol {sym.lib_key} is not in the "
                                  f"sheet's lib_symbols ({sch.file}); its pins are unknown "
                                  "and it is in no net")
            self.components.add(ref, unit, sym, lib, sch, inst, ii)

    def _power(self, ii: int, inst: SheetInstance, item: PinItem, lib: LibSymbol, key) -> None:
        """The global (or per-sheet) net a power pin joins (docs/kicad-connectivity.md
        sec. 3)."""
        sch, lp = inst.schematic, item.pin
        if lib.power is not None:
            if sch.version >= POWER_NAME_FROM_VALUE:
                value = sch.symbols[item.sym].fields.get("Value", "")
                net = resolve_vars(value, self.variables)
            else:
                net = lp.name
            if lib.power == "local":
                self.uf.union(key, ("L", ii, net))
                self.cand(key, LOCAL_POWER, inst.depth, inst.path + escape(net))
                return
            rank = 0
        elif lp.hidden:
            net, rank = lp.name, 1        # legacy hidden power pin of an ordinary symbol
        else:
            return
        self.uf.union(key, ("G", net))
        self.uf.union(key, ("L", ii, net))
        self.cand(key, POWER, inst.depth, escape(net), rank)

    def _pin(self, ii: int, inst: SheetInstance, item: PinItem, key, refs) -> None:
        sch, lp = inst.schematic, item.pin
        sym = sch.symbols[item.sym]
        ref, unit = refs[item.sym]
        lib = lib_of(sch, sym)
        if lp.type == "power_in":
            self._power(ii, inst, item, lib, key)
        listed = (not ref.startswith("#")) and sym.on_board and lib.power is None
        name = pin_display_name(lp.name, sch.version)
        placed = (id(lib), unit, sym.body_style, sch.version)
        unit_names = self.unit_names.get(placed)
        if unit_names is None:
            unit_names = self.unit_names[placed] = {}
            for q in lib.pins_for(unit, sym.body_style, sch.version):
                unit_names.setdefault(pin_display_name(q.name, sch.version), set()).add(q.number)
        # another pin of the unit has this name: a number other than this pin's among them
        same = unit_names.get(name)
        dup = bool(name) and same is not None and (len(same) > 1 or lp.number not in same)
        node = Node(ref, lp.number, name, lp.type) if listed else None
        pr = PinRef(ref, lp.number, name, unit_letter(unit) if lib.unit_count > 1 else "", dup,
                    namer=(lib.power is None and sym.on_board), node=node,
                    where=(ii,) + item.at)
        self.pin_items.append((key, pr, lp.type != "no_connect"))
        if lib.jumper_pin_groups or lib.duplicate_pin_numbers_are_jumpers:
            self.jumper_pins.setdefault(ref, {}).setdefault(lp.number, []).append(key)
            self.jumper_libs[ref] = lib

    def _child(self, ii: int, inst: SheetInstance, g: Geometry, ci: int, bus_sets) -> None:
        """This instance's sheet pins <-> the child's hierarchical labels."""
        child = self.h.instances[ci]
        cg = self.geometry(ci)
        shi = next(i for i, s in enumerate(inst.schematic.sheets) if s is child.sheet)
        hier: dict[str, list[int]] = {}
        for li, lb in enumerate(child.schematic.labels):
            if lb.kind == "hierarchical":
                hier.setdefault(lb.text, []).append(li)
        for pi, sp in enumerate(child.sheet.pins):
            if (shi, pi) in g.root_of_sheet_pin:
                key = ("s", ii, g.root_of_sheet_pin[(shi, pi)])
                self.cand(key, SHEET_PIN, inst.depth, inst.path + escape(sp.name),
                          0 if sp.shape == "output" else 1)
                if sp.name in hier:
                    self.uf.union(key, ("L", ci, sp.name))
                continue
            bg = g.bus_group_of_sheet_pin.get((shi, pi))
            parent_members = bus_sets.get(bg) or bus_members(sp.name, self.aliases) or []
            for li in hier.get(sp.name, ()):
                cbg = cg.bus_group_of_label.get(li)
                drv = cg.bus_drivers.get(cbg) if cbg is not None else None
                child_members = bus_members(drv[2] if drv else sp.name, self.aliases) or []
                _join_bus(self.uf, ii, parent_members, ci, child_members)

    def join_jumpers(self) -> None:
        """Jumpers (KiCad 9.99+ libraries): pins of one group, or pins sharing a number when
        duplicate numbers are declared jumpers, are one net (corpus case "jumpers")."""
        for ref, by_number in self.jumper_pins.items():
            lib = self.jumper_libs[ref]
            groups = [list(g) for g in lib.jumper_pin_groups]
            if lib.duplicate_pin_numbers_are_jumpers:
                groups.extend([n] for n in by_number)
            for grp in groups:
                keys = [k for n in grp for k in by_number.get(n, ())]
                for k in keys[1:]:
                    self.uf.union(keys[0], k)

    def nets(self) -> list[Net]:
        find = self.uf.find
        parts: dict = {}
        for key, lst in self.cands.items():
            parts.setdefault(find(key), NetParts()).cands.extend(lst)
        for key in self.nc_keys:
            parts.setdefault(find(key), NetParts()).nc = True
        for key, pr, counts in self.pin_items:
            parts.setdefault(find(key), NetParts()).pins.append((pr, counts))
        nets: list[Net] = []
        seen: dict[tuple[str, str], str] = {}
        for p in parts.values():
            nodes = p.nodes()
            if not nodes:
                continue
            name = p.name()
            for n in nodes:
                k = (n.ref, n.pin)
                if k in seen:
                    self.notes.append(f"pin {n.ref}.{n.pin} is in two nets ({seen[k]} and "
                                      f"{name}) - duplicate reference?")
                else:
                    seen[k] = name
            nets.append(Net(name, nodes))
        key = natural_key_for([n.name for n in nets])
        nets.sort(key=lambda n: key(n.name))
        return nets


def _join_bus(uf: DisjointSets, pi: int, pm: list, ci: int, cm: list) -> None:
    """Connect matching members of a parent-side and a child-side bus: vector buses by
    index, group buses by member name without the group prefix."""
    if pm and cm and all(m.index is not None for m in pm) and all(
            m.index is not None for m in cm):
        by = {m.index: m for m in pm}
        for m in cm:
            if m.index in by:
                uf.union(("L", pi, by[m.index].full), ("L", ci, m.full))
        return
    by = {}
    for m in pm:
        by.setdefault(m.local, m)
    for m in cm:
        if m.local in by:
            uf.union(("L", pi, by[m.local].full), ("L", ci, m.full))
