"""The offset, bias, noise and drift terms of a stage's error budget, and the requirements the
budget states when part numbers are missing. Check values are worked by hand from the closed
forms of docs/engineering.md sec. 11 (Vos through the noise gain, Ib through the resistance each
input sees, 4kTR, TCR x dT), unit arithmetic and the 6.6 x RMS crest factor (common practice)."""

from __future__ import annotations

import math

import pytest

from frontcheck.analysis.budget_terms import extend_budget
from frontcheck.circuit import Intent, OpAmpModel, Sourced, Stage
from spice import diff_amp

BASE = {"gain": {"worst": 0.2, "rss": 0.1}, "cmrr": {"worst": 0.05, "rss": 0.02}}


def _stage(model=None, **intent):
    sub = diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.001)
    if model is not None:
        sub.opamps[0].model = model
    it = Intent(input_diff=(-0.5, 0.5), input_cm=(-1.0, 1.0), **intent)
    return Stage("U1A", "difference", ["R1", "R2", "R3", "R4", "U1"], ["U1A"], {}, sub, it)


def _model(**numbers):
    """An op-amp ideal in gain and CMRR (as one with no part data is) with the given numbers."""
    inf, zero = Sourced(math.inf, "field"), Sourced(0.0, "field")
    return OpAmpModel("part data", inf, inf, zero, zero, zero, zero,
                      **{k: Sourced(v, "field", f"{k} field of U1") for k, v in numbers.items()})


def test_known_numbers_give_values_in_volts_and_percent_of_full_scale():
    # G = 10, max |Vd| = 0.5 V (full scale 5 V out). Vos 100 uV through noise gain 11: 1.1 mV out,
    # 110 uV RTI = 0.022 % FS. Ib 10 nA, Ios 1 nA: only Ios acts (equal 909 ohm at both inputs):
    # 11 * 1 nA * 909.09 = 10 uV out, 1 uV RTI = 0.0002 % FS.
    st = _stage(_model(vos=100e-6, ib=10e-9, ios=1e-9))
    out, _ = extend_budget(st, 10.0, BASE)
    assert out["offset"]["rti_v"]["worst"] == pytest.approx(110e-6, rel=1e-9)
    assert out["offset"]["worst"] == pytest.approx(0.022, rel=1e-9)
    assert out["offset"]["requirement"] is False
    assert out["bias"]["rti_v"]["worst"] == pytest.approx(1e-6, rel=1e-9)
    assert out["bias"]["worst"] == pytest.approx(0.0002, rel=1e-9)
    assert any("Vos 100 uV (field: vos field of U1)" in s for s in out["offset"]["sources"])
    # the existing terms gain their input-referred volts: 0.2 % of 0.5 V = 1 mV
    assert out["gain"]["rti_v"]["worst"] == pytest.approx(1e-3)
    # no band, no range declared: noise and drift are left out, not guessed
    assert "noise" not in out and "drift" not in out
    assert out["total"]["worst"] == pytest.approx(0.2 + 0.05 + 0.022 + 0.0002, rel=1e-9)


def test_noise_term_from_part_data_by_hand():
    # en = 8 nV/rtHz, in = 0.2 pA/rtHz, white, 0.1..10 Hz at 27 degC (top of Temp Range, 300.15 K).
    # White output density^2 (docs/engineering.md sec. 11) with 4kT = 1.6576e-20:
    # R1 G^2 1.6576e-15, R2 1.6576e-16, (R3||R4)(1+G)^2 1.8234e-15, en 7.744e-15, in 8e-18
    # = 1.13975e-14 V^2/Hz -> RTI 10.676 nV/rtHz x sqrt(9.9) = 33.591 nV RMS, 221.70 nV p-p.
    st = _stage(_model(en=8e-9, **{"in_": 0.2e-12}), band_hz=(0.1, 10.0), temp_range_c=(0.0, 27.0))
    out, _ = extend_budget(st, 10.0, BASE)
    n = out["noise"]
    assert n["rti_rms_v"] == pytest.approx(33.591e-9, rel=2e-4)
    assert n["rti_pp_v"] == pytest.approx(6.6 * n["rti_rms_v"])
    assert n["rti_v"]["worst"] == pytest.approx(3.3 * n["rti_rms_v"])        # peak = half p-p
    assert n["worst"] == pytest.approx(100 * 3.3 * n["rti_rms_v"] / 0.5)
    assert n["requirement"] is False


