"""supply-floating: an amplifier supply pin that no DC path connects to a supply.

What it checks
    Every supply pin (V+, V-, GND) of every op-amp, in-amp and difference amplifier must reach
    a supply or ground through wire, resistors, inductors or ferrites. The rule reports a pin
    whose net reaches a rail only through capacitors (the decoupling capacitor is drawn, the
    wire from it to the rail is not) or through nothing. It reads the wiring only, so it runs
    on every amplifier, with or without part data. A net that something else may feed (a
    regulator or any other part, a connector, a global label or power symbol that may carry a
    rail from elsewhere) is left alone.

Why it matters
    A capacitor passes no direct current: the amplifier is unpowered, or powered through its
    input protection diodes from the signal, and every figure of the stage is meaningless.

What good looks like
    Each supply pin on the supply net itself, with its decoupling capacitor from that net to
    ground.

How to fix
    Draw the connection from the supply pin (or its decoupling capacitor) to the supply net.

Severity
    ``severity`` (a definite defect).

Example
    Fails: U1's positive supply pin sits on a net (a local label) that only C1 joins to +5V.
        R1 IN_N N 10k 0.1%
        R2 N OUT 10k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 10k 0.1%
        U1 opamp P N OUT /VS_LOCAL -5V
        C1 /VS_LOCAL +5V 100n
        C2 /VS_LOCAL GND 100n
        J1 connector IN_P IN_N GND
    Passes with:
        R5 /VS_LOCAL +5V 10

Source
    Common practice: an amplifier draws its supply current through a DC path; a capacitor
    blocks direct current (Kirchhoff's current law at DC).
"""

from __future__ import annotations

from .located_finding import finding
from .params import severity

RULE_ID = "supply-floating"
SUMMARY = "Amplifier supply pin reaches a supply only through a capacitor, or not at all"
PARAMETERS = {"severity": severity("severity of a supply pin without a DC path to a supply")}


def _stage_of(ctx, ref: str):
    """The analysed stage the amplifier part belongs to, or None."""
    for stage in ctx.stages:
        if ref in stage.references or any(op.ref == ref for op in stage.circuit.opamps):
            return stage
    return None


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = []
    for sp in ctx.supplies:
        stage = _stage_of(ctx, sp.amplifier)
        who = f"{stage.kind} stage {stage.id}: {sp.amplifier}" if stage else sp.amplifier
        if sp.status == "capacitor":
            how = (f"reaches {', '.join(sp.reaches)} only through capacitor "
                   f"{', '.join(sp.parts)}, which passes no direct current")
        else:
            how = "reaches no supply at all"
        found.append(finding(
            ctx, RULE_ID, pol["severity"],
            f"{who} {sp.role} pin {sp.pin} on net {sp.net} {how}: the amplifier has no supply "
            "there (found from the wiring)",
            stage=stage, at=sp.amplifier, references={sp.amplifier, *sp.parts},
            fix=f"connect net {sp.net} to the {sp.role} net; keep the capacitor as decoupling "
                "from that net to ground",
            data={"amplifier": sp.amplifier, "pin": sp.pin, "net": sp.net, "status": sp.status,
                  "reaches": sp.reaches, "parts": sp.parts}))
    return found
