"""A stage whose REF is on the same net as one of its inputs (a shunt amplifier referred to the
shunt's low side), and the real designs that draw one loading through the command line."""

from __future__ import annotations

import json
import re
from dataclasses import replace

import numpy as np
import pytest

from frontcheck.analysis import analyse, mna, tolerance
from frontcheck.circuit import Intent, Stage
from frontcheck.cli import main
from frontcheck.errors import InputError
from spice import diff_amp, model


def _shared(r1, r2, r3, r4, m=None, side="in_n"):
    """Difference amp with R4's far end (REF) on the in_n (or in_p) net."""
    sub = diff_amp(r1, r2, r3, r4, m=m)
    net = sub.ports[side]
    res = [replace(r, b=net) if r.name == "R4" else r for r in sub.resistors]
    return replace(sub, resistors=res, ports={**sub.ports, "ref": net})


def _gains(sub, series=None, ideal=True, x=None):
    ctx = tolerance.make_context(sub, series, ideal_opamps=ideal)
    x = np.zeros((1, len(ctx.var.names))) if x is None else x
    return ctx.evaluate(x, use_opamp_cmrr=False)


@pytest.mark.parametrize("r1,r2,r3,r4", [(1e3, 250e3, 1e3, 250e3), (1e3, 11.8e3, 1e3, 11.8e3),
                                         (1e3, 250e3, 1.05e3, 240e3)])
def test_ref_on_inverting_input_net_closed_form(r1, r2, r3, r4):
    # Ideal op-amp, REF tied to -IN: V+ = Vn + (Vp - Vn) R4/(R3+R4), Vout = V+ (1 + R2/R1)
    # - Vn R2/R1, so Vout - Vn = (Vp - Vn)(1 + R2/R1) R4/(R3+R4) for any resistor values
    # [derived from the ideal op-amp rules, Sedra & Smith 6th ed. sec. 2.1].
    g = _gains(_shared(r1, r2, r3, r4))
    assert float(g.ad[0]) == pytest.approx((1 + r2 / r1) * r4 / (r3 + r4), rel=1e-12)
    assert abs(float(g.acm[0])) < 1e-12 * float(g.ad[0])
    assert float(g.aref[0]) == 0.0


def test_ref_on_inverting_input_mismatch_changes_gain_not_cmrr():
    # Same derivation: mismatch only rescales the gain; the output relative to the shared net
    # holds no common-mode term with an ideal op-amp.
    sub = _shared(1e3, 250e3, 1e3, 250e3)
    ctx = tolerance.make_context(sub, None, ideal_opamps=True)
    g = ctx.evaluate(tolerance.corner_matrix(len(ctx.var.names)), use_opamp_cmrr=False)
    assert np.max(np.abs(g.acm)) < 1e-9
    assert np.ptp(g.ad) > 1.0          # 1 % parts move the gain of 250 by several V/V


def test_ref_on_inverting_input_finite_open_loop_gain():
    # Finite A: with Y = Vout - Vn, k = R4/(R3+R4), b = R1/(R1+R2), Vout = A (V+ - V-) gives
    # Y (1 + A b) = A k Vd - Vn; with Vn = Vcm - Vd/2 (the ports' symmetric split),
    # dY/dVd = (A k + 1/2)/(1 + A b) and dY/dVcm = -1/(1 + A b)
    # [derived from the op-amp model of docs/engineering.md sec. 9 with infinite CMRR].
    aol = 2e4
    sub = _shared(1e3, 250e3, 1e3, 250e3, m=model(aol=aol))
    g = _gains(sub, ideal=False)
    b, k = 1e3 / 251e3, 250e3 / 251e3
    assert float(g.acm[0]) == pytest.approx(-1 / (1 + aol * b), rel=1e-9)
    assert float(g.ad[0]) == pytest.approx((aol * k + 0.5) / (1 + aol * b), rel=1e-9)


