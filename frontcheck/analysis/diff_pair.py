"""What a differential-output stage (an in-amp input pair, kind ``diff-output``) adds to the
figures every stage has: the output common mode it hands on, and what the stage it feeds must
reject (docs/engineering.md sec. 3a).

Gain and CMRR are those of the differential output out - out_n, solved like any stage
(:mod:`frontcheck.analysis.mna` reads out - out_n when the SubCircuit has an 'out_n' port):
G1 = 1 + (Rf1 + Rf2)/RG, and a CMRR that resistor tolerances cannot limit (with ideal op-amps
the common mode never reaches out - out_n), only the op-amps' own CMRR. Both outputs carry the
input common mode at gain 1, so the CMRR of the chain is set downstream:

    1/CMRR_chain = 1/CMRR_pair + 1/(G1 CMRR_next)         (worst case, magnitudes added)

With a declared Min CMRR the next stage therefore needs
CMRR_next >= 1 / (G1 (1/CMRR_min - 1/CMRR_pair)), taken at the lowest G1 of the tolerance
corners.

References
----------
A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 6th ed., Example 2.17 and Problem 2.75
(the first stage passes common mode at unity; in-amp CMRR = G1 x CMRR of the second stage);
R. Pallas-Areny, J. G. Webster, "Common mode rejection ratio in differential amplifiers",
IEEE Trans. Instrum. Meas. 40(4), 1991 (contributions added as 1/CMRR, worst case in magnitude).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from frontcheck import formatting
from frontcheck.analysis import mna, tolerance

__all__ = ["PairFigures", "pair_figures", "next_stage_cmrr_db"]


@dataclass
class PairFigures:
    """Output common mode of a differential-output stage, Vocm = (out + out_n)/2.

    cm_gain : dVocm/dVcm, nominal (1 with ideal op-amps, whatever the resistors)
    dm_to_cm : (lowest, highest) dVocm/dVd over the tolerance corners ((Rf1 - Rf2)/(2 RG)
        with ideal op-amps: unequal feedback resistors turn a little signal into common mode)
    next_cmrr_db : CMRR the stage fed must reach (referred to its own input) for the chain to
        meet the declared Min CMRR; None without one, inf when no CMRR is needed there,
        NaN when the pair alone already misses it
    """

    cm_gain: float
    dm_to_cm: tuple[float, float]
    next_cmrr_db: float | None = None


def next_stage_cmrr_db(min_cmrr_db: float, pair_cmrr_db: float, g1: float) -> float:
    """CMRR (dB) the stage fed by a differential-output pair of gain ``g1`` and CMRR
    ``pair_cmrr_db`` needs so that the chain reaches ``min_cmrr_db``; NaN when the pair alone
    misses it (module docstring; Sedra & Smith 6th ed., Problem 2.75)."""
    rest = 10.0 ** (-min_cmrr_db / 20.0) - (10.0 ** (-pair_cmrr_db / 20.0)
                                            if math.isfinite(pair_cmrr_db) else 0.0)
    if rest <= 0:
        return math.nan
    return -20.0 * math.log10(abs(g1) * rest)


def pair_figures(ctx: tolerance.Context, opt: tolerance.Options, gain_min: float,
                 cmrr_worst_db: float, min_cmrr_db: float | None) -> PairFigures:
    """Output common mode over the tolerance corners (all corners up to ``opt.max_bits``
    variables, else nominal and the all-high / all-low corners) and, with ``min_cmrr_db``,
    the next stage's CMRR requirement."""
    sub = ctx.sub
    k = len(ctx.var.names)
    xs = tolerance.corner_matrix(k) if k <= opt.max_bits else np.vstack(
        [np.zeros((1, k)), np.ones((1, k)), -np.ones((1, k))])
    xs = np.vstack([np.zeros((1, k)), xs])
    R = ctx.var.values(xs)
    X = mna.solve_dc(ctx.topo, R, np.broadcast_to(ctx.ainv, (R.shape[0], ctx.ainv.size)))
    vocm = 0.5 * (ctx.topo.coefficients(X, sub.ports["out"])
                  + ctx.topo.coefficients(X, sub.ports["out_n"]))
    need = None
    if min_cmrr_db is not None:
        need = next_stage_cmrr_db(float(min_cmrr_db), cmrr_worst_db, gain_min)
    return PairFigures(float(vocm[0, mna.VCM]),
                       (float(np.min(vocm[:, mna.VD])), float(np.max(vocm[:, mna.VD]))), need)


def notes(sub, figures: PairFigures, gain_nominal: float) -> list[str]:
    """What the figures of a differential-output stage mean, in words."""
    out, out_n = sub.ports["out"], sub.ports["out_n"]
    lo, hi = figures.dm_to_cm
    text = (f"differential output {out} - {out_n}: gain and CMRR are of that difference; the "
            f"input common mode reaches both outputs at gain {formatting.number(figures.cm_gain)} "
            f"(signal to output common mode {formatting.span(lo, hi)} V/V over the tolerance "
            f"corners), so the chain's CMRR is set by the stage they feed: about "
            f"{formatting.number(gain_nominal)} x its own (docs/engineering.md sec. 3a)")
    res = [text]
    need = figures.next_cmrr_db
    if need is not None and math.isnan(need):
        res.append("the pair's own CMRR already misses the declared Min CMRR: no stage it feeds "
                   "can make up for it")
    elif need is not None:
        res.append(f"for the declared Min CMRR the stage fed by {out}/{out_n} needs a CMRR of at "
                   f"least {formatting.db(need)} (referred to its own input)")
    return res
