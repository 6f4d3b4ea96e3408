"""A net an IC output drives that no part data models (a DAC, a voltage reference) is driven,
impedance unknown: never 'floating', never a guessed 0 ohm (issue-style invented boards)."""

from __future__ import annotations

from frontcheck.analysis import dc_paths
from frontcheck.checks import run_rules
from frontcheck.analysis import analyse
from test_analysis_dc_paths import RAILS, Board, diff_stage
from test_rule_fixtures import context, only


def _board(through: str | None = None) -> Board:
    b = Board()
    b.r("R1", "IN_N", "N").r("R2", "N", "OUT").r("R3", "IN_P", "P").r("R4", "P", "VREF")
    b.opamp("U1", "P", "N", "OUT").conn("J1", ["IN_P", "IN_N"])
    dac_out = "DAC_OUT" if through else "VREF"
    b.part("U5", "lab:DAC-1", "DAC-1", {"1": ("VOUT", "output", dac_out),
                                         "2": ("VDD", "power_in", "+5V"),
                                         "3": ("GND", "power_in", "GND")})
    if through:
        b.r("R9", "DAC_OUT", "VREF", through)
    return b


def test_ref_on_an_unmodelled_ic_output_is_driven_not_floating():
    nl = _board().netlist()
    st = diff_stage()
    ref = dc_paths.ref_source(nl, st, RAILS)
    assert ref.kind == "driven" and ref.thevenin_ohms is None and ref.voltage is None
    assert "U5 pin 1 (VOUT)" in ref.driver and "impedance unknown" in ref.driver
    r = analyse(st, nl, RAILS)
    ctx = context([st], [r], netlist=nl)
    assert only(run_rules(ctx), "ref-floating") == []
    assert only(run_rules(ctx), "ref-impedance") == []
    # and the figures take REF as ideal, never a guessed source resistance
    assert "REF source" not in r.cmrr.contributors


def test_ref_through_a_resistor_from_an_ic_output_states_a_lower_bound():
    nl = _board(through="1k").netlist()
    ref = dc_paths.ref_source(nl, diff_stage(), RAILS)
    # R9 alone is 1 kohm; the DAC's own output impedance adds to it, unknown (common practice)
    assert ref.kind == "driven" and ref.thevenin_ohms is None
    assert "R9 from U5 pin 1 (VOUT)" in ref.driver and "at least 1" in ref.driver


def test_bias_return_through_an_ic_output_is_a_return():
    b = _board()
    b.r("R10", "IN_P", "VREF", "1M").r("R11", "IN_N", "VREF", "1M")
    paths = dc_paths.bias_paths(b.netlist(), diff_stage(), RAILS)
    assert {p.status for p in paths} == {"ok"}
