"""A single-supply in-amp with REF on ground (its negative rail) on a bridge input: Vout = Vref +
G Vd sits on the low rail at Vd = 0, so every negative differential input asks for an output
below it (docs/engineering.md sec. 4a; Vout = Vref + G Vd as in sec. 3, Sedra & Smith 6th ed.,
Example 2.17). With Input Diff declared the headroom finding says which input, the output it
needs and the rail; without it an info says the output is unipolar and what to do. Discrete
stages (ideal op-amps, no part data) and an integrated in-amp without part data alike; the
integrated case is also drawn as a schematic and checked net by net against KiCad 9's export.
"""

from __future__ import annotations

import pytest

from frontcheck.kicad.netfile import read_net
from frontcheck.pipeline import RunOptions, check_netlist
from kicad_sheets import kicad9_named, named, ours, write
from netlist_builder import NetlistBuilder
from invented_parts import inamp_items, two_pin

OPTS = RunOptions(samples=200, seed=1)


def _bridge(nb: NetlistBuilder, r: str = "350") -> NetlistBuilder:
    # a full bridge of equal arms from +5V: both inputs at 2.5 V, Vd = 0 at balance
    return nb.r("RB1", "+5V", "IN_P", r).r("RB2", "IN_P", "GND", r).r(
        "RB3", "+5V", "IN_N", r).r("RB4", "IN_N", "GND", r)


def three_opamp(fields=None, vneg="GND", ref="GND") -> NetlistBuilder:
    """A three-op-amp in-amp, G = (1 + 20k/1k) x 1 = 21, on +5V and ``vneg``, REF on ``ref``."""
    nb = NetlistBuilder().opamp("U1", {"A": ("IN_P", "M1", "O1"), "B": ("IN_N", "M2", "O2"),
                           "C": ("P3", "N3", "OUT")}, vpos="+5V", vneg=vneg)
    nb.comps["U1"].fields.update(fields or {})
    nb.r("R1", "O1", "M1", "10k 0.1%").r("R2", "O2", "M2", "10k 0.1%").r("R3", "M1", "M2", "1k 0.1%")
    nb.r("R4", "O2", "N3", "10k 0.1%").r("R5", "N3", "OUT", "10k 0.1%")
    nb.r("R6", "O1", "P3", "10k 0.1%").r("R7", "P3", ref, "10k 0.1%")
    return _bridge(nb).pins_to("J1", "OUT", "GND")


