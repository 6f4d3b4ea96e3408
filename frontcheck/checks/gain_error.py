"""gain-error: the stage's gain against the declared target and tolerance.

What it checks
    The nominal differential gain, its exact worst-case spread over the resistor tolerances and
    its statistical spread (Monte Carlo percentiles) against ``Target Gain`` ± ``Gain Tol``
    declared for the stage (the profile's ``default_gain_tol`` when only a target is given).

Why it matters
    The gain error is a full-scale error of the measurement: every reading is off by it. A
    nominal miss comes from the chosen values (a gain resistor off the E-series grid, a
    three-op-amp in-amp's G = G2 (1 + (Rf1 + Rf2)/RG) computed with the wrong G2); a worst-case
    miss from tolerances too loose for the declared budget.

What good looks like
    The whole worst-case interval inside target ± tolerance.

How to fix
    Change the gain-setting resistor: RG of an in-amp (RG = (Rf1 + Rf2)/(G/G2 - 1)), or R2 and
    R4 together in a difference amplifier. The finding gives a single E96 or E192 value that
    lands the worst case inside the tolerance, else a two-resistor series or parallel pair,
    else says the tolerances themselves must tighten.

Severity
    ``severity`` when the nominal gain or the worst case is outside the tolerance (a declared
    target missed in the worst case); ``statistical_severity`` when only the statistical spread
    reaches outside; ``numbers_severity`` for the plain numbers when no target is declared.

Example
    Fails: the stage must have a gain of 12 ±1 % and is drawn with a gain of 10.
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 100k 0.1%
        U1 opamp P N OUT +5V -5V | Target Gain: 12 ±1%
        J1 connector IN_P IN_N GND
    Passes with:
        R2 N OUT 120k 0.1%
        R4 P GND 120k 0.1%

Source
    A. S. Sedra, K. C. Smith, Microelectronic Circuits, 6th ed., Eq. 2.19 (difference amplifier
    gain) and Example 2.17 (three-op-amp in-amp, G = (1 + 2 Rf/RG)(Rb/Ra)); two-op-amp in-amp G
    = 1 + R4/R3 + 2 R4/RG: C. Kitchin, L. Counts, A Designer's Guide to Instrumentation
    Amplifiers, 3rd ed., the chapter on two-op-amp in-amps. Preferred values: IEC 60063:2015.
"""

from __future__ import annotations

from .. import preferred_values
from .located_finding import finding, requirement_misses
from .message_numbers import eng, num, ohms, pct, pm
from .stage_roles import diff_resistors, role
from .params import flag, number, series, severity

RULE_ID = "gain-error"
SUMMARY = "Gain off the declared target, or its worst-case spread outside the tolerance"
PARAMETERS = {
    "severity": severity("severity when the nominal or worst-case gain is outside target ± "
                         "tolerance"),
    "statistical_severity": severity("severity when only the statistical spread reaches outside",
                                     "warning"),
    "numbers_severity": severity("severity of the plain numbers when no target is declared "
                                 "('off' to hide)", "info"),
    "default_gain_tol": number(0.01, "tolerance assumed when a target gain is declared without one",
                               "fraction", maximum=1.0),
    "series": series(["E96", "E192"], "E-series tried in order for the suggested resistor"),
    "combinations": flag(True, "also suggest two-resistor series/parallel combinations"),
}


def _half_width(spread) -> float:
    """Relative worst-case half-width of the gain around its nominal."""
    g = spread.nominal
    if spread.worst_min is None or spread.worst_max is None or g == 0:
        return 0.0
    return max(abs(spread.worst_max / g - 1.0), abs(spread.worst_min / g - 1.0))


