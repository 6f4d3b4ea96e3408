"""The in-amp input stage with a differential output (two op-amps, Rf each, RG between the
inverting inputs, the outputs going on as a pair): recognised as a stage of its own and analysed
like the others, gain, CMRR of the differential output, headroom of both outputs over the
tolerance corners, worst case and statistics, in every report format.

Closed forms: docs/engineering.md sec. 3 and 3a (G1 = 1 + (Rf1 + Rf2)/RG, Sedra & Smith 6th ed.,
Example 2.17; output common mode; the pair's CMRR set by the op-amps alone) and ngspice on the
same circuit.
"""

from __future__ import annotations

import itertools
import json
import math
import shutil

import pytest

from frontcheck.analysis import Options, analyse
from frontcheck.analysis.diff_pair import next_stage_cmrr_db
from frontcheck.checks import run_rules
from frontcheck.circuit import Intent, Stage, SubCircuit
from frontcheck.pipeline import RunOptions, check_netlist
from frontcheck.recognise import find_stages
from frontcheck.report import render
from frontcheck.report.model import Report
from netlist_builder import NetlistBuilder
from spice import model, opamp, rails, res, run, write_deck
from rule_fixtures import context, only

OPT = Options(mc_samples=4000, seed=3)
IDEAL = model(aol=math.inf)          # ideal op-amps: the closed forms hold exactly


def _board(rg="1k", fields=None, tol="1%") -> NetlistBuilder:
    """U1A/U1B: in-amp input pair, Rf = R3 = R4 = 10k, RG = R5, outputs OP/ON to a fully
    differential amplifier U2 (not a stage kind frontcheck models)."""
    nb = NetlistBuilder().opamp("U1", {"A": ("IN_P", "M1", "OP"), "B": ("IN_N", "M2", "ON")}, package="dual",
                    vpos="+5V", vneg="-5V")
    if fields:
        nb.comps["U1"].fields.update(fields)
    nb.r("R3", "OP", "M1", f"10k {tol}").r("R4", "ON", "M2", f"10k {tol}")
    nb.r("R5", "M1", "M2", f"{rg} {tol}" if rg else "")
    nb.r("R6", "IN_P", "GND", "1M").r("R7", "IN_N", "GND", "1M")      # bias returns
    nb.part("U2", "FDA-1", "lab:FDA-1", pins=[
        ("1", "IN+", "input", "OP"), ("2", "IN-", "input", "ON"), ("3", "OUT+", "output", "ADC_P"),
        ("4", "OUT-", "output", "ADC_N")])
    return nb.pins_to("J1", "IN_P", "IN_N", "ADC_P", "ADC_N", "GND")


def _pair(rf1=10e3, rf2=10e3, rg=1e3, tol=0.01, m=None, vp=5.0, vn=-5.0) -> SubCircuit:
    return SubCircuit(
        resistors=[res("RF1", "O1", "M1", rf1, tol), res("RF2", "O2", "M2", rf2, tol),
                   res("RG", "M1", "M2", rg, tol)],
        opamps=[opamp("U1A", "IN_P", "M1", "O1", m or IDEAL), opamp("U1B", "IN_N", "M2", "O2", m or IDEAL)],
        ports={"in_p": "IN_P", "in_n": "IN_N", "out": "O1", "out_n": "O2"},
        rails=rails(vp, vn))


def _stage(sub: SubCircuit, intent: Intent | None = None) -> Stage:
    return Stage("U1A+U1B", "diff-output", ["RF1", "RF2", "RG", "U1"], ["U1A", "U1B"],
                 {"feedback_p": "RF1", "feedback_n": "RF2", "gain_resistor": "RG"}, sub,
                 intent or Intent())


# -- recognition ---------------------------------------------------------------------------

def test_pair_is_a_stage_with_word_roles_and_no_near_miss():
    rec = find_stages(_board().build())
    (s,) = rec.stages
    assert (s.kind, s.id, s.amplifiers) == ("diff-output", "U1A+U1B", ["U1A", "U1B"])
    assert s.roles == {"feedback_p": "R3", "feedback_n": "R4", "gain_resistor": "R5"}
    # no role reads like a reference designator (letters then digits)
    assert not any(r[:1].isalpha() and r[-1:].isdigit() for r in s.roles)
    assert s.circuit.ports == {"in_p": "IN_P", "in_n": "IN_N", "out": "OP", "out_n": "ON"}
    assert rec.near_misses == []          # never "add a resistor from + input to reference"
    uses = {a.name: a.stage for a in rec.amplifiers}
    assert uses["U1A"] == uses["U1B"] == "U1A+U1B"


