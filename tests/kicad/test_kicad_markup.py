"""Text markup in names: ``~{...}`` overbar, ``_{...}`` subscript, ``^{...}`` superscript.

A ``{`` after ``~``, ``_`` or ``^`` is markup, never a bus group, and a label with bus syntax on
a wire where no bus is drawn connects by its whole text (docs/kicad-connectivity.md sec. 9,
measured with KiCad 9.0.2). Each invented schematic is checked against the stated expectation
and, live, net by net against KiCad 9's own export of the same file.
"""

from __future__ import annotations

import pytest

from frontcheck.kicad.busnames import bus_members
from kicad_sheets import (LIB, SubSym, Sym, kicad9_named, label, lib_pin, libsym, named, ours,
                          sheet_block, sheet_text, wire, write_project)

TEXTS = ["~{CS}", "VDD_{1}", "A^{2}", "P~{Q}", "~{A}_{1}", "X{Y}", "~{A} B", "~{D}[0..1]",
         "Q{R S}", "~{", "_{}", "~{~{N}}", "M^{x}_{y}~{z}"]


def _one_sheet(tmp_path):
    """Per text: a local label on a wire at R<k> pin 1 and on the bare pin 1 of R<k+100>, and
    the same text as a global label at R<k+13> and R<k+113>."""
    items, expected = [], {}
    for g, kind in enumerate(("label", "global_label")):
        for i, text in enumerate(TEXTS):
            k = 1 + i + g * len(TEXTS)
            x = 10 + 10 * k
            items += [Sym("Device:R", f"R{k}", x, 30), Sym("Device:R", f"R{k + 100}", x, 80),
                      wire(x, 26.19, x, 20), label(text, x, 20, kind),
                      label(text, x, 76.19, kind)]
            # Local and global label of one text on one sheet: one net, named by the global.
            expected.setdefault(text, set()).update({(f"R{k}", "1"), (f"R{k + 100}", "1")})
    d = tmp_path / "m"
    d.mkdir()
    p = d / "m.kicad_sch"
    p.write_text(sheet_text(items), encoding="utf-8")
    return p, expected


SHEETS = [f"70000000-0000-4000-8000-0000000000{k:02d}" for k in range(4)]
NAMES = ["SubA", "SubB", "SubC", "SubD"]
LIB["power:PV"] = libsym("power:PV", {1: [lib_pin("power_in", 0, 0, 90, "PV", 1, hide=True)]},
                         power=True)


def _four_instances(tmp_path):
    """One sheet file placed four times: a hierarchical label ``~{CS}`` and a bus-syntax
    hierarchical label ``D{Q}`` on wires, a local ``VSS_{16}`` on two parts, a global
    ``~{RESET}``, a power symbol valued ``+3V3_{A}``. The root ties two ``~{CS}`` sheet pins
    with a local ``~{CS}``, leaves the third unlabelled and names the fourth ``~{CS}_{2}``."""
    root = []
    for k in range(4):
        y = 20 + 50 * k
        root.append(sheet_block(NAMES[k], "sub.kicad_sch", SHEETS[k], 80, y,
                                [("~{CS}", y + 5), ("D{Q}", y + 10)]))
        root += [Sym("Device:R", f"R{k + 1}", 40, y + 1.19), wire(40, y + 5, 80, y + 5),
                 Sym("Device:R", f"R{k + 11}", 60, y + 6.19), wire(60, y + 10, 80, y + 10)]
    root += [label("~{CS}", 40, 25), label("~{CS}", 40, 75), label("~{CS}_{2}", 40, 175),
             Sym("Device:R", "R50", 150, 20), label("~{RESET}", 150, 16.19, "global_label")]

    def refs(n):
        return tuple((SHEETS[k], f"R{n + 100 * (k + 1)}") for k in range(4))

    sub = [SubSym("Device:R", "", 20, 20, refs=refs(1)), wire(20, 16.19, 20, 10),
           label("~{CS}", 20, 10, "hierarchical_label"),
           SubSym("Device:R", "", 40, 20, refs=refs(2)), wire(40, 16.19, 40, 10),
           label("D{Q}", 40, 10, "hierarchical_label"),
           SubSym("Device:R", "", 60, 20, refs=refs(3)), label("VSS_{16}", 60, 16.19),
           SubSym("Device:R", "", 60, 40, refs=refs(4)), label("VSS_{16}", 60, 36.19),
           SubSym("Device:R", "", 80, 20, refs=refs(5)),
           label("~{RESET}", 80, 16.19, "global_label"),
           SubSym("Device:R", "", 100, 20, refs=refs(6)),
           SubSym("power:PV", "", 100, 16.19,
                  refs=tuple((s, f"#PWR0{i}") for i, s in enumerate(SHEETS)))]
    p = write_project(tmp_path, root, {"sub.kicad_sch": sub})
    s = p.parent / "sub.kicad_sch"
    s.write_text(s.read_text(encoding="utf-8").replace(
        '(property "Value" "PV"', '(property "Value" "+3V3_{A}"'), encoding="utf-8")
    expected = {
        "/~{CS}": {("R1", "2"), ("R101", "1"), ("R2", "2"), ("R201", "1")},
        "/SubC/~{CS}": {("R3", "2"), ("R301", "1")},
        "/~{CS}_{2}": {("R4", "2"), ("R401", "1")},
        "~{RESET}": {("R50", "1")} | {(f"R{105 + 100 * k}", "1") for k in range(4)},
        "+3V3_{A}": {(f"R{106 + 100 * k}", "1") for k in range(4)},
    }
    for k, name in enumerate(NAMES):
        expected[f"/{name}/D{{Q}}"] = {(f"R{11 + k}", "2"), (f"R{102 + 100 * k}", "1")}
        expected[f"/{name}/VSS_{{16}}"] = {(f"R{103 + 100 * k}", "1"),
                                           (f"R{104 + 100 * k}", "1")}
    return p, expected


@pytest.mark.parametrize("build", [_one_sheet, _four_instances])
def test_markup_labels_connect(tmp_path, build):
    root, expected = build(tmp_path)
    got = named(ours(root))
    assert {k: v for k, v in got.items() if k in expected} == expected
    # Nothing else joined: every other net is a single unconnected pin.
    assert all(k.startswith("unconnected-(") and len(v) == 1
               for k, v in got.items() if k not in expected)


@pytest.mark.oracle
@pytest.mark.parametrize("build", [_one_sheet, _four_instances])
def test_markup_labels_match_kicad9(tmp_path, kicad9, build):
    root, _ = build(tmp_path)
    assert named(ours(root)) == kicad9_named(kicad9, root, tmp_path)


@pytest.mark.parametrize("text", ["~{CS}", "VDD_{1}", "A^{2}", "~{A}_{1}", "P~{Q}", "~{",
                                  "~{~{N}}", "M^{x}_{y}~{z}", "~{A} B"])
def test_markup_is_not_a_bus(text):
    # KiCad's bus-name parser skips a brace opened by ~, _ or ^ (sec. 9).
    assert bus_members(text, {}) is None


def test_bus_syntax_beside_markup():
    # A vector whose prefix carries an overbar, a group whose member does (sec. 9).
    assert [m.full for m in bus_members("~{D}[0..1]", {})] == ["~{D}0", "~{D}1"]
    assert [m.full for m in bus_members("P{~{A} B_{1}}", {})] == ["P.~{A}", "P.B_{1}"]
    assert [m.full for m in bus_members("X{Y}", {})] == ["X.Y"]
    assert bus_members("D[3..3]", {}) is None   # one-member range: no vector (from memory)
