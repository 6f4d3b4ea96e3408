"""CMRR against frequency: the input filter's CM-to-DM conversion by hand, and whole stages
(filter, op-amp poles and CMRR roll-off) against ngspice `.ac`."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from frontcheck.analysis import cmrr_frequency as cf
from frontcheck.analysis.small_signal import OpAmpDynamics, min_gbw_for_flatness
from frontcheck.circuit import Capacitor, Sourced
from spice import diff_amp, res, three_opamp


def cap(name, a, b, farads, tol):
    return Capacitor(name, a, b, Sourced(farads), Sourced(tol))


def test_rc_conversion_check_value():
    # docs/engineering.md sec. 7 (derived, ngspice AC-verified): R = 4.02 k, Cc = 1 nF, R +-1 %,
    # C +-5 %, no Cd: worst |Vd/Vcm| = 2.85e-2 at 10 kHz.
    assert cf.rc_conversion_worst(1e4, 4.02e3, 1e-9, 0.01, 0.05) == pytest.approx(2.85e-2, abs=0.005e-2)
    # Far below both corners: |Vd/Vcm| ~ 2 pi f |Ra Ca - Rb Cb| (Kitchin & Counts, RFI chapter)
    lo = cf.rc_conversion(1.0, 10e3, 1e-9, 10.1e3, 1e-9)
    assert lo == pytest.approx(2 * math.pi * 1.0 * 0.1e3 * 1e-9, rel=1e-6)


def test_rc_conversion_worst_is_the_largest_over_a_dense_grid():
    # The claim of rc_conversion_worst's docstring (no interior maximum) checked by brute force.
    r, c, tr, tc = 4.02e3, 1e-9, 0.01, 0.05
    for f in (1e2, 1e4, 3.96e4, 1e6):
        t = np.linspace(r * (1 - tr) * c * (1 - tc), r * (1 + tr) * c * (1 + tc), 201)
        ta, tb = np.meshgrid(t, t)
        brute = float(np.max(cf.rc_conversion(f, ta, 1.0, tb, 1.0)))
        assert cf.rc_conversion_worst(f, r, c, tr, tc) == pytest.approx(brute, rel=1e-12)


def test_opamp_cmrr_rolls_off_20_db_per_decade():
    # Ideal resistors, one op-amp with CMRR 100 dB flat to 100 Hz then -20 dB/decade: the
    # stage's CMRR (referred through a matched difference amp) equals the op-amp's,
    # |CMRR0 / (1 + j f/fc)| (single-zero model, derived): 10 kHz -> 100 - 20 log10(sqrt(1+1e4)) = 59.9996 dB.
    sub = diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.0)
    s = cf.cmrr_sweep(sub, [1.0, 1e4], [OpAmpDynamics(cmrr_db=100.0, cmrr_corner_hz=100.0)], worst=False)
    assert s.nominal_db[0] == pytest.approx(100.0 - 10 * math.log10(1 + 1e-4), abs=1e-6)
    assert s.nominal_db[1] == pytest.approx(100.0 - 10 * math.log10(1 + 1e4), abs=1e-6)


def test_min_gbw_for_flatness():
    # |1/(1 + j f NG/GBW)| = 1 - e at the bound (single pole): NG = 101, f = 1 kHz, e = 0.1 %
    gbw = min_gbw_for_flatness(101.0, 1e3, 1e-3)
    assert abs(1 / (1 + 1j * 1e3 * 101 / gbw)) == pytest.approx(1 - 1e-3, rel=1e-12)
    # 1/0.999^2 - 1 = 2.003004e-3, sqrt = 4.47549e-2, 101e3 / 4.47549e-2 = 2.25673 MHz (by hand)
    assert gbw == pytest.approx(2.25673e6, rel=1e-5)


def _filtered_inamp():
    """Three-op-amp in-amp, G = 100.8, behind an RC filter with mismatched legs and a Cd."""
    s = three_opamp(rf=24.9e3, rg=499.0, ra=10e3, rb=10e3, tol=0.001)
    s.resistors[-1].ohms = Sourced(10.02e3)             # a resistor-limited DC CMRR
    s.resistors += [res("RFP", "SRC_P", "FP", 4.02e3, 0.01), res("RFN", "SRC_N", "FN", 4.05e3, 0.01)]
    s.capacitors = [cap("CCP", "FP", "GND", 1e-9, 0.05), cap("CCN", "FN", "GND", 1.05e-9, 0.05),
                    cap("CD", "FP", "FN", 10e-9, 0.05)]
    s.opamps[0].inp, s.opamps[1].inp = "FP", "FN"
    s.ports["in_p"], s.ports["in_n"] = "SRC_P", "SRC_N"
    return s


DYN = [OpAmpDynamics(aol=1e5, gbw_hz=1e6, cmrr_db=100.0, cmrr_corner_hz=200.0),
       OpAmpDynamics(aol=2e5, gbw_hz=1.2e6, cmrr_db=95.0, cmrr_corner_hz=300.0),
       OpAmpDynamics(aol=1e5, gbw_hz=1e6, cmrr_db=80.0, cmrr_corner_hz=1e3)]


@pytest.mark.oracle
def test_cmrr_against_frequency_matches_ngspice(ngspice):
    from spice_ac import ac_gain
    sub = _filtered_inamp()
    freqs = cf.DEFAULT_FREQS                            # 1 Hz .. 1 MHz, 10 a decade
    s = cf.cmrr_sweep(sub, freqs, DYN, worst=False)
    dm = np.array(ac_gain(sub, freqs, "dm", dynamics=DYN))
    cm = np.array(ac_gain(sub, freqs, "cm", dynamics=DYN))
    ad = dm - cm / 2                                   # VDP drives in_p alone: Ad + Acm/2
    spice_db = cf.to_db(ad, cm)
    assert np.all(np.isfinite(spice_db))
    np.testing.assert_allclose(s.nominal_db, spice_db, atol=0.2)
    # it is a sweep worth testing: the CMRR spans tens of dB over it
    assert spice_db.max() - spice_db.min() > 40


@pytest.mark.oracle
def test_worst_case_cmrr_is_the_worst_ngspice_corner(ngspice):
    # Difference amplifier (4 resistors, 1 %) behind a filter (2 R, 2 C): 64 corners, each op-amp
    # CMRR sign both ways; ngspice solves every corner at three frequencies.
    from spice_ac import ac_gain
    sub = diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.001)
    sub.resistors += [res("RFP", "SRC_P", "FP", 1e3, 0.01), res("RFN", "SRC_N", "FN", 1e3, 0.01)]
    sub.capacitors = [cap("CCP", "FP", "GND", 4.7e-9, 0.05), cap("CCN", "FN", "GND", 4.7e-9, 0.05)]
    sub.resistors[0].a, sub.resistors[2].a = "FN", "FP"
    sub.ports["in_p"], sub.ports["in_n"] = "SRC_P", "SRC_N"
    freqs = [50.0, 5e3, 50e3]
    dyn = [OpAmpDynamics(cmrr_db=90.0)]
    s = cf.cmrr_sweep(sub, freqs, dyn)
    parts = [(r.name, r.ohms.value, r.tol.value) for r in sub.resistors] + \
            [(c.name, c.farads.value, c.tol.value) for c in sub.capacitors]
    cases = [{n: v * (1 + x * t) for (n, v, t), x in zip(parts, xs)}
             for xs in itertools.product((-1, 1), repeat=len(parts))]
    worst = np.zeros(len(freqs))
    for sign in (1, -1):
        cm = np.array(ac_gain(sub, freqs, "cm", cases=cases, dynamics=dyn, cmrr_sign=sign))
        worst = np.maximum(worst, np.abs(cm).reshape(len(cases), len(freqs)).max(axis=0))
    ad = cf.cmrr_sweep(sub, freqs, dyn, worst=False).ad
    np.testing.assert_allclose(s.worst_db, cf.to_db(ad, worst), atol=0.01)
