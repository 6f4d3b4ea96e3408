"""Engineering values: parsing what designers write in KiCad fields, and tolerance and TCR
notation (the IEC 60063 preferred-number series are in :mod:`frontcheck.preferred_values`).

What is accepted (``parse_value``):

* plain numbers with an optional SI prefix and unit: ``10k``, ``1.5meg``, ``10 kOhm``,
  ``10kΩ``, ``100n``, ``100nF``, ``1u``, ``1µ``, ``1e3``, ``2.5 V``, ``-10V``, ``10m`` (milli:
  ``m`` is always milli and ``M`` always mega; ``meg`` is mega in any case, as in SPICE);
* the IEC 60062 "RKM" style where the prefix letter stands in the decimal point: ``4k99``,
  ``4R7``, ``R47``, ``0R``, ``2M2``, ``4n7``, ``2u2``.

Anything else raises ``ValueError`` with a message that names the text and shows good forms.
A percentage is a tolerance, never a value: ``parse_value('0.1%')`` is rejected.

Tolerance can come from a ``Tolerance``/``Tol`` field (``1%``, ``±0.1 %``, ``+/-0.5%`` or an
IEC 60062 letter code) or ride on the value string (``10k 0.1%``, ``10k/1%``, ``10k 1 %``,
``10k+/-0.1%``). TCR comes from a ``TCR``/``TC`` field (``25ppm``, ``25 ppm/K``).
"""

from __future__ import annotations

import functools
import math
import re

from frontcheck.circuit import Sourced
from frontcheck.errors import InputError
from frontcheck.netlist import Component

__all__ = [
    "IEC60062_TOLERANCE_CODES", "ValueFieldError", "capacitance_of", "format_percent",
    "parse_tcr", "parse_tolerance", "parse_value", "resistance_of", "split_tolerance", "tcr_of",
]

# --------------------------------------------------------------------------------------------
# Values

# SI prefixes. Case matters for m (milli) and M (mega); the upper-case K, U, N, P are accepted
# because BOM tools often upper-case everything and none of them has a second meaning.
_PREFIX = {   # power of ten
    "p": -12, "P": -12, "n": -9, "N": -9, "u": -6, "U": -6, "\u00b5": -6, "\u03bc": -6,
    "m": -3, "k": 3, "K": 3, "M": 6, "G": 9, "T": 12,
}
_PREFIX_RE = r"(?:[mM][eE][gG]|[pPnNuUµμmkKMGT])"
# Unit words. R as a unit (``200R``) means ohms; it doubles as the decimal mark in ``4R7``.
_UNITS = {
    "ohm": "ohm", "ohms": "ohm", "\u03a9": "ohm", "\u2126": "ohm", "r": "ohm",
    "f": "F", "h": "H", "v": "V", "a": "A",
}
_UNIT_RE = "(?:[oO][hH][mM][sS]?|\u03a9|\u2126|[RrFfHhVvAa])"
_NUM_RE = r"(?:\d+(?:[.,]\d*)?|[.,]\d+)"

_PLAIN = re.compile(
    rf"^(?P<sign>[+-])?\s*(?P<num>{_NUM_RE})(?:[eE](?P<exp>[+-]?\d+))?"
    rf"\s*(?P<prefix>{_PREFIX_RE})?\s*(?P<unit>{_UNIT_RE})?$"
)
# RKM: digits, a prefix letter (or R for units) in place of the decimal point, digits.
_RKM = re.compile(
    rf"^(?P<sign>[+-])?(?P<int>\d*)(?P<mark>{_PREFIX_RE}|[Rr])(?P<frac>\d+)\s*(?P<unit>{_UNIT_RE})?$"
)

_GOOD_VALUES = "'10k', '4k99', '4R7', '0R', '2M2', '1.5meg', '10 kOhm', '100n', '4n7', '1e3'"


