"""Ideal-op-amp figures and op-amp requirements against closed forms and hand calculations."""

from __future__ import annotations

import itertools
import math

import pytest

from frontcheck.analysis import analyse
from frontcheck.analysis.requirements import summary_lines
from frontcheck.circuit import IDEAL_OPAMP, Intent, OpAmpModel, Sourced, Stage
from spice import diff_amp, three_opamp


def _stage(sub, kind="difference", **intent) -> Stage:
    return Stage(id="U1A", kind=kind, references=sorted(r.name for r in sub.resistors) + ["U1"],
                 amplifiers=[o.name for o in sub.opamps], roles={}, circuit=sub,
                 intent=Intent(**intent))


def _ideal(sub):
    for o in sub.opamps:
        o.model = IDEAL_OPAMP
    return sub


def _diff_gains(r1, r2, r3, r4):
    # Sedra & Smith, Microelectronic Circuits, 6th ed., Eq. 2.19 context (docs/engineering.md
    # sec. 1): Ad and Acm of the four-resistor difference amplifier with an ideal op-amp.
    ad = (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))
    acm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    return ad, acm


def _worst_diff_cmrr(r1, r2, r3, r4, t):
    ad0 = _diff_gains(r1, r2, r3, r4)[0]
    worst = max(abs(_diff_gains(r1 * (1 + a * t), r2 * (1 + b * t), r3 * (1 + c * t),
                                r4 * (1 + d * t))[1])
                for a, b, c, d in itertools.product((-1, 1), repeat=4))
    return 20 * math.log10(ad0 / worst)


def test_difference_amp_ideal_gain_and_worst_cmrr_closed_form():
    # G = 10, 1 % parts: the closed form over the 16 corners; the first-order bound
    # (1+G)/(4t) of Sedra & Smith Problem 2.67 gives 48.79 dB, the exact corner (with the
    # nominal Ad) 0.16 dB less.
    sub = _ideal(diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.01))
    r = analyse(_stage(sub), options=None)
    assert r.gain.nominal == pytest.approx(10.0, rel=1e-12)
    assert r.cmrr.worst_db == pytest.approx(_worst_diff_cmrr(1e3, 10e3, 1e3, 10e3, 0.01), abs=1e-6)
    assert r.cmrr.worst_db == pytest.approx(20 * math.log10(11 / 0.04), abs=0.2)
    assert all(b.model == "ideal (no part data)" and not b.numbers for b in r.opamps)


def test_three_opamp_inamp_ideal_gain_and_worst_cmrr_closed_form():
    # Rf 24.9k, RG 499, unity stage 2 of 10k, all 0.1 %: G = 1 + 2 Rf/RG = 100.80 (Sedra &
    # Smith 6th ed., Ex. 2.17); with ideal op-amps stage 1 passes common mode at unity, so
    # Acm is stage 2's alone (Problem 2.75; Pallas-Areny & Webster 1991) and the worst CMRR is
    # G / max |Acm2| over stage 2's corners, with Acm2 of the difference-amp formula.
    sub = _ideal(three_opamp(rf=24.9e3, rg=499.0, ra=10e3, rb=10e3, tol=0.001))
    r = analyse(_stage(sub, kind="three-opamp"))
    g = 1 + 2 * 24.9e3 / 499.0
    assert r.gain.nominal == pytest.approx(g, rel=1e-12)
    assert round(r.gain.nominal, 2) == 100.80
    t = 0.001
    worst_acm = max(abs(_diff_gains(10e3 * (1 + a * t), 10e3 * (1 + b * t), 10e3 * (1 + c * t),
                                    10e3 * (1 + d * t))[1])
                    for a, b, c, d in itertools.product((-1, 1), repeat=4))
    assert r.cmrr.worst_db == pytest.approx(20 * math.log10(g / worst_acm), abs=1e-6)
    assert r.cmrr.worst_db == pytest.approx(94.0, abs=0.5)          # the "near 94 dB"


