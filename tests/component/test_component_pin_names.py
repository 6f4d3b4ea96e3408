"""One pin-role recogniser for every naming habit of amplifier symbols (common practice: the
forms below are those KiCad's own libraries and vendor-style libraries write)."""

from __future__ import annotations

import pytest

from frontcheck.component import (classify, normalise_pin_name, opamp_units, pin_roles,
                                  read_pin_name)
from frontcheck.netlist import Component, Pin

HABITS = {
    "inp": ["+", "IN+", "+IN", "VIN+", "V+IN", "INP", "IN_P", "+IN_A", "Vip", "in+", "~{IN+}",
            "IN(+)", "NONINV", "1IN+", "IN+1", "IN1+", "INA+", "+IN0.4x"],
    "inn": ["-", "IN-", "-IN", "VIN-", "V-IN", "INN", "IN_N", "-IN_B", "Vim", "INM", "INV",
            "2IN-", "IN-2"],
    "out": ["OUT", "VO", "VOUT", "Vout", "OUTA", "OUT_B", "OUT1", "2OUT", "OUTPUT"],
    "rg": ["RG", "Rg", "RG1", "RG_1", "RG2", "RG+", "-RG", "+RG", "RGA", "G1", "G2", "R_{G}"],
    "ref": ["REF", "Ref", "VREF", "REFIN", "REF1", "REF2", "Vr1", "REF(+)"],
    "fg": ["FG", "Vfg", "FB"],
    "sense": ["SENSE", "SNS"],
    "vpos": ["V+", "VS+", "+VS", "Vs+", "VCC", "VDD", "+V", "VPOS", "AVDD", "V_{CC}"],
    "vneg": ["V-", "VS-", "-VS", "VEE", "VSS", "VNEG", "-V"],
    "gnd": ["GND", "AGND", "0V"],
    "vocm": ["VOCM", "VCM"],
}


@pytest.mark.parametrize("role,name", [(r, n) for r, ns in HABITS.items() for n in ns])
def test_every_naming_habit(role, name):
    assert read_pin_name(name, "input").role == role


@pytest.mark.parametrize("name", ["VIN", "IN", "EN", "~{SHDN}", "NC", "CS", "VOS", "NULL",
                                  "BAL1", "COMP", "R1.1", "~"])
def test_names_without_an_amplifier_role(name):
    assert read_pin_name(name, "input").role is None


def test_supply_only_names_need_a_power_pin():
    assert read_pin_name("VS", "power_in").role == "vpos"
    assert read_pin_name("VS", "input").role is None


def test_unnamed_and_sign_outputs():
    assert read_pin_name("~", "output").role == "out"
    assert read_pin_name("+", "output").role == "out_p"
    assert read_pin_name("-2", "output") == ("out_n", "2")
    assert read_pin_name("FB", "output").role is None       # an op-amp's output tap


def test_channels():
    assert read_pin_name("+IN_A", "input").channel == "A"
    assert read_pin_name("IN+2", "input").channel == "2"
    assert read_pin_name("1OUT", "output").channel == "1"
    assert read_pin_name("RG1", "passive").channel is None     # an index, not a channel


@pytest.mark.parametrize("name,role,ch", [("FB1", "fg", "1"), ("FB2", "fg", "2"),
                                          ("FG1", "fg", "1"), ("VFG2", "fg", "2"),
                                          ("FB_B", "fg", "B"), ("RG1_A", "rg", "A"),
                                          ("RG2_B", "rg", "B"), ("RG_2", "rg", None),
                                          ("+FB1", None, None), ("FB3x", None, None)])
def test_channel_numbered_gain_pins(name, role, ch):
    # one feedback (or RG) pin per channel of a dual in-amp (common practice)
    assert read_pin_name(name, "passive") == (role, ch)


def test_channel_numbered_feedback_output_is_an_output_tap():
    assert read_pin_name("FB1", "output").role is None


def test_markup_is_not_part_of_the_name():
    assert normalise_pin_name("~{RG}_{1}") == "RG1"
    assert normalise_pin_name("V_{S}^{+}") == "VS+"


def _part(ref, lib, pins):
    return Component(ref, "X", lib, pins={n: Pin(n, name, t, 0) for n, name, t in pins})


