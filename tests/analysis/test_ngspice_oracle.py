"""Oracle tier: the very SubCircuit solved by ngspice (op-amps as B-sources, docs/engineering.md
sec. 9) against the batched MNA: gains, resistor-limited worst-case CMRR over every tolerance
corner, op-amp CMRR in the worst sign, and headroom corner node voltages."""

from __future__ import annotations

import math

import numpy as np
import pytest

from frontcheck.analysis import headroom as H
from frontcheck.analysis import tolerance as T
from spice import diff_amp, model, run, three_opamp, two_opamp, write_deck

pytestmark = pytest.mark.oracle

A = 1e7   # B-source op-amp open-loop gain (docs/engineering.md sec. 9); the MNA uses the same

M = model(aol=A, icm=(1.5, 1.5), swing=(0.2, 0.2))


def _stages():
    # Nominal values slightly off ideal ratios (E96-like), so Acm is not zero at nominal.
    d = diff_amp(10e3, 49.9e3, 10.0e3, 49.7e3, tol=0.01, m=M)
    t = three_opamp(rf=24.9e3, rg=4.99e3, ra=10e3, rb=20e3, tol=0.001, m=M)
    t.resistors[-1].ohms = type(t.resistors[-1].ohms)(20.05e3)
    t0 = three_opamp(rf=24.9e3, ra=10e3, rb=20.05e3, tol=0.001, m=M, with_rg=False)
    w = two_opamp(r1=40.2e3, r2=10e3, tol=0.001, m=M)
    w.resistors[0].ohms = type(w.resistors[0].ohms)(40.0e3)
    return {"difference": d, "three-opamp": t, "three-opamp-no-RG": t0, "two-opamp": w}


STAGES = _stages()


def _spice_gains(exe, sub, rth=None):
    rows = run(exe, write_deck(sub, [{}, {"vcm": 10.0}, {"vd": 1.0}, {"vref": 1.0}], ["OUT"],
                               ref_rth=rth), ["OUT"])
    v0 = rows[0]["OUT"]
    return (rows[2]["OUT"] - v0), (rows[1]["OUT"] - v0) / 10.0, rows[3]["OUT"] - v0


def _ours(sub, series=None):
    ctx = T.make_context(sub, series)
    g = ctx.evaluate(np.zeros((1, len(ctx.var.names))), use_opamp_cmrr=False)
    return float(g.ad[0]), float(g.acm[0]), float(g.aref[0])


@pytest.mark.parametrize("kind", list(STAGES))
def test_gains_match_ngspice(ngspice, kind):
    sub = STAGES[kind]
    ad, acm, aref = _ours(sub)
    sad, sacm, saref = _spice_gains(ngspice, sub)
    assert ad == pytest.approx(sad, rel=1e-4)
    assert aref == pytest.approx(saref, rel=1e-4)
    # Small Acm: ngspice's round-off floor is about 1e-9 V per volt of CM (docs/engineering.md
    # sec. 9); through the 1e7 B-source gain it reaches a few 1e-8 V at 10 V CM, so 1e-8 absolute.
    assert acm == pytest.approx(sacm, rel=1e-3, abs=1e-8)


def test_ref_thevenin_matches_ngspice(ngspice):
    # docs/engineering.md sec. 5 check circuit (G = 1, 10 k, Rth = 10 ohm): Ad 1.00025, 66.03 dB.
    sub = diff_amp(10e3, 10e3, 10e3, 10e3, m=M)
    ad, acm, _ = _ours(sub, {"ref": 10.0})
    sad, sacm, _ = _spice_gains(ngspice, sub, rth=10.0)
    assert ad == pytest.approx(sad, rel=1e-6) and ad == pytest.approx(1.00025, abs=5e-6)
    assert acm == pytest.approx(sacm, rel=1e-4, abs=1e-9)
    assert 20 * math.log10(sad / abs(sacm)) == pytest.approx(66.03, abs=0.005)


@pytest.mark.parametrize("kind", list(STAGES))
def test_resistor_limited_worst_cmrr_matches_ngspice(ngspice, kind):
    # Every tolerance corner run in ngspice (alter in one deck); the worst CMRR with the
    # nominal Ad agrees with the batched corner enumeration within 0.1 dB.
    sub = STAGES[kind]
    _, cmrr, _, _ = T.analyse_tolerance(sub, T.Options(mc_samples=0))
    var = T.variables(sub)
    xs = T.corner_matrix(len(var.names))
    R = var.values(xs)
    cases = [{"vcm": 10.0, "R": {r.name: float(R[i, j]) for j, r in enumerate(sub.resistors)}}
             for i in range(R.shape[0])]
    rows = run(ngspice, write_deck(sub, cases, ["OUT"]), ["OUT"])
    sad, _, _ = _spice_gains(ngspice, sub)
    acm = np.array([r["OUT"] for r in rows]) / 10.0
    with np.errstate(divide="ignore"):   # a corner keeping every ratio prints Acm = 0
        worst = float(np.min(20 * np.log10(abs(sad) / np.abs(acm))))
    assert len(rows) == 2 ** len(var.names)
    assert cmrr.contributors["resistors"] == pytest.approx(worst, abs=0.1)


