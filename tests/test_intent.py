"""Operating intent from symbol fields and frontcheck.toml [stage.<ref>] tables.

Check values are unit arithmetic only (SI Brochure, 9th ed.: 1 mV = 1e-3 V) and the
decibel definition for voltage ratios, 20 log10(G) (IEC 60027-3 / any circuits text:
40 dB = x100).
"""

from __future__ import annotations

import textwrap

import pytest

from frontcheck.config import CONFIG_NAME, load_config
from frontcheck.errors import InputError
from frontcheck.intent import parse_cmrr_db, parse_gain, parse_range, parse_volts, stage_intent
from frontcheck.netlist import Component, Location


def _amp(ref="U3", **fields):
    return Component(ref=ref, value="INAMP", lib_id="lib:INAMP",
                     fields={"Reference": ref, "Value": "INAMP", **fields},
                     location=Location("front.kicad_sch", 120))


def _cfg(tmp_path, text):
    (tmp_path / CONFIG_NAME).write_text(textwrap.dedent(text), encoding="utf-8")
    return load_config(tmp_path)


@pytest.mark.parametrize("text,gain,tol", [
    ("100", 100.0, None), ("100 \u00b10.5%", 100.0, 0.005), ("100 +/-0.5 %", 100.0, 0.005),
    ("100 0.5%", 100.0, 0.005), ("40 dB", 100.0, None), ("100 V/V", 100.0, None),
    ("1e3", 1000.0, None), ("1.5", 1.5, None),
])
def test_parse_gain(text, gain, tol):
    g, t = parse_gain(text)
    assert g == pytest.approx(gain) and t == (None if tol is None else pytest.approx(tol))


@pytest.mark.parametrize("text", ["", "high", "-10", "0", "100 \u00b1150%", "100 mV"])
def test_parse_gain_rejects(text):
    with pytest.raises(ValueError):
        parse_gain(text)


def test_parse_cmrr_and_volts():
    assert parse_cmrr_db("80 dB") == 80.0 and parse_cmrr_db("96.5dB") == 96.5
    for bad in ("80", "80 %", "-3 dB", "dB"):
        with pytest.raises(ValueError):
            parse_cmrr_db(bad)
    assert parse_volts("2.5 V") == 2.5 and parse_volts("20 mV") == pytest.approx(0.02)
    with pytest.raises(ValueError, match="no unit"):
        parse_volts("2.5")


@pytest.mark.parametrize("text,lo,hi", [
    ("2.5 V", 2.5, 2.5), ("1..4 V", 1.0, 4.0), ("-10 V .. 10 V", -10.0, 10.0),
    ("\u00b120 mV", -0.02, 0.02), ("+/-10 V", -10.0, 10.0), ("-5..20 mV", -0.005, 0.02),
    ("2.5 V \u00b1 1 V", 1.5, 3.5), ("0 V..50 mV", 0.0, 0.05), ("1 V..4 V", 1.0, 4.0),
])
def test_parse_range(text, lo, hi):
    assert parse_range(text) == (pytest.approx(lo), pytest.approx(hi))


@pytest.mark.parametrize("text", ["1..4", "20", "4..1 V", "1..2..3 V", "\u00b1-1 V", "low"])
def test_parse_range_rejects(text):
    with pytest.raises(ValueError):
        parse_range(text)


def test_intent_from_symbol_fields():
    c = _amp(**{"Target Gain": "100 \u00b10.5%", "Min CMRR": "80 dB", "Input CM": "1..4 V",
                "Input Diff": "\u00b120 mV", "Ref Voltage": "2.5 V",
                "Caution": "patient-connected, Mains"})
    i = stage_intent(c)
    assert i.target_gain == 100.0 and i.gain_tol == pytest.approx(0.005)
    assert i.min_cmrr_db == 80.0
    assert i.input_cm == (1.0, 4.0) and i.input_diff == (pytest.approx(-0.02), pytest.approx(0.02))
    assert i.ref_voltage == 2.5
    assert i.notes == ["patient-connected", "mains"]
    assert i.source["target_gain"] == "field 'Target Gain' on U3"
    assert i.source["gain_tol"] == "field 'Target Gain' on U3"
    assert set(i.source) == {"target_gain", "gain_tol", "min_cmrr_db", "input_cm", "input_diff",
                             "ref_voltage", "notes"}


def test_field_names_are_case_insensitive_and_undeclared_stays_none():
    i = stage_intent(_amp(**{"target gain": "10", "INPUT-CM": "2.5 V"}))
    assert i.target_gain == 10.0 and i.input_cm == (2.5, 2.5)
    assert i.gain_tol is None and i.min_cmrr_db is None and i.ref_voltage is None
    assert i.notes == [] and set(i.source) == {"target_gain", "input_cm"}