def _prefix_exponent(prefix: str | None) -> int:
    if not prefix:
        return 0
    if prefix.lower() == "meg":
        return 6
    return _PREFIX[prefix]


def _unit_of(unit: str | None) -> str | None:
    if not unit:
        return None
    return _UNITS.get(unit if unit in ("\u03a9", "\u2126") else unit.lower())


def parse_value(text: str, unit: str | None = None) -> float:
    """Read one engineering value as written in a KiCad field.

    Parameters
    ----------
    text : str
        For example ``'10k'``, ``'4k99'``, ``'4R7'``, ``'1.5meg'``, ``'10 kOhm'``, ``'100nF'``.
    unit : {None, 'ohm', 'F', 'H', 'V', 'A'}
        The quantity expected. A unit written in ``text`` must agree with it (``'100nF'`` is
        not a resistance); ``None`` accepts any unit or none.

    Returns
    -------
    float
        The value in SI base units.

    Raises
    ------
    ValueError
        Empty text, a percentage (a tolerance, not a value), trailing words, or a unit that
        contradicts ``unit``. The message quotes the text and shows accepted forms.

    References
    ----------
    IEC 60062:2016, *Marking codes for resistors and capacitors* (letter-as-decimal-point
    "RKM" code) [from memory]; SI prefixes per the SI Brochure, 9th ed. (BIPM, 2019).
    """
    if not isinstance(text, str):
        raise ValueError(f"expected text, got {type(text).__name__}")
    s = text.strip()
    if not s:
        raise ValueError(f"empty value: write one such as {_GOOD_VALUES}")
    if "%" in s:
        raise ValueError(f"'{text}' is a percentage (a tolerance), not a value; "
                         "put a tolerance in a Tolerance field or after the value, e.g. '10k 0.1%'")
    m = _RKM.match(s)
    if m:
        mark = m["mark"]
        # Built as decimal text, so '4n7' is the float nearest 4.7e-9, not 4.7 * 1e-9.
        exponent = 0 if mark in ("R", "r") else _prefix_exponent(mark)
        value = float(f"{m['int'] or '0'}.{m['frac']}e{exponent}")
        got_unit = "ohm" if mark in ("R", "r") else _unit_of(m["unit"])
        if mark in ("R", "r") and m["unit"]:
            raise ValueError(f"cannot read '{text}': a unit after the R code")
    else:
        m = _PLAIN.match(s)
        if not m:
            raise ValueError(f"cannot read '{text}' as a value: expected a number with an "
                             f"optional SI prefix and unit, e.g. {_GOOD_VALUES}")
        if "," in m["num"] and re.fullmatch(r"\d+,\d{3}", m["num"]):
            # '1,000' is a thousands separator to some and 1.000 to others
            raise ValueError(f"'{text}' is ambiguous (decimal comma or thousands separator?): "
                             "write '1k' or '1.000'")
        num = m["num"].replace(",", ".")
        exponent = int(m["exp"] or 0) + _prefix_exponent(m["prefix"])
        value = float(f"{num}e{exponent}")
        raw_unit = m["unit"]
        got_unit = _unit_of(raw_unit)
        if raw_unit in ("R", "r") and m["prefix"]:
            raise ValueError(f"cannot read '{text}': R is a decimal mark or the ohm unit, not "
                             "both; write '4k7' or '4.7k'")
        if raw_unit == "f" and not m["prefix"]:
            # '1f' could be femto or farad: too ambiguous to guess.
            raise ValueError(f"'{text}' is ambiguous (femto or farad?): write '1F' for farads "
                             "or use a prefix such as '0.001p'")
    if unit is not None and got_unit is not None and got_unit != unit:
        raise ValueError(f"'{text}' is in {got_unit}, expected {unit}")
    if m["sign"] == "-":
        value = -value
    if not math.isfinite(value):
        raise ValueError(f"'{text}' is not a finite number")
    return value


