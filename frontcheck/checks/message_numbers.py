"""Short names for frontcheck.formatting, the one number style, as rule messages use it."""

from __future__ import annotations

from .. import formatting

def eng(value: float, unit: str, digits: int = 3) -> str:
    """Engineering notation with ``digits`` significant figures: eng(9090, 'Ω') -> '9.09 kΩ'."""
    return formatting.eng(value, unit, digits)


def ohms(v: float) -> str:
    return formatting.ohms(v)


def pct(x: float, digits: int = 3) -> str:
    """A fraction as a percentage with ``digits`` significant figures: 0.0012 -> '0.120 %'."""
    return formatting.percent(x, digits)


def pm(x: float) -> str:
    """A symmetric band: 0.01 -> '±1.00 %'."""
    return formatting.tolerance(x)


def db(x: float | None) -> str:
    return formatting.db(x)


def volts(v: float) -> str:
    return formatting.volts(v, signed=True)


def num(x: float | None, digits: int = 5) -> str:
    """A gain or a ratio: 205.647 -> '205.65'."""
    return formatting.number(x, digits)


def corner(c) -> str:
    vcm, vd = c
    # declared values: as many figures as given, no trailing zeros
    return (f"Vcm = {formatting.eng(vcm, 'V', 5, trim=True)}, "
            f"Vd = {formatting.eng(vd, 'V', 5, signed=True, trim=True)}")
