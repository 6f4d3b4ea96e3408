"""ref-impedance: the reference node is fed through a resistance.

What it checks
    A REF net driven by a divider or through a series resistor has a Thevenin resistance Rth,
    which sits in series with R4 (Rd). The rule reports Rth, the CMRR it alone allows, how much
    worst-case CMRR it costs the stage, and the gain error it adds. For an integrated in-amp
    without part data the structure alone is judged: the CMRR Rth would allow against a stated
    range of internal REF resistances, and the largest Rth a declared Min CMRR allows.

Why it matters
    Rth unbalances the bridge of the difference section: CMRR_ref ~ (1 + G) R4 / Rth (times G1
    in a three-op-amp in-amp) and the gain becomes G [1 + r/(2(1 + G))], r = Rth/R4 (first order
    in r). A divider of two 10 kOhm resistors (Rth = 5 kOhm) at REF of a unity-gain stage with
    10 kOhm resistors leaves a CMRR of 5.5, about 15 dB.

What good looks like
    REF driven by a low-impedance source: an op-amp output or a solid ground.

How to fix
    Buffer the reference with an op-amp follower, or lower the divider resistance below the
    stated maximum.

Severity
    ``severity`` when the CMRR cost exceeds ``max_cmrr_cost_db`` or the gain error exceeds
    ``max_gain_error``; ``below_severity`` for a resistive REF within both.

Example
    Fails: REF comes from a 10k/10k divider (5 kΩ) in series with R4 = 100k.
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P REFD 100k 0.1%
        U1 opamp P N OUT +5V -5V
        J1 connector IN_P IN_N GND
        R8 +5V REFD 10k 1%
        R9 REFD GND 10k 1%
    Passes with:
        R8 +5V REFD 10 1%
        R9 REFD GND 10 1%

Source
    Derived by frontcheck (the source resistance at REF adds to R4, so CMRR is about (1 + G)
    R4/Rth) and checked against ngspice; combination of CMRR terms: R. Pallás-Areny, J. G.
    Webster, "Common mode rejection ratio in differential amplifiers", IEEE Trans. Instrum.
    Meas. 40(4), 1991. Buffering REF is common practice.
"""

from __future__ import annotations

import math

from .. import formatting as fmt
from .located_finding import finding, part_ref
from .message_numbers import db, ohms, pct
from .ref_floating import ref_element
from .params import number, severity

RULE_ID = "ref-impedance"
SUMMARY = "REF fed through resistance: CMRR and gain cost of its Thevenin resistance"
PARAMETERS = {
    "severity": severity("severity when the REF resistance costs more than either threshold"),
    "max_cmrr_cost_db": number(1.0, "CMRR the REF resistance may cost the worst case", "dB"),
    "max_gain_error": number(1e-4, "gain error the REF resistance may cause", "fraction",
                             maximum=1.0),
    "below_severity": severity("severity for a resistive REF within both thresholds", "info"),
}


def cmrr_cost_db(base_db: float, ref_db: float) -> float:
    """dB lost when a contributor ``ref_db`` adds in the worst sign to ``base_db``:
    20 log10(1 + CMRR_base / CMRR_ref).

    References
    ----------
    R. Pallas-Areny, J. G. Webster, IEEE Trans. Instrum. Meas. 40(4), 1991.
    """
    if not math.isfinite(base_db):
        return math.inf
    return 20.0 * math.log10(1.0 + 10.0 ** ((base_db - ref_db) / 20.0))


def base_cmrr_db(res) -> float:
    """Worst-case CMRR of the stage without the REF term: the other contributors combined
    (1/CMRR = sum 1/CMRR_i), or the worst case itself when no contributors are listed."""
    others = [v for k, v in res.cmrr.contributors.items() if not k.lower().startswith("ref")]
    if not others:
        return res.cmrr.worst_db
    inv = sum(10.0 ** (-v / 20.0) for v in others if math.isfinite(v))
    return math.inf if inv == 0 else -20.0 * math.log10(inv)


#: Internal REF resistance of integrated in-amps, for a part without part data: commonly about
#: 10 kOhm to 60 kOhm (from memory: the difference stages of common integrated in-amps).
TYPICAL_REF_OHMS = (10e3, 60e3)
#: Below this the REF path is a link or a trace, not a resistor (common practice).
SMALL_REF_OHMS = 1.0


