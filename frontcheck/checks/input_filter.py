"""input-filter: an RC filter at a stage's inputs whose legs mismatch or whose Cd is small.

What it checks
    A differential RFI filter ahead of a stage: a series resistor R in each leg, a capacitor Cc
    from each leg to ground, and a capacitor Cd across the two legs at the stage's input nets.
    The rule reports the differential and common-mode corner frequencies, f_DM = 1/(2 pi R
    (2 Cd + Cc)) and f_CM = 1/(2 pi R Cc), and the worst-case conversion of common-mode voltage
    into a differential one at the stated frequency (the stage's ``CMRR At`` when declared,
    else ``at_hz``) with the parts' tolerances.
    It flags legs whose R or Cc differ, a missing Cd, and Cd smaller than ``min_cd_ratio`` x Cc.
    The numbers are those of the filter alone, or, when recognition placed the filter inside
    the stage, the analysis's numbers with the amplifier's input resistance loading it.

Why it matters
    Each leg is a low-pass R Cc. When the two time constants differ, a common-mode signal
    reaches the two inputs with different amplitude and phase: Vd/Vcm = 1/(1 + jw Ra Ca) -
    1/(1 + jw Rb Cb). The filter then converts common mode (mains, RF) into a differential
    signal the amplifier cannot reject, at frequencies where the stage's CMRR is still high.
    A Cd much larger than Cc ties the two legs together and makes the mismatch matter less.

What good looks like
    Identical legs (same R, same Cc), Cd >= 10 Cc, f_DM below the signal band's upper
    neighbour and f_CM well above it.

How to fix
    Use the same R and Cc on both legs (tight-tolerance Cc helps), and make Cd at least ten
    times Cc.

Severity
    ``severity`` for mismatched legs, a missing Cd, or a small Cd; ``numbers_severity`` for the
    numbers of a filter that passes.

Example
    Fails: the two legs of a three-op-amp in-amp's RFI filter have 1 nF and 4.7 nF to ground
    and no capacitor across.
        U1 opamp IN_P O1 O1 +5V -5V
        U2 opamp IN_N O2 O2 +5V -5V
        R1 O2 N 10k 0.1%
        R2 N OUT 10k 0.1%
        R3 O1 P 10k 0.1%
        R4 P GND 10k 0.1%
        U3 opamp P N OUT +5V -5V
        R5 SRC_P IN_P 4.02k 1%
        R6 SRC_N IN_N 4.02k 1%
        C1 IN_P GND 1n 5%
        C2 IN_N GND 4.7n 5%
        R7 SRC_P GND 1M 1%
        R8 SRC_N GND 1M 1%
        J1 connector SRC_P SRC_N GND
    Passes with:
        C2 IN_N GND 1n 5%
        C3 IN_P IN_N 10n 5%

Source
    Corner frequencies and the common-mode to differential conversion of the series-R, Cc, Cd
    filter: derived by frontcheck and checked against ngspice AC analysis; the same filter is
    discussed in C. Kitchin, L. Counts, A Designer's Guide to Instrumentation Amplifiers, 3rd
    ed., the chapter on RFI. Cd >= 10 Cc is a rule of thumb (common practice).
"""

from __future__ import annotations

import math

from .. import formatting as fmt
from .. import preferred_values
from .located_finding import finding
from .message_numbers import eng, ohms
from .params import number, severity

RULE_ID = "input-filter"
SUMMARY = "Input RC filter: mismatched legs or Cd small against Cc"
PARAMETERS = {
    "severity": severity("severity of mismatched legs, a missing Cd or Cd < min_cd_ratio x Cc"),
    "min_cd_ratio": number(10.0, "Cd must be at least this many times Cc", "times"),
    "max_leg_mismatch": number(1e-6, "relative difference of R or Cc between the legs counted as a "
                               "mismatch", "fraction"),
    "at_hz": number(1000.0, "frequency at which the CM-to-differential conversion is stated", "Hz",
                    minimum=0.001),
    "assumed_r_tol": number(0.01, "tolerance of a filter resistor whose part gives none",
                            "fraction", maximum=1.0),
    "assumed_c_tol": number(0.05, "tolerance of a filter capacitor whose part gives none",
                            "fraction", maximum=1.0),
    "numbers_severity": severity("severity of the numbers of a filter that passes ('off' to hide)",
                                 "info"),
}


