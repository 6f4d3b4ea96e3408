"""Readers for the error-budget intent of a stage: signal band, temperature range, the frequency
at which CMRR is judged, and the error budget itself.

=================  =====================  =================================================
Symbol field       frontcheck.toml key    Accepted text (TOML may also give plain numbers)
=================  =====================  =================================================
``Band``           ``band``               ``0.1..10 Hz``, ``DC..1 kHz``, ``10 Hz .. 2 kHz``
                                          (TOML: ``[0.1, 10]`` hertz)
``Temp Range``     ``temp_range``         ``-20..60 °C``, ``-40 degC .. 85 degC``
                                          (TOML: ``[-20, 60]`` degrees Celsius)
``CMRR At``        ``cmrr_at``            ``50 Hz``, ``60 Hz`` (TOML: ``50``, hertz)
``Error Budget``   ``error_budget``       ``0.1 % FS`` (of full scale, set by ``Input Diff``)
                                          or ``50 uV RTI`` (referred to the input)
=================  =====================  =================================================

Each reader returns the Intent attributes it sets and raises ValueError with a message that
says what was expected; :mod:`frontcheck.intent` adds the file, line and field.
"""

from __future__ import annotations

import math
import re
from typing import Any

from frontcheck.budget_units import HZ, HZ_SCALE, NUM, hertz, parse_frequency
from frontcheck.values import parse_value

__all__ = ["BUDGET_FIELDS", "parse_band", "parse_error_budget", "parse_frequency", "parse_temp_range",
           "read_budget_entry"]

# canonical key -> (symbol field name, example of a good value)
BUDGET_FIELDS: dict[str, tuple[str, str]] = {
    "band": ("Band", "'0.1..10 Hz' or 'DC..1 kHz'"),
    "temp_range": ("Temp Range", "'-20..60 °C'"),
    "cmrr_at": ("CMRR At", "'50 Hz'"),
    "error_budget": ("Error Budget", "'0.1 % FS' or '50 uV RTI'"),
}

_NUM = NUM
_HZ = HZ
_HZ_SCALE = HZ_SCALE
_DEG = r"(?:°\s*C|degC|deg\s*C|C)"


def parse_band(text: str) -> tuple[float, float]:
    """``'0.1..10 Hz'`` -> (0.1, 10.0); ``'DC..1 kHz'`` -> (0.0, 1000.0). The unit may be written
    once, at the upper end; the lower end must be below the upper."""
    left, sep, right = text.partition("..")
    if not sep or ".." in right:
        raise ValueError(f"cannot read band '{text}': write lower..upper with a unit, e.g. '0.1..10 Hz'")
    hi = hertz(right, True)
    unit = _HZ.match(right)
    left = left.strip()
    if left.upper() == "DC":
        lo = 0.0
    else:
        lo = hertz(left, False)
        if not _HZ.match(left)[3] and unit[2]:
            lo *= _HZ_SCALE[unit[2]]           # '1..10 kHz': the unit applies to both ends
    if not 0 <= lo < hi:
        raise ValueError(f"band '{text}' must run upwards from 0 Hz or more: write the lower end first")
    return lo, hi


def parse_temp_range(text: str) -> tuple[float, float]:
    """``'-20..60 °C'`` (also ``degC``) -> (-20.0, 60.0); the unit is required at least at
    the upper end."""
    m = re.fullmatch(rf"\s*({_NUM})\s*(?:{_DEG})?\s*\.\.\s*({_NUM})\s*{_DEG}\s*", text)
    if not m:
        raise ValueError(f"cannot read temperature range '{text}': write e.g. '-20..60 °C' or '-20..60 degC'")
    lo, hi = float(m[1]), float(m[2])
    if lo >= hi:
        raise ValueError(f"temperature range '{text}' must run upwards: write the lower end first")
    if lo < -273.15:
        raise ValueError(f"temperature range '{text}' goes below absolute zero")
    return lo, hi


def parse_error_budget(text: str) -> dict[str, float]:
    """``'0.1 % FS'`` -> {'error_budget_fs': 0.001}; ``'50 uV RTI'`` -> {'error_budget_rti_v': 5e-05}."""
    s = text.strip()
    m = re.fullmatch(rf"({_NUM})\s*%\s*(?:of\s+)?FS", s, re.IGNORECASE)
    if m:
        v = float(m[1]) / 100.0
        if not 0 < v < 1:
            raise ValueError(f"error budget '{text}' must be above 0 % and below 100 % of full scale")
        return {"error_budget_fs": v}
    m = re.fullmatch(r"(.+?)\s*RTI", s, re.IGNORECASE)
    if m and re.search(r"V\s*$", m[1]):
        v = parse_value(m[1], unit="V")
        if not v > 0:
            raise ValueError(f"error budget '{text}' must be above 0 V")
        return {"error_budget_rti_v": v}
    raise ValueError(f"cannot read error budget '{text}': write '0.1 % FS' (of full scale) or "
                     "'50 uV RTI' (referred to the input)")


def _pair(value: Any, what: str) -> tuple[float, float]:
    if len(value) != 2 or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value):
        raise ValueError(f"a {what} in TOML is two numbers: [low, high]")
    lo, hi = float(value[0]), float(value[1])
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise ValueError(f"the {what} must run upwards: write the lower end first")
    return lo, hi


def read_budget_entry(key: str, value: Any, from_toml: bool) -> dict[str, Any]:
    """One Band / Temp Range / CMRR At / Error Budget entry -> Intent attributes."""
    number = from_toml and isinstance(value, (int, float)) and not isinstance(value, bool)
    if key == "band":
        if from_toml and isinstance(value, list):
            lo, hi = _pair(value, "band (hertz)")
            if lo < 0:
                raise ValueError("the band starts at 0 Hz (DC) or above")
            return {"band_hz": (lo, hi)}
        if not isinstance(value, str):
            raise ValueError("expected text such as '0.1..10 Hz'")
        return {"band_hz": parse_band(value)}
    if key == "temp_range":
        if from_toml and isinstance(value, list):
            return {"temp_range_c": _pair(value, "temperature range (degC)")}
        if not isinstance(value, str):
            raise ValueError("expected text such as '-20..60 °C'")
        return {"temp_range_c": parse_temp_range(value)}
    if key == "cmrr_at":
        if number:
            if not value > 0:
                raise ValueError("the frequency must be above 0 Hz")
            return {"cmrr_at_hz": float(value)}
        if not isinstance(value, str):
            raise ValueError("expected text such as '50 Hz'")
        return {"cmrr_at_hz": parse_frequency(value)}
    if key == "error_budget":
        if not isinstance(value, str):
            raise ValueError("expected text such as '0.1 % FS' or '50 uV RTI'")
        return parse_error_budget(value)
    raise KeyError(key)
