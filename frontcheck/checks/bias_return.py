"""bias-return: an amplifier input with no DC path to a potential inside its input range.

What it checks
    Every op-amp and in-amp input must reach, through resistors, inductors or op-amp outputs
    (capacitors count as open), a net of defined potential: ground, a supply, a reference.
    An input that reaches nothing is an error; one whose only path ends at a connector pin
    (the sensor off the board may or may not provide it) needs a declaration. The rule reads
    the wiring only, so it runs on an integrated in-amp that has no part data as well. The
    inputs of an integrated difference amplifier feed the part's own resistors (+IN towards
    REF, -IN towards its output): they return their bias through the part where REF is held.

Why it matters
    Inputs draw bias current. With no DC return (an AC-coupled input, a transformer, a floating
    thermocouple or battery-powered sensor) that current charges the stray capacitance and the
    input drifts until it sits at a rail: the amplifier saturates although the schematic looks
    complete.

What good looks like
    A resistor from each input (or from the sensor's centre point) to ground or the mid-supply
    reference, sized so that the bias current times it is small against the error budget.

How to fix
    Add the bias-return resistor; for a connector input that the sensor references, say so by
    waiving the finding in frontcheck.toml with the reason.

Severity
    ``severity`` for no path at all (a definite defect); ``connector_severity`` for a path that
    ends at a connector.

Example
    Fails: a three-op-amp in-amp whose inputs are AC-coupled with no resistor to ground.
        U1 opamp IN_P O1 O1 +5V -5V
        U2 opamp IN_N O2 O2 +5V -5V
        R1 O2 N 10k 0.1%
        R2 N OUT 10k 0.1%
        R3 O1 P 10k 0.1%
        R4 P GND 10k 0.1%
        U3 opamp P N OUT +5V -5V
        C1 SRC_P IN_P 100n 5%
        C2 SRC_N IN_N 100n 5%
        J1 connector SRC_P SRC_N GND
    Passes with:
        R5 IN_P GND 1M 1%
        R6 IN_N GND 1M 1%

Source
    Common practice: every amplifier input draws bias current and needs a DC path to a potential
    inside its input range.
"""

from __future__ import annotations

from ..result import BiasPath
from .located_finding import finding, part_ref, unit_ref
from .message_numbers import eng
from .params import severity

RULE_ID = "bias-return"
SUMMARY = "Amplifier input without a DC path to a defined potential"
PARAMETERS = {
    "severity": severity("severity of an input with no DC path"),
    "connector_severity": severity("severity of an input whose only DC path ends at a connector pin",
                                   "warning"),
}


def _unit_of(stage, pin: str) -> str | None:
    """The op-amp unit or IC a BiasPath pin label ('U1A +in') belongs to."""
    head = pin.split()[0] if pin else ""
    for op in stage.circuit.opamps:
        if op.name == head or op.ref == head:
            return op.name
    return head or None


def _ib(stage, unit: str | None):
    for op in stage.circuit.opamps:
        if op.name == unit and op.model.ib is not None:
            return float(op.model.ib.value)
    return None


def _said(pol, who: str, bp, ib: float | None = None, name_caps: bool = False):
    """(severity, message, fix) for one input path that is not 'ok', or None; ``name_caps``
    names the capacitors that block the path in the message."""
    if bp.status == "none":
        msg = (f"{who}: input {bp.pin} (net {bp.net}) has no DC path to a defined potential"
               + (f" (only through capacitor {', '.join(bp.parts)}, open at DC)"
                  if bp.parts and name_caps else "")
               + "; its bias current will drive it to a rail")
        fix = (f"add a resistor from net {bp.net} to ground or the reference voltage "
               f"(a potential inside the input common-mode range)")
        if ib:
            fix += (f"; with Ib = {eng(ib, 'A')}, {eng(1e-3 / ib, 'Ω')} drops 1 mV, "
                    f"so stay well below that")
        return pol["severity"], msg, fix
    if bp.status == "connector":
        msg = (f"{who}: input {bp.pin} (net {bp.net}) returns bias current only through "
               f"{bp.reaches or 'a connector'}; whether the sensor provides a DC path is not "
               "in the design")
        fix = ("add a bias-return resistor on the board, or waive this finding in "
               "frontcheck.toml stating how the sensor returns the bias current")
        return pol["connector_severity"], msg, fix
    return None


def _without_part_data(ctx, pol) -> list:
    """Inputs of an integrated part without part data: their DC paths are in the schematic
    (frontcheck.analysis.structure), so the rule needs no datasheet."""
    found = []
    for un in ctx.unsupported:
        for path in (getattr(un, "schematic", None) or {}).get("bias", []):
            bp = BiasPath(**path)
            said = _said(pol, f"{un.ref} (no part data)", bp, name_caps=True)
            if said is None:
                continue
            sev, msg, fix = said
            found.append(finding(ctx, RULE_ID, sev, msg, at=un.ref, fix=fix,
                                 references={un.ref, *(part_ref(ctx, p) for p in bp.parts)} - {None},
                                 data={"pin": bp.pin, "net": bp.net, "status": bp.status,
                                       "reaches": bp.reaches, "parts": bp.parts,
                                       "part_data": False}))
    return found


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = _without_part_data(ctx, pol)
    for stage, res in ctx.analysed():
        for bp in res.bias:
            if bp.status == "ok":
                continue
            unit = _unit_of(stage, bp.pin)
            said = _said(pol, f"{stage.kind} stage {stage.id}", bp, _ib(stage, unit))
            if said is None:
                continue
            sev, msg, fix = said
            # Name the amplifier and the parts that decide the path: the coupling capacitors
            # that block it, or the connector it ends at.
            owner = unit_ref(stage, unit)
            refs = {owner, *(part_ref(ctx, p) for p in bp.parts)} - {None}
            found.append(finding(ctx, RULE_ID, sev, msg, stage=stage, at=unit, fix=fix,
                                 references=refs,
                                 data={"pin": bp.pin, "net": bp.net, "status": bp.status,
                                       "reaches": bp.reaches, "parts": bp.parts}))
    return found
