"""supply-floating: an amplifier supply pin with no DC path to a supply, judged from the wiring
alone. A capacitor passes no direct current (Kirchhoff's current law at DC), so a supply pin
whose net reaches a rail only through its decoupling capacitor is unpowered (common practice);
a net something else may feed is left alone."""

from __future__ import annotations

import pytest

from frontcheck.pipeline import RunOptions, check_netlist
from netlist_builder import NetlistBuilder, diff_amp

OPTS = RunOptions(samples=200, seed=1)


def _found(nb: NetlistBuilder) -> list:
    report = check_netlist(nb.build(), None, "t", "t", OPTS)
    return [f for f in report.findings if f.rule == "supply-floating"]


def _stage(vpos: str, vneg: str = "-5V") -> NetlistBuilder:
    return diff_amp(vpos=vpos, vneg=vneg).pins_to("J1", "IN_P", "IN_N", "GND")


def test_supply_pin_on_the_rail_passes():
    assert _found(_stage("+5V").c("C1", "+5V", "GND")) == []


def test_supply_pin_reaching_the_rail_only_through_its_decoupling_capacitor():
    # The op-amp's V+ pin sits on a local net that C1 joins to ground: the wire to +5V is
    # missing. The finding is on the difference stage and names the capacitor.
    (f,) = _found(_stage("/amp/VS").c("C1", "/amp/VS", "GND").c("C9", "+5V", "GND"))
    assert f.severity == "error" and f.stage == "U1"
    assert f.data == {"amplifier": "U1", "pin": "V+ (pin 5)", "net": "/amp/VS",
                      "status": "capacitor", "reaches": ["GND"], "parts": ["C1"]}
    assert f.references == ["C1", "U1"] and "positive supply" in f.message


def test_negative_supply_pin_through_a_capacitor_to_the_rail():
    (f,) = _found(_stage("+5V", "/amp/VN").c("C2", "/amp/VN", "-5V").c("C9", "-5V", "GND"))
    assert f.data["reaches"] == ["-5V"] and f.data["pin"] == "V- (pin 2)"
    assert "negative supply" in f.message


def test_supply_pin_reaching_nothing():
    # A resistor to a net nothing else is on: no path at all, no capacitor to name.
    (f,) = _found(_stage("/amp/VS").r("R9", "/amp/VS", "/amp/X", "10"))
    assert f.data["status"] == "none" and f.data["parts"] == [] and "no supply at all" in f.message


@pytest.mark.parametrize("feed", ["resistor", "ferrite"])
def test_supply_through_a_filter_resistor_or_ferrite_passes(feed):
    nb = _stage("/amp/VS").c("C1", "/amp/VS", "GND")
    if feed == "resistor":
        nb.r("R9", "+5V", "/amp/VS", "10")
    else:
        nb.part("FB1", "600R", "Inductor:Ferrite_Bead", pins=[("1", "", "passive", "+5V"),
                                                             ("2", "", "passive", "/amp/VS")])
    assert _found(nb) == []


def test_a_net_something_else_may_feed_is_left_alone():
    # A regulator's output pin (typed 'output', not 'power_out'), a connector, or a global name
    # (a power symbol or global label may carry a rail from elsewhere): not judged.
    reg = _stage("/amp/VS").c("C1", "/amp/VS", "GND").part("U9", "LDO", "Regulator:LDO", pins=[
        ("1", "VI", "power_in", "+12V"), ("2", "GND", "power_in", "GND"),
        ("3", "VO", "output", "/amp/VS")])
    assert _found(reg) == []
    plug = _stage("/amp/VS").c("C1", "/amp/VS", "GND").pins_to("J5", "/amp/VS", "GND")
    assert _found(plug) == []
    assert _found(_stage("VS_ANALOG").c("C1", "VS_ANALOG", "GND")) == []


def test_an_open_supply_pin_is_left_to_recognition():
    # Unconnected: the near miss of stage-incomplete (and the accounting) say so already.
    assert _found(_stage(None)) == []


def test_integrated_inamp_without_part_data_is_judged_too():
    nb = NetlistBuilder().part("U3", "inamp", "Project:InAmp", pins=[
        ("1", "RG", "passive", "RGA"), ("2", "-IN", "input", "IN_N"), ("3", "+IN", "input", "IN_P"),
        ("4", "V-", "power_in", "GND"), ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "Net-(U3-V+)"), ("8", "RG", "passive", "RGB")])
    nb.r("R1", "RGA", "RGB", "1k").r("R2", "IN_P", "GND", "1M").r("R3", "IN_N", "GND", "1M")
    nb.c("C1", "Net-(U3-V+)", "GND").r("R4", "OUT", "GND", "10k")
    (f,) = _found(nb)
    assert f.stage is None and f.data["net"] == "Net-(U3-V+)" and f.data["parts"] == ["C1"]
