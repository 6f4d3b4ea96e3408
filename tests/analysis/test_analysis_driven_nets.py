"""A net an IC output drives that no part data models (a DAC, a voltage reference) is driven,
impedance unknown: never 'floating', never a guessed 0 ohm (issue-style invented boards)."""

from __future__ import annotations

from frontcheck.analysis import dc_paths
from frontcheck.checks import run_rules
from frontcheck.analysis import analyse
from test_analysis_dc_paths import RAILS, Board, diff_stage
from rule_fixtures import context, only


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


def _trimmed_divider(b: Board, top: str, mid: str, wiper_to: str | None = None) -> Board:
    """+5V - R7 10k - RV1 10k (wiper on end 3, or elsewhere) - mid - R8 10k - GND."""
    b.r("R7", "+5V", top)
    b.part("RV1", "Device:R_Potentiometer_Trim", "10k", {
        "1": ("1", "passive", top), "2": ("2", "passive", wiper_to or mid),
        "3": ("3", "passive", mid)})
    return b.r("R8", mid, "GND")


def test_a_trimmer_in_the_upper_leg_counts_over_its_travel():
    b = Board()
    b.r("R1", "IN_N", "N").r("R2", "N", "OUT").r("R3", "IN_P", "P").r("R4", "P", "VREF")
    b.opamp("U1", "P", "N", "OUT").conn("J1", ["IN_P", "IN_N"])
    _trimmed_divider(b, "TOP", "VREF")
    th = dc_paths.thevenin(b.netlist(), "VREF", RAILS, exclude={"R4"})
    # upper leg 10k + (0..10k) against 10k: 10k||10k = 5 kohm to 20k||10k = 6.67 kohm
    # (series and parallel resistance, common practice); before, the trimmer was left out
    # and the upper leg with it (10 kohm to ground alone)
    assert th.kind == "resistive" and th.ohms is None
    assert "RV1" in th.driver and "5.00 kΩ to 6.67 kΩ" in th.driver
    assert {"R7", "R8"} <= set(th.parts)
    ref = dc_paths.ref_source(b.netlist(), diff_stage(), RAILS)
    assert ref.kind == "resistive" and ref.thevenin_ohms is None and "RV1" in ref.driver


def test_a_trimmer_used_as_divider_gives_the_range_over_the_wiper():
    b = Board()
    # +5V - R7 - TOP - RV1 end 1; wiper 2 on W (the node asked about); end 3 - R8 - GND
    b.r("R7", "+5V", "TOP")
    b.part("RV1", "Device:R_Potentiometer", "10k", {
        "1": ("1", "passive", "TOP"), "2": ("2", "passive", "W"), "3": ("3", "passive", "BOT")})
    b.r("R8", "BOT", "GND").conn("J1", ["W", "GND"])
    th = dc_paths.thevenin(b.netlist(), "W", RAILS)
    # (10k + x 10k) || (10k + (1 - x) 10k): 6.67 kohm at either end, 7.5 kohm at mid-travel
    assert "6.67 kΩ to 7.50 kΩ" in th.driver
