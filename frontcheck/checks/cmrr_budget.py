"""cmrr-budget: the stage's CMRR, worst case and statistically, against the required minimum.

What it checks
    The worst-case CMRR (exact tolerance corners, op-amp CMRR added in the worst sign) and the
    statistical CMRR (Monte Carlo, low tail) of each stage against the declared ``Min CMRR``,
    or the profile's ``default_min_cmrr_db`` when the stage declares none. With ``CMRR At``
    declared (``50 Hz``) the worst case is judged at that frequency, from the analysis's CMRR
    against frequency (input filter, op-amp GBW where part data gives it); the statistical
    figure stays the DC one.

Why it matters
    Common-mode voltage (bridge excitation, ground difference, mains pick-up) leaks into the
    output as Vcm / CMRR and is indistinguishable from signal. With resistor tolerance t on all
    four difference-section resistors the worst case is CMRR ~ (1 + G)/(4 t); a three-op-amp
    in-amp multiplies that by its first-stage gain G1. The op-amp's own CMRR and any resistance
    at REF combine with it as 1/CMRR = sum of 1/CMRR_i in the worst case.

What good looks like
    Worst-case CMRR at or above the minimum, with the resistor term (usually the smallest)
    well clear of the op-amp and REF terms.

How to fix
    Tighter resistors, a matched network, or more gain in the first stage. The finding gives
    the resistor tolerance t = G1 (1 + G) / (4 CMRR_R) and the network ratio tolerance
    m = G1 (1 + G) / (2 CMRR_R) that would meet the minimum, where CMRR_R is what remains for
    the resistors once the other contributors are taken out. When another contributor alone is
    below the minimum, resistors cannot fix it and the finding says which.

Severity
    ``severity`` when the worst case is below the minimum (a declared target missed in the
    worst case), ``statistical_severity`` when only the statistical figure is, and
    ``numbers_severity`` for the plain numbers when no minimum applies.

Example
    Fails: a gain-of-10 difference amplifier of 0.1 % resistors (worst case about 68.8 dB) that
    must reach 80 dB; the op-amp's own CMRR is 120 dB.
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 100k 0.1%
        U1 opamp P N OUT +5V -5V | Min CMRR: 80 dB; CMRR: 120 dB
        J1 connector IN_P IN_N GND
    Passes with: 0.01 % resistors (worst case about 88.8 dB).
        R1 IN_N N 10k 0.01%
        R2 N OUT 100k 0.01%
        R3 IN_P P 10k 0.01%
        R4 P GND 100k 0.01%

Source
    A. S. Sedra, K. C. Smith, Microelectronic Circuits, 6th ed., Problem 2.67 (worst case (1 +
    G)/(4t)) and Problem 2.75 with Example 2.17 (three-op-amp in-amp: G1 times the stage-2
    CMRR); R. Pallás-Areny, J. G. Webster, "Common mode rejection ratio in differential
    amplifiers", IEEE Trans. Instrum. Meas. 40(4), 1991 (combination with the op-amp's CMRR).
"""

from __future__ import annotations

import math

from .. import formatting as fmt
from .located_finding import finding, requirement_misses
from .message_numbers import db, pct
from .stage_roles import diff_resistors, role
from .params import number, severity

RULE_ID = "cmrr-budget"
SUMMARY = "Worst-case or statistical CMRR below the required minimum"
PARAMETERS = {
    "severity": severity("severity when the worst-case CMRR is below the minimum"),
    "statistical_severity": severity("severity when only the statistical CMRR is below it",
                                     "warning"),
    "numbers_severity": severity("severity of the plain numbers when no minimum applies "
                                 "('off' to hide)", "info"),
    "default_min_cmrr_db": number(None, "minimum CMRR for stages that declare none; unset: none",
                                  "dB"),
}


def stage_gains(stage) -> tuple[float | None, float]:
    """(G of the difference section, G1 of the first stage) from the nominal values.

    G = R2/R1; G1 = 1 + (Rf1 + Rf2)/RG for a three-op-amp in-amp, else 1. G is None when the
    difference section's resistors are not known (an integrated part without internal data).
    """
    rs = diff_resistors(stage)
    g = None if rs is None or stage.kind == "two-opamp" else \
        float(rs[1].ohms.value) / float(rs[0].ohms.value)
    g1 = 1.0
    rf1, rf2, rg = role(stage, "RF1"), role(stage, "RF2"), role(stage, "RG")
    if stage.kind == "three-opamp" and rf1 and rf2 and rg:
        g1 = 1.0 + (float(rf1.ohms.value) + float(rf2.ohms.value)) / float(rg.ohms.value)
    return g, g1


