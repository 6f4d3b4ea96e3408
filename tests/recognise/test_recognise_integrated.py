"""Integrated in-amps and difference amplifiers: found by pin names, expanded from part data into
internal op-amps and resistors that the same nodal analysis solves, reported as unsupported
without part data, and near misses for unconnected pins. Part numbers here are invented
classes: the checks are that the expansion realises the gain equation the part data states."""

from __future__ import annotations

import pytest

from frontcheck.circuit import Sourced
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, ideal_gains


class FakeParts:
    """Stands in for frontcheck.parts.PartLibrary: part data keyed by reference."""

    def __init__(self, inamps=None, diffamps=None):
        self.inamps, self.diffamps = inamps or {}, diffamps or {}

    def inamp_model(self, c):
        return self.inamps.get(c.ref)

    def diffamp_model(self, c):
        return self.diffamps.get(c.ref)


GENERIC_RG = {"name": "test in-amp class", "k": 50e3, "r_stage2": 10e3, "ratio_tol": 1e-4,
              "k_tol": 0.002}


def inamp_ic(nb: NetlistBuilder, ref="U3", rg1="RGA", rg2="RGB", vpos="+5V", vneg="-5V", refnet="REF_IN",
             out="OUT", inp="IN_P", inn="IN_N") -> NetlistBuilder:
    return nb.part(ref, "inamp", "Project:InAmp", pins=[
        ("1", "RG", "passive", rg1), ("2", "-IN", "input", inn), ("3", "+IN", "input", inp),
        ("4", "V-", "power_in", vneg), ("5", "REF", "input", refnet), ("6", "OUT", "output", out),
        ("7", "V+", "power_in", vpos), ("8", "RG", "passive", rg2)]).pins_to("J1", inp, inn, out, refnet)


def test_rg_pair_inamp_expands_to_the_stated_gain_equation():
    nb = inamp_ic(NetlistBuilder()).r("R1", "RGA", "RGB", "1k")
    rec = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG}))
    (st,) = rec.stages
    assert st.kind == "integrated-inamp" and st.id == "U3" and st.amplifiers == ["U3"]
    assert st.references == ["R1", "U3"] and st.roles["RG"] == "R1"
    assert st.circuit.ports == {"in_p": "IN_P", "in_n": "IN_N", "ref": "REF_IN", "out": "OUT"}
    internal = [r for r in st.circuit.resistors if r.internal]
    assert len(internal) == 6 and all(r.match_group == "U3" for r in internal)
    rd = next(r for r in internal if r.name == "U3.Rd")
    assert rd.b == "REF_IN"                 # the REF-side resistor hangs on the REF pin's net
    assert sum(o.internal for o in st.circuit.opamps) == 3
    ad, acm, aref = ideal_gains(st)
    assert ad == pytest.approx(1 + 50e3 / 1e3, rel=1e-12)   # G = 1 + K/RG as the data states
    assert abs(acm) < 1e-12 and aref == pytest.approx(1.0)
    assert not rec.near_misses and not rec.unsupported


def test_rg_pair_inamp_with_split_rg_centre_tap():
    nb = inamp_ic(NetlistBuilder()).r("R1", "RGA", "TAP", "500").r("R2", "TAP", "RGB", "500")
    nb.opamp("U4", {"": ("TAP", "DRL", "DRL")}, package="single")
    (st,) = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG})).stages
    assert st.roles["RG"] == "R1+R2" and st.roles["RGa"] == "R1"
    assert ideal_gains(st)[0] == pytest.approx(1 + 50e3 / 1e3, rel=1e-12)   # RG = 500 + 500


