"""Library symbols: the sheet's own copies in ``(lib_symbols ...)``, with their pins by unit
and body style (docs/kicad-connectivity.md sec. 1)."""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from frontcheck.kicad.sexpr_items import flag, kids, pin_hidden, property_of, xy_angle

__all__ = ["LibPin", "LibSymbol", "read_lib_symbol", "resolve_extends", "BODY_STYLES_DECLARED"]

BODY_STYLES_DECLARED = 20250827    # style-2 pins need (body_styles demorgan)


@dataclass
class LibPin:
    number: str
    name: str
    type: str            # electrical type: input, output, passive, power_in, no_connect, ...
    hidden: bool
    x: int               # connection point in the library frame (IU, Y up)
    y: int
    unit: int = 0        # 0 = common to all units
    body_style: int = 0  # 0 = every body style


@dataclass
class LibSymbol:
    """One ``lib_symbols`` entry (the sheet's own copy of a library symbol)."""

    name: str
    pins: list[LibPin] = field(default_factory=list)
    power: str | None = None          # None, "global" or "local"
    properties: dict[str, str] = field(default_factory=dict)
    extends: str | None = None
    unit_count: int = 1
    demorgan: bool = False            # (body_styles demorgan) declared
    duplicate_pin_numbers_are_jumpers: bool = False
    jumper_pin_groups: list[tuple[str, ...]] = field(default_factory=list)

    def pins_for(self, unit: int, body_style: int, version: int) -> list[LibPin]:
        """Pins of a placed unit: unit in {0, unit} and body style in {0, style}
        (docs/kicad-connectivity.md sec. 1)."""
        style = body_style or 1
        if version >= BODY_STYLES_DECLARED and not self.demorgan and style != 1:
            style = -1      # only the B=0 pins exist
        return [p for p in self.pins
                if p.unit in (0, unit) and p.body_style in (0, style)]


_SUB = re.compile(r"^(.*)_(\d+)_(\d+)$")


def read_lib_symbol(node: list) -> LibSymbol:
    sym = LibSymbol(name=node[1])
    max_unit = 1
    for k in kids(node):
        h = k[0]
        if h == "power":
            sym.power = k[1] if len(k) > 1 and k[1] in ("global", "local") else "global"
        elif h == "property":
            p = property_of(k)
            if p:
                sym.properties[p[0]] = p[1]
        elif h == "extends" and len(k) > 1:
            sym.extends = k[1]
        elif h == "body_styles":
            sym.demorgan = "demorgan" in k[1:]
        elif h == "duplicate_pin_numbers_are_jumpers":
            sym.duplicate_pin_numbers_are_jumpers = flag(k)
        elif h == "jumper_pin_groups":
            sym.jumper_pin_groups = [tuple(g) for g in k[1:] if isinstance(g, list)]
        elif h == "symbol" and len(k) > 1:
            # "NAME_U_B"; the numbers count even when NAME differs (renamed symbols).
            m = _SUB.match(k[1])
            unit, style = (int(m.group(2)), int(m.group(3))) if m else (0, 0)
            max_unit = max(max_unit, unit)
            for pin in kids(k):
                if pin[0] == "pin":
                    sym.pins.append(lib_pin(pin, unit, style))
        elif h == "pin":   # pins directly in the symbol (seen in hand-written files)
            sym.pins.append(lib_pin(k, 0, 0))
    sym.unit_count = max_unit
    return sym


def lib_pin(pin: list, unit: int, style: int) -> LibPin:
    ptype = pin[1] if len(pin) > 1 and isinstance(pin[1], str) else "passive"
    x = y = 0
    name = number = ""
    for k in kids(pin):
        if k[0] == "at":
            x, y, _ = xy_angle(k)
        elif k[0] == "name" and len(k) > 1:
            name = k[1]
        elif k[0] == "number" and len(k) > 1:
            number = k[1]
    return LibPin(number=number, name=name, type=ptype, hidden=pin_hidden(pin), x=x, y=y,
                  unit=unit, body_style=style)


def resolve_extends(lib_symbols: dict[str, LibSymbol]) -> None:
    """Derived symbols (``extends``) take the parent's pins and power flag when they have none."""
    for sym in lib_symbols.values():
        seen = set()
        cur = sym
        while cur.extends and not sym.pins and cur.name not in seen:
            seen.add(cur.name)
            lib = sym.name.split(":", 1)[0] + ":" if ":" in sym.name else ""
            parent = lib_symbols.get(lib + cur.extends) or lib_symbols.get(cur.extends)
            if parent is None:
                break
            if parent.pins:
                sym.pins = list(parent.pins)
                sym.unit_count = parent.unit_count
                sym.demorgan = sym.demorgan or parent.demorgan
            if sym.power is None:
                sym.power = parent.power
            cur = parent
