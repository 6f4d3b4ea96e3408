"""Gain networks of integrated in-amps as drawn: RG made of resistors in series and parallel and
of a potentiometer wired as a rheostat (with and without a value). No part data is needed to
read the network; only the gain from the part's equation waits for it.

The schematic is invented (the eight-pin in-amp symbol 'IA8' of tests/test_inamp_structure.py,
three of them on one sheet). Every fact is checked on frontcheck's own netlist of the
.kicad_sch and on KiCad 9's export of the same file, after the two netlists were compared net
by net.
"""

from __future__ import annotations

import re

import pytest

from frontcheck.kicad.netfile import read_net
from frontcheck.pipeline import RunOptions, check_netlist, run
from frontcheck.recognise import find_stages
from frontcheck.report import FORMATS, render
from invented_parts import inamp_items, tag, two_pin
from kicad_sheets import LIB, Sym, kicad9_named, lib_pin, libsym, named, ours, write
from netlist_builder import ideal_gains
from test_recognise_integrated import FakeParts

OPTS = RunOptions(samples=200, seed=1)

# KiCad's potentiometer symbol as its own library draws it: ends 1 and 3 at (0, +-3.81), the
# wiper 2 at (3.81, 0).
LIB["Device:R_Potentiometer"] = libsym("Device:R_Potentiometer", {1: [
    lib_pin("passive", 0, 3.81, 270, "1", 1), lib_pin("passive", 3.81, 0, 180, "2", 2),
    lib_pin("passive", 0, -3.81, 90, "3", 3)]})


def pot(ref: str, x: float, y: float, end1: str, wiper: str | None, end3: str,
        value: str = "") -> list:
    """A potentiometer standing at (x, y) with a label on each end and on the wiper (None
    leaves the wiper open)."""
    items = [Sym("Device:R_Potentiometer", ref, x, y, value=value), tag(end1, x, round(y - 3.81, 4)),
             tag(end3, x, round(y + 3.81, 4))]
    if wiper is not None:
        items.append(tag(wiper, round(x + 3.81, 4), y))
    return items


def channel(ref: str, x: float, n: int) -> list:
    """One in-amp at (x, 100) on its own nets, supplies +-5 V, REF at ground."""
    return inamp_items(ref, x, 100, {1: f"RGA{n}", 2: f"IN_N{n}", 3: f"IN_P{n}", 4: "-5V",
                                     5: "GND", 6: f"OUT{n}", 7: "+5V", 8: f"RGB{n}"})


def _rg_sheet(tmp_path):
    items = channel("U1", 60, 1) + channel("U2", 120, 2) + channel("U3", 180, 3)
    # U1: R1 1k in series with RV1 10k, its wiper tied to end 3 (a rheostat)
    items += two_pin("Device:R", "R1", 40, 150, "RGA1", "MID1", "1k")
    items += pot("RV1", 60, 150, "MID1", "RGB1", "RGB1", value="10k")
    # U2: the same with a potentiometer that has no value (the symbol's name stands in)
    items += two_pin("Device:R", "R3", 100, 150, "RGA2", "MID2", "1k")
    items += pot("RV2", 120, 150, "MID2", "RGB2", "RGB2", value="R_Potentiometer")
    # U3: (R5 + R6) || R7 = (1k + 1k) || 2k = 1k
    items += two_pin("Device:R", "R5", 160, 150, "RGA3", "MID3", "1k")
    items += two_pin("Device:R", "R6", 170, 150, "MID3", "RGB3", "1k")
    items += two_pin("Device:R", "R7", 180, 150, "RGA3", "RGB3", "2k")
    # bias returns of every input, so that only the gain network is in question
    for i, n in enumerate((1, 2, 3)):
        items += two_pin("Device:R", f"R{20 + 2 * i}", 40 + 60 * i, 200, f"IN_P{n}", "GND", "1M")
        items += two_pin("Device:R", f"R{21 + 2 * i}", 50 + 60 * i, 200, f"IN_N{n}", "GND", "1M")
    for n in (1, 2, 3):                            # each output loaded by 10k
        items += two_pin("Device:R", f"R3{n}", 60 * n, 250, f"OUT{n}", "GND", "10k")
    return write(tmp_path, items, "rg")