def test_missing_numbers_are_requirements_with_bounds_by_hand():
    # Error Budget 0.5 % FS of 0.5 V = 2.5 mV RTI; gain and CMRR use 0.25 % = 1.25 mV; four
    # terms lack numbers, each gets (2.5 - 1.25) / 4 = 312.5 uV RTI:
    #   Vos  <= 312.5 uV / 1.1                      = 284.09 uV
    #   Ib   <= 312.5 uV / ((10k + 10k) / 10 ohm)   = 156.25 nA (each input bounded alone)
    #   Vos drift (half the drift share, 45 K from 25 degC to -20 degC, noise gain 11 / G 10):
    #        <= 156.25 uV / (1.1 * 45 K)            = 3.1566 uV/K
    st = _stage(_model(), band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0), error_budget_fs=0.005)
    out, _ = extend_budget(st, 10.0, BASE)
    for k in ("offset", "bias", "noise", "drift"):
        assert out[k]["requirement"] is True and out[k]["worst"] is None
    assert out["offset"]["bound"]["quantity"] == "vos"
    assert out["offset"]["bound"]["max"] == pytest.approx(284.09e-6, rel=1e-4)
    assert out["bias"]["bound"]["max"] == pytest.approx(156.25e-9, rel=1e-9)
    tcr, vd = out["drift"]["bound"]
    assert tcr["quantity"] == "tcr" and tcr["references"] == ["R1", "R2", "R3", "R4"]
    assert vd["quantity"] == "vos_drift" and vd["max"] == pytest.approx(3.1566e-6, rel=1e-4)
    # the noise bounds (en and in both missing: the room shared equally): with both the noise
    # peak (3.3 x RMS) fills its share exactly
    en_b, in_b = out["noise"]["bound"]
    assert (en_b["quantity"], in_b["quantity"]) == ("en", "in")
    en, i_n = en_b["max"], in_b["max"]
    st2 = _stage(_model(en=en, in_=i_n), band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0))
    again, _ = extend_budget(st2, 10.0, BASE)
    assert again["noise"]["rti_v"]["worst"] == pytest.approx(312.5e-6, rel=1e-6)
    # and the TCR bound likewise fills its half of the drift share
    for r in st2.circuit.resistors:
        r.tcr = Sourced(tcr["max"], "field", "TCR field")
    again, _ = extend_budget(st2, 10.0, BASE)
    assert again["drift"]["known_rti_v"]["worst"] == pytest.approx(156.25e-6, rel=0.02)


def test_only_current_noise_missing_is_a_requirement_on_in_by_hand():
    # en = 8 nV/rtHz given, in not: the noise term is a requirement on in, not in = 0.
    # G = 10 difference amp (R1 = R3 = 1k, R2 = R4 = 10k), 0.1..10 Hz (9.9 Hz), 25 degC
    # (no Temp Range: 298.15 K, 4kT = 1.6465620e-20 J). Vos, Ib given as 0: only noise is open.
    # RTI density^2 without in: (4kT (R1 G^2 + R2 + (R3||R4)(1+G)^2) + en^2 (1+G)^2) / G^2
    #   = (4kT x 2.2e5 ohm + 7.744e-15) / 100 = 1.1366436e-16 V^2/Hz -> x 9.9 = 1.1252772e-15 V^2.
    # Each input's in reaches the input as through 1 kohm ((R3||R4)(1+G)/G and R2/G), so
    # RTI power per (A^2/Hz) of in is 2e6 ohm^2. Error Budget 1.25 mV (gain, CMRR) + 3.3 uV:
    # the noise share 3.3 uV peak = 1 uV RMS, so in^2 <= (1e-12 - 1.1252772e-15) / (2e6 x 9.9)
    #   -> in <= 224.61 pA/rtHz.
    st = _stage(_model(en=8e-9, vos=0.0, ib=0.0, ios=0.0), band_hz=(0.1, 10.0),
                error_budget_rti_v=1.25e-3 + 3.3e-6)
    out, _ = extend_budget(st, 10.0, BASE)
    n = out["noise"]
    assert n["requirement"] is True and n["missing"] == ["U1A"]
    assert n["bound"]["quantity"] == "in" and n["bound"]["unit"] == "A/rtHz"
    assert n["bound"]["max"] == pytest.approx(224.61e-12, rel=1e-4)
    assert out["offset"]["requirement"] is False and out["bias"]["requirement"] is False
    # with that in the stage's noise peak fills the share exactly
    st2 = _stage(_model(en=8e-9, vos=0.0, ib=0.0, ios=0.0, in_=n["bound"]["max"]), band_hz=(0.1, 10.0))
    again, _ = extend_budget(st2, 10.0, BASE)
    assert again["noise"]["requirement"] is False
    assert again["noise"]["rti_rms_v"] == pytest.approx(1e-6, rel=1e-9)


