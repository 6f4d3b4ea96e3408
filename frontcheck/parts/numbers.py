"""Reading one number of part data: text with units from a symbol field or a TOML string, or a
TOML number; each key's quantity decides how (decibels, V/V, ohms, tolerance, ...)."""

from __future__ import annotations

import math
import re
from typing import Any

from frontcheck.parts.models import QUANTITY
from frontcheck.budget_units import EXAMPLES as BUDGET_EXAMPLES
from frontcheck.budget_units import parse_quantity
from frontcheck.values import parse_tcr, parse_tolerance, parse_value

__all__ = ["check_range", "parse_text", "toml_number"]

# --------------------------------------------------------------------------------------------
# Reading numbers

def parse_text(key: str, text: str) -> float:
    """Text of one number (field or TOML string) -> SI value. ValueError on bad text."""
    q = QUANTITY[key]
    s = text.strip()
    if q == "db":
        m = re.fullmatch(r"([+-]?\d+(?:\.\d*)?(?:[eE][+-]?\d+)?)\s*dB", s, re.IGNORECASE)
        if not m:
            raise ValueError(f"'{text}': write decibels with the unit, e.g. '100 dB'")
        return float(m[1])
    if q == "gain_db_or_vv":
        m = re.fullmatch(r"([+-]?\d+(?:\.\d*)?(?:[eE][+-]?\d+)?)\s*dB", s, re.IGNORECASE)
        if m:
            return 10 ** (float(m[1]) / 20)
        m = re.fullmatch(r"(.+?)\s*V/V", s, re.IGNORECASE)
        if not m:
            raise ValueError(f"'{text}': give the unit, '120 dB' or '1e6 V/V' (a bare number "
                             "could be either)")
        return parse_value(m[1])
    if q == "ratio":
        s2 = re.sub(r"\s*(?:V/V|x)$", "", s, flags=re.IGNORECASE)
        return parse_value(s2)
    if q == "tol":
        return parse_tolerance(s)
    if q == "ppm/K":
        return parse_tcr(s)
    if q in BUDGET_EXAMPLES:
        return parse_quantity(q, s)
    return parse_value(s, unit=q)


def check_range(key: str, v: float) -> None:
    q = QUANTITY[key]
    if not math.isfinite(v):
        raise ValueError("not a finite number")
    if q == "tol" and not 0 <= v < 1:
        raise ValueError("a tolerance is a fraction from 0 to below 1 (0.001 = 0.1 %)")
    if q in ("ohm", "ratio", "gain_db_or_vv", "db") and v <= 0:
        raise ValueError("must be positive")
    if q in ("A", "ppm/K", "V/K", "V/rtHz", "A/rtHz") and v < 0:
        raise ValueError("must not be negative")
    if q == "Hz" and v <= 0:
        raise ValueError("must be positive")


def toml_number(key: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise ValueError("expected a number or text with a unit")
    if isinstance(value, str):
        v = parse_text(key, value)
    else:
        v = float(value)
    check_range(key, v)
    return v

