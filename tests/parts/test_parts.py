"""Part classes, the project's part data, override order, and which component is what.

Outside references: docs/test-corpus.md sec. 2 (written from reading each real design) says which
parts are op-amps, integrated in-amps, difference amplifiers and comparators; KiCad 9's own
netlist export (shared/tools/kicad9) is the independent reader for those designs, and its pin
lists carry no unit data, so op-amp units must come out the same as from the schematic's units.
Part names in the tests are invented; shipped class numbers are compared only with themselves.
"""

from __future__ import annotations

import subprocess
import textwrap
import tomllib
from pathlib import Path

import pytest

from frontcheck.circuit import OpAmpModel, Sourced
from frontcheck.config import CONFIG_NAME, load_config
from frontcheck.errors import InputError
from frontcheck.netlist import Component, Location, Pin
from frontcheck.component import classify, looks_like_inamp, opamp_units, pin_roles
from frontcheck.parts import BUDGET_KEYS, FIELD_NAMES, NUMBER_KEYS, PART_FILE, PartLibrary

REPO = Path(__file__).resolve().parents[2]


# ---------------------------------------------------------------------------- builders

def _pins(spec: list[tuple[str, str, str, int]]) -> dict[str, Pin]:
    return {n: Pin(n, name, typ, unit) for n, name, typ, unit in spec}


def opamp(ref="U1", value="AMP-100", lib_id="Amplifier_Operational:AMP-100", **fields):
    """A single op-amp drawn as KiCad's standard symbols draw it: output unnamed."""
    pins = _pins([("1", "~", "output", 0), ("2", "-", "input", 0), ("3", "+", "input", 0),
                  ("4", "V-", "power_in", 0), ("7", "V+", "power_in", 0)])
    return Component(ref, value, lib_id, fields={"Value": value, **fields}, pins=pins,
                     location=Location("amp.kicad_sch", 33))


def quad(ref="U2", with_units=True):
    spec = []
    for u, (i, n, o) in enumerate([("3", "2", "1"), ("5", "6", "7"), ("10", "9", "8"),
                                   ("12", "13", "14")], start=1):
        unit = u if with_units else 0
        spec += [(i, "+", "input", unit), (n, "-", "input", unit), (o, "~", "output", unit)]
    spec += [("4", "V+", "power_in", 5 if with_units else 0), ("11", "V-", "power_in", 5 if with_units else 0)]
    return Component(ref, "QUAD-1", "Amplifier_Operational:QUAD-1", pins=_pins(spec))


def inamp(ref="U3", value="INA-X", lib_id="lab:INA-X", **fields):
    pins = _pins([("1", "RG", "passive", 0), ("2", "-IN", "input", 0), ("3", "+IN", "input", 0),
                  ("4", "-VS", "power_in", 0), ("5", "REF", "input", 0), ("6", "VOUT", "output", 0),
                  ("7", "+VS", "power_in", 0), ("8", "RG", "passive", 0)])
    return Component(ref, value, lib_id, fields={"Value": value, **fields}, pins=pins,
                     location=Location("front.kicad_sch", 50))


def diffamp(ref="U5", value="LR-1", **fields):
    pins = _pins([("1", "Ref", "input", 0), ("2", "IN-", "input", 0), ("3", "IN+", "input", 0),
                  ("4", "Vee", "power_in", 0), ("5", "SNS", "input", 0), ("6", "Vout", "output", 0),
                  ("7", "Vcc", "power_in", 0)])
    return Component(ref, value, "lab:" + value, fields={"Value": value, **fields}, pins=pins,
                     location=Location("front.kicad_sch", 70))


def two_pin(ref, lib_id, value="10k"):
    return Component(ref, value, lib_id, pins=_pins([("1", "~", "passive", 0), ("2", "~", "passive", 0)]))


def project(tmp_path: Path, parts_text: str = "", config_text: str = "") -> Path:
    (tmp_path / "amp.kicad_pro").write_text("{}")
    if parts_text:
        (tmp_path / PART_FILE).write_text(textwrap.dedent(parts_text))
    if config_text:
        (tmp_path / CONFIG_NAME).write_text(textwrap.dedent(config_text))
    return tmp_path


