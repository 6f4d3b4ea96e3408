"""Recognition of discrete difference amplifiers, their variants, near misses and the circuits
that must stay silent. Role names as docs/engineering.md sec. 1: R1 (in_n -> n), R2 (n -> out),
R3 (in_p -> p), R4 (p -> ref)."""

from __future__ import annotations

import math

import pytest

from frontcheck.circuit import Sourced
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, diff_amp, ideal_gains


def ad_acm(r1, r2, r3, r4):
    """Ideal-op-amp gains of the four-resistor difference amplifier.
    Source: docs/engineering.md sec. 1 (Sedra & Smith, Microelectronic Circuits 6th ed., Eq. 2.19
    context): Ad = [R2(R3+R4) + R4(R1+R2)] / [2 R1 (R3+R4)], Acm = (R1 R4 - R2 R3) / [R1 (R3+R4)]."""
    return ((r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4)),
            (r1 * r4 - r2 * r3) / (r1 * (r3 + r4)))


def only_stage(nl, **kw):
    rec = find_stages(nl, **kw)
    assert len(rec.stages) == 1, [s.id for s in rec.stages]
    return rec.stages[0], rec


def test_basic_difference_amp_roles_ports_and_gain():
    nl = diff_amp(vals=("10k", "100k", "10k", "100k")).build()
    st, rec = only_stage(nl)
    assert st.kind == "difference" and st.id == "U1"
    assert st.roles == {"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"}
    assert st.circuit.ports == {"in_p": "IN_P", "in_n": "IN_N", "ref": "GND", "out": "OUT"}
    assert st.references == ["R1", "R2", "R3", "R4", "U1"]
    assert not rec.near_misses and not rec.unsupported
    ad, acm, aref = ideal_gains(st)
    want_ad, want_acm = ad_acm(10e3, 100e3, 10e3, 100e3)
    assert ad == pytest.approx(want_ad, rel=1e-9) and ad == pytest.approx(10.0)
    assert abs(acm) < 1e-9
    assert aref == pytest.approx(1.0)


def test_unequal_ratios_keep_their_roles():
    # R4/R3 != R2/R1: the gains follow the formula with the resistors in the drawn places.
    nl = diff_amp(vals=("10k", "20k", "12k", "22k")).build()
    st, _ = only_stage(nl)
    assert st.roles == {"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"}
    ad, acm, _ = ideal_gains(st)
    want_ad, want_acm = ad_acm(10e3, 20e3, 12e3, 22e3)
    assert ad == pytest.approx(want_ad, rel=1e-9)
    assert acm == pytest.approx(want_acm, rel=1e-9)


def test_values_and_tolerances_come_from_the_fields():
    nb = diff_amp(vals=("4k99", "49k9 0.1%", "4k99", "49k9"))
    nb.comps["R4"].fields["Tolerance"] = "0.1%"
    st, _ = only_stage(nb.build(), default_tol=0.01)
    by = {r.name: r for r in st.circuit.resistors}
    assert by["R1"].ohms.value == pytest.approx(4990.0)
    assert by["R1"].tol == Sourced(0.01, "default", by["R1"].tol.detail)
    assert by["R2"].tol.value == pytest.approx(0.001) and by["R2"].tol.source == "value"
    assert by["R4"].tol.value == pytest.approx(0.001) and by["R4"].tol.source == "field"


def test_reference_on_a_mid_supply_buffer_output():
    nb = diff_amp(ref="VMID", vals=("10k", "47k", "10k", "47k"))
    # U2: follower of a divider from +5V, its output is the reference net.
    nb.r("R10", "+5V", "DIV", "100k").r("R11", "DIV", "GND", "100k")
    nb.opamp("U2", {"": ("DIV", "VMID", "VMID")}, package="single")
    st, rec = only_stage(nb.build())
    assert st.id == "U1" and st.circuit.ports["ref"] == "VMID"
    assert st.roles["R4"] == "R4" and st.roles["R3"] == "R3"