# The gain networks as drawn, with the root sheet's path on local labels: what both netlists
# must hold.
EXPECTED = {
    "/RGA1": {("U1", "1"), ("R1", "1")},
    "/MID1": {("R1", "2"), ("RV1", "1")},
    "/RGB1": {("U1", "8"), ("RV1", "2"), ("RV1", "3")},
    "/MID2": {("R3", "2"), ("RV2", "1")},
    "/RGB2": {("U2", "8"), ("RV2", "2"), ("RV2", "3")},
    "/RGA3": {("U3", "1"), ("R5", "1"), ("R7", "1")},
    "/MID3": {("R5", "2"), ("R6", "1")},
    "/RGB3": {("U3", "8"), ("R6", "2"), ("R7", "2")},
}


def _check_rg(netlist):
    rec = find_stages(netlist)
    # Recognised, none of them 'RG pin not connected to a gain resistor'
    assert not rec.near_misses, [m.message for m in rec.near_misses]
    un = {u.ref: u for u in rec.unsupported}
    assert sorted(un) == ["U1", "U2", "U3"]
    # R1 + RV1: 1k + 0..10k over the wiper's travel (series resistance, common practice)
    assert un["U1"].roles["RG"] == "R1+RV1"
    assert un["U1"].schematic["rg_ohms_range"] == pytest.approx([1e3, 11e3], rel=1e-12)
    assert "R1+RV1 = 1.00 kΩ to 11.0 kΩ over RV1's travel" in un["U1"].message
    # a pot without a value: the least resistance is R3 alone, the rest is unknown
    assert un["U2"].schematic["rg_ohms_range"] == [pytest.approx(1e3, rel=1e-12), None]
    assert un["U2"].schematic["no_value"] == ["RV2"]
    assert "the pot RV2 has no value" in un["U2"].message
    assert "RG pin" not in un["U2"].message
    # (1k + 1k) || 2k = 1k (series and parallel resistance, common practice)
    assert un["U3"].roles["RG"] == "(R5+R6)||R7"
    assert un["U3"].schematic["rg_ohms"] == pytest.approx(1e3, rel=1e-12)
    # With part data (an invented class, K = 50 kOhm, G = 1 + K/RG as the data states):
    parts = FakeParts({r: {"name": "test class", "k": 50e3, "r_stage2": 10e3}
                       for r in ("U1", "U2", "U3")})
    rec = find_stages(netlist, parts)
    (st,) = rec.stages
    assert st.id == "U3" and sorted(st.references) == ["R5", "R6", "R7", "U3"]
    assert ideal_gains(st)[0] == pytest.approx(1 + 50e3 / 1e3, rel=1e-9)
    assert "gain network as drawn: RG = (R5+R6)||R7 = 1.00 kΩ" in st.notes
    un = {u.ref: u for u in rec.unsupported}
    # 1 + 50k/11k .. 1 + 50k/1k: the gain over the rheostat's travel
    assert un["U1"].schematic["gain_range"] == pytest.approx([1 + 50 / 11, 51], rel=1e-12)
    assert un["U2"].schematic["gain_range"] == [None, pytest.approx(51, rel=1e-12)]
    assert "replace the potentiometer" in un["U1"].fix


def test_rg_networks_from_the_schematic(tmp_path):
    sch = _rg_sheet(tmp_path)
    nl = ours(sch)
    got = named(nl)
    assert {k: got[k] for k in EXPECTED} == EXPECTED
    _check_rg(nl)