# --------------------------------------------------------------------------------------------
# Tolerance and TCR

# IEC 60062 tolerance letter codes, symmetric ones only. [from memory: docs/engineering.md marks
# these "memory: confirm before using as a check value"; not re-read from the standard.]
IEC60062_TOLERANCE_CODES: dict[str, float] = {
    "B": 0.001, "C": 0.0025, "D": 0.005, "F": 0.01, "G": 0.02, "J": 0.05, "K": 0.10,
}

_PM = r"(?:\u00b1|\+/-|\+-)"
_TOL = re.compile(rf"^{_PM}?\s*(?P<num>{_NUM_RE})\s*%$")
# value, then a separator (±, +/-, '/', or white space), then a percentage at the very end
_VALUE_TOL = re.compile(
    rf"^(?P<value>.+?)(?:\s*{_PM}\s*|\s*/\s*|\s+)(?P<num>{_NUM_RE})\s*%\s*$"
)
_TCR = re.compile(
    rf"^{_PM}?\s*(?P<num>{_NUM_RE})\s*ppm\s*(?:/\s*(?:K|\u00b0C|\u2103|C|degC|deg C))?$",
    re.IGNORECASE,
)
_GOOD_TOL = "'1%', '0.1 %', '\u00b10.5%', '+/-0.1%' or an IEC 60062 letter B C D F G J K"


def format_percent(fraction: float) -> str:
    """0.001 -> '0.1 %' (for messages and details)."""
    return f"{fraction * 100:g} %"


def parse_tolerance(text: str) -> float:
    """Read a symmetric tolerance and return it as a fraction (``'0.1%'`` -> 0.001).

    Parameters
    ----------
    text : str
        ``'1%'``, ``'0.1 %'``, ``'±0.5%'``, ``'+/-0.1%'``, or one IEC 60062 letter code
        (B 0.1 %, C 0.25 %, D 0.5 %, F 1 %, G 2 %, J 5 %, K 10 %).

    Raises
    ------
    ValueError
        A bare number (percent or fraction? ambiguous), an asymmetric tolerance, a negative
        or 100 %-or-more tolerance, or anything else.

    References
    ----------
    IEC 60062:2016, tolerance letter codes [from memory, see IEC60062_TOLERANCE_CODES].
    """
    s = text.strip()
    if s in IEC60062_TOLERANCE_CODES:
        return IEC60062_TOLERANCE_CODES[s]
    m = _TOL.match(s)
    if not m:
        if re.fullmatch(_NUM_RE, s):
            raise ValueError(f"tolerance '{text}' has no % sign: write '{s}%' if that is meant")
        raise ValueError(f"cannot read tolerance '{text}': expected {_GOOD_TOL}")
    t = float(m["num"].replace(",", ".")) / 100.0
    if not 0.0 <= t < 1.0:
        raise ValueError(f"tolerance '{text}' is outside 0 .. 100 %")
    return t


def split_tolerance(text: str) -> tuple[str, float | None]:
    """Split a value string into its value part and a trailing tolerance.

    ``'10k 0.1%'``, ``'10k/1%'``, ``'10k 1 %'``, ``'10k+/-0.1%'``, ``'10k ±0.1%'`` give
    ``('10k', 0.001 or 0.01)``; a string without a trailing percentage comes back whole with
    ``None``.
    """
    s = text.strip()
    m = _VALUE_TOL.match(s)
    if not m:
        return s, None
    t = float(m["num"].replace(",", ".")) / 100.0
    if not 0.0 <= t < 1.0:
        raise ValueError(f"tolerance in '{text}' is outside 0 .. 100 %")
    return m["value"].strip(), t


