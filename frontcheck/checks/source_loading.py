"""source-loading: a resistive source in front of a stage with unequal input resistances.

What it checks
    When each input of a stage is driven through a resistance (the two halves of a bridge, a
    divider, a series resistor, a sensor's own resistance), that resistance adds to the stage's
    input resistors. The rule solves the stage with the source resistances in series with its
    inputs and reports the gain error and the nominal CMRR that results.

Why it matters
    A single-op-amp difference amplifier presents R1 on its inverting input and R3 + R4 on its
    non-inverting input: unequal, and both finite. A source resistance Rs adds to R1 and R3,
    so the gain drops (R2/(R1 + Rs) for a matched stage) and, when the two legs see different
    Rs or R1 and R3 differ, the ratios R2/R1 and R4/R3 no longer match and the CMRR collapses.
    A 350 Ohm bridge (175 Ohm per output) in front of 10 kOhm input resistors costs 1.7 % gain.

What good looks like
    Source resistance negligible against the input resistors, or an in-amp (high-impedance
    inputs) between a resistive sensor and any difference stage.

How to fix
    Put a high-impedance stage (a three-op-amp in-amp, or followers) in front, or raise R1..R4
    so the source resistance is small against them.

Severity
    ``severity`` when the gain error exceeds ``max_gain_error`` or the loaded CMRR falls below
    the stage's Min CMRR (declared, or the cmrr-budget profile default); ``below_severity``
    otherwise, when the source measurably loads the stage.

Example
    Fails: a 350 Ω bridge (175 Ω at each output) drives 10k input resistors: about 1.7 % gain.
        R5 +5V IN_P 350 0.1%
        R6 IN_P GND 350 0.1%
        R7 +5V IN_N 350 0.1%
        R8 IN_N GND 350 0.1%
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 100k 0.1%
        U1 opamp P N OUT +5V -5V
    Passes with: the stage's resistors a hundred times larger (0.02 % gain).
        R1 IN_N N 1M 0.1%
        R2 N OUT 10M 0.1%
        R3 IN_P P 1M 0.1%
        R4 P GND 10M 0.1%

Source
    Derived by frontcheck from the difference amplifier's unequal input resistances, R1 and R3 +
    R4 (A. S. Sedra, K. C. Smith, Microelectronic Circuits, 6th ed., Eq. 2.19), and checked
    against ngspice.
"""

from __future__ import annotations

import math

from .. import formatting as fmt
from .located_finding import finding
from .message_numbers import db, ohms, pct
from .params import number, severity

RULE_ID = "source-loading"
SUMMARY = "Resistive source loading a stage's unequal input resistances"
PARAMETERS = {
    "severity": severity("severity when the loading gain error or CMRR loss is beyond the limits"),
    "max_gain_error": number(1e-3, "gain error the source resistance may cause", "fraction",
                             maximum=1.0),
    "below_severity": severity("severity when the source loads the stage within the limits",
                               "info"),
}

_NEGLIGIBLE = 1e-6    # relative gain change below which the source is not worth a line
# An effect is worth a line from a tenth of the rule's own limit: a gain change of a tenth of
# max_gain_error, a source-only common-mode gain within 20 dB (a factor ten) of the minimum
# CMRR. Smaller, it cannot move the verdict on the stage.
MATTERS = 0.1
MATTERS_DB = 20.0
_CMRR_VISIBLE_DB = 200.0   # no minimum known: a source-only CMRR below this is shown


def source_resistances(ctx, stage) -> tuple[float | None, float | None]:
    """Thevenin resistance of what drives 'in_p' and 'in_n' (None: unknown or not resistive),
    from ``ctx.sources`` when the caller gave it, else from the analysis result's
    ``source`` (frontcheck.analysis.dc_paths.source_impedances)."""
    if stage.id in ctx.sources:
        s = ctx.sources[stage.id]
        return s.get("in_p"), s.get("in_n")
    res = ctx.result(stage.id)
    src = getattr(res, "source", None) if res is not None else None
    if src is None:
        return None, None
    return src.rs_p, src.rs_n


