"""cmrr-budget: worst-case and statistical CMRR against the required minimum."""

from __future__ import annotations

import math

import pytest

from frontcheck.checks import cmrr_budget, run_rules
from frontcheck.circuit import Intent
from rule_fixtures import context, diff_stage, inamp_stage, only, result


def run(stage, profile=None, **kw):
    return only(run_rules(context([stage], [result(stage, **kw)], profile=profile)), "cmrr-budget")


@pytest.mark.parametrize("worst, stat, severity", [
    (79.9, 90.0, "error"),      # worst case just below 80 dB
    (80.1, 90.0, None),         # just above, statistical fine
    (81.0, 79.9, "warning"),    # only the statistical figure misses
    (81.0, 80.1, None),
])
def test_thresholds(worst, stat, severity):
    st = diff_stage(intent=Intent(min_cmrr_db=80.0))
    fs = run(st, worst_db=worst, statistical_db=stat)
    assert [f.severity for f in fs] == ([severity] if severity else [])


def test_without_a_minimum_only_numbers_at_info():
    (f,) = run(diff_stage(), worst_db=50.0, statistical_db=56.0, nominal_db=math.inf,
               contributors={"resistors": 50.0})
    assert f.severity == "info"
    assert "worst case 50.0 dB" in f.message and "statistical 56.0 dB" in f.message
    assert "nominal ∞ dB" in f.message


def test_strict_profile_applies_its_default_minimum():
    (f,) = run(diff_stage(), profile="strict", worst_db=79.0, statistical_db=85.0)
    assert f.severity == "error" and "profile default minimum 80.0 dB" in f.message


def test_fix_inverts_the_worst_case_formula():
    # G = 1, target 80 dB, op-amp alone 100 dB: resistors must reach 1/(1e-4 - 1e-5) = 11111
    # (worst-case sum, Pallas-Areny & Webster 1991); t = (1+G)/(4 CMRR) = 4.5e-5
    # (Sedra & Smith 6th ed., Problem 2.67); m = (1+G)/(2 CMRR) = 9.0e-5.
    st = diff_stage(intent=Intent(min_cmrr_db=80.0))
    (f,) = run(st, worst_db=53.9, statistical_db=60.0,
               contributors={"resistors": 53.98, "U1A": 100.0})
    assert f.severity == "error"
    assert "0.0045 %" in f.fix and "0.0090 %" in f.fix
    assert "resistors 54.0 dB, U1A 100.0 dB" in f.message


def test_fix_check_against_the_formula_forward():
    # tolerance_for must give back a tolerance that the forward formula maps onto the target.
    t, m = cmrr_budget.tolerance_for(10 ** (80 / 20), g=10.0, g1=1.0)
    assert 20 * math.log10((1 + 10.0) / (4 * t)) == pytest.approx(80.0)
    assert 20 * math.log10((1 + 10.0) / (2 * m)) == pytest.approx(80.0)


def test_other_contributor_below_target_cannot_be_fixed_by_resistors():
    st = diff_stage(intent=Intent(min_cmrr_db=80.0))
    (f,) = run(st, worst_db=69.0, statistical_db=70.0,
               contributors={"resistors": 90.0, "U1A": 70.0})
    assert "U1A alone allows only 70.0 dB" in f.fix


def test_ref_source_below_target_suggests_a_buffer():
    st = diff_stage(intent=Intent(min_cmrr_db=80.0))
    (f,) = run(st, worst_db=66.0, contributors={"resistors": 90.0, "REF source": 66.0})
    assert "REF source" in f.fix and "buffer REF" in f.fix


def test_in_amp_first_stage_gain_enters_the_fix():
    # G1 = 1 + 2 x 24.9k / 1k = 50.8, G2 = 1: t = G1 (1 + G2) / (4 CMRR_R)
    # (Sedra & Smith 6th ed., Problem 2.75: in-amp CMRR = G1 x stage-2 CMRR).
    st = inamp_stage(intent=Intent(min_cmrr_db=120.0))
    (f,) = run(st, worst_db=100.0, contributors={"resistors": 100.0})
    g1 = 1 + 2 * 24.9e3 / 1e3
    assert f"+{20 * math.log10(g1):.1f} dB" in f.message
    t = g1 * 2 / (4 * 1e6)
    assert f"{100 * t:.4f} %" in f.fix
    assert f.data["g1"] == pytest.approx(g1)


def test_needed_resistor_cmrr_helper():
    assert cmrr_budget.needed_resistor_cmrr(80.0, [80.0]) is None
    assert cmrr_budget.needed_resistor_cmrr(80.0, []) == pytest.approx(1e4)


def test_other_contributors_together_below_target():
    # 86 dB and 86 dB in the worst sign: 1/CMRR adds, 86 - 6.02 = 80.0 dB < 81 dB
    # (Pallas-Areny & Webster 1991).
    st = diff_stage(intent=Intent(min_cmrr_db=81.0))
    (f,) = run(st, worst_db=79.0, contributors={"resistors": 120.0, "U1A": 86.0, "REF source": 86.0})
    assert "together allow only 80.0 dB" in f.fix


def test_drawn_mismatch_points_at_the_ratio_first():
    st = diff_stage(intent=Intent(min_cmrr_db=80.0))
    (f,) = run(st, nominal_db=46.0, worst_db=45.0, contributors={"resistors": 45.0})
    assert "ratio-mismatch" in f.fix


@pytest.mark.parametrize("ref_db, names_ref", [
    (45.4, True),     # the REF source sets the nominal 45.4 dB: buffer REF first
    (80.0, False),    # REF harmless; the drawn ratios set it: fix the ratios first
])
def test_fix_names_what_limits_the_stage_as_drawn(ref_db, names_ref):
    st = diff_stage(intent=Intent(min_cmrr_db=90.0))
    (f,) = run(st, worst_db=44.4, statistical_db=44.5, nominal_db=45.4,
               contributors={"resistors": 60.0 if names_ref else 45.5, "REF source": ref_db})
    assert ("buffer" in f.fix) == names_ref
    assert ("ratio-mismatch" in f.fix) == (not names_ref)