def gain_setter(stage):
    """How the gain can be moved: a function ohms -> nominal gain, the element(s) to change,
    the current value and the value that gives a wanted gain. None when the topology has no
    single gain-setting resistor we can solve for.

    Returns (elements, current_ohms, gain_of(ohms), ohms_for(gain)).
    """
    rs = diff_resistors(stage)
    g2 = None if rs is None else float(rs[1].ohms.value) / float(rs[0].ohms.value)
    rf1, rf2, rg = role(stage, "RF1"), role(stage, "RF2"), role(stage, "RG")
    if rg is not None and not rg.internal and rf1 is not None and rf2 is not None:
        g2 = 1.0 if g2 is None else g2
        rsum = float(rf1.ohms.value) + float(rf2.ohms.value)
        # G = G2 (1 + (Rf1 + Rf2)/RG), Sedra & Smith 6th ed., Ex. 2.17 (in-amp)
        return ([rg.name], float(rg.ohms.value),
                lambda r: g2 * (1.0 + rsum / r),
                lambda g: rsum / (g / g2 - 1.0) if g / g2 > 1.0 else None)
    if stage.kind == "two-opamp" and rg is not None and not rg.internal and rs is not None:
        r3, r4 = float(rs[2].ohms.value), float(rs[3].ohms.value)
        # G = 1 + R4/R3 + 2 R4/RG (frontcheck.recognise.two_opamp; Kitchin & Counts, ch. 2 [from memory])
        return ([rg.name], float(rg.ohms.value),
                lambda r: 1.0 + r4 / r3 + 2.0 * r4 / r,
                lambda g: 2.0 * r4 / (g - 1.0 - r4 / r3) if g > 1.0 + r4 / r3 else None)
    if rs is not None and all(r.internal for r in rs) and role(stage, "RG") is None:
        return None
    if stage.kind == "difference" and rs is not None and not any(r.internal for r in rs):
        r1, r2, r3, r4 = (float(r.ohms.value) for r in rs)
        if abs(r1 / r3 - 1) < 1e-9 and abs(r2 / r4 - 1) < 1e-9:
            # matched: G = R2/R1, change R2 and R4 together to keep the ratios equal
            return ([rs[1].name, rs[3].name], r2, lambda r: r / r1, lambda g: g * r1)
    return None


def ratio_mismatch_effect(stage) -> tuple[float, str] | None:
    """Relative change of an in-amp's gain caused by unequal stage-2 ratios, and the ratios
    as a phrase; None when the stage has no such ratio pair.

    The gain formula uses G2 = R2/R1. With R4/R3 different, the difference stage's
    differential gain is the mean of its two paths, (R4/(R3+R4))(1 + R2/R1) and R2/R1
    (the difference amplifier's output, Sedra & Smith, 6th ed., Eq. 2.19 context, with
    v1, v2 = Vcm -+ Vd/2)."""
    rs = diff_resistors(stage)
    if stage.kind != "three-opamp" or rs is None:
        return None
    r1, r2, r3, r4 = (float(r.ohms.value) for r in rs)
    g2 = r2 / r1
    g2_drawn = (r4 / (r3 + r4) * (1.0 + g2) + g2) / 2.0
    phrase = (f"{rs[3].name}/{rs[2].name} = {num(r4 / r3, 4)} against "
              f"{rs[1].name}/{rs[0].name} = {num(g2, 4)}")
    return g2_drawn / g2 - 1.0, phrase


def _cause_elsewhere(stage, formula_gain: float, nominal: float, elems) -> str:
    """Fix hint when the analysed gain is off the gain-resistor formula by more than the
    tolerance: names the cause that dominates, with its share of the difference."""
    total = nominal / formula_gain - 1.0
    mismatch = ratio_mismatch_effect(stage)
    head = (f"the gain-resistor formula gives {num(formula_gain)} with the drawn values but the "
            f"stage's nominal gain is {num(nominal)} ({pct(total)})")
    rest = total
    if mismatch is not None and mismatch[0] != 0.0:
        share, phrase = mismatch
        rest = (1.0 + total) / (1.0 + share) - 1.0
        if abs(share) >= abs(rest):
            return (f"{head}: the unequal stage-2 ratios ({phrase}) account for {pct(share)} of "
                    f"it, the rest of the circuit for {pct(rest)}; make the ratios equal first "
                    f"(see ratio-mismatch) rather than trimming {' and '.join(elems)}")
        head += f"; unequal stage-2 ratios account for {pct(share)}"
    return (f"{head}: {pct(rest)} comes from elsewhere in the circuit (REF source resistance, "
            f"loading, op-amp gain); fix that first rather than trimming {' and '.join(elems)}")


