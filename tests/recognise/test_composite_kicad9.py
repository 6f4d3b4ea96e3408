"""A discrete first stage into an integrated in-amp, drawn as a schematic (an invented board: two
single op-amps of our own symbol with Rf = 10k each and RG = 2k, all 0.1 %, their outputs on the
inputs of the eight-pin in-amp 'IA8' of our own symbol with its own RG of 5.1k and REF on
ground): frontcheck's netlist equals KiCad 9's export net by net, and both give one composite
stage with every amplifier in it, G1 = 1 + (Rf1 + Rf2)/RG = 11 with its worst case, and, with a
part file for 'IA8' (an invented class, G2 = 1 + K/RG, K = 50k), the total G1 x G2
(docs/engineering.md sec. 3b)."""

from __future__ import annotations

import pytest

from frontcheck.kicad.netfile import read_net
from frontcheck.pipeline import RunOptions, check_netlist
from frontcheck.recognise import find_stages
from invented_parts import LAB_INAMP_PART_FILE as PART_FILE
from invented_parts import part, tag
from kicad_sheets import Sym, kicad9_named, named, ours, write


def _sheet(tmp_path):
    items = part("T:OA1", "U1", 60, 80, "OPAMP-A", {3: "IN_P", 2: "M1", 1: "O1", 7: "+5V", 4: "-5V"})
    items += part("T:OA1", "U2", 60, 110, "OPAMP-A", {3: "IN_N", 2: "M2", 1: "O2", 7: "+5V", 4: "-5V"})
    items += part("T:IA8", "U3", 120, 95, "IA8", {1: "RGA", 2: "O2", 3: "O1", 4: "-5V", 5: "GND",
                                                     6: "OUT", 7: "+5V", 8: "RGB"})
    items += part("T:Conn3", "J1", 30, 95, "Conn3", {1: "IN_P", 2: "IN_N", 3: "GND"})
    items += part("T:Conn3", "J2", 170, 95, "Conn3", {1: "OUT", 3: "GND"})
    for ref, x, a, b, value in (("R1", 40, "O1", "M1", "10k 0.1%"), ("R2", 50, "O2", "M2", "10k 0.1%"),
                                ("R3", 60, "M1", "M2", "2k 0.1%"), ("R4", 70, "RGA", "RGB", "5k1 0.1%"),
                                ("R5", 80, "IN_P", "GND", "1M"), ("R6", 90, "IN_N", "GND", "1M")):
        items += [Sym("Device:R", ref, x, 150, value=value), tag(a, x, 146.19), tag(b, x, 153.81)]
    return write(tmp_path, items, "comp")


# the nets as drawn: what both netlists must hold
EXPECTED = {"/O1": {("U1", "1"), ("R1", "1"), ("U3", "3")}, "/O2": {("U2", "1"), ("R2", "1"), ("U3", "2")},
            "/M1": {("U1", "2"), ("R1", "2"), ("R3", "1")}, "/M2": {("U2", "2"), ("R2", "2"), ("R3", "2")},
            "/RGA": {("U3", "1"), ("R4", "1")}, "/RGB": {("U3", "8"), ("R4", "2")}}
OPTS = RunOptions(samples=200, seed=1)
G1 = 1 + 20e3 / 2e3
G1_WORST = (1 + 19.98e3 / 2.002e3, 1 + 20.02e3 / 1.998e3)     # corners of 0.1 % parts, sec. 3b
G2 = 1 + 50e3 / 5.1e3


def _check(netlist, tmp_path):
    rec = find_stages(netlist)
    (s,) = rec.stages
    assert s.kind == "composite" and s.amplifiers == ["U1", "U2", "U3"] and rec.near_misses == []
    assert s.roles == {"first_stage_p": "U1", "first_stage_n": "U2", "feedback_p": "R1",
                       "feedback_n": "R2", "gain_resistor": "R3", "second_stage": "U3",
                       "second_stage_RG": "R4"}
    assert {a.name: a.stage for a in rec.amplifiers} == {"U1": s.id, "U2": s.id, "U3": s.id}
    # without part data: G1 with its worst case, no total
    p = check_netlist(netlist, None, "comp", "comp", OPTS)
    r = p.results[s.id]
    assert r.gain.nominal == pytest.approx(G1, rel=1e-12)
    assert (r.gain.worst_min, r.gain.worst_max) == pytest.approx(G1_WORST, rel=1e-12)
    assert r.composite["total_gain"] is None
    assert not [f for f in p.findings if f.severity == "error"]
    # with the part file: the whole chain, G1 x G2 (Aol 1e12 moves it by about G/A ~ 1e-10)
    (tmp_path / "frontcheck-parts.toml").write_text(PART_FILE, encoding="utf-8")
    p = check_netlist(netlist, tmp_path, "comp", "comp", OPTS)
    (s2,) = p.stages
    r = p.results[s2.id]
    assert r.composite["first_stage"]["gain"]["nominal"] == pytest.approx(G1, rel=1e-12)
    assert r.gain.nominal == pytest.approx(G1 * G2, rel=1e-9)
    assert not [f for f in p.findings if f.rule == "stage-incomplete"]


def test_composite_from_the_schematic(tmp_path):
    nl = ours(_sheet(tmp_path))
    got = named(nl)
    assert {k: got[k] for k in EXPECTED} == EXPECTED
    _check(nl, tmp_path)


@pytest.mark.oracle
def test_composite_from_kicad9s_export(tmp_path, kicad9):
    sch = _sheet(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs           # net by net, every pin
    assert {k: theirs[k] for k in EXPECTED} == EXPECTED
    _check(read_net(tmp_path / "comp.k9.net"), tmp_path)