def test_feedback_pin_inamp():
    # One gain pin with RF to the output and RG to REF (the CleverHand and PsyLink wiring).
    nb = NetlistBuilder().part("U1", "fb-inamp", "Project:FbInAmp", pins=[
        ("1", "RG", "passive", "FB"), ("2", "VIN-", "input", "IN_N"), ("3", "VIN+", "input", "IN_P"),
        ("4", "V-", "power_in", "GND"), ("5", "REF", "input", "VREF"), ("6", "VOUT", "output", "OUT"),
        ("7", "V+", "power_in", "+3V3")]).pins_to("J1", "IN_P", "IN_N", "OUT", "VREF")
    nb.r("R6", "FB", "VREF", "10k").r("R7", "FB", "OUT", "10k")
    data = {"name": "test feedback-pin class", "arch": "feedback-pin", "g0": 5.0, "r_in": 1e9,
            "ratio_tol": 1e-3}
    (st,) = find_stages(nb.build(), FakeParts({"U1": data})).stages
    assert st.roles["RF"] == "R7" and st.roles["RG"] == "R6"
    ad, acm, aref = ideal_gains(st)
    assert ad == pytest.approx(5 * (1 + 10e3 / 10e3), rel=1e-9)   # G = G0 (1 + RF/RG)
    assert abs(acm) < 1e-9 and aref == pytest.approx(1.0)


def balanced_receiver(nb: NetlistBuilder) -> NetlistBuilder:
    return nb.part("U4", "rx", "Project:LineReceiver", pins=[
        ("1", "Ref", "input", "GND"), ("2", "IN-", "input", "AUD_N"), ("3", "IN+", "input", "AUD_P"),
        ("4", "Vee", "power_in", "-5V"), ("5", "SNS", "input", "AUDIO"), ("6", "Vout", "output", "AUDIO"),
        ("7", "Vcc", "power_in", "+5V")]).pins_to("J3", "AUD_P", "AUD_N")


def test_unity_difference_amp_with_sense_pin():
    data = {"name": "test unity receiver", "gain": 1.0, "r_in": 10e3, "ratio_tol": 5e-4}
    (st,) = find_stages(balanced_receiver(NetlistBuilder()).build(), FakeParts(diffamps={"U4": data})).stages
    assert st.kind == "integrated-diffamp" and st.id == "U4"
    r2 = next(r for r in st.circuit.resistors if r.name == "U4.R2")
    assert r2.b == "AUDIO"
    ad, acm, aref = ideal_gains(st)
    assert ad == pytest.approx(1.0) and abs(acm) < 1e-12 and aref == pytest.approx(1.0)


def test_current_sense_amp_with_two_ref_pins_rests_at_their_mean():
    nb = NetlistBuilder().part("U2", "csa", "Project:CurrentSense", pins=[
        ("1", "GND", "power_in", "GND"), ("2", "+", "input", "PH"), ("3", "-", "input", "PH_DRV"),
        ("5", "V+", "power_in", "+3V3"), ("6", "REF2", "passive", "GND"),
        ("7", "REF1", "passive", "AVDD_REF"), ("8", "", "output", "SENSE")])
    nb.pins_to("J1", "PH", "SENSE", "AVDD_REF")
    nb.r("R6", "PH", "PH_DRV", "10m")
    data = {"name": "test current-sense class", "gain": 50.0, "r_in": 20e3}
    (st,) = find_stages(nb.build(), FakeParts(diffamps={"U2": data}),
                        rails={"+3V3": Sourced(3.3, "value")}).stages
    assert st.circuit.ports["ref"] == "AVDD_REF"
    ad, acm, aref = ideal_gains(st)
    assert ad == pytest.approx(50.0, rel=1e-12)
    assert aref == pytest.approx(0.5, rel=1e-12)     # V(out) at Vd = 0 is (REF1 + REF2) / 2


def test_no_part_data_is_unsupported_never_guessed():
    nb = inamp_ic(NetlistBuilder()).r("R1", "RGA", "RGB", "1k")
    rec = find_stages(nb.build())
    assert rec.stages == []
    (un,) = rec.unsupported
    assert un.ref == "U3" and un.kind == "integrated-inamp" and un.roles == {"RG": "R1"}
    assert un.pins["ref"] == "REF_IN" and un.location is not None
    rec = find_stages(balanced_receiver(NetlistBuilder()).build())
    assert [(u.ref, u.kind) for u in rec.unsupported] == [("U4", "integrated-diffamp")]