def test_ref_on_noninverting_input_net():
    # REF on +IN: V+ = Vp, Vout - Vp = (Vp - Vn) R2/R1 [derived, ideal op-amp rules].
    g = _gains(_shared(1e3, 10e3, 1e3, 10e3, side="in_p"))
    assert float(g.ad[0]) == pytest.approx(10.0, rel=1e-12)
    assert abs(float(g.acm[0])) < 1e-12


@pytest.mark.parametrize("role", ["in_n", "ref"])
def test_series_resistance_on_the_shared_net(role):
    # One source drives the shared net, whichever role names its resistance. Rs in series with
    # R1 and with R3||... is not a closed form, so: Rs -> 0 gives the drawn stage, and Rs on
    # in_p alone adds to R3: G' = (1 + R2/R1) R4/(R3 + Rs + R4) [derived].
    sub = _shared(1e3, 250e3, 1e3, 250e3)
    tiny = _gains(sub, {role: 1e-6})
    assert float(tiny.ad[0]) == pytest.approx(250.0, rel=1e-8)
    topo = mna.compile_circuit(sub, (role,))
    assert len(topo.series) == 1
    both = mna.compile_circuit(sub, ("in_n", "ref"))
    assert len(both.series) == 1 and both.series[0][0] == "in_n"
    g = _gains(sub, {"in_p": 100.0, role: 1e-6})
    assert float(g.ad[0]) == pytest.approx(251 * 250e3 / (1e3 + 100.0 + 250e3), rel=1e-8)
    # A real Rs on the shared net: the stage still solves, and loading lowers the gain.
    g = _gains(sub, {role: 50.0})
    assert 200.0 < float(g.ad[0]) < 250.0


def test_both_inputs_on_one_net_is_an_input_error():
    sub = diff_amp(1e3, 10e3, 1e3, 10e3)
    res = [replace(r, a="IN_N") if r.name == "R3" else r for r in sub.resistors]
    sub = replace(sub, resistors=res, ports={**sub.ports, "in_p": "IN_N"})
    with pytest.raises(InputError):
        mna.compile_circuit(sub)


def test_analyse_notes_the_shared_net():
    sub = _shared(1e3, 11.8e3, 1e3, 11.8e3)
    st = Stage(id="U1A", kind="difference", references=["R1", "R2", "R3", "R4", "U1"],
               amplifiers=["U1A"], roles={"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"},
               circuit=sub, intent=Intent())
    r = analyse(st)
    assert r.gain.nominal == pytest.approx(11.8, rel=1e-9)
    assert any("share net" in n for n in r.notes)


# -- real designs ----------------------------------------------------------------------------

@pytest.mark.parametrize("rev,gain", [("rev2", 250.0), ("rev3", 11.8)])
def test_curve_tracer_loads_through_the_cli(corpus, tmp_path, rev, gain):
    # docs/test-corpus.md sec. 2: U2D is a shunt difference amp with -IN and REF both on V/2, gain
    # 250 (rev2: R19/R18 = 250k/1k, R10/R8 = 250k/1k) and 11.8 (rev3: 11.8k/1k); V/2 is driven by
    # the U2B + complementary BJT rail splitter (low impedance).
    pro = (corpus / "real-designs" / "schuyler4__USB_Curve_Tracer" / "electronics" / rev / "ecad"
           / "USB_curve_tracer.kicad_pro")
    out = tmp_path / "r.json"
    assert main(["check", str(pro), "--samples", "200", "-f", "json", "-o", str(out)]) in (0, 1)
    doc = json.loads(out.read_text())
    u2d = next(s for s in doc["stages"] if s["id"] == "U2D")
    # No part data for U2: the op-amp is ideal in the figures (A -> infinity in
    # Ad = (A k + 1/2)/(1 + A b), b = 1/(1+G), k = G b, derived above), so Ad = k/b = G.
    assert all(o["model"] == "ideal (no part data)" and not o["numbers"]
               for o in u2d["opamp_numbers"])
    assert u2d["gain"]["nominal"] == pytest.approx(gain, rel=1e-9)
    assert u2d["ref"]["kind"] == "low-impedance"
    assert any("share net" in n for n in u2d["result_notes"])


