"""IEC 60063 preferred numbers: the E3 .. E192 series, the series values in a range, the
neighbours and nearest value of a number, and the best single value or two-resistor series or
parallel combination for a target (what a rule proposes as a fix).
"""

from __future__ import annotations

import math
from bisect import bisect_left
from dataclasses import dataclass

__all__ = ["E_SERIES", "Combination", "best_pair", "best_single", "nearest", "neighbours",
           "series_values"]

# The tables are data, as published, not the formula round(10**(i/n)): the standard keeps
# older values that the formula misses (E24: 27, 30, 33, 36, 39, 43, 47, 82; E192: 920 where
# the formula gives 919). E3..E24 have two significant digits, E48..E192 three.
# Source: IEC 60063:2015, *Preferred number series for resistors and capacitors*, tables 1-3;
# tests compare every entry with the independent `eseries` package.
_E3: tuple[int, ...] = (10, 22, 47)
_E6: tuple[int, ...] = (10, 15, 22, 33, 47, 68)
_E12: tuple[int, ...] = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)
_E24: tuple[int, ...] = (
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75,
    82, 91
)
_E192: tuple[int, ...] = (
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120, 121, 123,
    124, 126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152,
    154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176, 178, 180, 182, 184, 187, 189,
    191, 193, 196, 198, 200, 203, 205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234,
    237, 240, 243, 246, 249, 252, 255, 258, 261, 264, 267, 271, 274, 277, 280, 284, 287, 291,
    294, 298, 301, 305, 309, 312, 316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361,
    365, 370, 374, 379, 383, 388, 392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448,
    453, 459, 464, 470, 475, 481, 487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
    562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673, 681, 690,
    698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816, 825, 835, 845, 856,
    866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988
)
_E96: tuple[int, ...] = (
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150,
    154, 158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232,
    237, 243, 249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357,
    365, 374, 383, 392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549,
    562, 576, 590, 604, 619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845,
    866, 887, 909, 931, 953, 976
)
_E48: tuple[int, ...] = (
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205, 215, 226,
    237, 249, 261, 274, 287, 301, 316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536,
    562, 590, 619, 649, 681, 715, 750, 787, 825, 866, 909, 953
)


E_SERIES: dict[str, tuple[int, ...]] = {
    "E3": _E3, "E6": _E6, "E12": _E12, "E24": _E24, "E48": _E48, "E96": _E96, "E192": _E192,
}


def _series_key(series: str | int) -> str:
    key = f"E{series}" if isinstance(series, int) else str(series).strip().upper()
    if key not in E_SERIES:
        raise ValueError(f"unknown E-series {series!r}: use one of {', '.join(E_SERIES)}")
    return key


def _decade_values(key: str, exponent: int) -> list[float]:
    """Values of one series from 10**exponent up to (not including) 10**(exponent+1).
    Built from decimal text so that 4.7k is exactly 4700.0, not 4700.000000000001."""
    table = E_SERIES[key]
    shift = exponent - (1 if table[0] < 100 else 2)
    return [float(f"{m}e{shift}") for m in table]


def _around(key: str, value: float, spread: int = 1) -> list[float]:
    if not (value > 0 and math.isfinite(value)):
        raise ValueError(f"E-series values are positive and finite, got {value!r}")
    e = math.floor(math.log10(value))
    out: list[float] = []
    for k in range(e - spread, e + spread + 1):
        out.extend(_decade_values(key, k))
    return out


def series_values(series: str | int, lo: float, hi: float) -> list[float]:
    """Every value of ``series`` in [lo, hi] (lo > 0), ascending.

    References
    ----------
    IEC 60063:2015, *Preferred number series for resistors and capacitors*.
    """
    key = _series_key(series)
    if not (0 < lo <= hi and math.isfinite(hi)):
        raise ValueError(f"need 0 < lo <= hi, got {lo!r}, {hi!r}")
    out: list[float] = []
    for k in range(math.floor(math.log10(lo)) - 1, math.floor(math.log10(hi)) + 2):
        out.extend(v for v in _decade_values(key, k)
                   if lo * (1 - 1e-12) <= v <= hi * (1 + 1e-12))
    return out


