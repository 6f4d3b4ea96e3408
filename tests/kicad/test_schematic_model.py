"""The schematic model: what the reader takes from a .kicad_sch file, and how it refuses
what it cannot read. Syntax facts come from KiCad's own files in the shared corpus (their
format notes are in docs/test-corpus.md sec. 3) and from docs/kicad-connectivity.md."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from frontcheck.errors import InputError
from frontcheck.kicad.hierarchy import load_hierarchy
from frontcheck.kicad.project import find_project, load
from frontcheck.kicad.schematic import parse_schematic, read_schematic
from frontcheck.kicad.sexpr import SourceText, parse

ROOT = "30000000-0000-4000-8000-000000000000"


def model(text: str, file="t.kicad_sch"):
    return parse_schematic(parse(text, file), file, SourceText(text, file))


LIB6 = """
  (symbol "Dev:X" (pin_names (offset 0) hide) (in_bom yes) (on_board yes)
    (property "Reference" "U" (id 0) (at 0 0 0) (effects (font (size 1.27 1.27))))
    (symbol "X_0_0" (pin power_in line (at 0 5.08 270) (length 2.54) hide
        (name "VCC" (effects (font (size 1.27 1.27)))) (number "8" (effects (font (size 1.27 1.27))))))
    (symbol "X_1_1" (pin input line (at -5.08 0 0) (length 2.54)
        (name "~" (effects (font (size 1.27 1.27)))) (number "1" (effects (font (size 1.27 1.27))))))
    (symbol "X_1_2" (pin input line (at -5.08 2.54 0) (length 2.54)
        (name "ALT" (effects (font (size 1.27 1.27)))) (number "1" (effects (font (size 1.27 1.27))))))
    (symbol "X_2_1" (pin output line (at 5.08 0 180) (length 2.54) (hide yes)
        (name "Q" (effects (font (size 1.27 1.27)))) (number "2" (effects (font (size 1.27 1.27)))))
      (pin output line (at 5.08 2.54 180) (length 2.54) (hide no)
        (name "R" (effects (font (size 1.27 1.27)))) (number "3" (effects (font (size 1.27 1.27))))))
  )
  (symbol "Dev:Y" (extends "X") (property "Reference" "U" (id 0) (at 0 0 0)))
"""
# Plain KiCad 6 syntax only: the KiCad 6 sheets below are also given to KiCad 9 (LIB6 mixes
# in newer spellings and (power local), which KiCad 9 refuses in a 20211123 file).
LIB_BASIC = """
  (symbol "Dev:X" (pin_names (offset 0) hide) (in_bom yes) (on_board yes)
    (property "Reference" "U" (id 0) (at 0 0 0) (effects (font (size 1.27 1.27))))
    (symbol "X_1_1" (pin input line (at -5.08 0 0) (length 2.54)
        (name "~" (effects (font (size 1.27 1.27)))) (number "1" (effects (font (size 1.27 1.27)))))))
"""
LIB6 = LIB6 + """
  (symbol "P:PL" (power local) (property "Reference" "#PWR" (at 0 0 0))
    (symbol "PL_1_1" (pin power_in line (at 0 0 0) (length 0) (hide yes) (name "PL") (number "1"))))
  (symbol "P:PG" (power global) (property "Reference" "#PWR" (at 0 0 0)))
  (symbol "P:PB" (power) (property "Reference" "#PWR" (at 0 0 0)))
