"""assumed-value: a number in the analysis came from a default or a generic class.

What it checks
    Every analysed stage lists where its numbers came from. Resistor tolerances missing from
    the design fall back to the profile's default; op-amp limits, CMRR and open-loop gain fall
    back to a generic class of part; supply voltages may come from a default. The rule lists,
    per stage, each number that was assumed rather than read from the design.

Why it matters
    A worst-case CMRR computed with an assumed 1 % tolerance is only as good as the assumption.
    An engineer signing off a board must know which numbers are the design's and which are
    frontcheck's.

What good looks like
    Tolerance fields on every stage resistor, op-amp part data in the project's part file, and
    no assumptions in the report.

How to fix
    Add the missing fields (``Tolerance`` on resistors, part data for the op-amps) as the
    finding lists them.

Severity
    ``severity`` (info in the default profile, warning in strict).

Example
    Fails: R4 states no tolerance, so the profile's 1 % is assumed for it (the op-amp's
    numbers are all given as fields).
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 100k
        U1 opamp P N OUT +5V -5V | Aol: 100 dB; CMRR: 100 dB
          | Vos: 1 mV; Ib: 100 nA; Input CM Low: 2 V; Input CM High: 2 V
          | Swing Low: 1.5 V; Swing High: 1.5 V
        J1 connector IN_P IN_N GND
    Passes with:
        R4 P GND 100k 0.1%

Source
    Common practice (traceable analysis inputs).
"""

from __future__ import annotations

from .. import formatting as fmt
from .located_finding import finding
from .params import severity

RULE_ID = "assumed-value"
SUMMARY = "A number came from a default or a generic class, not from the design"
PARAMETERS = {"severity": severity("severity of a stage's list of assumed numbers")}

_ASSUMED = ("default", "class")


def stage_assumptions(stage) -> list[tuple[str, str]]:
    """(component reference, text) of every Sourced number in the stage whose source is an assumption."""
    out = []
    for r in stage.circuit.resistors:
        for what, s in (("value", r.ohms), ("tolerance", r.tol), ("ratio tolerance", r.match_tol)):
            if s is not None and s.source in _ASSUMED:
                out.append((r.name.split(".")[0], f"{r.name} {what} {s.detail or s.source}"))
    for c in stage.circuit.capacitors:
        for what, s in (("value", c.farads), ("tolerance", c.tol)):
            if s.source in _ASSUMED:
                out.append((c.name, f"{c.name} {what} {s.detail or s.source}"))
    for op in stage.circuit.opamps:
        m = op.model
        fields = [("open-loop gain", m.aol), ("CMRR", m.cmrr_db), ("input range", m.icm_low),
                  ("output swing", m.swing_low)]
        hits = [(w, s) for w, s in fields if s is not None and s.source in _ASSUMED]
        if hits:
            first = hits[0][1]
            out.append((op.ref, f"{op.name} {', '.join(w for w, _ in hits)} from {m.name} ("
                        + (first.detail or first.source) + ")"))
    for net, s in stage.circuit.rails.items():
        if s.source in _ASSUMED:
            out.append(("", f"supply {net} = {fmt.volts(s.value)} ({s.detail or s.source})"))
    return out


def _fix(texts: list[str]) -> str:
    """Say only what applies: the tolerance fields, or the op-amp numbers, that are missing."""
    hints = []
    if any("tolerance" in t for t in texts):
        hints.append("a Tolerance field (e.g. '0.1%') on each resistor and capacitor listed")
    if any(" assumed (" in t for t in texts):
        hints.append("the amplifier's own numbers as fields (CMRR, Aol, Input CM Low/High, "
                     "Swing Low/High) or in frontcheck-parts.toml, where the generic class "
                     "is not close enough")
    if any(t.startswith("rail ") for t in texts):
        hints.append("the supply voltage under [rails] in frontcheck.toml")
    if not hints:
        hints.append("the missing values as fields on the parts listed")
    return "give " + "; ".join(hints)


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = []
    for stage in ctx.stages:
        res = ctx.result(stage.id)
        items = stage_assumptions(stage)
        # the analysis words them (with the assumed numbers) when it ran; else our own scan
        texts = list(res.assumptions) if res is not None and res.assumptions else [t for _, t in items]
        if not texts:
            continue
        elems = sorted({e for e, _ in items if e})
        refs = sorted(set(elems) & set(stage.references)) or list(stage.references)
        found.append(finding(
            ctx, RULE_ID, pol["severity"],
            f"{stage.kind} stage {stage.id} uses numbers not given in the design: " + "; ".join(texts),
            stage=stage, at=elems[0] if elems else None, references=refs,
            fix=_fix(texts),
            data={"assumptions": texts}))
    return found
