"""Statistics of every stage of one topology family at once (stacked arrays).

``sensitivity.statistics`` of a stage asks questions whose shape is the same for every
member of a ``family.Family``: the gradients of Ad and Acm from one direct and one adjoint
solve, the distribution of the linear sum, the linear model's four tail points, the exact
solves at the seeded check draws (the same draws for every member) and at the tail points,
and the model's largest error over them. Here each of those is one array operation over all
members, and the circuit solves are two stacked solves for the family (the check draws and
the tail points) besides the adjoint one.

The numbers are those a stage analysed alone gets (``sensitivity.statistics``): every array
operation applies, member by member, the same floating-point operations in the same order
(elementwise products and quotients, sums along a member's own row, one matrix product per
member), and each stacked matrix is solved on its own. A test compares the two on stages of
every family (tests/analysis/test_statistics_many.py).

What has no common shape stays per member, through the code of ``sensitivity``: a sum with
uniform terms that show (the numerical convolution), the 'corner' CMRR convention (a sample
of the linear model) and a member whose model error calls for the full Monte Carlo.
"""

from __future__ import annotations

import dataclasses
import math
import operator

import numpy as np

from frontcheck.analysis import mna, sensitivity
from frontcheck.analysis.options import Options
from frontcheck.analysis.sensitivity import FOLD, Linear, LinearSum, _N01

_SQRT2 = math.sqrt(2.0)
# every option, in field order: the key of a family's statistics (the options' values are
# plain numbers and strings, so this equals dataclasses.astuple without its deep copies)
_OPTION_VALUES = operator.attrgetter(*(f.name for f in dataclasses.fields(Options)))
_erf = np.frompyfunc(math.erf, 1, 1)


def family_statistics(ctx, opt, ad_nom: float):
    """``sensitivity.statistics`` of the member ``ctx`` of its family, made for every member
    on the first ask; None when the family cannot answer (the stage then goes alone)."""
    fam = ctx.family
    zero = np.zeros((1, len(ctx.var.names)))

    def every(members):
        # every member's drawn-value gain, as ``analyse_tolerance`` has it (the asker's own
        # has been taken; a member that is not there any more gets no answer here)
        noms = {j: float(g.ad[0]) for j, g in fam.answers(zero, None, False, True).items()}
        noms[fam.index(ctx)] = ad_nom
        return many(fam, opt, noms)

    return fam.shared(ctx, ("statistics",) + _OPTION_VALUES(opt), every)