def shipped(kind: str, name: str) -> dict:
    for f in sorted((REPO / "rules" / "parts").glob("*.toml")):
        doc = tomllib.loads(f.read_text())
        if name in doc.get(kind, {}):
            return doc[kind][name]
    raise KeyError(name)


# ---------------------------------------------------------------------------- shipped data

def test_every_part_file_of_rules_is_read():
    lib = PartLibrary.load(None)
    ours = sorted(p.name for p in (REPO / "rules" / "parts").glob("*.toml"))
    assert ours and sorted(Path(f).name for f in lib.files) == ours


def test_shipped_classes_load_with_their_kinds():
    lib = PartLibrary.load(None)
    kinds = {n: c.kind for n, c in lib.classes.items()}
    for n in ("general-purpose", "precision-bipolar", "rail-to-rail-cmos", "zero-drift"):
        assert kinds[n] == "opamp"
    assert kinds["generic-inamp"] == "inamp" and kinds["unity-line-receiver"] == "diffamp"
    assert kinds["current-sense"] == "diffamp" and kinds["matched-network"] == "network"
    for c in lib.classes.values():
        assert c.origin == "class" and c.text.get("description")
        # every op-amp class is complete, so a model can always be built from it (the
        # error-budget numbers excepted: part data or requirements, never a class's)
        if c.kind == "opamp":
            assert set(NUMBER_KEYS["opamp"]) - set(BUDGET_KEYS) <= set(c.numbers)
    # the generic in-amp gives no gain constant or internal resistor: those are part data
    gi = lib.classes["generic-inamp"]
    assert "k" not in gi.numbers and "r_stage2" not in gi.numbers and gi.numbers["g2"] == 1.0


def test_general_purpose_inputs_do_not_reach_the_rails():
    gp = shipped("opamp", "general-purpose")
    rr = shipped("opamp", "rail-to-rail-cmos")
    assert gp["icm_low"] > 0 and gp["icm_high"] > 0 and gp["swing_low"] > 0
    assert rr["icm_low"] <= gp["icm_low"] and rr["swing_high"] < gp["swing_high"]


# ---------------------------------------------------------------------------- op-amp models

def test_no_part_data_gives_no_model_unless_a_default_class_is_set(tmp_path):
    # Built in: no assumed class. An op-amp without part data has no numbers (ideal in the
    # figures, given requirements); a class applies only where the user names one.
    assert PartLibrary.load(None).opamp_model(opamp()) is None
    d = project(tmp_path, config_text='[defaults]\nopamp_class = "general-purpose"\n')
    m = PartLibrary.load(d, config=load_config(d)).opamp_model(opamp())
    assert isinstance(m, OpAmpModel) and m.name == "general-purpose"
    gp = shipped("opamp", "general-purpose")
    assert m.cmrr_db == Sourced(gp["cmrr_db"], "default", "class general-purpose ([defaults] opamp_class)")
    assert all(getattr(m, k).source == "default" for k in NUMBER_KEYS["opamp"] if k not in BUDGET_KEYS)


def test_number_fields_alone_give_a_partial_model():
    # Numbers the user gave are used exactly; the others stay None (ideal), not guessed.
    m = PartLibrary.load(None).opamp_model(opamp(CMRR="80 dB"))
    assert m.cmrr_db == Sourced(80.0, "field", "CMRR field of U1")
    assert m.aol is None and m.icm_low is None and m.swing_high is None
    assert set(m.given()) == {"cmrr_db"}


def test_no_default_class_gives_no_model(tmp_path):
    assert PartLibrary.load(None, default_opamp_class="").opamp_model(opamp()) is None
    d = project(tmp_path, config_text='[defaults]\nopamp_class = "none"\n')
    lib = PartLibrary.load(d, config=load_config(d))
    assert lib.opamp_model(opamp()) is None
    assert lib.opamp_model(opamp(**{"Part Class": "zero-drift"})).name == "zero-drift"
    (tmp_path / "other").mkdir()
    d2 = project(tmp_path / "other", config_text='[defaults]\nopamp_class = "generic-inamp"\n')
    with pytest.raises(InputError, match="not an op-amp class"):
        PartLibrary.load(d2, config=load_config(d2))


