"""One index of a design per check (frontcheck.netlist_view.one_index): recognition and the
design's DC view read the index the first of them built, and find what they found when each
built its own. The circuit is a difference amplifier of four 10k resistors, whose differential
gain is R2/R1 = 1 (textbook: Horowitz and Hill, The Art of Electronics, 3rd ed., sec. 5.14)."""

from __future__ import annotations

from netlist_builder import NetlistBuilder, diff_amp, ideal_gains

from frontcheck.analysis.dc_paths import DCView
from frontcheck.netlist_view import NetlistView, one_index
from frontcheck.recognise import find_stages


def _design():
    nb = diff_amp(NetlistBuilder())
    nb.c("C1", "U1_n", "OUT", "100p").r("R9", "IN_P", "GND", "1M", dnp=True)
    return nb.build()


def test_views_of_one_netlist_share_the_index_inside_the_block():
    nl = _design()
    with one_index(nl, None):
        first = NetlistView(nl, None, rails={"GND": None}, default_tol=0.001)
        dc = DCView(nl, {})
    assert dc.view.kind is first.kind and dc.view.r_at is first.r_at
    assert dc.view.units is first.units and dc.view.nodes is first.nodes
    # what depends on the caller stays the caller's: value defaults and rails
    assert first.default_tol == 0.001 and dc.view.default_tol == 0.01
    assert dc.view._values is not first._values


def test_other_netlists_and_part_data_and_outside_the_block_build_their_own():
    nl, other = _design(), _design()
    with one_index(nl, None):
        a = NetlistView(nl)
        b = NetlistView(other)        # another netlist
        c = NetlistView(nl, parts=object())   # other part data
    d = NetlistView(nl)               # after the block
    assert b.kind is not a.kind and c.kind is not a.kind and d.kind is not a.kind
    assert b.kind == a.kind == d.kind


def test_shared_index_finds_what_separate_indexes_find():
    nl = _design()
    alone = find_stages(nl)
    with one_index(nl, None):
        shared = find_stages(nl)
        dc = DCView(nl, {})
    assert [s.id for s in shared.stages] == [s.id for s in alone.stages] == ["U1"]
    ad, _, _ = ideal_gains(shared.stages[0])
    assert abs(ad - 1.0) < 1e-9           # R2/R1 = 10k/10k
    assert dc.view.dnp == ["R9"] and "R9" not in dc.view.comps   # DNP left out, as alone
    assert sorted(dc.resistors) == sorted(DCView(nl, {}).resistors)


def test_rails_stay_each_views_own_when_the_index_is_shared():
    # REF on a net whose name says nothing: a supply only where the caller's rails say so
    nl = diff_amp(NetlistBuilder(), ref="BIAS_A").build()
    with one_index(nl, None):
        plain = NetlistView(nl, rails={})
        told = NetlistView(nl, rails={"BIAS_A": 2.5})
    for _ in range(2):              # asked twice: the remembered answer is the same
        assert not plain.fixed("BIAS_A") and plain.rail("BIAS_A") is None
        assert told.fixed("BIAS_A") and told.rail("BIAS_A").value == 2.5
    assert plain.fixed("GND") and plain.rail("GND").value == 0.0   # ground by name


def test_capacitors_of_a_stage_are_found_from_the_net_pairs():
    # a feedback capacitor across R2 belongs to the stage; decoupling capacitors between the
    # supplies (many on a real board) and an input filter capacitor to ground do not
    nb = diff_amp(NetlistBuilder())
    nb.c("C1", "U1_n", "OUT", "100p").c("C2", "IN_P", "GND", "1n")
    for k in range(3, 40):
        nb.c(f"C{k}", "+5V", "GND")
    nl = nb.build()
    view = NetlistView(nl)
    stage_nets = {"U1_n", "OUT", "GND"}
    brute = [c for c in view.capacitors if c[1] in stage_nets and c[2] in stage_nets]
    for nets in (stage_nets, set(view.nodes)):     # few nets, then every net
        assert view.caps_among(nets) == [c for c in view.capacitors
                                         if c[1] in nets and c[2] in nets]
    assert view.caps_among(stage_nets) == brute
    assert [c[0] for c in view.caps_among({"OUT", "U1_n"})] == ["C1"]
    assert [c[0] for c in view.caps_at("IN_P")] == ["C2"]
    assert len(view.caps_at("+5V")) == 37
    (stage,) = find_stages(nl).stages
    assert [c.name for c in stage.circuit.capacitors] == ["C1"]


def test_dc_view_takes_the_values_recognition_read_with_its_own_default_tolerance():
    # what recognition's view read of each resistor is the DC view's too, except an assumed
    # tolerance, which is each view's own default; the values are those the DC view reads
    # alone (a value string's tolerance, a Tolerance field, a default, an unreadable value)
    nb = diff_amp(NetlistBuilder())
    nb.r("R5", "IN_P", "GND", "10k 0.1%").r("R6", "IN_N", "GND", "22k").r("R7", "OUT", "GND", "10q")
    nb.r("R8", "OUT", "GND", "4k7")
    nb.comps["R8"].fields["Tolerance"] = "B"
    nl = nb.build()
    alone = DCView(nl, {})
    refs = sorted(alone.view.comps)
    want = {r: alone.view._value(r) for r in refs if alone.view.kind[r] == "resistor"}
    with one_index(nl, None):
        first = NetlistView(nl, None, default_tol=0.05, default_from="default 5 % (project)")
        read = {r: first._value(r) for r in want}
        dc = DCView(nl, {})
        assert set(dc.view._values) == set(want)       # taken, not read again
    assert {r: dc.view._value(r) for r in want} == want
    assert read["R6"][1].value == 0.05 and want["R6"][1].value == 0.01
    assert want["R6"][1].source == "default" and want["R5"][1].source == "value"
    assert want["R8"][1].source == "field" and want["R7"][2]          # unreadable: a note