def _connector_on(ctx, net: str | None) -> bool:
    """True when a connector pin sits on ``net``: the source is off the board and its
    resistance unknown, whatever resistors the board adds to that net."""
    if ctx.netlist is None or not net:
        return False
    found = ctx.netlist.net_by_name(net)
    for node in (found.nodes if found is not None else []):
        comp = ctx.netlist.components.get(node.ref)
        if comp is None:
            continue
        prefix = "".join(ch for ch in comp.ref if ch.isalpha()).upper()
        if comp.lib_id.lower().startswith("connector") or prefix in ("J", "CN", "CON", "X"):
            return True
    return False


def check(ctx) -> list:
    # The loaded and unloaded gains come from frontcheck.analysis.port_sources, imported here
    # rather than at the top: `frontcheck rules` and `explain` load every rule module and must
    # not load numpy for it.
    from ..analysis.port_sources import loaded_gains, source_effect

    pol = ctx.policy(RULE_ID)
    min_default = ctx.policy("cmrr-budget").get("default_min_cmrr_db")
    found = []
    for stage in ctx.stages:
        rs_p, rs_n = source_resistances(ctx, stage)
        if rs_p is None or rs_n is None or (rs_p <= 0 and rs_n <= 0):
            continue
        ports = stage.circuit.ports
        if _connector_on(ctx, ports.get("in_p")) or _connector_on(ctx, ports.get("in_n")):
            continue
        if any(not math.isfinite(r.ohms.value) for r in stage.circuit.resistors):
            continue
        ad0, acm0, ad1, acm1 = loaded_gains(stage.circuit, rs_p, rs_n)
        if ad0 == 0:
            continue
        gerr = ad1 / ad0 - 1.0
        target = stage.intent.min_cmrr_db if stage.intent.min_cmrr_db is not None else min_default
        effect = source_effect(ad0, acm0, ad1, acm1)
        gain_limit = float(pol["max_gain_error"])
        # Judge only what the source itself adds: a stage whose CMRR misses its minimum for
        # another reason (unequal ratios) must not make a buffered source look guilty.
        gain_matters = abs(gerr) >= max(_NEGLIGIBLE, MATTERS * gain_limit)
        cmrr_matters = effect["cmrr_src"] < (target + MATTERS_DB if target is not None
                                              else _CMRR_VISIBLE_DB)
        if not (gain_matters or cmrr_matters):
            continue
        c0, c1 = effect["cmrr_unloaded"], effect["cmrr_loaded"]
        over = abs(gerr) > gain_limit or (target is not None and effect["cmrr_src"] < target)
        sev = pol["severity"] if over else pol["below_severity"]
        msg = (f"{stage.kind} stage {stage.id}: its inputs are driven through "
               f"{ohms(rs_p)} (+) and {ohms(rs_n)} (-)")
        if gain_matters:
            msg += (f"; this changes the gain by {pct(gerr)} ({fmt.number(ad0)} -> {fmt.number(ad1)}; "
                    f"limit {pct(gain_limit)})")
        if cmrr_matters:
            msg += (f"; the source alone limits the CMRR to {db(effect['cmrr_src'])}, "
                    f"{pct(effect['share'])} of the loaded common-mode gain, "
                    f"leaving a nominal CMRR of {db(c1)} (" + (
                        "matched without the source" if math.isinf(c0) else f"{db(c0)} without it")
                    + ")")
        r_in = [r for r in stage.circuit.resistors if not r.internal]
        fix = "buffer the inputs (an in-amp or followers in front of this stage)"
        if r_in and abs(gerr) > 0 and pol["max_gain_error"] > 0:
            scale = abs(gerr) / pol["max_gain_error"]
            if scale > 1:
                fix += f", or scale R1..R4 up about {fmt.number(scale, 3)} x so the source resistance is small against them"
        found.append(finding(ctx, RULE_ID, sev, msg, stage=stage, fix=fix,
                             data={"rs_p": rs_p, "rs_n": rs_n, "gain_error": gerr,
                                   "ad_unloaded": ad0, "ad_loaded": ad1,
                                   "cmrr_unloaded_db": c0, "cmrr_loaded_db": c1,
                                   "cmrr_source_db": effect["cmrr_src"],
                                   "cm_gain_share": effect["share"]}))
    return found
