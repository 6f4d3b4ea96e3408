"""Every amplifier accounted for once: in a stage, or "not a front-end stage" with the reason in
plain words. Invented circuits; each gain below is the textbook closed-loop gain of the
topology (inverting -Rf/Rin, non-inverting 1 + Rf/Rg: common practice)."""

from __future__ import annotations

from frontcheck.recognise import find_stages
from netlist_builder import NetlistBuilder, diff_amp


def _uses(nb):
    return {a.name: (a.stage, a.reason) for a in find_stages(nb.build()).amplifiers}


def test_each_op_amp_of_a_quad_once_with_the_reason():
    nb = diff_amp(u="U1", package="none")      # resistors of a difference stage around U1A
    nb.opamp("U1", {
        "A": ("U1_p", "U1_n", "OUT"),
        "B": ("GND", "inv_n", "inv_out"),        # inverting, 78k / 1k
        "C": ("GND", "int_n", "int_out"),        # integrator
        "D": ("BUF_IN", "buf", "buf"),           # follower
    })
    nb.r("R10", "SIG2", "inv_n", "1k").r("R11", "inv_n", "inv_out", "78k")
    nb.r("R12", "SIG3", "int_n", "10k").c("C1", "int_n", "int_out", "1n")
    nb.pins_to("J1", "IN_P", "IN_N", "OUT", "SIG2", "SIG3", "BUF_IN", "inv_out", "int_out", "buf")
    uses = _uses(nb)
    assert uses["U1A"] == ("U1A", "")
    assert uses["U1B"] == (None, "inverting amplifier, gain -78")
    assert uses["U1C"] == (None, "integrator (capacitor from output to inverting input)")
    assert uses["U1D"] == (None, "follower (unity-gain buffer)")
    assert len(uses) == 4


def test_non_inverting_comparator_and_unused_units():
    nb = NetlistBuilder().opamp("U2", {
        "A": ("SIG", "ni_n", "ni_out"),            # non-inverting, 1 + 90k/10k
        "B": ("SIG", "THRESH", "CMP_OUT"),         # no feedback: comparator
        "C": ("GND", "c_n", None),                 # output open: unused
        "D": ("GND", "d_n", "d_n"),                # follower of ground (a parked unit)
    })
    nb.r("R1", "ni_out", "ni_n", "90k").r("R2", "ni_n", "GND", "10k")
    nb.pins_to("J1", "SIG", "THRESH", "CMP_OUT", "ni_out")
    uses = _uses(nb)
    assert uses["U2A"] == (None, "non-inverting amplifier, gain 10")
    assert uses["U2B"] == (None, "no feedback to the inverting input: comparator or open loop")
    assert uses["U2C"][1].startswith("unused unit")
    assert uses["U2D"] == (None, "follower (unity-gain buffer) of a fixed voltage")


def _vendor_inamp(nb, ref="U3", rg="R5"):
    nb.part(ref, "INAMP-X", "vendor:INAMP-X", pins=[
        ("1", "RG_1", "passive", "rg1"), ("2", "V-IN", "input", "IN_N"),
        ("3", "V+IN", "input", "IN_P"), ("4", "V-", "power_in", "-5V"),
        ("5", "REF", "input", "GND"), ("6", "VO", "output", "OUT"),
        ("7", "V+", "power_in", "+5V"), ("8", "RG_2", "passive", "rg2")])
    nb.r(rg, "rg1", "rg2", "1k")
    return nb.pins_to("J1", "IN_P", "IN_N", "OUT")


def test_vendor_style_in_amp_is_found_and_accounted_for():
    rec = find_stages(_vendor_inamp(NetlistBuilder()).build())
    assert [(u.ref, u.kind, u.roles.get("RG")) for u in rec.unsupported] == [
        ("U3", "integrated-inamp", "R5")]
    (use,) = rec.amplifiers
    assert (use.name, use.kind, use.stage) == ("U3", "in-amp", None)
    assert "no part data" in use.reason


def test_vendor_style_in_amp_with_part_data_is_a_stage():
    class Parts:
        def inamp_model(self, c):
            return {"name": "test class", "k": 50e3, "r_stage2": 10e3}
    rec = find_stages(_vendor_inamp(NetlistBuilder()).build(), Parts())
    assert [(s.id, s.kind) for s in rec.stages] == [("U3", "integrated-inamp")]
    assert [(a.name, a.stage) for a in rec.amplifiers] == [("U3", "U3")]


def test_fda_and_unreadable_amplifier_symbols_are_listed():
    nb = NetlistBuilder().part("U4", "FDA-1", "lab:FDA-1", pins=[
        ("1", "IN+", "input", "A"), ("2", "IN-", "input", "B"), ("3", "OUT+", "output", "C"),
        ("4", "OUT-", "output", "D")])
    nb.part("U5", "ODD", "Amplifier_Operational:ODD", pins=[
        ("1", "X1", "input", "A"), ("2", "X2", "input", "B"), ("3", "Y", "output", "C")])
    nb.pins_to("J1", "A", "B", "C", "D")
    uses = {a.name: (a.kind, a.reason) for a in find_stages(nb.build()).amplifiers}
    assert uses["U4"] == ("fully differential amplifier",
                          "fully differential amplifier: not a stage kind frontcheck models")
    assert uses["U5"] == ("amplifier", "unknown pin roles (pins X1, X2, Y)")


