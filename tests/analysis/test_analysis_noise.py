"""Noise of a stage: Johnson noise and a hand-worked difference-amplifier case, 1/f integration
against direct numerical integration, and whole stages against ngspice `.noise`."""

from __future__ import annotations

import math

import numpy as np
import pytest

from frontcheck.analysis.noise import (BOLTZMANN, CREST_FACTOR, OpAmpNoise, band_power, integrate_psd,
                                       johnson_density, max_en_for, stage_noise)
from frontcheck.analysis.small_signal import OpAmpDynamics
from spice import diff_amp, res, three_opamp


def test_boltzmann_constant_is_the_si_value():
    # SI Brochure, 9th ed. (2019): k = 1.380649e-23 J/K exactly.
    assert BOLTZMANN == 1.380649e-23


def test_johnson_noise_of_1k_at_300k():
    # 4kTR with k = 1.380649e-23 J/K (Johnson 1928, Nyquist 1928): 1 kohm at 300 K ->
    # sqrt(4 * 1.380649e-23 * 300 * 1000) = 4.0704 nV/rtHz; the trade's "4 nV/rtHz per kohm
    # at room temperature" (common practice).
    assert johnson_density(1e3, 300.0) == pytest.approx(4.0704e-9, rel=1e-4)
    # 10 kohm at 290 K (the IEEE standard noise temperature): sqrt(4 k 290 1e4) = 12.655 nV/rtHz
    assert johnson_density(1e4, 290.0) == pytest.approx(12.655e-9, rel=1e-4)
    # vectorised
    np.testing.assert_allclose(johnson_density([1e3, 4e3], 300.0), [4.0704e-9, 8.1408e-9], rtol=1e-4)


def test_one_over_f_integral_against_numerical_integration():
    # en^2 (fH - fL + fc ln(fH/fL)) (Motchenbacher & Connelly) against the density integrated
    # numerically on a fine logarithmic grid (trapezoid in f), independent of the closed form.
    en, fc, lo, hi = 10e-9, 30.0, 0.1, 10.0
    f = np.geomspace(lo, hi, 200001)
    s = en ** 2 * (1 + fc / f)
    numeric = float(np.sum(0.5 * (s[1:] + s[:-1]) * np.diff(f)))
    assert band_power(en, lo, hi, fc) == pytest.approx(numeric, rel=1e-6)
    # and the piecewise power-law integrator is exact on it with a coarse grid
    g = np.geomspace(lo, hi, 5)
    assert integrate_psd(g, en ** 2 * np.ones_like(g)) + integrate_psd(g, en ** 2 * fc / g) == \
        pytest.approx(numeric, rel=1e-6)


def test_one_over_f_from_dc_is_refused():
    with pytest.raises(ValueError, match="lower edge"):
        band_power(1e-9, 0.0, 10.0, 5.0)
    assert band_power(1e-9, 0.0, 100.0) == pytest.approx(1e-18 * 100)


def test_difference_amp_by_hand():
    # Derived by hand: no textbook's printed op-amp noise example could be checked here, so the
    # same numbers are also reproduced by ngspice `.noise` (test_hand_case_confirmed_by_ngspice).
    # G = 10 difference amplifier,
    # R1 = R3 = 1 k, R2 = R4 = 10 k, en = 8 nV/rtHz, in = 0.2 pA/rtHz, white, T = 300 K.
    # Output density^2 = 4kT R1 G^2 + 4kT R2 + 4kT (R3||R4) (1+G)^2 + en^2 (1+G)^2
    #                    + (in R2)^2 + (in (R3||R4)(1+G))^2     (formula: Horowitz & Hill 3rd ed.
    # ch. 8 summing of uncorrelated sources), 4kT = 1.6567788e-20:
    #   1.6567788e-15 + 1.6567788e-16 + 1.8224567e-15 + 7.744e-15 + 4e-18 + 4e-18
    #   = 11.396913e-15 V^2/Hz -> 106.756 nV/rtHz at the output, 10.6756 nV/rtHz at the input.
    # Band 0.1 .. 10 Hz (9.9 Hz): RTI RMS = 10.6756e-9 * sqrt(9.9) = 33.590 nV; p-p x 6.6 = 221.69 nV.
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    r = stage_noise(sub, (0.1, 10.0), 300.0, [OpAmpNoise(en=8e-9, in_=0.2e-12)])
    assert r.out_rms_v == pytest.approx(106.756e-9 * math.sqrt(9.9), rel=1e-4)
    assert r.rti_rms_v == pytest.approx(33.590e-9, rel=1e-4)
    assert r.rti_pp_v == pytest.approx(221.69e-9, rel=1e-4)
    assert CREST_FACTOR == 6.6
    by_name = {s.name: s for s in r.sources}
    assert by_name["U1A en"].out_v2 == pytest.approx(7.744e-15 * 9.9, rel=1e-6)
    assert by_name["R2"].out_v2 == pytest.approx(1.6567788e-16 * 9.9, rel=1e-6)
    assert r.sources[0].name == "U1A en"          # largest first


def test_noiseless_opamp_leaves_only_resistors():
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    r = stage_noise(sub, (0.0, 1000.0), 300.0, None)
    assert {s.kind for s in r.sources} == {"resistor"}
    # output density^2 of the four resistors alone: 1.6567788e-15 + 1.6567788e-16 + 1.8224567e-15
    assert r.out_rms_v == pytest.approx(math.sqrt(3.6449135e-15 * 1000), rel=1e-5)


