"""A composite front end: an in-amp input pair (two op-amps, Rf = 10k each, RG = 2k, all 0.1 %)
whose outputs drive the inputs of an integrated in-amp (an invented eight-pin part with its own
RG = 5.1k). One stage of kind 'composite' with every part in it, never a pair beside an in-amp
or two difference amplifiers.

Check values: docs/engineering.md sec. 3b (G1 = 1 + (Rf1 + Rf2)/RG, monotone in each resistor,
so its worst case is at the corners; G = G1 x G2; the chain's CMRR is G1 times the second
stage's, Sedra & Smith 6th ed., Problem 2.75 and Example 2.17) and ngspice on the very same
SubCircuit. The in-amp's part data is an invented class (G2 = 1 + K/RG with K = 50 kOhm).
"""

from __future__ import annotations

import json
import math
import shutil
from dataclasses import replace

import pytest

from frontcheck.analysis import Options, analyse
from frontcheck.pipeline import RunOptions, check_netlist
from frontcheck.recognise import find_stages
from frontcheck.report import render
from frontcheck.report.model import Report
from invented_parts import LAB_INAMP_PART_FILE as PART_FILE
from netlist_builder import NetlistBuilder
from spice import model, run, write_deck
from test_recognise_integrated import GENERIC_RG, FakeParts

OPT = Options(mc_samples=400, seed=1, method="monte-carlo")
RF, RG1, RG2, K, T = 10e3, 2e3, 5.1e3, 50e3, 0.001
G1 = 1 + 2 * RF / RG1                         # 11
G2 = 1 + K / RG2                              # 10.80392...


