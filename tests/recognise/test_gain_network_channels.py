"""A dual feedback-pin in-amp whose pins carry channel numbers ('+IN1', 'FB1', 'REF1', 'OUT1',
... 'FB2'): one in-amp per channel, each with its own two-resistor feedback network checked
as for a single part, so that a miswired channel is named alone.

The schematic and the twelve-pin symbol 'IAFB2' are invented. Every fact is checked on
frontcheck's own netlist of the .kicad_sch and on KiCad 9's export of the same file, after the
two netlists were compared net by net.
"""

from __future__ import annotations

import pytest

from frontcheck.component import classify
from frontcheck.kicad.netfile import read_net
from frontcheck.pipeline import RunOptions, check_netlist
from frontcheck.recognise import find_stages
from invented_parts import tag, two_pin
from kicad_sheets import LIB, Sym, kicad9_named, lib_pin, libsym, named, ours, write
from netlist_builder import ideal_gains
from test_recognise_integrated import FakeParts

OPTS = RunOptions(samples=200, seed=1)

# pins 1-6 down the left side, 7-12 up the right side, 2.54 mm apart
_PINS = [("passive", "FB1"), ("input", "-IN1"), ("input", "+IN1"), ("input", "REF1"),
         ("power_in", "V-"), ("output", "OUT1"), ("output", "OUT2"), ("power_in", "V+"),
         ("input", "REF2"), ("input", "+IN2"), ("input", "-IN2"), ("passive", "FB2")]
_AT = {i + 1: ((-12.7, 7.62 - 2.54 * i) if i < 6 else (12.7, -7.62 + 2.54 * (i - 6)))
       for i in range(12)}
LIB["T:IAFB2"] = libsym("T:IAFB2", {1: [
    lib_pin(t, *_AT[i + 1], 0 if i < 6 else 180, name, i + 1) for i, (t, name) in enumerate(_PINS)]})


def _sheet(tmp_path):
    nets = {1: "FB1", 2: "IN_N1", 3: "IN_P1", 4: "GND", 5: "-5V", 6: "OUT1", 7: "OUT2",
            8: "+5V", 9: "GND", 10: "IN_P2", 11: "IN_N2", 12: "FB2"}
    items = [Sym("T:IAFB2", "U1", 100, 100, value="IAFB2")]
    for pin, net in nets.items():
        px, py = _AT[pin]
        items.append(tag(net, round(100 + px, 4), round(100 - py, 4)))
    # channel 1 as the architecture needs: RF from OUT1 to FB1, RG from FB1 to REF1 (ground)
    items += two_pin("Device:R", "R11", 40, 150, "OUT1", "FB1", "10k")
    items += two_pin("Device:R", "R12", 50, 150, "FB1", "GND", "10k")
    # channel 2 miswired: the second resistor from OUT2 to REF2 instead of from FB2 to REF2
    items += two_pin("Device:R", "R21", 100, 150, "OUT2", "FB2", "10k")
    items += two_pin("Device:R", "R22", 110, 150, "OUT2", "GND", "10k")
    for i, n in enumerate((1, 2)):                 # bias returns of every input
        items += two_pin("Device:R", f"R{40 + 2 * i}", 40 + 60 * i, 200, f"IN_P{n}", "GND", "1M")
        items += two_pin("Device:R", f"R{41 + 2 * i}", 50 + 60 * i, 200, f"IN_N{n}", "GND", "1M")
    return write(tmp_path, items, "fb2")


EXPECTED = {
    "/FB1": {("U1", "1"), ("R11", "2"), ("R12", "1")},
    "/OUT1": {("U1", "6"), ("R11", "1")},
    "/FB2": {("U1", "12"), ("R21", "2")},
    "/OUT2": {("U1", "7"), ("R21", "1"), ("R22", "1")},
}


def _check(netlist):
    assert classify(netlist.components["U1"]) == "inamp"
    p = check_netlist(netlist, None, "fb2", "fb2", OPTS)
    incomplete = [f for f in p.findings if f.rule == "stage-incomplete"]
    # the miswired channel alone, named by its channel; the other channel is not miswired
    (bad,) = [f for f in incomplete if f.data.get("miswired")]
    assert bad.severity == "error" and bad.references == ["R22", "U1"]
    assert "U1: U1B: the feedback network is miswired" in bad.message
    assert "R22 runs from the output to REF instead of from the gain pin 12 to REF" in bad.message
    assert "U1A" not in bad.message and "move R22" in bad.fix
    (ok,) = [f for f in incomplete if not f.data.get("miswired")]
    assert ok.severity == "info" and ok.references == ["R11", "R12", "U1"]
    assert "U1A" in ok.message and "RF/RG = 1" in ok.message and "U1B" not in ok.message
    # with part data (an invented class, G0 = 1): channel A is a stage of gain
    # G0 (1 + RF/RG) = 1 (1 + 10k/10k) = 2 (non-inverting gain, common practice); channel B is
    # still the miswired network
    data = {"name": "test feedback class", "arch": "feedback-pin", "g0": 1.0, "r_in": 1e9}
    rec = find_stages(netlist, FakeParts({"U1": data}))
    (st,) = rec.stages
    assert st.id == "U1A" and st.amplifiers == ["U1A"]
    assert sorted(st.references) == ["R11", "R12", "U1"]
    assert ideal_gains(st)[0] == pytest.approx(2.0, rel=1e-9)
    (miss,) = rec.near_misses
    assert miss.miswired and miss.message.startswith("U1B: ") and "G0 = 1 from part data" \
        in miss.message


def test_dual_feedback_inamp_from_the_schematic(tmp_path):
    sch = _sheet(tmp_path)
    nl = ours(sch)
    got = named(nl)
    assert {k: got[k] for k in EXPECTED} == EXPECTED
    _check(nl)


@pytest.mark.oracle
def test_dual_feedback_inamp_matches_kicad9(tmp_path, kicad9):
    sch = _sheet(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs            # net by net, every pin
    assert {k: theirs[k] for k in EXPECTED} == EXPECTED
    _check(read_net(tmp_path / "fb2.k9.net"))