"""


def test_library_symbols_units_styles_and_hide_spellings():
    sch = model(f'(kicad_sch (version 20211123) (generator eeschema) (uuid {ROOT}) '
                f'(lib_symbols {LIB6}))')
    x = sch.lib_symbols["Dev:X"]
    pins = {(p.number, p.unit, p.body_style): p for p in x.pins}
    assert pins[("8", 0, 0)].hidden is True            # bare `hide` (KiCad 6)
    assert pins[("1", 1, 1)].hidden is False           # (pin_names hide) hides names only
    assert pins[("2", 2, 1)].hidden is True            # (hide yes) (KiCad 8)
    assert pins[("3", 2, 1)].hidden is False           # (hide no)
    assert pins[("8", 0, 0)].type == "power_in" and pins[("8", 0, 0)].name == "VCC"
    assert (pins[("1", 1, 1)].x, pins[("1", 1, 1)].y) == (-50800, 0)
    assert x.unit_count == 2
    # unit 1, style 1: common pins + unit-1 style-1 pins (docs/kicad-connectivity.md sec. 1)
    assert sorted((p.number, p.y) for p in x.pins_for(1, 1, 20211123)) == [("1", 0), ("8", 50800)]
    # style 2 ("(convert 2)"): the style-2 pin replaces the style-1 one
    assert sorted((p.number, p.y) for p in x.pins_for(1, 2, 20211123)) == [("1", 25400), ("8", 50800)]
    # from 20250827 style-2 pins need (body_styles demorgan): only B=0 pins remain
    assert [p.number for p in x.pins_for(1, 2, 20250827)] == ["8"]
    assert sorted(p.number for p in x.pins_for(2, 1, 20211123)) == ["2", "3", "8"]
    # derived symbol takes its parent's pins
    assert sorted(p.number for p in sch.lib_symbols["Dev:Y"].pins) == sorted(p.number for p in x.pins)
    assert sch.lib_symbols["P:PL"].power == "local"
    assert sch.lib_symbols["P:PG"].power == "global"
    assert sch.lib_symbols["P:PB"].power == "global"     # bare (power) is global
    assert x.power is None


PLACED = f"""(kicad_sch (version 20231120) (generator "eeschema") (uuid "{ROOT}")
  (lib_symbols {LIB6})
  (frobnicate (future 1 2) "token")
  (symbol (lib_name "X_1") (lib_id "Dev:X") (at 10.16 20.32 90) (mirror y) (unit 2) (convert 2)
    (exclude_from_sim yes) (in_bom no) (on_board no) (dnp yes) (new_flag yes)
    (uuid "40000000-0000-4000-8000-000000000001")
    (property "Reference" "RPROP" (at 0 0 0))
    (property "Value" "4k99" (at 0 0 0))
    (property "Target Gain" "10" (at 0 0 0) (hide yes))
    (property private "Note" "kept" (at 0 0 0))
    (instances (project "p" (path "/{ROOT}" (reference "RINST") (unit 2))))
  )
  (symbol (lib_id "Dev:X") (at 0 0 0) (unit 1) (body_style 2)
    (uuid "40000000-0000-4000-8000-000000000002")
    (property "Reference" "U9" (at 0 0 0)))
  (wire (pts (xy 1 2) (xy 3 2) (xy 3 4)) (uuid "w1"))
  (bus (pts (xy 0 0) (xy 0 10)))
  (bus_entry (at 0 5) (size 2.54 2.54))
  (bus_alias "AL" (members "a" "b"))
  (junction (at 3 2))
  (no_connect (at 7 7))
  (label "L1" (at 1 2 0))
  (global_label "G1" (shape input) (at 3 4 0))
  (hierarchical_label "H1" (shape output) (at 5 5 180))
  (sheet (at 50 50) (size 10 10) (uuid "50000000-0000-4000-8000-000000000001")
    (property "Sheet name" "Six" (id 0) (at 0 0 0))
    (property "Sheet file" "six.kicad_sch" (id 1) (at 0 0 0))
    (pin "IN" input (at 50 55 180) (uuid "p1")))
  (sheet (at 80 50) (size 10 10) (uuid "50000000-0000-4000-8000-000000000002")
    (property "Sheetname" "Eight" (at 0 0 0))
    (property "Sheetfile" "eight.kicad_sch" (at 0 0 0)))
)
"""


def test_placed_symbols_and_drawing_items():
    sch = model(PLACED)
    a, b = sch.symbols
    assert (a.lib_id, a.lib_name, a.lib_key) == ("Dev:X", "X_1", "X_1")
    assert (a.x, a.y, a.angle, a.mirror, a.unit, a.body_style) == (101600, 203200, 90, "y", 2, 2)
    assert (a.dnp, a.in_bom, a.on_board, a.exclude_from_sim) == (True, False, False, True)
    assert a.fields == {"Reference": "RPROP", "Value": "4k99", "Target Gain": "10", "Note": "kept"}
    assert a.instances == {f"/{ROOT}": ("RINST", 2)}
    assert b.body_style == 2 and b.lib_key == "Dev:X"
    assert (a.line, b.line) == (PLACED[:PLACED.index("40000000-0000-4000-8000-000000000001")].count("\n") + 1,
                                PLACED[:PLACED.index("40000000-0000-4000-8000-000000000002")].count("\n") + 1)
    assert [(w.x1, w.y1, w.x2, w.y2) for w in sch.wires] == [(10000, 20000, 30000, 20000),
                                                             (30000, 20000, 30000, 40000)]
    assert len(sch.buses) == 1 and (sch.bus_entries[0].dx, sch.bus_entries[0].dy) == (25400, 25400)
    assert sch.bus_aliases == {"AL": ["a", "b"]}
    assert sch.junctions == [(30000, 20000)] and sch.no_connects == [(70000, 70000)]
    assert [(lb.kind, lb.text, lb.shape) for lb in sch.labels] == [
        ("local", "L1", ""), ("global", "G1", "input"), ("hierarchical", "H1", "output")]
    assert [(s.name, s.file) for s in sch.sheets] == [("Six", "six.kicad_sch"),
                                                      ("Eight", "eight.kicad_sch")]
    assert [(p.name, p.shape, p.x, p.y) for p in sch.sheets[0].pins] == [("IN", "input", 500000, 550000)]


def test_kicad6_symbol_instances_give_references(tmp_path, kicad9_or_none):
    """KiCad 6 keeps references in the root's (symbol_instances); the property is not used
    when an instance entry exists (docs/kicad-connectivity.md sec. 4)."""
    text = f"""(kicad_sch (version 20211123) (generator eeschema) (uuid {ROOT})
      (lib_symbols {LIB_BASIC})
      (symbol (lib_id "Dev:X") (at 0 0 0) (unit 1) (in_bom yes) (on_board yes)
        (uuid 40000000-0000-4000-8000-000000000009)
        (property "Reference" "RPROP" (id 0) (at 0 0 0)))
      (symbol_instances (path "/40000000-0000-4000-8000-000000000009" (reference "RINST") (unit 1)))
    )"""
    p = tmp_path / "k6.kicad_sch"
    p.write_text(text, encoding="utf-8")
    nl = load(p)
    assert list(nl.components) == ["RINST"]
    _agrees_with_kicad9(kicad9_or_none, p, nl)


def _project(tmp_path: Path, name: str, root_text: str, subs: dict[str, str] | None = None,
             variables: dict | None = None) -> Path:
    (tmp_path / f"{name}.kicad_pro").write_text(
        json.dumps({"text_variables": variables or {}}), encoding="utf-8")
    (tmp_path / f"{name}.kicad_sch").write_text(root_text, encoding="utf-8")
    for f, t in (subs or {}).items():
        (tmp_path / f).write_text(t, encoding="utf-8")
    return tmp_path / f"{name}.kicad_sch"


def _sheet_block(name, file, uuid):
    return (f'(sheet (at 0 0) (size 10 10) (uuid "{uuid}") (property "Sheetname" "{name}" '
            f'(at 0 0 0)) (property "Sheetfile" "{file}" (at 0 0 0)))')


def _sch(body="", uuid=ROOT):
    return f'(kicad_sch (version 20231120) (generator "eeschema") (uuid "{uuid}") (lib_symbols) {body})'


def test_missing_sub_sheet_names_file_and_line(tmp_path):
    root = _project(tmp_path, "p", _sch("\n\n" + _sheet_block("S", "gone.kicad_sch", "s1")))
    with pytest.raises(InputError) as e:
        load_hierarchy(root)
    assert e.value.file == str(root) and e.value.line == 3 and "gone.kicad_sch" in e.value.message


def test_recursive_sheet_is_refused(tmp_path):
    root = _project(tmp_path, "p", _sch(_sheet_block("A", "a.kicad_sch", "s1")),
                    {"a.kicad_sch": _sch(_sheet_block("B", "a.kicad_sch", "s2"), "u-a")})
    with pytest.raises(InputError) as e:
        load_hierarchy(root)
    assert "recursive" in e.value.message and e.value.file.endswith("a.kicad_sch")


def test_sheet_used_twice_is_two_instances(tmp_path):
    sub = _sch("", "u-sub")
    root = _project(tmp_path, "p", _sch(_sheet_block("One", "sub.kicad_sch", "s1") +
                                        _sheet_block("My Two", "sub.kicad_sch", "s2")),
                    {"sub.kicad_sch": sub})
    h = load_hierarchy(root)
    assert [i.path for i in h.instances] == ["/", "/One/", "/My Two/"]
    assert len(h.files) == 2


def test_references_of_an_instance_equal_reference_symbol_by_symbol(corpus):
    roots = sorted(p.with_suffix(".kicad_sch") for p in corpus.rglob("*.kicad_pro"))
    assert len(roots) >= 10
    for root in roots:
        h = load_hierarchy(root)
        for inst in h.instances:
            assert h.references(inst) == [h.reference(inst, sym)
                                          for sym in inst.schematic.symbols], root


def test_legacy_and_malformed_files(tmp_path):
    legacy = tmp_path / "old.sch"
    legacy.write_text("EESchema Schematic File Version 4\n", encoding="utf-8")
    with pytest.raises(InputError) as e:
        read_schematic(legacy)
    assert "KiCad 6" in (e.value.hint or "")
    bad = tmp_path / "bad.kicad_sch"
    bad.write_text('(kicad_sch (version 20231120)\n  (wire (pts (xy 1 2)\n', encoding="utf-8")
    with pytest.raises(InputError) as e:
        read_schematic(bad)
    assert e.value.file == str(bad) and e.value.line is not None
    other = tmp_path / "x.kicad_sch"
    other.write_text("(kicad_pcb (version 1))", encoding="utf-8")
    with pytest.raises(InputError):
        read_schematic(other)


def test_find_project_from_folder_sub_sheet_and_ambiguity(tmp_path):
    root = _project(tmp_path, "p", _sch(_sheet_block("S", "child.kicad_sch", "s1")),
                    {"child.kicad_sch": _sch("", "u-child")})
    for given in (tmp_path, tmp_path / "p.kicad_pro", root, tmp_path / "child.kicad_sch"):
        pf = find_project(given)
        assert pf.root == root and pf.pro == tmp_path / "p.kicad_pro"
    (tmp_path / "q.kicad_pro").write_text("{}", encoding="utf-8")
    with pytest.raises(InputError) as e:
        find_project(tmp_path)
    assert "p.kicad_pro" in e.value.message and "q.kicad_pro" in e.value.message
    with pytest.raises(InputError):
        find_project(tmp_path / "nothing-here")


def test_text_variables_and_notes(tmp_path):
    body = f"""(lib_symbols {LIB6})
      (symbol (lib_id "Dev:X") (at 0 0 0) (unit 1) (uuid "a1")
        (property "Reference" "U?" (at 0 0 0)) (property "Value" "${{GAIN}}x" (at 0 0 0)))
      (symbol (lib_id "Dev:Missing") (at 20 0 0) (unit 1) (uuid "a2")
        (property "Reference" "U5" (at 0 0 0)))
      (symbol (lib_id "Dev:X") (at 40 0 0) (unit 1) (uuid "a3")
        (property "Reference" "U7" (at 0 0 0)))
      (symbol (lib_id "Dev:X") (at 60 0 0) (unit 1) (uuid "a4")
        (property "Reference" "U7" (at 0 0 0)))"""
    text = f'(kicad_sch (version 20231120) (generator "eeschema") (uuid "{ROOT}") {body})'
    root = _project(tmp_path, "p", text, variables={"GAIN": "11"})
    nl = load(tmp_path)
    assert nl.components["U?"].value == "11x"
    joined = "\n".join(nl.notes)
    assert "U? is not annotated" in joined
    assert "Dev:Missing" in joined and "pins are unknown" in joined
    assert nl.components["U5"].pins == {}                 # listed, with no pins
    assert "duplicate reference U7" in joined
    # the two U7s' pins 1 are two nets; their hidden VCC pins 8 are one (no note)
    assert [n for n in nl.notes if "two nets" in n] == [
        "pin U7.1 is in two nets (unconnected-(U7-Pad1) and unconnected-(U7-Pad1)) - duplicate "
        "reference?"]
    assert nl.components["U?"].location.file == str(root)
    assert nl.components["U?"].location.line == text[:text.index('"a1"')].count("\n") + 1


@pytest.mark.parametrize("placement", ["(at 10 10 45)", "(at 10 10 0) (mirror xy)"])
def test_placements_kicad_refuses_are_refused(tmp_path, placement):
    """docs/kicad-connectivity.md sec. 1: an angle other than 0/90/180/270, or (mirror xy), fails to
    load in KiCad; we say so with the symbol's line instead of guessing pin positions."""
    text = (f'(kicad_sch (version 20231120) (generator "eeschema") (uuid "{ROOT}")\n'
            f'(lib_symbols {LIB6})\n'
            f'(symbol (lib_id "Dev:X") {placement} (unit 1)\n (uuid "b1")\n'
            f'(property "Reference" "U1" (at 0 0 0))))')
    p = tmp_path / "bad.kicad_sch"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as e:
        read_schematic(p)
    assert e.value.line == text[:text.index('"b1"')].count("\n") + 1 and "U1" in e.value.message


