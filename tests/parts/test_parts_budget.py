"""Error-budget numbers of parts: op-amp GBW, Vos Drift, Ios, en, in, 1/f corners and network
TCR / TCR Tracking, from symbol fields and the project part file. Check values are unit
arithmetic (SI Brochure, 9th ed.: 1 nV = 1e-9 V, 1 MHz = 1e6 Hz; 1 ppm = 1e-6)."""

from __future__ import annotations

import pytest

from frontcheck.budget_units import parse_quantity
from frontcheck.errors import InputError
from frontcheck.parts import PART_FILE, PartLibrary
from test_parts import opamp, project, two_pin


@pytest.mark.parametrize("q,text,value", [
    ("Hz", "1 MHz", 1e6), ("Hz", "10MHz", 1e7), ("Hz", "2.5 kHz", 2.5e3), ("Hz", "10 Hz", 10.0),
    ("V/rtHz", "8 nV/rtHz", 8e-9), ("V/rtHz", "8nV/\u221aHz", 8e-9), ("V/rtHz", "12 nV/sqrt(Hz)", 12e-9),
    ("A/rtHz", "0.2 pA/rtHz", 0.2e-12), ("A/rtHz", "10 pA/rtHz", 10e-12),
    ("V/K", "1 uV/K", 1e-6), ("V/K", "0.5 \u00b5V/\u00b0C", 0.5e-6), ("V/K", "0.05 uV/degC", 0.05e-6),
])
def test_parse_quantity(q, text, value):
    assert parse_quantity(q, text) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("q,text", [
    ("Hz", "1"), ("Hz", "1 mHz"), ("V/rtHz", "8"), ("V/rtHz", "8 nV"), ("V/rtHz", "8 pA/rtHz"),
    ("A/rtHz", "0.2 pV/rtHz"), ("V/K", "1 uV"), ("V/K", "1 uA/K"), ("V/K", "-1 uV/K"),
])
def test_parse_quantity_rejects(q, text):
    with pytest.raises(ValueError):
        parse_quantity(q, text)


def test_opamp_budget_numbers_from_fields():
    lib = PartLibrary.load(None)
    m = lib.opamp_model(opamp(**{"GBW": "10 MHz", "Vos Drift": "0.5 uV/K", "Ios": "50 pA",
                                 "en": "8 nV/rtHz", "in": "0.2 pA/rtHz", "1/f Corner": "10 Hz",
                                 "in 1/f Corner": "100 Hz"}))
    assert m.gbw.value == pytest.approx(1e7) and m.gbw.source == "field"
    assert m.vos_drift.value == pytest.approx(0.5e-6) and m.ios.value == pytest.approx(50e-12)
    assert m.en.value == pytest.approx(8e-9) and m.in_.value == pytest.approx(0.2e-12)
    assert m.en_corner.value == 10.0 and m.in_corner.value == 100.0
    assert m.en.detail == "en field of U1"


def test_opamp_without_budget_numbers_leaves_them_unknown():
    # no part data at all: no model (ideal in the figures); a chosen class without them
    assert PartLibrary.load(None).opamp_model(opamp()) is None
    m = PartLibrary.load(None).opamp_model(opamp(**{"Part Class": "general-purpose"}))
    assert m.gbw is None and m.en is None and m.in_ is None and m.vos_drift is None and m.ios is None


def test_budget_numbers_from_project_part_file(tmp_path):
    d = project(tmp_path, """
        [opamp.lab-low-noise]
        base = "precision-bipolar"
        gbw = "8 MHz"
        en = "3 nV/rtHz"
        en_corner = "2.5 Hz"

        [[match]]
        value = "AMP-3*"
        class = "lab-low-noise"
        vos_drift = "0.3 uV/K"

        [network.lab-thin-film]
        abs_tol = 0.001
        ratio_tol = 0.0005
        tcr = "25 ppm/K"
        tcr_tracking = "2 ppm/K"

        [[match]]
        ref = "RN*"
        class = "lab-thin-film"
    """)
    lib = PartLibrary.load(d)
    m = lib.opamp_model(opamp(value="AMP-300"))
    assert m.gbw.value == pytest.approx(8e6) and m.gbw.source == "project"
    assert m.en.value == pytest.approx(3e-9) and m.en_corner.value == pytest.approx(2.5)
    assert m.vos_drift.value == pytest.approx(0.3e-6)
    assert m.vos_drift.detail == f"{PART_FILE} match value 'AMP-3*'"
    n = lib.network_model(two_pin("RN1", "Device:R_Pack04"))
    assert n.tcr.value == pytest.approx(25e-6) and n.tcr_tracking.value == pytest.approx(2e-6)


def test_malformed_budget_field_is_located():
    with pytest.raises(InputError) as e:
        PartLibrary.load(None).opamp_model(opamp(en="8"))
    assert "'en'" in str(e.value) and "amp.kicad_sch" in str(e.value) and "nV/rtHz" in str(e.value)


def test_inamp_gain_drift_from_a_field():
    # 'Gain Drift' of an integrated in-amp: 20 ppm/K = 2e-5 /K, carried with its part numbers
    lib = PartLibrary.load(None)
    m = lib.inamp_model(opamp(**{"Part Class": "generic-inamp", "Gain Drift": "20 ppm/K"}))
    assert m is not None and m.opamp is not None
    assert m.opamp.gain_drift.value == pytest.approx(2e-5, rel=1e-12)
    assert m.opamp.gain_drift.source == "field"
    # an op-amp has no such number: the field is not read for one
    assert lib.opamp_model(opamp(**{"Gain Drift": "20 ppm/K"})) is None