def check(ctx) -> list:
    # The filter's parts and numbers come from frontcheck.analysis.input_rc_filter, imported
    # here rather than at the top: `frontcheck rules` and `explain` load every rule module and
    # must not load numpy for it.
    from ..analysis import input_rc_filter as rc

    pol = ctx.policy(RULE_ID)
    pins = rc.part_nets(ctx.netlist) if ctx.netlist is not None else {}
    by_net = rc.parts_by_net(pins)
    found = []
    for stage in ctx.stages:
        res = ctx.result(stage.id)
        analysed = res.input_filter if res is not None else None
        located = rc.find_filter(ctx.netlist, stage, analysed, pol["assumed_r_tol"],
                                 pol["assumed_c_tol"], pins, by_net)
        if located is None:
            continue
        f, inside = located
        rp, rn = f["Rp"][0], f["Rn"][0]
        cp, cn, cd = f["Ccp"][0], f["Ccn"][0], f["Cd"][0]
        refs = sorted(r for v in f.values() for r in v[2])
        issues, fixes = [], []
        mm = pol["max_leg_mismatch"]

        def differ(a: float, b: float) -> bool:
            return (a == 0) != (b == 0) or (a > 0 and abs(a / b - 1.0) > mm)

        if differ(rp, rn):
            issues.append(f"series resistors differ ({ohms(rp) if rp else 'none'} on +, "
                          f"{ohms(rn) if rn else 'none'} on -)")
            fixes.append("use the same series resistor in both legs")
        if differ(cp, cn):
            issues.append(f"leg capacitors Cc differ ({eng(cp, 'F') if cp else 'none'} on +, "
                          f"{eng(cn, 'F') if cn else 'none'} on -)")
            fixes.append("use the same Cc in both legs")
        cc = max(cp, cn)
        if cc > 0 and cd == 0:
            issues.append("no Cd across the legs")
        elif cc > 0 and cd < pol["min_cd_ratio"] * cc:
            issues.append(f"Cd = {eng(cd, 'F')} is only {fmt.number(cd / cc, 2)} x Cc "
                          f"(rule of thumb at least {fmt.number(pol['min_cd_ratio'])} x)")
        if cc > 0 and cd < pol["min_cd_ratio"] * cc:
            want = preferred_values.neighbours(pol["min_cd_ratio"] * cc, "E6")[1]
            fixes.append(f"make Cd at least {eng(want, 'F')} (at least {fmt.number(pol['min_cd_ratio'])} x Cc)")
        at = float(stage.intent.cmrr_at_hz or pol["at_hz"])   # where the stage's CMRR is judged
        f_dm, f_cm, conv, basis = rc.filter_numbers(f, at, analysed if inside else None)
        conv_db = -20 * math.log10(conv) if conv > 0 else math.inf
        numbers = (f"f_DM = {eng(f_dm, 'Hz')}" + (f", f_CM = {eng(f_cm, 'Hz')}" if f_cm else "")
                   + f" ({basis})"
                   + f"; worst-case CM-to-differential conversion {fmt.number(conv, 3)} ({fmt.db(conv_db)}) "
                   f"at {eng(at, 'Hz')} with the parts' tolerances")
        assumed = [k for k, v in f.items() if v[3] and v[2]]
        if assumed:
            numbers += (f" (tolerance assumed for {', '.join(r for k in assumed for r in f[k][2])}: "
                        f"R {fmt.percent(pol['assumed_r_tol'])}, C {fmt.percent(pol['assumed_c_tol'])})")
        if issues:
            sev = pol["severity"]
            msg = f"input filter of {stage.kind} stage {stage.id}: " + "; ".join(issues) + "; " + numbers
        else:
            sev = pol["numbers_severity"]
            msg = f"input filter of {stage.kind} stage {stage.id}: " + numbers
        at_ref = (f["Cd"][2] or f["Ccp"][2] or f["Rp"][2] or refs)[0]
        found.append(finding(
            ctx, RULE_ID, sev, msg, stage=stage, at=at_ref, references=refs,
            fix="; ".join(fixes),
            data={"r_p": rp, "r_n": rn, "cc_p": cp, "cc_n": cn, "cd": cd, "f_dm_hz": f_dm,
                  "f_cm_hz": f_cm, "at_hz": at, "cm_to_dm": conv, "issues": issues,
                  "basis": basis}))
    return found
