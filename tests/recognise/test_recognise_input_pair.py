"""The first-stage pair of an in-amp found once (frontcheck.recognise.input_pair): two op-amps
with feedback resistors and a gain resistor between their inverting inputs, its gain, role
names, and where its outputs go. Invented parts; gains against the closed form
G1 = 1 + (Rf1 + Rf2)/RG (docs/engineering.md sec. 3; Sedra & Smith 6th ed., Ex. 2.17)."""

from __future__ import annotations

import math
import re

import pytest

from frontcheck.recognise import input_pair
from frontcheck.recognise.common import NetlistView
from netlist_builder import NetlistBuilder


def _pair(nb: NetlistBuilder, rf1="10k", rf2="10k", rg="2k", o_p="O1", o_n="O2") -> NetlistBuilder:
    nb.opamp("U1", {"A": ("IN_P", "M1", o_p), "B": ("IN_N", "M2", o_n)}, package="dual",
             vpos="+5V", vneg="-5V")
    return nb.r("R1", o_p, "M1", rf1).r("R2", o_n, "M2", rf2).r("R3", "M1", "M2", rg) \
        .pins_to("J1", "IN_P", "IN_N")


def _inamp(nb: NetlistBuilder, inp="O1", inn="O2") -> NetlistBuilder:
    return nb.part("U2", "inamp", "Project:InAmp", pins=[
        ("1", "RG", "passive", "RGA"), ("2", "-IN", "input", inn), ("3", "+IN", "input", inp),
        ("4", "V-", "power_in", "-5V"), ("5", "REF", "input", "GND"), ("6", "OUT", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG", "passive", "RGB")]).pins_to("J2", "OUT")


def test_pair_gain_roles_and_destination_an_integrated_inamp():
    view = NetlistView(_inamp(_pair(NetlistBuilder(), rf1="24.9k", rf2="24.9k", rg="4.99k")).build())
    (p,) = input_pair.candidates(view)
    assert (p.a_p.name, p.a_n.name) == ("U1A", "U1B")
    assert p.inputs == ("IN_P", "IN_N") and p.outputs == ("O1", "O2")
    # closed form 1 + (Rf1 + Rf2)/RG
    assert p.gain(view) == pytest.approx(1 + (24.9e3 + 24.9e3) / 4.99e3, rel=1e-12)
    assert p.roles() == {"Rf1": "R1", "Rf2": "R2", "RG": "R3"}
    assert input_pair.destination(view, p) == ("inamp", "U2")
    # no role of the pair reads as a reference designator of the design (letters + digits)
    designator = re.compile(r"^[A-Z]+\d+$")
    assert not any(designator.match(r) for r in [*p.roles(), *input_pair.ROLE_NAMES.values()])


def test_crossed_outputs_and_other_destinations():
    view = NetlistView(_inamp(_pair(NetlistBuilder()), inp="O2", inn="O1").build())
    (p,) = input_pair.candidates(view)
    assert input_pair.destination(view, p) == ("crossed", "U2")
    view = NetlistView(_pair(NetlistBuilder()).pins_to("J3", "O1", "O2").build())
    (p,) = input_pair.candidates(view)
    assert input_pair.destination(view, p) == ("other", None)


def test_unreadable_rg_gives_nan_and_series_rg_sums():
    view = NetlistView(_pair(NetlistBuilder(), rg="RG").build())
    (p,) = input_pair.candidates(view)
    assert math.isnan(p.gain(view))
    nb = NetlistBuilder()
    nb.opamp("U1", {"A": ("IN_P", "M1", "O1"), "B": ("IN_N", "M2", "O2")}, package="dual")
    nb.r("R1", "O1", "M1", "10k").r("R2", "O2", "M2", "10k").r("R3", "M1", "X", "1k") \
        .r("R4", "X", "M2", "1k").pins_to("J1", "IN_P", "IN_N", "O1", "O2")
    view = NetlistView(nb.build())
    (p,) = input_pair.candidates(view)
    assert p.rg_expr() == "R3+R4" and p.gain(view) == pytest.approx(1 + 20e3 / 2e3)


def test_not_a_pair_when_an_inverting_node_also_goes_to_ground():
    nb = _pair(NetlistBuilder()).r("R9", "M1", "GND", "10k").pins_to("J3", "O1", "O2")
    assert input_pair.candidates(NetlistView(nb.build())) == []


def test_three_opamp_in_amp_still_found_through_the_shared_pair_detection():
    from frontcheck.recognise import find_stages
    nb = _pair(NetlistBuilder())
    nb.opamp("U3", {"": ("P", "N", "OUT")}, package="single", vpos="+5V", vneg="-5V")
    nb.r("R4", "O2", "N", "10k").r("R5", "N", "OUT", "10k").r("R6", "O1", "P", "10k") \
        .r("R7", "P", "GND", "10k").pins_to("J2", "OUT")
    (st,) = find_stages(nb.build()).stages
    assert st.kind == "three-opamp" and st.roles["RG"] == "R3"
