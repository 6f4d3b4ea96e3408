"""Connectivity: turn a sheet hierarchy into the netlist KiCad 9 would export.

The rules are those measured in docs/kicad-connectivity.md (KiCad 9.0.2 is the oracle where 9 and 10
differ). Work is linear in the size of the design: every point is hashed (integer IU
coordinates), wires are indexed by row/column for the label-on-interior test, and nets are
formed with one union-find over
  * geometric groups of each sheet file (computed once per file, shared by its instances),
  * ("L", instance, text) name nodes: local and hierarchical labels, and the local side of
    global labels and power symbols (same text on the same sheet instance = one net),
  * ("G", text) name nodes: global labels, power symbols, hidden power_in pins.
Net names follow docs/kicad-connectivity.md secs. 3 and 4: highest driver priority; among
strong local drivers the one nearest the root; then names without ``-Pad`` first; then code-point order.
"""

from __future__ import annotations

import gc
import re
from dataclasses import dataclass, field
from functools import cmp_to_key

from frontcheck.disjoint_sets import DisjointSets
from frontcheck.kicad.busnames import BusMember, bus_members
from frontcheck.kicad.geometry import (GLOBAL, LABEL_PRIORITY, LOCAL_POWER, POWER, SHEET_PIN,
                                       Geometry, lib_of, sheet_geometry)
from frontcheck.kicad.hierarchy import Hierarchy, SheetInstance
from frontcheck.kicad.schematic import (TILDE_IS_LITERAL, POWER_NAME_FROM_VALUE,
                                        LibSymbol, PlacedSymbol, Schematic)
from frontcheck.netlist import Component, Location, Net, Netlist, Node, Pin

__all__ = ["build_netlist", "natural_compare", "net_sort_key", "bus_members", "BusMember",
           "pin_display_name"]


# ----------------------------------------------------------------------------- helpers


def natural_compare(a: str, b: str) -> int:
    """KiCad's case-sensitive natural string compare (digit runs compared as numbers)."""
    i = j = 0
    la, lb = len(a), len(b)
    while i < la and j < lb:
        c1, c2 = a[i], b[j]
        if c1.isdigit() and c2.isdigit():
            n1 = n2 = 0
            while i < la and a[i].isdigit():
                n1 = n1 * 10 + ord(a[i]) - 48
                i += 1
            while j < lb and b[j].isdigit():
                n2 = n2 * 10 + ord(b[j]) - 48
                j += 1
            if n1 != n2:
                return -1 if n1 < n2 else 1
            c1 = a[i] if i < la else "\0"
            c2 = b[j] if j < lb else "\0"
        if c1 != c2:
            return -1 if c1 < c2 else 1
        if i < la:
            i += 1
        if j < lb:
            j += 1
    if i >= la and j < lb:
        return -1
    if i < la and j >= lb:
        return 1
    return 0


net_sort_key = cmp_to_key(natural_compare)

_RUNS = re.compile(r"([0-9]+)")


def _natural_key(text: str) -> tuple:
    """A key ordering ASCII strings without NUL exactly as :func:`natural_compare` does: a
    digit run is (48, its value), any other character (its code, 0); a digit run against a
    character compares as its first digit would ('0'..'9' are 48..57, no other character
    lies among them), and the end of the string sorts first as the NUL of the comparison."""
    out: list[int] = []
    for k, part in enumerate(_RUNS.split(text)):
        if k % 2:
            out += (48, int(part))
        else:
            for ch in part:
                out += (ord(ch), 0)
    return tuple(out)


def natural_key_for(names) -> "callable":
    """A sort key for ``names`` equal in order to ``cmp_to_key(natural_compare)``: the fast
    :func:`_natural_key` when every name is ASCII without NUL (beyond that, other Unicode
    digits and NUL have their own rules in the comparison), else the comparison itself."""
    if all(n.isascii() and "\0" not in n for n in names):
        return _natural_key
    return net_sort_key


def _escape(text: str) -> str:
    return text.replace("/", "{slash}")


