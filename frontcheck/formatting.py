"""How every number reaches a reader: one style for rule messages and every report format.

Engineering notation with SI prefixes and the unit on the same line (``10.0 kΩ``, ``1.00 nA``,
``-339 mV``), never exponent notation; three significant figures unless a caller asks for
more; percentages from fractions with three significant figures (``7.00 %`` beside
``9.51 %``); tolerances as ``±1.00 %``; an infinite CMRR as ``∞ dB``; a missing number as
``n/a``. Presentation only: nothing here computes an engineering result.

Why not a quantity library: the SI-prefix rendering is twenty lines here, while percentages,
decibels, gains, tolerances and ranges (most of what frontcheck prints) are not SI quantities,
so a dependency would still leave this module in place and add process-wide display settings
that a host program could change under us.
"""

from __future__ import annotations

import math

MISSING = "n/a"
NBSP = "\u00a0"     # the terminal glues a value to its unit with it (glue_units)
INFINITY = "∞"

_PREFIX = [(1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"),
           (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]

PERCENT_FS = "% FS"
PERCENT_FS_MEANING = "percent of the full-scale output"


def finite(x) -> float | None:
    """The value as a float when it is a finite number, else None."""
    if type(x) is float:              # the usual case, without the conversion
        return x if math.isfinite(x) else None
    if x is None or isinstance(x, bool):
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _fixed(x: float, digits: int) -> str:
    """``x`` with ``digits`` significant figures in fixed-point notation (no exponent)."""
    if x == 0:
        return "0"
    dec = max(0, digits - 1 - int(math.floor(math.log10(abs(x)))))
    text = f"{x:.{dec}f}"
    # rounding may add a digit (999.5 -> 1000): keep the figure count
    if len(text.replace("-", "").replace(".", "").lstrip("0")) > digits and dec > 0:
        text = f"{x:.{dec - 1}f}"
    return text


def _sign(text: str, value: float, signed: bool) -> str:
    return f"+{text}" if signed and value > 0 else text


def _special(value, unit: str) -> str | None:
    if value is None:
        return MISSING
    v = float(value)
    if math.isnan(v):
        return MISSING
    if math.isinf(v):
        return f"{'' if v > 0 else '-'}{INFINITY}{' ' if unit else ''}{unit}"
    return None


def eng(value: float | None, unit: str = "", digits: int = 3, signed: bool = False,
        trim: bool = False) -> str:
    """Engineering notation with ``digits`` significant figures: eng(9090, 'Ω') -> '9.09 kΩ',
    eng(2.5e-5, 'V') -> '25.0 µV', eng(-0.339, 'V', signed=True) -> '-339 mV'. ``trim``
    drops trailing zeros (for values the user declared: 'Vcm = 48 V', not '48.0 V')."""
    special = _special(value, unit)
    if special is not None:
        return special
    v = float(value)
    if v == 0:
        return f"0 {unit}" if unit else "0"
    i = next((k for k, (s, _) in enumerate(_PREFIX) if abs(v) >= s * 0.9995), len(_PREFIX) - 1)
    text = _fixed(v / _PREFIX[i][0], digits)
    if abs(float(text)) >= 1000 and i > 0:      # 999.96 shown as 1.00 k, not 1000
        i -= 1
        text = _fixed(v / _PREFIX[i][0], digits)
    prefix = _PREFIX[i][1]
    if trim and "." in text:
        text = text.rstrip("0").rstrip(".")
    text = _sign(text, v, signed)
    return f"{text} {prefix}{unit}" if (prefix or unit) else text


def ohms(v: float | None, digits: int = 3) -> str:
    return eng(v, "Ω", digits)


def volts(v: float | None, signed: bool = False, digits: int = 3) -> str:
    return eng(v, "V", digits, signed)


def amps(v: float | None) -> str:
    return eng(v, "A")


def hertz(v: float | None) -> str:
    return eng(v, "Hz")


def farads(v: float | None) -> str:
    return eng(v, "F")


def number(x: float | None, digits: int = 5) -> str:
    """A dimensionless figure (a gain, a ratio) with up to ``digits`` significant figures,
    trailing zeros dropped: 205.647 -> '205.65', 201.0 -> '201', 300000 -> '300,000'."""
    special = _special(x, "")
    if special is not None:
        return special
    v = float(x)
    if abs(v) >= 1e4:
        return f"{v:,.0f}"
    if v != 0 and abs(v) < 1e-4:
        return eng(v, "", 3)
    text = _fixed(v, digits)
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return text


gain = number


def percent(fraction: float | None, digits: int = 3, signed: bool = False,
            trim: bool = False) -> str:
    """A fraction as a percentage with ``digits`` significant figures: 0.0951 -> '9.51 %',
    0.07 -> '7.00 %' ('7 %' with ``trim``, for a declared or assumed value). Below 0.001 %
    in parts per million, below 0.001 ppm as such."""
    special = _special(fraction, "%")
    if special is not None:
        return special
    f = float(fraction)
    if f == 0:
        return "0 %"
    for scale, unit, least in ((100.0, "%", 1e-5), (1e6, "ppm", 1e-9)):
        if abs(f) >= least:
            text = _fixed(scale * f, digits)
            if trim and "." in text:
                text = text.rstrip("0").rstrip(".")
            return f"{_sign(text, f, signed)} {unit}"
    return "under 0.001 ppm"


def percent_points(value: float | None, digits: int = 3) -> str:
    """A number already in percent (an error-budget term): 9.51 -> '9.51 %'."""
    v = finite(value)
    return percent(None if v is None else v / 100.0, digits) if value is None or v is not None \
        else _special(value, "%")


def tolerance(fraction: float | None, digits: int = 3) -> str:
    """A symmetric band: 0.01 -> '±1.00 %'."""
    text = percent(fraction, digits)
    return text if text == MISSING else f"±{text.lstrip('-')}"


def db(x: float | None, decimals: int = 1, signed: bool = False) -> str:
    """Decibels to ``decimals`` places: '72.7 dB'; an unbounded CMRR is '∞ dB'."""
    special = _special(x, "dB")
    if special is not None:
        return special
    v = float(x)
    return f"{_sign(f'{v:.{decimals}f}', v, signed)} dB"


def span(lo: float | None, hi: float | None, fmt=number) -> str:
    """A range between two values: '204.83 to 206.47'."""
    return f"{fmt(lo)} to {fmt(hi)}"


_UNIT_GAP = None


def glue_units(text: str, joiner: str = NBSP) -> str:
    """The text with each value joined to its unit by ``joiner`` (a non-breaking space), so
    that a terminal wrapping the line never puts '10.0' and 'kΩ' on two lines."""
    global _UNIT_GAP
    if _UNIT_GAP is None:
        import re
        _UNIT_GAP = re.compile(r"(?<=\d) (?=(?:[TGMkmµnpf]?(?:Ω|V|A|Hz|F|dB|%|ppm|V/V)|x)\b|%)")
    return _UNIT_GAP.sub(joiner, text)
