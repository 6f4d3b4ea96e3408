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


class _Points(dict):
    """Point -> the items that end there: ("w", wire), ("p", pin), ("l", label),
    ("s", sheet, pin), ("e", bus entry), ("n", point of a no-connect flag)."""

    def put(self, pt: Point, item: tuple) -> None:
        lst = self.get(pt)
        if lst is None:
            self[pt] = [item]
        else:
            lst.append(item)


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


def _place_pins(sch: Schematic, units, points: _Points) -> tuple[list[PinItem], set[str]]:
    pins: list[PinItem] = []
    missing: set[str] = set()
    for si, sym in enumerate(sch.symbols):
        lib = lib_of(sch, sym)
        if lib is None:
            missing.add(sym.lib_key)
            continue
        unit = units[si] if units is not None else sym.unit
        for lp in lib.pins_for(unit, sym.body_style, sch.version):
            pt = sym.place(lp.x, lp.y)
            k = len(pins)
            pins.append(PinItem(si, lp, pt))
            if lp.type != "no_connect":      # never joins anything (section 2)
                points.put(pt, ("p", k))
    return pins, missing


def _on_bus_side(text: str, x: int, y: int, aliases, points: _Points,
                 wires: WireIndex | None, bus: _BusSide) -> bool:
    """Is a label or sheet pin with this text part of a bus? Only when its text is bus syntax
    and it does not sit on a wire or pin with no bus there: a bus-syntax label on a plain wire
    connects by its whole text, like any label (sec. 9)."""
    if bus_members(text, aliases) is None:
        return False
    if bus.hits(x, y):
        return True
    on_wire = any(it[0] in "wp" for it in points.get((x, y), ()))
    if not on_wire and wires is not None:
        on_wire = next(iter(wires.interior_hits(x, y)), None) is not None
    return not on_wire


def _labels_on_interiors(sch: Schematic, net_labels, points: _Points, wires: WireIndex,
                         uf: DisjointSets) -> None:
    """Label on a wire interior: KiCad 9 attaches it to one wire, and only when no pin end,
    sheet pin, other label or no-connect flag shares its point (section 2)."""
    for li in net_labels:
        lb = sch.labels[li]
        items = points.get((lb.x, lb.y), ())
        if any(it[0] in "psn" or (it[0] == "l" and it[1] != li) for it in items):
            continue
        for wi in wires.interior_hits(lb.x, lb.y):
            uf.union(("l", li), ("w", wi))
            break


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


def sheet_geometry(sch: Schematic, aliases: dict[str, list[str]],
                   units: tuple[int, ...] | None = None) -> Geometry:
    """``units``: the unit of each placed symbol in the instance at hand (a sheet used several
    times may place a different unit of one package in each instance)."""
    points = _Points()
    for i, w in enumerate(sch.wires):
        points.put((w.x1, w.y1), ("w", i))
        points.put((w.x2, w.y2), ("w", i))
    pins, missing = _place_pins(sch, units, points)
    wires = WireIndex(sch.wires) if sch.wires else None
    bus = _BusSide(sch.buses)
    # Labels and sheet pins: bus ones go to the bus side, the rest to the wire side.
    net_labels, bus_labels = [], []
    for li, lb in enumerate(sch.labels):
        on_bus = _on_bus_side(lb.text, lb.x, lb.y, aliases, points, wires, bus)
        (bus_labels if on_bus else net_labels).append(li)
    net_sheet_pins, bus_sheet_pins = [], []
    for shi, sh in enumerate(sch.sheets):
        for pi, sp in enumerate(sh.pins):
            on_bus = _on_bus_side(sp.name, sp.x, sp.y, aliases, points, wires, bus)
            (bus_sheet_pins if on_bus else net_sheet_pins).append((shi, pi))
    for li in net_labels:
        lb = sch.labels[li]
        points.put((lb.x, lb.y), ("l", li))
    for shi, pi in net_sheet_pins:
        sp = sch.sheets[shi].pins[pi]
        points.put((sp.x, sp.y), ("s", shi, pi))
    for bi, be in enumerate(sch.bus_entries):
        # Either end may be the wire end; the items found there decide which it is.
        points.put((be.x, be.y), ("e", bi))
        points.put((be.x + be.dx, be.y + be.dy), ("e", bi))
    nc_points = set(sch.no_connects)
    for pt in nc_points:
        points.put(pt, ("n", pt))

    uf = DisjointSets()
    for items in points.values():
        first = items[0]
        for it in items[1:]:
            uf.union(first, it)
    if wires is not None:
        _labels_on_interiors(sch, net_labels, points, wires, uf)
    of_label, of_sheet_pin, drivers = _bus_groups(sch, bus, bus_labels, bus_sheet_pins)

    ids: dict = {}

    def rid(key):
        return ids.setdefault(uf.find(key), len(ids))

    return Geometry(pins=pins, root_of_pin=[rid(("p", k)) for k in range(len(pins))],
                    root_of_label=[rid(("l", li)) for li in range(len(sch.labels))],
                    root_of_sheet_pin={k: rid(("s",) + k) for k in net_sheet_pins},
                    nc_groups={rid(("n", pt)) for pt in nc_points},
                    bus_group_of_label=of_label, bus_group_of_sheet_pin=of_sheet_pin,
                    bus_drivers=drivers, missing_lib=missing)
