"""bias-return: inputs without a DC path."""

from __future__ import annotations

from dataclasses import replace

from frontcheck.analysis.result import BiasPath
from frontcheck.checks import run_rules
from frontcheck.circuit import Sourced
from test_rule_fixtures import IDEAL, context, diff_stage, only, result


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
