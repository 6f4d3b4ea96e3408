"""Invented parts for schematic tests (our own symbols, no vendor part): an eight-pin in-amp
'IA8', a single op-amp 'OA1', a fully differential amplifier 'FDA4', a three-pin connector, a
capacitor and the +-5 V power symbols, registered with kicad_sheets' library on import; the
helpers that place them with a label or power symbol on each pin; and the part file of an
invented in-amp class ('lab-inamp', gain G = 1 + 50 kΩ/RG) the composite and channel tests share.

A library pin (px, py) of a symbol placed at (x, y) sits at (x + px, y - py) on the sheet.
"""

from __future__ import annotations

from kicad_sheets import LIB, Sym, label, lib_pin, libsym

LIB.setdefault("T:IA8", libsym("T:IA8", {1: [
    lib_pin("passive", -10.16, 5.08, 0, "RG", 1), lib_pin("input", -10.16, -2.54, 0, "-IN", 2),
    lib_pin("input", -10.16, 2.54, 0, "+IN", 3), lib_pin("power_in", 2.54, -7.62, 90, "V-", 4),
    lib_pin("input", 0, -7.62, 90, "REF", 5), lib_pin("output", 10.16, 0, 180, "OUT", 6),
    lib_pin("power_in", 0, 7.62, 270, "V+", 7), lib_pin("passive", -10.16, -5.08, 0, "RG", 8)]}))
LIB.setdefault("T:OA1", libsym("T:OA1", {1: [
    lib_pin("input", -7.62, 2.54, 0, "+", 3), lib_pin("input", -7.62, -2.54, 0, "-", 2),
    lib_pin("output", 7.62, 0, 180, "OUT", 1), lib_pin("power_in", 0, 7.62, 270, "V+", 7),
    lib_pin("power_in", 0, -7.62, 90, "V-", 4)]}))
LIB.setdefault("T:FDA4", libsym("T:FDA4", {1: [
    lib_pin("input", -7.62, 2.54, 0, "IN+", 1), lib_pin("input", -7.62, -2.54, 0, "IN-", 2),
    lib_pin("output", 7.62, 2.54, 180, "OUT+", 3), lib_pin("output", 7.62, -2.54, 180, "OUT-", 4)]}))
LIB.setdefault("T:Conn3", libsym("T:Conn3", {1: [
    lib_pin("passive", -5.08, 2.54, 0, "Pin_1", 1), lib_pin("passive", -5.08, 0, 0, "Pin_2", 2),
    lib_pin("passive", -5.08, -2.54, 0, "Pin_3", 3)]}))
LIB.setdefault("Device:C", libsym("Device:C", {1: [lib_pin("passive", 0, 3.81, 270, "~", 1),
                                                    lib_pin("passive", 0, -3.81, 90, "~", 2)]}))
for _rail in ("+5V", "-5V"):
    LIB.setdefault(f"power:{_rail}", libsym(f"power:{_rail}", {1: [
        lib_pin("power_in", 0, 0, 90, _rail, 1, hide=True)]}, power=True))

# pin number -> library position, per symbol
PINS = {
    "T:IA8": {1: (-10.16, 5.08), 2: (-10.16, -2.54), 3: (-10.16, 2.54), 4: (2.54, -7.62),
              5: (0, -7.62), 6: (10.16, 0), 7: (0, 7.62), 8: (-10.16, -5.08)},
    "T:OA1": {3: (-7.62, 2.54), 2: (-7.62, -2.54), 1: (7.62, 0), 7: (0, 7.62), 4: (0, -7.62)},
    "T:FDA4": {1: (-7.62, 2.54), 2: (-7.62, -2.54), 3: (7.62, 2.54), 4: (7.62, -2.54)},
    "T:Conn3": {1: (-5.08, 2.54), 2: (-5.08, 0), 3: (-5.08, -2.54)},
}
IA8_PINS = PINS["T:IA8"]

RAILS = ("GND", "+5V", "-5V")
_power = [0]


def tag(net: str, x: float, y: float):
    """A power symbol for a rail (a global net named by it), else a local label."""
    if net in RAILS:
        _power[0] += 1
        return Sym(f"power:{net}", f"#PWR{_power[0]:03d}", x, y, value=net)
    return label(net, x, y)


def part(lib: str, ref: str, x: float, y: float, value: str, nets: dict[int, str]) -> list:
    """A symbol at (x, y) with a label or power symbol on each pin named in ``nets``."""
    items = [Sym(lib, ref, x, y, value=value)]
    for pin, net in nets.items():
        px, py = PINS[lib][pin]
        items.append(tag(net, round(x + px, 4), round(y - py, 4)))
    return items


def inamp_items(ref: str, x: float, y: float, nets: dict[int, str]) -> list:
    """The IA8 in-amp at (x, y) with a label or power symbol on each pin named in ``nets``."""
    return part("T:IA8", ref, x, y, "IA8", nets)


def two_pin(lib: str, ref: str, x: float, y: float, a: str, b: str, value: str) -> list:
    """A resistor or capacitor standing at (x, y), label ``a`` on pin 1 and ``b`` on pin 2."""
    return [Sym(lib, ref, x, y, value=value), tag(a, x, round(y - 3.81, 4)),
            tag(b, x, round(y + 3.81, 4))]


# The invented in-amp class: G = 1 + k/RG with k = 50 kΩ, a 10 kΩ second stage, and an
# open-loop gain so high that the gain is the gain equation's alone.
LAB_INAMP_PART_FILE = """
[[match]]
value = "IA8"
class = "lab-inamp"

[inamp.lab-inamp]
base = "generic-inamp"
k = "50k"
r_stage2 = "10k"
aol = 1e12
"""