def test_class_field_then_number_fields():
    c = opamp(**{"Part Class": "zero-drift", "CMRR": "120 dB", "Aol": "140 dB",
                 "Swing High": "20 mV", "Vos": "5 uV"})
    m = PartLibrary.load(None).opamp_model(c)
    zd = shipped("opamp", "zero-drift")
    assert m.name == "zero-drift"
    assert m.cmrr_db == Sourced(120.0, "field", "CMRR field of U1")
    assert m.aol.value == pytest.approx(1e7) and m.aol.source == "field"
    assert m.swing_high.value == pytest.approx(0.02)
    assert m.vos.value == pytest.approx(5e-6)
    assert m.icm_high == Sourced(zd["icm_high"], "class", "class zero-drift")


def test_override_order_field_project_class(tmp_path):
    d = project(tmp_path, """
        [opamp.lab-chopper]
        base = "zero-drift"
        cmrr_db = 110
        vos = "10 uV"

        [opamp.precision-bipolar]   # a project table over a shipped class: its keys win
        ib = 2e-9

        [[match]]
        value = "AMP-7*"
        class = "lab-chopper"
        swing_low = 0.05

        [[match]]
        lib_id = "*:AMP-9*"
        class = "precision-bipolar"
    """)
    lib = PartLibrary.load(d)
    zd = shipped("opamp", "zero-drift")
    m = lib.opamp_model(opamp(value="AMP-701", CMRR="115 dB"))
    assert m.name == "lab-chopper"
    assert m.cmrr_db.source == "field" and m.cmrr_db.value == 115.0          # field first
    assert m.swing_low == Sourced(0.05, "project", f"{PART_FILE} match value 'AMP-7*'")
    assert m.vos.source == "project" and m.vos.value == pytest.approx(10e-6)  # project class
    assert m.aol == Sourced(zd["aol"], "class", "class lab-chopper")          # inherited
    m2 = lib.opamp_model(opamp(value="AMP-901", lib_id="lab:AMP-901"))
    pb = shipped("opamp", "precision-bipolar")
    assert m2.ib.source == "project" and m2.ib.value == 2e-9
    assert m2.cmrr_db == Sourced(pb["cmrr_db"], "class", "class precision-bipolar")
    # without the project file, the matched part has no part data (no assumed class)
    assert PartLibrary.load(None).opamp_model(opamp(value="AMP-701")) is None
    # matches are case-insensitive globs
    assert lib.opamp_model(opamp(value="amp-7x")).name == "lab-chopper"


def test_parts_table_in_frontcheck_toml_and_extra_file(tmp_path):
    d = project(tmp_path, config_text="""
        [defaults]
        opamp_class = "rail-to-rail-cmos"
        [[parts.match]]
        ref = "U9"
        class = "jfet-input"
    """)
    extra = tmp_path / "more.toml"
    extra.write_text('[[match]]\nvalue = "AMP-5"\nclass = "precision-bipolar"\n')
    cfg = load_config(d)
    for lib in (PartLibrary.load(d, config=cfg), PartLibrary.load(d)):
        assert lib.opamp_model(opamp(ref="U9")).name == "jfet-input"
    lib = PartLibrary.load(d, extra, config=cfg)
    assert lib.opamp_model(opamp(value="AMP-5")).name == "precision-bipolar"
    assert lib.opamp_model(opamp(value="AMP-6")).name == "rail-to-rail-cmos"   # project default
    assert lib.opamp_model(opamp(value="AMP-6")).aol.source == "default"


# ---------------------------------------------------------------------------- in-amps etc.

def test_inamp_without_part_data_is_recognised_but_not_modelled():
    c = inamp()
    lib = PartLibrary.load(None)
    assert looks_like_inamp(c) and classify(c) == "inamp" and lib.classify(c) == "inamp"
    assert lib.inamp_model(c) is None
    # a class alone names the architecture but still lacks the part's numbers
    m = lib.inamp_model(inamp(**{"Part Class": "generic-inamp"}))
    assert m.arch == "rg-pair" and m.k is None and m.missing == ("k", "r_stage2")
    assert m.g2 == Sourced(1.0, "class", "class generic-inamp")


