"""Small accessors for parsed KiCad S-expression lists, and KiCad's coordinate unit.

Every coordinate is converted to KiCad's internal unit, 1 IU = 0.0001 mm, and rounded the way
KiCad rounds on load, because connections are decided by exact equality of those integers.
"""

from __future__ import annotations

import math

__all__ = ["IU_PER_MM", "to_iu", "kids", "flag", "xy_angle", "find", "property_of", "pin_hidden"]

IU_PER_MM = 10000


def _to_iu(text: str) -> int:
    v = float(text) * IU_PER_MM
    return int(math.floor(v + 0.5)) if v >= 0 else -int(math.floor(-v + 0.5))


# Coordinates repeat (a sheet is drawn on a grid): text -> IU, bounded so that a hostile
# file cannot grow it without end. Only what converted is kept; an error is raised anew.
_IU_OF: dict[str, int] = {}
_IU_CACHED = 1 << 16


def to_iu(text: str) -> int:
    """Millimetres (as written) -> integer IU, rounding half away from zero as KiCad does."""
    if type(text) is not str:
        return _to_iu(text)
    v = _IU_OF.get(text)
    if v is None:
        v = _to_iu(text)
        if len(_IU_OF) < _IU_CACHED:
            _IU_OF[text] = v
    return v


def kids(node: list):
    for item in node[1:]:
        if isinstance(item, list) and item:
            yield item


def flag(item: list) -> bool:
    """``(dnp)`` / ``(dnp yes)`` / ``(dnp no)``."""
    return len(item) < 2 or item[1] != "no"


_ANGLES = {"0": 0, "90": 90, "180": 180, "270": 270}


def xy_angle(item: list) -> tuple[int, int, int]:
    if len(item) == 4:          # (at x y angle) with coordinates seen before: nearly always
        try:
            return _IU_OF[item[1]], _IU_OF[item[2]], _ANGLES[item[3]]
        except (KeyError, TypeError):
            pass                # first sight, or not text: the general way below
    x = to_iu(item[1]) if len(item) > 1 else 0
    y = to_iu(item[2]) if len(item) > 2 else 0
    a = int(round(float(item[3]))) if len(item) > 3 else 0
    return x, y, a


def find(node: list, head: str) -> list | None:
    for k in kids(node):
        if k[0] == head:
            return k
    return None


def property_of(item: list) -> tuple[str, str] | None:
    if len(item) > 2 and type(item[1]) is str and type(item[2]) is str \
            and item[1] != "private":
        return item[1], item[2]         # (property "Name" "value" ...): nearly every one
    args = [a for a in item[1:] if isinstance(a, str)]
    if args and args[0] == "private" and len(args) >= 3:
        args = args[1:]
    if len(args) < 2:
        return None
    return args[0], args[1]


def pin_hidden(pin: list) -> bool:
    for a in pin[1:]:
        if a == "hide":
            return True
        if isinstance(a, list) and a and a[0] == "hide":
            return flag(a)
    return False
