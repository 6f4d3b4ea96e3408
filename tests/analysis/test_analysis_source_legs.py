"""Source legs and bridge arms drawn ahead of a stage are varied with it: worst-case gain and
CMRR against the closed form over every corner of the stage's and the source's resistors, and
ngspice at the worst corner."""

from __future__ import annotations

import itertools
import math
import shutil

import pytest

from frontcheck.analysis import analyse
from frontcheck.analysis.tolerance import Options
from frontcheck.circuit import Sourced
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder
from spice import run, write_deck

RAILS = {"+5V": Sourced(5.0), "GND": Sourced(0.0)}
R_STAGE = (10e3, 100e3, 10e3, 100e3)     # R1, R2, R3, R4: G = 10
R_ARMS = (350.0, 350.0, 350.0, 350.0)    # RA +5V-INP, RB INP-GND, RC +5V-INN, RD INN-GND


def _bridge_fed_diff_amp(extra=None) -> NetlistBuilder:
    nb = NetlistBuilder()
    nb.r("R1", "INN", "N", "10k 0.1%").r("R2", "N", "OUT", "100k 0.1%")
    nb.r("R3", "INP", "P", "10k 0.1%").r("R4", "P", "GND", "100k 0.1%")
    nb.opamp("U1", {"": ("P", "N", "OUT")}, package="single", vpos="+5V", vneg="GND")
    nb.r("RA", "+5V", "INP", "350 1%").r("RB", "INP", "GND", "350 1%")
    nb.r("RC", "+5V", "INN", "350 1%").r("RD", "INN", "GND", "350 1%")
    return nb.pins_to("J1", "OUT", "GND")


def _gains(r1, r2, r3, r4, rs_p, rs_n):
    """Ad and Acm of the four-resistor difference amplifier with the source resistances in
    series with its inputs (docs/engineering.md sec. 1, Sedra & Smith 6th ed., Eq. 2.19
    context; a source resistance adds to R1 and R3, sec. 4 last paragraph)."""
    r1, r3 = r1 + rs_n, r3 + rs_p
    ad = (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2 * r1 * (r3 + r4))
    acm = (r1 * r4 - r2 * r3) / (r1 * (r3 + r4))
    return ad, acm


def _corners():
    for x in itertools.product((-1, 1), repeat=8):
        st = [v * (1 + s * 0.001) for v, s in zip(R_STAGE, x[:4])]
        ra, rb, rc, rd = (v * (1 + s * 0.01) for v, s in zip(R_ARMS, x[4:]))
        yield x, _gains(*st, ra * rb / (ra + rb), rc * rd / (rc + rd))


def test_bridge_arms_are_varied_with_the_stage():
    nl = _bridge_fed_diff_amp().build()
    (stage,) = find_stages(nl, rails=RAILS).stages
    r = analyse(stage, nl, RAILS, Options(mc_samples=2000))
    assert {"RA", "RB", "RC", "RD"} <= set(r.varied)
    ads = [g[0] for _, g in _corners()]
    acms = [g[1] for _, g in _corners()]
    ad0, _ = _gains(*R_STAGE, 175.0, 175.0)
    assert r.gain.nominal == pytest.approx(ad0, rel=1e-12)
    assert r.gain.worst_min == pytest.approx(min(ads), rel=1e-12)
    assert r.gain.worst_max == pytest.approx(max(ads), rel=1e-12)
    # CMRR: nominal Ad over the largest |Acm| of the corners (frontcheck's 'nominal' convention)
    worst_db = 20 * math.log10(ad0 / max(abs(a) for a in acms))
    assert r.cmrr.worst_db == pytest.approx(worst_db, abs=1e-6)
    assert r.gain.worst_min < r.gain.p_low < r.gain.p_high < r.gain.worst_max
    # the source alone at nominal values: equal legs add equally to R1 and R3 of a stage with
    # R1 = R3, R2 = R4, so it converts no common mode (Acm = 0 in the closed form above)
    assert r.cmrr.contributors["source impedance"] == math.inf
    assert r.cmrr.contributors["resistors"] > worst_db