def test_inamp_with_project_numbers(tmp_path):
    d = project(tmp_path, """
        [inamp.lab-inamp]
        base = "generic-inamp"
        k = "50k"
        r_stage2 = "10k"
        ratio_tol = "0.01%"

        [[match]]
        value = "INA-X"
        class = "lab-inamp"
    """)
    lib = PartLibrary.load(d)
    m = lib.inamp_model(inamp(**{"Gain K Tol": "0.1%"}))
    assert m.missing == ()
    assert m.k == Sourced(50e3, "project", "class lab-inamp (project part data)")
    assert m.r_stage2.value == 10e3 and m.ratio_tol.value == pytest.approx(1e-4)
    assert m.r_ref.value == 10e3                    # r_stage2 x g2 (unity stage)
    assert m.k_tol == Sourced(pytest.approx(0.001), "field", "Gain K Tol field of U3")
    assert isinstance(m.opamp, OpAmpModel) and m.opamp.cmrr_db.source == "class"
    assert lib.opamp_model(inamp()) is None          # mapped to an in-amp class
    assert lib.diffamp_model(inamp()) is None


def test_inamp_numbers_from_fields_alone():
    m = PartLibrary.load(None).inamp_model(inamp(**{"Gain K": "32.1k", "Stage2 R": "10k",
                                                      "REF R": "12k"}))
    assert m is not None and m.missing == () and m.k.source == "field"
    assert m.r_ref.value == 12e3 and m.opamp is None      # no class: no internal limits


def test_diffamp_models(tmp_path):
    lib = PartLibrary.load(None)
    c = diffamp()
    assert classify(c) == "diffamp" and not looks_like_inamp(c)
    assert lib.diffamp_model(c) is None
    m = lib.diffamp_model(diffamp(**{"Part Class": "unity-line-receiver", "Input R": "25k"}))
    assert m.gain == Sourced(1.0, "class", "class unity-line-receiver")
    assert m.r_in == Sourced(25e3, "field", "Input R field of U5") and m.missing == ()
    m = lib.diffamp_model(diffamp(**{"Part Class": "current-sense"}))
    assert m.gain is None and m.missing == ("gain", "r_in")
    d = project(tmp_path, '[[match]]\nvalue = "CS-20"\nclass = "current-sense"\ngain = 20\nr_in = "10k"\n')
    m = PartLibrary.load(d).diffamp_model(diffamp(value="CS-20"))
    assert m.gain.value == 20 and m.gain.source == "project" and m.missing == ()


def test_network_model():
    rn = Component("RN1", "4x10k", "Device:R_Pack04", fields={"Ratio Tolerance": "0.05%"},
                   pins=_pins([(str(i), "R", "passive", 0) for i in range(1, 9)]))
    assert classify(rn) == "network"
    lib = PartLibrary.load(None)
    m = lib.network_model(rn)
    assert m.ratio_tol == Sourced(pytest.approx(5e-4), "field", "Ratio Tolerance field of RN1")
    rn.fields["Part Class"] = "matched-network"
    m = lib.network_model(rn)
    assert m.abs_tol == Sourced(shipped("network", "matched-network")["abs_tol"], "class",
                                "class matched-network")
    assert lib.classify(rn) == "network"


# ---------------------------------------------------------------------------- errors

