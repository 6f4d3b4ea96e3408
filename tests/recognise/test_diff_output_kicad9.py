"""The differential-output in-amp input stage drawn as a schematic (an invented board: two
single op-amps of our own symbol, Rf = 10k each, RG = 1k, outputs to a fully differential
amplifier of our own symbol): frontcheck's netlist equals KiCad 9's export net by net, and both
give the same diff-output stage with G1 = 1 + (Rf1 + Rf2)/RG = 21 (docs/engineering.md sec. 3a)
and no near miss."""

from __future__ import annotations

import pytest

from frontcheck.kicad.netfile import read_net
from frontcheck.pipeline import RunOptions, check_netlist
from frontcheck.recognise import find_stages
from invented_parts import part, tag
from kicad_sheets import Sym, kicad9_named, named, ours, write


def _resistor(ref: str, x: float, a: str, b: str, value: str) -> list:
    return [Sym("Device:R", ref, x, 150, value=value), tag(a, x, 146.19), tag(b, x, 153.81)]


def _sheet(tmp_path):
    items = part("T:OA1", "U1", 60, 80, "OPAMP-A", {3: "IN_P", 2: "M1", 1: "OP", 7: "+5V", 4: "-5V"})
    items += part("T:OA1", "U2", 60, 110, "OPAMP-A", {3: "IN_N", 2: "M2", 1: "ON", 7: "+5V", 4: "-5V"})
    items += part("T:FDA4", "U3", 120, 95, "FDA-1", {1: "OP", 2: "ON", 3: "ADC_P", 4: "ADC_N"})
    items += part("T:Conn3", "J1", 30, 95, "Conn3", {1: "IN_P", 2: "IN_N", 3: "GND"})
    items += part("T:Conn3", "J2", 160, 95, "Conn3", {1: "ADC_P", 2: "ADC_N", 3: "GND"})
    for ref, x, a, b, value in (("R3", 40, "OP", "M1", "10k 0.1%"), ("R4", 50, "ON", "M2", "10k 0.1%"),
                                ("R5", 60, "M1", "M2", "1k 0.1%"), ("R6", 70, "IN_P", "GND", "1M"),
                                ("R7", 80, "IN_N", "GND", "1M")):
        items += _resistor(ref, x, a, b, value)
    return write(tmp_path, items, "pair")


def _check(netlist):
    rec = find_stages(netlist)
    (s,) = rec.stages
    assert s.kind == "diff-output" and s.amplifiers == ["U1", "U2"] and rec.near_misses == []
    assert s.roles == {"feedback_p": "R3", "feedback_n": "R4", "gain_resistor": "R5"}
    p = check_netlist(netlist, None, "pair", "pair", RunOptions(samples=200, seed=1))
    r = p.results[s.id]
    # G1 = 1 + (10k + 10k)/1k = 21; corners 1 + 20.02k/0.999k and 1 + 19.98k/1.001k
    assert r.gain.nominal == pytest.approx(21.0, rel=1e-12)
    assert r.gain.worst_max == pytest.approx(1 + 20.02e3 / 0.999e3, rel=1e-12)
    assert r.gain.worst_min == pytest.approx(1 + 19.98e3 / 1.001e3, rel=1e-12)
    assert not [f for f in p.findings if f.rule == "stage-incomplete"]


EXPECTED = {"/OP": {("U1", "1"), ("R3", "1"), ("U3", "1")}, "/ON": {("U2", "1"), ("R4", "1"), ("U3", "2")},
            "/M1": {("U1", "2"), ("R3", "2"), ("R5", "1")}, "/M2": {("U2", "2"), ("R4", "2"), ("R5", "2")}}


def test_pair_from_the_schematic(tmp_path):
    nl = ours(_sheet(tmp_path))
    got = named(nl)
    assert {k: got[k] for k in EXPECTED} == EXPECTED
    _check(nl)


@pytest.mark.oracle
def test_pair_from_kicad9s_export(tmp_path, kicad9):
    sch = _sheet(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs           # net by net, every pin
    _check(read_net(tmp_path / "pair.k9.net"))