def test_worst_corner_confirmed_by_ngspice():
    exe = shutil.which("ngspice")
    if exe is None:
        pytest.skip("ngspice not installed")
    nl = _bridge_fed_diff_amp().build()
    (stage,) = find_stages(nl, rails=RAILS).stages
    from frontcheck.analysis import dc_paths, neighbourhood
    dc = dc_paths.DCView(nl, RAILS)
    src = dc_paths.source_impedances(nl, stage, RAILS, dc=dc)
    nb = neighbourhood.extend(stage, dc, dc_paths.ref_source(nl, stage, RAILS, dc=dc), src)
    x, (ad, acm) = min(_corners(), key=lambda c: -abs(c[1][1]))
    values = dict(zip(("R1", "R2", "R3", "R4"), (v * (1 + s * 0.001) for v, s in zip(R_STAGE, x[:4]))))
    values.update(zip(("RA", "RB", "RC", "RD"), (v * (1 + s * 0.01) for v, s in zip(R_ARMS, x[4:]))))
    sub = nb.sub
    from dataclasses import replace
    from spice import model
    # REF is the ground net here: the deck needs no source for it
    sub = replace(sub, opamps=[replace(o, model=model(aol=1e9)) for o in sub.opamps],
                  ports={k: v for k, v in sub.ports.items() if k != "ref"})
    cases = [{"vcm": vcm, "vd": vd, "R": values} for vcm, vd in ((0, 0), (1, 0), (0, 1))]
    out = stage.circuit.ports["out"]
    rows = run(exe, write_deck(sub, cases, [out]), [out])
    assert rows[2][out] - rows[0][out] == pytest.approx(ad, rel=1e-6)
    assert rows[1][out] - rows[0][out] == pytest.approx(acm, rel=1e-3, abs=1e-8)


def test_off_board_source_on_one_input_leaves_both_legs_out():
    nb = _bridge_fed_diff_amp()
    nb.pins_to("J2", "INP")           # the + input also comes from off the board
    nl = nb.build()
    (stage,) = find_stages(nl, rails=RAILS).stages
    r = analyse(stage, nl, RAILS, Options(mc_samples=0))
    assert not {"RA", "RB", "RC", "RD"} & set(r.varied)


def test_source_at_op_amp_inputs_changes_nothing_and_is_not_varied():
    """A three-op-amp in-amp's inputs are op-amp inputs: no current flows in the bridge, so its
    arms change no figure (docs/engineering.md sec. 3: Vo1, Vo2 depend on IN+ and IN- only)."""
    def board(bridge: bool):
        nb = NetlistBuilder().opamp("U1", {"A": ("INP", "M1", "O1"), "B": ("INN", "M2", "O2"),
                               "C": ("P3", "N3", "OUT")}, vpos="+5V", vneg="GND")
        nb.r("R3", "O1", "M1", "10k 0.1%").r("R4", "O2", "M2", "10k 0.1%").r("R5", "M1", "M2", "1k 0.1%")
        nb.r("R8", "O2", "N3", "10k 0.1%").r("R9", "N3", "OUT", "10k 0.1%")
        nb.r("R10", "O1", "P3", "10k 0.1%").r("R11", "P3", "GND", "10k 0.1%")
        if bridge:
            nb.r("RA", "+5V", "INP", "350 1%").r("RB", "INP", "GND", "350 1%")
            nb.r("RC", "+5V", "INN", "350 1%").r("RD", "INN", "GND", "350 1%")
        else:
            nb.pins_to("J2", "INP", "INN")
        return nb.pins_to("J1", "OUT", "GND").build()
    got = []
    for bridge in (True, False):
        nl = board(bridge)
        (stage,) = find_stages(nl, rails=RAILS).stages
        got.append(analyse(stage, nl, RAILS, Options(mc_samples=0)))
    assert not {"RA", "RB", "RC", "RD"} & set(got[0].varied)
    assert got[0].gain.worst_min == got[1].gain.worst_min
    assert got[0].cmrr.worst_db == got[1].cmrr.worst_db
