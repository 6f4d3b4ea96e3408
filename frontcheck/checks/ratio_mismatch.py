"""ratio-mismatch: the two resistor ratios of a difference section are not equal as drawn.

What it checks
    In a difference amplifier (and in the output stage of a three-op-amp in-amp) the
    inverting-side ratio R2/R1 and the non-inverting-side ratio R4/R3 must be equal; in a
    two-op-amp in-amp A1's ratio R2/R1 must equal A2's R3/R4. The rule compares the nominal
    ratios and sets their relative difference against the tolerance band (the sum of the four
    resistor tolerances, or the ratio tolerance of a matched network).

Why it matters
    The common-mode gain is Acm = (R1 R4 - R2 R3) / [R1 (R3 + R4)]: it vanishes only when the
    ratios are equal. A relative ratio error eps limits the CMRR to about (1 + G)/|eps|, so a
    0.1 % nominal mismatch at G = 1 caps the CMRR near 66 dB before any part tolerance is
    counted. A mismatch larger than the whole tolerance band cannot be a chance of the parts:
    it is a wrong value on the schematic.

What good looks like
    R2/R1 = R4/R3 exactly as drawn (usually R1 = R3 and R2 = R4), so that only tolerances
    limit the CMRR.

How to fix
    Change one resistor so that the ratios agree. The finding names the resistor and the
    nearest E96 (else E192) value that restores the ratio, and the ratio error that remains.

Severity
    ``severity`` when the nominal difference exceeds the tolerance band (a definite defect),
    ``within_band_severity`` when it is smaller than the band but above ``min_mismatch``.

Example
    Fails: a gain-of-10 difference amplifier whose R4 is drawn 10 % high.
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 110k 0.1%
        U1 opamp P N OUT +5V -5V
        J1 connector IN_P IN_N GND
    Passes with:
        R4 P GND 100k 0.1%

Source
    A. S. Sedra, K. C. Smith, Microelectronic Circuits, 6th ed., Eq. 2.19 (difference amplifier
    Ad and Acm); S. Franco, Design with Operational Amplifiers and Analog Integrated Circuits,
    4th ed., the section on the difference amplifier (CMRR about (1 + G)/eps). Two-op-amp in-amp
    matching condition: C. Kitchin, L. Counts, A Designer's Guide to Instrumentation Amplifiers,
    3rd ed., the chapter on two-op-amp in-amps. Preferred values: IEC 60063:2015.
"""

from __future__ import annotations

import math

from .. import formatting as fmt
from .. import preferred_values
from .located_finding import finding
from .message_numbers import db, ohms, pct
from .stage_roles import diff_resistors
from .params import number, series, severity

RULE_ID = "ratio-mismatch"
SUMMARY = "Difference-section ratios R2/R1 and R4/R3 differ as drawn"
PARAMETERS = {
    "severity": severity("severity when the nominal ratio difference exceeds the tolerance band"),
    "within_band_severity": severity("severity when it is within the band but above min_mismatch",
                                     "warning"),
    "min_mismatch": number(1e-4, "relative ratio difference below which the ratios count as equal",
                           "fraction", maximum=1.0),
    "series": series(["E96", "E192"], "E-series tried in order for the replacement value"),
}


def ratio_tolerance(a, b) -> float:
    """Worst-case relative tolerance of the ratio b/a: the network's ratio (match) tolerance
    when both belong to one matched group, else the sum of the two tolerances."""
    if a.match_group and a.match_group == b.match_group and a.match_tol is not None:
        return float(a.match_tol.value)
    return float(a.tol.value) + float(b.tol.value)


def _diff_gain(r1, r2, r3, r4) -> float:
    # Ad = [R2(R3+R4) + R4(R1+R2)] / [2 R1 (R3+R4)]  (docs/engineering.md sec. 1, Sedra & Smith 6th
    # ed.)
    return (r2 * (r3 + r4) + r4 * (r1 + r2)) / (2.0 * r1 * (r3 + r4))


# Which ratios must agree, per topology: ((top, bottom), (top, bottom)) in role names.
# Difference amp and stage 2 of an in-amp: R2/R1 = R4/R3 (docs/engineering.md sec. 1). Two-op-amp
# in-amp: R2/R1 = R3/R4 (frontcheck.recognise.two_opamp names; Kitchin & Counts, *A Designer's
# Guide to Instrumentation Amplifiers*, 3rd ed., ch. 2 [from memory]).
_PAIRS = {"two-opamp": (("R2", "R1"), ("R3", "R4"))}
_DEFAULT_PAIRS = (("R2", "R1"), ("R4", "R3"))
# Which resistor to change first when several restore the ratio equally well: the ones that
# leave the gain-setting ratio alone.
_ORDER = {"two-opamp": ("R1", "R2", "R3", "R4")}
_DEFAULT_ORDER = ("R4", "R3", "R2", "R1")
_POSITIONS = {
    "two-opamp": {"R1": "A1 resistor to REF", "R2": "A1 feedback resistor",
                  "R3": "A2 input resistor", "R4": "A2 feedback resistor"},
}
_DEFAULT_POSITIONS = {"R1": "inverting input resistor", "R2": "feedback resistor",
                      "R3": "non-inverting input resistor", "R4": "resistor to REF"}
