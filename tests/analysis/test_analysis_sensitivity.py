"""Statistics from first-order sensitivities against the full nonlinear Monte Carlo.

The reference for every accuracy check is a 200,000-sample Monte Carlo of the exact circuit
solve (frontcheck's own batched MNA, itself checked against ngspice in test_ngspice_oracle.py)
with a fixed seed; the stated accuracy is 0.1 dB of CMRR and 0.01 % of gain at the 0.135 % tail
(the -3 sigma point). The 200,000-sample reference has a sampling spread of its own at that
tail (about 0.05 dB of CMRR for a mismatch-limited stage [derived: quantile standard error
sqrt(p(1 - p) / n) / phi(3) = 0.019 sigma, 0.6 % of |Acm|]), inside the 0.1 dB.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from frontcheck.analysis import sensitivity as S
from frontcheck.analysis import tolerance as T
from spice import diff_amp, model, three_opamp, two_opamp

REFERENCE_SAMPLES = 200_000
DB_TOL = 0.1            # dB of CMRR
GAIN_TOL = 1e-4         # fraction of the gain (0.01 %)


def _reference(sub, series, opt):
    """Plain percentiles of a 200,000-sample Monte Carlo of the exact circuit."""
    ctx = T.make_context(sub, series)
    ad, acm = T.monte_carlo(ctx, opt, n=REFERENCE_SAMPLES)
    ad0 = float(ctx.evaluate(np.zeros((1, len(ctx.var.names))), use_opamp_cmrr=False).ad[0])
    db = T.cmrr_db(ad, acm, ad0, opt.ad_convention)
    lo, hi = np.percentile(ad, [opt.percentile, 100 - opt.percentile])
    return float(lo), float(hi), T._low_percentile(db, opt.percentile)


def _precision_opamp():
    return model(aol=1e6, cmrr_db=100.0)


FAMILIES = {
    # name: (SubCircuit, series port resistances)
    "difference, ideal REF": (diff_amp(10e3, 100e3, 10e3, 100e3, tol=0.001), None),
    "difference, REF from 200 ohm": (diff_amp(10e3, 100e3, 10e3, 100e3, tol=0.001), {"ref": 200.0}),
    "difference, 1 k / 1.5 k source": (diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.0005,
                                                 m=_precision_opamp()),
                                        {"in_p": 1e3, "in_n": 1.5e3}),
    "three-op-amp, REF from 50 ohm": (three_opamp(rf=24.9e3, rg=2.49e3, tol=0.001,
                                                  m=_precision_opamp()), {"ref": 50.0}),
    "three-op-amp, source 2 k": (three_opamp(tol=0.001), {"in_p": 2e3, "in_n": 2e3}),
    "two-op-amp, REF from 100 ohm": (two_opamp(tol=0.001, m=_precision_opamp()), {"ref": 100.0}),
}


@pytest.mark.parametrize("distribution", ["gaussian", "uniform"])
@pytest.mark.parametrize("family", list(FAMILIES))
def test_statistics_match_a_200k_monte_carlo(family, distribution):
    sub, series = FAMILIES[family]
    opt = T.Options(distribution=distribution, seed=4)
    gain, cmrr, notes, _ = T.analyse_tolerance(sub, opt, series)
    lo, hi, db = _reference(sub, series, opt)
    assert gain.method == cmrr.statistical_method == "first-order", notes
    assert any("first-order sensitivity model" in n for n in notes)
    assert abs(gain.p_low - lo) <= GAIN_TOL * abs(gain.nominal)
    assert abs(gain.p_high - hi) <= GAIN_TOL * abs(gain.nominal)
    assert cmrr.statistical_db == pytest.approx(db, abs=DB_TOL)


def test_corner_convention_samples_the_linear_model():
    sub, series = FAMILIES["three-op-amp, REF from 50 ohm"]
    opt = T.Options(ad_convention="corner", seed=2)
    _, cmrr, notes, _ = T.analyse_tolerance(sub, opt, series)
    assert cmrr.statistical_method == "first-order"
    assert any("draws of the model" in n for n in notes)
    assert cmrr.statistical_db == pytest.approx(_reference(sub, series, opt)[2], abs=DB_TOL)


def test_coarse_parts_fall_back_to_monte_carlo_and_stay_accurate():
    # 5 % parts at G = 100: the first-order model's error at the tail is several tenths of a
    # dB (the second-order terms grow with t), so the circuit is solved for every draw.
    sub = diff_amp(1e3, 100e3, 1e3, 100e3, tol=0.05)
    opt = T.Options(seed=9)
    gain, cmrr, notes, _ = T.analyse_tolerance(sub, opt, None)
    assert gain.method == cmrr.statistical_method == "monte-carlo"
    assert any("Monte Carlo of 20,000 circuit solves, because" in n for n in notes)
    lo, hi, db = _reference(sub, None, opt)
    assert cmrr.statistical_db == pytest.approx(db, abs=DB_TOL)
    # 5 % parts spread the gain about 4 %: the 200,000-sample reference itself is good to
    # about 0.02 % of gain at the tail [derived as in the module docstring]
    assert abs(gain.p_low - lo) <= 5 * GAIN_TOL * gain.nominal
    assert abs(gain.p_high - hi) <= 5 * GAIN_TOL * gain.nominal


def test_samples_option_forces_the_plain_monte_carlo():
    sub = diff_amp(10e3, 100e3, 10e3, 100e3, tol=0.001)
    opt = T.Options(method="monte-carlo", mc_samples=5000, seed=3)
    gain, cmrr, notes, extra = T.analyse_tolerance(sub, opt)
    ad, acm = T.monte_carlo(T.make_context(sub), opt)
    assert cmrr.statistical_method == gain.method == "monte-carlo"
    assert cmrr.statistical_db == T._low_percentile(T.cmrr_db(ad, acm, gain.nominal), 0.135)


@pytest.mark.parametrize("family", list(FAMILIES))
def test_adjoint_gradients_equal_central_differences(family):
    sub, series = FAMILIES[family]
    ctx = T.make_context(sub, series)
    lin = S.first_order(ctx)
    k, n = len(ctx.var.names), len(ctx.var.names) + ctx.cmag.size
    h = 1e-6
    z = np.vstack([h * np.eye(n), -h * np.eye(n)])
    g = ctx.evaluate(z[:, :k], z[:, k:])
    fd_ad = (g.ad[:n] - g.ad[n:]) / (2 * h)
    fd_acm = (g.acm[:n] - g.acm[n:]) / (2 * h)
    # central differences are good to O(h^2) and round-off ~ 1e-16 / h
    assert np.allclose(lin.gd, fd_ad, rtol=1e-5, atol=1e-8 * abs(lin.ad0))
    assert np.allclose(lin.ga, fd_acm, rtol=1e-5, atol=1e-8 * abs(lin.ad0))


def test_matched_difference_amplifier_gradient_is_the_textbook_one():
    # CMRR ~ (1 + G) / |d1 - d2 - d3 + d4| (docs/engineering.md sec. 2, first order [derived]):
    # dAcm/dd_i = +-G / (1 + G) with Ri = Ri0 (1 + t x_i), so dAcm/dx_i = +-t G / (1 + G).
    g, t = 10.0, 0.001
    lin = S.first_order(T.make_context(diff_amp(10e3, g * 10e3, 10e3, g * 10e3, tol=t)))
    # the four resistors; the op-amp's CMRR term is zero (the test model has none)
    assert np.allclose(np.abs(lin.ga[:4]), t * g / (1 + g), rtol=1e-9) and lin.ga[4] == 0
    assert lin.acm0 == pytest.approx(0.0, abs=1e-12) and lin.ad0 == pytest.approx(g)


def test_sum_of_two_uniforms_is_triangular():
    # U[-1, 1] + U[-1, 1] is triangular on [-2, 2]: P(S > s) = (2 - s)^2 / 8 [derived,
    # common practice], so the upper q-quantile is 2 - sqrt(8 q).
    d = S.LinearSum(0.0, np.array([1.0, 1.0]), np.array([False, False]))
    for q in (0.00135, 0.01, 0.1):
        assert d.quantile(1 - q) == pytest.approx(2 - math.sqrt(8 * q), rel=2e-3)
        assert d.magnitude_exceeded(2 * q) == pytest.approx(2 - math.sqrt(8 * q), rel=2e-3)


def test_folded_normal_tail():
    # |N(mu, 1)| exceeded with probability p: for mu = 0 the two-sided normal point,
    # 3.0 at p = 0.27 % (normal tables).
    d = S.LinearSum(0.0, np.array([3.0]), np.array([True]))
    assert d.magnitude_exceeded(0.0027) == pytest.approx(3.0, abs=1e-3)
    assert d.quantile(0.00135) == pytest.approx(-3.0, abs=1e-3)


@pytest.mark.parametrize("dist, p1, p50", [("gaussian", 61.3, 73.0), ("uniform", 57.0, 67.9)])
def test_reference_percentiles_from_the_linear_model(dist, p1, p50):
    # docs/engineering.md sec. 2, 10^6-sample check [derived]: G = 1, t = 0.1 %.
    sub = diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.001)
    for pct, want in ((1.0, p1), (50.0, p50)):
        _, c, _, _ = T.analyse_tolerance(sub, T.Options(distribution=dist, percentile=pct))
        assert c.statistical_method == "first-order"
        assert c.statistical_db == pytest.approx(want, abs=0.1)


def test_error_bounds_in_words_name_only_what_is_above_zero():
    # The method note says why the statistics took the route they did; a zero bound is not
    # written as 'off by up to 0 dB' (one significant figure, rounded up, as the bounds are).
    from frontcheck.analysis.sensitivity import _errors
    assert _errors(0.0, 3.2e-4) == "0.04 % of the gain"
    assert _errors(0.23, 0.0) == "0.3 dB of CMRR"
    assert _errors(0.23, 3.2e-4) == "0.3 dB of CMRR and 0.04 % of the gain"
    assert _errors(0.0, 0.0) == "the solver's precision"