def test_reference_chosen_by_net_when_all_resistors_are_equal():
    # Unity gain: ratios cannot tell R3 from R4; the supply-side net is the reference.
    nb = NetlistBuilder().r("R1", "SIG_B", "n", "10k").r("R2", "n", "OUT").r("R3", "GND", "p").r("R4", "p", "SIG_A")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single")
    st, _ = only_stage(nb.build())
    assert st.circuit.ports["ref"] == "GND" and st.circuit.ports["in_p"] == "SIG_A"
    assert st.roles["R3"] == "R4" and st.roles["R4"] == "R3"


def test_reference_from_r4_split_between_supplies():
    # Single 5 V supply: R4 = R4a (to +5V) || R4b (to GND) sets the output's zero at mid-supply.
    nb = NetlistBuilder().r("R1", "IN_N", "n", "10k").r("R2", "n", "OUT", "100k").r("R3", "IN_P", "p", "10k")
    nb.r("R4a", "p", "+5V", "200k").r("R4b", "p", "GND", "200k")
    nb.pins_to("J1", "IN_P", "IN_N")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single")
    st, _ = only_stage(nb.build(), rails={"+5V": Sourced(5.0, "value")})
    assert st.roles["R4"] == "R4a||R4b" and st.circuit.ports["ref"] == "+5V"
    assert st.circuit.rails["GND"].value == 0.0
    ad, acm, aref = ideal_gains(st)
    # Thevenin (docs/engineering.md sec. 5): R4 = 200k || 200k = 100k from a source of
    # V(+5V) * R4b/(R4a+R4b), so the ratios match (sec. 1: G = 10) and
    # dVout/dV(+5V) = Gref * R4b/(R4a+R4b), Gref = R3(R1+R2) / [R1(R3+R4)] (sec. 1).
    assert ad == pytest.approx(ad_acm(10e3, 100e3, 10e3, 100e3)[0], rel=1e-9)
    assert abs(acm) < 1e-9
    gref = 10e3 * (10e3 + 100e3) / (10e3 * (10e3 + 100e3))
    assert aref == pytest.approx(gref * 200e3 / (200e3 + 200e3), rel=1e-9)


def test_series_input_resistors_and_rc_filter_stay_outside():
    nb = diff_amp(inp="F_P", inn="F_N", vals=("10k", "100k", "10k", "100k"))
    nb.r("R20", "CONN_P", "F_P", "1k").r("R21", "CONN_N", "F_N", "1k")
    nb.c("C20", "F_P", "GND", "1n").c("C21", "F_N", "GND", "1n").c("C22", "F_P", "F_N", "10n")
    nb.c("C2", "U1_n", "OUT", "100p")       # across R2
    st, _ = only_stage(nb.build())
    assert st.circuit.ports["in_p"] == "F_P" and st.circuit.ports["in_n"] == "F_N"
    assert "R20" not in st.references and "R21" not in st.references
    assert [c.name for c in st.circuit.capacitors] == ["C2"]
    ad, _, _ = ideal_gains(st)
    assert ad == pytest.approx(10.0)


def test_series_and_parallel_resistors_in_a_role():
    nb = NetlistBuilder()
    # R1 as 4k99 + 5k1 through a joint nothing else touches; R2 as two 200k in parallel.
    nb.r("R1a", "IN_N", "j", "4k99").r("R1b", "j", "n", "5k1")
    nb.r("R2a", "n", "OUT", "200k").r("R2b", "n", "OUT", "200k")
    nb.r("R3", "IN_P", "p", "10k09").r("R4", "p", "GND", "100k")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single")
    st, _ = only_stage(nb.build())
    assert st.roles["R1"] == "R1a+R1b"
    assert st.roles["R2"] == "R2a||R2b"
    ad, acm, _ = ideal_gains(st)
    want = ad_acm(4990 + 5100, 100e3, 10090, 100e3)
    assert ad == pytest.approx(want[0], rel=1e-9) and acm == pytest.approx(want[1], abs=1e-12)


