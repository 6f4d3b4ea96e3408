"""Connectivity rules on small generated sheets.

Each case states an expectation taken from docs/kicad-connectivity.md (facts measured with KiCad 9.0.2
and 10.0.7 netlist exports; the section is cited beside each case). Every case is checked
twice: against that expectation, and - when shared/tools/kicad9 is available - against KiCad
9's own netlist of the very same generated file.
"""

from __future__ import annotations

import subprocess

import pytest

from conftest import need
from frontcheck.kicad.connectivity import bus_members, natural_compare
from frontcheck.kicad.netfile import read_net
from frontcheck.kicad.schematic import to_iu
from kicad_sheets import (LIB, SubSym, Sym, libsym, lib_pin, junction, label, named, noconnect,
                          ours, pin_at, sheet_block, sheet_text, wire, write, write_project)

# --------------------------------------------------------------------------- cases
# Each case: (items, expected {net name: {(ref, pin), ...}}). R pins: 1 at (0,+3.81) lib,
# i.e. (x, y-3.81) on the sheet at angle 0; pin 2 at (x, y+3.81).


def _transform_case():
    """docs/kicad-connectivity.md sec. 1: T:Tri in all 12 rotations x mirrors; a label at each computed pin end
    must catch that pin alone."""
    items, exp = [], {}
    k = 0
    for angle in (0, 90, 180, 270):
        for mirror in (None, "x", "y"):
            k += 1
            s = Sym("T:Tri", f"U{k}", 30 + 30 * (k % 4), 30 + 30 * (k // 4), angle, mirror)
            items.append(s)
            for num, (px, py) in {"1": (-5.08, 2.54), "2": (7.62, 0), "3": (0, -5.08)}.items():
                x, y = pin_at(s, px, py)
                items.append(label(f"U{k}_{num}", x, y))
                exp[f"/U{k}_{num}"] = {(f"U{k}", num)}
    return items, exp


CASES = {
    # docs/kicad-connectivity.md sec. 2: a label on a wire's interior joins that wire.
    "label_on_interior": (
        [Sym("Device:R", "R1", 20, 20), Sym("Device:R", "R2", 40, 20),
         wire(20, 23.81, 20, 40), wire(40, 23.81, 40, 40),
         label("MID", 20, 30), label("MID", 40, 35)],
        {"/MID": {("R1", "2"), ("R2", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R2-Pad1)": {("R2", "1")}}),
    # docs/kicad-connectivity.md sec. 0: 1 IU off the wire line attaches, 2 IU does not.
    "label_tolerance": (
        [Sym("Device:R", "R1", 20, 20), Sym("Device:R", "R2", 40, 20),
         wire(20, 23.81, 20, 40), wire(40, 23.81, 40, 40),
         label("A", 20.0001, 30), label("B", 40.0002, 30)],
        {"/A": {("R1", "2")}, "unconnected-(R2-Pad2)": {("R2", "2")},
         "unconnected-(R1-Pad1)": {("R1", "1")}, "unconnected-(R2-Pad1)": {("R2", "1")}}),
    # docs/kicad-connectivity.md sec. 2: wire end on another wire's interior does not connect, with or without a
    # junction in KiCad 9.
    "t_without_and_with_junction": (
        [Sym("Device:R", "R1", 20, 20), Sym("Device:R", "R2", 40, 20),
         Sym("Device:R", "R3", 60, 20), Sym("Device:R", "R4", 80, 20),
         wire(20, 23.81, 20, 50), wire(10, 40, 20, 40),      # T end on R1's wire interior
         wire(10, 40, 10, 23.81), Sym("Device:R", "R5", 10, 20),
         wire(60, 23.81, 60, 50), wire(50, 40, 60, 40), junction(60, 40),
         wire(50, 40, 50, 23.81), Sym("Device:R", "R6", 50, 20)],
        {"unconnected-(R1-Pad2)": {("R1", "2")}, "unconnected-(R5-Pad2)": {("R5", "2")},
         "unconnected-(R3-Pad2)": {("R3", "2")}, "unconnected-(R6-Pad2)": {("R6", "2")},
         **{f"unconnected-(R{i}-Pad{p})": {(f"R{i}", str(p))}
            for i in (1, 2, 3, 4, 5, 6) for p in (1, 2) if not (p == 2 and i in (1, 3, 5, 6))}}),
    # docs/kicad-connectivity.md sec. 2: two pins at one point connect; Net-() naming by string order.
    "pins_touching_and_pad_names": (
        [Sym("Device:R", "R10", 20, 20), Sym("Device:R", "R9", 20, 27.62),
         Sym("Device:R", "R100", 40, 20), wire(20, 23.81, 40, 23.81)],
        {"Net-(R10-Pad2)": {("R10", "2"), ("R9", "1"), ("R100", "2")},
         "unconnected-(R10-Pad1)": {("R10", "1")}, "unconnected-(R9-Pad2)": {("R9", "2")},
         "unconnected-(R100-Pad1)": {("R100", "1")}}),
    # docs/kicad-connectivity.md sec. 3: hidden power_in pin of an ordinary part joins the global net of its name.
    "hidden_power_pin": (
        [Sym("T:Hid", "U1", 30, 30), Sym("Device:R", "R1", 60, 30),
         label("VDDX", 60, 26.19, "global_label")],
        {"VDDX": {("U1", "2"), ("R1", "1")}, "unconnected-(U1-IO-Pad1)": {("U1", "1")},
         "unconnected-(R1-Pad2)": {("R1", "2")}}),
    # docs/kicad-connectivity.md secs. 3 and 6: power symbol names its net by Value; '#' symbols are not nodes.
    "power_symbol": (
        [Sym("Device:R", "R1", 20, 20), Sym("power:GND", "#PWR01", 20, 23.81),
         Sym("Device:R", "R2", 40, 20), Sym("power:GND", "#PWR02", 40, 23.81)],
        {"GND": {("R1", "2"), ("R2", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R2-Pad1)": {("R2", "1")}}),
    # docs/kicad-connectivity.md sec. 3: local + global with the same text on one sheet are one net, named by the
    # global label.
    "local_and_global": (
        [Sym("Device:R", "R1", 20, 20), Sym("Device:R", "R2", 40, 20),
         label("LG", 20, 23.81), label("LG", 40, 23.81, "global_label")],
        {"LG": {("R1", "2"), ("R2", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R2-Pad1)": {("R2", "1")}}),
    # docs/kicad-connectivity.md sec. 2: a no-connect flag on a pin wired to another pin keeps the connection but
    # renames the net unconnected-(...).
    "no_connect_flag": (
        [Sym("Device:R", "R7", 20, 20), Sym("Device:R", "R8", 40, 20),
         wire(20, 23.81, 40, 23.81), noconnect(20, 23.81), noconnect(40, 16.19)],
        {"unconnected-(R7-Pad2)": {("R7", "2"), ("R8", "2")},
         "unconnected-(R7-Pad1)": {("R7", "1")}, "unconnected-(R8-Pad1)": {("R8", "1")}}),
    # docs/kicad-connectivity.md sec. 2: a no_connect-type pin never joins, even with a wire on it.
    "no_connect_type_pin": (
        [Sym("T:NCpin", "U1", 30, 30), Sym("Device:R", "R1", 40, 20),
         wire(35.08, 30, 40, 30), wire(40, 30, 40, 23.81)],
        {"unconnected-(U1-NC-Pad2)": {("U1", "2")}, "unconnected-(U1-P-Pad1)": {("U1", "1")},
         "unconnected-(R1-Pad2)": {("R1", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")}}),
    # docs/kicad-connectivity.md sec. 5: unplaced units give no nodes; unit-0 hidden supply pins join their
    # global nets; multi-unit Net-() names carry the unit letter.
    "multi_unit": (
        [Sym("T:Dual", "U1", 40, 40, unit=2), Sym("Device:R", "R1", 20, 30),
         wire(20, 33.81, 20, 37.46), wire(20, 37.46, 32.38, 37.46),
         label("V+", 60, 60, "global_label"), Sym("Device:R", "R2", 60, 56.19),
         label("V-", 70, 60, "global_label"), Sym("Device:R", "R3", 70, 56.19)],
        {"Net-(U1B-+)": {("U1", "5"), ("R1", "2")}, "V+": {("U1", "8"), ("R2", "2")},
         "V-": {("U1", "4"), ("R3", "2")}, "unconnected-(U1B---Pad6)": {("U1", "6")},
         "unconnected-(U1-Pad7)": {("U1", "7")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R2-Pad1)": {("R2", "1")}, "unconnected-(R3-Pad1)": {("R3", "1")}}),
    # docs/kicad-connectivity.md sec. 6: on_board no drops the part and its pins, but its pin still counts.
    "on_board_no": (
        [Sym("Device:R", "R1", 20, 20, flags="(on_board no)"), Sym("Device:R", "R2", 40, 20),
         wire(20, 23.81, 40, 23.81)],
        {"Net-(R2-Pad2)": {("R2", "2")}, "unconnected-(R2-Pad1)": {("R2", "1")}}),
    # docs/kicad-connectivity.md sec. 3: two labels with the same text on one sheet are one net; '/' escaped.
    "same_label_twice": (
        [Sym("Device:R", "R1", 20, 20), Sym("Device:R", "R2", 40, 20),
         label("V/2", 20, 23.81), label("V/2", 40, 23.81)],
        {"/V{slash}2": {("R1", "2"), ("R2", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R2-Pad1)": {("R2", "1")}}),
    "transform_table": _transform_case(),
    # docs/kicad-connectivity.md sec. 2: label at a wire end that lies on another wire's interior joins both.
    "t_with_label": (
        [Sym("Device:R", "R1", 20, 20), Sym("Device:R", "R2", 40, 20),
         wire(20, 23.81, 20, 50), wire(20, 40, 40, 40), wire(40, 40, 40, 23.81),
         label("TL", 20, 40)],
        {"/TL": {("R1", "2"), ("R2", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R2-Pad1)": {("R2", "1")}}),
    # docs/kicad-connectivity.md sec. 2 [9]: two labels with different text at one interior point do not attach
    # to the wire in KiCad 9; a label on nothing connects nothing.
    "two_labels_on_interior": (
        [Sym("Device:R", "R1", 20, 20), wire(20, 23.81, 20, 40),
         label("X1", 20, 30), label("X2", 20, 30), label("FLOAT", 60, 60)],
        {"unconnected-(R1-Pad2)": {("R1", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")}}),
    # docs/kicad-connectivity.md sec. 3: names with -Pad lose the tie; global label beats power symbol.
    # docs/kicad-connectivity.md sec. 3: a power symbol's pin names the net over a hidden
    # power_in pin of an ordinary symbol (a project "power symbol" drawn without the power
    # flag), though DP_GND sorts first; with a '#' reference or a listed one (KiCad 9.0.2).
    "power_symbol_over_hidden_power_pin": (
        [Sym("Device:R", "R1", 20, 20), Sym("power:GND", "#PWR01", 20, 23.81),
         Sym("T:DpGnd", "#PWR02", 20, 23.81),
         Sym("Device:R", "R2", 40, 20), Sym("power:GND", "#PWR03", 40, 23.81),
         Sym("T:DpGnd", "U4", 40, 23.81)],
        {"GND": {("R1", "2"), ("R2", "2"), ("U4", "1")},
         "unconnected-(R1-Pad1)": {("R1", "1")}, "unconnected-(R2-Pad1)": {("R2", "1")}}),
    # Two power symbols of different names on one pin: plain string order (KiCad 9.0.2).
    "two_power_symbols": (
        [Sym("Device:R", "R1", 20, 20), Sym("power:GND", "#PWR01", 20, 23.81),
         Sym("power:DP_GND", "#PWR02", 20, 23.81)],
        {"DP_GND": {("R1", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")}}),
    "naming_ties": (
        [Sym("Device:R", "R1", 20, 20), label("iA-Pad1", 20, 23.81), label("iZ9", 20, 23.81),
         Sym("Device:R", "R2", 40, 20), label("GB", 40, 23.81, "global_label"),
         Sym("power:GND", "#PWR1", 40, 23.81)],
        {"/iZ9": {("R1", "2")}, "GB": {("R2", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R2-Pad1)": {("R2", "1")}}),
}


LIB["T:DpGnd"] = libsym("T:DpGnd", {1: [lib_pin("power_in", 0, 0, 270, "DP_GND", 1,
                                                 hide=True)]})
LIB["power:DP_GND"] = libsym("power:DP_GND", {1: [lib_pin("power_in", 0, 0, 270, "DP_GND", 1,
                                                           hide=True)]}, power=True)


@pytest.mark.parametrize("case", sorted(CASES))
def test_case_matches_notes(tmp_path, case):
    items, expected = CASES[case]
    assert named(ours(write(tmp_path, items))) == expected


@pytest.mark.oracle
@pytest.mark.parametrize("case", sorted(CASES))
def test_case_matches_kicad9(tmp_path, kicad9, case):
    items, _ = CASES[case]
    p = write(tmp_path, items)
    out = tmp_path / "k9.net"
    r = subprocess.run([str(kicad9), "netlist", str(p), str(out)], capture_output=True,
                       text=True, timeout=600)
    need(r.returncode == 0 and out.is_file(), f"kicad9 failed: {r.stderr[-300:]}")
    assert named(ours(p)) == named(read_net(out))


# --------------------------------------------------------------------------- pure helpers


@pytest.mark.parametrize("angle,mirror,expected", [
    # docs/kicad-connectivity.md sec. 1 table: (rx, ry) before mirroring for lib (px, py) = (5.08, 2.54)
    (0, None, (5.08, -2.54)), (90, None, (-2.54, -5.08)), (180, None, (-5.08, 2.54)),
    (270, None, (2.54, 5.08)),
    # mirror after rotating; "mirror x at A=90 maps (5.08, 2.54) to (-2.54, +5.08)"
    (90, "x", (-2.54, 5.08)), (0, "y", (-5.08, -2.54)), (0, "x", (5.08, 2.54)),
])
def test_transform_table(angle, mirror, expected):
    s = Sym("T:Tri", "U1", 0, 0, angle, mirror)
    assert pin_at(s, 5.08, 2.54) == expected


def test_mirror_x_equals_mirror_y_plus_180():
    """docs/kicad-connectivity.md sec. 1 corollary."""
    for a in (0, 90, 180, 270):
        for p in ((5.08, 2.54), (-7.62, 1.27), (0, -5.08)):
            assert pin_at(Sym("T:Tri", "U", 0, 0, a, "x"), *p) == \
                pin_at(Sym("T:Tri", "U", 0, 0, (a + 180) % 360, "y"), *p)


def test_rounding_to_iu():
    """docs/kicad-connectivity.md sec. 0: coordinates round to 0.0001 mm."""
    assert to_iu("114.3") == 1143000
    assert to_iu("0.00004") == 0 and to_iu("0.00006") == 1 and to_iu("-0.00006") == -1


def test_natural_compare():
    """docs/kicad-connectivity.md sec. 7 orderings."""
    names = ["unconnected-(R1-Pad1)", "Net-(R100-Pad2)", "/b", "Net-(R9-Pad2)",
             "Net-(R10-Pad2)", "RINST2-Pad1", "RINST-Pad1"]
    from functools import cmp_to_key
    assert sorted(names, key=cmp_to_key(natural_compare)) == [
        "/b", "Net-(R9-Pad2)", "Net-(R10-Pad2)", "Net-(R100-Pad2)", "RINST-Pad1",
        "RINST2-Pad1", "unconnected-(R1-Pad1)"]


def test_bus_members():
    """Vector and group bus syntax as KiCad's QA cases use it (corpus bus_connection,
    issue16439)."""
    assert [m.full for m in bus_members("D[0..2]", {})] == ["D0", "D1", "D2"]
    assert [m.full for m in bus_members("D[2..0]", {})] == ["D2", "D1", "D0"]
    g = bus_members("top{a_xyz}", {"a_xyz": ["x", "y", "z"]})
    assert [(m.full, m.local) for m in g] == [("top.x", "x"), ("top.y", "y"), ("top.z", "z")]
    assert [m.full for m in bus_members("demo{al}", {"al": ["A[0..1]", "B"]})] == [
        "demo.A0", "demo.A1", "demo.B"]
    assert bus_members("plain", {}) is None


# --------------------------------------------------------------------------- hierarchy cases


SA, SB = "70000000-0000-4000-8000-00000000000a", "70000000-0000-4000-8000-00000000000b"

HIER_CASES = {
    # docs/kicad-connectivity.md sec. 4: parent local label beats the child's hierarchical label; a child local
    # label with the hierarchical label's text is the same net inside the child.
    "parent_local_wins": (
        [Sym("Device:R", "R1", 20, 20), label("NA", 20, 23.81), wire(20, 23.81, 50, 23.81),
         sheet_block("SubA", "sub.kicad_sch", SA, 50, 10, [("IN", 23.81)])],
        {"sub.kicad_sch": [SubSym("Device:R", "", 20, 20, refs=((SA, "R2"),)),
                           label("IN", 20, 23.81, "hierarchical_label"),
                           SubSym("Device:R", "", 40, 20, refs=((SA, "R3"),)),
                           label("IN", 40, 23.81)]},
        {"/NA": {("R1", "2"), ("R2", "2"), ("R3", "2")}}),
    # docs/kicad-connectivity.md sec. 4: a sheet used twice: own references, own local nets; with no parent label
    # the child's label names the net, alphabetically first full name across children.
    "shared_sheet": (
        [Sym("Device:R", "R1", 20, 20), wire(20, 23.81, 50, 23.81), wire(50, 23.81, 90, 23.81),
         sheet_block("SubB", "sub.kicad_sch", SB, 90, 10, [("IN", 23.81)]),
         sheet_block("SubA", "sub.kicad_sch", SA, 50, 10, [("IN", 23.81)])],
        {"sub.kicad_sch": [SubSym("Device:R", "", 20, 20, refs=((SA, "R101"), (SB, "R201"))),
                           label("IN", 20, 23.81, "hierarchical_label"),
                           label("LOC", 20, 16.19)]},
        {"/SubA/IN": {("R1", "2"), ("R101", "2"), ("R201", "2")},
         "/SubA/LOC": {("R101", "1")}, "/SubB/LOC": {("R201", "1")},
         "unconnected-(R1-Pad1)": {("R1", "1")}}),
    # docs/kicad-connectivity.md sec. 4: sheet pin without a hierarchical label names the parent side; a
    # hierarchical label without a sheet pin names the child side; a sub-sheet local label does
    # not join a root global label of the same text.
    "orphans": (
        [Sym("Device:R", "R1", 20, 20), wire(20, 23.81, 50, 23.81),
         sheet_block("SubA", "sub.kicad_sch", SA, 50, 10, [("ORPHAN", 23.81)]),
         Sym("Device:R", "R5", 20, 60), label("GSUB", 20, 63.81, "global_label")],
        {"sub.kicad_sch": [SubSym("Device:R", "", 20, 20, refs=((SA, "R2"),)),
                           label("OUT", 20, 23.81, "hierarchical_label"),
                           label("GSUB", 20, 16.19)]},
        {"/ORPHAN": {("R1", "2")}, "/SubA/OUT": {("R2", "2")}, "/SubA/GSUB": {("R2", "1")},
         "GSUB": {("R5", "2")}, "unconnected-(R1-Pad1)": {("R1", "1")},
         "unconnected-(R5-Pad1)": {("R5", "1")}}),
    # docs/kicad-connectivity.md secs. 4 and 5: a sheet used twice, each instance placing another unit of one
    # package (instance (unit N) decides the pins): unit A's pins in one, unit B's in the other.
    "unit_per_instance": (
        [Sym("Device:R", "R1", 20, 20), wire(20, 23.81, 50, 23.81),
         sheet_block("SubA", "sub.kicad_sch", SA, 50, 10, [("IN", 23.81)]),
         Sym("Device:R", "R2", 20, 60), wire(20, 63.81, 90, 63.81),
         sheet_block("SubB", "sub.kicad_sch", SB, 90, 50, [("IN", 63.81)])],
        {"sub.kicad_sch": [SubSym("T:Dual", "", 40, 40, refs=((SA, "U1", 1), (SB, "U1", 2))),
                           label("IN", 32.38, 37.46, "hierarchical_label"),
                           label("OUT", 47.62, 40)]},
        {"/SubA/IN": {("R1", "2"), ("U1", "3")}, "/SubB/IN": {("R2", "2"), ("U1", "5")},
         "/SubA/OUT": {("U1", "1")}, "/SubB/OUT": {("U1", "7")},
         "unconnected-(U1A---Pad2)": {("U1", "2")}, "unconnected-(U1B---Pad6)": {("U1", "6")},
         "V+": {("U1", "8")}, "V-": {("U1", "4")}}),
}


@pytest.mark.parametrize("case", sorted(HIER_CASES))
def test_hierarchy_case_matches_notes(tmp_path, case):
    root_items, subs, expected = HIER_CASES[case]
    got = named(ours(write_project(tmp_path, root_items, subs)))
    assert {k: v for k, v in got.items() if k in expected} == expected


@pytest.mark.oracle
@pytest.mark.parametrize("case", sorted(HIER_CASES))
def test_hierarchy_case_matches_kicad9(tmp_path, kicad9, case):
    root_items, subs, _ = HIER_CASES[case]
    p = write_project(tmp_path, root_items, subs)
    out = tmp_path / "k9.net"
    r = subprocess.run([str(kicad9), "netlist", str(p), str(out)], capture_output=True,
                       text=True, timeout=600)
    need(r.returncode == 0 and out.is_file(), f"kicad9 failed: {r.stderr[-300:]}")
    assert named(ours(p)) == named(read_net(out))


LIB["power:PB"] = libsym("power:PB", {1: [lib_pin("power_in", 0, 0, 90, "PB", 1, hide=True)]},
                          power=True)
LIB["power:FLAG"] = libsym("power:FLAG", {1: [lib_pin("power_out", 0, 0, 90, "pwr", 1)]},
                            power=True)


@pytest.mark.parametrize("version,net", [
    # docs/kicad-connectivity.md sec. 3: threshold bracketed exactly - before 20230221 the hidden pin's name,
    # from 20230221 the instance's Value.
    (20230220, "PB"), (20230221, "PBV")])
def test_power_net_name_by_file_version(tmp_path, kicad9_or_none, version, net):
    items = [Sym("Device:R", "R1", 20, 20), Sym("power:PB", "#PWR1", 20, 16.19, value="PBV"),
             Sym("Device:R", "R2", 40, 20), Sym("power:FLAG", "#FLG1", 40, 23.81)]
    p = tmp_path / "v.kicad_sch"
    p.write_text(sheet_text(items, version=version), encoding="utf-8")
    got = named(ours(p))
    # PWR_FLAG-like power_out pin is not global and is no node, but it counts as a second pin
    # (docs/kicad-connectivity.md sec. 3): R2.2 is Net-(R2-Pad2), not unconnected-(...).
    assert got == {net: {("R1", "1")}, "Net-(R2-Pad2)": {("R2", "2")},
                   "unconnected-(R1-Pad2)": {("R1", "2")}, "unconnected-(R2-Pad1)": {("R2", "1")}}
    if kicad9_or_none is not None:
        out = tmp_path / "k9.net"
        r = subprocess.run([str(kicad9_or_none), "netlist", str(p), str(out)],
                           capture_output=True, text=True, timeout=600)
        assert r.returncode == 0, r.stderr
        assert got == named(read_net(out))


def test_power_local_is_persheet_block(tmp_path):
    """docs/kicad-connectivity.md sec. 3 (KiCad 10 only; 9.0.2 cannot load (power local)): a local power symbol
    names a per-instance net like a local label and joins a local label of its text."""
    LIB["power:PL"] = libsym("power:PL", {1: [lib_pin("power_in", 0, 0, 90, "PL", 1, hide=True)]},
                              power=False, extra="(power local)")
    items = [Sym("Device:R", "R1", 20, 20), Sym("power:PL", "#PWR1", 20, 16.19, value="PL"),
             Sym("Device:R", "R2", 40, 20), label("PL", 40, 16.19)]
    p = tmp_path / "pl.kicad_sch"
    p.write_text(sheet_text(items), encoding="utf-8")
    got = named(ours(p))
    assert got["/PL"] == {("R1", "1"), ("R2", "1")}


@pytest.fixture
def kicad9_or_none(shared):
    tool = shared / "tools" / "kicad9"
    return tool if tool.exists() else None
