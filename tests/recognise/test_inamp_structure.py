"""Structure needs no datasheet: an integrated in-amp without part data still gets the rules that
read only the wiring (ref-floating, bias-return, supply-floating), while no gain or CMRR figure is
given for it in any report format.

The schematic is invented (an eight-pin in-amp symbol 'IA8' of our own, no vendor part): the REF
pin reaches ground only through a 100 nF capacitor, the inverting input is AC-coupled from the
connector with nothing to return its bias current, and the positive supply pin sits on a local
net that its decoupling capacitor joins to ground while the wire to the supply is missing. Each
fact is checked on frontcheck's own netlist of the .kicad_sch and on KiCad 9's export of the same
file, after the two netlists were compared net by net.
"""

from __future__ import annotations

import json
import re

import pytest

from frontcheck.kicad.netfile import read_net
from frontcheck.pipeline import RunOptions, check_netlist, run
from frontcheck.recognise import find_stages
from frontcheck.report import FORMATS, render
from invented_parts import inamp_items, tag, two_pin
from kicad_sheets import Sym, kicad9_named, label, named, ours, write


def _broken_sheet(tmp_path):
    items = inamp_items("U3", 100, 100, {1: "RGA", 2: "IN_N", 3: "IN_P", 4: "-5V", 5: "REFC",
                                         6: "OUT", 7: "VSF", 8: "RGB"})
    for lib, ref, x, a, b, value in (
            ("Device:R", "R1", 40, "RGA", "RGB", "1k"),          # the gain resistor
            ("Device:R", "R2", 50, "IN_P", "GND", "1M"),         # +IN's bias return
            ("Device:C", "C1", 60, "REFC", "GND", "100n"),       # REF: a capacitor, no more
            ("Device:C", "C2", 70, "SIG_N", "IN_N", "1u"),       # -IN AC-coupled, no return
            ("Device:C", "C3", 80, "VSF", "GND", "100n"),        # V+ decoupled, never supplied
            ("Device:C", "C4", 90, "+5V", "GND", "10u"),         # the +5V rail, unused by U3
            ("Device:C", "C5", 130, "-5V", "GND", "100n"),
            ("Device:R", "R3", 140, "OUT", "GND", "10k")):
        items += two_pin(lib, ref, x, 150, a, b, value)
    items += [Sym("T:Conn3", "J1", 160, 100, value="Conn3"), label("IN_P", 154.92, 97.46),
              label("SIG_N", 154.92, 100), tag("GND", 154.92, 102.54)]
    return write(tmp_path, items, "ia")


# The nets as drawn (local labels carry the root sheet's path, power symbols name global nets):
# what both netlists must hold.
EXPECTED = {
    "/REFC": {("U3", "5"), ("C1", "1")},
    "/IN_N": {("U3", "2"), ("C2", "2")},
    "/SIG_N": {("C2", "1"), ("J1", "2")},
    "/VSF": {("U3", "7"), ("C3", "1")},
    "/RGA": {("U3", "1"), ("R1", "1")},
    "/RGB": {("U3", "8"), ("R1", "2")},
    "-5V": {("U3", "4"), ("C5", "1")},
    "+5V": {("C4", "1")},
}

OPTS = RunOptions(samples=200, seed=1)


def _by_rule(findings) -> dict[str, list]:
    out: dict[str, list] = {}
    for f in findings:
        out.setdefault(f.rule, []).append(f)
    return out


def _check_structure(netlist):
    """The structural findings of the broken sheet, whichever netlist they come from."""
    rec = find_stages(netlist)
    assert not rec.stages and [u.ref for u in rec.unsupported] == ["U3"]
    p = check_netlist(netlist, None, "ia", "ia", OPTS)
    rules = _by_rule(p.findings)
    (rf,) = rules["ref-floating"]
    assert rf.severity == "error" and rf.references == ["C1", "U3"]
    assert "/REFC" in rf.message and "C1" in rf.message and rf.data["part_data"] is False
    # -IN has no DC path (C2 blocks it); +IN returns through R2 and is not reported.
    (br,) = rules["bias-return"]
    assert br.severity == "error" and br.data["pin"] == "U3 -IN" and br.data["net"] == "/IN_N"
    assert br.data["status"] == "none" and br.references == ["C2", "U3"]
    (sf,) = rules["supply-floating"]
    assert sf.severity == "error" and sf.data["net"] == "/VSF" and sf.data["pin"] == "V+ (pin 7)"
    assert sf.data["status"] == "capacitor" and sf.data["parts"] == ["C3"]
    assert sf.data["reaches"] == ["GND"] and sf.references == ["C3", "U3"]
    # The negative supply pin is on the -5V net itself: nothing said about it.
    assert all(f.data.get("net") != "-5V" for f in rules["supply-floating"])
    # No part data: recognised, not analysed.
    assert [f.severity for f in rules["stage-incomplete"]] == ["info"]
    return p


