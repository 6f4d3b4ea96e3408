"""Drift of one stage over a temperature range: resistor temperature coefficients as gain and
CMRR drift, and op-amp offset drift.

Reference temperature. Resistor tolerances and op-amp offsets are specified at 25 degC, and the
tolerance and offset terms of the budget are taken there; drift is the further change from
25 degC to the ends of the declared range (common practice for error budgets). The range need
not contain 25 degC.

Resistor variables. A resistor with temperature coefficient bound t (1/K) has R(T) = R0 (1 +
x t dT), x in [-1, 1] (the actual coefficient of the part is anywhere within +-t). Resistors
of one network (a ``match_group``) with a tracking bound m share a common variable with the
network's t and each has its own variable with m/2, so any two members' coefficients differ by
at most m. A resistor without a known coefficient is left out and reported as unknown: the
caller turns it into a requirement with the per-unit sensitivity this module returns.

Worst case. For each end of the range, Ad and Acm are monotone in each resistor (the same
argument as for tolerances), so their extremes lie on the 2^k corners of x; all corners are
solved in one batch. Above ``max_bits`` variables the first-order bound (sum of |sensitivity|)
is used. Statistical: the root-sum-square of the first-order sensitivities times each bound.

Formulas, sources and check values: docs/engineering.md sec. 2 and 11.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from frontcheck.analysis import mna
from frontcheck.circuit import SubCircuit

T_REF_C = 25.0


def ratio_drift(tcr_num: float, tcr_den: float, dt: float) -> float:
    """Fractional change of a ratio R_a / R_b when the two resistors move by their own
    temperature coefficients over dt kelvin: (1 + TCR_a dT) / (1 + TCR_b dT) - 1.

    To first order (TCR_a - TCR_b) dT.

    References
    ----------
    Linear temperature coefficient R(T) = R0 (1 + alpha (T - T0)), the definition used by
    resistor standards (IEC 60115-1 temperature coefficient of resistance).
    """
    return (1.0 + tcr_num * dt) / (1.0 + tcr_den * dt) - 1.0


@dataclass
class DriftResult:
    """Resistor drift of a stage over its range (fractions of the nominal gain, and CM gain)."""

    dt: tuple[float, float]            # kelvin from the reference temperature to each end
    gain_worst: float                  # max |Ad(T)/Ad(25 degC) - 1|
    gain_rss: float
    acm_worst: float                   # max |Acm(T) - Acm(25 degC)|, V/V at the output
    acm_rss: float
    ad: float                          # nominal differential gain
    unknown: list[str] = field(default_factory=list)    # resistors with no known coefficient
    gain_per_unknown: float = 0.0      # gain_worst per 1/K of the unknown resistors' bound
    acm_per_unknown: float = 0.0
    exhaustive: bool = True


def _interval(t) -> tuple[float, float] | None:
    """A coefficient bound t -> (-t, t); a (lo, hi) pair as given; None stays None."""
    if t is None:
        return None
    if isinstance(t, tuple):
        return float(t[0]), float(t[1])
    return -abs(float(t)), abs(float(t))


def _rows(sub: SubCircuit, tcr, tracking: Mapping[str, float]):
    """(A (k, n), mid (n,)): R = R0 (1 + mid dT) prod_v (1 + x_v A[v] dT), x in [-1, 1]."""
    n = len(sub.resistors)
    rows = []
    mid = np.zeros(n)
    groups: dict[str, list[int]] = {}
    for i, (r, t) in enumerate(zip(sub.resistors, tcr)):
        iv = _interval(t)
        if iv is None:
            continue
        mid[i] = 0.5 * (iv[0] + iv[1])
        half = 0.5 * (iv[1] - iv[0])
        if r.match_group and r.match_group in tracking:
            groups.setdefault(r.match_group, []).append(i)
        elif half > 0:
            row = np.zeros(n)
            row[i] = half
            rows.append(row)
    for g, members in groups.items():
        common = np.zeros(n)
        for i in members:
            iv = _interval(tcr[i])
            common[i] = 0.5 * (iv[1] - iv[0])
        if common.any():
            rows.append(common)
        for i in members:
            if tracking[g] > 0:
                row = np.zeros(n)
                row[i] = tracking[g] / 2.0
                rows.append(row)
    return (np.array(rows) if rows else np.zeros((0, n))), mid


def _gains(topo, R, ainv):
    X = mna.solve_dc(topo, R, ainv)
    g = mna.gains(topo, X)
    return g.ad, g.acm


def _spread(topo, r0, A, mid, dts, ainv, max_bits: int):
    """(worst |dAd/Ad|, rss, worst |dAcm|, rss, exhaustive) over the variables A around the
    mid-interval drift ``mid``, relative to the stage at the reference temperature."""
    ad0, acm0 = _gains(topo, r0[None, :], ainv)
    k = A.shape[0]
    gw = aw = gr = ar = 0.0
    exhaustive = k <= max_bits
    for dt in dts:
        if dt == 0:
            continue
        base = r0 * (1.0 + mid * dt)
        adm, acmm = _gains(topo, base[None, :], ainv)
        # first-order sensitivities: one variable at a time at +1
        one = base[None, :] * (1.0 + A * dt)
        ad1, acm1 = _gains(topo, one, ainv) if k else (adm[:0], acmm[:0])
        sg = (ad1 - adm[0]) / ad0[0]
        sa = acm1 - acmm[0]
        gr = max(gr, float(np.sqrt(np.sum(sg ** 2))))
        ar = max(ar, float(np.sqrt(np.sum(sa ** 2))))
        if exhaustive:
            x = np.array(np.meshgrid(*[[-1.0, 1.0]] * k, indexing="ij")).reshape(k, -1).T if k \
                else np.zeros((1, 0))
            R = base[None, :] * np.prod(1.0 + x[:, :, None] * A[None, :, :] * dt, axis=1)
            ad, acm = _gains(topo, R, ainv)
            gw = max(gw, float(np.max(np.abs(ad / ad0[0] - 1.0))))
            aw = max(aw, float(np.max(np.abs(acm - acm0[0]))))
        else:
            gw = max(gw, abs(float(adm[0] / ad0[0] - 1.0)) + float(np.sum(np.abs(sg))))
            aw = max(aw, abs(float(acmm[0] - acm0[0])) + float(np.sum(np.abs(sa))))
    return gw, gr, aw, ar, exhaustive


def resistor_drift(sub: SubCircuit, tcr: Sequence[float | None], temp_range_c: tuple[float, float],
                   tracking: Mapping[str, float] | None = None, t_ref_c: float = T_REF_C,
                   max_bits: int = 12) -> DriftResult:
    """Gain and common-mode gain drift of a stage from its resistors' temperature coefficients.

    Parameters
    ----------
    sub : SubCircuit
    tcr : sequence, one entry per resistor of ``sub``
        Temperature coefficient bound t, 1/K (25 ppm/K = 25e-6: anywhere in +-t), or a
        (lo, hi) pair when the part's coefficient is known to lie there (lo = hi for a
        known value); None = not known.
    temp_range_c : (float, float)
        Operating range, degC.
    tracking : mapping, optional
        match_group -> tracking bound (1/K) of a network's elements.
    t_ref_c : float
        Temperature at which tolerances are specified (25 degC).

    Returns
    -------
    DriftResult

    References
    ----------
    A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 6th ed., Problem 2.67 (resistor
    mismatch d_i to CMRR), with d_i = TCR_i dT; worst case on the corners as for tolerances.
    """
    tracking = dict(tracking or {})
    topo = mna.compile_circuit(sub)
    r0 = mna.nominal_values(sub)[0]
    ainv = mna.opamp_ainv(sub)
    dts = (temp_range_c[0] - t_ref_c, temp_range_c[1] - t_ref_c)
    A, mid = _rows(sub, tcr, tracking)
    gw, gr, aw, ar, exhaustive = _spread(topo, r0, A, mid, dts, ainv, max_bits)
    ad0, _ = _gains(topo, r0[None, :], ainv)
    unknown = [r.name for r, t in zip(sub.resistors, tcr) if t is None]
    gu = au = 0.0
    if unknown:
        unit = [1.0 if t is None else 0.0 for t in tcr]
        Au, mu = _rows(sub, unit, {})
        gu, _, au, _, _ = _spread(topo, r0, Au * 1e-6, mu, dts, ainv, max_bits)
        gu, au = gu * 1e6, au * 1e6      # per 1/K, from a 1 ppm/K evaluation (first order)
    return DriftResult(dt=dts, gain_worst=gw, gain_rss=gr, acm_worst=aw, acm_rss=ar, ad=float(ad0[0]),
                       unknown=unknown, gain_per_unknown=gu, acm_per_unknown=au, exhaustive=exhaustive)


def vos_drift_out(vos_transfers: Sequence[float], drift_v_per_k: Sequence[float | None],
                  temp_range_c: tuple[float, float], t_ref_c: float = T_REF_C) -> tuple[float, float]:
    """(worst, rss) output volts from each op-amp's offset drift bound over the range:
    |T_vos| x drift x max |T - 25 degC|, added in magnitude and in root-sum-square."""
    dt = max(abs(temp_range_c[0] - t_ref_c), abs(temp_range_c[1] - t_ref_c))
    per = [abs(t) * d * dt for t, d in zip(vos_transfers, drift_v_per_k) if d is not None]
    return sum(per), math.sqrt(sum(p * p for p in per))