def suggest(stage, target: float, tol: float, half: float, pol,
            nominal: float | None = None) -> str:
    """The fix hint. ``nominal`` is the analysed nominal gain: when it differs from the
    topology's gain formula at the drawn value (REF source resistance, finite open-loop gain,
    loading), the formula is scaled to agree with it, and an effect larger than the tolerance
    is named as the cause instead of being trimmed away with the gain resistor."""
    gs = gain_setter(stage)
    if gs is None:
        if stage.kind == "composite":
            return (f"set the first-stage gain with {stage.roles.get('gain_resistor', 'RG')} "
                    "(G1 = 1 + (Rf1 + Rf2)/RG) or the second stage's gain with "
                    f"{stage.roles.get('second_stage_RG', 'its gain resistor')}")
        if stage.kind.startswith("integrated"):
            return ("the gain is set inside the part: choose a part (or gain option) with the "
                    "target gain, or add gain in another stage")
        return "no single gain-setting resistor in this topology: adjust the ratio resistors"
    elems, cur, formula, ohms_of_gain = gs
    k = 1.0 if not nominal else nominal / formula(cur)
    if abs(k - 1.0) > tol:
        return _cause_elsewhere(stage, formula(cur), nominal, elems)

    def gain_of(r):
        return k * formula(r)

    def ohms_for(g):
        return ohms_of_gain(g / k)

    if half >= tol:
        return (f"the tolerances alone spread the gain by {pm(half)}, more than the {pm(tol)} "
                f"allowed: use tighter resistors before changing values")
    need = ohms_for(target)
    if need is None or need <= 0:
        return f"the target gain {num(target)} is below what this topology can reach"
    what = " and ".join(elems)
    cands = []
    for s in pol["series"]:
        c = preferred_values.best_single(need, s)
        cands.append((c, s))
    if pol.get("combinations", True):
        for s in pol["series"]:
            cands.append((preferred_values.best_pair(need, s), s))
    for c, s in cands:
        miss = abs(gain_of(c.ohms) / target - 1.0)
        if miss + half <= tol:
            if c.how == "single":
                return (f"set {what} ({ohms(cur)}) to {ohms(c.ohms)} ({s}): nominal gain "
                        f"{num(gain_of(c.ohms))}, worst case within {pm(miss + half)}")
            parts = " + ".join(ohms(p) for p in c.parts) if c.how == "series" else \
                " || ".join(ohms(p) for p in c.parts)
            return (f"make {what} ({ohms(cur)}) from {parts} in {c.how} ({s}) = {eng(c.ohms, 'Ω', 4)}: "
                    f"nominal gain {num(gain_of(c.ohms))}, worst case within {pm(miss + half)}")
    return (f"{what} would need {ohms(need)}, and no {'/'.join(pol['series'])} value or pair lands "
            f"the worst case inside {pm(tol)}: use tighter resistors or a trimmed value")


