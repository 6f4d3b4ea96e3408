"""Connectivity: turn a sheet hierarchy into the netlist KiCad 9 would export.

The rules are those measured in docs/kicad-connectivity.md (KiCad 9.0.2 is the oracle where 9 and 10
differ). Work is linear in the size of the design: every point is hashed (integer IU
coordinates), wires are indexed by row/column for the label-on-interior test, and nets are
formed with one union-find over
  * geometric groups of each sheet file (computed once per file, shared by its instances),
  * ("L", instance, text) name nodes: local and hierarchical labels, and the local side of
    global labels and power symbols (same text on the same sheet instance = one net),
  * ("G", text) name nodes: global labels, power symbols, hidden power_in pins.
Net names follow docs/kicad-connectivity.md secs. 3 and 4: highest driver priority; among strong
local drivers the one nearest the root; then names without ``-Pad`` first; then code-point order.
"""

from __future__ import annotations

import bisect
import gc
import re
from dataclasses import dataclass, field
from functools import cmp_to_key

from frontcheck.kicad.hierarchy import Hierarchy, SheetInstance
from frontcheck.kicad.schematic import (TILDE_IS_LITERAL, POWER_NAME_FROM_VALUE, LibPin,
                                        LibSymbol, PlacedSymbol, Schematic)
from frontcheck.netlist import Component, Location, Net, Netlist, Node, Pin

__all__ = ["build_netlist", "natural_compare", "net_sort_key", "bus_members", "BusMember",
           "pin_display_name"]

# Driver priorities (higher wins), docs/kicad-connectivity.md sec. 3.
PIN, SHEET_PIN, HIER, LOCAL, LOCAL_POWER, POWER, GLOBAL = 1, 2, 3, 4, 5, 6, 7
_LABEL_PRIO = {"local": LOCAL, "hierarchical": HIER, "global": GLOBAL}


# ----------------------------------------------------------------------------- helpers


class _UF:
    __slots__ = ("parent",)

    def __init__(self):
        self.parent: dict = {}

    def find(self, x):
        p = self.parent
        if x not in p:
            p[x] = x
            return x
        root = x
        while p[root] != root:
            root = p[root]
        while p[x] != root:
            p[x], x = root, p[x]
        return root

    def union(self, a, b):
        ra, rb = self.find(a), self.find(b)
        if ra != rb:
            self.parent[ra] = rb


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


_VECTOR = re.compile(r"^(.*?)\[(\d+)\.\.(\d+)\]$")
_GROUP = re.compile(r"^([^{}]*)\{(.*)\}$")


@dataclass(frozen=True)
class BusMember:
    full: str        # net name text inside the sheet: "top.x", "D3"
    local: str       # name used to match across the hierarchy: "x", "D3"
    index: int | None = None   # vector index (vector buses match by index)


def _vector(text: str) -> list[BusMember] | None:
    m = _VECTOR.match(text)
    if not m:
        return None
    p, a, b = m.group(1), int(m.group(2)), int(m.group(3))
    step = 1 if b >= a else -1
    return [BusMember(f"{p}{k}", f"{p}{k}", k) for k in range(a, b + step, step)]


def bus_members(text: str, aliases: dict[str, list[str]]) -> list[BusMember] | None:
    """Members of a bus label/pin text (vector ``A[0..7]``, group ``P{a b}``, alias name), or
    None when the text names an ordinary net."""
    v = _vector(text)
    if v is not None:
        return v
    m = _GROUP.match(text)
    if m:
        prefix, body = m.group(1), m.group(2)
        out: list[BusMember] = []
        for item in body.replace(",", " ").split():
            names = aliases.get(item, [item])
            for name in names:
                sub = _vector(name)
                for s in (sub if sub is not None else [BusMember(name, name)]):
                    full = f"{prefix}.{s.full}" if prefix else s.full
                    out.append(BusMember(full, s.full, None))
        return out
    if text in aliases:
        return bus_members("{" + text + "}", aliases)
    return None