@pytest.mark.oracle
def test_rg_networks_match_kicad9(tmp_path, kicad9):
    sch = _rg_sheet(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs            # net by net, every pin
    assert {k: theirs[k] for k in EXPECTED} == EXPECTED
    _check_rg(read_net(tmp_path / "rg.k9.net"))


def test_rg_network_findings_without_part_data(tmp_path):
    p = check_netlist(ours(_rg_sheet(tmp_path)), None, "rg", "rg", OPTS)
    incomplete = [f for f in p.findings if f.rule == "stage-incomplete"]
    assert sorted(f.references for f in incomplete) == [
        ["R1", "RV1", "U1"], ["R3", "RV2", "U2"], ["R5", "R6", "R7", "U3"]]
    assert {f.severity for f in incomplete} == {"info"}
    assert not any("not connected" in f.message for f in incomplete)


# ---------------------------------------------------------------- feedback-pin networks

# A seven-pin feedback-pin in-amp symbol of our own: the gain pin FB beside the inputs.
LIB["T:IAFB"] = libsym("T:IAFB", {1: [
    lib_pin("passive", -10.16, 5.08, 0, "FB", 1), lib_pin("input", -10.16, -2.54, 0, "-IN", 2),
    lib_pin("input", -10.16, 2.54, 0, "+IN", 3), lib_pin("power_in", 2.54, -7.62, 90, "V-", 4),
    lib_pin("input", 0, -7.62, 90, "REF", 5), lib_pin("output", 10.16, 0, 180, "OUT", 6),
    lib_pin("power_in", 0, 7.62, 270, "V+", 7)]})
_IAFB_PINS = {1: (-10.16, 5.08), 2: (-10.16, -2.54), 3: (-10.16, 2.54), 4: (2.54, -7.62),
              5: (0, -7.62), 6: (10.16, 0), 7: (0, 7.62)}


def fb_channel(ref: str, x: float, n: int) -> list:
    nets = {1: f"FB{n}", 2: f"IN_N{n}", 3: f"IN_P{n}", 4: "-5V", 5: "GND", 6: f"OUT{n}", 7: "+5V"}
    items = [Sym("T:IAFB", ref, x, 100, value="IAFB")]
    for pin, net in nets.items():
        px, py = _IAFB_PINS[pin]
        items.append(tag(net, round(x + px, 4), round(100 - py, 4)))
    return items


def _fb_sheet(tmp_path):
    items = fb_channel("U1", 60, 1) + fb_channel("U2", 120, 2)
    # U1 as the architecture needs: RF from OUT to FB, RG from FB to REF (ground)
    items += two_pin("Device:R", "R11", 40, 150, "OUT1", "FB1", "10k")
    items += two_pin("Device:R", "R12", 50, 150, "FB1", "GND", "10k")
    # U2 miswired: the second resistor from OUT to REF instead of from FB to REF
    items += two_pin("Device:R", "R21", 100, 150, "OUT2", "FB2", "10k")
    items += two_pin("Device:R", "R22", 110, 150, "OUT2", "GND", "10k")
    for i, n in enumerate((1, 2)):
        items += two_pin("Device:R", f"R{40 + 2 * i}", 40 + 60 * i, 200, f"IN_P{n}", "GND", "1M")
        items += two_pin("Device:R", f"R{41 + 2 * i}", 50 + 60 * i, 200, f"IN_N{n}", "GND", "1M")
    return write(tmp_path, items, "fb")


FB_EXPECTED = {
    "/FB1": {("U1", "1"), ("R11", "2"), ("R12", "1")},
    "/OUT1": {("U1", "6"), ("R11", "1")},
    "/FB2": {("U2", "1"), ("R21", "2")},
    "/OUT2": {("U2", "6"), ("R21", "1"), ("R22", "1")},
}


def _check_fb(netlist):
    p = check_netlist(netlist, None, "fb", "fb", OPTS)
    incomplete = [f for f in p.findings if f.rule == "stage-incomplete"]
    (bad,) = [f for f in incomplete if f.data.get("miswired")]
    assert bad.severity == "error" and bad.references == ["R22", "U2"]
    # what the wiring as drawn gives: the base gain (1 for G = 1 + RF/RG), R22 loading OUT
    assert "R22 runs from the output to REF instead of from the gain pin 1 to REF" in bad.message
    assert "base gain" in bad.message and "R22 (10.0 kΩ) from the output to REF only loads" \
        in bad.message
    assert "move R22" in bad.fix
    # U1, wired as the architecture needs, is recognised without part data (info)
    (ok,) = [f for f in incomplete if f.references[0] != "R22"]
    assert ok.severity == "info" and ok.references == ["R11", "R12", "U1"]
    assert "RF/RG = 1" in ok.message
    # with part data (an invented class, G0 = 1), U1 is a stage of gain G0 (1 + RF/RG) = 2 and
    # U2 is still the miswired network, stating G0 from the part data
    data = {"name": "test feedback class", "arch": "feedback-pin", "g0": 1.0, "r_in": 1e9}
    rec = find_stages(netlist, FakeParts({"U1": data, "U2": data}))
    (st,) = rec.stages
    assert st.id == "U1" and ideal_gains(st)[0] == pytest.approx(2.0, rel=1e-9)
    (miss,) = rec.near_misses
    assert miss.miswired and "G0 = 1 from part data" in miss.message


def test_miswired_feedback_network_from_the_schematic(tmp_path):
    sch = _fb_sheet(tmp_path)
    nl = ours(sch)
    got = named(nl)
    assert {k: got[k] for k in FB_EXPECTED} == FB_EXPECTED
    _check_fb(nl)


@pytest.mark.oracle
def test_miswired_feedback_network_matches_kicad9(tmp_path, kicad9):
    sch = _fb_sheet(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs
    assert {k: theirs[k] for k in FB_EXPECTED} == FB_EXPECTED
    _check_fb(read_net(tmp_path / "fb.k9.net"))


# ---------------------------------------------------------------- gain straps

# A sixteen-pin in-amp symbol of our own with internal gain resistors brought out as straps.
_IA16 = [("input", "-IN"), ("input", "+IN"), ("passive", "+Rg"), ("passive", "-Rg"),
         ("passive", "G=10"), ("passive", "G=100"), ("passive", "G=1000"),
         ("passive", "+G_Sense"), ("passive", "-G_Sense"), ("input", "Sense"),
         ("input", "Ref"), ("output", "Vout"), ("power_in", "+Vs"), ("power_in", "-Vs"),
         ("passive", "Null"), ("passive", "Null")]
# pins 1-8 down the left side, 9-16 up the right side, 2.54 mm apart
_IA16_PINS = {i + 1: ((-12.7, 10.16 - 2.54 * i) if i < 8 else (12.7, -7.62 + 2.54 * (i - 8)))
              for i in range(16)}
LIB["T:IA16"] = libsym("T:IA16", {1: [
    lib_pin(t, *_IA16_PINS[i + 1], 0 if i < 8 else 180, name, i + 1)
    for i, (t, name) in enumerate(_IA16)]})


def strap_channel(ref: str, x: float, n: int, strap: int | None) -> list:
    """One IA16 at (x, 100); ``strap`` is the G= pin tied to -G_Sense (pin 9), None for none."""
    nets = {1: f"IN_N{n}", 2: f"IN_P{n}", 3: f"RGP{n}", 4: f"RGN{n}", 8: f"RGP{n}",
            9: f"RGN{n}", 10: f"OUT{n}", 11: "GND", 12: f"OUT{n}", 13: "+5V", 14: "-5V"}
    if strap is not None:
        nets[strap] = f"RGN{n}"
    items = [Sym("T:IA16", ref, x, 100, value="IA16")]
    for pin, net in nets.items():
        px, py = _IA16_PINS[pin]
        items.append(tag(net, round(x + px, 4), round(100 - py, 4)))
    return items


def _strap_sheet(tmp_path):
    items = strap_channel("U1", 60, 1, 6) + strap_channel("U2", 140, 2, None)
    for i, n in enumerate((1, 2)):
        items += two_pin("Device:R", f"R{40 + 2 * i}", 40 + 80 * i, 200, f"IN_P{n}", "GND", "1M")
        items += two_pin("Device:R", f"R{41 + 2 * i}", 50 + 80 * i, 200, f"IN_N{n}", "GND", "1M")
        items += two_pin("Device:R", f"R{50 + i}", 60 + 80 * i, 200, f"OUT{n}", "GND", "10k")
    return write(tmp_path, items, "strap")


STRAP_EXPECTED = {
    "/RGN1": {("U1", "4"), ("U1", "6"), ("U1", "9")},       # G=100 strapped to -Rg / -G_Sense
    "/RGP1": {("U1", "3"), ("U1", "8")},
    "/OUT1": {("U1", "10"), ("U1", "12"), ("R50", "1")},
    "/RGN2": {("U2", "4"), ("U2", "9")},
}


def _check_strap(netlist):
    rec = find_stages(netlist)
    (u1,) = [u for u in rec.unsupported if u.ref == "U1"]
    assert u1.schematic["gain_as_drawn"] == 100 and u1.schematic["gain_source"] == "pin name"
    assert "ties G=100 (pin 6) to -G_Sense (pin 9)" in u1.message and "as the pin name states" in u1.message
    (miss,) = rec.near_misses
    assert miss.ref == "U2" and "no gain strap is made" in miss.message
    assert {a.ref for a in rec.amplifiers} == {"U1", "U2"}
    # With part data (an invented class, K = 50 kOhm) the strap selects an internal gain
    # resistor K/(G - 1): the stage solves to the gain the pin name states
    rec = find_stages(netlist, FakeParts({"U1": {"name": "test class", "k": 50e3,
                                                 "r_stage2": 10e3, "k_tol": 0.002}}))
    (st,) = rec.stages
    assert st.id == "U1" and st.roles["RG"] == "U1.RGstrap"
    rg = next(r for r in st.circuit.resistors if r.name == "U1.RGstrap")
    assert {rg.a, rg.b} == {"/RGP1", "/RGN1"} and rg.internal
    assert rg.ohms.value == pytest.approx(50e3 / 99, rel=1e-12)
    assert ideal_gains(st)[0] == pytest.approx(100.0, rel=1e-9)


def test_gain_straps_from_the_schematic(tmp_path):
    sch = _strap_sheet(tmp_path)
    nl = ours(sch)
    got = named(nl)
    assert {k: got[k] for k in STRAP_EXPECTED} == STRAP_EXPECTED
    _check_strap(nl)


@pytest.mark.oracle
def test_gain_straps_match_kicad9(tmp_path, kicad9):
    sch = _strap_sheet(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs
    assert {k: theirs[k] for k in STRAP_EXPECTED} == STRAP_EXPECTED
    _check_strap(read_net(tmp_path / "strap.k9.net"))


# A gain or CMRR figure in a rendered report: a number in dB, or a number standing on its own
# (not a pin number, not inside a symbol such as G0 or R21 or an HTML entity) shortly after the
# word gain, unless the sentence marks it as not checked.
_GAIN_FIGURE = re.compile(r"\b[Gg]ain\b(?! pin)[^.;\n]{0,40}?(?<![\w#&=/.(])(?<!pin )\d+(?:\.\d+)?(?![\w])")


def _figures(text: str) -> list[str]:
    bad = re.findall(r"[-+]?\d[\d.,]*\s*dB", text)
    for m in _GAIN_FIGURE.finditer(text):
        tail = text[m.start():m.start() + 400]
        if "not checked" not in tail:
            bad.append(tail[:80])
    return bad


@pytest.mark.parametrize("fmt", sorted(FORMATS))
def test_the_figure_search_finds_an_analysed_stage(tmp_path, fmt):
    # the control of the test below: the gain and CMRR of an analysed difference amplifier
    from test_pipeline import write_diff_project

    report = run([str(write_diff_project(tmp_path / "amp"))], OPTS)
    text = render(report, fmt).replace(str(tmp_path), "")
    assert _figures(text)
    assert [m for m in _GAIN_FIGURE.finditer(text) if "not checked" not in text[m.start():m.start() + 400]]


@pytest.mark.parametrize("fmt", sorted(FORMATS))
def test_no_figure_from_a_part_equation_without_part_data(tmp_path, fmt):
    # The gain networks are read and their faults reported in every format, while no gain or
    # CMRR figure appears that is not marked as unchecked; the strap's gain is there, marked as
    # read from the pin name.
    texts = {}
    for sheet in (_rg_sheet, _fb_sheet, _strap_sheet):
        report = run([str(sheet(tmp_path))], OPTS)
        texts[sheet.__name__] = render(report, fmt).replace(str(tmp_path), "")
    for text in texts.values():
        assert not _figures(text), _figures(text)
    assert "R22" in texts["_fb_sheet"] and "miswired" in texts["_fb_sheet"]
    assert "G=100" in texts["_strap_sheet"] and "pin name" in texts["_strap_sheet"]
    assert "RV2" in texts["_rg_sheet"]


def _rg_pair_part(nb, ref="U3"):
    return nb.part(ref, "inamp", "Project:InAmp", pins=[
        ("1", "RG", "passive", "RGA"), ("2", "-IN", "input", "IN_N"), ("3", "+IN", "input", "IN_P"),
        ("4", "V-", "power_in", "-5V"), ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG", "passive", "RGB")]).r(
        "R1", "RGA", "RGB", "1k").r("R8", "OUT", "GND", "10k").r("R9", "IN_P", "GND", "1M").r(
        "R10", "IN_N", "GND", "1M")


def test_part_data_for_another_gain_network_than_the_pins_is_not_analysed():
    # Part data for a feedback-pin part on a symbol with two RG pins (and the reverse) would
    # expand into a circuit that is not the one drawn: the part is reported, not analysed.
    from netlist_builder import NetlistBuilder

    fb = {"name": "test feedback class", "arch": "feedback-pin", "g0": 1.0, "r_in": 1e9}
    rg = {"name": "test class", "k": 50e3, "r_stage2": 10e3}
    rec = find_stages(_rg_pair_part(NetlistBuilder()).build(), FakeParts({"U3": fb}))
    assert not rec.stages
    (un,) = rec.unsupported
    assert "describes a two-resistor feedback network" in un.message
    assert "pins give an RG pair" in un.message and "arch" in un.fix
    rec = find_stages(_rg_pair_part(NetlistBuilder()).build(), FakeParts({"U3": rg}))
    assert [s.id for s in rec.stages] == ["U3"] and not rec.unsupported
    nb = NetlistBuilder().part("U1", "fb-inamp", "Project:FbInAmp", pins=[
        ("1", "FB", "passive", "FB"), ("2", "-IN", "input", "IN_N"), ("3", "+IN", "input", "IN_P"),
        ("4", "V-", "power_in", "-5V"), ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V")]).r("R1", "OUT", "FB", "10k").r("R2", "FB", "GND", "10k").r(
        "R9", "IN_P", "GND", "1M").r("R10", "IN_N", "GND", "1M")
    rec = find_stages(nb.build(), FakeParts({"U1": rg}))
    assert not rec.stages
    (un,) = rec.unsupported
    assert "describes an RG pair" in un.message and "feedback network on one gain pin" in un.message


def test_feedback_pin_without_a_resistor_from_the_output_runs_open_loop():
    # RG from the gain pin to REF, nothing from the output: the output amplifier has no DC
    # feedback (ideal op-amp: no path from OUT back to its inverting input), an error from
    # structure alone. A capacitor alone from OUT to the pin is no DC feedback either.
    from netlist_builder import NetlistBuilder

    def part(nb):
        return nb.part("U1", "fb-inamp", "Project:FbInAmp", pins=[
            ("1", "FB", "passive", "FB"), ("2", "-IN", "input", "IN_N"),
            ("3", "+IN", "input", "IN_P"), ("4", "V-", "power_in", "-5V"),
            ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
            ("7", "V+", "power_in", "+5V")]).r("R2", "FB", "GND", "10k").r(
            "R9", "IN_P", "GND", "1M").r("R10", "IN_N", "GND", "1M").r("R8", "OUT", "GND", "10k")

    p = check_netlist(part(NetlistBuilder()).c("C1", "OUT", "FB", "1n").build(), None, "t", "t", OPTS)
    (f,) = [f for f in p.findings if f.rule == "stage-incomplete"]
    assert f.severity == "error" and f.data["miswired"] and "open loop" in f.message
    assert f.references == ["R2", "U1"]
    # with RF drawn, the same part is recognised and only lacks part data
    p = check_netlist(part(NetlistBuilder()).r("R1", "OUT", "FB", "10k").build(), None, "t", "t", OPTS)
    (f,) = [f for f in p.findings if f.rule == "stage-incomplete"]
    assert f.severity == "info" and not f.data.get("miswired")


def test_feedback_network_with_a_rheostat_is_read_not_called_open_loop():
    # RF = R1 10k + RV1 (10k, wiper on its end): 10k to 20k over the travel (series
    # resistance, common practice); RG = R2 10k. Not miswired: the network is read, the part
    # reported with the range.
    from netlist_builder import NetlistBuilder

    nb = NetlistBuilder().part("U1", "fb-inamp", "Project:FbInAmp", pins=[
        ("1", "FB", "passive", "FB"), ("2", "-IN", "input", "IN_N"), ("3", "+IN", "input", "IN_P"),
        ("4", "V-", "power_in", "-5V"), ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V")]).r("R1", "OUT", "MID", "10k").r("R2", "FB", "GND", "10k")
    nb.part("RV1", "10k", "Device:R_Potentiometer", pins=[
        ("1", "1", "passive", "MID"), ("2", "2", "passive", "FB"), ("3", "3", "passive", "FB")])
    nb.r("R9", "IN_P", "GND", "1M").r("R10", "IN_N", "GND", "1M").r("R8", "OUT", "GND", "10k")
    p = check_netlist(nb.build(), None, "t", "t", OPTS)
    (f,) = [f for f in p.findings if f.rule == "stage-incomplete"]
    assert f.severity == "info" and not f.data.get("miswired")
    assert f.references == ["R1", "R2", "RV1", "U1"]
    assert f.data["schematic"]["rf_ohms_range"] == pytest.approx([10e3, 20e3], rel=1e-12)
    assert "RF = RV1+R1 = 10.0 kΩ to 20.0 kΩ over RV1's travel" in f.message