def board(crossed: bool = False, fields: dict | None = None, filt: bool = False) -> NetlistBuilder:
    """U1A/U1B: the input pair (R1, R2 feedback, R3 gain resistor); U2: the in-amp, RG = R4,
    REF on ground, inputs on the pair's outputs O1/O2 (swapped when ``crossed``), or with
    ``filt`` behind an RC filter (R7, R8 in series, C1 across, C2/C3 to ground)."""
    nb = NetlistBuilder().opamp("U1", {"A": ("IN_P", "M1", "O1"), "B": ("IN_N", "M2", "O2")},
                    vpos="+5V", vneg="-5V", package="dual")
    nb.r("R1", "O1", "M1", "10k 0.1%").r("R2", "O2", "M2", "10k 0.1%").r("R3", "M1", "M2", "2k 0.1%")
    plus, minus = ("O2", "O1") if crossed else ("O1", "O2")
    if filt:
        nb.r("R7", "O1", "F1", "1k 1%").r("R8", "O2", "F2", "1k 1%")
        nb.c("C1", "F1", "F2", "10n").c("C2", "F1", "GND", "1n").c("C3", "F2", "GND", "1n")
        plus, minus = ("F2", "F1") if crossed else ("F1", "F2")
    nb.part("U2", "IA8", "Project:IA8", fields=fields, pins=[
        ("1", "RG", "passive", "RGA"), ("2", "-IN", "input", minus), ("3", "+IN", "input", plus),
        ("4", "V-", "power_in", "-5V"), ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG", "passive", "RGB")])
    nb.r("R4", "RGA", "RGB", "5k1 0.1%")
    nb.r("R5", "IN_P", "GND", "1M").r("R6", "IN_N", "GND", "1M")      # bias returns
    return nb.pins_to("J1", "IN_P", "IN_N", "OUT", "GND")


PARTS = FakeParts({"U2": GENERIC_RG})


def _g1_corners():
    # G1 is monotone: lowest with Rf low and RG high, highest the other way (sec. 3b)
    return (1 + 2 * RF * (1 - T) / (RG1 * (1 + T)), 1 + 2 * RF * (1 + T) / (RG1 * (1 - T)))


# -- recognition ---------------------------------------------------------------------------

@pytest.mark.parametrize("parts", [None, PARTS], ids=["no-part-data", "part-data"])
def test_one_front_end_with_every_part_and_its_role(parts):
    rec = find_stages(board().build(), parts)
    (s,) = rec.stages
    assert (s.kind, s.id, s.amplifiers) == ("composite", "U1A+U1B+U2", ["U1A", "U1B", "U2"])
    assert s.roles == {"first_stage_p": "U1A", "first_stage_n": "U1B", "feedback_p": "R1",
                       "feedback_n": "R2", "gain_resistor": "R3", "second_stage": "U2",
                       "second_stage_RG": "R4"}
    assert s.references == ["R1", "R2", "R3", "R4", "U1", "U2"]
    assert rec.near_misses == []
    # every amplifier accounted for once, all three in this stage
    assert {a.name: a.stage for a in rec.amplifiers} == {"U1A": s.id, "U1B": s.id, "U2": s.id}
    if parts is None:
        # the in-amp keeps its structural checks: still listed as lacking part data
        assert [u.ref for u in rec.unsupported] == ["U2"] and s.first_stage is None
        assert s.circuit.ports == {"in_p": "IN_P", "in_n": "IN_N", "out": "O1", "out_n": "O2"}
    else:
        assert rec.unsupported == [] and s.first_stage is not None
        assert s.circuit.ports == {"in_p": "IN_P", "in_n": "IN_N", "ref": "GND", "out": "OUT"}
        assert s.first_stage.ports == {"in_p": "IN_P", "in_n": "IN_N", "out": "O1", "out_n": "O2"}
        assert len(s.circuit.opamps) == 5           # the pair and the part's three


@pytest.mark.parametrize("crossed", [False, True])
def test_through_an_input_filter(crossed):
    nl = board(crossed=crossed, filt=True).build()
    for parts in (None, PARTS):
        rec = find_stages(nl, parts)
        (s,) = rec.stages
        assert s.kind == "composite" and rec.near_misses == []
        assert (s.roles["second_stage_input_p"], s.roles["second_stage_input_n"]) == ("R7", "R8")
        assert {"R7", "R8"} <= set(s.references)
        assert {a.name: a.stage for a in rec.amplifiers} == {"U1A": s.id, "U1B": s.id, "U2": s.id}
    # the filter resistors carry no signal current into the in-amp's ideal inputs: G1 x G2
    r = analyse(s, nl, None, OPT)
    assert r.gain.nominal == pytest.approx((-1 if crossed else 1) * G1 * G2, rel=1e-12)
    assert "C1" in {c.name for c in s.circuit.capacitors}       # the differential capacitor


def test_a_pair_feeding_something_else_is_not_composite():
    nb = board()
    nb.comps.pop("U2")
    for net in ("O1", "O2"):
        nb.nets[net] = [n for n in nb.nets[net] if n.ref != "U2"]
    nb.pins_to("J2", "O1", "O2")
    (s,) = find_stages(nb.build()).stages
    assert s.kind == "diff-output"


# -- analysis ------------------------------------------------------------------------------

def test_first_stage_gain_and_worst_case_without_part_data():
    nl = board().build()
    (s,) = find_stages(nl).stages
    r = analyse(s, nl, None, OPT)
    lo, hi = _g1_corners()
    assert r.gain.nominal == pytest.approx(G1, rel=1e-12)
    assert (r.gain.worst_min, r.gain.worst_max) == pytest.approx((lo, hi), rel=1e-12)
    c = r.composite
    assert c["first_stage"]["gain"] == pytest.approx(
        {"nominal": G1, "worst_min": lo, "worst_max": hi}, rel=1e-12)
    assert c["second_stage"] == {"reference": "U2", "gain": None, "gain_from": "needs part data"}
    assert c["total_gain"] is None
    # the first stage's mismatch cannot turn common mode into differential output (sec. 3a)
    assert c["first_stage"]["cmrr_db"] == {"nominal": math.inf, "worst": math.inf}


def test_total_gain_with_part_data_is_g1_times_g2():
    nl = board().build()
    (s,) = find_stages(nl, PARTS).stages
    r = analyse(s, nl, None, OPT)
    c = r.composite
    lo, hi = _g1_corners()
    assert c["first_stage"]["gain"] == pytest.approx(
        {"nominal": G1, "worst_min": lo, "worst_max": hi}, rel=1e-12)
    assert c["second_stage"]["gain"] == pytest.approx(G2, rel=1e-12)
    assert c["second_stage"]["gain_from"] == "part data"
    assert r.gain.nominal == pytest.approx(G1 * G2, rel=1e-12)        # 118.8431...
    assert c["total_gain"]["nominal"] == r.gain.nominal
    assert r.gain.worst_min < G1 * G2 < r.gain.worst_max


def test_crossed_pair_inverts_the_front_end():
    nl = board(crossed=True).build()
    (s,) = find_stages(nl, PARTS).stages
    assert s.kind == "composite" and any("inverts" in n for n in s.notes)
    r = analyse(s, nl, None, OPT)
    assert r.gain.nominal == pytest.approx(-G1 * G2, rel=1e-12)


def test_chain_cmrr_is_g1_times_the_in_amps_own():
    """Sedra & Smith 6th ed., Problem 2.75: the first stage passes common mode at gain 1, so
    the chain's CMRR is G1 times the second stage's (nominal-Ad convention, ideal op-amps)."""
    nl = board().build()
    (s,) = find_stages(nl, PARTS).stages
    chain = analyse(s, nl, None, OPT).cmrr
    alone = NetlistBuilder()
    alone.part("U2", "IA8", "Project:IA8", pins=[
        ("1", "RG", "passive", "RGA"), ("2", "-IN", "input", "O2"), ("3", "+IN", "input", "O1"),
        ("4", "V-", "power_in", "-5V"), ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG", "passive", "RGB")])
    alone.r("R4", "RGA", "RGB", "5k1 0.1%").pins_to("J1", "O1", "O2", "OUT", "GND")
    nl2 = alone.build()
    (s2,) = find_stages(nl2, PARTS).stages
    second = analyse(s2, nl2, None, OPT).cmrr
    assert math.isfinite(second.worst_db)
    assert chain.worst_db == pytest.approx(second.worst_db + 20 * math.log10(G1), abs=1e-6)


@pytest.mark.oracle
def test_chain_and_first_stage_against_ngspice():
    exe = shutil.which("ngspice")
    if exe is None:
        pytest.skip("ngspice not installed")
    nl = board().build()
    (s,) = find_stages(nl, PARTS).stages
    r = analyse(s, nl, None, OPT)
    big = model(aol=1e7)      # as docs/engineering.md sec. 9; the gain moves by about G/A ~ 1e-5
    # REF is on ground (SPICE node 0): no source for it
    chain = replace(s.circuit, opamps=[replace(o, model=big) for o in s.circuit.opamps],
                    ports={k: v for k, v in s.circuit.ports.items() if k != "ref"})
    vd = 0.01
    (row,) = run(exe, write_deck(chain, [{"vcm": 1.0, "vd": vd, "vref": 0.0}], ["OUT"]), ["OUT"])
    assert row["OUT"] / vd == pytest.approx(r.gain.nominal, rel=3e-5)
    pair = replace(s.first_stage, opamps=[replace(o, model=big) for o in s.first_stage.opamps])
    corner = {"R": {"R1": RF * (1 + T), "R2": RF * (1 + T), "R3": RG1 * (1 - T)},
              "vcm": 1.0, "vd": vd}
    (row,) = run(exe, write_deck(pair, [corner], ["O1", "O2"]), ["O1", "O2"])
    assert (row["O1"] - row["O2"]) / vd == pytest.approx(
        r.composite["first_stage"]["gain"]["worst_max"], rel=3e-6)


# -- rules and reports ---------------------------------------------------------------------

def _check(nb: NetlistBuilder, tmp_path=None, part_file: str | None = None):
    if part_file is not None:
        (tmp_path / "frontcheck-parts.toml").write_text(part_file, encoding="utf-8")
    return check_netlist(nb.build(), tmp_path if part_file else None, "c", "c",
                         RunOptions(samples=200, seed=1))


def test_without_part_data_g1_is_stated_and_the_target_is_not_checked():
    p = _check(board(fields={"Target Gain": "120 ±1%"}))
    (g,) = [f for f in p.findings if f.rule == "gain-error"]
    assert g.severity == "info"
    assert "G1 = 1 + (R1 + R2)/R3 = 11" in g.message and "G2 needs part data" in g.message
    assert "not checked until U2 has part data" in g.message
    assert {f.rule for f in p.findings if f.severity == "error"} == set()
    # the in-amp without part data is still reported as such (its structural rules run)
    assert any(f.rule == "stage-incomplete" and "U2" in f.message for f in p.findings)
    # the summary says the gain figure is G1 alone
    for fmt in ("text", "markdown"):
        text = render(Report(tool={"name": "frontcheck"}, projects=[p]), fmt)
        assert "11" in text and "(first stage G1; G2 needs part data)" in text
        assert "(first stage; U2 sets the chain's)" in text


def test_min_cmrr_without_part_data_is_left_to_the_in_amp():
    # the pair's CMRR is unbounded (sec. 3a), so the in-amp must reach Min CMRR / G1 at the
    # lowest G1: 100 dB - 20 log10(1 + 19.98k/2.002k) = 79.188 dB (sec. 3a, 1/CMRR_chain =
    # 1/CMRR_pair + 1/(G1 CMRR_next))
    p = _check(board(fields={"Min CMRR": "100 dB"}))
    (f,) = [f for f in p.findings if f.rule == "cmrr-budget"]
    assert f.severity == "info" and "meets" not in f.message
    assert "leaves the declared minimum 100.0 dB to the second stage" in f.message
    r = next(iter(p.results.values()))
    assert r.differential_output["next_stage_cmrr_db"] == pytest.approx(
        100 - 20 * math.log10(_g1_corners()[0]), abs=1e-9)
    assert "integrated second stage U2" in f.message and "79.2 dB" in f.message


def test_with_part_data_the_total_is_checked_against_the_target(tmp_path):
    # G = 11 x 10.804 = 118.84; a target of 100 +-1 % is missed
    p = _check(board(fields={"Target Gain": "100 ±1%"}), tmp_path, PART_FILE)
    (g,) = [f for f in p.findings if f.rule == "gain-error"]
    assert g.severity == "error" and "nominal gain 118.84" in g.message
    assert "R3" in g.fix


def test_headroom_of_the_first_stage_outputs_over_the_declared_box():
    # o1 = IN+ + Rf1 (IN+ - IN-)/RG (sec. 3): at Vcm = 2.5 V, Vd = 0.5 V with R1 high and R3
    # low, 2.75 + 10.01k x 0.5/1.998k = 5.255005 V, past the +5 V rail
    p = _check(board(fields={"Input CM": "0..2.5 V", "Input Diff": "±0.5 V"}))
    hr = {f.data["opamp"]: f for f in p.findings if f.rule == "headroom" and f.data.get("opamp")}
    assert hr["U1A"].severity == "error" and hr["U1A"].data["node"] == "output"
    assert hr["U1A"].data["voltage"] == pytest.approx(2.75 + 10.01e3 * 0.5 / 1.998e3, rel=1e-9)
    assert hr["U1A"].data["high"] == 5.0


def test_json_names_the_kind_the_roles_and_the_gains(tmp_path):
    p = _check(board(), tmp_path, PART_FILE)
    doc = json.loads(render(Report(tool={"name": "frontcheck"}, projects=[p]), "json"))
    (st,) = doc["stages"]
    assert st["kind"] == "composite" and st["roles"]["second_stage"] == "U2"
    c = st["composite"]
    assert c["first_stage"]["gain"]["nominal"] == pytest.approx(G1, rel=1e-12)
    # the part file's Aol of 1e12 moves the gain by about G/A ~ 1e-10
    assert c["total_gain"]["nominal"] == pytest.approx(G1 * G2, rel=1e-9)
    assert c["first_stage"]["cmrr_db"]["worst"] is None          # infinite -> null in JSON
    for fmt in ("text", "markdown", "html", "sarif"):
        assert render(Report(tool={"name": "frontcheck"}, projects=[p]), fmt)