# ----------------------------------------------------------------------------- per-file geometry


@dataclass
class _PinItem:
    sym: int            # index into schematic.symbols
    pin: LibPin
    at: tuple[int, int]


@dataclass
class _Geometry:
    """Connectivity of one sheet file, independent of how often it is used."""

    pins: list[_PinItem]
    root_of_pin: list[int]
    root_of_label: list[int]
    root_of_sheet_pin: dict[tuple[int, int], int]      # (sheet index, pin index) -> group
    nc_groups: set[int]
    bus_group_of_label: dict[int, int]                  # label index -> bus group id
    bus_group_of_sheet_pin: dict[tuple[int, int], int]
    bus_drivers: dict[int, tuple[int, str, str]]        # bus group -> (prio, kind, text)
    missing_lib: set[str]


def _near_interior(wire, x: int, y: int) -> bool:
    """Is (x, y) on the wire within 1 IU and not one of its ends? (docs/kicad-connectivity.md
    sec. 0)."""
    x1, y1, x2, y2 = wire.x1, wire.y1, wire.x2, wire.y2
    if (x, y) == (x1, y1) or (x, y) == (x2, y2):
        return False
    if min(x1, x2) - 1 > x or x > max(x1, x2) + 1 or min(y1, y2) - 1 > y or y > max(y1, y2) + 1:
        return False
    dx, dy = x2 - x1, y2 - y1
    len2 = dx * dx + dy * dy
    if len2 == 0:
        return False
    cross = (x - x1) * dy - (y - y1) * dx
    if cross * cross > len2:          # distance from the line > 1 IU
        return False
    t = (x - x1) * dx + (y - y1) * dy
    return 0 < t < len2


class _WireIndex:
    """Horizontal wires by row, vertical by column (each sorted by start, so a lookup costs
    a bisection), the rest in a list."""

    def __init__(self, wires):
        self.wires = wires
        rows: dict[int, list] = {}
        cols: dict[int, list] = {}
        self.other: list[int] = []
        for i, w in enumerate(wires):
            if w.y1 == w.y2:
                rows.setdefault(w.y1, []).append((min(w.x1, w.x2), max(w.x1, w.x2), i))
            elif w.x1 == w.x2:
                cols.setdefault(w.x1, []).append((min(w.y1, w.y2), max(w.y1, w.y2), i))
            else:
                self.other.append(i)
        self.rows = {k: self._prepare(v) for k, v in rows.items()}
        self.cols = {k: self._prepare(v) for k, v in cols.items()}

    @staticmethod
    def _prepare(segs):
        segs.sort()
        return [s[0] for s in segs], segs, max(s[1] - s[0] for s in segs)

    def _scan(self, table, line, pos, x, y):
        entry = table.get(line)
        if entry is None:
            return
        starts, segs, longest = entry
        k = bisect.bisect_right(starts, pos + 1) - 1
        while k >= 0 and starts[k] >= pos - 1 - longest:
            i = segs[k][2]
            if _near_interior(self.wires[i], x, y):
                yield i
            k -= 1

    def interior_hits(self, x: int, y: int):
        for d in (0, -1, 1):
            yield from self._scan(self.rows, y + d, x, x, y)
        for d in (0, -1, 1):
            yield from self._scan(self.cols, x + d, y, x, y)
        for i in self.other:
            if _near_interior(self.wires[i], x, y):
                yield i


def _lib(sch: Schematic, sym: PlacedSymbol) -> LibSymbol | None:
    return sch.lib_symbols.get(sym.lib_key) or sch.lib_symbols.get(sym.lib_id)


