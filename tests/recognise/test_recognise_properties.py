"""Properties of recognition: the result depends on the circuit, not on the order in which the
netlist lists parts and nets, nor on what the nets are called (as long as no name says
"supply" or "reference")."""

from __future__ import annotations

import random

from hypothesis import given, settings
from hypothesis import strategies as st

from frontcheck.netlist import Net, Netlist, Node
from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder


def mixed_design() -> Netlist:
    """A two-op-amp in-amp, a three-op-amp in-amp without RG, a difference amp and an
    inverting amplifier (silent) in one netlist."""
    nb = NetlistBuilder()
    # two-op-amp in-amp on U1A/U1B
    nb.r("R1", "m1", "REFBUF", "100k").r("R2", "o1", "m1", "10k").r("R3", "o1", "m2", "10k")
    nb.r("R4", "m2", "OUT1", "100k").r("R5", "m1", "m2", "22k")
    nb.opamp("U1", {"A": ("SIG1N", "m1", "o1"), "B": ("SIG1P", "m2", "OUT1")})
    nb.r("R8", "+5V", "div", "1M").r("R9", "div", "GND", "1M")
    nb.opamp("U4", {"": ("div", "REFBUF", "REFBUF")}, package="single")
    # followers + difference stage on U2A/U2D/U2B
    nb.r("R10", "f1", "pp", "10k").r("R11", "pp", "GND", "10k").r("R12", "f2", "nn", "10k")
    nb.r("R13", "nn", "OUT2", "10k")
    nb.opamp("U2", {"A": ("SIG2P", "f1", "f1"), "D": ("SIG2N", "f2", "f2"), "B": ("pp", "nn", "OUT2")})
    # difference amp and inverting amp on U3A/U3B
    nb.r("R20", "SIG3N", "n3", "1k").r("R21", "n3", "OUT3", "47k").r("R22", "SIG3P", "p3", "1k")
    nb.r("R23", "p3", "REFBUF", "47k")
    nb.r("R30", "SIG4", "n4", "10k").r("R31", "n4", "OUT4", "100k").r("R32", "p4", "GND", "9k1")
    nb.opamp("U3", {"A": ("p3", "n3", "OUT3"), "B": ("p4", "n4", "OUT4")}, package="dual")
    nb.pins_to("J1", "SIG1P", "SIG1N", "SIG2P", "SIG2N", "SIG3P", "SIG3N", "SIG4")
    return nb.build()


def summary(rec) -> list:
    return [(s.id, s.kind, sorted(s.roles.items())) for s in rec.stages]


EXPECTED = [
    ("U1A+U1B", "two-opamp", sorted({"R1": "R1", "R2": "R2", "R3": "R3", "R4": "R4",
                                     "RG": "R5"}.items())),
    ("U2A+U2D+U2B", "three-opamp", sorted({"Ra": "R12", "Rb": "R13", "Rc": "R10",
                                           "Rd": "R11"}.items())),
    ("U3A", "difference", sorted({"R1": "R20", "R2": "R21", "R3": "R22", "R4": "R23"}.items())),
]


def test_mixed_design_finds_each_stage_once():
    rec = find_stages(mixed_design())
    assert summary(rec) == EXPECTED
    assert rec.near_misses == [] and rec.unsupported == []


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), rename=st.booleans())
def test_order_and_net_names_do_not_matter(seed, rename):
    nl = mixed_design()
    rng = random.Random(seed)
    keep = {"+5V", "GND"}       # supply names carry meaning; every other name is arbitrary
    names = [n.name for n in nl.nets if n.name not in keep]
    new = {n: n for n in keep}
    if rename:
        shuffled = [f"N{i:03d}" for i in range(len(names))]
        rng.shuffle(shuffled)
        new.update(zip(names, shuffled))
    else:
        new.update({n: n for n in names})
    nets = [Net(new[n.name], [Node(x.ref, x.pin, x.pinfunction, x.pintype) for x in n.nodes])
            for n in nl.nets]
    for n in nets:
        rng.shuffle(n.nodes)
    rng.shuffle(nets)
    comps = list(nl.components.items())
    rng.shuffle(comps)
    rec = find_stages(Netlist(components=dict(comps), nets=nets))
    assert summary(rec) == EXPECTED
    ports = {s.id: s.circuit.ports for s in rec.stages}
    assert ports["U3A"] == {"in_p": new["SIG3P"], "in_n": new["SIG3N"], "ref": new["REFBUF"],
                            "out": new["OUT3"]}
