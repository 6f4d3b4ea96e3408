"""Connectivity: turn a sheet hierarchy into the netlist KiCad 9 would export.

The rules are those measured in docs/kicad-connectivity.md (KiCad 9.0.2 is the oracle where 9
and 10 differ). Work is linear in the size of the design: the geometry of each sheet file is
computed once (``geometry``), and nets are formed with one union-find over
  * geometric groups of each sheet instance (integers: the instance's first key plus the
    group's number in its geometry),
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
                                       Geometry, lib_of, sheet_geometry)
from frontcheck.kicad.hierarchy import Hierarchy, SheetInstance
from frontcheck.kicad.netnames import (NetParts, PinSpec, _natural_key, escape,
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
        self.units_of_geom: dict[int, tuple] = {}   # id(geometry) -> units, when not the file's
        self.plans: dict[int, list[tuple]] = {}     # id(geometry) -> _pin_plan
        self.label_plans: dict[int, list[tuple]] = {}
        # id(schematic) -> (symbol, library symbol, may be listed) of each placed symbol
        self.placed: dict[int, list[tuple]] = {}
        # Union-find keys: the geometric groups of instance ii are the integers from
        # base[ii]; name nodes are tuples ("L", instance, text) and ("G", text).
        self.base: dict[int, int] = {}
        self.next_key = 0
        self.refs_of: dict[int, list[tuple[str, int]]] = {}
        self.uf = DisjointSets()
        self.cands: dict = {}                 # uf key -> candidates (netnames)
        self.pin_items: list = []             # (uf key, (reference, PinSpec, instance))
        self.nc_keys: list = []
        self.notes: list[str] = [w for sch in h.files.values() for w in sch.warnings]
        self.components = ComponentTable(variables, self.notes)
        # (library symbol, unit, body style, file version) -> display name -> pin numbers of
        # that name in the placed unit: the same for every instance that places it
        self.unit_names: dict[tuple, dict[str, set[str]]] = {}
        self.jumper_pins: dict[str, dict[str, list]] = {}
        self.jumper_libs: dict[str, LibSymbol] = {}

    def cand(self, key, prio, depth, name, rank=0) -> None:
        self.cands.setdefault(key, []).append((prio, depth, name, rank))

    def refs(self, ii: int) -> list[tuple[str, int]]:
        """(reference, unit) of each placed symbol of instance ``ii``."""
        refs = self.refs_of.get(ii)
        if refs is None:
            refs = self.refs_of[ii] = self.h.references(self.h.instances[ii])
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
            g = self.geoms_by_units[key] = sheet_geometry(sch, self.aliases, units)
            self.units_of_geom[id(g)] = units
        return self.geoms_by_units[key]

    def add_instance(self, ii: int) -> None:
        inst = self.h.instances[ii]
        g = self.geometry(ii)
        base = self.base[ii] = self.next_key
        self.next_key += g.groups
        self.nc_keys.extend(base + r for r in g.nc_groups)
        self._labels(ii, inst, g)
        bus_sets = self._buses(ii, inst, g)
        self._symbols(ii, inst)
        self._pins(ii, inst, g, self.refs(ii))
        for ci in inst.children:
            self._child(ii, inst, g, ci, bus_sets)

    def _labels(self, ii: int, inst: SheetInstance, g: Geometry) -> None:
        plan = self.label_plans.get(id(g))
        if plan is None:
            plan = self.label_plans[id(g)] = [
                (g.root_of_label[li], lb.kind == "global", lb.text, LABEL_PRIORITY[lb.kind],
                 escape(lb.text))
                for li, lb in enumerate(inst.schematic.labels)
                if li not in g.bus_group_of_label]
        base, depth, path = self.base[ii], inst.depth, inst.path
        union, cands = self.uf.union, self.cands
        for root, is_global, text, prio, escaped in plan:
            key = base + root
            if is_global:
                union(key, ("G", text))
                union(key, ("L", ii, text))
                c = (prio, depth, escaped, 0)
            else:
                union(key, ("L", ii, text))
                c = (prio, depth, path + escaped, 0)
            lst = cands.get(key)
            if lst is None:
                cands[key] = [c]
            else:
                lst.append(c)

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
        placed = self.placed.get(id(sch))
        if placed is None:
            # Power symbols are never listed by KiCad 9, whatever their reference
            # (docs/kicad-connectivity.md sec. 6); nor are symbols not on the board.
            placed = self.placed[id(sch)] = []
            for sym in sch.symbols:
                lib = lib_of(sch, sym)
                placed.append((sym, lib, sym.on_board and (lib is None or lib.power is None)))
        for (ref, unit), (sym, lib, listed) in zip(self.refs(ii), placed):
            if not listed or ref.startswith("#"):
                continue
            if lib is None:
                self.notes.append(f"{ref}: library symbol {sym.lib_key} is not in the "
                                  f"sheet's lib_symbols ({sch.file}); its pins are unknown "
                                  "and it is in no net")
            self.components.add(ref, unit, sym, lib, sch, inst, ii)

    def _pin_plan(self, g: Geometry, sch) -> list[tuple]:
        plan = self.plans.get(id(g))
        if plan is None:
            plan = self.plans[id(g)] = pin_plan(g, sch, self.units_of_geom.get(id(g)),
                                                self.variables, self.unit_names)
        return plan

    def _pins(self, ii: int, inst: SheetInstance, g: Geometry, refs) -> None:
        base = self.base[ii]
        depth, path = inst.depth, inst.path
        union, cand, append = self.uf.union, self.cand, self.pin_items.append
        for si, root, power, jumper, lib, spec in self._pin_plan(g, inst.schematic):
            key = base + root
            ref = refs[si][0]
            if power is not None:
                local, net, rank = power
                if local:
                    union(key, ("L", ii, net))
                    cand(key, LOCAL_POWER, depth, path + escape(net))
                else:
                    union(key, ("G", net))
                    union(key, ("L", ii, net))
                    cand(key, POWER, depth, escape(net), rank)
            append((key, (ref, spec, ii)))
            if jumper:
                self.jumper_pins.setdefault(ref, {}).setdefault(spec.number, []).append(key)
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
                key = self.base[ii] + g.root_of_sheet_pin[(shi, pi)]
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
        root_of = self.uf.flatten().get
        parts: dict = {}
        for key, lst in self.cands.items():
            root = root_of(key, key)
            p = parts.get(root)
            if p is None:
                p = parts[root] = NetParts()
            p.cands.extend(lst)
        for key in self.nc_keys:
            root = root_of(key, key)
            p = parts.get(root)
            if p is None:
                p = parts[root] = NetParts()
            p.nc = True
        for key, pin in self.pin_items:
            root = root_of(key, key)
            p = parts.get(root)
            if p is None:
                p = parts[root] = NetParts()
            p.pins.append(pin)
        nets: list[Net] = []
        listed: list[tuple[str, str]] = []
        for p in parts.values():
            keys, nodes = p.nodes()
            if nodes:
                listed += keys
                nets.append(Net(p.name(), nodes))
        if len(set(listed)) != len(listed):
            seen: dict[tuple[str, str], str] = {}
            for net in nets:
                for n in net.nodes:
                    k = (n.ref, n.pin)
                    if k in seen:
                        self.notes.append(f"pin {n.ref}.{n.pin} is in two nets ({seen[k]} and "
                                          f"{net.name}) - duplicate reference?")
                    else:
                        seen[k] = net.name
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


def pin_plan(g: Geometry, sch, units: tuple | None, variables: dict[str, str],
             unit_names: dict[tuple, dict[str, set[str]]]) -> list[tuple]:
    """What each pin of a geometry contributes apart from the instance's references, the same
    for every instance that uses the geometry (docs/kicad-connectivity.md secs. 3 and 4): one
    (symbol index, group, power net or None, jumper?, library symbol, PinSpec) per pin of
    ``g.pins``. ``units``: the instance's units when not the file's own; ``unit_names``: a
    cache shared by all geometries."""
    plan = []
    version = sch.version
    for k, item in enumerate(g.pins):
        sym, lp = sch.symbols[item.sym], item.pin
        lib = lib_of(sch, sym)
        unit = units[item.sym] if units is not None else sym.unit
        name = pin_display_name(lp.name, version)
        placed = (id(lib), unit, sym.body_style, version)
        names = unit_names.get(placed)
        if names is None:
            names = unit_names[placed] = {}
            for q in lib.pins_for(unit, sym.body_style, version):
                names.setdefault(pin_display_name(q.name, version), set()).add(q.number)
        # another pin of the unit has this name: a number other than this pin's among them
        same = names.get(name)
        dup = bool(name) and same is not None and (len(same) > 1 or lp.number not in same)
        power = _power_of(sch, sym, lib, lp, variables) if lp.type == "power_in" else None
        spec = PinSpec(lp.number, name, lp.type, unit_letter(unit) if lib.unit_count > 1 else "",
                       dup, lib.power is None and sym.on_board, lp.type != "no_connect", item.at)
        jumper = bool(lib.jumper_pin_groups or lib.duplicate_pin_numbers_are_jumpers)
        plan.append((item.sym, g.root_of_pin[k], power, jumper, lib, spec))
    return plan


def _power_of(sch, sym, lib: LibSymbol, lp, variables: dict[str, str]) -> tuple | None:
    """(local?, net, rank) of the net a power pin joins, None for an ordinary visible power
    input (docs/kicad-connectivity.md sec. 3)."""
    if lib.power is not None:
        if sch.version >= POWER_NAME_FROM_VALUE:
            net = resolve_vars(sym.fields.get("Value", ""), variables)
        else:
            net = lp.name
        return lib.power == "local", net, 0
    if lp.hidden:
        return False, lp.name, 1      # legacy hidden power pin of an ordinary symbol
    return None
