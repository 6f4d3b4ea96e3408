"""Worst case and Monte Carlo CMRR and gain against published bounds and a 10^6-sample check."""

from __future__ import annotations

import math

import numpy as np
import pytest

from frontcheck.analysis import tolerance as T
from frontcheck.circuit import Capacitor, Sourced
from spice import diff_amp, model, res, three_opamp


def _worst(sub, **kw):
    return T.analyse_tolerance(sub, T.Options(mc_samples=0, **kw))


def test_sedra_ex_2_15_both_conventions():
    # Sedra & Smith 6th ed., Ex. 2.15 (G = 100 from 1 % resistors [memory for the values]): 67.87 dB
    # with the nominal Ad, 68.04 dB with the Ad of the same corner (docs/engineering.md sec. 1).
    sub = diff_amp(10e3, 1e6, 10e3, 1e6, tol=0.01)
    _, nom, _, _ = _worst(sub, ad_convention="nominal")
    _, cor, _, _ = _worst(sub, ad_convention="corner")
    assert nom.worst_db == pytest.approx(67.87, abs=0.005)
    assert cor.worst_db == pytest.approx(68.04, abs=0.005)
    assert nom.ad_convention == "nominal" and cor.ad_convention == "corner"


@pytest.mark.parametrize("g", [1.0, 10.0, 100.0])
@pytest.mark.parametrize("t", [0.0001, 0.001, 0.01])
def test_worst_case_bound_agrees_with_corners(g, t):
    # CMRR_min ~ (1+G)/(4t) [source: Sedra & Smith 6th ed., Problem 2.67; Franco 4th ed.];
    # corner enumeration agrees within 0.01 dB for t <= 1 % (docs/engineering.md sec. 2).
    sub = diff_amp(10e3, g * 10e3, 10e3, g * 10e3, tol=t)
    _, c, _, _ = _worst(sub, ad_convention="corner")
    assert c.worst_db == pytest.approx(20 * math.log10((1 + g) / (4 * t)), abs=0.01)


def test_matched_network_ratio_bound():
    # Matched network, ratio tolerance m on R2/R1 and R4/R3: CMRR >= (1+G)/(2m) [derived,
    # docs/engineering.md sec. 2]; the absolute tolerance of the network drops out.
    g, m = 10.0, 0.0005
    sub = diff_amp(10e3, g * 10e3, 10e3, g * 10e3, tol=0.25)
    for r in sub.resistors:
        r.match_group, r.match_tol = "RN1", Sourced(m)
    _, c, _, _ = _worst(sub, ad_convention="corner")
    assert c.worst_db == pytest.approx(20 * math.log10((1 + g) / (2 * m)), abs=0.02)


def test_three_opamp_cmrr_is_g1_times_stage2():
    # With ideal A1/A2 the in-amp CMRR is G1 x CMRR(stage 2) [source: Sedra & Smith 6th ed.,
    # Problem 2.75; Pallas-Areny & Webster 1991].
    t = 0.001
    sub = three_opamp(rf=49.9e3, rg=1e3, ra=10e3, rb=10e3, tol=t)
    for r in sub.resistors[:3]:
        r.tol = Sourced(0.0)      # stage-1 resistors exact: only stage 2 mismatches
    _, c, _, _ = _worst(sub, ad_convention="corner")
    g1 = 1 + 2 * 49.9e3 / 1e3
    stage2 = T.analyse_tolerance(three_opamp(rf=49.9e3, ra=10e3, rb=10e3, tol=t, with_rg=False),
                                 T.Options(mc_samples=0, ad_convention="corner"))[1]
    assert c.worst_db == pytest.approx(stage2.worst_db + 20 * math.log10(g1), abs=0.01)
    assert stage2.worst_db == pytest.approx(20 * math.log10(2 / (4 * t)), abs=0.01)


def test_opamp_cmrr_adds_in_worst_sign():
    # 1/CMRR_total = 1/CMRR_R + 1/CMRR_OA in the worst sign [source: Pallas-Areny & Webster,
    # IEEE Trans. Instrum. Meas. 40(4), 1991; sum form [memory], docs/engineering.md sec. 2].
    sub = diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.001, m=model(cmrr_db=80.0))
    _, c, _, _ = _worst(sub)
    r_lin = 10 ** (c.contributors["resistors"] / 20)
    oa_lin = 10 ** (c.contributors["U1A"] / 20)
    assert c.contributors["U1A"] == pytest.approx(80.0, abs=0.01)   # single op-amp diff amp
    assert c.worst_db == pytest.approx(-20 * math.log10(1 / r_lin + 1 / oa_lin), abs=0.02)
    # The stage-2 op-amp of an in-amp counts G1 times less (G1 = 11 -> +20.83 dB).
    sub3 = three_opamp(rf=25e3, rg=5e3, tol=0.001, m=model(cmrr_db=100.0))
    _, c3, _, _ = _worst(sub3)
    assert c3.contributors["U1C"] == pytest.approx(100 + 20 * math.log10(11), abs=0.01)