def _geometry(sch: Schematic, aliases: dict[str, list[str]],
              units: tuple[int, ...] | None = None) -> _Geometry:
    """``units``: the unit of each placed symbol in the instance at hand (a sheet used several
    times may place a different unit of one package in each instance)."""
    uf = _UF()
    at_point: dict[tuple[int, int], list] = {}

    def put(pt, item):
        lst = at_point.get(pt)
        if lst is None:
            at_point[pt] = [item]
        else:
            lst.append(item)

    for i, w in enumerate(sch.wires):
        put((w.x1, w.y1), ("w", i))
        put((w.x2, w.y2), ("w", i))
    pins: list[_PinItem] = []
    missing: set[str] = set()
    nc_type_pins: set[int] = set()
    for si, sym in enumerate(sch.symbols):
        lib = _lib(sch, sym)
        if lib is None:
            missing.add(sym.lib_key)
            continue
        unit = units[si] if units is not None else sym.unit
        for lp in lib.pins_for(unit, sym.body_style, sch.version):
            pt = sym.place(lp.x, lp.y)
            k = len(pins)
            pins.append(_PinItem(si, lp, pt))
            if lp.type == "no_connect":
                nc_type_pins.add(k)      # never joins anything (docs/kicad-connectivity.md sec. 2)
            else:
                put(pt, ("p", k))
    # Labels: bus labels go to the bus side, the rest to the wire side.
    net_labels: list[int] = []
    bus_labels: list[int] = []
    for li, lb in enumerate(sch.labels):
        (bus_labels if bus_members(lb.text, aliases) is not None else net_labels).append(li)
    for li in net_labels:
        lb = sch.labels[li]
        put((lb.x, lb.y), ("l", li))
    net_sheet_pins = []
    bus_sheet_pins = []
    for shi, sh in enumerate(sch.sheets):
        for pi, sp in enumerate(sh.pins):
            if bus_members(sp.name, aliases) is not None:
                bus_sheet_pins.append((shi, pi))
            else:
                net_sheet_pins.append((shi, pi))
                put((sp.x, sp.y), ("s", shi, pi))
    for bi, be in enumerate(sch.bus_entries):
        # Either end may be the wire end; the items found there decide which it is.
        put((be.x, be.y), ("e", bi))
        put((be.x + be.dx, be.y + be.dy), ("e", bi))
    nc_points = set(sch.no_connects)
    for pt in nc_points:
        put(pt, ("n", pt))

    for items in at_point.values():
        first = items[0]
        for it in items[1:]:
            uf.union(first, it)

    # Label on a wire interior: KiCad 9 attaches it to one wire, and only when no pin end, sheet
    # pin, other label or no-connect flag shares its point (docs/kicad-connectivity.md sec. 2).
    if sch.wires:
        index = _WireIndex(sch.wires)
        for li in net_labels:
            lb = sch.labels[li]
            items = at_point.get((lb.x, lb.y), ())
            if any(it[0] in "psn" or (it[0] == "l" and it[1] != li) for it in items):
                continue
            for wi in index.interior_hits(lb.x, lb.y):
                uf.union(("l", li), ("w", wi))
                break

    # Bus side: segments joined at their ends; bus labels, bus sheet pins and hierarchical
    # bus labels attach at an end or on the interior.
    bus_uf = _UF()
    bus_points: dict[tuple[int, int], list[int]] = {}
    for i, b in enumerate(sch.buses):
        bus_uf.find(("b", i))
        for pt in ((b.x1, b.y1), (b.x2, b.y2)):
            lst = bus_points.setdefault(pt, [])
            for j in lst:
                bus_uf.union(("b", i), ("b", j))
            lst.append(i)
    bus_index = _WireIndex(sch.buses) if sch.buses else None

    def bus_attach(key, x, y):
        bus_uf.find(key)
        hits = list(bus_points.get((x, y), ()))
        if not hits and bus_index is not None:
            hits = list(bus_index.interior_hits(x, y))
        for h in hits:
            bus_uf.union(key, ("b", h))

    bus_point_items: dict[tuple[int, int], list] = {}
    for li in bus_labels:
        lb = sch.labels[li]
        bus_attach(("l", li), lb.x, lb.y)
        bus_point_items.setdefault((lb.x, lb.y), []).append(("l", li))
    for shi, pi in bus_sheet_pins:
        sp = sch.sheets[shi].pins[pi]
        bus_attach(("s", shi, pi), sp.x, sp.y)
        bus_point_items.setdefault((sp.x, sp.y), []).append(("s", shi, pi))
    for items in bus_point_items.values():   # e.g. a bus sheet pin and a bus label, no bus
        for it in items[1:]:
            bus_uf.union(items[0], it)
    group_ids: dict = {}

    def gid(key):
        r = bus_uf.find(key)
        return group_ids.setdefault(r, len(group_ids))

    bus_group_of_label = {li: gid(("l", li)) for li in bus_labels}
    bus_group_of_sheet_pin = {k: gid(("s",) + k) for k in bus_sheet_pins}
    bus_drivers: dict[int, tuple[int, str, str]] = {}

    def offer(g, prio, kind, text):
        cur = bus_drivers.get(g)
        if cur is None or (-prio, text) < (-cur[0], cur[2]):
            bus_drivers[g] = (prio, kind, text)

    for li, g in bus_group_of_label.items():
        lb = sch.labels[li]
        offer(g, _LABEL_PRIO[lb.kind], lb.kind, lb.text)
    for (shi, pi), g in bus_group_of_sheet_pin.items():
        offer(g, SHEET_PIN, "sheet_pin", sch.sheets[shi].pins[pi].name)

    ids: dict = {}

    def rid(key):
        r = uf.find(key)
        return ids.setdefault(r, len(ids))

    root_of_pin = [rid(("p", k)) for k in range(len(pins))]
    root_of_label = [rid(("l", li)) for li in range(len(sch.labels))]
    root_of_sheet_pin = {k: rid(("s",) + k) for k in net_sheet_pins}
    nc_groups = {rid(("n", pt)) for pt in nc_points}
    return _Geometry(pins, root_of_pin, root_of_label, root_of_sheet_pin, nc_groups,
                     bus_group_of_label, bus_group_of_sheet_pin, bus_drivers, missing)


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
    rank: int = 0      # sheet pins: outputs (0) are preferred over other shapes (1)

    def key(self):
        if self.prio >= POWER:
            return (-self.prio, 0, 0, "-Pad" in self.name, self.name)
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
    geoms = {id(sch): _geometry(sch, aliases) for sch in h.files.values()}
    geoms_by_units: dict[tuple, _Geometry] = {}
    refs_of: dict[int, list[tuple[str, int]]] = {}

    def instance_geometry(ii: int) -> _Geometry:
        sch = h.instances[ii].schematic
        refs = refs_of.get(ii)
        if refs is None:
            refs = refs_of[ii] = [h.reference(h.instances[ii], sym) for sym in sch.symbols]
        units = tuple(u for _, u in refs)
        if units == tuple(sym.unit for sym in sch.symbols):
            return geoms[id(sch)]
        key = (id(sch), units)
        if key not in geoms_by_units:
            geoms_by_units[key] = _geometry(sch, aliases, units)
        return geoms_by_units[key]
    uf = _UF()
    cands: dict = {}                 # uf key -> list[_Cand]
    pin_items: list = []             # (uf key, _PinRef, counts)
    nc_keys: list = []
    notes: list[str] = []
    components: dict[str, Component] = {}
    comp_units: dict[str, dict[int, str]] = {}
    comp_order: list[tuple[int, str]] = []
    jumper_pins: dict[str, dict[str, list]] = {}
    jumper_libs: dict[str, LibSymbol] = {}

    def cand(key, prio, depth, name, rank=0):
        cands.setdefault(key, []).append(_Cand(prio, depth, name, rank))

    for ii, inst in enumerate(h.instances):
        sch = inst.schematic
        g = instance_geometry(ii)
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
                cand(key, _LABEL_PRIO[lb.kind], depth, path + _escape(text))
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
            lib = _lib(sch, sym)
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
            lib = _lib(sch, sym)
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
                cand(key, POWER, depth, _escape(lp.name))
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
            cg = instance_geometry(ci)
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


def _join_bus(uf: _UF, pi: int, pm: list, ci: int, cm: list) -> None:
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