def parse_tcr(text: str) -> float:
    """Read a temperature coefficient of resistance and return it per kelvin
    (``'25ppm'`` -> 25e-6).

    Accepted: ``'25ppm'``, ``'25 ppm/K'``, ``'±25 ppm/°C'``. A bare number is refused (the
    unit is the whole meaning of a TCR).
    """
    m = _TCR.match(text.strip())
    if not m:
        raise ValueError(f"cannot read TCR '{text}': expected '25ppm', '25 ppm/K' or '±25 ppm/°C'")
    return float(m["num"].replace(",", ".")) * 1e-6


# --------------------------------------------------------------------------------------------
# Values of placed components

class ValueFieldError(InputError):
    """A component field that cannot be read as the number the analysis needs.

    An InputError (exit 2 when it reaches the command line); recognition may catch it to
    report one stage as not analysable and go on with the others. ``ref`` and ``field_name``
    say which component and field.
    """

    def __init__(self, component: Component, field_name: str, problem: str, example: str):
        loc = component.location
        self.ref, self.field_name = component.ref, field_name
        super().__init__(
            f"{component.ref}: {field_name} field: {problem}",
            file=loc.file if loc else None, line=loc.line if loc else None,
            hint=f"write the {field_name} field like {example}",
        )


_TOL_FIELDS = ("Tolerance", "Tol")
# Values a placed part can have (0 is a jumper or an unfitted part), far beyond real parts at
# both ends (milliohm shunts, teraohm electrometer resistors; femtofarads, supercapacitors):
# common practice.
_PLAUSIBLE = {"ohm": (1e-6, 1e15, "1 µΩ .. 1000 TΩ"), "F": (1e-15, 1e4, "1 fF .. 10 kF")}
_TCR_FIELDS = ("TCR", "TC")


def _field_key(component: Component, names: tuple[str, ...]) -> tuple[str, str] | None:
    """(field name as written, text) of the first non-empty field among names."""
    fields = component.fields
    lowered = list(map(str.lower, fields))
    wanted, any_of = _lower_names(names)
    if any_of.isdisjoint(lowered):
        return None                 # most parts: none of these fields
    lower = dict(zip(lowered, fields))
    for n in wanted:
        key = lower.get(n)
        if key is not None and fields[key].strip():
            return key, fields[key]
    return None


@functools.lru_cache(maxsize=256)
def _lower_names(names: tuple[str, ...]) -> tuple[tuple[str, ...], frozenset[str]]:
    lowered = tuple(n.lower() for n in names)
    return lowered, frozenset(lowered)


@functools.lru_cache(maxsize=1024)
def _read_tolerance(text: str) -> float:
    """:func:`parse_tolerance`, remembered per text (a design repeats a few tolerances)."""
    return parse_tolerance(text)


@functools.lru_cache(maxsize=4096)
def _read_value(text: str, unit: str) -> tuple[float, float | None]:
    """(value, tolerance written after it or None) of a value string; remembered, as a design
    repeats a few values over many parts."""
    value_part, tol_in_value = split_tolerance(text)
    return parse_value(value_part, unit=unit), tol_in_value


def _value_and_tolerance(component: Component, unit: str, default_tol: float,
                         default_from: str, example: str) -> tuple[Sourced, Sourced]:
    text = component.value or component.fields.get("Value", "")
    tol_field = _field_key(component, _TOL_FIELDS)
    # what the answer depends on: parts alike share it (Sourced is frozen); a refusal names
    # the part, so it is made again each time
    key = (unit, text, tol_field, default_tol, default_from)
    found = _READ.get(key)
    if found is None:
        found = _read(component, unit, default_tol, default_from, example, text, tol_field)
        if len(_READ) >= _MOST_READ:
            _READ.clear()
        _READ[key] = found
    return found


_READ: dict[tuple, tuple[Sourced, Sourced]] = {}
_MOST_READ = 4096


