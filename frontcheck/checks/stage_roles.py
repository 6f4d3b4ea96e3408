"""The resistance that plays a named role in a stage (R1..R4 of a difference section, RG,
RF1, RF2), as rules ask for it: one element, or a series/parallel combination recognition wrote.
"""

from __future__ import annotations

import re
from contextlib import contextmanager

from ..circuit import Resistor, Sourced

# Role names recognition may use for the same position (checked case-insensitively).
# A difference amplifier (alone, or as stage 2 of an in-amp): R1 input resistor and R2
# feedback on the inverting side, R3 input resistor and R4 to REF on the non-inverting side.
ROLE_ALIASES = {
    "R1": ("R1", "RA"),
    "R2": ("R2", "RB"),
    "R3": ("R3", "RC"),
    "R4": ("R4", "RD"),
    "RF1": ("RF1",),
    "RF2": ("RF2",),
    "RG": ("RG",),
}


# id(stage) -> (stage, roles by upper-case name, resistors by name) while rules run
# (remembered(): the stages do not change then); None outside a run
_memo: dict[int, tuple] | None = None


@contextmanager
def remembered():
    """Within the block, each stage's role and resistor tables are made once, not at every
    :func:`role` (rules ask a stage for its roles many times over)."""
    global _memo
    outer, _memo = _memo, {} if _memo is None else _memo
    try:
        yield
    finally:
        _memo = outer


def _tables(stage) -> tuple[dict, dict]:
    got = _memo.get(id(stage)) if _memo is not None else None
    if got is None or got[0] is not stage:
        got = (stage, {k.upper(): v for k, v in stage.roles.items()},
               {r.name: r for r in stage.circuit.resistors})
        if _memo is not None:
            _memo[id(stage)] = got
    return got[1], got[2]


def role(stage, name: str):
    """The resistance playing role ``name`` in ``stage`` (aliases allowed), or None.

    A role is one element ('R5') or, as recognition writes it, a series/parallel expression of
    elements ('R9+R10', 'R13||R37', '(R1+R2)||R3'). An expression comes back as one equivalent
    Resistor named by the expression, with the first-order tolerance of the combination
    (resistance-weighted for series, conductance-weighted for parallel).
    """
    roles, by_name = _tables(stage)
    for alias in ROLE_ALIASES.get(name.upper(), (name.upper(),)):
        expr = roles.get(alias)
        if expr is None:
            continue
        if expr in by_name:
            return by_name[expr]
        try:
            return _combine(expr, by_name)
        except (KeyError, ValueError, IndexError):
            return None
    return None


def _combine(expr: str, by_name: dict):
    tokens = re.findall(r"\|\||[+()]|[^+|()\s]+", expr)
    pos = 0

    def peek():
        return tokens[pos] if pos < len(tokens) else None

    def take():
        nonlocal pos
        pos += 1
        return tokens[pos - 1]

    def atom():
        t = take()
        if t == "(":
            v = parallel()
            if take() != ")":
                raise ValueError(expr)
            return v
        r = by_name[t]
        return (float(r.ohms.value), float(r.tol.value), [r])

    def series():
        ohm, tol, els = atom()
        acc = ohm * tol
        while peek() == "+":
            take()
            o2, t2, e2 = atom()
            ohm, acc, els = ohm + o2, acc + o2 * t2, els + e2
        return ohm, (acc / ohm if ohm else tol), els

    def parallel():
        ohm, tol, els = series()
        g, acc = 1.0 / ohm, tol / ohm
        while peek() == "||":
            take()
            o2, t2, e2 = series()
            g, acc, els = g + 1.0 / o2, acc + t2 / o2, els + e2
        return 1.0 / g, acc / g, els

    ohm, tol, els = parallel()
    if pos != len(tokens):
        raise ValueError(expr)
    groups = {e.match_group for e in els}
    group = groups.pop() if len(groups) == 1 else ""
    mt = els[0].match_tol if group else None
    return Resistor(expr, "", "", Sourced(ohm, "value", f"combination {expr}"),
                    Sourced(tol, "value", f"combination {expr}"),
                    internal=any(e.internal for e in els), match_group=group, match_tol=mt)


def diff_resistors(stage):
    """(R1, R2, R3, R4) of the difference section, or None when any is missing."""
    rs = tuple(role(stage, n) for n in ("R1", "R2", "R3", "R4"))
    return None if any(r is None for r in rs) else rs
