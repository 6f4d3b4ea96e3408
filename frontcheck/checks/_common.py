"""Helpers shared by the rules: finding construction with locations, role lookup, number
formatting. No physics here."""

from __future__ import annotations

import re

from .. import formatting
from .finding import Finding

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


def role(stage, name: str):
    """The resistance playing role ``name`` in ``stage`` (aliases allowed), or None.

    A role is one element ('R5') or, as recognition writes it, a series/parallel expression of
    elements ('R9+R10', 'R13||R37', '(R1+R2)||R3'). An expression comes back as one equivalent
    Resistor named by the expression, with the first-order tolerance of the combination
    (resistance-weighted for series, conductance-weighted for parallel).
    """
    roles = {k.upper(): v for k, v in stage.roles.items()}
    for alias in ROLE_ALIASES.get(name.upper(), (name.upper(),)):
        expr = roles.get(alias)
        if expr is None:
            continue
        by_name = {r.name: r for r in stage.circuit.resistors}
        if expr in by_name:
            return by_name[expr]
        try:
            return _combine(expr, by_name)
        except (KeyError, ValueError, IndexError):
            return None
    return None


def _combine(expr: str, by_name: dict):
    from ..circuit import Resistor, Sourced

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


def ref_of(name: str) -> str:
    """Component reference of an element name: 'R5' -> 'R5', 'U1A' -> 'U1' (when the netlist
    knows 'U1'), 'U3.R1' -> 'U3'."""
    return name.split(".", 1)[0]


def component(ctx, name: str):
    """The netlist Component behind an element name, or None."""
    nl = ctx.netlist
    if nl is None or not name:
        return None
    name = next((t for t in re.split(r"[+|()\s]+", name) if t), "")   # 'R9+R10' -> 'R9'
    if not name:
        return None
    base = ref_of(name)
    comp = nl.components.get(base)
    if comp is None and base[-1:].isalpha():      # op-amp unit letter: U1A -> U1
        comp = nl.components.get(base.rstrip("ABCDEFGH"))
    return comp


def part_ref(ctx, name: str) -> str | None:
    """The component reference an element name stands for ('U3.Rref' -> 'U3', 'U1A' -> 'U1'),
    or the name's own reference when the netlist does not know it."""
    comp = component(ctx, name)
    return comp.ref if comp is not None else (ref_of(name) or None)


def unit_ref(stage, name: str) -> str:
    """The component reference of one of the stage's op-amp units ('U1A' -> 'U1',
    'U3.A1' -> 'U3'); any other name is returned as it is."""
    return next((op.ref for op in stage.circuit.opamps if op.name == name), name)


def stage_anchor(stage) -> str:
    """The element a stage-level finding points at: its first amplifier."""
    return stage.amplifiers[0] if stage.amplifiers else (stage.references[0] if stage.references else "")


def finding(ctx, rule: str, severity: str, message: str, *, stage=None, at: str | None = None,
            references=None, fix: str = "", data: dict | None = None) -> Finding:
    """A Finding located at element ``at`` (file, line and UUID of its symbol when known)."""
    if at is None and stage is not None:
        at = stage_anchor(stage)
    if at and stage is not None:
        at = unit_ref(stage, at)
    comp = component(ctx, at) if at else None
    refs = sorted(references) if references is not None else (
        list(stage.references) if stage is not None else [])
    f = Finding(rule=rule, severity=severity, message=message,
                stage=stage.id if stage is not None else None,
                references=refs, fix=fix, data=data or {})
    if comp is not None:
        if comp.location is not None:
            f.file, f.line = comp.location.file, comp.location.line
        if comp.uuids:
            f.uuid = comp.uuids[0]
    return f


def requirement_misses(ctx, stage, res, quantity: str, rule: str, severity: str) -> list[Finding]:
    """One finding per op-amp whose part data misses its ``quantity`` requirement
    (frontcheck.analysis.requirements): the number, its source and what it must reach.
    ``severity``: the rule's worst-case severity when the stage's own figure misses its target
    with that part, else a lower one (another op-amp makes up the share)."""
    from ..result import as_json, bound_text, given_text

    out = []
    for r in getattr(res, "requirements", []):
        if r.quantity != quantity or r.met is not False:
            continue
        out.append(finding(
            ctx, rule, severity,
            f"{stage.kind} stage {stage.id}: {', '.join(r.opamps)} {quantity} "
            f"{given_text(r).rsplit(':', 1)[0]} misses its requirement {bound_text(r)} "
            f"({r.because})", stage=stage, at=r.opamps[0], references=list(r.references),
            fix=f"use an op-amp whose {quantity} is {bound_text(r)}, or tighten the rest of the "
                f"stage so that the requirement relaxes",
            data={"requirement": as_json(r)}))
    return out


# --- formatting: thin names for frontcheck.formatting, the one number style -------------

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
