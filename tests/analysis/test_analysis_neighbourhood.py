"""The REF divider of a difference amplifier is varied with the stage: worst-case gain against
the closed form over every corner of the six resistors."""

from __future__ import annotations

import itertools

import pytest

from frontcheck.analysis import analyse
from frontcheck.analysis.tolerance import Options
from frontcheck.circuit import IDEAL_OPAMP, Intent, Sourced, Stage
from netlist_builder import NetlistBuilder
from spice import diff_amp


def _ad(r1, r2, r3, r4):
    # Sedra & Smith, Microelectronic Circuits, 6th ed., Eq. 2.19 context (docs/engineering.md
    # sec. 1): Ad of the four-resistor difference amplifier, ideal op-amp.
    return (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))


def test_ref_divider_parts_are_varied_with_the_stage():
    # REF from RA/RB (10k/10k off +5V): its Thevenin resistance is in series with R4
    # (docs/engineering.md sec. 5, ngspice-exact), so Ad = Ad(R1, R2, R3, R4 + RA || RB) at
    # every corner of the six 1 % resistors.
    nb = NetlistBuilder()
    nb.r("R1", "INN", "N", "10k").r("R2", "N", "OUT", "100k").r("R3", "INP", "P", "10k")
    nb.r("R4", "P", "REF", "100k").r("RA", "+5V", "REF", "10k").r("RB", "REF", "GND", "10k")
    nb.opamp("U1", {"": ("P", "N", "OUT")}, package="single")
    nl = nb.build()
    sub = diff_amp(10e3, 100e3, 10e3, 100e3, tol=0.01)
    names = {"IN_N": "INN", "IN_P": "INP", "REF": "REF", "N": "N", "P": "P", "OUT": "OUT"}
    from dataclasses import replace
    sub = replace(sub, resistors=[replace(r, a=names[r.a], b=names[r.b]) for r in sub.resistors],
                  ports={"in_p": "INP", "in_n": "INN", "ref": "REF", "out": "OUT"})
    sub.opamps[0] = replace(sub.opamps[0], inp="P", inn="N", out="OUT", model=IDEAL_OPAMP)
    st = Stage(id="U1", kind="difference", references=["R1", "R2", "R3", "R4", "U1"],
               amplifiers=["U1"], roles={}, circuit=sub, intent=Intent())
    r = analyse(st, nl, {"+5V": Sourced(5.0), "GND": Sourced(0.0)}, Options(mc_samples=0))
    assert {"RA", "RB"} <= set(r.varied)
    t = 0.01
    ads = []
    for x in itertools.product((-1, 1), repeat=6):
        r1, r2, r3, r4, ra, rb = (v * (1 + s * t) for v, s in
                                  zip((10e3, 100e3, 10e3, 100e3, 10e3, 10e3), x))
        ads.append(_ad(r1, r2, r3, r4 + ra * rb / (ra + rb)))
    assert r.gain.worst_min == pytest.approx(min(ads), rel=1e-12)
    assert r.gain.worst_max == pytest.approx(max(ads), rel=1e-12)
    assert r.gain.nominal == pytest.approx(_ad(10e3, 100e3, 10e3, 105e3), rel=1e-12)
