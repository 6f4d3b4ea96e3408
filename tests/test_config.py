"""Project configuration: profile + frontcheck.toml merge, rails from net names, waivers,
and located errors for bad TOML.

Outside references: Python's tomllib (the TOML 1.0 reader) for what is and is not valid TOML
and where it reports the error; KiCad's standard power-symbol names (+5V, -12V, +3V3, +1V8,
GND, GNDA, AGND, VCC, VDD, VSS, VEE) for the rail names - their voltages are what the names
say by common practice.
"""

from __future__ import annotations

import textwrap
import tomllib
from pathlib import Path

import pytest

from frontcheck.circuit import Sourced
from frontcheck.config import CONFIG_NAME, load_config, profile_names, rail_from_name
from frontcheck.errors import InputError

REPO = Path(__file__).resolve().parent.parent


def _project(tmp_path: Path, text: str) -> Path:
    (tmp_path / "amp.kicad_pro").write_text("{}", encoding="utf-8")
    (tmp_path / CONFIG_NAME).write_text(textwrap.dedent(text), encoding="utf-8")
    return tmp_path


def _profile_doc(name: str) -> dict:
    return tomllib.loads((REPO / "rules" / f"{name}.toml").read_text(encoding="utf-8"))


# ---------------------------------------------------------------------------- profiles

def test_default_profile_without_project_file(tmp_path):
    cfg = load_config(tmp_path)
    doc = _profile_doc("default")
    assert cfg.profile == "default"
    assert cfg.config_path is None
    assert cfg.rules == doc["rules"]            # read as written in rules/default.toml
    assert cfg.default_tolerance("resistor") == Sourced(0.01, "default", "default 1 % (built-in)")
    assert cfg.default_tolerance("capacitor").value == pytest.approx(0.10)
    assert cfg.rail_voltage("VCC") is None


def test_profiles_shipped_and_selectable():
    assert {"default", "strict"} <= set(profile_names())
    cfg = load_config(None, profile="strict")
    # strict extends default: its own keys over default's
    strict, default = _profile_doc("strict"), _profile_doc("default")
    assert strict["profile"]["extends"] == "default"
    expected = {rid: {**keys, **strict["rules"].get(rid, {})} for rid, keys in default["rules"].items()}
    assert cfg.profile == "strict" and cfg.rules == expected
    with pytest.raises(InputError, match="unknown rule profile"):
        load_config(None, profile="nonesuch")


def test_profile_named_in_project_file_and_command_line_wins(tmp_path):
    d = _project(tmp_path, 'profile = "strict"\n')
    assert load_config(d).profile == "strict"
    assert load_config(d, profile="default").profile == "default"


def test_profile_by_path(tmp_path):
    p = tmp_path / "mine.toml"
    p.write_text('[profile]\nname = "mine"\n[rules.assumed-value]\nseverity = "off"\n')
    cfg = load_config(None, profile=str(p))
    assert cfg.profile == "mine" and cfg.rules == {"assumed-value": {"severity": "off"}}
    # named in the project file: relative to the project file, not the working directory
    d = _project(tmp_path, 'profile = "mine.toml"\n')
    assert load_config(d).profile == "mine"


# ---------------------------------------------------------------------------- merge

def test_project_file_merges(tmp_path):
    d = _project(tmp_path, """
        [defaults]
        resistor_tolerance = "0.1%"
        capacitor_tolerance = 0.05
        opamp_class = "zero-drift"

        [rails]
        VCC = 3.3
        "+BATT" = "7.4 V"
        "+5V" = 4.9

        [stage.U3]
        target_gain = "100 +/-0.5%"

        [[waive]]
        rule = "bias-return"
        references = ["U3"]
        reason = "thermocouple grounded at the sensor end"

        [[parts.match]]
        value = "AMP-7*"
        class = "zero-drift"
    """)
    cfg = load_config(d)
    assert cfg.config_path == d / CONFIG_NAME
    assert cfg.files[-1] == str(d / CONFIG_NAME)
    assert cfg.default_tolerance() == Sourced(0.001, "default", "default 0.1 % (frontcheck.toml)")
    assert cfg.default_tolerance("capacitor").value == pytest.approx(0.05)
    assert cfg.default_opamp_class == "zero-drift"
    assert cfg.rail_voltage("VCC") == Sourced(3.3, "project", "frontcheck.toml [rails]")
    assert cfg.rail_voltage("+BATT").value == pytest.approx(7.4)
    assert cfg.rail_voltage("+5V").value == 4.9          # the project overrides the name
    assert cfg.rail_voltage("-12V").value == -12.0       # others still come from names
    assert cfg.stage_table("U3") == {"target_gain": "100 +/-0.5%"}
    assert cfg.stage_table("U4") is None
    assert cfg.parts == {"match": [{"value": "AMP-7*", "class": "zero-drift"}]}
    w = cfg.waived("bias-return", "U3/U4", ["U3", "R1"])
    assert w is not None and w.reason.startswith("thermocouple") and w.line == 15
    assert cfg.waived("bias-return", "U9", ["U9"]) is None
    assert cfg.line_of("stage.U3", "target_gain") == 13