def many(fam, opt, ad_noms: dict[int, float]) -> list:
    """Statistics of the members of ``fam`` (in member order; None for a member without a
    drawn-value gain in ``ad_noms``, or whose drawn-value gain is not its set's: it goes
    alone). Each set of equal values (``family.Family.sets``) is computed once, and its
    figures are those of every member of the set."""
    from frontcheck.analysis.tolerance import cmrr_db

    members = fam.members
    set_of = fam.set_of.tolist()
    U = len(fam.sets)
    q = opt.percentile / 100.0
    k = len(members[0].var.names)
    ad0, acm0, gd, ga, gaussian = _first_order(fam, opt.distribution)      # per set
    src: dict[int, float] = {}
    for j, v in ad_noms.items():
        src.setdefault(set_of[j], v)
    ad_nom = np.array([src.get(u, 1.0) for u in range(U)])

    sd, sa = _Sums(ad0, gd, gaussian), _Sums(acm0, ga, gaussian)
    p_low, p_high = sd.quantile(q), sd.quantile(1.0 - q)
    a_q = sa.magnitude_exceeded(q)
    db_lin = cmrr_db(ad_nom, a_q, ad_nom)          # the 'nominal' convention's CMRR

    # the check set: the seeded draws (the same for every set) and each set's tail points
    kappa = -_N01.inv_cdf(q)
    zt = np.stack([_tail_points(g, gaussian, sg, kappa) for g in (gd, ga) for sg in (1.0, -1.0)],
                  axis=1)                                                   # (U, 4, m)
    zd = sensitivity._draw_z(members[0], opt, opt.check_samples, np.random.default_rng(opt.seed))
    gd_ = fam.gains_stacked(zd[:, :k], zd[:, k:], per_set=True)
    gt_ = fam.gains_stacked(zt[:, :, :k], zt[:, :, k:], per_set=True)
    g_ad = np.concatenate([gd_.ad, gt_.ad], axis=1)                         # (U, n + 4)
    g_acm = np.concatenate([gd_.acm, gt_.acm], axis=1)
    zc = np.concatenate([np.broadcast_to(zd, (U,) + zd.shape), zt], axis=1)
    eps_ad = np.max(np.abs(g_ad - (ad0[:, None] + np.matmul(zc, gd[:, :, None])[:, :, 0])), axis=1)
    eps_acm = np.max(np.abs(g_acm - (acm0[:, None] + np.matmul(zc, ga[:, :, None])[:, :, 0])), axis=1)
    n = opt.check_samples
    db_s = cmrr_db(g_ad[:, :n], g_acm[:, :n], ad_nom[:, None], opt.ad_convention)

    out: list = []
    made: dict[int, object] = {}          # each set's figures, once
    for j, ctx in enumerate(members):
        u = set_of[j]
        if j not in ad_noms or ad_noms[j] != src[u]:
            out.append(None)
            continue
        if u not in made:
            made[u] = _one(ctx, opt, ad_noms[j], q, ad0[u], acm0[u], gd[u], ga[u], gaussian,
                           p_low[u], p_high[u], bool(sd.exact[u]), bool(sa.exact[u]), db_lin[u],
                           a_q[u], eps_ad[u], eps_acm[u], g_ad[u, :n], db_s[u], zt.shape[1])
        out.append(made[u])
    return out


def _one(ctx, opt, ad_nom: float, q: float, ad0, acm0, gd, ga, gaussian, p_low, p_high,
         exact_d: bool, exact_a: bool, db_lin, a_q, eps_ad, eps_acm, ad_s, db_s, n_tails: int):
    """``sensitivity.decide`` of one set of values, from its rows of the arrays of ``many``."""
    lin = Linear(float(ad0), float(acm0), gd.copy(), ga.copy(), gaussian.copy())
    pl, ph, exact = float(p_low), float(p_high), exact_d and exact_a
    if not exact_d:
        one = LinearSum(lin.ad0, lin.gd, lin.gaussian)
        pl, ph = one.quantile(q), one.quantile(1.0 - q)
    if not exact_a or opt.ad_convention == "corner":
        db, aq = sensitivity._linear_cmrr(ctx, opt, lin, LinearSum(lin.acm0, lin.ga, lin.gaussian),
                                          ad_nom)
    else:
        db, aq = float(db_lin), float(a_q)
    return sensitivity.decide(ctx, opt, ad_nom, lin, exact, pl, ph, db, aq, float(eps_ad),
                              float(eps_acm), ad_s.copy(), db_s.copy(), n_tails)


