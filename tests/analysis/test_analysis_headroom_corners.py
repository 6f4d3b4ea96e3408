"""Headroom over the tolerance corners: the corner claim against brute force, and a stage that
passes at nominal values but fails at a corner, confirmed by ngspice at that corner."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

import spice as S
from frontcheck.analysis import analyse, corners, mna, tolerance
from frontcheck.circuit import Intent, Stage
from spice import diff_amp, model, three_opamp


def _stage(sub, kind="difference", **intent) -> Stage:
    return Stage(id="U1A", kind=kind, references=[], amplifiers=[o.name for o in sub.opamps],
                 roles={}, circuit=sub, intent=Intent(**intent))


def _brute(sub, nets, box, vref):
    """Every tolerance corner solved on its own (one unbatched solve each) at every box corner,
    and 300 random points inside the tolerance box."""
    var = tolerance.variables(sub)
    k = len(var.names)
    pts = [np.array(c, dtype=float) for c in itertools.product((-1.0, 1.0), repeat=k)]
    inner = np.random.default_rng(7).uniform(-1, 1, (300, k))
    ainv = mna.opamp_ainv(sub)
    out = {n: [np.inf, -np.inf, np.inf, -np.inf] for n in nets}   # corner lo/hi, inner lo/hi
    for which, xs in ((0, pts), (2, list(inner))):
        for x in xs:
            coef = mna.node_affine(sub, nets, R=var.values(x[None, :]), ainv=ainv[None, :])
            for n in nets:
                for vcm, vd in corners.box_corners(box):
                    v = float(coef[n] @ np.array([vcm, vd, vref, 1.0]))
                    out[n][which] = min(out[n][which], v)
                    out[n][which + 1] = max(out[n][which + 1], v)
    return out


@pytest.mark.parametrize("sub", [
    diff_amp(1e3, 10e3, 1.2e3, 9.1e3, tol=0.05, m=model(aol=2e3)),
    three_opamp(rf=24.9e3, rg=2e3, ra=10e3, rb=20e3, tol=0.01, m=model(aol=1e4)),
], ids=["difference", "three-opamp"])
def test_corner_extremes_equal_brute_force(sub):
    # docs/engineering.md sec. 11: each node voltage is monotone in each resistor with the
    # others fixed, so its extremes over the tolerance box are at the corners.
    nets = sorted({o.inp for o in sub.opamps} | {o.out for o in sub.opamps})
    box, vref = (-1.0, 2.0, -0.1, 0.2), 0.5
    ctx = tolerance.make_context(sub)
    ext, note = corners.node_extremes(ctx, nets, box, vref)
    brute = _brute(sub, nets, box, vref)
    assert note is None
    for n in nets:
        lo, hi = ext[n]
        assert lo.volts == pytest.approx(brute[n][0], abs=1e-12)
        assert hi.volts == pytest.approx(brute[n][1], abs=1e-12)
        assert brute[n][2] >= lo.volts - 1e-12 and brute[n][3] <= hi.volts + 1e-12


def _check_case():
    # docs/engineering.md sec. 11 check: +-5 V difference amp, G = 10, 5 % parts, Vd = +-0.45 V,
    # output swing declared to 0.45 V of each rail (part data).
    m = model(aol=1e5, swing=(0.45, 0.45), icm=(0.0, 0.0))
    return diff_amp(1e3, 10e3, 1e3, 10e3, tol=0.05, m=m, vp=5.0, vn=-5.0)


def test_passes_at_nominal_fails_at_a_corner(ngspice):
    sub = _check_case()
    r = analyse(_stage(sub, input_cm=(0.0, 0.0), input_diff=(-0.45, 0.45), ref_voltage=0.0))
    h = r.headroom
    assert h.nominal_margin_v == pytest.approx(0.05, abs=1e-3)     # 4.50 V (less 4.5 x 11/A) vs 4.55 V
    out = [c for c in h.checks if c.node == "output"]
    assert len(out) == 1 and len({(c.opamp, c.node) for c in h.checks}) == len(h.checks)
    (c,) = out
    assert c.margin_v < 0 and abs(c.voltage) == pytest.approx(4.97, abs=0.01)
    # The corner: R2 and R4 high, R1 and R3 low (or the mirror) drive the gain to ~11.05.
    assert {c.tolerances["R2"], c.tolerances["R4"]} != {c.tolerances["R1"], c.tolerances["R3"]}
    # ngspice at that corner
    vals = {n: ro.ohms.value * (1.05 if c.tolerances[n] == "high" else 0.95)
            for n, ro in ((x.name, x) for x in sub.resistors)}
    deck = S.write_deck(sub, [{"vcm": c.corner[0], "vd": c.corner[1], "vref": 0.0, "R": vals}],
                        ["OUT"])
    (row,) = S.run(ngspice, deck, ["OUT"])
    assert row["OUT"] == pytest.approx(c.voltage, abs=1e-6)
    assert abs(row["OUT"]) > 4.55


def test_requirements_name_the_node_ranges():
    sub = _check_case()
    for o in sub.opamps:
        o.model = type(o.model)("ideal (no part data)")
    r = analyse(_stage(sub, input_cm=(0.0, 0.0), input_diff=(-0.45, 0.45), ref_voltage=0.0))
    q = {x.quantity: x for x in r.requirements}
    assert q["output_high_v"].min == pytest.approx(-q["output_low_v"].max, rel=1e-9)
    assert q["output_high_v"].min == pytest.approx(4.97, abs=0.01)
    assert "R" in q["output_high_v"].because and "V+" in q["output_high_v"].because
