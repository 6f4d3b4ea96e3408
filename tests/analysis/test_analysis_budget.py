"""analyse() end to end: StageResult contents, error budget, assumptions, refusals."""

from __future__ import annotations

import math

import pytest

from frontcheck.analysis import Options, analyse
from frontcheck.analysis.budget import error_budget
from frontcheck.circuit import Intent, Sourced
from frontcheck.errors import InputError
from spice import res
from test_analysis_dc_paths import RAILS, diff_board, diff_stage


def test_budget_terms_from_published_bounds():
    # G = 1, t = 0.1 %: worst Acm = 4t G/(1+G) = 0.002 (Sedra & Smith 6th ed., Problem 2.67),
    # at |Vcm| = 10 V and full scale 1 V that is 2 % of full scale; worst gain error 2t = 0.2 %
    # to first order (ratio errors of R2/R1 and R4/R3, each 2t, averaged by Ad) [derived].
    st = diff_stage("GND")
    for r in st.circuit.resistors:
        r.tol = Sourced(0.001)
    st.intent = Intent(input_cm=(-10.0, 10.0), input_diff=(-1.0, 1.0))
    r = analyse(st, diff_board("GND").netlist(), RAILS, Options(mc_samples=4000, seed=2))
    b = r.error_budget
    assert b["cmrr"]["worst"] == pytest.approx(2.0, rel=0.01)
    assert b["gain"]["worst"] == pytest.approx(0.2, rel=0.01)
    assert b["cmrr"]["rss"] < b["cmrr"]["worst"] and b["gain"]["rss"] < b["gain"]["worst"]
    assert b["total"]["worst"] == pytest.approx(b["gain"]["worst"] + b["cmrr"]["worst"])
    assert b["total"]["rss"] == pytest.approx(math.hypot(b["gain"]["rss"], b["cmrr"]["rss"]))
    assert "ref" not in b          # REF on ground: no REF term


def test_analyse_with_divider_ref():
    # REF from a 10 k / 10 k divider (Rth = 5 k): the gain includes it, the CMRR contributors name
    # it, and the budget has a REF term equal to its gain error plus its CM error.
    st = diff_stage()
    st.intent = Intent(input_cm=(0.0, 5.0), input_diff=(-0.1, 0.1), target_gain=1.0)
    nl = diff_board().r("R8", "+5V", "VREF").r("R9", "VREF", "GND").conn("J1", ["IN_P", "IN_N"]).netlist()
    r = analyse(st, nl, RAILS, Options(mc_samples=2000))
    assert r.ref.kind == "resistive" and r.ref.voltage == pytest.approx(2.5)
    assert r.gain.nominal == pytest.approx(1 + r.ref.gain_error, rel=1e-5)
    assert r.cmrr.contributors["REF source"] == pytest.approx(r.ref.cmrr_db, abs=1e-6)
    acm = r.gain.nominal / 10 ** (r.ref.cmrr_db / 20)
    want = 100 * (abs(r.ref.gain_error) + acm * 5.0 / (1.0 * 0.1))
    assert r.error_budget["ref"]["worst"] == pytest.approx(want, rel=1e-9)
    pins = {bp.pin: bp.status for bp in r.bias}
    assert pins == {"U1 +in": "ok", "U1 -in": "ok"}
    assert r.headroom.margin_v is not None and r.headroom.region


def test_assumptions_list_default_and_class_numbers():
    st = diff_stage("GND")
    st.circuit.resistors[0] = res("R1", "IN_N", "N", 10e3, 0.01, src="default")
    st.circuit.opamps[0].model.cmrr_db = Sourced(90.0, "class", "class precision-bipolar")
    r = analyse(st, None, None, Options(mc_samples=0))
    text = "\n".join(r.assumptions)
    assert "R1 tolerance assumed 1 %" in text and "U1 assumed (class precision-bipolar): CMRR 90 dB" in text
    assert "R2" not in text
    assert "U1 assumed (class precision-bipolar): CMRR 90 dB," not in text   # only CMRR was assumed
    assert r.cmrr.statistical_db is None and r.ref.kind == "rail"