@pytest.mark.parametrize("make", [lambda: diff_amp(10e3, 47e3, 10e3, 47e3, tol=0.01),
                                  lambda: three_opamp(tol=0.005)])
def test_sensitivity_corners_match_full_enumeration(make):
    sub = make()
    _, full, n_full, _ = _worst(sub)
    g, fall, notes, _ = _worst(sub, max_bits=2)
    assert any("sensitivity-sign" in n for n in notes) and not any("sensitivity" in n for n in n_full)
    assert fall.worst_db == pytest.approx(full.worst_db, abs=1e-6)


def test_monte_carlo_reproduces_reference_percentiles():
    # docs/engineering.md sec. 2, 10^6-sample check [derived]: G = 1, t = 0.1 %: Gaussian (t = 3
    # sigma) 1st percentile 61.3 dB, median 73.0 dB; uniform 57.0 dB / 67.9 dB. 2*10^5 samples here:
    # the 1st percentile's sampling spread is about 0.03 dB.
    sub = diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.001)
    ctx = T.make_context(sub)
    for dist, p1, p50 in (("gaussian", 61.3, 73.0), ("uniform", 57.0, 67.9)):
        ad, acm = T.monte_carlo(ctx, T.Options(distribution=dist, seed=7), n=200_000)
        db = T.cmrr_db(ad, acm, 1.0)
        lo, med = np.percentile(db, [1, 50])
        assert lo == pytest.approx(p1, abs=0.1)
        assert med == pytest.approx(p50, abs=0.1)


def test_monte_carlo_is_seeded_and_percentile_reported():
    sub = three_opamp(tol=0.001)
    a = T.analyse_tolerance(sub, T.Options(mc_samples=5000, seed=3))
    b = T.analyse_tolerance(sub, T.Options(mc_samples=5000, seed=3))
    assert a[1].statistical_db == b[1].statistical_db
    g, c = a[0], a[1]
    assert g.worst_min <= g.p_low <= g.nominal <= g.p_high <= g.worst_max
    assert c.worst_db <= c.statistical_db
    assert len(c.samples_db) <= 2000 and len(g.samples) <= 2000


def _filter_stage(cd: bool):
    # docs/engineering.md sec. 7: series R per leg, Cc per leg to ground, Cd across.
    sub = three_opamp()
    sub.opamps[0].inp, sub.opamps[1].inp = "FP", "FN"
    sub.resistors += [res("R10", "IN_P", "FP", 4.02e3, 0.01), res("R11", "IN_N", "FN", 4.02e3, 0.01)]
    sub.capacitors = [Capacitor("C1", "FP", "GND", Sourced(1e-9), Sourced(0.05)),
                      Capacitor("C2", "FN", "GND", Sourced(1e-9), Sourced(0.05))]
    if cd:
        sub.capacitors.append(Capacitor("C3", "FP", "FN", Sourced(10e-9), Sourced(0.0)))
    return sub


def test_input_filter_check_values():
    # docs/engineering.md sec. 7 [derived, ngspice AC-verified]: R = 4.02 k, Cc = 1 nF, Cd = 10 nF
    # -> f_DM = 1885.3 Hz, f_CM = 39.59 kHz; R +-1 %, C +-5 % (worst pair): |Vd/Vcm| = 2.68e-3 at
    # 1 kHz with Cd, 2.85e-2 at 10 kHz without.
    f = T.input_filter(_filter_stage(True))
    assert f.f_dm_hz == pytest.approx(1885.3, abs=0.1)
    assert f.f_cm_hz == pytest.approx(39.59e3, abs=10)
    assert f.cm_to_dm[1e3] == pytest.approx(2.68e-3, rel=0.005)
    f0 = T.input_filter(_filter_stage(False))
    assert f0.cm_to_dm[1e4] == pytest.approx(2.85e-2, rel=0.005)
    assert set(f.parts) == {"R10", "R11", "C1", "C2"}


def test_no_filter_found():
    assert T.input_filter(three_opamp()) is None


