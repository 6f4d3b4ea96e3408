"""Gain and CMRR over resistor tolerances: exact corner enumeration and Monte Carlo.

Tolerance variables. Each independent resistor has one variable x in [-1, 1] with
R = R0 (1 + x t). Resistors of one matched group (a network, or the resistors inside an
integrated part) share a common variable (their absolute tolerance t) and each has its own
ratio variable with half the group's ratio tolerance m, so the ratio of any two members stays
within +-m (first order) - docs/engineering.md sec. 2, "matched network".

Worst case. Acm and Ad are monotone in each resistor, so their extremes lie on the 2^k corners
x in {-1, +1}^k; all corners are solved in one batch. Each op-amp's own CMRR enters with an
unknown sign: the signs are enumerated together with the resistor corners (worst case adds
magnitudes, Pallas-Areny & Webster 1991). Above ``max_bits`` variables the corners are those
picked by the sign of each variable's sensitivity (a note says so).

CMRR convention. CMRR = |Ad| / |Acm| where, by default (``ad_convention='nominal'``), Ad is the
nominal differential gain and Acm the common-mode gain at the corner or sample; with
``'corner'`` Ad is taken at the same corner or sample. For Sedra & Smith Ex. 2.15 these give
67.87 dB and 68.04 dB (docs/engineering.md sec. 1). The nominal convention is the more conservative
there and is what a user sees as "CMRR at the drawn gain".
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from frontcheck.analysis import mna, sensitivity
from frontcheck.analysis.options import Options
from frontcheck.analysis.result import CmrrResult, InputFilter, Spread
from frontcheck.circuit import SubCircuit
from frontcheck.errors import InputError

DB_CAP = 1e-13   # |Acm/Ad| below this is floating-point round-off: CMRR reported as infinite


@dataclass
class Variables:
    """Tolerance variables: R_i = R0_i * prod_v (1 + x_v A[v, i]), x in [-1, 1]^k."""

    names: list[str]
    A: np.ndarray            # (k, n_resistors)
    r0: np.ndarray           # (n_resistors,)

    def values(self, x: np.ndarray) -> np.ndarray:
        x = np.atleast_2d(x)
        if not self.names:
            return np.broadcast_to(self.r0, (x.shape[0], self.r0.size)).copy()
        # Product form: a matched group's common factor scales every member alike, so
        # ratios inside the group depend on the ratio variables only, however large the
        # absolute tolerance.
        out = np.empty((self.r0.size, x.shape[0]))     # resistor-major: contiguous updates
        out[:] = self.r0[:, None]
        for v in range(len(self.names)):
            for col in np.flatnonzero(self.A[v]):
                out[col] *= 1.0 + self.A[v, col] * x[:, v]
        return out.T


def variables(sub: SubCircuit) -> Variables:
    """The tolerance variables of a SubCircuit (see module docstring).

    References
    ----------
    A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 6th ed., Problem 2.67 (independent
    tolerances); docs/engineering.md sec. 2 (matched networks, ratio tolerance).
    """
    n = len(sub.resistors)
    entries, names = [], []          # (resistor, value) of each variable's row
    groups: dict[str, list[int]] = {}
    for i, r in enumerate(sub.resistors):
        if r.match_group and r.match_tol is not None:
            groups.setdefault(r.match_group, []).append(i)
        elif r.tol.value > 0:
            entries.append([(i, r.tol.value)])
            names.append(r.name)
    for g, members in groups.items():
        common = [(i, sub.resistors[i].tol.value) for i in members]
        if any(v for _, v in common):
            entries.append(common)
            names.append(f"{g} (absolute)")
        for i in members:
            m = sub.resistors[i].match_tol.value
            if m > 0:
                entries.append([(i, m / 2.0)])
                names.append(f"{sub.resistors[i].name} (ratio in {g})")
    A = np.zeros((len(entries), n))
    for v, row in enumerate(entries):
        for i, x in row:
            A[v, i] = x
    return Variables(names, A, np.array([r.ohms.value for r in sub.resistors], dtype=float))


def corner_matrix(k: int) -> np.ndarray:
    """All 2^k sign vectors, shape (2^k, k)."""
    if k == 0:
        return np.zeros((1, 0))
    idx = np.arange(2 ** k)[:, None]
    return np.where((idx >> np.arange(k)[None, :]) & 1, 1.0, -1.0)


def cmrr_db(ad, acm, ad_nominal, convention="nominal"):
    """CMRR in dB, |Ad|/|Acm| with the chosen Ad convention (inf when Acm is round-off)."""
    ad = np.asarray(ad, dtype=float)
    num = np.abs(ad) if convention == "corner" else np.abs(ad_nominal) * np.ones_like(ad)
    den = np.abs(np.asarray(acm, dtype=float))
    with np.errstate(divide="ignore"):
        ratio = np.where(den <= DB_CAP * num, np.inf, num / np.where(den > 0, den, 1.0))
        return 20.0 * np.log10(ratio)


@dataclass
class Context:
    """What every batched evaluation shares: the compiled circuit and fixed parameters."""

    sub: SubCircuit
    topo: mna.Topology
    var: Variables
    ainv: np.ndarray        # (n_opamps,)
    cmag: np.ndarray        # (n_opamps,) 1/CMRR magnitudes
    rs: np.ndarray          # (n_series,) series port resistances
    notes: list[str] = field(default_factory=list)
    family: object = None   # frontcheck.analysis.family.Family solving stages like it together

    def evaluate(self, x: np.ndarray, signs: np.ndarray | None = None, use_opamp_cmrr=True,
                 use_rs=True, shared=False) -> mna.Gains:
        """Gains at parameter sets ``x``; ``shared``: every stage of the family asks the same
        sets, so the family solves them for all its stages at once (the same numbers)."""
        if shared and self.family is not None:
            return self.family.evaluate(self, x, signs, use_opamp_cmrr, use_rs)
        R = self.var.values(x)
        N = R.shape[0]
        c = None
        if use_opamp_cmrr and self.cmag.size:
            s = np.ones((N, self.cmag.size)) if signs is None else signs
            c = s * self.cmag[None, :]
        rs = np.broadcast_to(self.rs, (N, self.rs.size)) if use_rs else np.zeros((N, self.rs.size))
        X = mna.solve_dc(self.topo, R, np.broadcast_to(self.ainv, (N, self.ainv.size)), c, rs)
        return mna.gains(self.topo, X)


def make_context(sub: SubCircuit, series: dict[str, float] | None = None,
                 ideal_opamps: bool = False) -> Context:
    """Compile ``sub`` with optional series port resistances {'ref': Rth, 'in_p': Rs, ...}."""
    series = {k: v for k, v in (series or {}).items() if v is not None and v > 0}
    topo = mna.compile_circuit(sub, tuple(series))
    rs = np.array([series[role] for role, _, _ in topo.series], dtype=float)
    ainv = np.zeros(len(sub.opamps)) if ideal_opamps else mna.opamp_ainv(sub)
    return Context(sub, topo, variables(sub), ainv, mna.opamp_cmrr(sub), rs, list(topo.notes))


def worst_corners(ctx: Context, opt: Options, use_opamp_cmrr=True, use_rs=True):
    """Ad and Acm at every corner: exact enumeration, or sensitivity-sign corners above
    ``opt.max_bits`` variables. Returns (ad, acm, note or None).

    References
    ----------
    A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 6th ed., Problem 2.67: worst-case
    CMRR of a difference amplifier, (1+G)/(4t).
    """
    k = len(ctx.var.names)
    nO = int(np.count_nonzero(ctx.cmag)) if use_opamp_cmrr else 0
    note = None
    shared = k <= opt.max_bits        # the same corners for every stage of a family
    if shared:
        xs = corner_matrix(k)
    else:
        # Sensitivity-sign corners: each variable at the end that pushes Acm (or Ad) up or down.
        eye = np.vstack([np.zeros((1, k)), np.eye(k)])
        g = ctx.evaluate(eye, use_opamp_cmrr=False, use_rs=use_rs)
        sa = np.sign(g.acm[1:] - g.acm[0])
        sd = np.sign(g.ad[1:] - g.ad[0])
        sa[sa == 0] = 1
        sd[sd == 0] = 1
        xs = np.vstack([sa, -sa, sd, -sd])
        note = (f"{k} tolerance variables: worst case from sensitivity-sign corners, "
                f"not all 2^{k} corners")
    if nO and xs.shape[1] + nO > opt.joint_bits:
        g = ctx.evaluate(xs, use_opamp_cmrr=False, use_rs=use_rs, shared=shared)
        zero = np.zeros((1, k))
        base = ctx.evaluate(zero, use_opamp_cmrr=False, use_rs=use_rs, shared=True)
        extra = extra_ad = 0.0
        for i in np.flatnonzero(ctx.cmag):
            signs = np.zeros((1, ctx.cmag.size))
            signs[0, i] = 1.0
            one = ctx.evaluate(zero, signs, use_rs=use_rs)
            extra += abs(float(one.acm[0] - base.acm[0]))
            # An op-amp's CMRR term moves Ad too (its inputs follow the differential signal):
            # each corner's Ad is widened by the same worst-sign sum, low and high.
            extra_ad += abs(float(one.ad[0] - base.ad[0]))
        acm = g.acm + np.where(g.acm < 0, -1.0, 1.0) * extra
        ad = np.concatenate([g.ad - extra_ad, g.ad + extra_ad])
        more = (f"op-amp CMRR added in magnitude to {xs.shape[0]} resistor corners "
                f"(not enumerated jointly)")
        return ad, np.concatenate([acm, acm]), (note + "; " + more) if note else more
    if nO:
        active = np.flatnonzero(ctx.cmag)
        sg = corner_matrix(nO)
        signs = np.ones((sg.shape[0], ctx.cmag.size))
        signs[:, active] = sg
        X = np.repeat(xs, signs.shape[0], axis=0)
        S = np.tile(signs, (xs.shape[0], 1))
    else:
        X, S = xs, None
    g = ctx.evaluate(X, S, use_opamp_cmrr=use_opamp_cmrr, use_rs=use_rs, shared=shared)
    return g.ad, g.acm, note


def draw(ctx: Context, opt: Options, n: int, rng: np.random.Generator):
    """Monte Carlo draws: x (n, k) and op-amp CMRR factors in [-1, 1] (n, n_opamps)."""
    k = len(ctx.var.names)
    if opt.distribution == "gaussian":
        x = rng.standard_normal((n, k)) / 3.0
    elif opt.distribution == "uniform":
        x = rng.uniform(-1.0, 1.0, (n, k))
    else:
        raise InputError(f"unknown Monte Carlo distribution {opt.distribution!r}",
                         hint="use 'gaussian' (tolerance = 3 sigma) or 'uniform'")
    # A datasheet CMRR is a bound on |1/CMRR| with unknown sign: each op-amp's term is drawn
    # uniformly between the two signed bounds (the worst case takes the bounds themselves).
    s = rng.uniform(-1.0, 1.0, size=(n, ctx.cmag.size))
    return x, s


def monte_carlo(ctx: Context, opt: Options, n: int | None = None):
    """Ad and Acm over ``n`` random draws (seeded). Returns (ad, acm)."""
    n = opt.mc_samples if n is None else n
    rng = np.random.default_rng(opt.seed)
    x, s = draw(ctx, opt, n, rng)
    g = ctx.evaluate(x, s)
    return g.ad, g.acm


def _low_percentile(db: np.ndarray, q: float) -> float:
    """Percentile of CMRR samples in dB, where a sample may be +inf (a common-mode gain of
    exactly zero: ideal op-amps on a network whose mismatch cannot reach the output)."""
    big = 1e300
    v = float(np.percentile(np.where(np.isposinf(db), big, db), q))
    return math.inf if v >= big / 2 else v


def _thin(a, keep):
    a = np.asarray(a, dtype=float)
    if a.size <= keep:
        return a.tolist()           # the same Python floats as float(v) of each, in one step
    step = a.size / keep
    # The same float index arithmetic as int(i * step) per element, in one array operation.
    return a[(np.arange(keep) * step).astype(np.intp)].tolist()


def analyse_tolerance(sub: SubCircuit, opt: Options | None = None,
                      series: dict[str, float] | None = None, ctx: Context | None = None):
    """Gain Spread and CmrrResult of one stage.

    Parameters
    ----------
    series : dict, optional
        Series port resistances, e.g. {'ref': Rth} (REF net's Thevenin resistance) or
        {'in_p': Rs_p, 'in_n': Rs_n} (source impedances). Included in nominal gain, worst case
        and Monte Carlo; each also reported alone as a CMRR contributor.
    ctx : Context, optional
        ``make_context(sub, series)`` made by the caller (with its family, when stages are
        solved together: frontcheck.analysis.family).

    Returns
    -------
    (Spread, CmrrResult, notes, extra)
        ``extra`` holds arrays the error budget needs: nominal Ad/Acm, worst |Acm| of each part.

    References
    ----------
    A. S. Sedra, K. C. Smith, *Microelectronic Circuits*, 6th ed., Eq. 2.19 context, Ex. 2.15,
    Problems 2.67 and 2.75; R. Pallas-Areny, J. G. Webster, "Common mode rejection ratio in
    differential amplifiers", IEEE Trans. Instrum. Meas. 40(4), 1991.
    """
    opt = opt or Options()
    ctx = ctx or make_context(sub, series)
    notes = list(ctx.notes)
    from frontcheck.analysis import worst as _worst

    w = _worst.worst_figures(ctx, opt)
    ad_nom, conv, ad, acm = w.ad_nom, opt.ad_convention, w.ad, w.acm
    if w.note:
        notes.append(w.note)
    contributors = dict(w.contributors)
    _worst.series_contributors(ctx, opt, w.acm_base, series, contributors)

    stat = p_low = p_high = samples_db = ad_samples = extra_mc = method = None
    if opt.mc_samples > 0 and opt.method == "monte-carlo":
        mad, macm = monte_carlo(ctx, opt)
        mdb = cmrr_db(mad, macm, ad_nom, conv)
        stat = _low_percentile(mdb, opt.percentile)
        p_low, p_high = (float(v) for v in np.percentile(mad, [opt.percentile, 100 - opt.percentile]))
        samples_db, ad_samples = _thin(mdb, opt.keep_samples), _thin(mad, opt.keep_samples)
        extra_mc, method = (mad, macm), "monte-carlo"
        notes.append(f"statistical gain and CMRR: Monte Carlo of {opt.mc_samples:,} circuit solves")
    elif opt.mc_samples > 0:
        st = sensitivity.statistics(ctx, opt, ad_nom)
        stat, p_low, p_high, method = st.cmrr_db, st.p_low, st.p_high, st.method
        samples_db, ad_samples = _thin(st.db_samples, opt.keep_samples), _thin(st.ad_samples, opt.keep_samples)
        notes.append(st.note)

    gain = Spread(nominal=ad_nom, worst_min=w.ad_min, worst_max=w.ad_max,
                  p_low=p_low, p_high=p_high, samples=ad_samples, method=method)
    # Nominal = the circuit as drawn, REF source (and known source) resistances included: a
    # matched stage fed from a resistive REF is not "infinite CMRR" as drawn.
    cmrr = CmrrResult(nominal_db=w.nominal_db, worst_db=w.worst_db, statistical_db=stat, percentile=opt.percentile,
                      ad_convention=conv, contributors=contributors, samples_db=samples_db,
                      statistical_method=method)
    extra = {"ad_nominal": ad_nom, "acm_nominal": w.acm_nom, "aref": w.aref,
             "ad_ideal_ports": w.ad_base, "acm_ideal_ports": w.acm_base,
             "acm_worst": w.acm_worst, "ad_corners": ad, "acm_corners": acm,
             "mc": extra_mc, "ctx": ctx}
    return gain, cmrr, notes, extra


# --------------------------------------------------------------------------------------------
# Input RFI filter

FILTER_FREQS = (1e3, 1e4, 1e5, 1e6)   # Hz at which CM -> DM conversion is reported


def filter_nets(sub: SubCircuit):
    """The input RFI filter at the stage's input ports, docs/engineering.md sec. 7: a series
    resistor from each of 'in_p' and 'in_n' to a filter node, a capacitor Cc from each filter node
    to a fixed net (a rail, ground or the REF port), and optionally Cd across the two filter nodes.
    Every leg needs its Cc, or the legs share a Cd. A node that an op-amp output drives, or
    feeds back to through a resistor (the summing node of a difference amplifier), is a gain
    network and not a filter node, whatever capacitors sit on it.

    Returns ((net_p, net_n), series resistor names) or None.
    """
    if not sub.capacitors:
        return None              # no capacitor, no filter (every leg needs one)
    outs = {o.out for o in sub.opamps}
    fixed = set(sub.rails) | {n for n in (sub.ports.get("ref"),) if n}

    def is_fixed(net: str) -> bool:
        return net in fixed or mna.is_ground(net)

    def feedback_node(net: str) -> bool:
        if net in outs:
            return True
        return any((r.a == net and r.b in outs) or (r.b == net and r.a in outs) for r in sub.resistors)

    def cc(net: str) -> bool:
        return any((c.a == net and is_fixed(c.b)) or (c.b == net and is_fixed(c.a)) for c in sub.capacitors)

    legs = []
    for role in ("in_p", "in_n"):
        port = sub.ports.get(role)
        cands = []
        for r in sub.resistors:
            other = r.b if r.a == port else r.a if r.b == port else None
            if other is None or other == port or is_fixed(other) or feedback_node(other):
                continue
            if other in (sub.ports.get("in_p"), sub.ports.get("in_n")):
                continue
            cands.append((other, r.name))
        if len(cands) != 1:
            return None          # no series leg, or a branching network: not this shape
        legs.append(cands[0])
    (xp, rp), (xn, rn) = legs
    if xp == xn:
        return None
    cd = any({c.a, c.b} == {xp, xn} for c in sub.capacitors)
    if not ((cc(xp) and cc(xn)) or cd):
        return None
    return (xp, xn), [rp, rn]


def _corner_3db(fn, lo=1e-2, hi=1e10):
    """Frequency where |fn(f)| falls to 1/sqrt(2) of |fn(lo)| (bisection in log f)."""
    ref = abs(fn(lo))
    target = ref / math.sqrt(2.0)
    if abs(fn(hi)) > target:
        return math.inf
    a, b = math.log(lo), math.log(hi)
    for _ in range(80):
        m = 0.5 * (a + b)
        if abs(fn(math.exp(m))) > target:
            a = m
        else:
            b = m
    return math.exp(0.5 * (a + b))


def input_filter(sub: SubCircuit, freqs=FILTER_FREQS, max_bits: int = 14) -> InputFilter | None:
    """Differential and common-mode corner frequencies of the input RFI filter, and its worst
    common-mode to differential conversion |Vd/Vcm| over the R and C tolerance corners.

    The corners are found numerically on the stage's own AC equations, so the amplifier's
    input loading is included; for the textbook filter (series R per leg, Cc per leg to
    ground, Cd across) they equal f_DM = 1/(2 pi R (2 Cd + Cc)) and f_CM = 1/(2 pi R Cc).
    Returns None when no such filter is found at the input ports.

    References
    ----------
    docs/engineering.md sec. 7 [derived, ngspice AC-verified]: R = 4.02 k, Cc = 1 nF, Cd = 10 nF ->
    f_DM = 1885.3 Hz, f_CM = 39.59 kHz.
    """
    found = filter_nets(sub)
    if found is None:
        return None
    nets, rnames = found
    topo = mna.compile_circuit(sub)
    R0 = mna.nominal_values(sub)
    C0 = np.array([[c.farads.value for c in sub.capacitors]], dtype=float)
    ainv = mna.opamp_ainv(sub)

    def h_dm(f):
        X = mna.solve_ac(topo, f, R0, C0, ainv[None, :] if ainv.size else None)
        return complex(topo.coefficients(X, nets[0])[0, mna.VD] - topo.coefficients(X, nets[1])[0, mna.VD])

    def h_cm(f):
        X = mna.solve_ac(topo, f, R0, C0, ainv[None, :] if ainv.size else None)
        return complex(0.5 * (topo.coefficients(X, nets[0])[0, mna.VCM]
                              + topo.coefficients(X, nets[1])[0, mna.VCM]))

    f_dm, f_cm = _corner_3db(h_dm), _corner_3db(h_cm)
    # Tolerance corners over the filter's own parts: its series resistors and every capacitor
    # on its nets.
    ri = [i for i, r in enumerate(sub.resistors) if r.name in rnames and r.tol.value > 0]
    ci = [i for i, c in enumerate(sub.capacitors)
          if ({c.a, c.b} & set(nets)) and c.tol.value > 0]
    k = len(ri) + len(ci)
    xs = corner_matrix(min(k, max_bits))
    if k > max_bits:
        xs = np.hstack([xs, np.zeros((xs.shape[0], k - max_bits))])
    R = np.repeat(R0, xs.shape[0], axis=0)
    C = np.repeat(C0, xs.shape[0], axis=0)
    for j, i in enumerate(ri):
        R[:, i] *= 1.0 + xs[:, j] * sub.resistors[i].tol.value
    for j, i in enumerate(ci):
        C[:, i] *= 1.0 + xs[:, len(ri) + j] * sub.capacitors[i].tol.value
    conv = {}
    A = np.broadcast_to(ainv, (xs.shape[0], ainv.size)) if ainv.size else None
    for f in freqs:
        X = mna.solve_ac(topo, f, R, C, A)
        vd = topo.coefficients(X, nets[0])[:, mna.VCM] - topo.coefficients(X, nets[1])[:, mna.VCM]
        conv[float(f)] = float(np.max(np.abs(vd)))
    parts = list(rnames) + [sub.capacitors[i].name for i in ci]
    return InputFilter(nets=nets, f_dm_hz=f_dm, f_cm_hz=f_cm, cm_to_dm=conv, parts=parts)