def test_rg_pin_left_open_is_a_near_miss():
    nb = inamp_ic(NetlistBuilder(), rg2=None).r("R1", "RGA", "NOWHERE", "1k")
    rec = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG}))
    assert any(m.ref == "U3" and "RG pin 8" in m.missing for m in rec.near_misses)
    assert rec.stages == []          # no gain can be stated for a half-connected RG


def test_supply_and_ref_pins_left_open_are_near_misses():
    nb = inamp_ic(NetlistBuilder(), vneg=None).r("R1", "RGA", "RGB", "1k")
    rec = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG}))
    assert [m.missing for m in rec.near_misses] == ["negative supply connection"]
    assert len(rec.stages) == 1                     # still analysable, headroom is not
    nb = inamp_ic(NetlistBuilder(), refnet=None).r("R1", "RGA", "RGB", "1k")
    rec = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG}))
    assert rec.stages == [] and [m.missing for m in rec.near_misses] == ["REF connection"]


def test_both_rg_pins_open_runs_at_unity_gain_and_is_reported():
    nb = inamp_ic(NetlistBuilder(), rg1=None, rg2=None)
    rec = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG}))
    (st,) = rec.stages
    assert "RG" not in st.roles
    # G = 1 + K/RG with RG infinite (docs/engineering.md sec. 3): the first stage follows its inputs
    assert ideal_gains(st)[0] == pytest.approx(1.0, rel=1e-9)
    assert [m.missing for m in rec.near_misses] == ["RG resistor"]


def test_op_amp_symbol_is_not_taken_for_an_integrated_amplifier():
    nb = NetlistBuilder().opamp("U1", {"": ("IN", "OUT", "OUT")}, package="single", pin_names=("+IN", "-IN", "OUT"))
    nb.pins_to("J1", "IN", "OUT")
    rec = find_stages(nb.build(), FakeParts({"U1": GENERIC_RG}))
    assert rec.stages == [] and rec.unsupported == [] and rec.near_misses == []


def test_feedback_pin_with_a_resistor_to_an_unrelated_net_is_a_near_miss():
    nb = NetlistBuilder().part("U1", "fb-inamp", "Project:FbInAmp", pins=[
        ("1", "RG", "passive", "FB"), ("2", "VIN-", "input", "IN_N"), ("3", "VIN+", "input", "IN_P"),
        ("4", "V-", "power_in", "GND"), ("5", "REF", "input", "VREF"), ("6", "VOUT", "output", "OUT"),
        ("7", "V+", "power_in", "+3V3")]).pins_to("J1", "IN_P", "IN_N", "OUT", "VREF", "ELSEWHERE")
    nb.r("R6", "FB", "VREF", "10k").r("R7", "FB", "OUT", "10k").r("R8", "FB", "ELSEWHERE", "1k")
    data = {"name": "test feedback-pin class", "arch": "feedback-pin", "g0": 5.0, "r_in": 1e9}
    rec = find_stages(nb.build(), FakeParts({"U1": data}))
    assert rec.stages == []
    assert [m.references for m in rec.near_misses] == [["R8", "U1"]]


def test_current_sense_amp_without_ref_pin_is_referred_to_ground():
    nb = NetlistBuilder().part("U6", "csa", "Amplifier_Current:Generic_CSA", pins=[
        ("1", "OUT", "output", "ISENSE"), ("2", "GND", "power_in", "GND"), ("3", "IN+", "input", "HI"),
        ("4", "IN-", "input", "LO"), ("5", "VS", "power_in", "+5V")])
    nb.r("R1", "HI", "LO", "10m").pins_to("J1", "HI", "LO", "ISENSE")
    rec = find_stages(nb.build())
    assert [(u.ref, u.kind) for u in rec.unsupported] == [("U6", "integrated-diffamp")]
    assert rec.near_misses == []
    data = {"name": "test current-sense class", "gain": 20.0, "r_in": 10e3}
    (st,) = find_stages(nb.build(), FakeParts(diffamps={"U6": data})).stages
    assert st.circuit.ports["ref"] == "GND" and any("no REF pin" in n for n in st.notes)
    assert ideal_gains(st)[0] == pytest.approx(20.0, rel=1e-12)
