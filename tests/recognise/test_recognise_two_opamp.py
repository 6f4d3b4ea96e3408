"""Recognition of discrete two-op-amp in-amps. Roles (frontcheck's names, documented in
frontcheck/recognise/two_opamp.py): R1 (A1 inverting node -> REF), R2 (A1 out -> A1 inverting
node), R3 (A1 out -> A2 inverting node), R4 (A2 feedback), RG (between the inverting nodes)."""

from __future__ import annotations

import pytest

from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, ideal_gains


def two_amp(rg: str | None = None, vals=("100k", "10k", "10k", "100k"), ref="REF") -> NetlistBuilder:
    r1, r2, r3, r4 = vals
    nb = NetlistBuilder()
    nb.r("R1", "m1", ref, r1).r("R2", "o1", "m1", r2).r("R3", "o1", "m2", r3).r("R4", "m2", "OUT", r4)
    if rg:
        nb.r("R6", "m1", "m2", rg)
    nb.opamp("U1", {"A": ("IN_N", "m1", "o1"), "B": ("IN_P", "m2", "OUT")})
    # REF from a buffered divider, as on the biopotential boards in the corpus
    nb.r("R8", "+5V", "div", "1M").r("R9", "div", "GND", "1M")
    nb.opamp("U2", {"": ("div", "REF", "REF")}, package="single")
    return nb


def one(nb):
    rec = find_stages(nb.build())
    assert len(rec.stages) == 1, [(s.id, s.kind) for s in rec.stages]
    assert not rec.near_misses
    return rec.stages[0]


def test_two_opamp_without_rg_gain_eleven():
    st = one(two_amp())
    assert st.kind == "two-opamp" and st.id == "U1A+U1B" and st.amplifiers == ["U1A", "U1B"]
    assert st.roles == {"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4"}
    assert st.circuit.ports == {"in_p": "IN_P", "in_n": "IN_N", "ref": "REF", "out": "OUT"}
    ad, acm, aref = ideal_gains(st)
    # docs/test-corpus.md sec. 2 (Muscle-BioAmp-BisCute): 100k / 10k / 10k / 100k wired this way is
    # "gain 11".
    assert ad == pytest.approx(11.0, rel=1e-9)
    assert abs(acm) < 1e-9 and aref == pytest.approx(1.0)


def test_two_opamp_with_rg():
    st = one(two_amp(rg="10k", vals=("220k", "22k", "22k", "220k")))
    assert st.roles["RG"] == "R6"
    ad, acm, _ = ideal_gains(st)
    # G = 1 + R4/R3 + 2 R4/RG for matched ratios (Kitchin & Counts, A Designer's Guide to
    # Instrumentation Amplifiers, 3rd ed., ch. 2 [from memory]) = 1 + 10 + 44 = 55.
    assert ad == pytest.approx(55.0, rel=1e-9)
    assert abs(acm) < 1e-9


def test_amplifier_cascade_with_plus_input_on_the_reference_is_silent():
    # A non-inverting amp referred to VMID followed by an inverting amp whose + input is VMID:
    # the same resistors, but the second op-amp takes no second signal.
    nb = NetlistBuilder().r("R1", "m1", "VMID", "10k").r("R2", "o1", "m1", "10k")
    nb.r("R3", "o1", "m2", "10k").r("R4", "m2", "OUT", "100k")
    nb.opamp("U1", {"A": ("IN", "m1", "o1"), "B": ("VMID", "m2", "OUT")})
    nb.r("R8", "+5V", "div", "1M").r("R9", "div", "GND", "1M")
    nb.opamp("U2", {"": ("div", "VMID", "VMID")}, package="single")
    rec = find_stages(nb.build())
    assert rec.stages == [] and rec.near_misses == []