def _read(component: Component, unit: str, default_tol: float, default_from: str, example: str,
          text: str, tol_field: tuple[str, str] | None) -> tuple[Sourced, Sourced]:
    try:
        value, tol_in_value = _read_value(text, unit)
    except ValueError as e:
        raise ValueFieldError(component, "Value", str(e), example) from None
    if value < 0:
        raise ValueFieldError(component, "Value", f"'{text}' is negative", example)
    lo, hi, span = _PLAUSIBLE[unit]
    if value != 0 and not lo <= value <= hi:
        # far outside any part (1e-308 ohms made a ratio infinite): a typo, not a design
        raise ValueFieldError(component, "Value", f"'{text}' is outside {span}", example)
    value_s = Sourced(value, "value", f"value string '{text}'")
    if tol_field is not None:
        key, ttext = tol_field
        try:
            tol = _read_tolerance(ttext)
        except ValueError as e:
            raise ValueFieldError(component, key, str(e), "'0.1%' or 'B'") from None
        if tol_in_value is not None and not math.isclose(tol, tol_in_value, rel_tol=1e-9):
            # Two different tolerances on one part: guessing which is right could pass a bad
            # design, so the designer must settle it.
            raise ValueFieldError(
                component, key,
                f"says {format_percent(tol)} but the value string '{text}' says "
                f"{format_percent(tol_in_value)}", "the same tolerance in both places, or only one")
        return value_s, Sourced(tol, "field", f"{key} field")
    if tol_in_value is not None:
        return value_s, Sourced(tol_in_value, "value", f"value string '{text}'")
    return value_s, Sourced(default_tol, "default", default_origin(default_from))


def default_origin(default_from: str) -> str:
    """Where an assumed tolerance comes from, said once: 'profile default' for 'profile' and
    for a configuration's own wording 'default 1 % (profile)'."""
    m = re.search(r"\(([^()]*)\)\s*$", default_from or "")
    origin = (m.group(1) if m else default_from or "").strip()
    return f"{origin} default" if origin and origin != "default" else "default"


def resistance_of(component: Component, default_tol: float,
                  default_from: str = "profile") -> tuple[Sourced, Sourced]:
    """Resistance (ohms) and fractional tolerance of a placed resistor, each with its source.

    Parameters
    ----------
    component : Component
        The resistor. Its Value may carry a tolerance (``'10k 0.1%'``); a ``Tolerance``/``Tol``
        field gives it too (an IEC 60062 letter is accepted there).
    default_tol : float
        Fraction assumed when neither gives a tolerance (the profile's or project's default).
    default_from : str
        Where the default came from, for the report (``'profile'``, ``'frontcheck.toml'``).

    Returns
    -------
    (Sourced, Sourced)
        ohms with source ``'value'`` and detail ``"value string '4k99'"``; tolerance with
        source ``'field'`` (detail ``'Tolerance field'``), ``'value'`` (``"value string '10k
        0.1%'"``) or ``'default'`` (``'default 1 % (profile)'``).

    Raises
    ------
    ValueFieldError
        Unreadable Value or tolerance, a capacitance where a resistance belongs, or a Tolerance
        field that contradicts the tolerance in the value string.
    """
    return _value_and_tolerance(component, "ohm", default_tol, default_from, "'10k', '4k99' or '10k 0.1%'")


def capacitance_of(component: Component, default_tol: float,
                   default_from: str = "profile") -> tuple[Sourced, Sourced]:
    """Capacitance (farads) and fractional tolerance of a placed capacitor; as
    :func:`resistance_of`."""
    return _value_and_tolerance(component, "F", default_tol, default_from, "'100n', '4n7' or '1nF 5%'")


def tcr_of(component: Component) -> Sourced | None:
    """TCR (per kelvin) from a ``TCR``/``TC`` field, or None when the part has none."""
    f = _field_key(component, _TCR_FIELDS)
    if f is None:
        return None
    key, text = f
    try:
        return Sourced(parse_tcr(text), "field", f"{key} field")
    except ValueError as e:
        raise ValueFieldError(component, key, str(e), "'25ppm' or '25 ppm/K'") from None
