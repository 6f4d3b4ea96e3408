"""Connectivity inside one sheet file: which pins, labels, sheet pins and no-connect flags
touch, by exact integer coordinates (docs/kicad-connectivity.md sections 0 and 2).

Computed once per sheet file (or per file and unit choice, when instances of one file place
different units), shared by every instance of that file. Work is linear in the size of the
sheet: every point is hashed, and wires are indexed by row and column for the
label-on-interior test.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass

from frontcheck.disjoint_sets import DisjointSets
from frontcheck.kicad.busnames import bus_members
from frontcheck.kicad.schematic import LibPin, LibSymbol, PlacedSymbol, Schematic

__all__ = ["PinItem", "Geometry", "sheet_geometry", "lib_of", "SHEET_PIN", "LABEL_PRIORITY"]

# Driver priorities (higher wins), docs/kicad-connectivity.md section 3.
PIN, SHEET_PIN, HIER, LOCAL, LOCAL_POWER, POWER, GLOBAL = 1, 2, 3, 4, 5, 6, 7
LABEL_PRIORITY = {"local": LOCAL, "hierarchical": HIER, "global": GLOBAL}

Point = tuple[int, int]


@dataclass
class PinItem:
    sym: int            # index into schematic.symbols
    pin: LibPin
    at: Point


@dataclass
class Geometry:
    """Connectivity of one sheet file, independent of how often it is used."""

    pins: list[PinItem]
    root_of_pin: list[int]
    root_of_label: list[int]
    root_of_sheet_pin: dict[tuple[int, int], int]      # (sheet index, pin index) -> group
    nc_groups: set[int]
    bus_group_of_label: dict[int, int]                  # label index -> bus group id
    bus_group_of_sheet_pin: dict[tuple[int, int], int]
    bus_drivers: dict[int, tuple[int, str, str]]        # bus group -> (prio, kind, text)
    missing_lib: set[str]
    groups: int = 0                                     # group ids are 0 .. groups - 1


def near_interior(wire, x: int, y: int) -> bool:
    """Is (x, y) on the wire within 1 IU and not one of its ends? (section 0)."""
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


class WireIndex:
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
            if near_interior(self.wires[i], x, y):
                yield i
            k -= 1

    def first_interior_hit(self, x: int, y: int) -> int | None:
        """The first wire :meth:`interior_hits` would give, or None."""
        for table, line, pos in ((self.rows, y, x), (self.rows, y - 1, x), (self.rows, y + 1, x),
                                 (self.cols, x, y), (self.cols, x - 1, y), (self.cols, x + 1, y)):
            entry = table.get(line)
            if entry is None:
                continue
            starts, segs, longest = entry
            k = bisect.bisect_right(starts, pos + 1) - 1
            while k >= 0 and starts[k] >= pos - 1 - longest:
                i = segs[k][2]
                if near_interior(self.wires[i], x, y):
                    return i
                k -= 1
        for i in self.other:
            if near_interior(self.wires[i], x, y):
                return i
        return None

    def interior_hits(self, x: int, y: int):
        for d in (0, -1, 1):
            yield from self._scan(self.rows, y + d, x, x, y)
        for d in (0, -1, 1):
            yield from self._scan(self.cols, x + d, y, x, y)
        for i in self.other:
            if near_interior(self.wires[i], x, y):
                yield i



def lib_of(sch: Schematic, sym: PlacedSymbol) -> LibSymbol | None:
    return sch.lib_symbols.get(sym.lib_key) or sch.lib_symbols.get(sym.lib_id)


class _BusSide:
    """Bus segments joined at their ends; bus labels and bus sheet pins attach at an end or
    on the interior."""

    def __init__(self, buses):
        self.sets = DisjointSets()
        self.points: dict[Point, list[int]] = {}
        for i, b in enumerate(buses):
            self.sets.find(("b", i))
            for pt in ((b.x1, b.y1), (b.x2, b.y2)):
                lst = self.points.setdefault(pt, [])
                for j in lst:
                    self.sets.union(("b", i), ("b", j))
                lst.append(i)
        self.index = WireIndex(buses) if buses else None

    def hits(self, x: int, y: int) -> list[int]:
        hits = list(self.points.get((x, y), ()))
        if not hits and self.index is not None:
            hits = list(self.index.interior_hits(x, y))
        return hits

    def attach(self, key, x: int, y: int) -> None:
        self.sets.find(key)
        for h in self.hits(x, y):
            self.sets.union(key, ("b", h))


def _put(points: dict, pt: Point, item: int) -> None:
    lst = points.get(pt)
    if lst is None:
        points[pt] = [item]
    else:
        lst.append(item)


def _place_pins(sch: Schematic, units, points: dict, first: int
                ) -> tuple[list[PinItem], set[str]]:
    """Every pin of every placed unit at its sheet point; pin k is item ``first + k`` of
    ``points`` (no_connect pins are not put there: they never join anything, section 2)."""
    pins: list[PinItem] = []
    missing: set[str] = set()
    version = sch.version
    unit_pins: dict[tuple, list[LibPin]] = {}
    for si, sym in enumerate(sch.symbols):
        lib = lib_of(sch, sym)
        if lib is None:
            missing.add(sym.lib_key)
            continue
        unit = units[si] if units is not None else sym.unit
        key = (id(lib), unit, sym.body_style)
        lps = unit_pins.get(key)
        if lps is None:
            lps = unit_pins[key] = lib.pins_for(unit, sym.body_style, version)
        # sym.place as a matrix: rx = a*px + b*py, ry = c*px + d*py; point (x + rx, y - ry)
        a, b, c, d = _ROTATIONS.get(sym.angle % 360, _ROTATION_270)
        if sym.mirror == "x":
            c, d = -c, -d
        elif sym.mirror == "y":
            a, b = -a, -b
        x, y = sym.x, sym.y
        for lp in lps:
            px, py = lp.x, lp.y
            pt = (x + a * px + b * py, y - c * px - d * py)
            if lp.type != "no_connect":
                _put(points, pt, first + len(pins))
            pins.append(PinItem(si, lp, pt))
    return pins, missing


# angle -> (a, b, c, d) of PlacedSymbol.place; any other angle is 270 there
_ROTATIONS = {0: (1, 0, 0, 1), 90: (0, -1, 1, 0), 180: (-1, 0, 0, -1)}
_ROTATION_270 = (0, 1, -1, 0)


def _on_bus_side(text: str, x: int, y: int, aliases, points: dict,
                 wires: WireIndex | None, bus: _BusSide) -> bool:
    """Is a label or sheet pin with this text part of a bus? Only when its text is bus syntax
    and it does not sit on a wire or pin with no bus there: a bus-syntax label on a plain wire
    connects by its whole text, like any label (sec. 9). ``points`` holds only wire ends and
    pins when this is asked."""
    if bus_members(text, aliases) is None:
        return False
    if bus.hits(x, y):
        return True
    on_wire = (x, y) in points
    if not on_wire and wires is not None:
        on_wire = wires.first_interior_hit(x, y) is not None
    return not on_wire


def _bus_groups(sch: Schematic, bus: _BusSide, bus_labels, bus_sheet_pins):
    """(bus group of each bus label, of each bus sheet pin, driver of each group)."""
    point_items: dict[Point, list] = {}
    for li in bus_labels:
        lb = sch.labels[li]
        bus.attach(("l", li), lb.x, lb.y)
        point_items.setdefault((lb.x, lb.y), []).append(("l", li))
    for shi, pi in bus_sheet_pins:
        sp = sch.sheets[shi].pins[pi]
        bus.attach(("s", shi, pi), sp.x, sp.y)
        point_items.setdefault((sp.x, sp.y), []).append(("s", shi, pi))
    for items in point_items.values():   # e.g. a bus sheet pin and a bus label, no bus
        for it in items[1:]:
            bus.sets.union(items[0], it)
    group_ids: dict = {}

    def gid(key):
        return group_ids.setdefault(bus.sets.find(key), len(group_ids))

    of_label = {li: gid(("l", li)) for li in bus_labels}
    of_sheet_pin = {k: gid(("s",) + k) for k in bus_sheet_pins}
    drivers: dict[int, tuple[int, str, str]] = {}

    def offer(g, prio, kind, text):
        cur = drivers.get(g)
        if cur is None or (-prio, text) < (-cur[0], cur[2]):
            drivers[g] = (prio, kind, text)

    for li, g in of_label.items():
        lb = sch.labels[li]
        offer(g, LABEL_PRIORITY[lb.kind], lb.kind, lb.text)
    for (shi, pi), g in of_sheet_pin.items():
        offer(g, SHEET_PIN, "sheet_pin", sch.sheets[shi].pins[pi].name)
    return of_label, of_sheet_pin, drivers


def _join(points: dict, n_items: int, labels, net_labels, label_base: int, pin_base: int,
          wires: WireIndex | None):
    """Union-find over the items of ``sheet_geometry``: what shares a point, and each label
    on a wire interior; returns its ``find``."""
    parent = list(range(n_items))

    def find(x: int) -> int:
        while parent[x] != x:
            parent[x] = x = parent[parent[x]]
        return x

    for items in points.values():
        if len(items) > 1:
            first = find(items[0])
            for it in items[1:]:
                r = find(it)
                if r != first:
                    parent[r] = first
    if wires is not None:
        # Label on a wire interior: KiCad 9 attaches it to one wire, and only when no pin
        # end, sheet pin, other label or no-connect flag shares its point (section 2).
        for li in net_labels:
            lb = labels[li]
            own = label_base + li
            if any(it >= pin_base and it != own for it in points[(lb.x, lb.y)]):
                continue
            wi = wires.first_interior_hit(lb.x, lb.y)
            if wi is not None:
                a, b = find(own), find(wi)
                if a != b:
                    parent[a] = b
    return find


def sheet_geometry(sch: Schematic, aliases: dict[str, list[str]],
                   units: tuple[int, ...] | None = None) -> Geometry:
    """``units``: the unit of each placed symbol in the instance at hand (a sheet used several
    times may place a different unit of one package in each instance).

    The items at points are integers, in ranges: wires, bus entries, pins, labels, sheet pins
    (every pin of every sheet, in order), no-connect points; they are joined by a union-find
    over those integers."""
    labels, sheets = sch.labels, sch.sheets
    n_wires, n_entries = len(sch.wires), len(sch.bus_entries)
    pin_base = n_wires + n_entries
    points: dict[Point, list[int]] = {}
    for i, w in enumerate(sch.wires):
        _put(points, (w.x1, w.y1), i)
        _put(points, (w.x2, w.y2), i)
    pins, missing = _place_pins(sch, units, points, pin_base)
    label_base = pin_base + len(pins)
    sheet_pin_base = label_base + len(labels)
    sheet_pins = [(shi, pi) for shi, sh in enumerate(sheets) for pi in range(len(sh.pins))]
    nc_base = sheet_pin_base + len(sheet_pins)
    wires = WireIndex(sch.wires) if sch.wires else None
    bus = _BusSide(sch.buses)
    # Labels and sheet pins: bus ones go to the bus side, the rest to the wire side.
    net_labels, bus_labels = [], []
    for li, lb in enumerate(labels):
        on_bus = _on_bus_side(lb.text, lb.x, lb.y, aliases, points, wires, bus)
        (bus_labels if on_bus else net_labels).append(li)
    net_sheet_pins, bus_sheet_pins = [], []
    for j, (shi, pi) in enumerate(sheet_pins):
        sp = sheets[shi].pins[pi]
        on_bus = _on_bus_side(sp.name, sp.x, sp.y, aliases, points, wires, bus)
        (bus_sheet_pins if on_bus else net_sheet_pins).append(j)
    for li in net_labels:
        lb = labels[li]
        _put(points, (lb.x, lb.y), label_base + li)
    for j in net_sheet_pins:
        shi, pi = sheet_pins[j]
        sp = sheets[shi].pins[pi]
        _put(points, (sp.x, sp.y), sheet_pin_base + j)
    for bi, be in enumerate(sch.bus_entries):
        # Either end may be the wire end; the items found there decide which it is.
        _put(points, (be.x, be.y), n_wires + bi)
        _put(points, (be.x + be.dx, be.y + be.dy), n_wires + bi)
    nc_points = list(set(sch.no_connects))      # (set order: the order group ids were given in)
    for m, pt in enumerate(nc_points):
        _put(points, pt, nc_base + m)

    find = _join(points, nc_base + len(nc_points), labels, net_labels, label_base, pin_base,
                 wires)
    of_label, of_sheet_pin, drivers = _bus_groups(
        sch, bus, bus_labels, [sheet_pins[j] for j in bus_sheet_pins])

    ids: dict[int, int] = {}

    def rid(item: int) -> int:
        return ids.setdefault(find(item), len(ids))

    return Geometry(pins=pins, root_of_pin=[rid(pin_base + k) for k in range(len(pins))],
                    root_of_label=[rid(label_base + li) for li in range(len(labels))],
                    root_of_sheet_pin={sheet_pins[j]: rid(sheet_pin_base + j)
                                       for j in net_sheet_pins},
                    nc_groups={rid(nc_base + m) for m in range(len(nc_points))},
                    bus_group_of_label=of_label, bus_group_of_sheet_pin=of_sheet_pin,
                    bus_drivers=drivers, missing_lib=missing, groups=len(ids))
