"""The shortcuts of the per-sheet geometry give what the general code gives.

``WireIndex.first_interior_hit`` is the first wire ``interior_hits`` yields; the pin points
``sheet_geometry`` computes with one matrix per symbol are ``PlacedSymbol.place``'s; a label
text that cannot be a bus (no ``[``, no ``{``, no alias) is refused before any scanning.
"""

from __future__ import annotations

import random

import pytest

from frontcheck.kicad.busnames import _group, _vector, bus_members
from frontcheck.kicad.geometry import WireIndex, sheet_geometry
from frontcheck.kicad.schematic import LibPin, LibSymbol, PlacedSymbol, Schematic, Wire


def test_first_interior_hit_is_the_first_of_all_hits():
    rnd = random.Random(7)
    for _ in range(200):
        wires = []
        for _ in range(rnd.randint(1, 12)):
            x, y = rnd.randint(0, 6), rnd.randint(0, 6)
            kind = rnd.random()
            if kind < 0.4:
                wires.append(Wire(x, y, rnd.randint(0, 6), y))       # horizontal
            elif kind < 0.8:
                wires.append(Wire(x, y, x, rnd.randint(0, 6)))       # vertical
            else:
                wires.append(Wire(x, y, rnd.randint(0, 6), rnd.randint(0, 6)))
        index = WireIndex(wires)
        for x in range(-1, 8):
            for y in range(-1, 8):
                assert index.first_interior_hit(x, y) == next(index.interior_hits(x, y), None)


@pytest.mark.parametrize("angle", [0, 90, 180, 270, -90, 450])
@pytest.mark.parametrize("mirror", [None, "x", "y"])
def test_pin_points_equal_place(angle, mirror):
    pins = [LibPin("1", "A", "input", False, 25400, 0),
            LibPin("2", "B", "output", False, -12700, 38100),
            LibPin("3", "C", "passive", False, 0, -50800)]
    lib = LibSymbol("L:U", pins=pins)
    sym = PlacedSymbol(lib_id="L:U", lib_name=None, x=1000000, y=500000, angle=angle,
                       mirror=mirror, unit=1, body_style=1, fields={}, uuid="u")
    sch = Schematic(file="x.kicad_sch", version=20250114, uuid="r",
                    lib_symbols={"L:U": lib}, symbols=[sym])
    g = sheet_geometry(sch, {})
    assert [item.at for item in g.pins] == [sym.place(p.x, p.y) for p in pins]
    assert len(set(g.root_of_pin)) == 3 and g.groups == 3


@pytest.mark.parametrize("text", ["NET", "~{CS}", "VDD_{1}", "A^{2}", "D[0..3]", "P{A B}",
                                  "B[1..0]x", "ALIAS", "{ALIAS}", "x]", "", "a b"])
def test_bus_members_shortcut_equals_full_parse(text):
    aliases = {"ALIAS": ["X", "Y"]}
    got = bus_members(text, aliases)
    if "[" not in text and "{" not in text and text not in aliases:
        assert got is None and _vector(text) is None and _group(text) is None
    else:
        assert (got is None) == (text in ("~{CS}", "VDD_{1}", "A^{2}"))