def test_intent_from_project_file(tmp_path):
    cfg = _cfg(tmp_path, """
        [stage.U3]
        target_gain = 100
        gain_tol = "0.5%"
        min_cmrr_db = 90
        input_cm = [1.0, 4.0]
        input_diff = "-5..20 mV"
        ref_voltage = 2.5
        notes = ["mains"]
    """)
    i = stage_intent(_amp(), cfg)
    assert (i.target_gain, i.gain_tol, i.min_cmrr_db) == (100.0, pytest.approx(0.005), 90.0)
    assert i.input_cm == (1.0, 4.0)
    assert i.input_diff == (pytest.approx(-0.005), pytest.approx(0.02))
    assert i.ref_voltage == 2.5 and i.notes == ["mains"]
    assert i.source["min_cmrr_db"] == "frontcheck.toml [stage.U3] min_cmrr_db"


def test_fields_and_project_combine_and_must_agree(tmp_path):
    cfg = _cfg(tmp_path, '[stage.U3]\nmin_cmrr = "80 dB"\ntarget_gain = "100"\n')
    i = stage_intent(_amp(**{"Target Gain": "100 \u00b11%"}), cfg)
    assert i.target_gain == 100.0 and i.gain_tol == pytest.approx(0.01)
    assert i.source["target_gain"].startswith("field") and i.source["min_cmrr_db"].startswith("frontcheck")
    with pytest.raises(InputError) as e:
        stage_intent(_amp(**{"Target Gain": "50"}), cfg)
    assert "contradicts" in e.value.message and e.value.line == 3


def test_stage_keyed_by_stage_id_and_several_packages(tmp_path):
    cfg = _cfg(tmp_path, '[stage."U1A/U1B/U1C"]\ninput_cm = "0 V .. 3 V"\n')
    i = stage_intent([_amp("U1"), _amp("U2", **{"Min CMRR": "70 dB"})], cfg, stage_id="U1A/U1B/U1C")
    assert i.input_cm == (0.0, 3.0) and i.min_cmrr_db == 70.0
    assert i.source["min_cmrr_db"] == "field 'Min CMRR' on U2"


@pytest.mark.parametrize("field,text", [
    ("Target Gain", "high"), ("Min CMRR", "80"), ("Input CM", "1..4"), ("Input Diff", "20"),
    ("Ref Voltage", "2.5"), ("Gain Tol", "0.5"),
])
def test_malformed_field_names_file_line_field_and_example(field, text):
    with pytest.raises(InputError) as e:
        stage_intent(_amp(**{field: text}))
    err = e.value
    assert (err.file, err.line) == ("front.kicad_sch", 120)
    assert field in err.message and "U3" in err.message and text in err.message
    assert err.hint and field in err.hint and "'" in err.hint     # an example of a good value


@pytest.mark.parametrize("body,line,fragment", [
    ('[stage.U3]\ntarget_gain = "lots"\n', 2, "target_gain"),
    ('[stage.U3]\n\nmin_cmrr = 80\n', 3, "ratio or dB"),
    ('[stage.U3]\ninput_cm = [4.0, 1.0]\n', 2, "backwards"),
    ('[stage.U3]\ninput_cm = [1.0]\n', 2, "two numbers"),
    ('[stage.U3]\ntarget_gian = 10\n', 2, "unknown key"),
    ('[stage.U3]\nref_voltage = true\n', 2, "ref_voltage"),
])
def test_malformed_project_entry_is_located(tmp_path, body, line, fragment):
    cfg = _cfg(tmp_path, body)
    with pytest.raises(InputError) as e:
        stage_intent(_amp(), cfg)
    assert fragment in e.value.message
    assert e.value.file == str(tmp_path / CONFIG_NAME) and e.value.line == line
    assert e.value.hint


def test_apply_intent_to_recognised_stages(tmp_path):
    from frontcheck.circuit import OpAmp, OpAmpModel, Sourced, Stage, SubCircuit
    from frontcheck.intent import apply_intent, unused_stage_tables
    from frontcheck.netlist import Netlist

    s = Sourced(0.0, "default")
    model = OpAmpModel("m", s, s, s, s, s, s)
    u1, u3 = _amp("U1", **{"Target Gain": "10"}), _amp("U3")
    nl = Netlist(components={"U1": u1, "U3": u3})
    discrete = Stage("U1A", "difference", ["R1", "U1"], ["U1A"], {},
                     SubCircuit(opamps=[OpAmp("U1A", "U1", "p", "n", "o", None, None, model)]))
    integrated = Stage("U3", "integrated-inamp", ["R9", "U3"], ["U3"], {}, SubCircuit())
    cfg = _cfg(tmp_path, '[stage.U3]\nref_voltage = 2.5\n[stage.U1A]\nmin_cmrr_db = 60\n')
    apply_intent([discrete, integrated], nl, cfg)
    assert discrete.intent.target_gain == 10.0 and discrete.intent.min_cmrr_db == 60.0
    assert discrete.intent.source["min_cmrr_db"] == "frontcheck.toml [stage.U1A] min_cmrr_db"
    assert integrated.intent.ref_voltage == 2.5 and integrated.intent.target_gain is None
    assert unused_stage_tables([discrete, integrated], nl, cfg) == []
    cfg = _cfg(tmp_path, '[stage.U33]\nref_voltage = 2.5\n[stage.U1]\nmin_cmrr_db = 60\n')
    assert unused_stage_tables([discrete, integrated], nl, cfg) == ["U33"]