def test_waivers_as_tables_keyed_by_rule(tmp_path):
    # the second spelling: [waive.<rule-id>] (TOML cannot mix it with [[waive]] in one file)
    d = _project(tmp_path, """
        [waive.ref-floating]
        stage = "U7"
        reason = "REF driven on the daughter board"
    """)
    cfg = load_config(d)
    assert cfg.waived("ref-floating", "U7", ["U7"]).reason == "REF driven on the daughter board"
    assert cfg.waived("ref-floating", "U8", ["U8"]) is None
    assert cfg.waivers[0].line == 2


def test_rule_overrides_merge_key_by_key(tmp_path):
    strict = _profile_doc("strict")["rules"]["ratio-mismatch"]
    assert {"within_band_severity", "min_mismatch"} <= set(strict)
    d = _project(tmp_path, 'profile = "strict"\n[rules.ratio-mismatch]\nwithin_band_severity = "off"\n')
    cfg = load_config(d)
    assert cfg.rule("ratio-mismatch")["within_band_severity"] == "off"
    # untouched keys keep the profile's
    assert cfg.rule("ratio-mismatch")["min_mismatch"] == strict["min_mismatch"]
    # the profile itself is not changed by a project's override
    again = load_config(None, profile="strict").rule("ratio-mismatch")["within_band_severity"]
    assert again == strict["within_band_severity"]


def test_unknown_rule_in_overrides_is_an_error(tmp_path):
    d = _project(tmp_path, '\n[rules.no-such-rule]\nseverity = "off"\n')
    with pytest.raises(InputError) as e:
        load_config(d)
    assert e.value.file == str(d / CONFIG_NAME) and e.value.line == 2


# ---------------------------------------------------------------------------- errors

def test_bad_toml_names_file_line_and_column(tmp_path):
    text = 'profile = "default"\n[rails]\nVCC = 3.3.3\n'
    d = _project(tmp_path, text)
    with pytest.raises(tomllib.TOMLDecodeError) as ref:    # the oracle: tomllib itself
        tomllib.loads(text)
    with pytest.raises(InputError) as e:
        load_config(d)
    assert e.value.file == str(d / CONFIG_NAME)
    assert e.value.line == 3 and e.value.column is not None
    assert f"line {e.value.line}, column {e.value.column}" in str(ref.value)
    assert e.value.hint


@pytest.mark.parametrize("text,line,fragment", [
    ("[rail]\nVCC = 3.3\n", 1, "unknown setting 'rail'"),
    ("\n[rails]\nVCC = \"three\"\n", 3, "[rails]"),
    ("[defaults]\nresistor_tolerance = 1\n", 2, "fraction"),
    ("[defaults]\nresistor_tolerance = \"1\"\n", 2, "no % sign"),
    ("[defaults]\nwire_gauge = 3\n", 2, "unknown setting"),
    ("[[waive]]\nrule = \"x\"\n\n[[waive]]\nrule = \"bias-return\"\n", 1, "no reason"),
    ("[[waive]]\nrule = \"x\"\nreason = \"ok\"\n[[waive]]\nrule = \"y\"\n", 4, "no reason"),
    ("[[waive]]\nreason = \"ok\"\n", 1, "needs the rule"),
    ("[stage]\nU3 = 5\n", 2, "[stage.U3] must be a table"),
    ("profile = 3\n", 1, "profile"),
])
def test_bad_content_is_located(tmp_path, text, line, fragment):
    d = _project(tmp_path, text)
    with pytest.raises(InputError) as e:
        load_config(d)
    assert fragment in e.value.message
    assert e.value.file == str(d / CONFIG_NAME)
    assert e.value.line == line
    assert e.value.hint


def test_explicit_config_file(tmp_path):
    p = tmp_path / "other.toml"
    p.write_text("[rails]\nVDD = 1.8\n")
    assert load_config(None, config_file=p).rail_voltage("VDD").value == 1.8
    with pytest.raises(InputError, match="not found"):
        load_config(None, config_file=tmp_path / "missing.toml")


# ---------------------------------------------------------------------------- rails

@pytest.mark.parametrize("name,volts", [
    ("+5V", 5.0), ("-12V", -12.0), ("+12V", 12.0), ("+3V3", 3.3), ("3.3V", 3.3),
    ("+3.3V", 3.3), ("+1V8", 1.8), ("+1V1", 1.1), ("-5V", -5.0), ("+3.3VA", 3.3),
    ("+5VD", 5.0), ("+2V5", 2.5), ("GND", 0.0), ("GNDA", 0.0), ("GNDD", 0.0), ("AGND", 0.0),
    ("DGND", 0.0), ("0V", 0.0), ("gnd", 0.0),
])
def test_rail_from_name(name, volts):
    r = rail_from_name(name)
    assert r is not None and r.value == pytest.approx(volts)
    assert r.source == "value" and repr(name)[1:-1] in r.detail


@pytest.mark.parametrize("name", [
    "VCC", "VDD", "VSS", "VEE", "+BATT", "-BATT", "+VUSB", "VBUS", "GNDS", "Earth",
    "/amp/+5V", "V/2", "Net-(U1-Pad3)", "", "+V", "5", "3V3V",
])
def test_rail_names_that_say_nothing(name):
    # VSS is the negative rail of many split supplies: only GND-like names are 0 V.
    assert rail_from_name(name) is None