def test_cmrr_requirement_by_hand():
    # docs/engineering.md sec. 11 example [derived]: G = 10, four 0.1 % resistors, exact worst
    # CMRR_R = 68.79 dB, Min CMRR 60 dB -> 1/CMRR_OA <= 1/CMRR_min - 1/CMRR_R: the op-amp needs
    # 63.93 dB. Worst-case addition of input-referred errors: Pallas-Areny & Webster, IEEE
    # Trans. Instrum. Meas. 40(4), 1991.
    # (68.79 dB is the bound (1+G)/(4t); the exact corner with the nominal Ad is 68.77 dB and
    # moves the requirement by 0.01 dB.)
    sub = _ideal(diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.001))
    r = analyse(_stage(sub, min_cmrr_db=60.0))
    exact = _worst_diff_cmrr(1e3, 10e3, 1e3, 10e3, 0.001)
    assert r.cmrr.worst_db == pytest.approx(exact, abs=1e-6)
    assert exact == pytest.approx(68.79, abs=0.03)
    hand = -20 * math.log10(10 ** (-60 / 20) - 10 ** (-exact / 20))
    (req,) = [q for q in r.requirements if q.quantity == "cmrr_db"]
    assert req.min == pytest.approx(hand, abs=1e-6)
    assert req.min == pytest.approx(63.93, abs=0.015)
    assert req.references == ["U1"] and req.max is None and req.unit == "dB"
    assert req.given is None and req.met is None


def test_aol_requirement_by_hand():
    # docs/engineering.md sec. 11 check value [derived]: G = 10, A = 1000 -> 9.8912
    # (G A b / (1 + A b), b = 1/11). Exact resistors and a target 10 with the band's low edge
    # at 9.8912 need A >= 1000.
    sub = _ideal(diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.0))
    low = 10 * 1000 / 11 / (1 + 1000 / 11)
    assert low == pytest.approx(9.8912, abs=5e-5)
    r = analyse(_stage(sub, target_gain=10.0, gain_tol=1 - low / 10))
    (req,) = [q for q in r.requirements if q.quantity == "aol"]
    assert req.min == pytest.approx(1000.0, rel=1e-6)


def test_part_data_that_misses_its_cmrr_requirement():
    # The same stage with a CMRR field of 60 dB: below the 63.93 dB it needs, and the stage's
    # worst case (68.79 dB and 60 dB added in magnitude) misses the 60 dB minimum.
    m = OpAmpModel("part data", cmrr_db=Sourced(60.0, "field", "CMRR field of U1"))
    sub = diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.001)
    sub.opamps[0].model = m
    r = analyse(_stage(sub, min_cmrr_db=60.0))
    (req,) = [q for q in r.requirements if q.quantity == "cmrr_db"]
    assert req.given.value == 60.0 and req.met is False
    assert req.min == pytest.approx(63.93, abs=0.015)
    assert r.cmrr.worst_db < 60.0
    (line,) = summary_lines(r.requirements)
    assert "CMRR >= 63.9 dB" in line and "CMRR field of U1" in line


def test_ideal_opamp_that_cannot_meet_the_target_gets_no_requirement():
    # 1 % parts allow only 48.8 dB: no op-amp can reach 60 dB, so no requirement (cmrr-budget).
    sub = _ideal(diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.01))
    r = analyse(_stage(sub, min_cmrr_db=60.0))
    assert not [q for q in r.requirements if q.quantity == "cmrr_db"]


def test_cmrr_budget_names_the_part_data_that_misses_its_requirement():
    # The part-data case above through the rules: an error (the stage's worst case misses the
    # minimum with that part) naming the number, its source and the requirement.
    from frontcheck.checks import run_rules
    from rule_fixtures import context, only

    m = OpAmpModel("part data", cmrr_db=Sourced(60.0, "field", "CMRR field of U1"))
    sub = diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.001)
    sub.opamps[0].model = m
    st = _stage(sub, min_cmrr_db=60.0)
    fs = only(run_rules(context([st], [analyse(st)])), "cmrr-budget")
    miss = [f for f in fs if "requirement" in f.data]
    assert len(miss) == 1 and miss[0].severity == "error"
    assert "60.0 dB (CMRR field of U1)" in miss[0].message and ">= 63.9 dB" in miss[0].message
    assert miss[0].references == ["U1"]


def _inamp_requirements(**intent):
    # Rf 24.9k, RG 499, unity stage 2 of 10k, exact resistors, ideal op-amps:
    # G1 = 1 + 2 Rf/RG = 100.80 (Sedra & Smith 6th ed., Ex. 2.17)
    sub = _ideal(three_opamp(rf=24.9e3, rg=499.0, ra=10e3, rb=10e3, tol=0.0))
    st = _stage(sub, kind="three-opamp", **intent)
    return st, analyse(st)


