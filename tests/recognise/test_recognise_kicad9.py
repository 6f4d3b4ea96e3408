"""A vendor-style in-amp as drawn in a schematic of our own (pin names V+IN, V-IN, RG_{1},
RG_{2}, REF, V_{O} with KiCad text markup): frontcheck's netlist of the .kicad_sch and KiCad 9's
own export of it connect the same pins, and recognition reads the same in-amp from both - the
pin names arrive as KiCad writes them, markup included."""

from __future__ import annotations

from frontcheck.kicad.netfile import read_net
from frontcheck.recognise import find_stages
from kicad_sheets import LIB, Sym, label, lib_pin, libsym, named, ours, write

LIB["vendor:INAMP-X"] = libsym("vendor:INAMP-X", {1: [
    lib_pin("passive", -10.16, 5.08, 0, "RG_{1}", 1), lib_pin("input", -10.16, -2.54, 0, "V-IN", 2),
    lib_pin("input", -10.16, 2.54, 0, "V+IN", 3), lib_pin("power_in", 2.54, -7.62, 90, "V-", 4),
    lib_pin("input", 0, -7.62, 90, "REF", 5), lib_pin("output", 10.16, 0, 180, "V_{O}", 6),
    lib_pin("power_in", 0, 7.62, 270, "V+", 7), lib_pin("passive", -10.16, -5.08, 0, "RG_{2}", 8)]})

# U3 at (100, 100): a library pin (px, py) sits at (100 + px, 100 - py) on the sheet
_U3_PINS = {"RGA": (89.84, 94.92), "IN_N": (89.84, 102.54), "IN_P": (89.84, 97.46),
            "-5V": (102.54, 107.62), "GND": (100, 107.62), "OUT": (110.16, 100),
            "+5V": (100, 92.38), "RGB": (89.84, 105.08)}


def _sheet(tmp_path):
    items = [Sym("vendor:INAMP-X", "U3", 100, 100, value="INAMP-X")]
    items += [label(net, x, y) for net, (x, y) in _U3_PINS.items()]
    # RG between the RG pins; a load on each input and on the output so no net is a lone pin
    for ref, a, b, x, value in (("R5", "RGA", "RGB", 60, "1k"), ("R1", "IN_P", "GND", 70, "1M"),
                                ("R2", "IN_N", "GND", 80, "1M"), ("R3", "OUT", "GND", 130, "10k")):
        items += [Sym("Device:R", ref, x, 150, value=value), label(a, x, 146.19), label(b, x, 153.81)]
    return write(tmp_path, items, "ia")


def test_vendor_inamp_from_the_schematic_and_from_kicad9(tmp_path, kicad9):
    import subprocess
    sch = _sheet(tmp_path)
    mine = ours(sch)
    out = tmp_path / "ia.k9.net"
    r = subprocess.run([str(kicad9), "netlist", str(sch), str(out)], capture_output=True,
                       text=True, timeout=600)
    assert r.returncode == 0, r.stderr[-300:]
    theirs = read_net(out)
    assert named(mine) == named(theirs)
    assert {p.name for p in theirs.components["U3"].pins.values()} >= {"RG_{1}", "V_{O}"}
    found = []
    for nl in (mine, theirs):
        (un,) = find_stages(nl).unsupported
        found.append((un.ref, un.kind, un.roles.get("RG"), un.pins["out"], un.pins["ref"]))
        assert "RG = R5 = 1.00 kΩ" in un.message
    # local labels name their nets with the sheet path, in both netlists
    assert found[0] == found[1] == ("U3", "integrated-inamp", "R5", "/OUT", "/GND")