@pytest.mark.parametrize("value", ["R", "RG", "?", ""])
def test_unset_gain_resistor_is_stage_incomplete_naming_the_part(value):
    nb = _board()
    nb.comps["R5"].value = value
    nb.comps["R5"].fields["Value"] = value
    nl = nb.build()
    rec = find_stages(nl)
    assert rec.stages == []
    (f,) = only(run_rules(context([], near_misses=rec.near_misses, netlist=nl)), "stage-incomplete")
    assert f.references == ["R5", "U1"] and "R5" in f.message and "gain resistor" in f.message
    assert "R5" in f.fix
    uses = {a.name: a.reason for a in rec.amplifiers}
    assert "not readable" in uses["U1A"] and "U1B" in uses["U1A"]


def test_three_op_amp_in_amp_around_the_same_parts_still_wins():
    """The pair feeding a difference stage is a three-op-amp in-amp, not a pair plus a
    difference amplifier."""
    nb = NetlistBuilder().opamp("U1", {"A": ("IN_P", "M1", "OP"), "B": ("IN_N", "M2", "ON"),
                           "C": ("P3", "N3", "OUT")}, vpos="+5V", vneg="-5V")
    nb.r("R3", "OP", "M1").r("R4", "ON", "M2").r("R5", "M1", "M2", "1k")
    nb.r("R8", "ON", "N3").r("R9", "N3", "OUT").r("R10", "OP", "P3").r("R11", "P3", "GND")
    nb.pins_to("J1", "IN_P", "IN_N", "OUT", "GND")
    (s,) = find_stages(nb.build()).stages
    assert s.kind == "three-opamp"


# -- analysis against closed forms and ngspice ---------------------------------------------

def test_gain_and_output_common_mode_equal_the_closed_forms():
    r = analyse(_stage(_pair()), options=OPT)
    # G1 = 1 + (Rf1 + Rf2)/RG = 21 (docs/engineering.md sec. 3, Sedra & Smith Ex. 2.17);
    # worst case at Rf high / RG low and the reverse: 1 + 20.2k/0.99k, 1 + 19.8k/1.01k
    assert r.gain.nominal == pytest.approx(21.0, rel=1e-12)
    assert r.gain.worst_max == pytest.approx(1 + 20.2e3 / 0.99e3, rel=1e-12)
    assert r.gain.worst_min == pytest.approx(1 + 19.8e3 / 1.01e3, rel=1e-12)
    assert r.gain.worst_min < r.gain.p_low < 21.0 < r.gain.p_high < r.gain.worst_max
    # ideal op-amps: no common mode reaches o1 - o2, whatever the resistors (sec. 3a)
    assert r.cmrr.worst_db == math.inf and r.cmrr.statistical_db == math.inf
    d = r.differential_output
    assert d["output_cm_gain"] == pytest.approx(1.0, abs=1e-12)
    # (Rf1 - Rf2)/(2 RG) at the corners: +-(10.1k - 9.9k)/(2 x 0.99k) (sec. 3a)
    assert d["signal_to_output_cm"] == pytest.approx([-200 / 1980, 200 / 1980], rel=1e-9)
    assert sorted(r.varied) == ["RF1", "RF2", "RG"]
    assert any("sec. 3a" in n for n in r.notes)


def test_pair_cmrr_is_set_by_the_op_amps_alone():
    # two op-amps of 80 dB: worst 1/CMRR = 2 x 1e-4 -> 80 - 20 log10 2 = 73.98 dB (sec. 3a)
    m = model(aol=math.inf, cmrr_db=80.0)
    r = analyse(_stage(_pair(m=m, tol=0.0)), options=OPT)
    assert r.cmrr.worst_db == pytest.approx(80 - 20 * math.log10(2), abs=0.01)
    # with 1 % parts the op-amps' error is amplified by G1 at its highest corner while CMRR
    # takes the nominal Ad (frontcheck.analysis.tolerance, 'nominal' convention):
    # 21 / (21.404 x 2e-4)
    r = analyse(_stage(_pair(m=m)), options=OPT)
    g1max = 1 + 20.2e3 / 0.99e3
    assert r.cmrr.worst_db == pytest.approx(20 * math.log10(21 / (g1max * 2e-4)), abs=0.01)
    assert r.cmrr.contributors["resistors"] == math.inf


