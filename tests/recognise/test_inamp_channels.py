"""One sheet of an in-amp channel used six times: six stages, one per sheet instance, each with
the references KiCad annotates for that instance, as for discrete stages.

Invented design: the channel sheet holds an eight-pin in-amp 'IA8' (our own symbol), its gain
resistor, a bias resistor on each input, a connector and a load; REF leaves the sheet through a
hierarchical pin. The root ties REF of channels 1 to 5 to ground and leaves channel 6's REF on a
capacitor only, so one instance, and only that one, has a floating REF. Part data for 'IA8'
comes from a project part file (gain constant and stage resistor invented: G = 1 + K/RG with
K = 50 kOhm, RG = 1 kOhm gives 51, the G = 1 + K/RG form of docs/engineering.md sec. 3). The
netlist of the six instances is checked net by net against KiCad 9's export of the same files.
"""

from __future__ import annotations

import pytest

from frontcheck.kicad.netfile import read_net
from frontcheck.pipeline import RunOptions, check_netlist, check_project
from frontcheck.recognise import find_stages
from invented_parts import IA8_PINS
from invented_parts import LAB_INAMP_PART_FILE as PART_FILE
from kicad_sheets import (SubSym, Sym, kicad9_named, label, named, ours, sheet_block, wire,
                          write_project)

SHEETS = [f"71000000-0000-4000-8000-0000000000{k:02d}" for k in range(1, 7)]
NAMES = [f"Ch{k}" for k in range(1, 7)]
K_OHMS, RG_OHMS = 50e3, 1e3      # LAB_INAMP_PART_FILE's k; the drawn RG


class Part(SubSym):
    """A symbol of the shared sheet with its own Value (kicad_sheets' SubSym writes the library
    name as the value)."""

    def text(self, path=None):
        return super().text(path).replace(
            f'(property "Value" "{self.lib_id.split(":")[1]}"', f'(property "Value" "{self.value}"')


def _refs(prefix: str, n: int) -> tuple:
    """(sheet uuid, reference) per instance: U101 in channel 1, U201 in channel 2, ..."""
    return tuple((SHEETS[k], f"{prefix}{k + 1}{n:02d}") for k in range(6))


def _power(rail: str, x: float, y: float, n: int) -> SubSym:
    return SubSym(f"power:{rail}", "", x, y, refs=_refs("#PWR", n))


def _channel() -> list:
    """The channel sheet: U at (100, 100); a library pin (px, py) sits at (100 + px, 100 - py)."""
    items = [Part("T:IA8", "", 100, 100, value="IA8", refs=_refs("U", 1))]
    pins = {k: (round(100 + px, 4), round(100 - py, 4)) for k, (px, py) in IA8_PINS.items()}
    for pin, net in ((1, "RGA"), (2, "IN_N"), (3, "IN_P"), (6, "OUT"), (8, "RGB")):
        items.append(label(net, *pins[pin]))
    items += [_power("-5V", *pins[4], 1), _power("+5V", *pins[7], 2),
              label("REF", *pins[5], "hierarchical_label")]
    return items


def _channel_parts() -> list:
    items = []
    for n, (x, a, b, value) in enumerate(((40, "RGA", "RGB", "1k 0.1%"), (50, "IN_P", "GND", "1M"),
                                          (60, "IN_N", "GND", "1M"), (70, "OUT", "GND", "10k")),
                                         start=1):
        items.append(Part("Device:R", "", x, 150, value=value, refs=_refs("R", n)))
        for net, y, k in ((a, 146.19, 10 + 2 * n), (b, 153.81, 11 + 2 * n)):
            items.append(_power("GND", x, y, k) if net == "GND" else label(net, x, y))
    # the connector J at (160, 100): pins at (154.92, 97.46 / 100 / 102.54)
    items.append(SubSym("T:Conn3", "", 160, 100, refs=_refs("J", 1)))
    items += [label("IN_P", 154.92, 97.46), label("IN_N", 154.92, 100),
              _power("GND", 154.92, 102.54, 30)]
    return items


