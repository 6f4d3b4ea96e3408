"""source-loading: a resistive source in series with a stage's inputs."""

from __future__ import annotations

import math
from types import SimpleNamespace

import pytest

from frontcheck.checks import run_rules
from frontcheck.circuit import Intent
from rule_fixtures import context, diff_stage, inamp_stage, only, result


def run(st, rs_p, rs_n, profile=None, **kw):
    ctx = context([st], [result(st)], profile=profile, sources={st.id: {"in_p": rs_p, "in_n": rs_n}}, **kw)
    return only(run_rules(ctx), "source-loading")


def closed_form(r1, r2, r3, r4):
    """Ad, Acm of the four-resistor difference amplifier (docs/engineering.md sec. 1; Sedra & Smith
    6th ed., Eq. 2.19 context)."""
    ad = (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))
    acm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    return ad, acm


def test_bridge_in_front_of_a_unity_difference_amp():
    # 350 ohm bridge: 175 ohm at each output. Matched stage: G = R2/(R1 + Rs) = 10k/10.175k,
    # -1.72 %; equal legs keep the ratios equal (CMRR stays infinite).
    (f,) = run(diff_stage(), 175.0, 175.0)
    assert f.severity == "warning"
    assert f.data["gain_error"] == pytest.approx(10e3 / 10.175e3 - 1, rel=1e-6)
    assert "-1.72 %" in f.message
    assert math.isinf(f.data["cmrr_loaded_db"])


def test_unequal_legs_lose_cmrr():
    (f,) = run(diff_stage(), 175.0, 180.0)
    ad, acm = closed_form(10e3 + 180.0, 10e3, 10e3 + 175.0, 10e3)
    assert f.data["cmrr_loaded_db"] == pytest.approx(20 * math.log10(abs(ad / acm)), abs=1e-3)
    assert f.data["ad_loaded"] == pytest.approx(ad, rel=1e-9)
    assert "nominal CMRR" in f.message


@pytest.mark.parametrize("err, severity", [(0.99e-3, "info"), (1.01e-3, "warning")])
def test_gain_error_threshold(err, severity):
    # matched stage: error = -Rs/(R1 + Rs) -> Rs = e R1 / (1 - e)
    rs = err * 10e3 / (1 - err)
    (f,) = run(diff_stage(), rs, rs)
    assert f.severity == severity


def test_cmrr_below_the_declared_minimum_is_a_warning():
    st = diff_stage(intent=Intent(min_cmrr_db=80.0))
    # 5 ohm imbalance on 10 kOhm: eps = 5e-4, CMRR ~ (1+G)/eps = 4000 (72 dB), while the gain
    # error (about -3.5e-4) stays under the 1e-3 limit: the CMRR alone makes it a warning.
    (f,) = run(st, 1.0, 6.0)
    ad, acm = closed_form(10e3 + 6.0, 10e3, 10e3 + 1.0, 10e3)
    expect = 20 * math.log10(abs(ad / acm))
    assert expect == pytest.approx(72.0, abs=0.1)
    assert f.data["cmrr_loaded_db"] == pytest.approx(expect, abs=1e-3)
    assert abs(f.data["gain_error"]) < 1e-3
    assert f.severity == "warning"
    (g,) = run(diff_stage(), 1.0, 6.0)       # no minimum: numbers only
    assert g.severity == "info"


def test_in_amp_inputs_are_not_loaded():
    assert run(inamp_stage(), 175.0, 175.0) == []


def test_unknown_source_is_skipped():
    assert run(diff_stage(), None, 175.0) == []


def test_reads_the_analysis_source_when_no_override():
    st = diff_stage()
    res = result(st)
    res.source = SimpleNamespace(rs_p=175.0, rs_n=175.0, gain_error=None, cmrr_db=None)
    (f,) = only(run_rules(context([st], [res])), "source-loading")
    assert f.data["rs_p"] == 175.0


@pytest.mark.parametrize("minimum, severity", [(71.9, "info"), (72.1, "warning")])
def test_cmrr_minimum_threshold(minimum, severity):
    ad, acm = closed_form(10e3 + 6.0, 10e3, 10e3 + 1.0, 10e3)
    loaded = 20 * math.log10(abs(ad / acm))
    assert 71.9 < loaded < 72.1
    (f,) = run(diff_stage(intent=Intent(min_cmrr_db=minimum)), 1.0, 6.0)
    assert f.severity == severity


# -- a large unrelated defect does not make the rule fire ------------------------------------

def test_ratio_mismatch_does_not_blame_a_small_source():
    # R4 10 % high: the stage's own CMRR is about 26 dB, far under an 80 dB minimum
    # (Acm = (R1 R4 - R2 R3) / (R1 (R3 + R4)), Sedra & Smith 6th ed., Eq. 2.19 context).
    # A 0.1 ohm source on each leg changes the gain by -1e-5 (a hundredth of the 1e-3 limit)
    # and adds a common-mode gain about 100 dB below Ad: not the source's fault, no finding.
    st = diff_stage(r4=11e3, intent=Intent(min_cmrr_db=80.0))
    ad, acm = closed_form(10e3, 10e3, 10e3, 11e3)
    assert 20 * math.log10(abs(ad / acm)) < 30
    assert run(st, 0.1, 0.1) == []


def test_with_a_ratio_mismatch_the_source_is_judged_on_its_own_share():
    # The same mismatched stage behind 175 / 180 ohm: the gain change (-1.7 %) is the
    # source's own and beyond the limit; the message gives the source-only CMRR and its share
    # of the common-mode gain instead of the stage's whole CMRR loss.
    st = diff_stage(r4=11e3, intent=Intent(min_cmrr_db=80.0))
    (f,) = run(st, 175.0, 180.0)
    ad0, acm0 = closed_form(10e3, 10e3, 10e3, 11e3)
    ad1, acm1 = closed_form(10e3 + 180.0, 10e3, 10e3 + 175.0, 11e3)
    src_db = 20 * math.log10(abs(ad1 / (acm1 - acm0)))
    assert f.data["cmrr_source_db"] == pytest.approx(src_db, abs=1e-6)
    assert f.data["cm_gain_share"] == pytest.approx(abs(acm1 - acm0) / (abs(acm0) + abs(acm1 - acm0)),
                                                    rel=1e-6)
    assert f.severity == "warning"
    assert "source alone limits the CMRR" in f.message


def test_buffered_in_amp_with_a_ratio_mismatch_stays_quiet():
    # Three-op-amp in-amp with stage 2 mismatched by 10 %: buffered inputs, so the 175 ohm
    # bridge changes nothing whatever the CMRR misses by.
    st = inamp_stage(rd=11e3, intent=Intent(min_cmrr_db=80.0))
    assert run(st, 175.0, 175.0) == []