def test_inamp_cmrr_requirement_per_position_closed_form():
    # Exact resistors: nothing but the op-amps limits CMRR, so a Min CMRR of 100 dB leaves
    # room = 1e-5 (1/CMRR_min). Each first-stage op-amp's error Vcm/CMRR reaches the input at
    # unity; the difference stage's at 1/G1 (its input CM Vcm/2, its noise gain 2, over the
    # gain G1 x 1) [derived, docs/engineering.md sec. 11; worst-case sum of input-referred
    # errors: Pallas-Areny & Webster, IEEE Trans. Instrum. Meas. 40(4), 1991]. Equal shares of
    # the room per op-amp (three): first stage 20 log10(3 / 1e-5) = 109.54 dB each, difference
    # stage 20 log10(3 / (G1 1e-5)) = 69.47 dB: 20 log10(G1) = 40.07 dB less.
    st, r = _inamp_requirements(min_cmrr_db=100.0)
    g1 = 1 + 2 * 24.9e3 / 499.0
    by = {q.opamps[0]: q for q in r.requirements if q.quantity == "cmrr_db"}
    first, second, diff = (by[n] for n in st.amplifiers)
    assert first.min == pytest.approx(20 * math.log10(3 / 1e-5), abs=1e-3)
    assert second.min == pytest.approx(first.min, abs=1e-9)
    assert diff.min == pytest.approx(20 * math.log10(3 / (g1 * 1e-5)), abs=1e-3)
    assert first.min - diff.min == pytest.approx(20 * math.log10(g1), abs=1e-3)
    assert "first-stage op-amp" in first.because and "difference-stage op-amp" in diff.because
    # with each op-amp at its own requirement and the errors in their worst signs, the stage
    # reaches exactly the declared 100 dB: sum s_i / CMRR_i = 1e-5
    total = 2 * 10 ** (-first.min / 20) + (1 / g1) * 10 ** (-diff.min / 20)
    assert 20 * math.log10(1 / total) == pytest.approx(100.0, abs=1e-3)


def test_inamp_aol_requirement_per_position_fills_the_gain_band():
    # Target Gain G1 -0.1 %: the room 1/(1 - 0.001) - 1 = 1.001e-3 is shared equally by the
    # three op-amps, each by the relative gain drop its 1/A causes [derived, docs/engineering.md
    # sec. 11, from the loop gain A b of Sedra & Smith 6th ed. sec. 2.8]: a first-stage op-amp,
    # the other one ideal, has feedback b = RG/(Rf + RG) against the other's fixed inverting
    # input and lowers the differential output by (1/b - 1/2)/A = (G1/2)/A = 50.4/A; the unity
    # difference stage by its noise gain (1 + G2)/A = 2/A. So A >= 3 x 50.4 / room = 151,048
    # for each of the pair and 3 x 2 / room = 5,994 for the difference stage. With every op-amp
    # at exactly its requirement the gain is the band's lower edge, to first order in 1/A.
    g1 = 1 + 2 * 24.9e3 / 499.0
    room = 1 / (1 - 0.001) - 1
    st, r = _inamp_requirements(target_gain=g1, gain_tol=0.001)
    by = {q.opamps[0]: q for q in r.requirements if q.quantity == "aol"}
    first, second, diff = (by[n] for n in st.amplifiers)
    assert first.min == pytest.approx(3 * (g1 / 2) / room, rel=1e-6)
    assert second.min == pytest.approx(first.min, rel=1e-9)
    assert diff.min == pytest.approx(3 * 2 / room, rel=1e-6)
    assert "first-stage op-amp" in first.because and "difference-stage op-amp" in diff.because
    sub = st.circuit
    for o in sub.opamps:
        o.model = OpAmpModel("part data", aol=Sourced(by[o.name].min, "field", "Aol field"))
    again = analyse(_stage(sub, kind="three-opamp"))
    assert again.gain.nominal == pytest.approx(g1 * (1 - 0.001), rel=2e-6)


def _given_cmrr(sub, first_db, diff_db):
    for o, db in zip(sub.opamps, (first_db, first_db, diff_db)):
        o.model = OpAmpModel("part data", cmrr_db=Sourced(db, "field", f"CMRR field of {o.name}"))


