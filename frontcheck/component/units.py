"""The op-amps inside a package: which pins make each amplifier unit.

With unit numbers (a schematic or a KiCad 10 netlist) pins group by KiCad unit; channel letters
or numbers in the pin names ('OUTA', '-INB', 'IN+2') group them next; without either (a KiCad 9
netlist export) each output takes the nearest-numbered free inputs, which is how standard dual
and quad pinouts are laid out (common practice), and recognition confirms it by the wiring.
"""

from __future__ import annotations

from dataclasses import dataclass

from frontcheck.component.kinds import pin_key
from frontcheck.component.pin_names import normalise_pin_name, pin_channel, pin_role
from frontcheck.netlist import Component, Pin

__all__ = ["OpAmpUnitPins", "opamp_units"]

# Output pins of the standard quad pinout, and the unit each is (common practice).
_STANDARD_OUTPUTS = {1: "A", 7: "B", 8: "C", 14: "D"}


@dataclass(frozen=True)
class OpAmpUnitPins:
    """Pin numbers of one op-amp of a package. ``paired_by`` says how the pins were grouped:
    'unit' (KiCad units), 'name' (channel letters in pin names), 'single' (one op-amp), or
    'pin-number' (no unit data: each output paired with the nearest-numbered free inputs)."""

    name: str                   # 'U1A' for unit/channel A of a multi-op-amp part, else 'U1'
    unit: int
    inp: str | None
    inn: str | None
    out: str
    vpos: str | None = None
    vneg: str | None = None
    paired_by: str = "unit"


def _number(pin: Pin) -> float:
    return pin_key(pin.number)[0]


def _group(pins: list[Pin], outs: list[Pin], plus: list[Pin], minus: list[Pin]):
    """[(output, + input, - input)] and how they were paired."""
    chan = {p.number: pin_channel(p) for p in outs + plus + minus}
    if len(outs) > 1 and all(chan.values()) and len({chan[o.number] for o in outs}) == len(outs):
        return [(o, next((p for p in plus if chan[p.number] == chan[o.number]), None),
                 next((p for p in minus if chan[p.number] == chan[o.number]), None))
                for o in outs], "name", chan
    if pins and all(p.unit for p in outs + plus + minus):
        return [(o, next((p for p in plus if p.unit == o.unit), None),
                 next((p for p in minus if p.unit == o.unit), None)) for o in outs], "unit", chan
    groups = []
    free_p, free_m = list(plus), list(minus)
    for o in outs:
        on = _number(o)
        pp = min(free_p, key=lambda p: abs(_number(p) - on), default=None)
        mm = min(free_m, key=lambda p: abs(_number(p) - on), default=None)
        if pp is not None:
            free_p.remove(pp)
        if mm is not None:
            free_m.remove(mm)
        groups.append((o, pp, mm))
    return groups, "pin-number", chan


def opamp_units(component: Component) -> list[OpAmpUnitPins]:
    """The op-amps in a package, each with its input, output and supply pin numbers, named
    'U1A', 'U1B', ... in a package of several (by unit, channel or standard output pin), else
    'U1'. Empty when the package has no amplifier output.

    They depend on the pins alone (number, name, type and unit, in order) and the reference:
    worked out once per set of pins, as a design places many packages of one symbol."""
    pins = tuple((p.number, p.name, p.type, p.unit) for p in component.pins.values())
    found = _UNITS.get(pins)
    if found is None:
        if len(_UNITS) >= _MOST_UNITS:
            _UNITS.clear()
        found = _UNITS[pins] = _units(component)
    ref = component.ref
    return [OpAmpUnitPins(ref + suffix, *rest) for suffix, *rest in found]


_UNITS: dict[tuple, list[tuple]] = {}      # pins -> (name after the reference, unit, ...)
_MOST_UNITS = 4096


def _units(c: Component) -> list[tuple]:
    """opamp_units of ``c`` as tuples, each name as what follows the reference."""
    pins = list(c.pins.values())
    role = {p.number: pin_role(p) for p in pins}
    if not any(r == "vneg" for r in role.values()):
        role = {n: ("vneg" if r == "gnd" else r) for n, r in role.items()}
    vpos = [p for p in pins if role[p.number] == "vpos"]
    vneg = [p for p in pins if role[p.number] == "vneg"]
    outs, seen = [], set()
    for p in sorted((p for p in pins if role[p.number] == "out"), key=lambda p: pin_key(p.number)):
        key = (normalise_pin_name(p.name), p.unit)
        if key[0] and key in seen:
            continue          # one output drawn as several pins of the same name
        seen.add(key)
        outs.append(p)
    plus = [p for p in pins if role[p.number] == "inp"]
    minus = [p for p in pins if role[p.number] == "inn"]
    groups, how, chan = _group(pins, outs, plus, minus)
    if len(groups) == 1:
        how = "single" if how == "pin-number" else how
    multi = len(groups) > 1 or any(p.unit > 1 for p in pins) \
        or max((_number(p) for p in pins), default=0) > 8
    by_pin = all(_number(o) in _STANDARD_OUTPUTS for o, _, _ in groups)
    out = []
    for i, (o, pp, mm) in enumerate(groups):
        suffix = ""
        if multi:
            if o.unit:
                letter = chr(ord("A") + o.unit - 1)
            elif how == "name":
                ch = chan[o.number]
                letter = ch if ch.isalpha() else chr(ord("A") + int(ch) - 1)
            elif by_pin:
                letter = _STANDARD_OUTPUTS[int(_number(o))]
            else:
                letter = chr(ord("A") + i)
            suffix = letter
        vp = next((p for p in vpos if p.unit in (0, o.unit) or not o.unit), None) \
            or next(iter(vpos), None)
        vn = next((p for p in vneg if p.unit in (0, o.unit) or not o.unit), None) \
            or next(iter(vneg), None)
        unit = o.unit if how == "unit" else i + 1 if len(groups) > 1 else o.unit
        out.append((suffix, unit, pp.number if pp else None,
                    mm.number if mm else None, o.number,
                    vp.number if vp else None, vn.number if vn else None, how))
    return out
