"""The search for differential-output input pairs looks only at units a resistor chain joins
(frontcheck.recognise.input_pair.partners) instead of testing every two op-amp units. It must
find exactly the pairs the exhaustive search finds, in the same order and with the same
partners, on a design where pairs, split gain resistors, unreadable gain resistors and other
op-amp circuits (followers, difference stages, inverting stages sharing input nets) are mixed
and their units interleaved across packages. The pairs the design wires are known from its
construction (each gain 1 + (Rf1 + Rf2)/RG, docs/engineering.md sec. 3)."""

from __future__ import annotations

import math

import pytest

from frontcheck.recognise import diff_output, find_stages, input_pair
from frontcheck.recognise.common import NetlistView
from netlist_builder import NetlistBuilder


def _design(n: int) -> tuple[NetlistBuilder, dict[str, float]]:
    """``n`` groups of circuits; returns the builder and stage id -> expected gain."""
    nb = NetlistBuilder()
    expect: dict[str, float] = {}
    for k in range(n):
        # direct RG pair, its units in two different packages and the IN- amp first in order
        a, b = f"U{4 * k + 1}", f"U{4 * k + 2}"
        nb.opamp(b, {"A": (f"INN{k}", f"MN{k}", f"ON{k}")}, package="dual")
        nb.opamp(a, {"A": (f"INP{k}", f"MP{k}", f"OP{k}")}, package="dual")
        nb.r(f"RFP{k}", f"OP{k}", f"MP{k}", "10k").r(f"RFN{k}", f"ON{k}", f"MN{k}", "12k")
        nb.r(f"RG{k}", f"MP{k}", f"MN{k}", "2k")
        expect[f"{b}+{a}"] = 1 + (10e3 + 12e3) / 2e3
        # split gain resistor with a centre tap (a series chain of two resistors on one side)
        c = f"U{4 * k + 3}"
        nb.opamp(c, {"A": (f"TP{k}", f"TM1{k}", f"TO1{k}"), "B": (f"TN{k}", f"TM2{k}", f"TO2{k}")},
                 package="dual")
        nb.r(f"RT1{k}", f"TO1{k}", f"TM1{k}", "20k").r(f"RT2{k}", f"TO2{k}", f"TM2{k}", "20k")
        nb.r(f"RA{k}", f"TM1{k}", f"TX{k}", "500").r(f"RB{k}", f"TM2{k}", f"TJ{k}", "300")
        nb.r(f"RB2{k}", f"TJ{k}", f"TX{k}", "200").c(f"CT{k}", f"TX{k}", "GND")
        expect[f"{c}A+{c}B"] = 1 + 40e3 / 1e3
        # a follower, an inverting stage on a shared input net, a difference stage
        d = f"U{4 * k + 4}"
        nb.opamp(d, {"A": (f"INP{k}", f"FO{k}", f"FO{k}"), "B": ("GND", f"IM{k}", f"IO{k}"),
                     "C": (f"DP{k}", f"DN{k}", f"DO{k}")}, package="quad")
        nb.r(f"RI{k}", "SHARED_IN", f"IM{k}", "10k").r(f"RIF{k}", f"IM{k}", f"IO{k}", "47k")
        nb.r(f"RD1{k}", f"DIN{k}", f"DN{k}", "10k").r(f"RD2{k}", f"DN{k}", f"DO{k}", "10k")
        nb.r(f"RD3{k}", "SHARED_IN", f"DP{k}", "10k").r(f"RD4{k}", f"DP{k}", "GND", "10k")
        # a non-inverting amp whose inverting node has its feedback resistor only: two such
        # units are a pair of first-stage gain 1 for the composite search (input_pair.candidates)
        nb.opamp(f"U{500 + k}", {"": (f"SP{k}", f"SM{k}", f"SO{k}")}, package="single")
        nb.r(f"RS{k}", f"SO{k}", f"SM{k}", "10k")
    # one pair whose gain resistor has no value: accounted for, not a stage
    nb.opamp("U999", {"A": ("XP", "XM1", "XO1"), "B": ("XN", "XM2", "XO2")}, package="dual")
    nb.r("RX1", "XO1", "XM1", "10k").r("RX2", "XO2", "XM2", "10k").r("RXG", "XM1", "XM2", "")
    nets = [f"{p}{k}" for k in range(n) for p in ("INP", "INN", "TP", "TN", "DO", "DIN", "OP", "ON", "TO1", "TO2",
                                                 "SP", "SO")]
    return nb.pins_to("J1", "SHARED_IN", "XP", "XN", *nets), expect


def _exhaustive(view: NetlistView, used: set[str]):
    """Every two unclaimed units in unit order, first match wins (the search before the index)."""
    found = []
    units = [u for u in view.units if u.name not in used]
    for i, a1 in enumerate(units):
        for a2 in units[i + 1:]:
            if {a1.name, a2.name} & used:
                continue
            pair = diff_output.input_pair(view, a1, a2)
            if pair is None:
                continue
            used.update({a1.name, a2.name})
            found.append((a1.name, a2.name, pair.gain))
            break
    return found


@pytest.mark.parametrize("n", [1, 7])
def test_indexed_pair_search_equals_the_exhaustive_one(n):
    nb, expect = _design(n)
    view = NetlistView(nb.build())
    stages, unread, misses = diff_output.find(view, set())
    got = [(s.amplifiers[0], s.amplifiers[1]) for s in stages]
    ref = _exhaustive(NetlistView(nb.build()), set())
    assert got + [(p.a1.name, p.a2.name) for p in unread] == [(a, b) for a, b, _ in ref]
    assert {s.id for s in stages} == set(expect)
    assert [p.a1.name for p in unread] == ["U999A"] and len(misses) == 1
    for a, b, g in ref:
        if f"{a}+{b}" in expect:
            # closed form G1 = 1 + (Rf1 + Rf2)/RG
            assert g == pytest.approx(expect[f"{a}+{b}"], rel=1e-12)
        else:
            assert math.isnan(g)


def test_whole_recognition_keeps_difference_stages_apart():
    nb, expect = _design(3)
    rec = find_stages(nb.build())
    kinds = {s.id: s.kind for s in rec.stages}
    assert {i for i, k in kinds.items() if k == "diff-output"} == set(expect)
    assert sorted(i for i, k in kinds.items() if k == "difference") == ["U12C", "U4C", "U8C"]


@pytest.mark.parametrize("n", [1, 7])
def test_indexed_candidates_equal_the_exhaustive_search(n):
    nb, _ = _design(n)
    view = NetlistView(nb.build())
    got = [(p.a_p.name, p.a_n.name, p.rg_expr()) for p in input_pair.candidates(view)]
    ref, taken = [], set()
    units = list(view.units)
    for i, a1 in enumerate(units):               # every two units, first match wins
        for a2 in units[i + 1:]:
            if {a1.name, a2.name} & taken:
                continue
            p = input_pair.match(view, a1, a2)
            if p is None or p.followers:
                continue
            ref.append((a1.name, a2.name, p.rg_expr()))
            taken.update({a1.name, a2.name})
            break
    assert got == ref
    # the pairs without a gain network are among them (the solo units pair up in order)
    assert ("U500", "U501", None) in got if n > 1 else ("U500" not in {g[0] for g in got})