@pytest.mark.parametrize("text,line,fragment", [
    ("[opamp.x]\nbase = \"general-purpose\"\ncmrr_db = \"lots\"\n", 3, "cmrr_db"),
    ("[opamp.x]\nbase = \"general-purpose\"\nslew = 3\n", 3, "unknown key 'slew'"),
    ("[opamp.x]\nbase = \"nope\"\n", 2, "unknown base"),
    ("[opamp.a]\nbase = \"b\"\n[opamp.b]\nbase = \"a\"\n", None, "circular"),
    ("[widget.x]\n", 1, "unknown table"),
    ("\n[[match]]\nvalue = \"A*\"\nclass = \"no-such-class\"\n", 2, "unknown part class"),
    ("[[match]]\nclass = \"zero-drift\"\n", 1, "needs value, lib_id or ref"),
    ("[[match]]\nvalue = \"A\"\n[[match]]\nvalue = \"B\"\nvos = -1\nib = -1\n", 3, "ib"),
    ("[inamp.y]\nk = -5\n", 2, "positive"),
    ("[opamp.general-purpose]\nratio_tol = 0.1\n", 2, "unknown key"),
    ("[diffamp.general-purpose]\ngain = 1\n", 1, "defined as opamp and as diffamp"),
    ("[opamp.x\n", 1, "invalid TOML"),
])
def test_bad_part_file_is_located(tmp_path, text, line, fragment):
    d = project(tmp_path, text)
    with pytest.raises(InputError) as e:
        PartLibrary.load(d)
    assert fragment in e.value.message
    assert e.value.file == str(d / PART_FILE)
    if line is not None:
        assert e.value.line == line
    assert e.value.hint


@pytest.mark.parametrize("fields,fragment", [
    ({"Part Class": "hyper-amp"}, "unknown part class"),
    ({"CMRR": "100"}, "dB"),
    ({"Aol": "120"}, "unit"),
    ({"Vos": "small"}, "Vos"),
    ({"Ib": "1 nF"}, "Ib"),
])
def test_bad_symbol_fields_name_file_line_and_field(fields, fragment):
    with pytest.raises(InputError) as e:
        PartLibrary.load(None).opamp_model(opamp(**fields))
    assert fragment in e.value.message
    assert (e.value.file, e.value.line) == ("amp.kicad_sch", 33)
    assert "U1" in e.value.message and e.value.hint


def test_field_names_documented_for_every_key():
    keys = {k for ks in NUMBER_KEYS.values() for k in ks}
    assert keys == set(FIELD_NAMES)


# ---------------------------------------------------------------------------- classify

@pytest.mark.parametrize("comp,kind", [
    (opamp(), "opamp"),
    (quad(), "opamp"),
    (quad(with_units=False), "opamp"),
    (inamp(), "inamp"),
    (diffamp(), "diffamp"),
    (two_pin("R1", "Device:R"), "resistor"),
    (two_pin("R2", "Device:R_Small_US"), "resistor"),
    (two_pin("C1", "Device:C", "100n"), "capacitor"),
    (two_pin("C2", "Device:CP", "10u"), "capacitor"),
    (two_pin("J1", "Connector_Generic:Conn_01x02"), "connector"),
    (two_pin("D1", "Device:D", "D"), "other"),
    (two_pin("JP1", "Jumper:SolderJumper_2_Open", "Open"), "other"),
    (two_pin("P3", "lab:Header", "Header"), "connector"),
    (Component("U9", "CMP-1", "Comparator:CMP-1", pins=_pins([
        ("1", "+", "input", 0), ("3", "-", "input", 0), ("4", "~", "open_collector", 0),
        ("5", "V+", "power_in", 0), ("2", "V-", "power_in", 0)])), "comparator"),
    (Component("U8", "CMP-2", "lab:CMP-2", pins=_pins([
        ("1", "IN+", "input", 0), ("3", "IN-", "input", 0), ("4", "OUT", "open_collector", 0)])),
     "comparator"),
    (Component("U7", "REG", "lab:REG", pins=_pins([
        ("1", "VIN", "power_in", 0), ("2", "GND", "power_in", 0), ("3", "VOUT", "power_out", 0)])),
     "other"),
    (Component("U6", "ADC", "lab:ADC", pins=_pins([
        ("1", "CH0", "input", 0), ("2", "VREF", "input", 0), ("3", "VDD", "power_in", 0)])), "other"),
    # in-amp with a single gain pin and Vip/Vim names (feedback-pin architecture)
    (Component("U10", "IA-FB", "lab:IA-FB", pins=_pins([
        ("1", "Vfg", "input", 0), ("2", "Vim", "input", 0), ("3", "Vip", "input", 0),
        ("4", "Vss", "power_in", 0), ("5", "Vref", "input", 0), ("6", "Vout", "output", 0),
        ("7", "Vdd", "power_in", 0)])), "inamp"),
    # current-sense difference amp: two REF pins, GND as its negative rail, unnamed output
    (Component("U11", "CS-1", "Amplifier_Current:CS-1", pins=_pins([
        ("1", "GND", "power_in", 0), ("2", "+", "input", 0), ("3", "-", "input", 0),
        ("5", "V+", "power_in", 0), ("6", "REF2", "input", 0), ("7", "REF1", "input", 0),
        ("8", "~", "output", 0)])), "diffamp"),
    # dual op-amp with channel letters in pin names, one unit
    (Component("U12", "DUAL", "lab:DUAL", pins=_pins([
        ("1", "OUTA", "output", 0), ("2", "-INA", "input", 0), ("3", "+INA", "input", 0),
        ("5", "+INB", "input", 0), ("6", "-INB", "input", 0), ("7", "OUTB", "output", 0),
        ("4", "V-", "power_in", 0), ("8", "V+", "power_in", 0)])), "opamp"),
])
def test_classify(comp, kind):
    assert classify(comp) == kind