def test_no_error_budget_means_no_bound_and_a_note():
    st = _stage(_model(), band_hz=(0.1, 10.0))
    out, notes = extend_budget(st, 10.0, BASE)
    assert out["offset"]["requirement"] is True and out["offset"]["bound"] is None
    assert any("no Error Budget declared" in n for n in notes)


def test_budget_already_spent_gives_no_bound():
    st = _stage(_model(), error_budget_rti_v=1e-3)       # gain and CMRR alone use 1.25 mV
    out, _ = extend_budget(st, 10.0, BASE)
    assert out["offset"]["bound"]["max"] is None
    assert "nothing left" in out["offset"]["bound"]["because"]


def test_opposite_tcrs_over_80k_in_the_budget():
    # R1, R3 at +25 ppm/K, R2, R4 at -25 ppm/K, known to their sign (hand case of
    # test_analysis_offset_drift): gain -0.3992 % at 105 degC -> as a bound both ways, the worst
    # corner of +-25 ppm/K parts is 0.4008 % of full scale; no op-amp drift given -> requirement.
    st = _stage(_model(vos_drift=0.0), temp_range_c=(25.0, 105.0))
    for r in st.circuit.resistors:
        r.tcr = Sourced(25e-6, "field", "TCR field")
    out, _ = extend_budget(st, 10.0, BASE)
    d = out["drift"]
    assert d["requirement"] is False
    # gain part 4.008016e-3 of 0.5 V plus the CM part |Acm| * 1 V / 10 (first order 7.27e-3 / 10)
    assert d["rti_v"]["worst"] == pytest.approx(4.008016e-3 * 0.5 + 7.27e-4, rel=0.01)


def test_inamp_gain_drift_from_part_data_and_external_rg_tcr_by_hand():
    # Integrated in-amp, G = 1 + K/RG with K = 50k, RG = 500 ohm -> 101. Part data: gain drift
    # 20 ppm/K (the part with its internal resistors); RG: TCR 25 ppm/K. Temp Range -20..60 degC
    # (45 K below 25 degC at most), Input Diff +-10 mV.
    #   part:  20e-6 /K x 45 K x 10 mV                                   = 9.0 uV RTI
    #   RG:    from the gain equation, RG (1 - 25e-6 x 45): K/RG = 100.112627, G = 101.112627,
    #          +0.111512 % of the gain (the larger of the two signs)    -> 11.1512 uV RTI
    # worst case added: 20.1512 uV [derived from the gain equation; worst-case sum of error
    # terms, docs/engineering.md sec. 11]. Internal CMRR drift has no part number: not in it.
    from frontcheck.recognise import find_stages
    from netlist_builder import NetlistBuilder
    from test_recognise_integrated import GENERIC_RG, FakeParts, inamp_ic

    part = dict(GENERIC_RG, opamp=OpAmpModel(
        "test in-amp class", vos_drift=Sourced(0.0, "class", "test class"),
        gain_drift=Sourced(20e-6, "class", "test in-amp class: gain drift")))
    nb = inamp_ic(NetlistBuilder()).r("R1", "RGA", "RGB", "500")
    (st,) = find_stages(nb.build(), FakeParts({"U3": part})).stages
    st.intent = Intent(input_diff=(-0.01, 0.01), input_cm=(2.0, 3.0), temp_range_c=(-20.0, 60.0))
    (rg,) = [r for r in st.circuit.resistors if r.name == "R1"]
    rg.tcr = Sourced(25e-6, "field", "TCR field of R1")
    out, _ = extend_budget(st, 101.0, {"gain": {"worst": 0.0, "rss": 0.0}})
    d = out["drift"]
    assert d["requirement"] is False
    g = 1 + 50e3 / (500 * (1 - 25e-6 * 45))
    assert g / 101 - 1 == pytest.approx(1.11512e-3, rel=1e-5)
    assert d["rti_v"]["worst"] == pytest.approx(9.0e-6 + 1.11512e-5, rel=1e-4)
    assert any("U3 gain drift 20 ppm/K" in s for s in d["sources"])
    # without the part's gain drift its internal resistors are unknown: a TCR requirement
    part["opamp"] = OpAmpModel("test in-amp class", vos_drift=Sourced(0.0, "class", "test class"))
    (st2,) = find_stages(nb.build(), FakeParts({"U3": part})).stages
    st2.intent = st.intent
    out, _ = extend_budget(st2, 101.0, {"gain": {"worst": 0.0, "rss": 0.0}})
    assert out["drift"]["requirement"] is True
    assert "U3 internal resistors" in out["drift"]["missing"]
