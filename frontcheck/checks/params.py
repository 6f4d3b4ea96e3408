"""How a rule declares its settings: type, default and meaning, in the rule's own module.

A rule module's ``PARAMETERS`` maps each setting to a :class:`Param` made by one of
:func:`severity`, :func:`number`, :func:`flag` or :func:`series`. Profiles (``rules/*.toml``) and
a project's ``[rules.<id>]`` tables are checked against these declarations
(:func:`frontcheck.checks.policy.validate_rules`): an unknown setting, a value of the wrong type,
a number outside its range, or nan/inf where the setting does not allow it is an error that
names the file, line and key. A setting left out by every profile takes its declared default.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..formatting import number as _figure

__all__ = ["SEVERITY_SETTINGS", "E_SERIES", "Param", "severity", "number", "flag", "series"]

# What a severity setting may say: a finding's severity (frontcheck.finding.SEVERITIES) or off.
SEVERITY_SETTINGS = ("off", "info", "warning", "error")
E_SERIES = ("E6", "E12", "E24", "E48", "E96", "E192")


@dataclass(frozen=True)
class Param:
    """One declared setting. ``default`` None: unset unless a profile sets it (for ``severity``,
    the profile always does; rules/default.toml names every rule's)."""

    kind: str                       # "severity", "number", "flag" or "series"
    meaning: str
    default: Any = None
    unit: str = ""                  # numbers: "V", "dB", "Hz", "fraction" (1e-4 = 0.01 %), ...
    minimum: float | None = None    # numbers: inclusive bounds
    maximum: float | None = None

    def type_text(self) -> str:
        """Plain words for the type, as `frontcheck explain` and error hints show it."""
        if self.kind == "severity":
            return "one of " + ", ".join(SEVERITY_SETTINGS)
        if self.kind == "flag":
            return "true or false"
        if self.kind == "series":
            return "a list of E-series names: " + ", ".join(E_SERIES)
        lo, hi = self.minimum, self.maximum
        bounds = (f"{_figure(lo)} to {_figure(hi)}" if lo is not None and hi is not None
                  else f"at least {_figure(lo)}" if lo is not None
                  else f"at most {_figure(hi)}" if hi is not None else "")
        unit = f" in {self.unit}" if self.unit and self.unit not in ("fraction", "times") else ""
        what = {"fraction": "a fraction, 0.01 meaning one percent",
                "times": "a ratio"}.get(self.unit, "a number")
        return what + unit + (f", {bounds}" if bounds else "")

    def problem(self, value: Any) -> str | None:
        """Why ``value`` is not acceptable for this setting, or None when it is."""
        if self.kind == "severity":
            return None if isinstance(value, str) and value in SEVERITY_SETTINGS else "is not a severity"
        if self.kind == "flag":
            return None if isinstance(value, bool) else "must be true or false"
        if self.kind == "series":
            ok = (isinstance(value, list) and value
                  and all(isinstance(v, str) and v.upper() in E_SERIES for v in value))
            return None if ok else "must be a list of E-series names"
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            return "has the wrong type: a number is wanted"
        if not math.isfinite(value):
            return "must be a finite number (nan and inf are not allowed)"
        if self.minimum is not None and value < self.minimum:
            return f"must not be below {_figure(self.minimum)}"
        if self.maximum is not None and value > self.maximum:
            return f"must not be above {_figure(self.maximum)}"
        return None


def severity(meaning: str, default: str | None = None) -> Param:
    return Param("severity", meaning, default)


def number(default: float | None, meaning: str, unit: str = "", minimum: float | None = 0.0,
           maximum: float | None = None) -> Param:
    return Param("number", meaning, default, unit, minimum, maximum)


def flag(default: bool, meaning: str) -> Param:
    return Param("flag", meaning, default)


def series(default: list[str], meaning: str) -> Param:
    return Param("series", meaning, list(default))