def test_structure_without_part_data_from_the_schematic(tmp_path):
    sch = _broken_sheet(tmp_path)
    nl = ours(sch)
    got = named(nl)
    assert {k: got[k] for k in EXPECTED} == EXPECTED
    _check_structure(nl)


@pytest.mark.oracle
def test_structure_without_part_data_matches_kicad9(tmp_path, kicad9):
    sch = _broken_sheet(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs            # net by net, every pin
    assert {k: theirs[k] for k in EXPECTED} == EXPECTED
    _check_structure(read_net(tmp_path / "ia.k9.net"))


def _no_figures(text: str) -> list[str]:
    """Every CMRR figure (a number in dB) and every gain figure that is not the schematic's
    explicitly unchecked range, in a rendered report."""
    bad = re.findall(r"[-+]?\d[\d.,]*\s*dB", text)
    for m in re.finditer(r"\b[Gg]ain\b[^.;\n]{0,40}?\d", text):
        tail = text[m.start():m.start() + 400]
        if "not checked" not in tail:
            bad.append(tail[:80])
    return bad


@pytest.mark.parametrize("fmt", sorted(FORMATS))
def test_no_gain_or_cmrr_figure_without_part_data(tmp_path, fmt):
    sch = _broken_sheet(tmp_path)
    report = run([str(sch)], OPTS)
    (p,) = report.projects
    assert {"ref-floating", "bias-return", "supply-floating"} <= {f.rule for f in p.findings}
    text = render(report, fmt).replace(str(tmp_path), "")
    for rule in ("ref-floating", "bias-return", "supply-floating"):
        assert rule in text
    assert not _no_figures(text), _no_figures(text)
    if fmt == "json":
        doc = json.loads(text)
        assert doc["stages"] == []             # no stage, so no gain, CMRR or headroom figure


@pytest.mark.parametrize("fmt", sorted(FORMATS))
def test_the_figure_search_finds_the_figures_of_an_analysed_stage(tmp_path, fmt):
    # The control for the test above: a difference amplifier of four 10 k resistors is analysed,
    # and its gain and CMRR figures are found by the same search in every format.
    from test_pipeline import write_diff_project

    report = run([str(write_diff_project(tmp_path / "amp"))], OPTS)
    assert _no_figures(render(report, fmt).replace(str(tmp_path), ""))


def _fb_inamp(refnet: str = "VREF") -> "NetlistBuilder":
    from netlist_builder import NetlistBuilder

    # A feedback-pin in-amp without part data: RF (R7) from OUT to the gain pin, RG (R6) from
    # there to REF. The gain network loads REF; it does not give REF a potential.
    return NetlistBuilder().part("U1", "fb-inamp", "Project:FbInAmp", pins=[
        ("1", "RG", "passive", "FB"), ("2", "VIN-", "input", "IN_N"), ("3", "VIN+", "input", "IN_P"),
        ("4", "V-", "power_in", "GND"), ("5", "REF", "input", refnet),
        ("6", "VOUT", "output", "OUT"), ("7", "V+", "power_in", "+3V3")]).r(
        "R6", "FB", refnet, "10k").r("R7", "FB", "OUT", "10k").r("R1", "IN_P", "GND", "1M").r(
        "R2", "IN_N", "GND", "1M").r("R9", "OUT", "GND", "10k")


def test_ref_held_only_by_the_parts_own_gain_network_is_floating():
    nb = _fb_inamp().c("C1", "VREF", "GND")
    p = check_netlist(nb.build(), None, "t", "t", OPTS)
    (rf,) = [f for f in p.findings if f.rule == "ref-floating"]
    assert rf.data["net"] == "VREF" and rf.data["parts"] == ["C1"]
    # the same REF on a divider from the supply has a potential: no finding
    nb = _fb_inamp().r("R10", "+3V3", "VREF", "10k").r("R11", "VREF", "GND", "10k")
    p = check_netlist(nb.build(), None, "t", "t", OPTS)
    assert not [f for f in p.findings if f.rule == "ref-floating"]


def test_input_returned_through_an_unfitted_connector_is_a_connector_path():
    # A connector marked DNP keeps its pads: an electrode lead soldered there is the source, so
    # the input's only path ends at a connector (a declaration), not at nothing (an error).
    nb = _fb_inamp(refnet="GND")
    nb.comps.pop("R2")
    nb.nets["IN_N"] = [n for n in nb.nets["IN_N"] if n.ref != "R2"]
    nb.nets["GND"] = [n for n in nb.nets["GND"] if n.ref != "R2"]
    nb.r("R5", "IN_N", "PROBE", "4k7").part("J9", "Conn", "Connector:Conn_01x01", dnp=True,
                                             pins=[("1", "Pin_1", "passive", "PROBE")])
    p = check_netlist(nb.build(), None, "t", "t", OPTS)
    (br,) = [f for f in p.findings if f.rule == "bias-return"]
    assert br.severity == "warning" and br.data["status"] == "connector"
    assert br.data["reaches"] == "J9 pin 1 via R5"