_SIDES = {"two-opamp": ("A1 ratio", "A2 ratio")}
_DEFAULT_SIDES = ("inverting ratio", "non-inverting ratio")


def ratio_pairs(kind: str):
    return _PAIRS.get(kind, _DEFAULT_PAIRS)


def suggestions(vals: dict[str, float], names: dict[str, str], series: list[str],
                target_gain: float | None = None, min_mismatch: float = 0.0,
                kind: str = "difference"):
    """Candidate single-resistor changes that make the two ratios of ``kind`` equal, best first.

    Each is (role, element name, old ohms, new ohms, series name, residual |ln ratio|).
    Preference: smallest residual, then (for a difference amplifier with a target) gain
    closest to the target, then the topology's order (resistors that leave the gain alone).
    """
    (at, ab), (bt, bb) = ratio_pairs(kind)

    def ratios(v):
        return v[at] / v[ab], v[bt] / v[bb]

    a, b = ratios(vals)
    need = {at: b * vals[ab], ab: vals[at] / b, bt: a * vals[bb], bb: vals[bt] / a}
    out = []
    for order, rl in enumerate(_ORDER.get(kind, _DEFAULT_ORDER)):
        chosen = None
        for s in series:
            v = preferred_values.nearest(need[rl], s)
            trial = dict(vals, **{rl: v})
            ta, tb = ratios(trial)
            resid = abs(math.log(ta / tb))
            chosen = (v, s, resid, trial)
            if resid <= max(min_mismatch, 1e-9):
                break
        v, s, resid, trial = chosen
        gain_miss = 0.0
        if target_gain and kind == "difference":
            gain_miss = abs(_diff_gain(*(trial[k] for k in ("R1", "R2", "R3", "R4"))) / target_gain - 1)
        key = (round(resid, 12), round(gain_miss, 9), order)
        out.append((key, (rl, names[rl], vals[rl], v, s, resid)))
    out.sort(key=lambda t: t[0])
    return [c for _, c in out]


def _elem(kind: str, name: str, rl: str) -> str:
    # opening '(' is closed by the caller after the value
    return f"{name} ({_POSITIONS.get(kind, _DEFAULT_POSITIONS)[rl]}, "


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = []
    for stage in ctx.stages:
        rs = diff_resistors(stage)
        if rs is None or any(r.internal for r in rs):
            continue   # integrated parts: ratio errors come from part data, not the drawing
        vals = dict(zip(("R1", "R2", "R3", "R4"), (float(r.ohms.value) for r in rs)))
        if not all(math.isfinite(v) and v > 0 for v in vals.values()):
            continue   # an unreadable value: recognition notes it and analysis refuses it
        by_role = dict(zip(("R1", "R2", "R3", "R4"), rs))
        names = {k: r.name for k, r in by_role.items()}
        (at, ab), (bt, bb) = ratio_pairs(stage.kind)
        inv, non = vals[at] / vals[ab], vals[bt] / vals[bb]
        mismatch = inv / non - 1.0              # signed relative ratio difference
        if abs(mismatch) <= pol["min_mismatch"]:
            continue
        band = (ratio_tolerance(by_role[ab], by_role[at])
                + ratio_tolerance(by_role[bb], by_role[bt]))
        beyond = abs(mismatch) > band
        sev = pol["severity"] if beyond else pol["within_band_severity"]
        res = ctx.result(stage.id)
        nominal_db = res.cmrr.nominal_db if res is not None else None
        where = "stage 2 of " if stage.kind in ("three-opamp", "integrated-inamp") else ""
        side_a, side_b = _SIDES.get(stage.kind, _DEFAULT_SIDES)
        msg = (f"{where}{stage.kind} stage {stage.id}: {side_a} {names[at]}/{names[ab]} = "
               f"{fmt.number(inv)} but {side_b} {names[bt]}/{names[bb]} = {fmt.number(non)}, "
               f"{pct(abs(mismatch))} apart, "
               + ("more than" if beyond else "within")
               + f" the {pct(band)} the tolerances allow")
        if nominal_db is not None:
            msg += f"; nominal CMRR {db(nominal_db)}"
        sugg = suggestions(vals, names, list(pol["series"]), stage.intent.target_gain,
                           pol["min_mismatch"], stage.kind)
        fix = ""
        if sugg:
            rl, name, old, new, s, resid = sugg[0]
            fix = (f"change {_elem(stage.kind, name, rl)}{ohms(old)}) to {ohms(new)} ({s}): the "
                   f"ratios then differ by {pct(math.exp(resid) - 1)}")
            alt = [c for c in sugg[1:] if c[5] <= resid + 1e-12]
            if alt:
                rl2, name2, old2, new2, s2, _ = alt[0]
                fix += f"; or change {_elem(stage.kind, name2, rl2)}{ohms(old2)}) to {ohms(new2)} ({s2})"
        found.append(finding(
            ctx, RULE_ID, sev, msg, stage=stage, at=sugg[0][1] if sugg else None, fix=fix,
            data={"ratio_inverting": inv, "ratio_noninverting": non,
                  "mismatch": mismatch, "band": band, "beyond_band": beyond,
                  "nominal_cmrr_db": nominal_db,
                  "suggestion": ({"element": sugg[0][1], "role": sugg[0][0], "ohms": sugg[0][3],
                                  "series": sugg[0][4]} if sugg else None)}))
    return found