def test_terminal_counts_and_verbose_lists():
    from frontcheck.report import render
    from frontcheck.report.model import ProjectReport, Report
    amps = [{"name": "U1A", "ref": "U1", "kind": "op-amp", "stage": "U1A", "reason": ""},
            {"name": "U1B", "ref": "U1", "kind": "op-amp", "stage": None,
             "reason": "inverting amplifier, gain -78"}]
    rep = Report(projects=[ProjectReport(name="board", path="board", amplifiers=amps)])
    text = render(rep, "text")
    assert "amplifiers: 1 in stages, 1 not a front-end stage (U1B; --verbose says why)" in text
    assert "gain -78" not in text
    rep.verbose = True
    assert "not a front-end stage: U1B (op-amp): inverting amplifier, gain -78" in render(rep, "text")
    import json
    assert json.loads(render(rep, "json"))["projects"][0]["amplifiers"] == amps


def test_ac_coupled_plus_input_with_its_gain_resistor_to_a_reference_net():
    # A second gain stage: the signal AC-coupled into + (C1, R3 to the reference net MID),
    # the gain resistor R1 1k from - to MID, feedback R2 100k. MID is a net no name makes a
    # rail, so the wiring cannot tell signal from reference: both gains are said, 1 + 100k/1k
    # = 101 from + and -100k/1k from MID (common practice), never 'inverting, gain -100'.
    nb = NetlistBuilder().opamp("U4", {"": ("ac_p", "fb", "AMP_OUT")}, package="single")
    nb.c("C1", "SIG", "ac_p", "1u").r("R3", "ac_p", "MID", "1M")
    nb.r("R1", "fb", "MID", "1k").r("R2", "fb", "AMP_OUT", "100k")
    nb.r("R4", "+5V", "MID", "10k").r("R5", "MID", "GND", "10k")
    nb.pins_to("J1", "SIG", "AMP_OUT")
    (use,) = _uses(nb).values()
    assert use == (None, "amplifier fed at both inputs: gain 101 from its + input, -100 from MID")
    # the same stage with + held at MID directly is the inverting amplifier it looks like
    nb = NetlistBuilder().opamp("U4", {"": ("MID", "fb", "AMP_OUT")}, package="single")
    nb.r("R1", "fb", "SIG", "1k").r("R2", "fb", "AMP_OUT", "100k")
    nb.r("R4", "+5V", "MID", "10k").r("R5", "MID", "GND", "10k")
    nb.pins_to("J1", "SIG", "AMP_OUT")
    assert list(_uses(nb).values()) == [(None, "inverting amplifier, gain -100")]


def test_loop_closed_through_a_transistor_output_stage():
    # A rail splitter: the op-amp drives the bases of a complementary pair (Q1 NPN, Q2 PNP)
    # through R1; their emitters make MID, which the inverting input senses directly. The
    # loop closes through the transistors (common practice), so it is neither a comparator
    # nor open loop, and a 100 pF compensation capacitor does not make it an integrator.
    nb = NetlistBuilder().opamp("U3", {"": ("HALF", "MID", "drv")}, package="single")
    nb.r("R1", "drv", "base", "1k").r("R2", "+12V", "HALF", "10k").r("R3", "HALF", "GND", "10k")
    for q, rail in (("Q1", "+12V"), ("Q2", "GND")):
        nb.part(q, "BJT", "Device:Q_BJT", pins=[("1", "B", "input", "base"),
                                                ("2", "C", "passive", rail),
                                                ("3", "E", "passive", "MID")])
    nb.pins_to("J1", "MID")
    want = (None, "amplifier with a transistor output stage (loop closed through Q1/Q2)")
    assert list(_uses(nb).values()) == [want]
    nb.c("C1", "MID", "drv", "100p")
    assert list(_uses(nb).values()) == [want]


def test_markdown_and_html_list_each_amplifier_outside_a_stage():
    import html

    from conftest import REPO
    from frontcheck.pipeline import RunOptions, run
    from frontcheck.report import render
    rep = run([str(REPO / "sample_projects" / "ecg-frontend")], RunOptions(samples=0))
    import json
    amps = json.loads(render(rep, "json"))["projects"][0]["amplifiers"]
    outside = [a for a in amps if a["stage"] is None]
    assert [a["name"] for a in outside] == ["U3A", "U3B"]
    for fmt in ("markdown", "html"):
        out = html.unescape(render(rep, fmt))
        for a in outside:
            assert f"Not a front-end stage: {a['name']} (op-amp): {a['reason']}" in out, fmt