def test_sheet_in_a_subfolder(tmp_path):
    (tmp_path / "ch").mkdir()
    root = _project(tmp_path, "p", _sch(_sheet_block("Ch", "ch/chan.kicad_sch", "s1")),
                    {"ch/chan.kicad_sch": _sch("", "u-ch")})
    h = load_hierarchy(root)
    assert [i.schematic.file for i in h.instances][1].endswith("chan.kicad_sch")
    assert find_project(tmp_path / "ch" / "chan.kicad_sch").root == root


def test_kicad6_hierarchy_references_from_root_symbol_instances(tmp_path, kicad9_or_none):
    """KiCad 6: a sub-sheet's symbols have no (instances); the root's (symbol_instances)
    gives "/<sheet uuid>/<symbol uuid>" -> reference, per sheet instance (docs/kicad-connectivity.md
    sec. 4)."""
    sub = f"""(kicad_sch (version 20211123) (generator eeschema) (uuid 61000000-0000-4000-8000-000000000000)
      (lib_symbols {LIB_BASIC})
      (symbol (lib_id "Dev:X") (at 0 0 0) (unit 1) (in_bom yes) (on_board yes)
        (uuid 62000000-0000-4000-8000-000000000000)
        (property "Reference" "U?" (id 0) (at 0 0 0))))"""
    s1, s2 = "63000000-0000-4000-8000-000000000001", "63000000-0000-4000-8000-000000000002"
    sym = "62000000-0000-4000-8000-000000000000"
    root = f"""(kicad_sch (version 20211123) (generator eeschema) (uuid {ROOT}) (lib_symbols)
      (sheet (at 0 0) (size 10 10) (uuid {s1}) (property "Sheet name" "A" (id 0) (at 0 0 0))
        (property "Sheet file" "sub.kicad_sch" (id 1) (at 0 0 0)))
      (sheet (at 20 0) (size 10 10) (uuid {s2}) (property "Sheet name" "B" (id 0) (at 0 0 0))
        (property "Sheet file" "sub.kicad_sch" (id 1) (at 0 0 0)))
      (sheet_instances (path "/" (page "1")) (path "/{s1}" (page "2")) (path "/{s2}" (page "3")))
      (symbol_instances (path "/{s1}/{sym}" (reference "U101") (unit 1))
                        (path "/{s2}/{sym}" (reference "U201") (unit 1))))"""
    _project(tmp_path, "p", root, {"sub.kicad_sch": sub})
    nl = load(tmp_path)
    assert {r: c.sheet_path for r, c in nl.components.items()} == {"U101": "/A/", "U201": "/B/"}
    _agrees_with_kicad9(kicad9_or_none, tmp_path / "p.kicad_sch", nl)


