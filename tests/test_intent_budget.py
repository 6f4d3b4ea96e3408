"""Error-budget intent: Band, Temp Range, CMRR At, Error Budget from symbol fields and
frontcheck.toml. Check values are unit arithmetic (SI Brochure, 9th ed.: 1 kHz = 1e3 Hz,
1 uV = 1e-6 V) and the percent (0.1 % = 0.001)."""

from __future__ import annotations

import textwrap

import pytest

from frontcheck.config import CONFIG_NAME, load_config
from frontcheck.errors import InputError
from frontcheck.intent import stage_intent
from frontcheck.intent_budget import parse_band, parse_error_budget, parse_frequency, parse_temp_range
from frontcheck.netlist import Component, Location


def _amp(ref="U3", **fields):
    return Component(ref=ref, value="INAMP", lib_id="lib:INAMP",
                     fields={"Reference": ref, "Value": "INAMP", **fields},
                     location=Location("front.kicad_sch", 120))


@pytest.mark.parametrize("text,lo,hi", [
    ("0.1..10 Hz", 0.1, 10.0), ("DC..1 kHz", 0.0, 1000.0), ("dc .. 1kHz", 0.0, 1000.0),
    ("10 Hz .. 2 kHz", 10.0, 2000.0), ("1..10 kHz", 1e3, 1e4), ("0.5 Hz..150 Hz", 0.5, 150.0),
    ("100 kHz..1 MHz", 1e5, 1e6),
])
def test_parse_band(text, lo, hi):
    assert parse_band(text) == (pytest.approx(lo), pytest.approx(hi))


@pytest.mark.parametrize("text", ["10 Hz", "10..1 Hz", "0.1..10", "1..2..3 Hz", "DC..0 Hz", "-1..10 Hz",
                                  "1 mHz..10 Hz"])
def test_parse_band_rejects(text):
    with pytest.raises(ValueError):
        parse_band(text)


@pytest.mark.parametrize("text,lo,hi", [
    ("-20..60 \u00b0C", -20.0, 60.0), ("-20..60 degC", -20.0, 60.0), ("-40 degC .. 85 degC", -40.0, 85.0),
    ("0..70 \u00b0 C", 0.0, 70.0), ("-55..125 C", -55.0, 125.0),
])
def test_parse_temp_range(text, lo, hi):
    assert parse_temp_range(text) == (lo, hi)


@pytest.mark.parametrize("text", ["-20..60", "60..-20 \u00b0C", "25 \u00b0C", "-300..0 \u00b0C", "0..70 K"])
def test_parse_temp_range_rejects(text):
    with pytest.raises(ValueError):
        parse_temp_range(text)


def test_parse_frequency_and_budget():
    assert parse_frequency("50 Hz") == 50.0 and parse_frequency("1.2 kHz") == pytest.approx(1200.0)
    for bad in ("50", "0 Hz", "fifty Hz", "5 mHz"):
        with pytest.raises(ValueError):
            parse_frequency(bad)
    assert parse_error_budget("0.1 % FS") == {"error_budget_fs": pytest.approx(0.001)}
    assert parse_error_budget("0.05% of FS") == {"error_budget_fs": pytest.approx(0.0005)}
    assert parse_error_budget("50 uV RTI") == {"error_budget_rti_v": pytest.approx(50e-6)}
    assert parse_error_budget("1 mV RTI") == {"error_budget_rti_v": pytest.approx(1e-3)}
    for bad in ("0.1 %", "50 uV", "50 RTI", "0 % FS", "150 % FS"):
        with pytest.raises(ValueError):
            parse_error_budget(bad)


def test_budget_intent_from_fields():
    it = stage_intent(_amp(**{"Band": "0.1..10 Hz", "Temp Range": "-20..60 \u00b0C", "CMRR At": "50 Hz",
                              "Error Budget": "0.1 % FS"}))
    assert it.band_hz == (0.1, 10.0) and it.temp_range_c == (-20.0, 60.0)
    assert it.cmrr_at_hz == 50.0 and it.error_budget_fs == pytest.approx(0.001)
    assert it.error_budget_rti_v is None
    assert it.source["band_hz"] == "field 'Band' on U3"
    assert it.source["error_budget_fs"] == "field 'Error Budget' on U3"


def test_budget_intent_from_project_file(tmp_path):
    (tmp_path / CONFIG_NAME).write_text(textwrap.dedent("""
        [stage.U3]
        band = [0.5, 150]
        temp_range = "-20..60 degC"
        cmrr_at_hz = 60
        error_budget = "50 uV RTI"
    """), encoding="utf-8")
    it = stage_intent(_amp(), load_config(tmp_path))
    assert it.band_hz == (0.5, 150.0) and it.temp_range_c == (-20.0, 60.0)
    assert it.cmrr_at_hz == 60.0 and it.error_budget_rti_v == pytest.approx(50e-6)
    assert it.source["cmrr_at_hz"] == "frontcheck.toml [stage.U3] cmrr_at_hz"


def test_budget_field_and_project_must_agree(tmp_path):
    (tmp_path / CONFIG_NAME).write_text('[stage.U3]\nband = "0.1..20 Hz"\n', encoding="utf-8")
    with pytest.raises(InputError, match="contradicts"):
        stage_intent(_amp(Band="0.1..10 Hz"), load_config(tmp_path))


@pytest.mark.parametrize("field,text", [("Band", "10 Hz"), ("Temp Range", "-20..60"),
                                        ("CMRR At", "50"), ("Error Budget", "0.1 %")])
def test_malformed_budget_field_names_file_line_field_and_example(field, text):
    with pytest.raises(InputError) as e:
        stage_intent(_amp(**{field: text}))
    msg = str(e.value)
    assert field in msg and "front.kicad_sch" in msg and "120" in msg


def test_malformed_budget_project_entry_is_located(tmp_path):
    (tmp_path / CONFIG_NAME).write_text('[stage.U3]\ntarget_gain = 10\ntemp_range = [60, -20]\n',
                                        encoding="utf-8")
    with pytest.raises(InputError) as e:
        stage_intent(_amp(), load_config(tmp_path))
    assert "temp_range" in str(e.value) and e.value.line == 3


def test_readme_budget_example_reads_as_the_readme_says(tmp_path):
    # The README's error-budget example, taken from the README itself: what it says the stage
    # is judged by (0.1 % of the 10 mV full scale is 10 uV RTI; unit arithmetic).
    from pathlib import Path
    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    section = readme[readme.index("### The error budget"):]
    block = section[section.index("```toml") + len("```toml"):section.index("```", section.index("```toml") + 7)]
    (tmp_path / CONFIG_NAME).write_text(block, encoding="utf-8")
    it = stage_intent(_amp(), load_config(tmp_path))
    assert it.band_hz == (0.1, 10.0) and it.temp_range_c == (-20.0, 60.0)
    assert it.cmrr_at_hz == 50.0 and it.min_cmrr_db == 90.0
    assert it.input_diff == (-0.01, 0.01) and it.input_cm == (2.4, 2.6)
    assert it.error_budget_fs == pytest.approx(0.001)
    assert it.error_budget_fs * max(abs(v) for v in it.input_diff) == pytest.approx(10e-6)
    assert "10 µV RTI" in section