def test_vendor_style_inamp_is_an_inamp_with_both_rg_pins():
    u = _part("U1", "vendor:INAMP", [("1", "RG_1", "passive"), ("2", "V-IN", "input"),
                                     ("3", "V+IN", "input"), ("4", "V-", "power_in"),
                                     ("5", "REF", "input"), ("6", "VO", "output"),
                                     ("7", "V+", "power_in"), ("8", "RG_2", "passive")])
    assert classify(u) == "inamp"
    assert pin_roles(u)["rg"] == ["1", "8"]


def test_channel_numbered_dual_current_sense_amplifier_has_two_channels():
    u = _part("U2", "vendor:DUALCSA", [("1", "OUT1", "output"), ("2", "IN-1", "input"),
                                       ("3", "IN+1", "input"), ("4", "GND", "power_in"),
                                       ("5", "IN+2", "input"), ("6", "IN-2", "input"),
                                       ("7", "OUT2", "output"), ("8", "VS", "power_in")])
    units = opamp_units(u)
    assert [(x.name, x.inp, x.inn, x.out, x.paired_by) for x in units] == [
        ("U2A", "3", "2", "1", "name"), ("U2B", "5", "6", "7", "name")]
    assert all(x.vpos == "8" and x.vneg == "4" for x in units)


def test_packages_of_one_symbol_get_their_own_names_and_other_pins_their_own_units():
    pins = [("1", "OUT1", "output"), ("2", "IN-1", "input"), ("3", "IN+1", "input"),
            ("4", "GND", "power_in"), ("5", "IN+2", "input"), ("6", "IN-2", "input"),
            ("7", "OUT2", "output"), ("8", "VS", "power_in")]
    first = opamp_units(_part("U7", "lab:DUAL", pins))
    again = opamp_units(_part("U71", "x:Y", pins))
    assert [x.name for x in first] == ["U7A", "U7B"] and [x.name for x in again] == ["U71A", "U71B"]
    assert [x.inp for x in first] == [x.inp for x in again] == ["3", "5"]
    # the same numbers with other names: a single op-amp whose output is pin 7
    single = [("2", "-", "input"), ("3", "+", "input"), ("4", "V-", "power_in"),
              ("6", "OUT", "output"), ("7", "V+", "power_in")]
    assert [(x.name, x.inp, x.inn, x.out, x.vpos, x.vneg) for x in
            opamp_units(_part("U7", "lab:DUAL", single))] == [("U7", "3", "2", "6", "7", "4")]


def test_fully_differential_and_transconductance_amplifiers_are_not_opamps():
    fda = _part("U3", "lab:FDA", [("1", "IN+", "input"), ("2", "IN-", "input"),
                                  ("3", "OUT+", "output"), ("4", "OUT-", "output"),
                                  ("5", "VOCM", "input")])
    ota = _part("U4", "lab:OTA", [("1", "+", "input"), ("2", "-", "input"), ("3", "~", "output"),
                                  ("4", "BIAS", "input")])
    assert (classify(fda), classify(ota)) == ("fda", "ota")


@pytest.mark.parametrize("extra", [[("8", "RLD", "output")],
                                   [("8", "RLD_OUT", "output"), ("9", "RLDFB", "input")],
                                   [("8", "LOD+", "output"), ("9", "LOD-", "output")],
                                   [("8", "~{LOFF}_{STAT}", "output")], [("8", "DRL", "output")]])
def test_integrated_front_end_is_an_inamp_not_a_difference_amplifier(extra):
    # An in-amp with the blocks a biopotential front end adds (a right-leg drive, lead-off
    # outputs) beside its REF pin: its inputs are the in-amp's, not a difference amplifier's
    # input resistors (common practice).
    base = [("1", "IN+", "input"), ("2", "IN-", "input"), ("3", "REFIN", "input"),
            ("4", "OUT", "output"), ("5", "+VS", "power_in"), ("6", "GND", "power_in")]
    assert classify(_part("U1", "vendor:AFE", base)) == "diffamp"
    assert classify(_part("U1", "vendor:AFE", base + extra)) == "inamp"
    # a plain 'LO' (a mixer's local-oscillator pin) is not a lead-off output
    assert classify(_part("U1", "vendor:AFE", base + [("8", "LO", "input")])) == "diffamp"