def _project(tmp_path, part_data: bool = True):
    root = []
    for k in range(6):
        y = 20 + 40 * k
        root.append(sheet_block(NAMES[k], "channel.kicad_sch", SHEETS[k], 80, y, [("REF", y + 5)]))
        root.append(wire(70, y + 5, 80, y + 5))
        if k < 5:
            root.append(Sym("power:GND", f"#PWR{900 + k}", 70, y + 5))
        else:
            root.append(label("REF6", 70, y + 5))
    # channel 6's REF: a capacitor to ground, nothing else
    root += [Sym("Device:C", "C1", 40, 270), label("REF6", 40, 266.19),
             Sym("power:GND", "#PWR999", 40, 273.81)]
    sch = write_project(tmp_path, root, {"channel.kicad_sch": _channel() + _channel_parts()})
    if part_data:
        (sch.parent / "frontcheck-parts.toml").write_text(PART_FILE, encoding="utf-8")
    return sch


def _expected_nets() -> dict:
    out = {}
    for k in range(1, 7):
        c = f"/Ch{k}/"
        out[c + "RGA"] = {(f"U{k}01", "1"), (f"R{k}01", "1")}
        out[c + "IN_P"] = {(f"U{k}01", "3"), (f"R{k}02", "1"), (f"J{k}01", "1")}
        out[c + "IN_N"] = {(f"U{k}01", "2"), (f"R{k}03", "1"), (f"J{k}01", "2")}
    return out


OPTS = RunOptions(samples=200, seed=1)
IDS = [f"U{k}01" for k in range(1, 7)]


def _summary(p) -> tuple:
    """(stage ids, {stage: references}, ref-floating (at, references)) of a checked project."""
    refs = {s.id: sorted(s.references) for s in p.stages}
    floating = [(f.stage or f.references[-1], f.references) for f in p.findings
                if f.rule == "ref-floating"]
    return [s.id for s in p.stages], refs, floating


def _check_six(p):
    ids, refs, floating = _summary(p)
    assert ids == IDS                                     # one stage per sheet instance
    for k in range(1, 7):
        assert refs[f"U{k}01"] == [f"R{k}01", f"U{k}01"]     # that instance's own RG
        res = p.results[f"U{k}01"]
        # G = 1 + K/RG = 1 + 50 k / 1 k (docs/engineering.md sec. 3, K from the part file)
        assert res.gain.nominal == pytest.approx(1 + K_OHMS / RG_OHMS, rel=1e-6)
    # only channel 6's REF floats, and the finding names channel 6's parts
    assert len(floating) == 1 and floating[0][0] == "U601"
    assert "U601" in floating[0][1] and not {"U101", "U501"} & set(floating[0][1])


def test_six_instances_from_the_schematic(tmp_path):
    sch = _project(tmp_path)
    got = named(ours(sch))
    want = _expected_nets()
    assert {k: got[k] for k in want} == want
    _check_six(check_project(str(sch), OPTS))


@pytest.mark.oracle
def test_six_instances_match_kicad9(tmp_path, kicad9):
    sch = _project(tmp_path)
    theirs = kicad9_named(kicad9, sch, tmp_path)
    assert named(ours(sch)) == theirs                     # net by net, every pin
    want = _expected_nets()
    assert {k: theirs[k] for k in want} == want
    p = check_netlist(read_net(tmp_path / f"{sch.stem}.k9.net"), sch.parent, "h", "h.net", OPTS)
    _check_six(p)


def test_six_instances_without_part_data(tmp_path):
    # No part data: six parts found, six times recognised but not analysed, and the structural
    # finding still on channel 6 alone.
    sch = _project(tmp_path, part_data=False)
    rec = find_stages(ours(sch))
    assert not rec.stages and [u.ref for u in rec.unsupported] == IDS
    assert [u.roles.get("RG") for u in rec.unsupported] == [f"R{k}01" for k in range(1, 7)]
    p = check_project(str(sch), OPTS)
    floating = [f for f in p.findings if f.rule == "ref-floating"]
    assert [f.references for f in floating] == [["C1", "U601"]] or \
        [f.references for f in floating] == [["U601"]]
    incomplete = [f for f in p.findings if f.rule == "stage-incomplete"]
    assert sorted(r for f in incomplete for r in f.references if r.startswith("U")) == IDS