@pytest.mark.parametrize("ref", ["REF", "GND"])
def test_capacitors_across_gain_resistors_are_not_an_input_filter(ref):
    # A difference amp with C across R2 (feedback) and across R4 (to REF): R1 and R3 are gain
    # resistors, not filter legs (docs/engineering.md sec. 7 shape: series R per leg, Cc per leg to
    # a fixed net, optional Cd). R1's far end is the summing node, fed back from the output.
    sub = diff_amp(10e3, 100e3, 10e3, 100e3)
    if ref == "GND":
        sub.resistors[3].b = "GND"
        sub.ports["ref"] = "GND"
    sub.capacitors = [Capacitor("C1", "N", "OUT", Sourced(100e-12), Sourced(0.05)),
                      Capacitor("C2", "P", ref, Sourced(100e-12), Sourced(0.05))]
    assert T.filter_nets(sub) is None
    assert T.input_filter(sub) is None


def test_filter_leg_needs_its_cc_or_a_shared_cd():
    # One leg with Cc and the other without, and no Cd: not the sec. 7 shape.
    sub = _filter_stage(False)
    sub.capacitors = sub.capacitors[:1]
    assert T.filter_nets(sub) is None
    # Series R plus a bias resistor to ground on a leg: the bias resistor is not a leg.
    sub = _filter_stage(True)
    sub.resistors.append(res("R12", "IN_P", "GND", 1e6, 0.01))
    assert T.filter_nets(sub) == (("FP", "FN"), ["R10", "R11"])


def test_gaussian_three_sigma_point_is_6db_above_worst_case():
    # Independent Gaussian di with t = 3 sigma: std(eps) = 2 sigma, so at the 3-sigma point of
    # |eps| (two-sided, 0.27 % tail) CMRR = (1+G)/(2t), 6 dB above the worst case (1+G)/(4t)
    # (docs/engineering.md sec. 2 [derived]).
    g, t = 10.0, 0.001
    sub = diff_amp(10e3, g * 10e3, 10e3, g * 10e3, tol=t)
    ctx = T.make_context(sub)
    ad, acm = T.monte_carlo(ctx, T.Options(seed=11), n=400_000)
    p = float(np.percentile(T.cmrr_db(ad, acm, g, "corner"), 0.27))
    assert p == pytest.approx(20 * math.log10((1 + g) / (2 * t)), abs=0.1)
    _, c, _, _ = _worst(sub, ad_convention="corner")
    assert p - c.worst_db == pytest.approx(6.02, abs=0.1)


def test_opamp_cmrr_magnitude_sum_matches_joint_enumeration():
    # Above joint_bits the op-amp terms are added in magnitude (Pallas-Areny & Webster 1991);
    # on a case small enough for both, the two agree.
    sub = three_opamp(tol=0.0005, m=model(aol=1e6, cmrr_db=90.0))
    gj, joint, n1, _ = _worst(sub)
    gs, summed, n2, _ = _worst(sub, joint_bits=0)
    assert any("added in magnitude" in n for n in n2) and not any("magnitude" in n for n in n1)
    assert summed.worst_db == pytest.approx(joint.worst_db, abs=0.01)
    # The op-amps' CMRR terms move the differential gain as well (each first-stage op-amp's
    # inputs follow its own input): the worst gain of both methods takes them in, and is wider
    # than the resistor corners alone.
    gr, _, _, _ = _worst(three_opamp(tol=0.0005, m=model(aol=1e6)))
    assert gj.worst_max - gj.worst_min > gr.worst_max - gr.worst_min + 5e-5 * gj.nominal
    assert gs.worst_min == pytest.approx(gj.worst_min, rel=1e-6)
    assert gs.worst_max == pytest.approx(gj.worst_max, rel=1e-6)


from hypothesis import given, settings, strategies as st  # noqa: E402


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(min_value=1e3, max_value=1e5), min_size=4, max_size=4),
       st.floats(min_value=1e-4, max_value=0.05))
def test_uniform_samples_never_beyond_corners(vals, t):
    # Acm and Ad are monotone in each resistor (docs/engineering.md sec. 2), so no sample drawn
    # inside the tolerance box can be worse than the corner enumeration.
    sub = diff_amp(*vals, tol=t)
    g, c, _, _ = T.analyse_tolerance(sub, T.Options(mc_samples=3000, distribution="uniform", seed=5))
    assert min(c.samples_db) >= c.worst_db - 1e-9
    assert g.worst_min - 1e-12 <= min(g.samples) and max(g.samples) <= g.worst_max + 1e-12