def test_opamp_units_by_unit_name_and_pin_number():
    by_unit = [(u.name, u.inp, u.inn, u.out, u.paired_by) for u in opamp_units(quad())]
    assert by_unit == [("U2A", "3", "2", "1", "unit"), ("U2B", "5", "6", "7", "unit"),
                       ("U2C", "10", "9", "8", "unit"), ("U2D", "12", "13", "14", "unit")]
    by_num = [(u.name, u.inp, u.inn, u.out) for u in opamp_units(quad(with_units=False))]
    assert by_num == [t[:4] for t in by_unit]
    assert all(u.vpos == "4" and u.vneg == "11" for u in opamp_units(quad()))
    dual = Component("U12", "DUAL", "lab:DUAL", pins=_pins([
        ("1", "OUTA", "output", 0), ("2", "-INA", "input", 0), ("3", "+INA", "input", 0),
        ("5", "+INB", "input", 0), ("6", "-INB", "input", 0), ("7", "OUTB", "output", 0)]))
    assert [(u.name, u.inp, u.inn, u.out, u.paired_by) for u in opamp_units(dual)] == [
        ("U12A", "3", "2", "1", "name"), ("U12B", "5", "6", "7", "name")]
    assert opamp_units(inamp())[0].paired_by == "single"
    assert opamp_units(two_pin("R1", "Device:R")) == []


def test_pin_roles_of_an_inamp():
    assert pin_roles(inamp()) == {"rg": ["1", "8"], "inn": ["2"], "inp": ["3"], "vneg": ["4"],
                                  "ref": ["5"], "out": ["6"], "vpos": ["7"]}


def test_part_data_decides_classification_first(tmp_path):
    d = project(tmp_path, '[[match]]\nref = "U1"\nclass = "unity-line-receiver"\n')
    assert PartLibrary.load(d).classify(opamp()) == "diffamp"
    assert PartLibrary.load(None).classify(opamp()) == "opamp"


# ---------------------------------------------------------------------------- real designs