def integrated(fields=None, vneg="GND", ref="GND") -> NetlistBuilder:
    """An eight-pin in-amp of our own without part data, RG = 1k."""
    nb = NetlistBuilder().part("U3", "IA8", "Project:IA8", fields=fields, pins=[
        ("1", "RG", "passive", "RGA"), ("2", "-IN", "input", "IN_N"), ("3", "+IN", "input", "IN_P"),
        ("4", "V-", "power_in", vneg), ("5", "REF", "input", ref), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG", "passive", "RGB")])
    nb.r("R1", "RGA", "RGB", "1k")
    return _bridge(nb).pins_to("J1", "OUT", "GND")


def _headroom(nb: NetlistBuilder) -> list:
    p = check_netlist(nb.build(), None, "b", "b", OPTS)
    return [f for f in p.findings if f.rule == "headroom"]


def _unipolar(findings) -> list:
    return [f for f in findings if "ref_at_low_rail" in f.data]


# -- discrete --------------------------------------------------------------------------------

def test_no_input_range_is_an_info_that_the_output_is_unipolar():
    (f,) = _headroom(three_opamp())
    assert f.severity == "info" and "no input range declared" in f.message
    assert "REF (net GND, 0 V) is at the negative rail GND of U1C" in f.message
    assert "unipolar" in f.message and "mid-supply" in f.fix
    assert f.data["ref_at_low_rail"]["rail_net"] == "GND"


def test_negative_input_diff_without_input_cm_needs_an_output_below_the_rail():
    (f,) = _headroom(three_opamp({"Input Diff": "±10 mV"}))
    assert f.severity == "error"
    fact = f.data["ref_at_low_rail"]
    # Vout = Vref + G Vd = 0 + 21 x (-10 mV) = -210 mV (sec. 3, G = 1 + (10k + 10k)/1k)
    assert fact["vd_low"] == pytest.approx(-0.010)
    assert fact["out_needed_v"] == pytest.approx(-0.210, rel=1e-9)
    assert "Input Diff reaches -10.0 mV (IN- above IN+)" in f.message
    assert "-210 mV" in f.message and "below the negative rail GND (0 V)" in f.message


def test_declared_box_names_the_rail_in_the_violation():
    found = _headroom(three_opamp({"Input Diff": "±10 mV", "Input CM": "2.5 V"}))
    (f,) = [x for x in found if x.data.get("opamp") == "U1C"]
    assert f.severity == "error" and f.data["node"] == "output" and f.data["corner"][1] < 0
    assert f.data["voltage"] < -0.210 < 0 == f.data["low"]     # -210 mV nominal, worse at a corner
    assert "is at the negative rail GND of U1C" in f.message and "mid-supply" in f.fix
    assert not [x for x in found if "no input range" in x.message]


@pytest.mark.parametrize("fields", [{"Input Diff": "0..10 mV"}, {"Input Diff": "0..10 mV",
                                                                 "Input CM": "2.5 V"}])
def test_positive_only_input_is_not_reported(fields):
    found = _headroom(three_opamp(fields))
    assert not _unipolar(found)
    assert not [f for f in found if f.severity == "error" and f.data.get("opamp") == "U1C"
                and f.data["corner"][1] < 0]


def test_split_supply_with_ref_on_ground_is_bipolar():
    found = _headroom(three_opamp(vneg="-5V"))
    assert not _unipolar(found)
    assert [f.message for f in found] == [
        "three-opamp stage U1A+U1B+U1C: no input range declared; headroom unchecked"]


# -- integrated, no part data ------------------------------------------------------------

def test_in_amp_without_part_data_no_input_range():
    (f,) = _unipolar(_headroom(integrated()))
    assert f.severity == "info" and f.references == ["U3"] and f.data["part_data"] is False
    assert "U3: no input range declared; REF (net GND, 0 V) is at the negative rail GND" in f.message


def test_in_amp_without_part_data_negative_input_diff():
    (f,) = _unipolar(_headroom(integrated({"Input Diff": "-5..5 mV"})))
    assert f.severity == "error"
    # at G = 1 the output needed is 0 V - 5 mV; any positive gain asks for more
    assert "Input Diff reaches -5.00 mV" in f.message and "(-5.00 mV at G = 1)" in f.message
    assert "below the negative rail GND (0 V)" in f.message


@pytest.mark.parametrize("kw", [{"vneg": "-5V"}, {"ref": "VMID"}])
def test_in_amp_with_ref_off_the_low_rail_is_not_reported(kw):
    nb = integrated({"Input Diff": "±5 mV"}, **kw)
    if kw.get("ref"):
        nb.r("R8", "+5V", "VMID", "10k").r("R9", "VMID", "GND", "10k")
    assert not _unipolar(_headroom(nb))


# -- the integrated case drawn ------------------------------------------------------------

def _sheet(tmp_path, diff: str | None):
    items = inamp_items("U3", 100, 100, {1: "RGA", 2: "IN_N", 3: "IN_P", 4: "GND", 5: "GND",
                                         6: "OUT", 7: "+5V", 8: "RGB"})
    if diff:
        # an intent field on the in-amp symbol, hidden, as a designer adds one in KiCad
        items[0].flags = (f'(property "Input Diff" "{diff}" (at 100 100 0) '
                          '(effects (font (size 1.27 1.27)) (hide yes)))')
    for ref, x, a, b, value in (("R1", 40, "RGA", "RGB", "1k"), ("R2", 50, "+5V", "IN_P", "350"),
                                ("R3", 60, "IN_P", "GND", "350"), ("R4", 70, "+5V", "IN_N", "350"),
                                ("R5", 80, "IN_N", "GND", "350"), ("R6", 90, "OUT", "GND", "10k")):
        items += two_pin("Device:R", ref, x, 150, a, b, value)
    return write(tmp_path, items, "bridge")


EXPECTED = {"/IN_P": {("U3", "3"), ("R2", "2"), ("R3", "1")},
            "/IN_N": {("U3", "2"), ("R4", "2"), ("R5", "1")}}


def _check_drawn(netlist, diff):
    found = [f for f in check_netlist(netlist, None, "bridge", "bridge", OPTS).findings
             if f.rule == "headroom" and "ref_at_low_rail" in f.data]
    (f,) = found
    assert f.severity == ("error" if diff else "info") and f.references == ["U3"]
    assert "REF (net GND, 0 V) is at the negative rail GND of U3" in f.message


@pytest.mark.parametrize("diff", [None, "±10 mV"])
def test_drawn_in_amp_from_the_schematic(tmp_path, diff):
    sch = _sheet(tmp_path, diff)
    got = named(ours(sch))
    assert {k: got[k] for k in EXPECTED} == EXPECTED
    assert {("U3", "4"), ("U3", "5")} <= got["GND"]          # V- and REF on the ground net
    _check_drawn(ours(sch), diff)


@pytest.mark.oracle
@pytest.mark.parametrize("diff", [None, "±10 mV"])
def test_drawn_in_amp_from_kicad9s_export(tmp_path, kicad9, diff):
    sch = _sheet(tmp_path, diff)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs            # net by net, every pin
    assert {k: theirs[k] for k in EXPECTED} == EXPECTED
    _check_drawn(read_net(tmp_path / "bridge.k9.net"), diff)
