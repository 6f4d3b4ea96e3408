"""Headroom against docs/engineering.md sec. 4 check values and its own geometric claims."""

from __future__ import annotations

import numpy as np
import pytest

from frontcheck.analysis import headroom as H
from frontcheck.circuit import Sourced
from spice import diff_amp, model, three_opamp


def _single_supply_inamp():
    # docs/engineering.md sec. 4 check value [derived, ngspice-confirmed]: single 5 V supply,
    # outputs to 0.1 V from each rail, input CM -0.1 .. 3.5 V, G1 = 100, G2 = 1, Vref = 2.5 V.
    m = model(icm=(-0.1, 1.5), swing=(0.1, 0.1))
    sub = three_opamp(rf=49.5e3, rg=1e3, ra=10e3, rb=10e3, m=m, vp=5.0, vn=0.0)
    return sub


@pytest.mark.parametrize("vd, lo, hi", [
    (0.0, 0.100, 3.500),     # docs/engineering.md sec. 4
    (0.010, 0.600, 3.495),
    (0.020, 1.100, 3.490),
    (-0.020, 1.100, 3.490),
])
def test_single_supply_inamp_vcm_ranges(vd, lo, hi):
    lims, _, unknown = H.limits(_single_supply_inamp())
    got = H.vcm_interval(lims, vd, 2.5)
    assert unknown == []
    assert got[0] == pytest.approx(lo, abs=1e-6) and got[1] == pytest.approx(hi, abs=1e-6)


def test_no_valid_vcm_at_30mv():
    # docs/engineering.md sec. 4: Vd = +30 mV -> no valid Vcm (the output would need 5.5 V).
    lims, _, _ = H.limits(_single_supply_inamp())
    assert H.vcm_interval(lims, 0.030, 2.5) is None


def test_saturated_first_stage_seen_at_vd_zero_box():
    # A first-stage limit binds at Vd = 0 although Vout = Vref there (docs/engineering.md sec. 4):
    # Vcm = 0.05 V puts A1/A2 outputs 0.05 V below their 0.1 V swing limit.
    hr = H.headroom(_single_supply_inamp(), box=(0.05, 1.0, 0.0, 0.0), vref=2.5)
    worst = min(hr.checks, key=lambda c: c.margin_v)
    assert hr.margin_v == pytest.approx(-0.05, abs=1e-6)
    assert worst.node == "output" and worst.opamp in ("U1A", "U1B") and worst.corner[0] == 0.05


def test_box_margin_is_min_over_corners():
    sub = _single_supply_inamp()
    box = (1.0, 3.0, -0.01, 0.01)
    hr = H.headroom(sub, box=box, vref=2.5)
    lims, _, _ = H.limits(sub)
    # Brute force over a grid inside the box: never below the corner result (affine -> exact).
    grid = [min(min(l.voltage(a, b, 2.5) - l.low, l.high - l.voltage(a, b, 2.5)) for l in lims)
            for a in np.linspace(1, 3, 21) for b in np.linspace(-0.01, 0.01, 21)]
    assert hr.margin_v == pytest.approx(min(grid), abs=1e-9)
    assert len(hr.checks) == 4 * 2 * 3


def test_region_polygon_is_exactly_the_valid_set():
    sub = _single_supply_inamp()
    lims, out, _ = H.limits(sub)
    poly = H.region(lims, out, 2.5)
    assert len(poly) >= 3
    # Every vertex satisfies every limit (to round-off) ...
    acm, ad, aref, c = out    # columns (Vcm, Vd, Vref, 1)
    for vcm, vout in poly:
        vd = (vout - acm * vcm - aref * 2.5 - c) / ad
        for l in lims:
            v = l.voltage(vcm, vd, 2.5)
            assert l.low - 1e-6 <= v <= l.high + 1e-6
    # ... and the polygon's extent in Vcm at Vout = Vref matches the interval at Vd = 0.
    xs = _section(poly, 2.5)
    assert xs[0] == pytest.approx(0.1, abs=1e-6) and xs[1] == pytest.approx(3.5, abs=1e-6)


def _section(poly, y):
    pts = []
    n = len(poly)
    for i in range(n):
        (x1, y1), (x2, y2) = poly[i], poly[(i + 1) % n]
        if (y1 - y) * (y2 - y) <= 0 and y1 != y2:
            pts.append(x1 + (y - y1) * (x2 - x1) / (y2 - y1))
    return min(pts), max(pts)


def test_difference_amp_input_cm_beyond_rails():
    # Single-op-amp difference amp: op-amp input CM = (R4 V2 + R3 Vref)/(R3+R4) (docs/engineering.md
    # sec. 4 [derived]): G = 0.1 with +-15 V accepts 100 V common mode.
    sub = diff_amp(100e3, 10e3, 100e3, 10e3, m=model(icm=(2.0, 2.0), swing=(1.0, 1.0)))
    lims, _, _ = H.limits(sub)
    inp = next(l for l in lims if l.node == "input")
    v2 = 100.0 + 0.5
    assert inp.voltage(100.0, 1.0, 0.0) == pytest.approx(10e3 * v2 / 110e3, rel=1e-9)
    hr = H.headroom(sub, box=(-100.0, 100.0, -1.0, 1.0), vref=0.0)
    assert hr.margin_v > 0


def test_missing_rail_and_unknown_vref_reported():
    sub = _single_supply_inamp()
    sub.opamps[2].vneg = None
    hr = H.headroom(sub, box=(1.0, 2.0, 0.0, 0.0), vref=2.5)
    assert hr.unknown == ["U1C"]
    hr = H.headroom(sub, box=None, vref=None)
    assert hr.margin_v is None and "REF voltage" in hr.unknown
    hr = H.headroom(_single_supply_inamp(), box=None, vref=2.5)
    assert hr.margin_v is None and hr.region