# What each real design holds, as docs/test-corpus.md sec. 2 describes it (kinds of amplifier parts
# only).
REAL = {
    "upsidedownlabs__BioAmp-EXG-Pill/hardware/BioAmp-EXG-Pill.kicad_sch": {"U1": ("opamp", 4)},
    "upsidedownlabs__Muscle-BioAmp-BisCute/hardware/muscle-bioamp-biscute.kicad_sch": {"U1": ("opamp", 4)},
    "prototypefund__psylink/schematics/electrode_module3.3/electrode_module3.3.kicad_sch":
        {f"U{i}": ("inamp", 0) for i in range(1, 5)},
    "prototypefund__psylink/schematics/electrode_module4/PsyLinkMCP.kicad_sch":
        {f"U{i}0": ("inamp", 0) for i in range(1, 5)},
    "maruta__Compact-SimpleFOC-Board/bldc.kicad_sch": {r: ("diffamp", 0) for r in ("U2", "U4", "U5")},
    "Aightech__CleverHand-hardware/KiCad/modules/EMG_INA331/EMG_INA331.kicad_sch":
        {"U1": ("inamp", 0), "U2": ("opamp", 1), "U4": ("opamp", 1)},
    "schuyler4__USB_Curve_Tracer/electronics/rev2/ecad/USB_curve_tracer.kicad_sch": {"U2": ("opamp", 4)},
    "schuyler4__USB_Curve_Tracer/electronics/rev3/ecad/USB_curve_tracer.kicad_sch": {"U2": ("opamp", 4)},
    "schuyler4__Basic_Diff_Probe/electronics/rev1/ecad/Basic_Diff_Probe.kicad_sch": {"U2": ("opamp", 4)},
    "schuyler4__Basic_Diff_Probe/electronics/rev2/ecad/Basic_Diff_Probe.kicad_sch": {"U2": ("opamp", 4)},
    "brbcza__balanced-receiver/balanced-receiver.kicad_sch":
        {"U4": ("diffamp", 0), "U7": ("opamp", 2), "U8": ("opamp", 2)},
    "DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/6-REV2B/6-REV2b.kicad_sch":
        {"U504": ("opamp", 4), "U505": ("opamp", 4)},
    "DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/5-REV10A/REV10a.kicad_sch":
        {"U504": ("opamp", 4), "U505": ("opamp", 4)},
}
# docs/test-corpus.md sec. 2: the current limiter's U601-U603 are comparator symbols (U603 an op-amp
# drawn as one) and must not be taken for amplifiers.
COMPARATORS = {"DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/6-REV2B/6-REV2b.kicad_sch":
               {"U601", "U602", "U603"}}


def _amplifiers(netlist) -> dict[str, tuple[str, int]]:
    out = {}
    for ref, c in netlist.components.items():
        k = classify(c)
        if k in ("opamp", "inamp", "diffamp"):
            out[ref] = (k, len(opamp_units(c)) if k == "opamp" else 0)
    return out


@pytest.mark.parametrize("sheet", sorted(REAL))
def test_real_designs_from_schematics(corpus, sheet):
    from frontcheck.kicad import project as kproject
    path = corpus / "real-designs" / sheet
    nl = kproject.load(path)
    assert _amplifiers(nl) == REAL[sheet]
    for ref in COMPARATORS.get(sheet, ()):
        assert classify(nl.components[ref]) == "comparator"


@pytest.fixture(scope="module")
def kicad_nets(corpus, kicad9, tmp_path_factory):
    out = tmp_path_factory.mktemp("nets")
    nets = {}
    for sheet in sorted(REAL):
        dst = out / (sheet.replace("/", "__") + ".net")
        r = subprocess.run([str(kicad9), "netlist", str(corpus / "real-designs" / sheet), str(dst)],
                           capture_output=True, text=True, timeout=600)
        assert r.returncode == 0, r.stderr
        nets[sheet] = dst
    return nets


@pytest.mark.oracle
@pytest.mark.parametrize("sheet", sorted(REAL))
def test_real_designs_from_kicad9_netlists(corpus, kicad_nets, sheet):
    """KiCad 9's export has no unit data: op-amp units must be paired by pin numbers and come
    out as the schematic's units do."""
    from frontcheck.kicad import project as kproject
    from frontcheck.kicad.netfile import read_net
    nl = read_net(kicad_nets[sheet])
    assert _amplifiers(nl) == REAL[sheet]
    sch = kproject.load(corpus / "real-designs" / sheet)
    for ref, (kind, n) in REAL[sheet].items():
        if kind != "opamp":
            continue
        a = sorted((u.inp, u.inn, u.out) for u in opamp_units(nl.components[ref]))
        b = sorted((u.inp, u.inn, u.out) for u in opamp_units(sch.components[ref]))
        assert a == b, ref


def test_gain_network_names_in_a_part_file(tmp_path):
    """A part file names the gain network as the part's pins take it; split RG and the
    two-resistor feedback network map onto the architectures expansion models."""
    d = project(tmp_path, '[inamp.a]\nbase = "generic-inamp"\narch = "split-rg"\n'
                          '[inamp.b]\nbase = "feedback-pin-inamp"\narch = "two-resistor-feedback"\n')
    lib = PartLibrary.load(d)
    assert lib.classes["a"].text["arch"] == "rg-pair"
    assert lib.classes["b"].text["arch"] == "feedback-pin"