def test_inamp_part_data_checked_per_position_without_false_alarm():
    # The in-amp above, Min CMRR 100 dB (room 1e-5), with part data: first-stage op-amps
    # 115 dB (each 1.7783e-6 at the input), difference stage 80 dB (x 1/G1: 9.9207e-7).
    # Together 4.5486e-6 <= 1e-5: the stage meets its minimum, so no part may miss its
    # requirement. Each may use what the others leave [derived, docs/engineering.md sec. 11]:
    #   first stage  20 log10(1 / (1e-5 - 1.7783e-6 - 9.9207e-7))   = 102.82 dB
    #   difference   20 log10((1/G1) / (1e-5 - 2 x 1.7783e-6))       = 63.75 dB
    sub = three_opamp(rf=24.9e3, rg=499.0, ra=10e3, rb=10e3, tol=0.0)
    _given_cmrr(sub, 115.0, 80.0)
    r = analyse(_stage(sub, kind="three-opamp", min_cmrr_db=100.0))
    by = {q.opamps[0]: q for q in r.requirements if q.quantity == "cmrr_db"}
    assert by["U1A"].min == pytest.approx(102.82, abs=0.005)
    assert by["U1C"].min == pytest.approx(63.75, abs=0.005)
    assert all(q.met for q in by.values())
    assert r.cmrr.worst_db >= 100.0
    # a 60 dB difference stage (9.9207e-6 at the input) breaks the minimum: it misses its
    # 63.75 dB, and the stage's worst case says so too
    sub = three_opamp(rf=24.9e3, rg=499.0, ra=10e3, rb=10e3, tol=0.0)
    _given_cmrr(sub, 115.0, 60.0)
    r = analyse(_stage(sub, kind="three-opamp", min_cmrr_db=100.0))
    by = {q.opamps[0]: q for q in r.requirements if q.quantity == "cmrr_db"}
    assert by["U1C"].met is False and by["U1C"].min == pytest.approx(63.75, abs=0.005)
    assert r.cmrr.worst_db < 100.0


def _ngspice_gain(sub, dyn, drive, signs):
    """v(out) at 1 Hz from ngspice with each op-amp's CMRR term given its own sign."""
    import re

    from spice import node
    from spice_ac import _run, deck
    lines = deck(sub, dynamics=dyn, drive=drive)
    for k, (d, sign) in enumerate(zip(dyn, signs)):
        c = 10 ** (-d.cmrr_db / 20)
        i = next(j for j, ln in enumerate(lines) if ln.startswith(f"B{k} "))
        lines[i] = lines[i].replace(f"{c!r}*0.5", f"{sign * c!r}*0.5")
    out = node(sub.ports["out"])
    lines += [".control", "set numdgt=15", "ac lin 1 1 1", f"print real(v({out})) imag(v({out}))",
              ".endc", ".end"]
    text = _run(lines)
    re_ = float(re.search(r"^real\(v\([^)]*\)\)\s*=\s*([-+0-9.eE]+)", text, re.MULTILINE)[1])
    im_ = float(re.search(r"^imag\(v\([^)]*\)\)\s*=\s*([-+0-9.eE]+)", text, re.MULTILINE)[1])
    return complex(re_, im_)


@pytest.mark.oracle
def test_inamp_cmrr_requirements_per_position_confirmed_by_ngspice(ngspice):
    # The op-amps of the in-amp above at exactly their per-position requirements (109.54 dB,
    # 109.54 dB, 69.47 dB), their CMRR errors in every combination of signs: ngspice's worst
    # CMRR of the stage is the declared 100 dB (Aol 1e9: larger open-loop gains lose digits in
    # ngspice's solve).
    from frontcheck.analysis.small_signal import OpAmpDynamics
    st, r = _inamp_requirements(min_cmrr_db=100.0)
    by = {q.opamps[0]: q.min for q in r.requirements if q.quantity == "cmrr_db"}
    dyn = [OpAmpDynamics(aol=1e9, cmrr_db=by[o.name]) for o in st.circuit.opamps]
    worst = math.inf
    for sb, sc in itertools.product((1.0, -1.0), repeat=2):
        signs = (1.0, sb, sc)
        acm = abs(_ngspice_gain(st.circuit, dyn, "cm", signs))
        ad = abs(_ngspice_gain(st.circuit, dyn, "dm", signs))
        worst = min(worst, 20 * math.log10(ad / acm))
    assert worst == pytest.approx(100.0, abs=0.01)