def test_next_stage_requirement_follows_the_chain_formula():
    # 1/CMRR_chain = 1/CMRR_pair + 1/(G1 CMRR_next) (docs/engineering.md sec. 3a; Sedra & Smith
    # Problem 2.75): Min 80 dB, pair unbounded, G1 = 10 -> next stage 60 dB
    assert next_stage_cmrr_db(80.0, math.inf, 10.0) == pytest.approx(60.0, abs=1e-12)
    # a pair of 86.02 dB (1/CMRR = 5e-5) leaves 1e-4 - 5e-5 = 5e-5 -> 1/(10 x 5e-5) = 66.02 dB
    assert next_stage_cmrr_db(80.0, -20 * math.log10(5e-5), 10.0) == pytest.approx(
        -20 * math.log10(10 * 5e-5), abs=1e-9)
    assert math.isnan(next_stage_cmrr_db(80.0, 70.0, 10.0))
    it = Intent(min_cmrr_db=80.0)
    r = analyse(_stage(_pair(), it), options=OPT)
    # lowest G1 of the corners, 1 + 19.8k/1.01k, takes the least out of the stage fed
    g1 = 1 + 19.8e3 / 1.01e3
    assert r.differential_output["next_stage_cmrr_db"] == pytest.approx(80 - 20 * math.log10(g1))


def test_headroom_of_both_outputs_over_the_corners():
    """Passes at nominal values, fails at a tolerance corner (checked by ngspice there)."""
    m = model(aol=math.inf, icm=(0.0, 0.0), swing=(0.7, 0.7))    # outputs to 4.3 V of +-5 V
    it = Intent(input_cm=(0.0, 2.18), input_diff=(-0.2, 0.2))
    r = analyse(_stage(_pair(m=m), it), options=OPT)
    hr = r.headroom
    # nominal: o1 = IN+ + Rf1 Vd/RG = (2.18 + 0.1) + 2.0 = 4.28 V, 20 mV inside 4.3 V (sec. 3)
    assert hr.nominal_margin_v == pytest.approx(0.02, abs=1e-9)
    # corner Rf1 high, RG low: 2.28 + 10.1k x 0.2/0.99k = 4.32040 V, 20.4 mV past the limit,
    # and the same for o2 at Vd = -0.2 V with Rf2 high
    worst = 2.28 + 10.1e3 * 0.2 / 0.99e3
    assert hr.margin_v == pytest.approx(4.3 - worst, abs=1e-9)
    worst_out = {c.opamp: c for c in hr.checks if c.node == "output"}
    assert worst_out["U1A"].tolerances == {"RF1": "high", "RG": "low"}
    assert worst_out["U1B"].voltage == pytest.approx(worst, abs=1e-9)
    outs = {(c.opamp, c.node) for c in hr.checks}
    assert {("U1A", "output"), ("U1B", "output"), ("U1A", "input"), ("U1B", "input")} <= outs
    spice = shutil.which("ngspice")
    if spice is None:
        pytest.skip("ngspice not installed")
    sub = _pair(m=model(aol=1e8, swing=(0.7, 0.7)))    # ngspice: finite gain, G1/A = 2e-7
    rows = run(spice, write_deck(sub, [{"vcm": 2.18, "vd": 0.2,
                                        "R": {"RF1": 10.1e3, "RG": 0.99e3}}], ["O1", "O2"]),
               ["O1", "O2"])
    assert rows[0]["O1"] == pytest.approx(worst, abs=1e-5)


def _spice_gains(sub, corners, cmrr_signs=None):
    exe = shutil.which("ngspice")
    if exe is None:
        pytest.skip("ngspice not installed")
    cases = []
    for R, c in corners:
        for vcm, vd in ((0.0, 0.0), (1.0, 0.0), (0.0, 1.0)):
            case = {"vcm": vcm, "vd": vd, "R": R}
            if c:
                case["c"] = c
            cases.append(case)
    rows = run(exe, write_deck(sub, cases, ["O1", "O2"], split=True), ["O1", "O2"])
    out = []
    for i in range(0, len(rows), 3):
        d0, dcm, dd = (rows[i + k]["O1"] - rows[i + k]["O2"] for k in range(3))
        out.append((dd - d0, dcm - d0))
    return out


