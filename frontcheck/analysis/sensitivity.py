"""Statistical gain and CMRR from first-order sensitivities (a linear tolerance model).

A stage's differential gain Ad and common-mode gain Acm depend smoothly on its tolerance
variables z = (x, s): x the resistor variables of ``tolerance.Variables`` (Gaussian with
sigma = 1/3, or uniform on [-1, 1]) and s each op-amp's CMRR factor (uniform on [-1, 1]).
Near the drawn values both are, to first order,

    Ad(z) ~ Ad0 + gd . z,        Acm(z) ~ Acm0 + ga . z

The gradients come from one direct and one adjoint solve of the stage's MNA equations at the
drawn values (``mna.solve_dc_adjoint``): with M X = B and M^T y = e_out, the derivative of the
output with respect to a conductance g between terms a and b is -(y_a - y_b)(V_a - V_b), and
with respect to an op-amp's 1/CMRR term c it is y_row (V+ + V-) / 2 (Director & Rohrer 1969).

The distribution of a sum of independent terms is then computed, not sampled: exactly for a
sum of Gaussian terms (a normal distribution; its magnitude a folded normal); for a sum with
uniform terms (uniform parts, op-amp CMRR signs) by numerical convolution of the terms' CDFs
on a grid. Only the 'corner' CMRR convention, |Ad/Acm| with both varying, has no such form:
there a vectorised sample of the linear model is taken (no circuit solve per draw).

Where the linear model is not good enough the full nonlinear Monte Carlo runs instead. The
error estimate: the exact solve at a check set (``check_samples`` seeded draws and the linear
model's tail points along both gradients, in one stacked solve) against the linear model at
the same points. A quantile moves by no more than the largest pointwise error, so the gain
limits are off by at most max|dAd| and the CMRR by at most 20 log10(1 + max|dAcm| / |Acm|q)
(|Acm|q the common-mode gain at the reported tail). Above ``lin_db_tol`` (0.1 dB) or
``lin_gain_tol`` (0.01 % of the gain) the Monte Carlo decides, its tail read with the linear
model as a control variate (the same draws through both models; the linear model's exact
tail corrects the sample's), which cuts the sampling noise of a 0.135 % tail several fold.

References
----------
R. Spence, R. S. Soin, *Tolerance Design of Electronic Circuits*, Addison-Wesley, 1988
(linear, sensitivity-based tolerance analysis and its limits against Monte Carlo; chapter
numbers from memory, not cited). S. W. Director, R. A. Rohrer, "The generalized adjoint
network and network sensitivities", IEEE Trans. Circuit Theory 16(3), 1969 (adjoint
sensitivities). T. C. Hesterberg, B. L. Nelson, "Control variates for probability and quantile
estimation", Management Science 44(9), 1998 (control-variate quantiles; from memory).
docs/engineering.md sec. 2, "Statistical".
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from statistics import NormalDist

import numpy as np

from frontcheck.analysis import mna

GRID = 4097             # points of the convolution grid
FOLD = 0.02             # a uniform term narrower than this share of the total sigma is folded
                        # into the Gaussian part with its variance (its shape does not show)
_N01 = NormalDist()


@dataclass
class Linear:
    """First-order model of one stage over z = (x, s), see the module docstring."""

    ad0: float
    acm0: float
    gd: np.ndarray          # (k + n_opamps,) dAd/dz
    ga: np.ndarray          # (k + n_opamps,) dAcm/dz
    gaussian: np.ndarray    # (k + n_opamps,) bool: z_j Gaussian (sigma 1/3), else uniform [-1, 1]

    def ad(self, z: np.ndarray) -> np.ndarray:
        return self.ad0 + z @ self.gd

    def acm(self, z: np.ndarray) -> np.ndarray:
        return self.acm0 + z @ self.ga


def first_order(ctx, distribution: str = "gaussian") -> Linear:
    """Gradients of Ad and Acm at the drawn values (x = 0, s = 0) from one direct and one
    adjoint solve. ``ctx`` is a ``tolerance.Context``."""
    topo = ctx.topo
    k, nO = len(ctx.var.names), ctx.cmag.size
    if getattr(ctx, "family", None) is not None:
        X, y = ctx.family.adjoint(ctx)            # solved with the rest of its family
    else:
        R0 = ctx.var.r0[None, :]
        X, Y = mna.solve_dc_adjoint(topo, R0, ctx.ainv[None, :], np.zeros((1, nO)), ctx.rs[None, :])
        X, y = X[0], Y[0]

    def volts(t):
        return X[t] if isinstance(t, int) else t[1]

    def adj(t):
        return y[t] if isinstance(t, int) else 0.0

    # d out / d G_i for every resistor, (n_res, 4): -(y_a - y_b)(V_a - V_b)
    dG = np.array([-(adj(a) - adj(b)) * (volts(a) - volts(b)) for _, a, b in topo.resistors])
    dG = dG.reshape(len(topo.resistors), 4)
    # G_i = 1 / (R0_i prod(1 + A x)): dG_i/dx_v = -A[v, i] / R0_i at x = 0
    dx = (-ctx.var.A / ctx.var.r0[None, :]) @ dG if k else np.zeros((0, 4))
    nn = len(topo.free)
    ds = np.array([0.5 * y[nn + j] * (volts(p) + volts(m)) * ctx.cmag[j]
                   for j, (_, p, m, _) in enumerate(topo.opamps)]).reshape(nO, 4)
    grad = np.vstack([dx, ds])
    out = X[topo.out] - topo.out_offset
    gaussian = np.zeros(k + nO, dtype=bool)
    if distribution == "gaussian":
        gaussian[:k] = True
    return Linear(float(out[mna.VD]), float(out[mna.VCM]), grad[:, mna.VD].copy(),
                  grad[:, mna.VCM].copy(), gaussian)


class LinearSum:
    """Distribution of mean + sum_j g_j z_j, z_j independent: Gaussian (sigma 1/3) where
    ``gaussian[j]``, else uniform on [-1, 1]."""

    def __init__(self, mean: float, g: np.ndarray, gaussian: np.ndarray):
        g = np.abs(np.asarray(g, dtype=float))
        var = float(np.sum((g[gaussian] / 3.0) ** 2))
        widths = g[~gaussian]
        total = math.sqrt(var + float(np.sum(widths ** 2)) / 3.0)
        small = widths <= FOLD * total
        var += float(np.sum(widths[small] ** 2)) / 3.0      # uniform: variance a^2 / 3
        self.mean, self.sigma = mean, math.sqrt(var)
        self.widths = np.sort(widths[~small])[::-1]
        self._grid = None

    @property
    def exact(self) -> bool:
        """True when the distribution is normal (no grid): the figures are closed-form."""
        return self.widths.size == 0

    def _cdf_grid(self):
        """(x, F): the CDF of the zero-mean part on a symmetric grid (convolution of the
        Gaussian part with each uniform term, through the CDF's running integral)."""
        if self._grid is None:
            span = 8.5 * self.sigma + float(np.sum(self.widths))
            x = np.linspace(-span, span, GRID)
            widths = list(self.widths)
            if self.sigma > 0:
                F = np.array([_N01.cdf(v / self.sigma) for v in x])
            else:
                a = widths.pop(0)
                F = np.clip((x + a) / (2 * a), 0.0, 1.0)
            for a in widths:
                G = np.concatenate([[0.0], np.cumsum(0.5 * (F[1:] + F[:-1]) * np.diff(x))])

                def integral(u, G=G):
                    return np.interp(u, x, G) + np.maximum(u - span, 0.0)

                F = (integral(x + a) - integral(x - a)) / (2 * a)
            self._grid = (x, np.clip(F, 0.0, 1.0))
        return self._grid

    def quantile(self, q: float) -> float:
        """The value below which a fraction ``q`` lies."""
        if self.exact:
            return self.mean + (self.sigma * _N01.inv_cdf(q) if self.sigma > 0 else 0.0)
        x, F = self._cdf_grid()
        return self.mean + float(np.interp(q, F, x))

    def magnitude_exceeded(self, p: float) -> float:
        """The magnitude a with P(|value| > a) = p."""
        m = self.mean
        if self.exact:
            if self.sigma == 0:
                return abs(m)

            def tail(a):
                return _N01.cdf((-a - m) / self.sigma) + 1.0 - _N01.cdf((a - m) / self.sigma)
            lo, hi = 0.0, abs(m) + 10.0 * self.sigma
            if tail(lo) <= p:
                return 0.0
            for _ in range(80):
                mid = 0.5 * (lo + hi)
                lo, hi = (mid, hi) if tail(mid) > p else (lo, mid)
            return 0.5 * (lo + hi)
        x, F = self._cdf_grid()
        a = np.linspace(0.0, abs(m) + x[-1], GRID)
        tail = np.interp(-a - m, x, F) + 1.0 - np.interp(a - m, x, F)
        return float(np.interp(p, tail[::-1], a[::-1]))


def tail_point(g: np.ndarray, gaussian: np.ndarray, sign: float, kappa: float) -> np.ndarray:
    """The z of the linear model's ``kappa``-sigma point along gradient ``g`` (the most
    probable point of that tail for Gaussian terms; uniform terms clipped to their range)."""
    g = np.asarray(g, dtype=float)
    var = np.where(gaussian, 1.0 / 9.0, 1.0 / 3.0)
    total = math.sqrt(float(np.sum(var * g ** 2)))
    if total == 0:
        return np.zeros_like(g)
    return np.clip(sign * kappa * var * g / total, -1.0, 1.0)


@dataclass
class Statistics:
    """Statistical gain limits and CMRR of one stage, and how they were made."""

    p_low: float
    p_high: float
    cmrr_db: float
    method: str             # 'first-order' | 'monte-carlo'
    note: str
    ad_samples: np.ndarray  # exact circuit solves (for histograms)
    db_samples: np.ndarray
    gain_error: float       # estimated error of the first-order model, fraction of the gain
    db_error: float         # and in dB of CMRR


def _draw_z(ctx, opt, n, rng):
    from frontcheck.analysis import tolerance

    x, s = tolerance.draw(ctx, opt, n, rng)
    return np.hstack([x, s])


def _linear_cmrr(ctx, opt, lin: Linear, acm: LinearSum, ad_nom: float):
    """(statistical CMRR in dB, |Acm| at that tail) of the linear model."""
    from frontcheck.analysis.tolerance import _low_percentile, cmrr_db

    q = opt.percentile / 100.0
    if opt.ad_convention == "nominal":
        a_q = acm.magnitude_exceeded(q)
        return float(cmrr_db(ad_nom, a_q, ad_nom)), a_q
    # |Ad/Acm| with both varying: no closed form; a sample of the linear model (no solves)
    z = _draw_z(ctx, opt, opt.lin_samples, np.random.default_rng([opt.seed, 1]))
    db = _low_percentile(cmrr_db(lin.ad(z), lin.acm(z), ad_nom, "corner"), opt.percentile)
    return db, (abs(lin.ad0) / 10.0 ** (db / 20.0) if math.isfinite(db) else 0.0)


def statistics(ctx, opt, ad_nom: float) -> Statistics:
    """Statistical gain limits (``opt.percentile`` and its mirror) and low-tail CMRR of the
    stage in ``ctx`` (a ``tolerance.Context``): first-order model where its error estimate
    allows, else the full Monte Carlo with the model as control variate (module docstring).
    A stage of a family gets the figures made for every member at once
    (frontcheck.analysis.sensitivity_many: the same numbers)."""
    if getattr(ctx, "family", None) is not None:
        from frontcheck.analysis import sensitivity_many

        got = sensitivity_many.family_statistics(ctx, opt, ad_nom)
        if got is not None:
            return got
    from frontcheck.analysis.tolerance import cmrr_db

    q = opt.percentile / 100.0
    k = len(ctx.var.names)
    lin = first_order(ctx, opt.distribution)
    sd = LinearSum(lin.ad0, lin.gd, lin.gaussian)
    sa = LinearSum(lin.acm0, lin.ga, lin.gaussian)
    p_low, p_high = sd.quantile(q), sd.quantile(1.0 - q)
    db_lin, a_q = _linear_cmrr(ctx, opt, lin, sa, ad_nom)

    # Error estimate: exact solves at a check set against the model (one stacked solve).
    rng = np.random.default_rng(opt.seed)
    kappa = -_N01.inv_cdf(q)
    tails = [tail_point(g, lin.gaussian, sg, kappa) for g in (lin.gd, lin.ga) for sg in (1.0, -1.0)]
    zd = _draw_z(ctx, opt, opt.check_samples, rng)    # the same draws for every stage of a family
    zt = np.vstack(tails)
    gd, gt = ctx.evaluate(zd[:, :k], zd[:, k:], shared=True), ctx.evaluate(zt[:, :k], zt[:, k:])
    zc = np.vstack([zd, zt])
    g = mna.Gains(*(np.concatenate([a, b]) for a, b in zip((gd.ad, gd.acm, gd.aref, gd.const),
                                                           (gt.ad, gt.acm, gt.aref, gt.const))))
    eps_ad = float(np.max(np.abs(g.ad - lin.ad(zc))))
    eps_acm = float(np.max(np.abs(g.acm - lin.acm(zc))))
    n = opt.check_samples
    ad_s, db_s = g.ad[:n], cmrr_db(g.ad[:n], g.acm[:n], ad_nom, opt.ad_convention)
    return decide(ctx, opt, ad_nom, lin, sd.exact and sa.exact, p_low, p_high, db_lin, a_q,
                  eps_ad, eps_acm, ad_s, db_s, len(tails))


def decide(ctx, opt, ad_nom: float, lin: Linear, exact: bool, p_low: float, p_high: float,
           db_lin: float, a_q: float, eps_ad: float, eps_acm: float, ad_s: np.ndarray,
           db_s: np.ndarray, n_tails: int) -> Statistics:
    """The first-order figures when the model's largest error at the check set (``eps_ad``,
    ``eps_acm``) allows, else the Monte Carlo with the model as control variate. ``exact``:
    both distributions in closed form; ``ad_s``, ``db_s``: the check draws' exact gains and
    CMRR; ``n_tails``: tail points solved besides them."""
    from frontcheck.analysis.tolerance import DB_CAP, _low_percentile, cmrr_db

    k = len(ctx.var.names)
    gain_err = eps_ad / abs(lin.ad0) if lin.ad0 else math.inf
    floor = DB_CAP * abs(ad_nom)
    if a_q > floor:
        db_err = 20.0 * math.log10(1.0 + eps_acm / a_q)
    else:
        db_err = 0.0 if eps_acm <= floor else math.inf
    if opt.ad_convention == "corner":
        db_err += 20.0 * math.log10(1.0 + gain_err)
    n = opt.check_samples
    if gain_err <= opt.lin_gain_tol and db_err <= opt.lin_db_tol:
        how = "closed form" if exact else "numerical convolution"
        if opt.ad_convention == "corner":
            how += f" (CMRR: {opt.lin_samples:,} draws of the model)"
        note = (f"statistical gain and CMRR: first-order sensitivity model, {how}; "
                f"{n + n_tails} circuit solves put its error within "
                f"{_errors(db_err, gain_err)}")
        return Statistics(p_low, p_high, db_lin, "first-order", note, ad_s, db_s, gain_err, db_err)

    # The model is not good enough here: every draw solved, its tail read with the model as
    # control variate (same draws through both; the model's exact tail corrects the sample's).
    z = _draw_z(ctx, opt, opt.mc_samples, np.random.default_rng(opt.seed))
    g = ctx.evaluate(z[:, :k], z[:, k:])
    la = lin.ad(z)
    lo_e, hi_e, lo_l, hi_l = np.percentile(np.vstack([g.ad, la]), [opt.percentile, 100 - opt.percentile],
                                           axis=1).ravel(order="F")
    mdb = cmrr_db(g.ad, g.acm, ad_nom, opt.ad_convention)
    stat = _low_percentile(mdb, opt.percentile)
    stat_l = _low_percentile(cmrr_db(la, lin.acm(z), ad_nom, opt.ad_convention), opt.percentile)
    if all(math.isfinite(v) for v in (stat, stat_l, db_lin)):
        stat = stat + (db_lin - stat_l)
    note = (f"statistical gain and CMRR: Monte Carlo of {opt.mc_samples:,} circuit solves, "
            f"because the first-order model was off by up to "
            f"{_errors(db_err if db_err > opt.lin_db_tol else 0.0, gain_err if gain_err > opt.lin_gain_tol else 0.0)}"
            f"; its tail read with that model as control variate")
    return Statistics(float(lo_e + (p_low - lo_l)), float(hi_e + (p_high - hi_l)), stat,
                      "monte-carlo", note, g.ad, mdb, gain_err, db_err)


def _errors(db_err: float, gain_err: float) -> str:
    """The model's error bounds in words, naming only those above zero ('0.002 dB of CMRR and
    0.0001 % of the gain'); none above zero reads as such, never as 'up to 0 dB'."""
    parts = ([f"{_dec(db_err)} dB of CMRR"] if db_err > 0 else []) + (
        [f"{_dec(100 * gain_err)} % of the gain"] if gain_err > 0 else [])
    return " and ".join(parts) if parts else "the solver's precision"


def _dec(v: float) -> str:
    """A small error bound as text (one significant figure, rounded up: it is a bound)."""
    if not math.isfinite(v):
        return "an unbounded amount"
    if v <= 0:
        return "0"
    e = math.floor(math.log10(v))
    m = math.ceil(v / 10.0 ** e)
    return f"{m * 10.0 ** e:.{max(0, -e)}f}"