def test_dnp_parts_are_not_in_the_circuit():
    nb = diff_amp(vals=("10k", "100k", "10k", "100k"))
    nb.r("R9", "U1_n", "OUT", "1k", dnp=True)    # an unfitted alternative feedback resistor
    st, _ = only_stage(nb.build())
    assert "R9" not in st.references and st.roles["R2"] == "R2"
    assert ideal_gains(st)[0] == pytest.approx(10.0)


@pytest.mark.parametrize("unit_numbers", [False, True])
def test_multi_unit_quad_with_power_unit(unit_numbers):
    nb = NetlistBuilder()
    nb.r("R1", "IN_N", "nb", "10k").r("R2", "nb", "OUT_B", "10k").r("R3", "IN_P", "pb").r("R4", "pb", "GND")
    nb.r("R5", "X", "nc").r("R6", "nc", "OUT_C", "47k")   # unit C: an inverting amp, not a stage
    nb.opamp("U1", {"B": ("pb", "nb", "OUT_B"), "C": ("GND", "nc", "OUT_C")},
             vpos="+12V", vneg="-12V", unit_numbers=unit_numbers)
    rails = {"+12V": Sourced(12.0, "value"), "-12V": Sourced(-12.0, "value")}
    st, rec = only_stage(nb.build(), rails=rails)
    assert st.id == "U1B" and st.amplifiers == ["U1B"]
    op = st.circuit.opamps[0]
    assert (op.inp, op.inn, op.out, op.vpos, op.vneg) == ("pb", "nb", "OUT_B", "+12V", "-12V")
    assert st.circuit.rails["+12V"].value == 12.0 and st.circuit.rails["-12V"].value == -12.0
    assert not rec.near_misses


def test_resistor_network_elements_take_roles():
    nb = NetlistBuilder()
    nb.rpack("RN1", [("IN_N", "n"), ("n", "OUT"), ("IN_P", "p"), ("p", "REF")], "10k",
             Matching="0.05%")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single")
    st, _ = only_stage(nb.build())
    assert st.roles == {"R1": "RN1.1", "R2": "RN1.2", "R3": "RN1.3", "R4": "RN1.4"}
    assert {r.match_group for r in st.circuit.resistors} == {"RN1"}
    assert st.circuit.resistors[0].match_tol.value == pytest.approx(0.0005)


def test_low_side_shunt_sense_with_input_on_ground_is_a_stage():
    # The current-sense case: the inverting-side input is the ground end of a 10 mohm shunt.
    nb = diff_amp(inp="SH_HI", inn="GND", vals=("1k", "50k", "1k", "50k"), ref="VREF")
    nb.r("R30", "SH_HI", "GND", "10m")
    nb.part("J1", "Load", "Connector:Conn_01x02", pins=[("1", "Pin_1", "passive", "SH_HI"),
                                                         ("2", "Pin_2", "passive", "+12V")])
    st, _ = only_stage(nb.build())
    assert st.circuit.ports["in_n"] == "GND" and st.circuit.ports["in_p"] == "SH_HI"


def test_shunt_across_reference_as_in_a_curve_tracer():
    # Inverting-side input and reference on the same net, shunt between the inputs
    # (the wiring docs/test-corpus.md sec. 2 describes for USB_Curve_Tracer rev2 U2D).
    nb = NetlistBuilder().r("R13", "HI", "MID", "0.1").r("R8", "HI", "p", "1k").r("R10", "p", "MID", "250k")
    nb.r("R18", "MID", "n", "1k").r("R19", "n", "OUT", "250k")
    nb.part("F2", "1A", "Device:Fuse", pins=[("1", "", "passive", "DUT"), ("2", "", "passive", "HI")])
    nb.opamp("U2", {"D": ("p", "n", "OUT")})
    st, _ = only_stage(nb.build())
    assert st.id == "U2D"
    assert st.roles == {"R1": "R18", "R2": "R19", "R3": "R8", "R4": "R10"}
    assert st.circuit.ports["in_n"] == st.circuit.ports["ref"] == "MID"


