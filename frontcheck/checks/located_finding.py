"""A rule's Finding located at a part of the design (file, line and UUID of its symbol), and
the element-name to component mapping it rests on ('U1A' -> 'U1', 'U3.R1' -> 'U3').
"""

from __future__ import annotations

import re

from ..finding import Finding
from ..result import as_json, bound_text, given_text

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