def test_nan_value_is_refused():
    st = diff_stage("GND")
    st.circuit.resistors[1] = res("R2", "N", "OUT", float("nan"))
    with pytest.raises(InputError, match="R2"):
        analyse(st, None, None, Options(mc_samples=0))


def test_unreadable_value_is_unanalysable_naming_stage_and_part():
    # A user-fit part whose value reads 'RG' (recognition marks it NaN): only this stage stops,
    # with an InputError subclass the caller can turn into a finding on the stage.
    from frontcheck.analysis import Unanalysable

    st = diff_stage("GND")
    st.circuit.resistors[1] = res("R2", "N", "OUT", float("nan"))
    with pytest.raises(Unanalysable) as e:
        analyse(st, None, None, Options(mc_samples=0))
    assert isinstance(e.value, InputError)
    assert (e.value.stage_id, e.value.part) == (st.id, "R2")
    assert "resistance could not be read" in e.value.reason


def test_unsolvable_circuit_is_unanalysable():
    # An op-amp output tied to a supply cannot be solved: a fault of this stage only.
    from frontcheck.analysis import Unanalysable

    st = diff_stage("GND")
    st.circuit.opamps[0].out = "GND"
    st.circuit.ports["out"] = "OUT"
    with pytest.raises(Unanalysable) as e:
        analyse(st, None, None, Options(mc_samples=0))
    assert e.value.stage_id == st.id and e.value.part == ""


def test_unknown_distribution_is_a_run_error_not_a_stage_fault():
    from frontcheck.analysis import Unanalysable

    with pytest.raises(InputError) as e:
        analyse(diff_stage("GND"), None, None, Options(mc_samples=10, distribution="cauchy"))
    assert not isinstance(e.value, Unanalysable)


def test_budget_without_ranges_has_gain_only():
    from frontcheck.analysis.result import CmrrResult, Spread
    b, notes = error_budget(Spread(10.0, 9.9, 10.1), CmrrResult(80.0, 70.0, None), Intent())
    assert set(b) == {"gain", "total"} and b["gain"]["worst"] == pytest.approx(1.0)
    assert notes


def test_analyse_reports_source_loading_and_filter():
    # Bridge legs of 233.3 and 175 ohm (as in test_analysis_dc_paths) feed a G = 10 difference
    # amp; the result carries the loading, and the budget a 'source' term equal to its gain
    # error plus its CM error at the declared common mode.
    from frontcheck.circuit import Capacitor
    b = diff_board("GND", ("10k", "100k", "10k", "100k"))
    b.r("RB1", "+5V", "IN_P", "350").r("RB2", "IN_P", "GND", "700")
    b.r("RB3", "+5V", "IN_N", "350").r("RB4", "IN_N", "GND", "350")
    st = diff_stage("GND", (10e3, 100e3, 10e3, 100e3))
    st.intent = Intent(input_cm=(2.0, 3.0), input_diff=(-0.01, 0.01))
    r = analyse(st, b.netlist(), RAILS, Options(mc_samples=1000))
    assert r.source.rs_p == pytest.approx(233.333, rel=1e-5)
    acm = abs(10 * (1 + r.source.gain_error)) / 10 ** (r.source.cmrr_db / 20)
    want = 100 * (abs(r.source.gain_error) + acm * 3.0 / (10.0 * 0.01))
    assert r.error_budget["source"]["worst"] == pytest.approx(want, rel=1e-6)
    assert r.input_filter is None
    # A capacitor across the inputs behind series resistors is recognised as a filter.
    st2 = diff_stage("GND")
    sub = st2.circuit
    sub.resistors[0].a, sub.resistors[2].a = "FN", "FP"
    sub.resistors += [res("R10", "IN_P", "FP", 1e3), res("R11", "IN_N", "FN", 1e3)]
    sub.capacitors = [Capacitor("C1", "FP", "FN", Sourced(100e-9), Sourced(0.05))]
    r2 = analyse(st2, None, None, Options(mc_samples=0))
    assert r2.input_filter is not None and r2.input_filter.nets == ("FP", "FN")
