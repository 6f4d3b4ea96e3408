"""Batched MNA against closed forms of the textbook topologies (docs/engineering.md secs. 1, 3,
5)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from frontcheck.analysis import mna, tolerance
from frontcheck.circuit import SubCircuit
from frontcheck.errors import InputError
from spice import diff_amp, model, opamp, res, three_opamp, two_opamp


def _gains(sub, series=None, ideal=True):
    ctx = tolerance.make_context(sub, series, ideal_opamps=ideal)
    g = ctx.evaluate(np.zeros((1, len(ctx.var.names))), use_opamp_cmrr=False)
    return float(g.ad[0]), float(g.acm[0]), float(g.aref[0])


ohms = st.floats(min_value=100.0, max_value=1e6)


@settings(max_examples=60, deadline=None)
@given(ohms, ohms, ohms, ohms)
def test_difference_amp_matches_closed_form(r1, r2, r3, r4):
    # Closed forms of docs/engineering.md sec. 1 [derived; Sedra & Smith 6th ed., Eq. 2.19 context].
    ad, acm, aref = _gains(diff_amp(r1, r2, r3, r4))
    ad_x = (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))
    acm_x = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    gref_x = r3 * (r1 + r2) / (r1 * (r3 + r4))
    assert ad == pytest.approx(ad_x, rel=1e-9)
    assert acm == pytest.approx(acm_x, rel=1e-7, abs=1e-12 * ad_x)
    assert aref == pytest.approx(gref_x, rel=1e-9)


@pytest.mark.parametrize("aol", [1e3, 1e5])
def test_finite_open_loop_gain_factor(aol):
    # Every closed-loop gain times A b/(1 + A b), b = R1/(R1+R2) (docs/engineering.md sec. 1
    # [derived]).
    sub = diff_amp(1e3, 10e3, 1e3, 10e3, m=model(aol=aol))
    ad, _, aref = _gains(sub, ideal=False)
    b = 1e3 / 11e3
    k = aol * b / (1 + aol * b)
    assert ad == pytest.approx(10 * k, rel=1e-10)
    assert aref == pytest.approx(1 * k, rel=1e-10)


def test_three_opamp_sedra_ex_2_17_node_values():
    # Sedra & Smith 6th ed., Ex. 2.17 (node values as read, docs/engineering.md sec. 3): Vcm = 5 V,
    # vd = 10 mV, RG = 2R1 = 1 k, Rf = R2 = 0.5 M, R3 = R4 = 10 k -> Vo1/Vo2 = 5 +- 5.005 V,
    # A3 inputs 2.5 +- 2.5025 V, Vout = +-10.01 V.
    sub = three_opamp(rf=0.5e6, rg=1e3, ra=10e3, rb=10e3)
    c = mna.node_affine(sub, ["O1", "O2", "P3", "OUT"], ainv=np.zeros(3))
    for vd, sgn in ((0.01, 1), (-0.01, -1)):
        v = {n: float(c[n] @ np.array([5.0, vd, 0.0, 1.0])) for n in c}
        assert v["O1"] == pytest.approx(5 + sgn * 5.005, abs=1e-9)
        assert v["O2"] == pytest.approx(5 - sgn * 5.005, abs=1e-9)
        assert v["P3"] == pytest.approx(2.5 + sgn * 2.5025, abs=1e-9)
        assert v["OUT"] == pytest.approx(sgn * 10.01, abs=1e-9)


def test_three_opamp_gain_and_rg_absent():
    # G = (1 + (Rf1+Rf2)/RG) * Rb/Ra (docs/engineering.md sec. 3 [source: Sedra & Smith Ex. 2.17]).
    assert _gains(three_opamp(rf=24.9e3, rg=2.49e3, ra=10e3, rb=20e3))[0] == pytest.approx(
        (1 + 2 * 24.9 / 2.49) * 2, rel=1e-10)
    assert _gains(three_opamp(rf=24.9e3, ra=10e3, rb=20e3, with_rg=False))[0] == pytest.approx(2, rel=1e-10)


def test_two_opamp_gain():
    # Two-op-amp in-amp with R3 = R2, R4 = R1: G = 1 + R4/R3, Gref = 1 [derived from the two
    # inverting/non-inverting stages, common practice].
    ad, acm, aref = _gains(two_opamp(r1=40e3, r2=10e3))
    assert ad == pytest.approx(5.0, rel=1e-10)
    assert abs(acm) < 1e-12
    assert aref == pytest.approx(1.0, rel=1e-10)


@pytest.mark.parametrize("g, r, rth, want_db", [
    (1, 10e3, 10.0, 66.03),     # docs/engineering.md sec. 5 check values [derived, ngspice-exact]
    (1, 10e3, 100.0, 46.09),
    (10, 1e3, 10.0, 80.84),
])
def test_ref_resistance_check_values(g, r, rth, want_db):
    sub = diff_amp(r, g * r, r, g * r)
    ad0, acm0, _ = _gains(sub)
    ad, acm, _ = _gains(sub, {"ref": rth})
    # CMRR of the circuit as drawn (Rth included): its own Ad over the Acm that Rth adds.
    db = 20 * math.log10(ad / abs(acm - acm0))
    assert db == pytest.approx(want_db, abs=0.005)
    if rth == 10.0 and g == 1:
        assert ad == pytest.approx(1.00025, abs=5e-6)   # docs/engineering.md sec. 5: Ad = 1.00025


def test_series_source_resistance_adds_to_input_resistors():
    # A source resistance adds to R1 and R3 (docs/engineering.md sec. 4, last paragraph [derived]).
    r1, r2, r3, r4, rs = 10e3, 100e3, 10e3, 100e3, 350.0
    ad, acm, _ = _gains(diff_amp(r1, r2, r3, r4), {"in_p": rs, "in_n": rs})
    ad_x, acm_x, _ = _gains(diff_amp(r1 + rs, r2, r3 + rs, r4))
    assert ad == pytest.approx(ad_x, rel=1e-9)
    assert acm == pytest.approx(acm_x, rel=1e-6, abs=1e-12)


def test_ac_solve_rc_pole():
    # First-order RC low-pass: |H| = 1/sqrt(1 + (w R C)^2) (any circuits textbook).
    from frontcheck.circuit import Capacitor, Sourced
    sub = SubCircuit(resistors=[res("R1", "IN_P", "X", 1e3)],
                     capacitors=[Capacitor("C1", "X", "GND", Sourced(1e-6), Sourced(0.1))],
                     opamps=[opamp("U1", "X", "OUT", "OUT")],
                     ports={"in_p": "IN_P", "in_n": "IN_N", "out": "OUT"}, rails={})
    topo = mna.compile_circuit(sub)
    f = 1 / (2 * math.pi * 1e-3)
    X = mna.solve_ac(topo, f, [[1e3]], [[1e-6]])
    h = abs(topo.coefficients(X, "OUT")[0, mna.VD]) * 2   # in_p carries +Vd/2
    assert h == pytest.approx(1 / math.sqrt(2), rel=1e-9)


def test_batch_equals_single_solves():
    sub = three_opamp()
    topo = mna.compile_circuit(sub)
    rng = np.random.default_rng(0)
    R = mna.nominal_values(sub) * (1 + 0.01 * rng.standard_normal((50, len(sub.resistors))))
    X = mna.solve_dc(topo, R)
    for i in (0, 17, 49):
        Xi = mna.solve_dc(topo, R[i:i + 1])
        np.testing.assert_allclose(X[i], Xi[0], rtol=1e-12, atol=1e-12)


def test_missing_port_and_singular_circuit_are_input_errors():
    sub = diff_amp(1e3, 1e3, 1e3, 1e3)
    del sub.ports["out"]
    with pytest.raises(InputError):
        mna.compile_circuit(sub)
    # An op-amp with no feedback and ideal gain: the equations have no solution.
    bad = SubCircuit(resistors=[res("R1", "IN_P", "X", 1e3), res("R2", "X", "GND", 1e3)],
                     opamps=[opamp("U1", "X", "IN_N", "OUT"), opamp("U2", "Y", "Y", "Y")],
                     ports={"in_p": "IN_P", "in_n": "IN_N", "out": "OUT"}, rails={})
    with pytest.raises(InputError):
        mna.solve_dc(mna.compile_circuit(bad), [[1e3, 1e3]])


def test_floating_input_gets_note():
    # An op-amp input joined to nothing conductive (AC-coupled) is solved with a tiny leak
    # and reported, never silently.
    sub = diff_amp(1e3, 1e3, 1e3, 1e3)
    sub.resistors[2] = res("R3", "IN_X", "P2", 1e3)
    topo = mna.compile_circuit(sub)
    assert any("no DC path" in n for n in topo.notes)


def test_shared_weights_are_read_only_and_keep_the_sign_of_zero():
    # the weights of ports and rails are shared by every compiled circuit: none may change
    # them, and a rail at -0 V keeps its sign (the cache tells -0.0 from 0.0)
    from frontcheck.circuit import Sourced
    sub = diff_amp(1e3, 1e3, 1e3, 1e3)
    subs = [SubCircuit(sub.resistors, [], sub.opamps, dict(sub.ports), {"VZ": Sourced(v)})
            for v in (0.0, -0.0, 0.0)]
    for s in subs:
        s.resistors = list(s.resistors) + [res("RZ", "P2", "VZ", 1e6)]
    got = [mna.compile_circuit(s).fixed["VZ"] for s in subs]
    assert [math.copysign(1.0, w[3]) for w in got] == [1.0, -1.0, 1.0]
    assert got[0] is got[2] and got[0] is not got[1]
    topo = mna.compile_circuit(subs[0])
    for w in list(topo.fixed.values()) + [topo.out_offset]:
        with pytest.raises(ValueError):
            w[0] = 2.0


def test_floating_nets_are_those_no_conducting_path_reaches():
    # two nets joined only to each other are floating, whatever the order of the parts; a
    # net joined to an op-amp output or a driven port is not
    sub = diff_amp(1e3, 1e3, 1e3, 1e3)
    sub.resistors = list(sub.resistors) + [res("RX", "X1", "X2", 1e3), res("RY", "X2", "P", 1e9)]
    assert mna.compile_circuit(sub).floating == ()
    sub.resistors = sub.resistors[:-1] + [res("RY", "X2", "X3", 1e3)]
    assert mna.compile_circuit(sub).floating == ("X1", "X2", "X3")
