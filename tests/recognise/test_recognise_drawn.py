"""Real designs as they are drawn (invented circuits): what the wiring says wins over the
symbol, a Value that names another part than the symbol is noted, an in-amp input stage with a
differential output is accounted for and never "fixed" into a difference amplifier, and an
integrated in-amp without part data says what its gain resistor would give."""

from __future__ import annotations

from frontcheck.checks import run_rules
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder
from rule_fixtures import context, only


def _csa_drawn_opamp(nb: NetlistBuilder, ref="U1", feedback=True):
    nb.part(ref, "AMP-1", "Amplifier_Current:CSA-20", pins=[
        ("1", "OUT", "output", "OUT"), ("2", "GND", "power_in", "GND"), ("3", "IN+", "input", "SIG"),
        ("4", "IN-", "input", "FB"), ("5", "VS", "power_in", "+5V"), ("6", "REF", "input", "GND")])
    if feedback:
        nb.r("R1", "OUT", "FB", "10k").r("R2", "FB", "GND", "10k")
    return nb.pins_to("J1", "SIG", "OUT", "FB")


def test_op_amp_drawn_with_a_current_sense_symbol_is_an_op_amp():
    rec = find_stages(_csa_drawn_opamp(NetlistBuilder()).build())
    assert rec.unsupported == []
    (use,) = rec.amplifiers
    # non-inverting gain 1 + R1/R2 = 2 (common practice)
    assert (use.name, use.kind, use.reason) == ("U1", "op-amp", "non-inverting amplifier, gain 2")
    assert [r for r, _ in rec.design_notes] == ["U1"]
    assert "taken as an op-amp" in rec.design_notes[0][1]


def test_without_the_feedback_resistor_the_symbol_decides():
    rec = find_stages(_csa_drawn_opamp(NetlistBuilder(), feedback=False).build())
    assert [(u.ref, u.kind) for u in rec.unsupported] == [("U1", "integrated-diffamp")]


def test_value_naming_another_variant_than_the_symbol_is_a_design_note():
    nb = NetlistBuilder().part("U3", "CS181A3", "Amplifier_Current:CS181A1", pins=[
        ("1", "OUT", "output", "OUT"), ("2", "GND", "power_in", "GND"), ("3", "IN+", "input", "HI"),
        ("4", "IN-", "input", "LO"), ("5", "VS", "power_in", "+5V"), ("6", "REF", "input", "GND")])
    nb.r("R9", "HI", "LO", "10m").pins_to("J1", "HI", "LO", "OUT")
    rec = find_stages(nb.build())
    (note,) = rec.design_notes
    assert note[0] == "U3" and "'CS181A3'" in note[1] and "CS181A1" in note[1]
    ctx = context([], design_notes=rec.design_notes, netlist=nb.build())
    (f,) = only(run_rules(ctx), "design-note")
    assert f.severity == "info" and f.references == ["U3"]
    # a package or grade suffix on either side is the same part
    nb2 = NetlistBuilder().part("U4", "AMP-20ABC", "Amplifier_Current:AMP-20xx", pins=[
        ("1", "OUT", "output", "O"), ("3", "IN+", "input", "A"), ("4", "IN-", "input", "B"),
        ("6", "REF", "input", "GND")]).pins_to("J1", "A", "B", "O")
    assert find_stages(nb2.build()).design_notes == []


def _input_pair(rg_value="1k"):
    nb = NetlistBuilder().opamp("U1", {"A": ("IN_P", "m1", "OP"), "B": ("IN_N", "m2", "ON")}, package="dual")
    nb.r("R3", "OP", "m1", "10k").r("R4", "ON", "m2", "10k").r("R5", "m1", "m2", rg_value)
    nb.r("R6", "IN_P", "GND", "1M").r("R7", "IN_N", "GND", "1M")     # bias returns
    nb.part("U2", "FDA-1", "lab:FDA-1", pins=[
        ("1", "IN+", "input", "OP"), ("2", "IN-", "input", "ON"), ("3", "OUT+", "output", "ADC_P"),
        ("4", "OUT-", "output", "ADC_N")])
    return nb.pins_to("J1", "IN_P", "IN_N", "ADC_P", "ADC_N")


def test_differential_output_input_stage_is_accounted_for_not_fixed():
    rec = find_stages(_input_pair().build())
    assert rec.near_misses == []
    (stage,) = rec.stages            # analysed as a stage of its own (test_diff_output_stage)
    assert stage.kind == "diff-output"
    uses = {a.name: a.stage for a in rec.amplifiers}
    assert uses["U1A"] == uses["U1B"] == "U1A+U1B"


