"""Recognition of discrete three-op-amp in-amps (docs/engineering.md sec. 3): roles Rf1, Rf2, RG
(RGa/RGb when split), Ra..Rd for the difference stage (Ra: o2 -> n, Rb: n -> out, Rc: o1 -> p,
Rd: p -> ref)."""

from __future__ import annotations

import pytest

from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, ideal_gains


def inamp(rf1="500k", rf2="500k", rg=(("RG1", "m1", "m2", "1k"),), stage2=("10k",) * 4,
          followers=False) -> NetlistBuilder:
    """A1 = U1A (+in IN_P), A2 = U1B (+in IN_N), difference stage U1C; REF = GND."""
    nb = NetlistBuilder()
    if followers:
        nb.opamp("U1", {"A": ("IN_P", "o1", "o1"), "B": ("IN_N", "o2", "o2"), "C": ("p", "n", "OUT")})
    else:
        nb.r("RF1", "o1", "m1", rf1).r("RF2", "o2", "m2", rf2)
        for ref, a, b, v in rg:
            nb.r(ref, a, b, v)
        nb.opamp("U1", {"A": ("IN_P", "m1", "o1"), "B": ("IN_N", "m2", "o2"), "C": ("p", "n", "OUT")})
    ra, rb, rc, rd = stage2
    nb.r("RA", "o2", "n", ra).r("RB", "n", "OUT", rb).r("RC", "o1", "p", rc).r("RD", "p", "GND", rd)
    return nb


def one(nb):
    rec = find_stages(nb.build())
    assert len(rec.stages) == 1, [(s.id, s.kind) for s in rec.stages]
    assert not rec.near_misses
    return rec.stages[0]


def test_classic_inamp_roles_and_gain():
    st = one(inamp())
    assert st.kind == "three-opamp" and st.id == "U1A+U1B+U1C"
    assert st.amplifiers == ["U1A", "U1B", "U1C"]
    assert st.roles == {"Rf1": "RF1", "Rf2": "RF2", "RG": "RG1",
                        "Ra": "RA", "Rb": "RB", "Rc": "RC", "Rd": "RD"}
    assert st.circuit.ports == {"in_p": "IN_P", "in_n": "IN_N", "ref": "GND", "out": "OUT"}
    ad, acm, aref = ideal_gains(st)
    # Sedra & Smith 6th ed., Ex. 2.17 (docs/engineering.md sec. 3): RG = 1 k, Rf = 0.5 M, stage 2 of
    # 10 k: vd = 10 mV peak gives Vout = 10.01 V peak, i.e. G = 1001.
    assert ad == pytest.approx(1001.0, rel=1e-9)
    assert abs(acm) < 1e-9 and aref == pytest.approx(1.0)


def test_unequal_feedback_resistors():
    st = one(inamp(rf1="10k", rf2="20k", stage2=("10k", "20k", "10k", "20k")))
    ad, _, _ = ideal_gains(st)
    # docs/engineering.md sec. 3: G = (1 + (Rf1 + Rf2)/RG) * Rb/Ra = (1 + 30k/1k) * 2 = 62.
    assert ad == pytest.approx(62.0, rel=1e-9)


def test_rg_in_series_and_in_parallel():
    st = one(inamp(rg=(("RG1", "m1", "j", "499"), ("RG2", "j", "m2", "499"))))
    assert st.roles["RG"] == "RG1+RG2"
    # G = 1 + 2 * 500k / 998 (docs/engineering.md sec. 3 with RG = RG1 + RG2)
    assert ideal_gains(st)[0] == pytest.approx(1 + 1e6 / 998, rel=1e-9)
    st = one(inamp(rg=(("RG1", "m1", "m2", "2k"), ("RG2", "m1", "m2", "2k"))))
    assert st.roles["RG"] == "RG1||RG2"
    assert ideal_gains(st)[0] == pytest.approx(1001.0, rel=1e-9)


def test_split_rg_with_centre_tap_to_a_driven_reference():
    nb = inamp(rg=(("RG1", "m1", "TAP", "500"), ("RG2", "TAP", "m2", "500")))
    # The tap feeds a buffer (right-leg or shield drive): it is not a plain series joint.
    nb.opamp("U2", {"": ("TAP", "SHIELD", "SHIELD")}, package="single")
    st = one(nb)
    assert st.roles["RG"] == "RG1+RG2" and st.roles["RGa"] == "RG1" and st.roles["RGb"] == "RG2"
    assert any("TAP" in n for n in st.notes)
    assert ideal_gains(st)[0] == pytest.approx(1001.0, rel=1e-9)


def test_no_gain_resistor_followers_feeding_a_difference_stage():
    st = one(inamp(followers=True))
    assert st.kind == "three-opamp" and st.id == "U1A+U1B+U1C"
    assert "RG" not in st.roles and "Rf1" not in st.roles
    assert st.roles["Rc"] == "RC" and st.roles["Rd"] == "RD"
    ad, acm, _ = ideal_gains(st)
    assert ad == pytest.approx(1.0) and abs(acm) < 1e-12


def test_input_amps_with_gain_to_ground_are_not_an_inamp_first_stage():
    # Two separate non-inverting amplifiers (each with its own resistor to ground) ahead of a
    # difference stage: common mode is amplified, so this is not the in-amp topology. The
    # difference stage alone is still reported.
    nb = NetlistBuilder().r("RF1", "o1", "m1").r("RG1", "m1", "GND", "1k").r("RF2", "o2", "m2").r("RG2", "m2", "GND", "1k")
    nb.opamp("U1", {"A": ("IN_P", "m1", "o1"), "B": ("IN_N", "m2", "o2"), "C": ("p", "n", "OUT")})
    nb.r("RA", "o2", "n").r("RB", "n", "OUT").r("RC", "o1", "p").r("RD", "p", "GND")
    rec = find_stages(nb.build())
    assert [(s.id, s.kind) for s in rec.stages] == [("U1C", "difference")]


@pytest.mark.parametrize("rd_first", [False, True])
def test_reference_buffer_on_the_difference_stage_is_not_taken_for_an_input_amp(rd_first):
    # Followers on the inputs and a third follower buffering a supply divider into Rd: both
    # non-inverting-side branches end on follower outputs; the divider-fed one is REF, in
    # whichever order the netlist lists them.
    nb = NetlistBuilder()
    nb.opamp("U1", {"A": ("IN_P", "o1", "o1"), "B": ("IN_N", "o2", "o2"), "C": ("p", "n", "OUT"),
                    "D": ("div", "VR", "VR")})
    if rd_first:
        nb.r("RD", "p", "VR")
    nb.r("RA", "o2", "n").r("RB", "n", "OUT").r("RC", "o1", "p")
    if not rd_first:
        nb.r("RD", "p", "VR")
    nb.r("R8", "+5V", "div", "100k").r("R9", "div", "GND", "100k")
    nb.pins_to("J1", "IN_P", "IN_N")
    st = one(nb)
    assert st.id == "U1A+U1B+U1C" and st.circuit.ports["ref"] == "VR"
    assert st.circuit.ports["in_p"] == "IN_P" and st.roles["Rd"] == "RD"