# ----------------------------------------------------------------------------- naming


def _unit_letter(unit: int) -> str:
    s = ""
    n = unit
    while n > 0:
        n, r = divmod(n - 1, 26)
        s = chr(65 + r) + s
    return s


def pin_display_name(name: str, version: int) -> str:
    """A pin's name as KiCad uses it in nets: "" when unnamed, spaces as underscores."""
    if name == "~" and version < TILDE_IS_LITERAL:
        return ""
    return name.replace(" ", "_")


@dataclass
class _Cand:
    prio: int
    depth: int
    name: str
    # Sheet pins: outputs (0) are preferred over other shapes (1). Power: a power symbol's
    # pin (0) is preferred over a hidden power pin of an ordinary symbol (1), whatever the
    # names (docs/kicad-connectivity.md sec. 3).
    rank: int = 0

    def key(self):
        if self.prio >= POWER:
            return (-self.prio, 0, self.rank, "-Pad" in self.name, self.name)
        return (-self.prio, self.depth, self.rank, "-Pad" in self.name, self.name)


@dataclass
class _PinRef:
    ref: str
    number: str
    name: str           # display name ("" = unnamed)
    unit_letter: str    # "" for single-unit symbols
    duplicate: bool     # another pin of the placed unit has the same name
    namer: bool         # may name a net (not a power symbol, not on_board no)
    node: Node | None   # None when not listed (# references, on_board no, power symbols)
    where: tuple = ()   # (sheet instance, x, y) of the pin end


def _pin_net_name(p: _PinRef, unconnected: bool) -> str:
    name = _escape(p.name)
    if unconnected:
        if not name or name == p.number:
            return f"unconnected-({p.ref}-Pad{p.number})"
        return f"unconnected-({p.ref}{p.unit_letter}-{name}-Pad{p.number})"
    if not name or name == p.number:
        return f"Net-({p.ref}-Pad{p.number})"
    if p.duplicate:
        return f"Net-({p.ref}{p.unit_letter}-{name}-Pad{p.number})"
    return f"Net-({p.ref}{p.unit_letter}-{name})"


# ----------------------------------------------------------------------------- netlist


@dataclass
class _Acc:
    cands: list = field(default_factory=list)
    pins: list = field(default_factory=list)
    nc: bool = False


def _resolve_vars(text: str, variables: dict[str, str]) -> str:
    if "${" not in text or not variables:
        return text
    return re.sub(r"\$\{([^}]*)\}", lambda m: variables.get(m.group(1), m.group(0)), text)


def build_netlist(h: Hierarchy, variables: dict[str, str] | None = None,
                  source: str = "") -> Netlist:
    """Connect every sheet instance of ``h`` and return the Netlist (KiCad 9 semantics)."""
    # The pass allocates many small objects and frees none of them until it returns; the
    # cyclic collector's repeated full scans would make it superlinear in design size.
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        return _build(h, variables, source)
    finally:
        if was_enabled:
            gc.enable()


