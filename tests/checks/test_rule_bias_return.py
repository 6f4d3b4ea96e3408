"""bias-return: inputs without a DC path."""

from __future__ import annotations

from dataclasses import replace

from frontcheck.analysis.result import BiasPath
from frontcheck.checks import run_rules
from frontcheck.circuit import Sourced
from rule_fixtures import IDEAL, context, diff_stage, only, result


def run(st, bias, profile=None):
    return only(run_rules(context([st], [result(st, bias=bias)], profile=profile)), "bias-return")


def test_all_paths_ok():
    st = diff_stage()
    assert run(st, [BiasPath("U1A +in", "p", "ok", "GND via R4")]) == []


def test_no_path_is_an_error_and_connector_a_warning():
    st = diff_stage()
    fs = run(st, [BiasPath("U1A +in", "IN_P", "none"), BiasPath("U1A -in", "IN_N", "connector", "J2 pin 1")])
    assert [f.severity for f in fs] == ["error", "warning"]
    assert "no DC path" in fs[0].message and "IN_P" in fs[0].message
    assert "J2 pin 1" in fs[1].message and "waive" in fs[1].fix


def test_bias_current_sizes_the_suggested_resistor():
    # 1 mV / 10 nA = 100 kOhm (Ohm's law)
    model = replace(IDEAL, ib=Sourced(10e-9, "class"))
    st = diff_stage(model=model)
    (f,) = run(st, [BiasPath("U1A +in", "IN_P", "none")])
    assert "100 kΩ drops 1 mV" in f.fix


def test_connector_severity_can_be_switched_off():
    st = diff_stage()
    ctx = context([st], [result(st, bias=[BiasPath("U1A +in", "IN_P", "connector")])],
                  rules={"bias-return": {"connector_severity": "off"}})
    assert only(run_rules(ctx), "bias-return") == []


def _unsupported_bias(nl):
    from frontcheck.analysis.dc_view import DCView
    from frontcheck.analysis.structure import unsupported_paths
    from frontcheck.config import rail_from_name
    from frontcheck.recognise import find_stages
    rec = find_stages(nl, None, rail_from_name)
    rails = {n: rail_from_name(n) for n in ("+5V", "-5V", "GND")}
    unsupported_paths(DCView(nl, rails), rec.unsupported)
    return rec.unsupported, only(run_rules(context([], unsupported=rec.unsupported, netlist=nl)),
                                 "bias-return")


def _line_receiver(ref_net="GND"):
    from netlist_builder import NetlistBuilder
    # An integrated unity-gain difference amplifier without part data, its inputs only on a
    # connector (a balanced line input): each input feeds the part's own resistors, +IN
    # towards REF and -IN towards the output (Sedra & Smith, Microelectronic Circuits, 6th
    # ed., sec. 2.4), so the bias current returns through the part.
    return NetlistBuilder().part("U4", "RX-1", "Project:LineReceiver", pins=[
        ("1", "Ref", "input", ref_net), ("2", "IN-", "input", "AUD_N"),
        ("3", "IN+", "input", "AUD_P"), ("4", "Vee", "power_in", "-5V"),
        ("5", "SNS", "input", "AUDIO"), ("6", "Vout", "output", "AUDIO"),
        ("7", "Vcc", "power_in", "+5V")]).pins_to("J3", "AUD_P", "AUD_N")


def test_difference_amplifier_inputs_return_through_its_own_resistors():
    (un,), fs = _unsupported_bias(_line_receiver().build())
    assert un.kind == "integrated-diffamp" and fs == []
    by = {b["pin"]: b for b in un.schematic["bias"]}
    assert by["U4 +IN"]["status"] == "ok" and "REF (net GND)" in by["U4 +IN"]["reaches"]
    assert by["U4 -IN"]["status"] == "ok" and "output" in by["U4 -IN"]["reaches"]


def test_difference_amplifier_with_ref_on_a_capacitor_still_reports_its_plus_input():
    # REF held by a capacitor alone: +IN's path through the part ends there, so the connector
    # warning stands for +IN; -IN still returns through the output.
    nb = _line_receiver(ref_net="REFC")
    nb.c("C1", "REFC", "GND", "100n")
    (un,), fs = _unsupported_bias(nb.build())
    assert [(f.severity, f.data["pin"]) for f in fs] == [("warning", "U4 +IN")]
    assert "J3 pin 1" in fs[0].message


def test_integrated_front_end_inputs_are_an_in_amps():
    # An integrated front end (in-amp, right-leg drive, lead-off outputs) without part data:
    # its electrode inputs reach only the connector, and no internal resistor returns them.
    from netlist_builder import NetlistBuilder
    nl = NetlistBuilder().part("U5", "AFE-1", "Project:BioFrontEnd", pins=[
        ("1", "IN+", "input", "EL_P"), ("2", "IN-", "input", "EL_N"),
        ("3", "REFIN", "input", "GND"), ("4", "OUT", "output", "ECG"),
        ("5", "RLD_OUT", "output", "RL"), ("6", "LOD+", "output", "LOP"),
        ("7", "+VS", "power_in", "+5V"), ("8", "GND", "power_in", "GND")]).pins_to(
        "J4", "EL_P", "EL_N", "RL").r("R1", "ECG", "GND", "10k").build()
    (un,), fs = _unsupported_bias(nl)
    assert un.kind == "integrated-inamp"
    assert sorted(f.data["pin"] for f in fs) == ["U5 +IN", "U5 -IN"]
    assert all(f.severity == "warning" and "J4" in f.message for f in fs)
