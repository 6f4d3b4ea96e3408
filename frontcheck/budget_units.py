"""Readers for the units of the error-budget numbers: frequencies, noise densities, drifts.

=====================  ==============================  ===================================
Quantity               Accepted text                   SI value
=====================  ==============================  ===================================
frequency (``Hz``)     ``50 Hz``, ``1 kHz``, ``10MHz``  hertz
voltage density        ``8 nV/rtHz``, ``8 nV/√Hz``,     V/sqrt(Hz)
(``V/rtHz``)           ``8 nV/sqrt(Hz)``
current density        ``0.2 pA/rtHz``                 A/sqrt(Hz)
(``A/rtHz``)
voltage drift          ``1 uV/K``, ``0.5 µV/°C``,       V/K
(``V/K``)              ``0.5 uV/degC``
=====================  ==============================  ===================================

The unit is always required: a bare ``8`` could be nV or µV per root hertz, and a guessed unit
would move the noise budget by a thousand.
"""

from __future__ import annotations

import re

from frontcheck.values import parse_value

NUM = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
HZ = re.compile(rf"^\s*({NUM})\s*([kKmM]|MEG|meg)?\s*(Hz)?\s*$")
HZ_SCALE = {None: 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "MEG": 1e6, "meg": 1e6, "m": None}

_RT_HZ = r"(?:rt\s*Hz|√\s*Hz|sqrt\s*\(\s*Hz\s*\)|sqrtHz|Hz\^?0?\.5|Hz\^\(1/2\))"
_PER_K = r"(?:K|°\s*C|degC|deg\s*C|C)"

EXAMPLES = {"Hz": "'1 MHz'", "V/rtHz": "'8 nV/rtHz'", "A/rtHz": "'0.2 pA/rtHz'", "V/K": "'1 uV/K'"}


def hertz(text: str, need_unit: bool) -> float:
    m = HZ.match(text)
    if not m or (need_unit and not m[3]):
        raise ValueError(f"cannot read frequency '{text.strip()}': write it with its unit, e.g. '50 Hz' or '1 kHz'")
    scale = HZ_SCALE[m[2]]
    if scale is None:
        raise ValueError(f"'{text.strip()}': 'm' would be millihertz; write '0.001 Hz' or 'MHz'")
    return float(m[1]) * scale


def parse_frequency(text: str) -> float:
    """``'50 Hz'`` -> 50.0, ``'1 kHz'`` -> 1000.0; the unit is required, positive."""
    f = hertz(text, True)
    if not f > 0:
        raise ValueError(f"frequency '{text}' must be above 0 Hz")
    return f


def _per(text: str, base: str, denominator: str, example: str) -> float:
    m = re.fullmatch(rf"\s*(.+?{base})\s*/\s*{denominator}\s*", text)
    if not m:
        raise ValueError(f"cannot read '{text}': write it with its unit, e.g. {example}")
    v = parse_value(m[1].replace("µ", "u").replace("μ", "u"), unit=base)
    if v < 0:
        raise ValueError(f"'{text}' must not be negative")
    return v


def parse_quantity(quantity: str, text: str) -> float:
    """Text of one budget number in ``quantity`` ('Hz', 'V/rtHz', 'A/rtHz', 'V/K') -> SI value.

    Raises
    ------
    ValueError
        No unit, the wrong unit, or a negative value; the message gives an example.
    """
    if quantity == "Hz":
        return parse_frequency(text)
    if quantity in ("V/rtHz", "A/rtHz"):
        return _per(text, quantity[0], _RT_HZ, EXAMPLES[quantity])
    if quantity == "V/K":
        return _per(text, "V", _PER_K, EXAMPLES[quantity])
    raise KeyError(quantity)