def test_unset_gain_resistor_is_a_near_miss_naming_it():
    rec = find_stages(_input_pair(rg_value="R").build())
    (nm,) = rec.near_misses
    assert nm.ref == "R5" and "R5" in nm.message and "no value" in nm.message


def test_inamp_without_part_data_says_what_its_gain_resistor_gives():
    nb = NetlistBuilder().part("U3", "INAMP-X", "vendor:INAMP-X", pins=[
        ("1", "RG_1", "passive", "rg1"), ("2", "V-IN", "input", "IN_N"),
        ("3", "V+IN", "input", "IN_P"), ("4", "V-", "power_in", "-5V"),
        ("5", "REF", "input", "GND"), ("6", "VO", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG_2", "passive", "rg2")])
    nb.r("R5", "rg1", "rg2", "1k").pins_to("J1", "IN_P", "IN_N", "OUT")
    (un,) = find_stages(nb.build()).unsupported
    # G = 1 + K/RG over K = 9.9k..100k with RG = 1k: 10.9 .. 101
    assert "RG = R5 = 1.00 kΩ" in un.message and "10.9 to 101 (not checked)" in un.message
    assert un.schematic["gain_range_not_checked"] == [10.9, 101.0]
    (f,) = only(run_rules(context([], unsupported=[un])), "stage-incomplete")
    assert f.severity == "info" and f.data["schematic"]["rg_ohms"] == 1000.0


def test_ref_fed_through_a_resistor_is_a_warning_without_part_data():
    from frontcheck.config import rail_from_name
    from frontcheck.pipeline import _unsupported_ref_sources
    nb = NetlistBuilder().part("U3", "INAMP-X", "vendor:INAMP-X", fields={"Min CMRR": "80 dB"}, pins=[
        ("1", "RG_1", "passive", "rg1"), ("2", "V-IN", "input", "IN_N"),
        ("3", "V+IN", "input", "IN_P"), ("4", "V-", "power_in", "-5V"),
        ("5", "REF", "input", "REFN"), ("6", "VO", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG_2", "passive", "rg2")])
    nb.r("R5", "rg1", "rg2", "1k").r("R7", "REFN", "MID", "1M")
    nb.r("R8", "+5V", "MID", "10k").r("R9", "MID", "GND", "10k")
    nb.pins_to("J1", "IN_P", "IN_N", "OUT")
    nl = nb.build()
    rec = find_stages(nl, None, rail_from_name)
    rails = {n: rail_from_name(n) for n in ("+5V", "-5V", "GND")}
    _unsupported_ref_sources(rec.unsupported, nl, rails, None)
    (f,) = only(run_rules(context([], unsupported=rec.unsupported, netlist=nl)), "ref-impedance")
    # Rth = 1 M + 10k || 10k = 1.005 MOhm; CMRR_ref = 2 R_ref / Rth (unity output stage,
    # docs/engineering.md sec. 5) over R_ref = 10k .. 60k: -34.02 .. -18.46 dB
    assert f.severity == "warning" and f.data["part_data"] is False
    assert abs(f.data["thevenin_ohms"] - 1.005e6) < 1.0
    lo, hi = f.data["ref_cmrr_db_range"]
    assert abs(lo - (-34.02)) < 0.01 and abs(hi - (-18.46)) < 0.01
    # Min CMRR 80 dB: Rth below 2 x 10k / 10^(80/20) = 2 ohm
    assert abs(f.data["max_ohms"] - 2.0) < 1e-9 and "below 2" in f.fix
    assert {"U3", "R7"} <= set(f.references)
    # REF brought in on a connector: its source is off the board, nothing to judge here
    nb.pins_to("J2", "REFN")
    rec = find_stages(nb.build(), None, rail_from_name)
    _unsupported_ref_sources(rec.unsupported, nb.build(), rails, None)
    assert only(run_rules(context([], unsupported=rec.unsupported)), "ref-impedance") == []


def test_ref_on_a_solid_net_is_not_reported_without_part_data():
    from frontcheck.config import rail_from_name
    from frontcheck.pipeline import _unsupported_ref_sources
    nb = NetlistBuilder().part("U3", "INAMP-X", "vendor:INAMP-X", pins=[
        ("1", "RG_1", "passive", "rg1"), ("2", "V-IN", "input", "IN_N"),
        ("3", "V+IN", "input", "IN_P"), ("5", "REF", "input", "GND"), ("6", "VO", "output", "OUT"),
        ("8", "RG_2", "passive", "rg2")])
    nb.r("R5", "rg1", "rg2", "1k").pins_to("J1", "IN_P", "IN_N", "OUT")
    nl = nb.build()
    rec = find_stages(nl, None, rail_from_name)
    _unsupported_ref_sources(rec.unsupported, nl, {"GND": rail_from_name("GND")}, None)
    assert only(run_rules(context([], unsupported=rec.unsupported, netlist=nl)), "ref-impedance") == []


def test_dual_current_sense_amplifier_with_channel_numbered_pins_is_two_amplifiers():
    nb = NetlistBuilder().part("U2", "DCS-1", "Amplifier_Current:DCS-1", pins=[
        ("1", "OUT1", "output", "ISENSE1"), ("2", "IN-1", "input", "LO1"),
        ("3", "IN+1", "input", "HI1"), ("4", "GND", "power_in", "GND"),
        ("5", "IN+2", "input", "HI2"), ("6", "IN-2", "input", "LO2"),
        ("7", "OUT2", "output", "ISENSE2"), ("8", "VS", "power_in", "+5V"),
        ("9", "REF1", "input", "GND"), ("10", "REF2", "input", "VMID")])
    nb.r("R1", "HI1", "LO1", "10m").r("R2", "HI2", "LO2", "10m")
    nb.pins_to("J1", "HI1", "LO1", "HI2", "LO2", "ISENSE1", "ISENSE2", "VMID")
    rec = find_stages(nb.build())
    assert [u.message.split(" ")[0] for u in rec.unsupported] == ["U2A", "U2B"]
    assert [u.pins["ref"] for u in rec.unsupported] == ["GND", "VMID"]
    assert [u.pins["in_p"] for u in rec.unsupported] == ["HI1", "HI2"]

    class Parts:
        def diffamp_model(self, c):
            return {"name": "test current-sense class", "gain": 20.0, "r_in": 10e3}
    rec = find_stages(nb.build(), Parts())
    assert [(s.id, s.circuit.ports["out"]) for s in rec.stages] == [("U2A", "ISENSE1"),
                                                                    ("U2B", "ISENSE2")]
    assert [(a.name, a.stage) for a in rec.amplifiers] == [("U2", "U2A, U2B")]


def _feedback_inamp(r1_to: str) -> NetlistBuilder:
    nb = NetlistBuilder().part("U6", "IA-FB2", "vendor:IA-FB2", pins=[
        ("1", "RG", "passive", "rgpin"), ("2", "-IN", "input", "IN_N"), ("3", "+IN", "input", "IN_P"),
        ("4", "V-", "power_in", "-5V"), ("5", "REF", "input", "GND"), ("6", "VOUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "FB", "input", "fb")])
    nb.r("R2", "OUT", "fb", "99k").r("R1", "fb", r1_to, "1k")
    if r1_to == "rgpin":
        nb.c("C9", "rgpin", "GND", "10n")       # keeps the RG pin's net from being open
    return nb.pins_to("J1", "IN_P", "IN_N", "OUT")


def test_two_resistor_feedback_network_is_not_taken_for_an_rg_pair():
    """A part with a feedback pin and an RG pin: R2 from OUT to FB, R1 from FB onwards. Before,
    FB and RG were read as an RG pair and the stage stopped at a near miss."""
    rec = find_stages(_feedback_inamp("GND").build())
    assert rec.near_misses == []
    (un,) = rec.unsupported
    assert un.roles == {"RF": "R2", "RG": "R1"}
    assert "RF/RG = 99" in un.message

    class Parts:
        def inamp_model(self, c):
            return {"name": "test feedback class", "arch": "feedback-pin", "g0": 1.0, "r_in": 20e3}
    (st,) = find_stages(_feedback_inamp("GND").build(), Parts()).stages
    assert st.kind == "integrated-inamp" and st.roles["RF"] == "R2" and st.roles["RG"] == "R1"


def test_feedback_network_returning_to_the_rg_pin_is_said_not_guessed():
    class Parts:
        def inamp_model(self, c):
            return {"name": "test feedback class", "arch": "feedback-pin", "g0": 1.0, "r_in": 20e3}
    rec = find_stages(_feedback_inamp("rgpin").build(), Parts())
    assert rec.stages == [] and rec.near_misses == []
    (un,) = rec.unsupported
    assert "returns to a pin whose place inside the part frontcheck does not model" in un.message