def test_worst_case_gain_and_cmrr_equal_ngspice_over_all_corners():
    m = model(aol=1e5, cmrr_db=80.0)
    sub = _pair(rf1=10e3, rf2=12e3, rg=2e3, tol=0.01, m=m)
    r = analyse(_stage(sub), options=Options(mc_samples=0))
    corners = []
    for signs in itertools.product((-1, 1), repeat=3):
        R = {x.name: x.ohms.value * (1 + s * 0.01) for x, s in zip(sub.resistors, signs)}
        for cs in itertools.product((-1, 1), repeat=2):
            corners.append((R, {"U1A": cs[0] * 1e-4, "U1B": cs[1] * 1e-4}))
    got = _spice_gains(sub, corners)
    ads = [g[0] for g in got]
    assert r.gain.worst_min == pytest.approx(min(ads), rel=1e-7)
    assert r.gain.worst_max == pytest.approx(max(ads), rel=1e-7)
    nominal = _spice_gains(sub, [({}, {"U1A": 0.0, "U1B": 0.0})])[0][0]   # CMRR terms off
    assert r.gain.nominal == pytest.approx(nominal, rel=1e-9)
    worst_db = 20 * math.log10(abs(nominal) / max(abs(acm) for _, acm in got))
    assert r.cmrr.worst_db == pytest.approx(worst_db, abs=0.01)


# -- the whole pipeline and every report format --------------------------------------------

def test_pair_in_every_report_format():
    fields = {"Target Gain": "21", "Gain Tol": "0.5%", "Min CMRR": "80 dB",
              "Input CM": "-1..1 V", "Input Diff": "-0.1..0.1 V"}
    nl = _board(fields=fields, tol="0.1%").build()
    pr = check_netlist(nl, None, "pair", "pair.net", RunOptions(samples=2000))
    assert [s.kind for s in pr.stages] == ["diff-output"]
    res = pr.results["U1A+U1B"]
    # 0.1 % parts: G1 corners 1 + 20.02k/0.999k and 1 + 19.98k/1.001k, inside 21 +- 0.5 %
    assert res.gain.worst_max == pytest.approx(1 + 20.02e3 / 0.999e3, rel=1e-9)
    assert not [f for f in pr.findings if f.rule == "gain-error" and f.severity != "info"]
    (cm,) = [f for f in pr.findings if f.rule == "cmrr-budget"]
    assert cm.severity == "info" and "OP - ON" in cm.message and "needs a CMRR of at least" in cm.message
    assert not [f for f in pr.findings if f.rule in ("ratio-mismatch", "ref-floating")]
    report = Report(projects=[pr], tool={"name": "frontcheck"})
    doc = json.loads(render(report, "json"))
    (st,) = doc["stages"]
    assert st["kind"] == "diff-output" and st["roles"]["gain_resistor"] == "R5"
    assert st["gain"]["nominal"] == pytest.approx(21.0)
    assert st["differential_output"]["output_cm_gain"] == pytest.approx(1.0)
    assert {c["opamp"] for c in st["headroom"]["checks"]} == {"U1A", "U1B"}
    for fmt in ("text", "markdown", "html"):
        assert "U1A+U1B" in render(report, fmt)
    assert "in-amp input stage (differential output)" in render(report, "markdown")
    sarif = json.loads(render(report, "sarif"))
    assert any("OP - ON" in x["message"]["text"] for x in sarif["runs"][0]["results"])


def test_gain_resistor_split_at_a_centre_tap():
    """RG as two halves meeting at a tap (decoupled to ground): still the pair, with
    G1 = 1 + (Rf1 + Rf2)/(RGa + RGb) (docs/engineering.md sec. 3) and the tap inside the stage."""
    nb = NetlistBuilder().opamp("U1", {"A": ("IN_P", "M1", "OP"), "B": ("IN_N", "M2", "ON")}, package="dual",
                    vpos="+5V", vneg="-5V")
    nb.r("R3", "OP", "M1", "10k").r("R4", "ON", "M2", "10k")
    nb.r("R5", "M1", "CT", "500").r("R9", "CT", "M2", "500").c("C9", "CT", "GND")
    nb.r("R6", "IN_P", "GND", "1M").r("R7", "IN_N", "GND", "1M")
    nl = nb.pins_to("J1", "IN_P", "IN_N", "OP", "ON", "GND").build()
    rec = find_stages(nl)
    (s,) = rec.stages
    assert s.kind == "diff-output" and rec.near_misses == []
    assert s.roles == {"feedback_p": "R3", "feedback_n": "R4", "gain_resistor": "R5+R9",
                       "gain_resistor_p": "R5", "gain_resistor_n": "R9"}
    r = analyse(s, nl, options=Options(mc_samples=0))
    assert r.gain.nominal == pytest.approx(1 + 20e3 / 1e3, rel=1e-12)
    nb.comps["R9"].value = nb.comps["R9"].fields["Value"] = "?"
    rec = find_stages(nb.build())
    assert rec.stages == [] and [m.ref for m in rec.near_misses] == ["R9"]