# ---- near misses ----------------------------------------------------------------------------


def test_zero_ohm_feedback_is_a_near_miss():
    nl = diff_amp(vals=("10k", "0R", "10k", "10k")).build()
    rec = find_stages(nl)
    assert rec.stages == []
    (nm,) = rec.near_misses
    assert nm.kind == "difference" and nm.ref == "U1" and "R2" in nm.missing
    assert nm.location is not None and nm.location.file == "test.kicad_sch"


def test_missing_feedback_is_a_near_miss():
    nb = NetlistBuilder().r("R1", "IN_N", "n").r("R3", "IN_P", "p").r("R4", "p", "GND")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single")
    rec = find_stages(nb.build())
    assert rec.stages == []
    (nm,) = rec.near_misses
    assert nm.missing == "feedback resistor from the output to the inverting input" and nm.references == ["R1", "R3", "R4", "U1"]


def test_feedback_resistor_marked_dnp_is_named_in_the_near_miss():
    nb = NetlistBuilder().r("R1", "IN_N", "n").r("R2", "n", "OUT", dnp=True).r("R3", "IN_P", "p").r("R4", "p", "GND")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single")
    rec = find_stages(nb.build())
    (nm,) = rec.near_misses
    assert rec.stages == [] and "R2" in nm.message and "DNP" in nm.message


def test_missing_reference_resistor_is_a_near_miss():
    nb = NetlistBuilder().r("R1", "IN_N", "n").r("R2", "n", "OUT").r("R3", "IN_P", "p")
    nb.pins_to("J1", "IN_P", "IN_N")
    nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single")
    rec = find_stages(nb.build())
    assert rec.stages == []
    (nm,) = rec.near_misses
    assert nm.missing == "resistor from the + input to the reference" and nm.references == ["R1", "R2", "R3", "U1"]


def test_bias_compensation_and_series_input_resistors_are_silent():
    nb = NetlistBuilder()
    # inverting amp, + input to a buffered mid-supply through a bias-compensation resistor
    nb.r("R1", "IN", "n1").r("R2", "n1", "OUT1", "100k").r("R3", "p1", "VMID", "9k1")
    # non-inverting amp referred to VMID with a series resistor in front of its + input
    nb.r("R4", "n2", "VMID").r("R5", "n2", "OUT2", "100k").r("R6", "IN2", "p2", "1k")
    nb.r("R8", "+5V", "div", "100k").r("R9", "div", "GND", "100k")
    nb.opamp("U1", {"A": ("p1", "n1", "OUT1"), "B": ("p2", "n2", "OUT2")}, package="dual")
    nb.opamp("U2", {"": ("div", "VMID", "VMID")}, package="single")
    silent(nb.build())


# ---- circuits that must stay silent ---------------------------------------------------------


def silent(nl):
    rec = find_stages(nl)
    assert rec.stages == [] and rec.near_misses == [] and rec.unsupported == []


