"""ref-floating: the reference node of a stage has no defined potential.

What it checks
    The REF pin of an integrated in-amp or difference amplifier, or the bottom of R4 (Rd) in a
    discrete stage, must reach a net of defined voltage through a DC path: ground, a supply,
    an op-amp output or a divider. The rule reports a REF net that reaches none of these
    (a capacitor is open at DC). It reads the wiring only, so it runs on an integrated part
    that has no part data as well.

Why it matters
    The output is Vout = G Vd + Vref. With REF floating the output has no reference at all: it
    drifts with leakage and bias currents, and the stage's CMRR and gain are undefined.

What good looks like
    REF tied to ground, or to a mid-supply reference driven by a low-impedance source
    (an op-amp follower).

How to fix
    Connect REF to ground or to a buffered reference voltage.

Severity
    ``severity`` (a definite defect).

Example
    Fails: R4's far end sits on a net nothing else drives.
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P REF 100k 0.1%
        U1 opamp P N OUT +5V -5V
        J1 connector IN_P IN_N GND
    Passes with:
        R4 P GND 100k 0.1%

Source
    A. S. Sedra, K. C. Smith, Microelectronic Circuits, 6th ed., Eq. 2.19 (the difference
    amplifier's output follows REF one for one, so a REF with no defined potential leaves the
    output undefined). Driving REF from a buffer is common practice.
"""

from __future__ import annotations

from .located_finding import finding
from .stage_roles import role
from .params import severity

RULE_ID = "ref-floating"
SUMMARY = "Stage reference (REF pin or bottom of R4) has no defined potential"
PARAMETERS = {"severity": severity("severity of a floating reference")}


def ref_element(stage) -> str | None:
    """The element whose pin is the reference node: R4/Rd when placed, else the amplifier."""
    r4 = role(stage, "R4")
    if r4 is not None and not r4.internal:
        return r4.name
    return stage.amplifiers[-1] if stage.amplifiers else None


def _without_part_data(ctx, pol) -> list:
    """The REF pin of an integrated part without part data: its DC path is in the schematic
    (frontcheck.analysis.structure), so the rule needs no datasheet."""
    found = []
    for un in ctx.unsupported:
        path = (getattr(un, "schematic", None) or {}).get("ref_path")
        if not path or path["status"] != "none":
            continue
        caps = path.get("parts") or []
        found.append(finding(
            ctx, RULE_ID, pol["severity"],
            f"{un.ref}: REF net {path['net']} has no DC path to a defined potential"
            + (f" (only through capacitor {', '.join(caps)}, open at DC)" if caps else "")
            + "; the output is undefined (found from the wiring; the part has no part data)",
            at=un.ref, references={un.ref, *caps},
            fix="connect REF to ground, or to a reference voltage driven by an op-amp follower",
            data={"net": path["net"], "parts": caps, "part_data": False}))
    return found


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = _without_part_data(ctx, pol)
    for stage in ctx.stages:
        res = ctx.result(stage.id)
        if res is None or res.ref is None or res.ref.kind != "floating":
            continue
        at = ref_element(stage)
        found.append(finding(
            ctx, RULE_ID, pol["severity"],
            f"{stage.kind} stage {stage.id}: reference net {res.ref.net}"
            + (f" ({at})" if at else "") + " has no DC path to a defined potential; the output "
            "is undefined",
            stage=stage, at=at,
            fix="connect REF to ground, or to a reference voltage driven by an op-amp follower",
            data={"net": res.ref.net}))
    return found