def neighbours(value: float, series: str | int = "E96") -> tuple[float, float]:
    """The series values either side of ``value``: (largest <= value, smallest >= value).
    A value in the series (to 1 ppb) comes back as (value, value).

    References
    ----------
    IEC 60063:2015, *Preferred number series for resistors and capacitors*.
    """
    key = _series_key(series)
    cands = _around(key, value)
    for c in cands:
        if math.isclose(c, value, rel_tol=1e-9):
            return c, c
    i = bisect_left(cands, value)
    return cands[i - 1], cands[i]


def nearest(value: float, series: str | int = "E96", by: str = "ratio") -> float:
    """The series value closest to ``value``.

    Parameters
    ----------
    by : {'ratio', 'difference'}
        'ratio' (default) compares |log(candidate/value)|, the resistor designer's measure
        (a 1 % step is a 1 % step in any decade); 'difference' compares |candidate - value|.
        A tie goes to the lower value.

    References
    ----------
    IEC 60063:2015, *Preferred number series for resistors and capacitors*.
    """
    lo, hi = neighbours(value, series)
    if by == "ratio":
        return lo if math.log(value / lo) <= math.log(hi / value) else hi
    if by == "difference":
        return lo if value - lo <= hi - value else hi
    raise ValueError(f"by must be 'ratio' or 'difference', got {by!r}")


@dataclass(frozen=True)
class Combination:
    """One way to make a resistance from series values.

    ``how`` is 'single', 'series' or 'parallel'; ``parts`` the values used (larger first);
    ``ohms`` what they make; ``error`` the signed relative error ohms/target - 1."""

    how: str
    parts: tuple[float, ...]
    ohms: float
    error: float


def best_single(target: float, series: str | int = "E96") -> Combination:
    """The single series value closest in ratio to ``target``.

    References
    ----------
    IEC 60063:2015, *Preferred number series for resistors and capacitors*.
    """
    v = nearest(target, series, by="ratio")
    return Combination("single", (v,), v, v / target - 1.0)


def best_pair(target: float, series: str | int = "E96", span: float = 1000.0) -> Combination:
    """The best two-resistor series or parallel combination of ``series`` values for
    ``target``, both parts within [target/span, target*span].

    Smallest |relative error| wins; ties prefer series, then the more balanced pair (larger
    smaller part). The search is exhaustive over pairs in the span: for either arrangement,
    with one part fixed the result is monotone in the other, so the best partner of each
    fixed part is a neighbour of the ideal partner (or the end of the span), and only fixed
    parts from the series value below target/2 to the one above 2 target can be closest.

    References
    ----------
    IEC 60063:2015, *Preferred number series for resistors and capacitors*; series and
    parallel resistance, any circuits text (e.g. Sedra & Smith, *Microelectronic Circuits*).
    """
    key = _series_key(series)
    if not (target > 0 and math.isfinite(target)):
        raise ValueError(f"target must be positive and finite, got {target!r}")
    if not span >= 10:
        raise ValueError(f"span must be at least 10, got {span!r}")
    smallest = series_values(key, target / span, target)[0]
    largest = series_values(key, target, target * span)[-1]
    below, above = neighbours(target, key)

    def partners(ideal: float) -> set[float]:
        if ideal <= smallest:
            return {smallest}
        if ideal >= largest:
            return {largest}
        return set(neighbours(ideal, key))

    best: tuple | None = None

    def consider(how: str, a: float, b: float, ohms: float) -> None:
        nonlocal best
        err = ohms / target - 1.0
        parts = (max(a, b), min(a, b))
        # rounding keeps float noise from deciding between equally good pairs
        rank = (round(abs(err), 12), 0 if how == "series" else 1, -parts[1])
        if best is None or rank < best[0]:
            best = (rank, Combination(how, parts, ohms, err))

    # Series: the larger part lies between the series values either side of target/2 and of
    # target (two equal parts just under target/2 can be the closest sum). Parallel: the
    # smaller part lies between the values either side of target and of 2 target.
    for a in series_values(key, neighbours(target / 2, key)[0], above):
        for b in partners(target - a):
            consider("series", a, b, a + b)
    for a in series_values(key, below, neighbours(2 * target, key)[1]):
        ideal = a * target / (a - target) if a > target else math.inf
        for b in partners(ideal):
            consider("parallel", a, b, a * b / (a + b))
    assert best is not None  # the series range always holds a value
    return best[1]