def _is_resistor_term(name: str, stage) -> bool:
    n = name.lower()
    names = {r.name.lower() for r in stage.circuit.resistors}
    return (n in names or "resist" in n or "ratio" in n or "match" in n
            or n.startswith("r") and n[1:2].isdigit())


def _is_ref_term(name: str) -> bool:
    return name.lower().startswith("ref")


def _lin(x_db: float) -> float:
    return 10.0 ** (x_db / 20.0)


def needed_resistor_cmrr(target_db: float, others_db: list[float]) -> float | None:
    """Linear CMRR the resistors alone must reach so that, added in the worst sign to the
    other contributors (1/CMRR = sum 1/CMRR_i), the total meets ``target_db``; None when the
    others alone already miss it.

    References
    ----------
    R. Pallas-Areny, J. G. Webster, IEEE Trans. Instrum. Meas. 40(4), 1991.
    """
    rest = 1.0 / _lin(target_db) - sum(1.0 / _lin(o) for o in others_db if math.isfinite(o))
    return None if rest <= 0 else 1.0 / rest


def tolerance_for(cmrr_lin: float, g: float, g1: float = 1.0) -> tuple[float, float]:
    """(t, m): resistor tolerance and network ratio tolerance giving worst-case CMRR
    ``cmrr_lin``: CMRR = G1 (1 + G)/(4 t) and G1 (1 + G)/(2 m), inverted.

    References
    ----------
    Sedra & Smith, *Microelectronic Circuits*, 6th ed., Problem 2.67; docs/engineering.md sec. 2.
    """
    return g1 * (1.0 + g) / (4.0 * cmrr_lin), g1 * (1.0 + g) / (2.0 * cmrr_lin)


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = []
    for stage, res in ctx.analysed():
        c = res.cmrr
        declared = stage.intent.min_cmrr_db
        target = declared if declared is not None else pol.get("default_min_cmrr_db")
        g, g1 = stage_gains(stage)
        contrib = sorted(c.contributors.items(), key=lambda kv: kv[1])
        contrib_txt = ", ".join(f"{k} {db(v)}" for k, v in contrib)
        if g1 > 1.0:
            contrib_txt += (", " if contrib_txt else "") + f"first-stage gain boost {fmt.db(20 * math.log10(g1), signed=True)}"
        nums = (f"nominal {db(c.nominal_db)}, worst case {db(c.worst_db)}, statistical "
                f"{db(c.statistical_db)} ({fmt.number(c.percentile)} % low tail)")
        data = {"nominal_db": c.nominal_db, "worst_db": c.worst_db,
                "statistical_db": c.statistical_db, "min_db": target,
                "contributors": dict(c.contributors), "g1": g1, "g": g}
        pair = _pair_text(stage, res)
        if target is None:
            found.append(finding(ctx, RULE_ID, pol["numbers_severity"],
                                 f"{stage.kind} stage {stage.id}: CMRR {nums}; no Min CMRR declared"
                                 + (f"; contributors: {contrib_txt}" if contrib_txt else "") + pair,
                                 stage=stage, data=data,
                                 fix="declare Min CMRR on the amplifier symbol to have it checked"))
            continue
        found += requirement_misses(ctx, stage, res, "cmrr_db", RULE_ID,
                                    pol["severity"] if c.worst_db < target
                                    else pol["statistical_severity"])
        src = "declared" if declared is not None else "profile default"
        worst, which_worst = _worst_at(stage, res, c)
        if which_worst != "worst-case":
            nums = "at DC: " + nums
        data["judged_at_hz"] = stage.intent.cmrr_at_hz if which_worst != "worst-case" else None
        if worst < target:
            sev, which, value = pol["severity"], which_worst, worst
        elif c.statistical_db is not None and c.statistical_db < target:
            sev, which, value = pol["statistical_severity"], "statistical", c.statistical_db
        else:
            if pair:        # met by the pair: what the stage it feeds must add is the news
                # a composite front end's figure is its first stage's alone: the front end
                # meets nothing until its second stage is known
                said = ("the first stage's CMRR {} leaves the {} minimum {} to the second stage"
                        if stage.kind == "composite" else "CMRR {} meets the {} minimum {}")
                found.append(finding(ctx, RULE_ID, pol["numbers_severity"],
                                     f"{stage.kind} stage {stage.id}: "
                                     + said.format(nums, src, db(target)) + pair,
                                     stage=stage, data=data))
            continue
        msg = (f"{stage.kind} stage {stage.id}: {which} CMRR {db(value)} is below the {src} minimum "
               f"{db(target)} by {db(target - value)} ({nums})")
        if contrib_txt:
            msg += f"; contributors: {contrib_txt}"
        msg += pair
        fix = _fix(stage, c, target, g, g1)
        found.append(finding(ctx, RULE_ID, sev, msg, stage=stage, fix=fix, data=data))
    return found


