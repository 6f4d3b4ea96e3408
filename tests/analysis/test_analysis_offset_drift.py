"""Offset, bias current and drift of a stage against closed forms worked by hand.

The transfers used here (Vos in series with a non-inverting input, a current into an input
node) are the same adjoint solves whose magnitudes test_analysis_noise.py checks against
ngspice `.noise` (en and in sources sit exactly where Vos and Ib do)."""

from __future__ import annotations

import math

import pytest

from frontcheck.analysis import drift, offset
from spice import diff_amp, three_opamp


def test_difference_amp_offset_and_bias_by_hand():
    # Vos through the noise gain 1 + R2/R1; Ib through the resistance each input sees,
    # R1||R2 and R3||R4 (Franco 4th ed., static limitations chapter, chapter from memory).
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    ad, tr = offset.dc_transfers(sub)
    assert ad == pytest.approx(10.0, rel=1e-9)
    (t,) = tr
    assert t.vos == pytest.approx(11.0, rel=1e-9)
    assert t.r_p == pytest.approx(1e3 * 10e3 / 11e3, rel=1e-9)     # 909.09 ohm
    assert t.r_n == pytest.approx(1e3 * 10e3 / 11e3, rel=1e-9)
    v = offset.vos_term(ad, tr, [1e-3])
    assert v.worst_out_v == pytest.approx(11e-3, rel=1e-9)
    assert v.worst_rti_v == pytest.approx(1.1e-3, rel=1e-9)
    # Ib = 100 nA common to both inputs cancels (equal resistances); Ios = 10 nA does not:
    # (1 + G) * Ios * 909.09 ohm = 11 * 10e-9 * 909.09 = 100 uV at the output, 10 uV RTI.
    b = offset.bias_term(ad, tr, [100e-9], [10e-9])
    assert b.worst_out_v == pytest.approx(100e-6, rel=1e-9)
    assert b.worst_rti_v == pytest.approx(10e-6, rel=1e-9)
    # Without Ios each input is bounded alone: 2 * 11 * 100 nA * 909.09 ohm = 2 mV at the output.
    assert offset.bias_term(ad, tr, [100e-9], [None]).worst_out_v == pytest.approx(2e-3, rel=1e-9)
    # Requirement: the largest Vos that keeps the RTI offset within 0.5 mV is 0.5 mV / 1.1.
    assert offset.max_vos(0.5e-3, ad, tr) == pytest.approx(0.5e-3 / 1.1, rel=1e-9)
    assert offset.max_vos(0.0, ad, tr) is None


def test_three_opamp_offset_by_hand():
    # G1 = 1 + 2 * 24.9k / 499 = 100.7996, G2 = 1: A1 and A2 offsets reach the output times
    # G1 G2 (opposite signs), A3's times its noise gain 2. 1 mV each: worst 203.599 mV out,
    # RSS sqrt(2 * 100.7996^2 + 2^2) = 142.566 mV; RTI worst 203.599 / 100.7996 = 2.0198 mV.
    sub = three_opamp(rf=24.9e3, rg=499.0)
    ad, tr = offset.dc_transfers(sub)
    assert ad == pytest.approx(1 + 2 * 24.9e3 / 499, rel=1e-9)
    assert [abs(t.vos) for t in tr] == pytest.approx([100.7996, 100.7996, 2.0], rel=1e-5)
    v = offset.vos_term(ad, tr, [1e-3, 1e-3, 1e-3])
    assert v.worst_out_v == pytest.approx(203.599e-3, rel=1e-5)
    assert v.rss_out_v == pytest.approx(142.566e-3, rel=1e-5)
    assert v.worst_rti_v == pytest.approx(2.01984e-3, rel=1e-5)
    # The first-stage inputs sit on the driven ports: their bias currents meet no resistance.
    assert tr[0].z_p == 0.0 and tr[1].z_p == 0.0
    # A current into A1's inverting node flows through Rf1 alone (A2 holds the far end of RG):
    # 24.9 k at the output (G2 = 1).
    assert abs(tr[0].z_n) == pytest.approx(24.9e3, rel=1e-9)
    # An op-amp without a number is left out (the caller makes it a requirement).
    assert offset.vos_term(ad, tr, [None, None, 1e-3]).worst_out_v == pytest.approx(2e-3, rel=1e-9)