def _first_order(fam, distribution: str):
    """``sensitivity.first_order`` of every set of values of ``fam``: (ad0, acm0, gd, ga,
    gaussian), gradients (U, k + n_opamps), from one stacked direct and adjoint solve."""
    topo = fam.topo
    r0, A, ainv, cmag, rs = fam.stacked(fam.sets)
    X, Y = mna.solve_dc_adjoint(topo, r0, ainv, np.zeros_like(cmag), rs)
    S = X.shape[0]
    k = A.shape[1] if A is not None else 0
    nO = cmag.shape[1]

    def volts(t):
        return X[:, t] if isinstance(t, int) else np.asarray(t[1], dtype=float)

    def adj(t):
        return Y[:, t, None] if isinstance(t, int) else 0.0

    dG = np.empty((S, len(topo.resistors), 4))
    for i, (_, a, b) in enumerate(topo.resistors):
        dG[:, i] = -(adj(a) - adj(b)) * (volts(a) - volts(b))
    dx = np.matmul(-A / r0[:, None, :], dG) if k else np.zeros((S, 0, 4))
    nn = len(topo.free)
    ds = np.empty((S, nO, 4))
    for j, (_, p, m, _) in enumerate(topo.opamps):
        ds[:, j] = 0.5 * Y[:, nn + j, None] * (volts(p) + volts(m)) * cmag[:, j, None]
    grad = np.concatenate([dx, ds], axis=1)
    out = X[:, topo.out] - topo.out_offset
    gaussian = np.zeros(k + nO, dtype=bool)
    if distribution == "gaussian":
        gaussian[:k] = True
    return (out[:, mna.VD].copy(), out[:, mna.VCM].copy(),
            np.ascontiguousarray(grad[:, :, mna.VD]), np.ascontiguousarray(grad[:, :, mna.VCM]),
            gaussian)


class _Sums:
    """``sensitivity.LinearSum`` of every member, closed form only: ``exact`` says for which
    members it holds (the others need the numerical convolution, made per member)."""

    def __init__(self, mean: np.ndarray, g: np.ndarray, gaussian: np.ndarray):
        g = np.abs(g)
        var = np.sum((g[:, gaussian] / 3.0) ** 2, axis=1)
        widths = g[:, ~gaussian]
        total = np.sqrt(var + np.sum(widths ** 2, axis=1) / 3.0)
        # every uniform term folded: the variance is the one summed into ``total``
        self.exact = np.all(widths <= FOLD * total[:, None], axis=1)
        self.mean, self.sigma = mean, total

    def quantile(self, q: float) -> np.ndarray:
        z = _N01.inv_cdf(q)
        return self.mean + np.where(self.sigma > 0, self.sigma * z, 0.0)

    def magnitude_exceeded(self, p: float) -> np.ndarray:
        """``LinearSum.magnitude_exceeded`` of the normal members: the same bisection, run
        for all at once. A member leaves when its midpoint equals an end of its interval:
        the interval no longer changes, and the midpoint is what the remaining steps give."""
        m, sigma = self.mean, self.sigma
        out = np.abs(m)
        live = np.flatnonzero(sigma > 0)
        mm, ss = m[live], sigma[live]

        def tail(a, mm, ss):
            return _cdf((-a - mm) / ss) + 1.0 - _cdf((a - mm) / ss)

        lo, hi = np.zeros(live.size), np.abs(mm) + 10.0 * ss
        zero = tail(lo, mm, ss) <= p
        out[live[zero]] = 0.0
        act = np.flatnonzero(~zero)
        for _ in range(80):
            if not act.size:
                break
            l, h = lo[act], hi[act]
            mid = 0.5 * (l + h)
            done = (mid == l) | (mid == h)
            up = tail(mid, mm[act], ss[act]) > p
            lo[act] = np.where(up, mid, l)
            hi[act] = np.where(up, h, mid)
            # a finished member's interval may have collapsed onto mid: keep mid itself
            lo[act[done]], hi[act[done]] = mid[done], mid[done]
            act = act[~done]
        out[live[~zero]] = 0.5 * (lo[~zero] + hi[~zero])
        return out


def _cdf(x: np.ndarray) -> np.ndarray:
    """``statistics.NormalDist().cdf`` elementwise, the same operations (math.erf)."""
    return 0.5 * (1.0 + _erf(x / _SQRT2).astype(float))


def _tail_points(g: np.ndarray, gaussian: np.ndarray, sign: float, kappa: float) -> np.ndarray:
    """``sensitivity.tail_point`` of every member, (S, m)."""
    var = np.where(gaussian, 1.0 / 9.0, 1.0 / 3.0)
    total = np.sqrt(np.sum(var * g ** 2, axis=1))
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.clip(sign * kappa * var * g / total[:, None], -1.0, 1.0)
    z[total == 0] = 0.0
    return z