def _build(h: Hierarchy, variables: dict[str, str] | None, source: str) -> Netlist:
    variables = variables or {}
    aliases: dict[str, list[str]] = {}
    for sch in h.files.values():
        for k, v in sch.bus_aliases.items():
            aliases.setdefault(k, v)
    geoms = {id(sch): sheet_geometry(sch, aliases) for sch in h.files.values()}
    geoms_by_units: dict[tuple, Geometry] = {}
    refs_of: dict[int, list[tuple[str, int]]] = {}

    def instancesheet_geometry(ii: int) -> Geometry:
        sch = h.instances[ii].schematic
        refs = refs_of.get(ii)
        if refs is None:
            refs = refs_of[ii] = [h.reference(h.instances[ii], sym) for sym in sch.symbols]
        units = tuple(u for _, u in refs)
        if units == tuple(sym.unit for sym in sch.symbols):
            return geoms[id(sch)]
        key = (id(sch), units)
        if key not in geoms_by_units:
            geoms_by_units[key] = sheet_geometry(sch, aliases, units)
        return geoms_by_units[key]
    uf = DisjointSets()
    cands: dict = {}                 # uf key -> list[_Cand]
    pin_items: list = []             # (uf key, _PinRef, counts)
    nc_keys: list = []
    notes: list[str] = [w for sch in h.files.values() for w in sch.warnings]
    components: dict[str, Component] = {}
    comp_units: dict[str, dict[int, str]] = {}
    comp_order: list[tuple[int, str]] = []
    jumper_pins: dict[str, dict[str, list]] = {}
    jumper_libs: dict[str, LibSymbol] = {}

    def cand(key, prio, depth, name, rank=0):
        cands.setdefault(key, []).append(_Cand(prio, depth, name, rank))

    for ii, inst in enumerate(h.instances):
        sch = inst.schematic
        g = instancesheet_geometry(ii)
        path = inst.path
        depth = inst.depth
        S = lambda r: ("s", ii, r)  # noqa: E731
        for r in g.nc_groups:
            nc_keys.append(S(r))
        # Labels
        for li, lb in enumerate(sch.labels):
            if li in g.bus_group_of_label:
                continue
            key = S(g.root_of_label[li])
            text = lb.text
            if lb.kind == "global":
                uf.union(key, ("G", text))
                uf.union(key, ("L", ii, text))
                cand(key, GLOBAL, depth, _escape(text))
            else:
                uf.union(key, ("L", ii, text))
                cand(key, LABEL_PRIORITY[lb.kind], depth, path + _escape(text))
        # Buses: member name nodes, named like the bus's driving label.
        bus_sets: dict[int, list] = {}
        for gid_, (prio, kind, text) in g.bus_drivers.items():
            members = bus_members(text, aliases) or []
            bus_sets[gid_] = members
            for m in members:
                key = ("L", ii, m.full)
                if kind == "global":
                    uf.union(key, ("G", m.full))
                    cand(key, GLOBAL, depth, _escape(m.full))
                else:
                    uf.find(key)
                    cand(key, prio, depth, path + _escape(m.full))
        # Symbols
        placed_refs: dict[int, tuple[str, int]] = {}
        for si, sym in enumerate(sch.symbols):
            ref, unit = refs_of[ii][si]
            placed_refs[si] = (ref, unit)
            lib = lib_of(sch, sym)
            # Power symbols are never listed by KiCad 9, whatever their reference
            # (docs/kicad-connectivity.md sec. 6).
            is_power = lib is not None and lib.power is not None
            listed = (not ref.startswith("#")) and sym.on_board and not is_power
            if lib is None and listed:
                notes.append(f"{ref}: library symbol {sym.lib_key} is not in the sheet's "
                             f"lib_symbols ({sch.file}); its pins are unknown and it is in "
                             "no net")
            if listed:
                _add_component(components, comp_units, comp_order, notes, ref, unit, sym, lib,
                               sch, inst, ii, variables)
        unit_names: dict[int, dict[str, set[str]]] = {}
        for k, pi in enumerate(g.pins):
            sym = sch.symbols[pi.sym]
            ref, unit = placed_refs[pi.sym]
            lib = lib_of(sch, sym)
            lp = pi.pin
            key = S(g.root_of_pin[k])
            is_power_sym = lib.power is not None and lp.type == "power_in"
            if is_power_sym:
                if sch.version >= POWER_NAME_FROM_VALUE:
                    net = _resolve_vars(sym.fields.get("Value", ""), variables)
                else:
                    net = lp.name
                if lib.power == "local":
                    uf.union(key, ("L", ii, net))
                    cand(key, LOCAL_POWER, depth, path + _escape(net))
                else:
                    uf.union(key, ("G", net))
                    uf.union(key, ("L", ii, net))
                    cand(key, POWER, depth, _escape(net))
            elif lp.type == "power_in" and lp.hidden and lib.power is None:
                # Legacy hidden power pin: joins the global net of its name
                # (docs/kicad-connectivity.md sec. 3).
                uf.union(key, ("G", lp.name))
                uf.union(key, ("L", ii, lp.name))
                cand(key, POWER, depth, _escape(lp.name), 1)
            listed = (not ref.startswith("#")) and sym.on_board and lib.power is None
            name = pin_display_name(lp.name, sch.version)
            names = unit_names.get(pi.sym)
            if names is None:
                names = unit_names[pi.sym] = {}
                for q in lib.pins_for(unit, sym.body_style, sch.version):
                    names.setdefault(pin_display_name(q.name, sch.version), set()).add(q.number)
            dup = bool(name) and bool(names.get(name, set()) - {lp.number})
            node = Node(ref, lp.number, name, lp.type) if listed else None
            pr = _PinRef(ref, lp.number, name,
                         _unit_letter(unit) if lib.unit_count > 1 else "", dup,
                         namer=(lib.power is None and sym.on_board), node=node,
                         where=(ii,) + pi.at)
            pin_items.append((key, pr, lp.type != "no_connect"))
            if lib.jumper_pin_groups or lib.duplicate_pin_numbers_are_jumpers:
                jumper_pins.setdefault(ref, {}).setdefault(lp.number, []).append(key)
                jumper_libs[ref] = lib
        # Hierarchy: this instance's sheet pins <-> each child's hierarchical labels.
        for ci in inst.children:
            child = h.instances[ci]
            csch = child.schematic
            cg = instancesheet_geometry(ci)
            shi = next(i for i, s in enumerate(sch.sheets) if s is child.sheet)
            hier = {}
            for li, lb in enumerate(csch.labels):
                if lb.kind == "hierarchical":
                    hier.setdefault(lb.text, []).append(li)
            for pi, sp in enumerate(child.sheet.pins):
                if (shi, pi) in g.root_of_sheet_pin:
                    key = S(g.root_of_sheet_pin[(shi, pi)])
                    cand(key, SHEET_PIN, depth, path + _escape(sp.name),
                         0 if sp.shape == "output" else 1)
                    if sp.name in hier:
                        uf.union(key, ("L", ci, sp.name))
                    continue
                bg = g.bus_group_of_sheet_pin.get((shi, pi))
                parent_members = bus_sets.get(bg) or bus_members(sp.name, aliases) or []
                for li in hier.get(sp.name, ()):
                    cbg = cg.bus_group_of_label.get(li)
                    drv = cg.bus_drivers.get(cbg) if cbg is not None else None
                    child_members = bus_members(drv[2] if drv else sp.name, aliases) or []
                    _join_bus(uf, ii, parent_members, ci, child_members)

    # Jumpers (KiCad 9.99+ libraries): pins of one group, or pins sharing a number when
    # duplicate numbers are declared jumpers, are one net (corpus case "jumpers").
    for ref, by_number in jumper_pins.items():
        lib = jumper_libs[ref]
        groups = [list(g) for g in lib.jumper_pin_groups]
        if lib.duplicate_pin_numbers_are_jumpers:
            groups.extend([n] for n in by_number)
        for grp in groups:
            keys = [k for n in grp for k in by_number.get(n, ())]
            for k in keys[1:]:
                uf.union(keys[0], k)

    # Gather per net.
    acc: dict = {}
    for key, lst in cands.items():
        acc.setdefault(uf.find(key), _Acc()).cands.extend(lst)
    for key in nc_keys:
        acc.setdefault(uf.find(key), _Acc()).nc = True
    for key, pr, counts in pin_items:
        a = acc.setdefault(uf.find(key), _Acc())
        a.pins.append((pr, counts))

    nets: list[Net] = []
    seen_nodes: dict[tuple[str, str], str] = {}
    for a in acc.values():
        nodes = {}
        for pr, _ in a.pins:
            if pr.node is not None:
                nodes.setdefault((pr.ref, pr.number), pr.node)
        if not nodes:
            continue
        if a.cands:
            name = min(a.cands, key=_Cand.key).name
        else:
            count = sum(1 for _, c in a.pins if c)
            unconnected = a.nc or count <= 1
            namers = [_pin_net_name(pr, unconnected) for pr, _ in a.pins if pr.namer]
            name = min(namers, key=lambda s: ("-Pad" in s, s)) if namers else ""
        # KiCad marks the pins of a net with a no-connect flag "+no_connect" when the net's
        # pins all sit at one point (a lone pin, or stacked pins) - corpus test_hier_no_connect.
        if a.nc and len({pr.where for pr, c in a.pins if c}) == 1:
            nodes = {k: Node(n.ref, n.pin, n.pinfunction, n.pintype + "+no_connect")
                     for k, n in nodes.items()}
        ordered = [nodes[k] for k in sorted(nodes)]
        for n in ordered:
            k = (n.ref, n.pin)
            if k in seen_nodes:
                notes.append(f"pin {n.ref}.{n.pin} is in two nets ({seen_nodes[k]} and {name})"
                             " - duplicate reference?")
            else:
                seen_nodes[k] = name
        nets.append(Net(name, ordered))
    key = natural_key_for([n.name for n in nets])
    nets.sort(key=lambda n: key(n.name))

    comps = {}
    key = natural_key_for([t[1] for t in comp_order])
    for _, ref in sorted(comp_order, key=lambda t: (t[0], key(t[1]))):
        comps[ref] = components[ref]
    return Netlist(components=comps, nets=nets, source=source, notes=notes)


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