@pytest.fixture
def kicad9_or_none():
    from conftest import SHARED

    tool = SHARED / "tools" / "kicad9"
    return tool if tool.exists() else None


def _agrees_with_kicad9(tool, sheet: Path, nl) -> None:
    """When KiCad 9 is at hand, its export of the same file lists the same parts and nets."""
    if tool is None:
        return
    import subprocess

    from frontcheck.kicad.netfile import read_net

    out = sheet.parent / "k9.net"
    r = subprocess.run([str(tool), "netlist", str(sheet), str(out)], capture_output=True,
                       text=True, timeout=600)
    assert r.returncode == 0, r.stderr
    theirs = read_net(out)
    assert {r: c.sheet_path for r, c in theirs.components.items()} == {
        r: c.sheet_path for r, c in nl.components.items()}
    assert theirs.partition() == nl.partition()


@pytest.mark.parametrize("damage", [
    '(wire (pts (xy one 2) (xy 3 4)))',
    '(symbol (lib_id "Dev:X") (at 0 0 0) (unit two) (uuid "z"))',
    '(label (at 1 2 0))',
    '(symbol (lib_id "Dev:X") (at 0 0 0) (unit 1) (instances (project "p" (path "/x" (unit u)))))',
])
def test_damaged_values_are_input_errors(tmp_path, damage):
    p = tmp_path / "d.kicad_sch"
    p.write_text(f'(kicad_sch (version 20231120) (generator "eeschema") (uuid "{ROOT}")'
                 f' (lib_symbols {LIB_BASIC}) {damage})', encoding="utf-8")
    try:
        load(p)
    except InputError as e:
        assert e.file == str(p)


def test_wire_shortcut_equals_the_general_reading(corpus):
    from frontcheck.kicad import schematic
    from frontcheck.kicad.schematic import Schematic

    wires = [k for f in sorted(corpus.rglob("*.kicad_sch"))
             for k in parse(f.read_text(encoding="utf-8"), str(f))
             if isinstance(k, list) and k and k[0] == "wire"]
    odd = [["wire", ["pts", ["xy", "1", "2"], ["xy", "3", "4"], ["xy", "3", "9"]]],
           ["wire", ["uuid", "u"], ["pts", ["xy", "1", "2"], ["xy", "3", "4"]]],
           ["wire", ["pts", ["xy", "1", "2"]]], ["wire"]]
    assert len(wires) > 1000
    for k in wires + odd:
        sch = Schematic(file="x", version=20250114, uuid="")
        schematic._wire(sch, k)
        assert sch.wires == schematic._segments(k)