def test_inverting_amplifier_is_silent():
    nb = NetlistBuilder().r("R1", "IN", "n").r("R2", "n", "OUT", "100k").r("R3", "p", "GND", "9k1")
    silent(nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single").build())


def test_inverting_amplifier_with_bias_divider_from_supply_is_silent():
    # Four resistors like a difference amp, but the + side divides a supply: single-ended.
    nb = NetlistBuilder().r("R1", "IN", "n").r("R2", "n", "OUT", "100k").r("R3", "+5V", "p").r("R4", "p", "GND")
    silent(nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single").build())


def test_noninverting_amplifier_with_input_attenuator_is_silent():
    nb = NetlistBuilder().r("R1", "GND", "n").r("R2", "n", "OUT", "100k").r("R3", "IN", "p").r("R4", "p", "GND")
    nb.r("R5", "IN", "GND", "1M")      # input termination: not a shunt
    silent(nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single").build())


def test_noninverting_amplifier_and_buffer_are_silent():
    nb = NetlistBuilder().r("R1", "GND", "n").r("R2", "n", "OUT", "100k")
    nb.opamp("U1", {"A": ("IN", "n", "OUT"), "B": ("IN2", "OUT2", "OUT2")}, package="dual")
    silent(nb.build())


def test_sallen_key_lowpass_stages_are_silent():
    nb = NetlistBuilder()
    # unity-gain Sallen-Key
    nb.r("R1", "IN", "x").r("R2", "x", "p").c("C1", "x", "OUT").c("C2", "p", "GND")
    # gain-2 Sallen-Key (10k/10k), as on the balanced receiver's output sheet
    nb.r("R3", "IN2", "x2").r("R4", "x2", "p2").c("C3", "x2", "OUT2").c("C4", "p2", "GND")
    nb.r("R5", "n2", "GND").r("R6", "n2", "OUT2")
    nb.opamp("U1", {"A": ("p", "OUT", "OUT"), "B": ("p2", "n2", "OUT2")}, package="dual")
    silent(nb.build())


def test_comparator_with_hysteresis_is_silent():
    nb = NetlistBuilder().r("R1", "IN", "p", "10k").r("R2", "p", "OUT", "1M").r("R3", "+5V", "TH").r("R4", "TH", "GND")
    nb.r("R5", "TH", "n", "1k")
    silent(nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single").build())


def test_comparator_without_hysteresis_on_a_reference_divider_is_silent():
    nb = NetlistBuilder().r("R1", "SENSOR", "n", "10k").r("R3", "VREF", "p", "10k").r("R4", "p", "GND", "10k")
    nb.pins_to("J1", "SENSOR", "VREF")
    silent(nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single").build())


def test_differential_integrator_is_silent():
    nb = NetlistBuilder().r("R1", "IN_N", "n").c("C1", "n", "OUT").r("R3", "IN_P", "p").c("C2", "p", "GND")
    nb.r("R4", "p", "GND", "10M")
    silent(nb.opamp("U1", {"": ("p", "n", "OUT")}, package="single").build())


def test_same_input_on_both_sides_is_silent():
    nb = diff_amp(inp="SIG", inn="SIG")
    silent(nb.build())


def test_unreadable_value_is_noted_not_guessed():
    nl = diff_amp(vals=("10k", "RG", "10k", "10k")).build()
    st, _ = only_stage(nl)
    r2 = next(r for r in st.circuit.resistors if r.name == "R2")
    assert math.isnan(r2.ohms.value)
    assert any("R2" in n and "RG" in n for n in st.notes)


def test_dual_op_amp_with_channel_numbers_in_pin_names():
    # A project-library dual op-amp whose pins are named '1IN+', '1IN-', '1OUT', '2IN+', ...
    # and numbered in an order unlike the standard pinout: the names decide the channels.
    nb = NetlistBuilder().part("U5", "dual", "Project:DualAmp", pins=[
        ("1", "2OUT", "output", "OTHER_OUT"), ("2", "2IN-", "input", "OTHER_OUT"),
        ("3", "2IN+", "input", "BUF_IN"), ("4", "GND", "power_in", "GND"),
        ("5", "1IN+", "input", "p"), ("6", "1IN-", "input", "n"), ("7", "1OUT", "output", "OUT"),
        ("8", "VCC", "power_in", "+5V")])
    nb.r("R1", "IN_N", "n").r("R2", "n", "OUT", "100k").r("R3", "IN_P", "p").r("R4", "p", "GND", "100k")
    nb.pins_to("J1", "IN_P", "IN_N", "BUF_IN")
    st, _ = only_stage(nb.build())
    assert st.id == "U5A" and st.circuit.opamps[0].out == "OUT"
    assert ideal_gains(st)[0] == pytest.approx(10.0)