def test_headroom_needs_no_ref_voltage_when_ref_follows_an_input():
    # The output node from the finite-gain relation derived above: Vout = Vn + (A k Vd - Vn)/
    # (1 + A b), Vn = Vcm - Vd/2; the declared input box suffices, REF adds no unknown.
    aol = 2e4
    sub = _shared(1e3, 250e3, 1e3, 250e3, m=model(aol=aol, icm=(1.5, 1.5), swing=(0.2, 0.2)))
    # exact resistors: the relation is checked at the box corner, not at a tolerance corner
    sub = replace(sub, resistors=[replace(r, tol=type(r.tol)(0.0)) for r in sub.resistors])
    sub.rails["VN"] = type(sub.rails["VN"])(0.0)
    sub.rails["VP"] = type(sub.rails["VP"])(12.0)
    st = Stage(id="U1A", kind="difference", references=[], amplifiers=["U1A"], roles={},
               circuit=sub, intent=Intent(input_cm=(5.9, 6.1), input_diff=(0.0, 0.02)))
    r = analyse(st)
    assert r.headroom.margin_v is not None
    assert not any("REF" in n and "unknown" in n for n in r.notes)
    b, k = 1e3 / 251e3, 250e3 / 251e3
    vcm, vd = 6.1, 0.02
    vn = vcm - vd / 2
    want = vn + (aol * k * vd - vn) / (1 + aol * b)
    (chk,) = [c for c in r.headroom.checks if c.node == "output" and c.corner == (vcm, vd)]
    assert chk.voltage == pytest.approx(want, rel=1e-9)


def test_shared_net_source_resistance_counted_once_in_the_budget():
    # V/2 from a 10k/10k divider (Rth 5 k) is both the REF source and the -IN source: one
    # resistance, one budget term (the source term), with a note.
    from frontcheck.analysis.tolerance import Options
    from frontcheck.circuit import Sourced
    from netlist_builder import NetlistBuilder

    nb = NetlistBuilder()
    nb.r("R1", "HALF", "N", "1k").r("R2", "N", "OUT", "11.8k").r("R3", "SH", "P", "1k")
    nb.r("R4", "P", "HALF", "11.8k").r("RS", "SH", "HALF", "0.5")
    nb.r("RA", "+5V", "HALF", "10k").r("RB", "HALF", "GND", "10k")
    nb.opamp("U1", {"": ("P", "N", "OUT")}, package="single")
    nl = nb.build()
    sub = _shared(1e3, 11.8e3, 1e3, 11.8e3)
    sub = replace(sub, ports={"in_p": "SH", "in_n": "HALF", "ref": "HALF", "out": "OUT"},
                  resistors=[replace(r, a={"IN_N": "HALF", "IN_P": "SH"}.get(r.a, r.a),
                                     b={"IN_N": "HALF"}.get(r.b, r.b)) for r in sub.resistors])
    st = Stage(id="U1", kind="difference", references=["R1", "R2", "R3", "R4", "U1"],
               amplifiers=["U1"], roles={"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"},
               circuit=sub, intent=Intent(input_cm=(2.4, 2.6), input_diff=(0.0, 0.1)))
    rails = {"+5V": Sourced(5.0), "GND": Sourced(0.0)}
    r = analyse(st, nl, rails, Options(mc_samples=0))
    # RA || RB = 5 k (RS only leads on to the stage's own R3, left out of the Thevenin view).
    assert r.ref.thevenin_ohms == pytest.approx(5e3, rel=1e-9)
    assert "ref" not in r.error_budget and "source" in r.error_budget
    assert any("counted once" in n for n in r.notes)