def _add_component(components, comp_units, comp_order, notes, ref, unit, sym: PlacedSymbol,
                   lib: LibSymbol | None, sch: Schematic, inst: SheetInstance, ii: int,
                   variables) -> None:
    pins = lib.pins_for(unit, sym.body_style, sch.version) if lib is not None else []
    comp = components.get(ref)
    if comp is None:
        fields = {k: _resolve_vars(v, variables) for k, v in sym.fields.items()}
        # the instance's reference, not the property (docs/kicad-connectivity.md sec. 4)
        fields["Reference"] = ref
        fields.setdefault("Description", "")  # KiCad's export always lists it
        if fields.get("Datasheet") == "~":   # KiCad's spelling of "no datasheet"
            fields["Datasheet"] = ""
        comp = Component(ref=ref, value=fields.get("Value", ""), lib_id=sym.lib_id,
                         footprint=fields.get("Footprint", ""), fields=fields,
                         dnp=sym.dnp, in_bom=sym.in_bom, exclude_from_sim=sym.exclude_from_sim,
                         sheet_path=inst.path, uuids=(sym.uuid,),
                         location=Location(sch.file, sym.line))
        components[ref] = comp
        comp_units[ref] = {}
        comp_order.append((ii, ref))
        if ref.endswith("?"):
            notes.append(f"{ref} is not annotated ({sch.file}:{sym.line}); annotate the "
                         "schematic in KiCad so every part has a unique reference")
    else:
        if unit in comp_units[ref] and comp_units[ref][unit] != sym.uuid + inst.path:
            notes.append(f"duplicate reference {ref} (unit {unit}) in {sch.file}:{sym.line}")
        elif comp.lib_id != sym.lib_id:
            notes.append(f"duplicate reference {ref}: {comp.lib_id} and {sym.lib_id}")
        comp.uuids = comp.uuids + (sym.uuid,)
        comp.dnp = comp.dnp or sym.dnp
        # The first placed unit (lowest unit number) gives the location and fields.
        if unit < min(comp_units[ref], default=unit + 1):
            comp.location = Location(sch.file, sym.line)
            for k, v in sym.fields.items():
                comp.fields.setdefault(k, _resolve_vars(v, variables))
    comp_units[ref][unit] = sym.uuid + inst.path
    for p in pins:
        if p.number not in comp.pins:
            comp.pins[p.number] = Pin(p.number, pin_display_name(p.name, sch.version), p.type,
                                      p.unit)
