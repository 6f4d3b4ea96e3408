"""Where the reader says a placed symbol or sheet is: the line of its UUID in the file, found
here by splitting the text into lines (Python's str.splitlines, nothing of the reader), on
every schematic of the real-design corpus. And the coordinate conversion, which remembers
texts it has converted, gives the same integers and the same errors on every call."""

from __future__ import annotations

import pytest

from frontcheck.kicad.schematic import read_schematic, to_iu


def _uuid_lines(text: str) -> dict[str, int]:
    """UUID -> first line it appears on (1-based), by a line-by-line scan."""
    out: dict[str, int] = {}
    for n, line in enumerate(text.split("\n"), start=1):
        for part in line.split('"'):
            if len(part) == 36 and part.count("-") == 4:
                out.setdefault(part, n)
    return out


def test_symbol_and_sheet_lines_are_the_lines_of_their_uuids(corpus):
    files = sorted((corpus / "real-designs").rglob("*.kicad_sch"))
    assert len(files) > 20
    checked = 0
    for p in files:
        sch = read_schematic(p)
        lines = _uuid_lines(p.read_text(encoding="utf-8"))
        for item in [*sch.symbols, *sch.sheets]:
            if item.uuid in lines:
                assert item.line == lines[item.uuid], (p.name, item.uuid)
                checked += 1
    assert checked > 500


def test_coordinates_convert_alike_on_every_call():
    # KiCad rounds half away from zero on load (docs/kicad-connectivity.md sec. 0)
    for _ in range(2):
        assert to_iu("25.4") == 254000 and to_iu("-0.00006") == -1 and to_iu("0.00004") == 0
    for bad in ("1,5", "nan", "x"):
        for _ in range(2):
            with pytest.raises(ValueError):
                to_iu(bad)
    with pytest.raises(OverflowError):
        to_iu("inf")
    with pytest.raises(TypeError):
        to_iu(["at"])