def test_ratio_drift_opposite_tcrs_over_80k():
    # By hand: R_a at -25 ppm/K over R_b at +25 ppm/K, 80 K: (1 - 0.002) / (1 + 0.002) - 1
    # = 0.998 / 1.002 - 1 = -3.99202e-3 (first order: -50 ppm/K * 80 K = -4.0e-3).
    assert drift.ratio_drift(-25e-6, 25e-6, 80.0) == pytest.approx(-3.992016e-3, rel=1e-6)


def test_difference_amp_drift_opposite_tcrs_over_80k():
    # Same by hand on a G = 10 difference amp, R1 and R3 at +25 ppm/K, R2 and R4 at -25 ppm/K,
    # 25 -> 105 degC: the gain R2/R1 moves by -3.992016e-3 and the ratios stay matched (no CM).
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    known = [(25e-6, 25e-6), (-25e-6, -25e-6), (25e-6, 25e-6), (-25e-6, -25e-6)]
    d = drift.resistor_drift(sub, known, (25.0, 105.0))
    assert d.gain_worst == pytest.approx(3.992016e-3, rel=1e-6)
    assert d.acm_worst < 1e-12
    # Bounds of +-25 ppm/K each: the worst corner is R2, R4 up and R1, R3 down (or the
    # reverse): 1.002 / 0.998 - 1 = 4.008016e-3.
    b = drift.resistor_drift(sub, [25e-6] * 4, (25.0, 105.0))
    assert b.gain_worst == pytest.approx(4.008016e-3, rel=1e-6)
    # CM gain at the worst corner, first-order form of Sedra & Smith Problem 2.67 with
    # d = 2e-3 on each resistor: |Acm| ~ G * 4d / (1 + G) = 10 * 8e-3 / 11 = 7.27e-3.
    assert b.acm_worst == pytest.approx(7.27e-3, rel=0.01)


def test_network_tracking_cancels_the_common_coefficient():
    # All four resistors in one network, 25 ppm/K absolute, 2 ppm/K tracking: only the
    # tracking moves the ratios. By hand, R2 at +1 ppm/K, R1 at -1 ppm/K over 80 K:
    # (1 + 80e-6) / (1 - 80e-6) - 1 = 1.600128e-4.
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    for r in sub.resistors:
        r.match_group = "RN1"
    d = drift.resistor_drift(sub, [25e-6] * 4, (25.0, 105.0), tracking={"RN1": 2e-6})
    assert d.gain_worst == pytest.approx(1.600128e-4, rel=1e-6)


def test_unknown_tcr_is_reported_with_its_sensitivity():
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    d = drift.resistor_drift(sub, [None] * 4, (-20.0, 60.0))
    assert d.unknown == ["R1", "R2", "R3", "R4"] and d.gain_worst == 0.0
    # 25 ppm/K on all four over 45 K (25 -> -20 degC): gain worst to first order 2 * 25e-6 * 45
    assert d.gain_per_unknown * 25e-6 == pytest.approx(2 * 25e-6 * 45, rel=0.01)


def test_vos_drift_by_hand():
    # 1 uV/K through a noise gain of 11 over -20..60 degC: the far end is 45 K from 25 degC:
    # 11 * 1e-6 * 45 = 495 uV at the output; two op-amps: worst sum, RSS.
    assert drift.vos_drift_out([11.0], [1e-6], (-20.0, 60.0)) == pytest.approx((495e-6, 495e-6))
    w, r = drift.vos_drift_out([11.0, 11.0, 2.0], [1e-6, 1e-6, None], (-20.0, 60.0))
    assert w == pytest.approx(990e-6) and r == pytest.approx(495e-6 * math.sqrt(2))
