"""An independent reader agrees with ours on the KiCad 6 and 7 files of the corpus: kiutils
(test-only dependency) and our model must see the same placed symbols (lib_id, position,
rotation, mirror, unit), library pins, wires, buses, labels, junctions, no-connects and
sheets. kiutils does not read newer formats reliably, so only versions up to 20230221 are
compared."""

from __future__ import annotations

import functools
from collections import Counter
from pathlib import Path

import pytest

from conftest import SHARED
from frontcheck.kicad.schematic import read_schematic, to_iu

kiutils_schematic = pytest.importorskip("kiutils.schematic")
pytestmark = pytest.mark.oracle


def _files() -> list[Path]:
    if not SHARED.is_dir():
        return []
    out = []
    for p in sorted((SHARED / "corpus").rglob("*.kicad_sch")):
        head = p.read_text(encoding="utf-8")[:200]
        if any(f"(version {v})" in head for v in ("20211123", "20230121", "20230221")):
            out.append(p)
    return out


def iu(v) -> int:
    return to_iu(repr(float(v)))


@functools.lru_cache(maxsize=None)
def _read_both(p: Path):
    return read_schematic(p), kiutils_schematic.Schematic.from_file(str(p))


@pytest.fixture(params=_files(), ids=lambda p: str(p.relative_to(SHARED / "corpus")))
def pair(request):
    return _read_both(request.param)


def test_placed_symbols(pair):
    ours, ku = pair
    theirs = Counter()
    for s in ku.schematicSymbols:
        nickname = getattr(s, "libraryNickname")     # kiutils' name for the library part of lib_id
        lib_id = f"{nickname}:{s.entryName}" if nickname else s.entryName
        mirror = s.mirror if s.mirror in ("x", "y") else None
        theirs[(lib_id, s.libName, iu(s.position.X), iu(s.position.Y),
                int(s.position.angle or 0), mirror, s.unit)] += 1
    mine = Counter((s.lib_id, s.lib_name, s.x, s.y, s.angle, s.mirror, s.unit)
                   for s in ours.symbols)
    assert mine == theirs
    # fields: every property kiutils sees, with its value
    for s, k in zip(ours.symbols, ku.schematicSymbols):
        assert s.fields == {p.key: p.value for p in k.properties}
        assert s.uuid == k.uuid


def test_library_pins(pair):
    ours, ku = pair
    for ls in ku.libSymbols:
        name = ls.libId
        mine = Counter((p.number, p.name, p.type, p.hidden, p.x, p.y, p.unit, p.body_style)
                       for p in ours.lib_symbols[name].pins)
        theirs = Counter()
        for u in ls.units:
            for p in u.pins:
                theirs[(p.number, p.name, p.electricalType, bool(p.hide), iu(p.position.X),
                        iu(p.position.Y), u.unitId, u.styleId)] += 1
        assert mine == theirs, name
        assert (ours.lib_symbols[name].power is not None) == bool(ls.isPower), name


def _segments(points):
    return [(iu(a.X), iu(a.Y), iu(b.X), iu(b.Y)) for a, b in zip(points, points[1:])]


def test_wires_buses_junctions_no_connects(pair):
    ours, ku = pair
    wires, buses = Counter(), Counter()
    for g in ku.graphicalItems:
        if type(g).__name__ == "Connection":
            (wires if g.type == "wire" else buses if g.type == "bus" else Counter()).update(
                _segments(g.points))
    assert Counter((w.x1, w.y1, w.x2, w.y2) for w in ours.wires) == wires
    assert Counter((w.x1, w.y1, w.x2, w.y2) for w in ours.buses) == buses
    assert Counter(ours.junctions) == Counter((iu(j.position.X), iu(j.position.Y))
                                              for j in ku.junctions)
    assert Counter(ours.no_connects) == Counter((iu(n.position.X), iu(n.position.Y))
                                                for n in ku.noConnects)
    assert Counter((b.x, b.y, b.dx, b.dy) for b in ours.bus_entries) == Counter(
        (iu(b.position.X), iu(b.position.Y), iu(b.size.X), iu(b.size.Y)) for b in ku.busEntries)


def test_labels(pair):
    ours, ku = pair
    theirs = Counter()
    for kind, items in (("local", ku.labels), ("global", ku.globalLabels),
                        ("hierarchical", ku.hierarchicalLabels)):
        for lb in items:
            theirs[(kind, lb.text, iu(lb.position.X), iu(lb.position.Y))] += 1
    assert Counter((lb.kind, lb.text, lb.x, lb.y) for lb in ours.labels) == theirs


def test_sheets(pair):
    ours, ku = pair
    theirs = sorted((s.sheetName.value, s.fileName.value, s.uuid,
                     tuple(sorted((p.name, iu(p.position.X), iu(p.position.Y)) for p in s.pins)))
                    for s in ku.sheets)
    mine = sorted((s.name, s.file, s.uuid, tuple(sorted((p.name, p.x, p.y) for p in s.pins)))
                  for s in ours.sheets)
    assert mine == theirs