def test_max_en_requirement_fits_the_budget():
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    band = (0.1, 10.0)
    resistors = stage_noise(sub, band, 300.0, None)
    unit = stage_noise(sub, band, 300.0, [OpAmpNoise(en=1.0)])
    en_gain2 = sum(s.rti_v2 for s in unit.sources if s.kind == "en") / band_power(1.0, *band)
    en = max_en_for(50e-9, resistors.rti_rms_v ** 2, en_gain2, band)
    again = stage_noise(sub, band, 300.0, [OpAmpNoise(en=en)])
    assert again.rti_rms_v == pytest.approx(50e-9, rel=1e-9)
    assert max_en_for(1e-9, resistors.rti_rms_v ** 2, en_gain2, band) is None


# ---------------------------------------------------------------------------------- ngspice

def _inamp_with_source():
    s = three_opamp(rf=24.9e3, rg=499.0, ra=10e3, rb=10e3, tol=0.001)
    # a 350 ohm bridge leg in each input, so the first stage's current noise matters
    s.resistors += [res("RSP", "SRC_P", "IN_P2", 350.0), res("RSN", "SRC_N", "IN_N2", 350.0)]
    s.opamps[0].inp, s.opamps[1].inp = "IN_P2", "IN_N2"
    s.ports["in_p"], s.ports["in_n"] = "SRC_P", "SRC_N"
    return s


CASES = {
    "difference, 1/f corners, 0.1-10 Hz": (
        diff_amp(2e3, 20e3, 2e3, 20e3), (0.1, 10.0),
        [OpAmpNoise(8e-9, 0.4e-12, 10.0, 100.0)], [OpAmpDynamics(aol=1e9)]),
    "three-op-amp with source legs, 1/f, 0.1-10 Hz": (
        _inamp_with_source(), (0.1, 10.0),
        [OpAmpNoise(10e-9, 1e-12, 5.0, 50.0)] * 3, [OpAmpDynamics(aol=1e9)] * 3),
    "three-op-amp, GBW 1 MHz, 1 Hz-100 kHz": (
        three_opamp(rf=24.9e3, rg=499.0, tol=0.001), (1.0, 1e5),
        [OpAmpNoise(8e-9, 0.2e-12, 10.0, 100.0)] * 3, [OpAmpDynamics(aol=1e9, gbw_hz=1e6)] * 3),
}


@pytest.mark.oracle
@pytest.mark.parametrize("name", list(CASES))
def test_integrated_noise_matches_ngspice(ngspice, name):
    from spice_ac import deck, noise_totals, _run
    sub, band, nz, dyn = CASES[name]
    kelvin = 300.15        # ngspice's default 27 degC
    r = stage_noise(sub, band, kelvin, nz, dyn)
    out, rti = noise_totals(sub, band, per_decade=50, noise=nz, dynamics=dyn, kelvin=kelvin)
    assert r.out_rms_v == pytest.approx(out, rel=0.01)
    if not any(d.gbw_hz for d in dyn):
        assert r.rti_rms_v == pytest.approx(rti, rel=0.01)
    else:
        # Where the gain falls inside the band ngspice's inoise_total is not the integral of
        # its own inoise_spectrum (2 % apart here); integrate that spectrum, on a fine grid,
        # by the trapezoid rule.
        lines = deck(sub, drive="dm", noise=nz, dynamics=dyn, kelvin=kelvin)
        lines += [".control", f"noise v(n_out) VDP dec 400 {band[0]!r} {band[1]!r}", "setplot noise1",
                  "print inoise_spectrum", ".endc", ".end"]
        rows = [ln.split() for ln in _run(lines).splitlines() if ln[:1].isdigit() and "\t" in ln]
        f, s = np.array([[float(x[1]), float(x[2])] for x in rows]).T
        numeric = math.sqrt(float(np.sum(0.5 * (s[1:] ** 2 + s[:-1] ** 2) * np.diff(f))))
        assert r.rti_rms_v == pytest.approx(numeric, rel=0.01)
    # and the op-amp noise is a real part of it (the case tests more than the resistors)
    assert any(s.kind == "en" and s.out_v2 > 0.05 * r.out_rms_v ** 2 for s in r.sources)


@pytest.mark.oracle
def test_hand_case_confirmed_by_ngspice(ngspice):
    # The hand-worked case above (106.756 nV/rtHz at the output, 33.590 nV RMS at the input over
    # 0.1..10 Hz at 300 K) from ngspice `.noise` of the same circuit: the oracle stands in for a
    # published worked example of en, in and the resistors' 4kTR through the noise gain.
    from spice_ac import noise_totals
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    nz, dyn = [OpAmpNoise(en=8e-9, in_=0.2e-12)], [OpAmpDynamics(aol=1e9)]
    out, rti = noise_totals(sub, (0.1, 10.0), per_decade=50, noise=nz, dynamics=dyn, kelvin=300.0)
    assert out == pytest.approx(106.756e-9 * math.sqrt(9.9), rel=1e-3)
    assert rti == pytest.approx(33.590e-9, rel=1e-3)
    r = stage_noise(sub, (0.1, 10.0), 300.0, nz, dyn)
    assert r.rti_rms_v == pytest.approx(rti, rel=1e-3)