def test_opamp_cmrr_worst_sign_matches_ngspice(ngspice):
    # 1/CMRR_total = 1/CMRR_R +- 1/CMRR_OA, worst sign (Pallas-Areny & Webster 1991; sum form
    # [memory], docs/engineering.md sec. 2 "verified here by ngspice"): every resistor corner with
    # both signs of the op-amp's CMRR term in ngspice.
    sub = diff_amp(10e3, 10e3, 10e3, 10e3, tol=0.001, m=model(aol=A, cmrr_db=80.0))
    _, cmrr, _, _ = T.analyse_tolerance(sub, T.Options(mc_samples=0))
    var = T.variables(sub)
    R = var.values(T.corner_matrix(len(var.names)))
    cases = [{"vcm": 10.0, "R": {r.name: float(R[i, j]) for j, r in enumerate(sub.resistors)}}
             for i in range(R.shape[0])]
    acm = []
    for sign in (1.0, -1.0):
        rows = run(ngspice, write_deck(sub, cases, ["OUT"], cmrr_sign=sign), ["OUT"])
        acm += [r["OUT"] / 10.0 for r in rows]
    sad, _, _ = _spice_gains(ngspice, sub)
    worst = float(np.min(20 * np.log10(abs(sad) / np.abs(acm))))
    assert cmrr.worst_db == pytest.approx(worst, abs=0.1)


@pytest.mark.parametrize("kind", list(STAGES))
def test_headroom_corner_voltages_match_ngspice(ngspice, kind):
    # Every op-amp input and output at the four corners of a declared box: the affine node
    # model is exact (docs/engineering.md sec. 4), so the voltages agree to 1e-6 V.
    sub = STAGES[kind]
    box, vref = (-2.0, 3.0, -0.05, 0.08), 1.25
    hr = H.headroom(sub, box=box, vref=vref)
    nets = sorted({c.net for c in hr.checks})
    corners = sorted({c.corner for c in hr.checks})
    rows = run(ngspice, write_deck(sub, [{"vcm": a, "vd": b, "vref": vref} for a, b in corners], nets), nets)
    got = {(corner, net): row[net] for corner, row in zip(corners, rows) for net in nets}
    assert len(hr.checks) == 4 * 2 * len(sub.opamps)
    for c in hr.checks:
        assert c.voltage == pytest.approx(got[(c.corner, c.net)], abs=1e-6)


def test_input_filter_matches_ngspice_ac(ngspice):
    # docs/engineering.md sec. 7 filter [derived, ngspice AC-verified]: at our f_DM and f_CM
    # ngspice's AC analysis shows the -3 dB point; the worst CM -> DM conversion over the 16 corners
    # of R +-1 % and Cc +-5 % (run one by one in ngspice) equals ours.
    import itertools
    from spice import run_ac
    from test_analysis_tolerance import _filter_stage
    for cd in (True, False):
        sub = _filter_stage(cd)
        f = T.input_filter(sub)
        dm = run_ac(ngspice, sub, f.f_dm_hz, "dm", [("FP", "FN")])[0]
        cm = run_ac(ngspice, sub, f.f_cm_hz, "cm", [("FP", "GND")])[0]
        assert dm == pytest.approx(1 / math.sqrt(2), rel=1e-5)
        assert cm == pytest.approx(1 / math.sqrt(2), rel=1e-5)
        freq = 1e3 if cd else 1e4
        worst = 0.0
        for sr1, sr2, sc1, sc2 in itertools.product((-1, 1), repeat=4):
            vals = {"R10": 4.02e3 * (1 + 0.01 * sr1), "R11": 4.02e3 * (1 + 0.01 * sr2),
                    "C1": 1e-9 * (1 + 0.05 * sc1), "C2": 1e-9 * (1 + 0.05 * sc2)}
            worst = max(worst, run_ac(ngspice, sub, freq, "cm", [("FP", "FN")], vals)[0])
        assert f.cm_to_dm[freq] == pytest.approx(worst, rel=1e-6)


@pytest.mark.parametrize("aol", [A, 2e4])
def test_ref_on_inverting_input_net_matches_ngspice(ngspice, aol):
    # REF on the -IN net (a shunt amplifier referred to the shunt's low side): ngspice drives
    # the one net from the -IN source and reads the output relative to it; our gains are of
    # that same difference (frontcheck.analysis.mna.compile_circuit, shared-net case).
    from dataclasses import replace

    sub = diff_amp(1e3, 250e3, 1.02e3, 249e3, m=model(aol=aol))
    sub = replace(sub, resistors=[replace(r, b="IN_N") if r.name == "R4" else r for r in sub.resistors],
                  ports={**sub.ports, "ref": "IN_N"})
    deck_sub = replace(sub, ports={k: v for k, v in sub.ports.items() if k != "ref"})
    rows = run(ngspice, write_deck(deck_sub, [{}, {"vcm": 10.0}, {"vd": 1.0}], ["OUT", "IN_N"]),
               ["OUT", "IN_N"])
    rel = [r["OUT"] - r["IN_N"] for r in rows]
    sad, sacm = rel[2] - rel[0], (rel[1] - rel[0]) / 10.0
    # The deck's Vd is split +-Vd/2 about Vcm as our ports are, so -IN itself moves by -Vd/2.
    ad, acm, aref = _ours(sub)
    assert ad == pytest.approx(sad, rel=1e-6)
    assert acm == pytest.approx(sacm, rel=1e-4, abs=1e-8)
    assert aref == 0.0