def _pair_text(stage, res) -> str:
    """For a differential-output stage (in-amp input pair), what its CMRR means and, with a
    Min CMRR, what the stage it feeds needs (docs/engineering.md sec. 3a); '' otherwise."""
    d = getattr(res, "differential_output", None)
    if not d:
        return ""
    out, out_n = stage.circuit.ports["out"], stage.circuit.ports["out_n"]
    fed = (f"the integrated second stage {stage.roles['second_stage']}"
           if stage.kind == "composite" and "second_stage" in stage.roles else "the stage they feed")
    text = (f"; this is the CMRR of the differential output {out} - {out_n}: both outputs carry "
            f"the input common mode at gain {fmt.number(d['output_cm_gain'])}, so {fed} "
            f"sets the chain's CMRR (about {fmt.number(res.gain.nominal)} x its own)")
    need = d.get("next_stage_cmrr_db")
    if need is not None and math.isfinite(need):
        text += f"; for the minimum, that stage needs a CMRR of at least {db(need)}"
    return text


def _worst_at(stage, res, c) -> tuple[float, str]:
    """The worst-case CMRR the minimum is judged against: at the declared CMRR At frequency
    (the analysis's sweep, filter and op-amp bandwidth included), else at DC."""
    at = stage.intent.cmrr_at_hz
    sweep = getattr(res, "cmrr_sweep", None) or {}
    if not at or sweep.get("at_hz") != at:
        return c.worst_db, "worst-case"
    v = sweep.get("at_worst_db")
    return (math.inf if v is None else v), f"worst-case (at {fmt.hertz(at)})"


def _fix(stage, c, target, g, g1) -> str:
    if c.nominal_db < target:
        # The nominal figure includes the REF source: name it when it, not the ratios, is what
        # limits the stage as drawn.
        ref_terms = {k: v for k, v in c.contributors.items() if _is_ref_term(k) and v is not None}
        if ref_terms and min(ref_terms.values()) < c.nominal_db + 1.0:
            return (f"the REF source as drawn already limits the CMRR to {db(c.nominal_db)}: "
                    f"drive REF from a low-impedance buffer first (see ref-impedance), then "
                    f"check the tolerances")
        return (f"the values as drawn already limit the CMRR to {db(c.nominal_db)}: make the "
                f"resistor ratios equal first (see ratio-mismatch), then check the tolerances")
    others = {k: v for k, v in c.contributors.items() if not _is_resistor_term(k, stage)}
    need = needed_resistor_cmrr(target, list(others.values()))
    if need is None:
        worst = min(others, key=others.get)
        if others[worst] < target:
            return (f"{worst} alone allows only {db(others[worst])}, below {db(target)}: resistor "
                    f"matching cannot meet the minimum; improve {worst} first"
                    + (" (buffer REF)" if _is_ref_term(worst) else ""))
        together = -20.0 * math.log10(sum(10.0 ** (-v / 20.0) for v in others.values()))
        return (f"{', '.join(others)} together allow only {db(together)}, below {db(target)}: "
                f"resistor matching cannot meet the minimum; improve {worst} first")
    if stage.kind == "two-opamp":
        return (f"the four ratio resistors must reach {db(20 * math.log10(need))} of matching: use "
                f"tighter resistors or a matched network for them")
    if g is None or stage.kind.startswith("integrated"):
        return (f"the part's internal matching sets this CMRR: choose a part (or grade) whose "
                f"CMRR reaches {db(20 * math.log10(need))} at this gain")
    t, m = tolerance_for(need, g, g1)
    rs = diff_resistors(stage)
    names = "/".join(r.name for r in rs) if rs else "the difference-section resistors"
    hint = (f"use {pct(t, 2)} (or tighter) resistors for {names}, or a matched network with "
            f"ratio tolerance {pct(m, 2)}")
    if stage.kind == "difference":
        hint += ", or move to an in-amp with first-stage gain"
    return hint
