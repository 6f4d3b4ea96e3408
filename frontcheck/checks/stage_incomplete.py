"""stage-incomplete: something wired almost like a front-end stage, or an in-amp-like part
frontcheck has no data for.

What it checks
    Recognition reports near misses: an op-amp with the resistors of a difference stage but no
    feedback, a ratio resistor shorted by a 0-ohm link, an in-amp whose gain resistor or supply
    pin is unconnected, an in-amp's gain network wired against what its architecture needs
    (the second resistor of a feedback-pin network from the output to REF instead of from the
    gain pin to REF: as drawn the gain is the part's base gain and the resistor loads the
    output). It also reports parts whose pins look like an integrated in-amp or
    difference amplifier but for which no part data exists, so nothing about them can be
    computed. Each becomes a finding here.

Why it matters
    A near miss is usually a drawing error (a missing wire, a link left in place) that leaves
    the stage open loop, at the wrong gain, or without common-mode rejection. A part without
    data is silently unchecked unless someone says so.

What good looks like
    Every amplifier recognised as a complete stage, and part data for every integrated in-amp.

How to fix
    Complete the wiring the finding names; for an unsupported part, add its internal resistor
    values and limits to the project's part file.

Severity
    ``severity`` for a near miss, ``miswired_severity`` (error by default) for a gain network
    whose wiring as drawn gives another circuit than the one meant, ``unsupported_severity`` for
    a part without data (information
    by default: the message says what the schematic gives, such as the gain resistor and the
    gain range the usual gain equations would give, marked as not checked).

Example
    Fails: a difference amplifier whose feedback resistor R2 is drawn as a 0 Ω link.
        R1 IN_N N 10k 0.1%
        R2 N OUT 0
        R3 IN_P P 10k 0.1%
        R4 P GND 100k 0.1%
        U1 opamp P N OUT +5V -5V
        J1 connector IN_P IN_N GND
    Passes with:
        R2 N OUT 100k 0.1%

Source
    Common practice (a design review's completeness check).
"""

from __future__ import annotations

import re

from .finding import Finding
from .params import severity

RULE_ID = "stage-incomplete"
SUMMARY = "Near miss of a stage, or an in-amp-like part without part data"
PARAMETERS = {
    "severity": severity("severity of a near miss (missing feedback, shorted resistor, open RG or "
                         "supply)"),
    "miswired_severity": severity("severity of a gain network wired against its architecture "
                                  "(the wiring as drawn gives another gain)", "error"),
    "unsupported_severity": severity("severity of an in-amp-like part without part data (what "
                                     "the schematic says is in the message)", "info"),
}


_REF = re.compile(r"[A-Za-z#_]+\d+")


def _located(ctx, ref: str, location) -> tuple[str | None, int | None, str | None]:
    comp = ctx.netlist.components.get(ref) if (ctx.netlist is not None and ref) else None
    loc = location or (comp.location if comp is not None else None)
    uuid = comp.uuids[0] if comp is not None and comp.uuids else None
    return (loc.file, loc.line, uuid) if loc is not None else (None, None, uuid)


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = []
    for nm in ctx.near_misses:
        ref = getattr(nm, "ref", "")
        file, line, uuid = _located(ctx, ref, getattr(nm, "location", None))
        missing = getattr(nm, "missing", "")
        level = pol["miswired_severity"] if getattr(nm, "miswired", False) else pol["severity"]
        found.append(Finding(
            rule=RULE_ID, severity=level,
            message=f"{getattr(nm, 'kind', 'stage')} near miss at {ref}: {nm.message}",
            stage=None, references=sorted(getattr(nm, "references", []) or [ref]),
            fix=(f"complete the stage: {missing}" if missing else "complete the stage's wiring")
            + "; if the circuit is meant this way, waive this finding with the reason",
            file=file, line=line, uuid=uuid,
            data={"kind": getattr(nm, "kind", None), "missing": missing,
                  "miswired": bool(getattr(nm, "miswired", False))}))
    for un in ctx.unsupported:
        ref = getattr(un, "ref", "")
        file, line, uuid = _located(ctx, ref, getattr(un, "location", None))
        # roles hold expressions ('R1+RV1', '(R5+R6)||R7'): the references in them
        refs = sorted({ref, *(r for expr in getattr(un, "roles", {}).values()
                              for r in _REF.findall(expr))} - {""})
        found.append(Finding(
            rule=RULE_ID, severity=pol["unsupported_severity"],
            message=(un.message or f"{ref} looks like an {getattr(un, 'kind', 'integrated amplifier')}"
                     " but has no part data") + "; its gain, CMRR and headroom are unchecked",
            stage=None, references=refs,
            fix=getattr(un, "fix", "") or f"describe {ref}'s part (gain equation resistors, REF "
                "resistor, input and output limits) in the project's part file",
            file=file, line=line, uuid=uuid,
            data={"kind": getattr(un, "kind", None), "pins": dict(getattr(un, "pins", {})),
                  "schematic": dict(getattr(un, "schematic", {}))}))
    return found
