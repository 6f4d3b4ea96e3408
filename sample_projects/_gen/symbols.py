"""The samples' own generic symbol library, embedded into every sheet's lib_symbols.

Drawn here from scratch (not taken from any published library): resistor, capacitor, a dual
op-amp with a separate power unit, a single op-amp with its power pins, an integrated in-amp,
single-row connectors, power symbols and a supply flag that declares a supply net driven.

Pin positions are given in grid steps of 1.27 mm so that every pin end lands on the 1.27 mm
grid whatever the placement; the library frame has Y pointing up, as KiCad's does.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .sexp import Q

LIB = "fc_samples"
G = 1.27  # mm per grid step


@dataclass(frozen=True)
class LibPin:
    number: str
    name: str          # "~" = unnamed (files older than 20250318 read it as no name)
    type: str          # input, output, passive, power_in, power_out
    x: int             # grid steps, library frame (Y up)
    y: int
    angle: int         # direction from the connection point towards the body
    length: float      # mm
    unit: int = 0      # 0 = every unit
    hidden: bool = False


@dataclass
class LibSymbol:
    name: str
    ref_prefix: str
    value: str
    description: str
    pins: list[LibPin]
    graphics: dict[int, list]            # unit -> graphic items (unit 0 = common)
    body: dict[int, tuple] = field(default_factory=dict)   # unit -> (x0, y0, x1, y1) mm, Y up
    units: int = 1
    power: bool = False
    hide_pin_names: bool = False
    hide_pin_numbers: bool = False
    pin_name_offset: float = 0.508
    ref_at: tuple = (0.0, 0.0)
    value_at: tuple = (0.0, 0.0)
    ref_hidden: bool = False

    @property
    def lib_id(self) -> str:
        return f"{LIB}:{self.name}"

    def pins_of(self, unit: int) -> list[LibPin]:
        return [p for p in self.pins if p.unit in (0, unit)]

    def sexpr(self, prefix: bool = True) -> list:
        out: list = ["symbol", Q(self.lib_id if prefix else self.name)]
        if self.power:
            out.append(["power"])
        if self.hide_pin_numbers:
            out.append(["pin_numbers", ["hide", "yes"]])
        pn: list = ["pin_names", ["offset", self.pin_name_offset]]
        if self.hide_pin_names:
            pn.append(["hide", "yes"])
        out.append(pn)
        out += [["exclude_from_sim", "no"], ["in_bom", "yes"], ["on_board", "yes"]]
        out.append(_prop("Reference", self.ref_prefix, self.ref_at, hidden=self.ref_hidden))
        out.append(_prop("Value", self.value, self.value_at))
        out.append(_prop("Footprint", "", (0, 0), hidden=True))
        out.append(_prop("Datasheet", "", (0, 0), hidden=True))
        out.append(_prop("Description", self.description, (0, 0), hidden=True))
        units = sorted(set(self.graphics) | {p.unit for p in self.pins})
        for u in units:
            sub: list = ["symbol", Q(f"{self.name}_{u}_1")]
            sub += self.graphics.get(u, [])
            for p in self.pins:
                if p.unit == u:
                    sub.append(_pin(p))
            out.append(sub)
        out.append(["embedded_fonts", "no"])
        return out


def _font(size: float = 1.27) -> list:
    return ["font", ["size", size, size]]


def _prop(name: str, value: str, at: tuple, hidden: bool = False, justify: str | None = None,
          angle: float = 0) -> list:
    eff: list = ["effects", _font()]
    if justify:
        eff.append(["justify", *justify.split()])
    if hidden:
        eff.append(["hide", "yes"])
    return ["property", Q(name), Q(value), ["at", at[0], at[1], angle], eff]


def _pin(p: LibPin) -> list:
    node: list = ["pin", p.type, "line", ["at", p.x * G, p.y * G, p.angle], ["length", p.length]]
    if p.hidden:
        node.append(["hide", "yes"])
    node.append(["name", Q(p.name), ["effects", _font()]])
    node.append(["number", Q(p.number), ["effects", _font()]])
    return node


def _stroke(width: float = 0.254) -> list:
    return ["stroke", ["width", width], ["type", "default"]]


def rect(x0, y0, x1, y1, fill="background", width=0.254) -> list:
    return ["rectangle", ["start", x0, y0], ["end", x1, y1], _stroke(width), ["fill", ["type", fill]]]


def poly(*pts, fill="none", width=0.254) -> list:
    return ["polyline", ["pts", *[["xy", x, y] for x, y in pts]], _stroke(width), ["fill", ["type", fill]]]


def circle(cx, cy, r, fill="none", width=0.254) -> list:
    return ["circle", ["center", cx, cy], ["radius", r], _stroke(width), ["fill", ["type", fill]]]


def text(s, x, y, size=1.27) -> list:
    return ["text", Q(s), ["at", x, y, 0], ["effects", _font(size)]]


# ---------------------------------------------------------------------------------------------
# Passive parts

def resistor() -> LibSymbol:
    # Body 2.032 x 5.08 mm, pins 2.54 mm long: ends 10.16 mm apart (8 grid steps).
    return LibSymbol(
        "R", "R", "R", "Resistor (frontcheck sample library)",
        pins=[LibPin("1", "~", "passive", 0, 4, 270, 2.54),
              LibPin("2", "~", "passive", 0, -4, 90, 2.54)],
        graphics={0: [rect(-1.016, 2.54, 1.016, -2.54, fill="none")]},
        body={0: (-1.016, -2.54, 1.016, 2.54)},
        hide_pin_names=True, hide_pin_numbers=True, pin_name_offset=0,
        ref_at=(2.032, 1.27), value_at=(2.032, -1.27))


def capacitor() -> LibSymbol:
    return LibSymbol(
        "C", "C", "C", "Capacitor, non-polarised (frontcheck sample library)",
        pins=[LibPin("1", "~", "passive", 0, 4, 270, 4.318),
              LibPin("2", "~", "passive", 0, -4, 90, 4.318)],
        graphics={0: [poly((-2.032, 0.762), (2.032, 0.762), width=0.508),
                      poly((-2.032, -0.762), (2.032, -0.762), width=0.508)]},
        body={0: (-2.032, -0.762, 2.032, 0.762)},
        hide_pin_names=True, hide_pin_numbers=True, pin_name_offset=0,
        ref_at=(2.54, 1.27), value_at=(2.54, -1.27))


# ---------------------------------------------------------------------------------------------
# Amplifiers

_TRIANGLE = [(-5.08, 5.08), (5.08, 0), (-5.08, -5.08), (-5.08, 5.08)]


def opamp_dual() -> LibSymbol:
    """Two op-amp units (A, B) and a separate power unit (C) carrying V+ and V-."""
    pins = [
        LibPin("3", "+", "input", -6, 2, 0, 2.54, unit=1),
        LibPin("2", "-", "input", -6, -2, 0, 2.54, unit=1),
        LibPin("1", "~", "output", 6, 0, 180, 2.54, unit=1),
        LibPin("5", "+", "input", -6, 2, 0, 2.54, unit=2),
        LibPin("6", "-", "input", -6, -2, 0, 2.54, unit=2),
        LibPin("7", "~", "output", 6, 0, 180, 2.54, unit=2),
        LibPin("8", "V+", "power_in", 0, 6, 270, 2.54, unit=3),
        LibPin("4", "V-", "power_in", 0, -6, 90, 2.54, unit=3),
    ]
    tri = poly(*_TRIANGLE, fill="background")
    return LibSymbol(
        "OPAMP_DUAL", "U", "generic op-amp",
        "Dual op-amp, units A and B, power in unit C (frontcheck sample library)",
        pins=pins,
        graphics={1: [tri], 2: [tri], 3: [rect(-2.54, 5.08, 2.54, -5.08)]},
        body={1: (-5.08, -5.08, 5.08, 5.08), 2: (-5.08, -5.08, 5.08, 5.08),
              3: (-2.54, -5.08, 2.54, 5.08)},
        units=3, pin_name_offset=0.254, ref_at=(0, 7.62), value_at=(0, -7.62))


def opamp_single() -> LibSymbol:
    """One op-amp with its supply pins on the same unit."""
    pins = [
        LibPin("3", "+", "input", -6, 2, 0, 2.54),
        LibPin("2", "-", "input", -6, -2, 0, 2.54),
        LibPin("6", "~", "output", 6, 0, 180, 2.54),
        LibPin("7", "V+", "power_in", -2, 6, 270, 3.81),
        LibPin("4", "V-", "power_in", -2, -6, 90, 3.81),
    ]
    # Pin names stay in the data (V+, V- tell a reader the supply pins) but are not drawn:
    # inside the small triangle they would overprint the input signs drawn here instead.
    return LibSymbol(
        "OPAMP", "U", "generic op-amp", "Single op-amp with supply pins (frontcheck sample library)",
        pins=pins, graphics={0: [poly(*_TRIANGLE, fill="background"), text("+", -3.81, 2.54),
                                 text("-", -3.81, -2.54)]},
        body={0: (-5.08, -5.08, 5.08, 5.08)},
        hide_pin_names=True, pin_name_offset=0.254, ref_at=(2.54, 6.35), value_at=(2.54, -6.35))


def inamp() -> LibSymbol:
    """Integrated instrumentation amplifier: +IN, -IN, RG1, RG2, REF, OUT, V+, V-."""
    # RG1 and RG2 are 10.16 mm apart, one resistor length: RG drops in beside the body.
    pins = [
        LibPin("3", "+IN", "input", -8, 6, 0, 2.54),
        LibPin("1", "RG1", "passive", -8, 4, 0, 2.54),
        LibPin("8", "RG2", "passive", -8, -4, 0, 2.54),
        LibPin("2", "-IN", "input", -8, -6, 0, 2.54),
        LibPin("6", "OUT", "output", 8, 0, 180, 2.54),
        LibPin("5", "REF", "input", 4, -10, 90, 2.54),
        LibPin("7", "V+", "power_in", 0, 10, 270, 2.54),
        LibPin("4", "V-", "power_in", 0, -10, 90, 2.54),
    ]
    return LibSymbol(
        "INAMP", "U", "generic in-amp",
        "Instrumentation amplifier, gain set by RG (frontcheck sample library)",
        pins=pins, graphics={0: [rect(-7.62, 10.16, 7.62, -10.16)]},
        body={0: (-7.62, -10.16, 7.62, 10.16)},
        pin_name_offset=0.508, ref_at=(3.81, 11.43), value_at=(3.81, -11.43))


def connector(n: int) -> LibSymbol:
    """Single-row connector, pins on the right, pin 1 at the top."""
    pins = [LibPin(str(k + 1), "~", "passive", 3, -2 * k, 180, 2.54) for k in range(n)]
    bottom = -2.54 * (n - 1) - 1.27
    marks = [poly((0.0, -2.54 * k), (1.27, -2.54 * k), width=0.1524) for k in range(n)]
    return LibSymbol(
        f"CONN_1x{n:02d}", "J", f"CONN_1x{n:02d}", f"Connector, one row of {n} (frontcheck sample library)",
        pins=pins, graphics={0: [rect(-2.54, 1.27, 1.27, bottom), *marks]},
        body={0: (-2.54, bottom, 1.27, 1.27)},
        hide_pin_names=True, pin_name_offset=1.016, ref_at=(-0.635, 2.54),
        value_at=(-0.635, bottom - 1.27))


# ---------------------------------------------------------------------------------------------
# Power symbols: (power) with a hidden power_in pin make a global net named by Value.

def power_rail(name: str) -> LibSymbol:
    """A positive-rail symbol: a bar above the connection point."""
    return LibSymbol(
        name, "#PWR", name, f"Supply rail {name} (frontcheck sample library)",
        pins=[LibPin("1", "~", "power_in", 0, 0, 90, 0, hidden=True)],
        graphics={0: [poly((0, 0), (0, 1.27)), poly((-1.27, 1.27), (1.27, 1.27)),
                      poly((-0.762, 1.778), (0, 2.286), (0.762, 1.778))]},
        body={0: (-1.27, 0.3, 1.27, 2.3)},
        power=True, hide_pin_names=True, hide_pin_numbers=True, pin_name_offset=0,
        ref_at=(0, 3.81), value_at=(0, 3.556), ref_hidden=True)


def power_negative(name: str) -> LibSymbol:
    """A negative-rail symbol: a bar below the connection point."""
    return LibSymbol(
        name, "#PWR", name, f"Supply rail {name} (frontcheck sample library)",
        pins=[LibPin("1", "~", "power_in", 0, 0, 270, 0, hidden=True)],
        graphics={0: [poly((0, 0), (0, -1.27)), poly((-1.27, -1.27), (1.27, -1.27)),
                      poly((-0.762, -1.778), (0, -2.286), (0.762, -1.778))]},
        body={0: (-1.27, -2.3, 1.27, -0.3)},
        power=True, hide_pin_names=True, hide_pin_numbers=True, pin_name_offset=0,
        ref_at=(0, -5.08), value_at=(0, -3.556), ref_hidden=True)


def ground() -> LibSymbol:
    return LibSymbol(
        "GND", "#PWR", "GND", "Ground, 0 V reference (frontcheck sample library)",
        pins=[LibPin("1", "~", "power_in", 0, 0, 270, 0, hidden=True)],
        graphics={0: [poly((0, 0), (0, -1.016)), poly((-1.524, -1.016), (1.524, -1.016)),
                      poly((-0.889, -1.651), (0.889, -1.651)), poly((-0.254, -2.286), (0.254, -2.286))]},
        body={0: (-1.524, -2.3, 1.524, -0.3)},
        power=True, hide_pin_names=True, hide_pin_numbers=True, pin_name_offset=0,
        ref_at=(0, -5.08), value_at=(0, -3.81), ref_hidden=True)


def supply_flag() -> LibSymbol:
    """Declares that a supply net is driven from off the sheet (a bench supply, a regulator
    on another board): a power_out pin, so KiCad's ERC sees a driver on the net."""
    return LibSymbol(
        "SUPPLY_FLAG", "#FLG", "SUPPLY", "Marks a net as driven by a supply (frontcheck sample library)",
        pins=[LibPin("1", "~", "power_out", 0, 0, 90, 0)],
        graphics={0: [poly((0, 0), (0, 1.27)), poly((0, 1.27), (-1.016, 1.905), (0, 2.54), (1.016, 1.905), (0, 1.27))]},
        body={0: (-1.016, 0.3, 1.016, 2.54)},
        power=True, hide_pin_names=True, hide_pin_numbers=True, pin_name_offset=0,
        ref_at=(0, 4.318), value_at=(0, 3.302), ref_hidden=True)


ALL = {s.name: s for s in [resistor(), capacitor(), opamp_dual(), opamp_single(), inamp(),
                           connector(2), connector(3), connector(4), connector(5),
                           power_rail("+5V"), power_rail("+3V3"), power_negative("-5V"),
                           ground(), supply_flag()]}