def _composite_text(stage, chain: dict) -> str:
    """A composite front end's gains in words: G1 with its worst case, G2, and the total."""
    first, second = chain["first_stage"], chain["second_stage"]
    g1 = first["gain"]
    rf = " + ".join(stage.roles[k] for k in ("feedback_p", "feedback_n") if k in stage.roles)
    rg = first.get("gain_resistor")
    formula = f" = 1 + ({rf})/{rg}" if rf and rg else ""
    text = (f"first-stage gain G1{formula} = {num(g1['nominal'])}, worst case "
            f"{num(g1['worst_min'])} to {num(g1['worst_max'])}; second stage {second['reference']}: ")
    total = chain["total_gain"]
    if total is None:
        return text + "G2 needs part data, so the total gain G1 x G2 is not stated"
    return (text + f"G2 = {num(second['gain'])} (part data); total gain G1 x G2 = "
            f"{num(total['nominal'])}, worst case {num(total['worst_min'])} to "
            f"{num(total['worst_max'])}")


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = []
    for stage, res in ctx.analysed():
        sp = res.gain
        target = stage.intent.target_gain
        data = {"nominal": sp.nominal, "worst_min": sp.worst_min, "worst_max": sp.worst_max,
                "p_low": sp.p_low, "p_high": sp.p_high, "target": target}
        worst = ""
        if sp.worst_min is not None and sp.worst_max is not None:
            worst = f", worst case {num(sp.worst_min)} to {num(sp.worst_max)}"
        chain = getattr(res, "composite", None)
        said = f"gain {num(sp.nominal)}{worst}"
        if chain is not None:
            said = _composite_text(stage, chain)
            data["composite"] = chain
        if chain is not None and chain["total_gain"] is None:
            # only G1 is known: a Target Gain of the whole front end cannot be checked
            ic = chain["second_stage"]["reference"]
            tail = ("no Target Gain declared" if target is None else
                    f"Target Gain {num(target)} is for the whole front end and is not checked "
                    f"until {ic} has part data")
            found.append(finding(ctx, RULE_ID, pol["numbers_severity"],
                                 f"{stage.kind} stage {stage.id}: {said}; {tail}", stage=stage,
                                 data=data, fix=f"give {ic}'s gain equation in the project's "
                                 "part file to check the total gain"))
            continue
        if target is None:
            found.append(finding(ctx, RULE_ID, pol["numbers_severity"],
                                 f"{stage.kind} stage {stage.id}: {said}; "
                                 f"no Target Gain declared", stage=stage, data=data,
                                 fix="declare Target Gain (and Gain Tol) on the amplifier symbol"))
            continue
        tol = stage.intent.gain_tol
        tol_src = "declared"
        if tol is None:
            tol, tol_src = float(pol["default_gain_tol"]), "assumed (profile default)"
        data["tol"] = tol
        lo, hi = target * (1 - tol), target * (1 + tol)
        worst_out = sp.worst_min is not None and (sp.worst_min < lo or sp.worst_max > hi)
        found += requirement_misses(ctx, stage, res, "aol", RULE_ID,
                                    pol["severity"] if worst_out else pol["statistical_severity"])
        nominal_err = sp.nominal / target - 1.0
        half = _half_width(sp)
        band = f"target {num(target)} {pm(tol)} ({tol_src})"
        if abs(nominal_err) > tol:
            sev = pol["severity"]
            msg = (f"{stage.kind} stage {stage.id}: nominal gain {num(sp.nominal)} is "
                   f"{pct(nominal_err)} off the {band}{worst}")
        elif sp.worst_min is not None and (sp.worst_min < lo or sp.worst_max > hi):
            sev = pol["severity"]
            over = max(lo - sp.worst_min, sp.worst_max - hi) / target
            msg = (f"{stage.kind} stage {stage.id}: worst-case gain {num(sp.worst_min)} to "
                   f"{num(sp.worst_max)} reaches {pct(over)} outside the {band} "
                   f"(nominal {num(sp.nominal)})")
        elif sp.p_low is not None and sp.p_high is not None and (sp.p_low < lo or sp.p_high > hi):
            sev = pol["statistical_severity"]
            msg = (f"{stage.kind} stage {stage.id}: statistical gain {num(sp.p_low)} to "
                   f"{num(sp.p_high)} reaches outside the {band} (nominal {num(sp.nominal)}{worst})")
        else:
            continue
        data["nominal_error"] = nominal_err
        gs = gain_setter(stage)
        found.append(finding(ctx, RULE_ID, sev, msg, stage=stage,
                             at=gs[0][0] if gs else None,
                             fix=suggest(stage, target, tol, half, pol, sp.nominal), data=data))
    return found