def _without_part_data(ctx, pol) -> list:
    """An in-amp without part data whose REF pin is fed through a resistance: judged from the
    structure alone, CMRR_ref ~ (1 + G) R_ref / Rth with the output stage's gain G taken as 1
    (the least; docs/engineering.md sec. 5) over :data:`TYPICAL_REF_OHMS`."""
    found = []
    for un in ctx.unsupported:
        src = (getattr(un, "schematic", None) or {}).get("ref_source")
        if not src or src.get("kind") != "resistive" or not src.get("ohms") \
                or src["ohms"] < SMALL_REF_OHMS:
            continue
        rth = src["ohms"]
        lo_db, hi_db = (20.0 * math.log10(2.0 * r / rth) for r in TYPICAL_REF_OHMS)
        msg = (f"{un.ref}: REF net {src['net']} is fed through {ohms(rth)}"
               + (f" ({src['driver']})" if src.get("driver") else "")
               + f"; {un.ref} has no part data, but with the internal REF resistance of "
               f"integrated in-amps, commonly {ohms(TYPICAL_REF_OHMS[0])} to "
               f"{ohms(TYPICAL_REF_OHMS[1])} (from memory), this alone would limit the output "
               f"stage's CMRR to {fmt.db(lo_db, 0)} .. {fmt.db(hi_db, 0)} (output stage gain 1; the first "
               "stage's gain raises it at the input)")
        fix = "drive REF from an op-amp follower or a solid reference"
        max_ohms = None
        if src.get("min_cmrr_db") is not None:
            max_ohms = 2.0 * TYPICAL_REF_OHMS[0] / 10.0 ** (src["min_cmrr_db"] / 20.0)
            fix += (f"; for the declared Min CMRR {fmt.db(src['min_cmrr_db'], 0)} keep the REF source "
                    f"resistance below {ohms(max_ohms)} (with a {ohms(TYPICAL_REF_OHMS[0])} "
                    "internal REF resistance)")
        refs = {un.ref} | {part_ref(ctx, p) for p in src.get("parts", [])} - {None}
        found.append(finding(ctx, RULE_ID, pol["severity"], msg, at=un.ref, references=refs,
                             fix=fix, data={"net": src["net"], "thevenin_ohms": rth,
                                            "ref_cmrr_db_range": [lo_db, hi_db],
                                            "internal_ref_ohms_range": list(TYPICAL_REF_OHMS),
                                            "max_ohms": max_ohms, "part_data": False}))
    return found


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = _without_part_data(ctx, pol)
    for stage in ctx.stages:
        res = ctx.result(stage.id)
        ref = res.ref if res is not None else None
        if ref is None or ref.kind != "resistive" or not ref.thevenin_ohms:
            continue
        base = base_cmrr_db(res)
        cost = cmrr_cost_db(base, ref.cmrr_db) if ref.cmrr_db is not None else 0.0
        gerr = abs(ref.gain_error or 0.0)
        over = cost > pol["max_cmrr_cost_db"] or gerr > pol["max_gain_error"]
        sev = pol["severity"] if over else pol["below_severity"]
        msg = (f"{stage.kind} stage {stage.id}: REF net {ref.net} is fed through "
               f"{ohms(ref.thevenin_ohms)}" + (f" ({ref.driver})" if ref.driver else "")
               + f"; alone it limits CMRR to {db(ref.cmrr_db)}, costing {fmt.db(cost, 2)} of the "
               f"worst case ({db(base)} without it), and adds {pct(gerr)} gain error")
        # Both costs scale with Rth (CMRR_ref ~ 1/Rth, gain error ~ Rth): the largest Rth that
        # keeps both within the thresholds follows by proportion.
        limits = []
        if ref.cmrr_db is not None and math.isfinite(base):
            k = 10.0 ** (pol["max_cmrr_cost_db"] / 20.0) - 1.0      # CMRR_base/CMRR_ref allowed
            if k > 0:
                need_ref_db = base - 20.0 * math.log10(k)
                limits.append(ref.thevenin_ohms * 10.0 ** ((ref.cmrr_db - need_ref_db) / 20.0))
        if gerr > 0 and pol["max_gain_error"] > 0:
            limits.append(ref.thevenin_ohms * pol["max_gain_error"] / gerr)
        fix = "drive REF from an op-amp follower (a buffered reference)"
        if limits:
            fix += f", or keep its source resistance below {ohms(min(limits))}"
        # Name the amplifier(s) and the network that feeds REF (the parts to change).
        owners = {op.ref for op in stage.circuit.opamps}
        refs = owners | {part_ref(ctx, p) for p in ref.parts} - {None}
        found.append(finding(
            ctx, RULE_ID, sev, msg, stage=stage, at=ref_element(stage), fix=fix,
            references=refs,
            data={"parts": ref.parts, "net": ref.net, "thevenin_ohms": ref.thevenin_ohms, "ref_cmrr_db": ref.cmrr_db,
                  "cmrr_cost_db": cost, "base_cmrr_db": base, "gain_error": gerr,
                  "max_ohms": min(limits) if limits else None}))
    return found
