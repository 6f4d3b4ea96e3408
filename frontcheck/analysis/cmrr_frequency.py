"""CMRR of one stage against frequency, nominal and worst case over the tolerance corners.

The stage (with any input RC filter that recognition placed in its SubCircuit) is solved over a
frequency grid by :mod:`small_signal`, with each op-amp's open-loop gain falling at its
gain-bandwidth product and its own CMRR falling 20 dB/decade above a corner where part data
gives them, ideal otherwise. CMRR(f) = |Ad(f)| / |Acm(f)| with Ad the nominal differential gain
at that frequency (the nominal-Ad convention of the DC analysis).

Worst case. Resistor variables as for the DC tolerance analysis (independent parts, and
networks by absolute and ratio tolerance), capacitor tolerances as independent variables, and
each op-amp's CMRR with either sign. Up to ``max_bits`` variables every corner is solved at
every frequency; above, Acm is taken to first order and its worst magnitude bounded by
|Acm0| + sum |dAcm/dx| (an upper bound: conservative, and said so).

The input filter's own conversion of common mode to differential, for two legs R_a C_a and
R_b C_b (without a capacitor across): Vd/Vcm = 1/(1 + j w R_a C_a) - 1/(1 + j w R_b C_b).

Formulas, sources and check values: docs/engineering.md sec. 7 and 11.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from frontcheck.analysis import mna, small_signal
from frontcheck.circuit import SubCircuit

DEFAULT_FREQS = np.logspace(0.0, 6.0, 61)    # 1 Hz .. 1 MHz, 10 points a decade
DB_CAP = 1e-13                               # |Acm/Ad| below this: round-off, CMRR infinite
BATCH = 4096                                 # parameter sets x frequencies per stacked solve


@dataclass
class CmrrSweep:
    freqs: np.ndarray          # Hz
    ad: np.ndarray             # complex nominal differential gain
    acm: np.ndarray            # complex nominal common-mode gain
    nominal_db: np.ndarray
    worst_db: np.ndarray | None
    exhaustive: bool = True
    variables: tuple[str, ...] = ()


def to_db(ad, acm) -> np.ndarray:
    """20 log10(|Ad| / |Acm|), infinite where |Acm| is round-off against |Ad|."""
    ad, acm = np.abs(ad), np.abs(acm)
    with np.errstate(divide="ignore"):
        db = 20.0 * np.log10(ad / np.where(acm > 0, acm, 1.0))
    return np.where(acm <= DB_CAP * ad, np.inf, db)


def rc_conversion(f, ra, ca, rb, cb):
    """|Vd/Vcm| of two RC low-pass legs driven by the same common-mode voltage.

    Parameters
    ----------
    f : array_like
        Frequencies, Hz.
    ra, ca, rb, cb : float or array_like
        Each leg's series resistance (ohms) and capacitance to ground (farads).

    References
    ----------
    C. Kitchin, L. Counts, *A Designer's Guide to Instrumentation Amplifiers*, 3rd ed., Analog
    Devices 2006, chapter on RFI rectification (common-mode to differential conversion of a
    mismatched input filter; chapter from memory).
    """
    w = 2j * np.pi * np.asarray(f, float)
    return np.abs(1.0 / (1.0 + w * ra * ca) - 1.0 / (1.0 + w * rb * cb))


def rc_conversion_worst(f, r, c, r_tol, c_tol):
    """Worst |Vd/Vcm| of a nominally symmetric two-leg filter (R and C per leg, no capacitor
    across) whose parts sit anywhere within their tolerances.

    |H|^2 = w^2 (ta - tb)^2 / ((1 + w^2 ta^2)(1 + w^2 tb^2)) has no interior maximum in either
    time constant (its only stationary point in ta is ta = tb, a minimum), so the worst case
    is one leg at its largest time constant and the other at its smallest.
    """
    hi = r * (1 + r_tol) * c * (1 + c_tol)
    lo = r * (1 - r_tol) * c * (1 - c_tol)
    return rc_conversion(f, hi, 1.0, lo, 1.0)


def _variables(sub: SubCircuit):
    """(names, resistor matrix (k, nR), capacitor matrix (k, nC)) of tolerance variables."""
    nR, nC = len(sub.resistors), len(sub.capacitors)
    names, ra, ca = [], [], []
    groups: dict[str, list[int]] = {}
    for i, r in enumerate(sub.resistors):
        if r.match_group and r.match_tol is not None:
            groups.setdefault(r.match_group, []).append(i)
        elif r.tol.value > 0:
            row = np.zeros(nR)
            row[i] = r.tol.value
            names.append(r.name), ra.append(row), ca.append(np.zeros(nC))
    for g, members in groups.items():
        common = np.zeros(nR)
        for i in members:
            common[i] = sub.resistors[i].tol.value
        if common.any():
            names.append(f"{g} (absolute)"), ra.append(common), ca.append(np.zeros(nC))
        for i in members:
            if sub.resistors[i].match_tol.value > 0:
                row = np.zeros(nR)
                row[i] = sub.resistors[i].match_tol.value / 2.0
                names.append(f"{sub.resistors[i].name} (ratio in {g})"), ra.append(row), ca.append(np.zeros(nC))
    for j, c in enumerate(sub.capacitors):
        if c.tol.value > 0:
            row = np.zeros(nC)
            row[j] = c.tol.value
            names.append(c.name), ra.append(np.zeros(nR)), ca.append(row)
    k = len(names)
    return names, np.array(ra).reshape(k, nR), np.array(ca).reshape(k, nC)


def _values(base, A, x):
    """base (n,) scaled by prod_v (1 + x_v A[v]) for each row of x (m, k) -> (m, n)."""
    if A.shape[0] == 0:
        return np.broadcast_to(base, (x.shape[0], base.size))
    return base[None, :] * np.prod(1.0 + x[:, :, None] * A[None, :, :], axis=1)


def _solve_acm(topo, f, R, C, dyn, signs, rs=None):
    """Complex (Ad, Acm) for parameter rows R, C at the frequency of each row (``f`` scalar or
    one per row) with op-amp CMRR signs."""
    m = R.shape[0]
    fv = np.broadcast_to(np.asarray(f, float), (m,))
    ainv = np.stack([d.ainv(fv) for d in dyn], axis=1) if dyn else None
    cinv = np.stack([d.cinv(fv) * signs[:, k] for k, d in enumerate(dyn)], axis=1) if dyn else None
    M, B = small_signal.assemble(topo, fv, R, C, ainv, cinv, rs)
    g = small_signal.port_gains(topo, M, B)
    return g[:, mna.VD], g[:, mna.VCM]


def cmrr_sweep(sub: SubCircuit, freqs: Sequence[float] = DEFAULT_FREQS,
               dynamics: Sequence[small_signal.OpAmpDynamics] | None = None,
               worst: bool = True, max_bits: int = 12,
               series: dict[str, float] | None = None) -> CmrrSweep:
    """Nominal and worst-case CMRR of a stage at each frequency.

    Parameters
    ----------
    sub : SubCircuit
        The stage, its input filter included when it is part of the SubCircuit.
    freqs : sequence of float
        Frequencies, Hz (default 1 Hz .. 1 MHz, 10 a decade).
    dynamics : sequence of OpAmpDynamics, optional
        Per op-amp; default the models' DC gain and CMRR, no pole.
    worst : bool
        Also the worst case over tolerance corners and op-amp CMRR signs.
    series : dict, optional
        Port ('ref', 'in_p', 'in_n') -> resistance behind it (a REF divider's Thevenin
        resistance, say), as in the DC analysis.

    Returns
    -------
    CmrrSweep

    References
    ----------
    R. Pallas-Areny, J. G. Webster, "Common mode rejection ratio in differential amplifiers",
    IEEE Trans. Instrum. Meas. 40(4), 1991 (resistor, op-amp and source contributions; worst
    case adds magnitudes); C. Kitchin, L. Counts, *A Designer's Guide to Instrumentation
    Amplifiers*, 3rd ed., 2006 (CMRR falling with frequency, input filter conversion).
    """
    freqs = np.asarray(freqs, float)
    dyn0 = list(dynamics) if dynamics is not None else small_signal.dynamics_from_models(sub)
    if freqs.size > 1 and _flat(sub, dyn0):
        # Nothing in the stage depends on frequency: one solve, the same at every frequency.
        (one,) = flat_sweeps([(sub, dyn0, series)], freqs[0], worst, max_bits)
        return _repeated(one, freqs)
    series = dict(series or {})
    topo = mna.compile_circuit(sub, tuple(series))
    rs = np.array([series[role] for role, _, _ in topo.series], float) if topo.series else None
    dyn = list(dynamics) if dynamics is not None else small_signal.dynamics_from_models(sub)
    r0 = mna.nominal_values(sub)[0]
    c0 = np.array([c.farads.value for c in sub.capacitors], float)
    fl = freqs.size
    ainv = np.stack([d.ainv(freqs) for d in dyn], axis=1) if dyn else None
    cinv = np.stack([d.cinv(freqs) for d in dyn], axis=1) if dyn else None
    M, B = small_signal.assemble(topo, freqs, np.broadcast_to(r0, (fl, r0.size)),
                                 np.broadcast_to(c0, (fl, c0.size)), ainv, cinv, rs)
    g = small_signal.port_gains(topo, M, B)
    ad, acm = g[:, mna.VD], g[:, mna.VCM]
    result = CmrrSweep(freqs=freqs, ad=ad, acm=acm, nominal_db=to_db(ad, acm), worst_db=None)
    if not worst:
        return result
    names, AR, AC = _variables(sub)
    exhaustive = len(names) <= max_bits
    x = _corners(len(names), exhaustive)
    worst_acm = _worst_acm(topo, freqs, dyn, _values(r0, AR, x), _values(c0, AC, x), exhaustive, rs)
    result.worst_db = to_db(np.abs(ad), worst_acm)
    result.exhaustive = exhaustive
    result.variables = tuple(names)
    return result


def _flat(sub: SubCircuit, dyn) -> bool:
    """Nothing in the stage depends on frequency (no capacitor, no pole, no CMRR corner)."""
    return not sub.capacitors and not any(d.gbw_hz or d.cmrr_corner_hz for d in dyn)


def _repeated(one: CmrrSweep, freqs: np.ndarray) -> CmrrSweep:
    n = freqs.size
    return CmrrSweep(freqs=freqs, ad=np.repeat(one.ad, n), acm=np.repeat(one.acm, n),
                     nominal_db=np.repeat(one.nominal_db, n),
                     worst_db=None if one.worst_db is None else np.repeat(one.worst_db, n),
                     exhaustive=one.exhaustive, variables=one.variables)


def _stack(rows: list) -> np.ndarray | None:
    return None if rows[0] is None else np.concatenate(rows)


def flat_sweeps(items, f0: float, worst: bool = True, max_bits: int = 12) -> list[CmrrSweep]:
    """:func:`cmrr_sweep` at the one frequency ``f0`` of stages with nothing frequency
    dependent, each item (sub, dynamics, series[, its compiled topology[, its tolerance
    variables (tolerance.variables: the sweep's own when it has no capacitor)]]); items of one
    topology family (the same compiled structure, number of variables and op-amps with a
    CMRR: frontcheck.analysis.family) are solved in one stacked call, every row assembled from its own stage's values as a solve
    of that stage alone is, so the numbers are the same. The rows of stages with the same
    counts (resistors, capacitors, variables, op-amps) are made together: each element is the
    same product of the same numbers as for the stage alone."""
    plans = [_plan(item, f0, worst, max_bits) for item in items]
    groups: dict[tuple, list[int]] = {}
    for i, p in enumerate(plans):
        groups.setdefault(p["key"], []).append(i)
    rows = {"f": [], "R": [], "C": [], "ainv": [], "cinv": [], "rs": []}
    at, start = 0, [0] * len(plans)
    for members in groups.values():
        for name, block in _group_rows([plans[i] for i in members], f0, worst).items():
            rows[name].append(block)
        for i in members:
            start[i], at = at, at + plans[i]["m"]
    topo = plans[0]["topo"]
    M, B = small_signal.assemble(topo, _stack(rows["f"]), _stack(rows["R"]), _stack(rows["C"]),
                                 _stack(rows["ainv"]), _stack(rows["cinv"]), _stack(rows["rs"]))
    g = small_signal.port_gains(topo, M, B)
    # every stage's nominal row, and its dB figures, in one elementwise operation each
    first = np.array(start, dtype=np.intp)
    ad, acm = g[first, mna.VD], g[first, mna.VCM]
    nominal = to_db(ad, acm)
    worst_db = to_db(np.abs(ad), _worst_rows(g, plans, groups, start)) if worst else None
    f = np.array([float(f0)])
    out = []
    for i, p in enumerate(plans):
        one = CmrrSweep(freqs=f.copy(), ad=ad[i:i + 1], acm=acm[i:i + 1],
                        nominal_db=nominal[i:i + 1], worst_db=None)
        if worst:
            one.worst_db, one.exhaustive, one.variables = worst_db[i:i + 1], p["exhaustive"], p["names"]
        out.append(one)
    return out


def _worst_rows(g: np.ndarray, plans: list[dict], groups: dict, start: list[int]) -> np.ndarray:
    """Each stage's worst |Acm| over its corner rows of ``g`` (after its nominal row): the
    largest over all of them when exhaustive (one maximum per group of stages laid out
    alike), else the first-order bound of :func:`_worst_acm`, stage by stage."""
    w = np.empty(len(plans))
    for members in groups.values():
        p0, at = plans[members[0]], start[members[0]]
        m, nx, G = p0["m"], p0["nx"], len(members)
        a = g[at:at + G * m, mna.VCM].reshape(G, m)[:, 1:].reshape(G, nx, -1)
        if p0["exhaustive"]:
            w[members] = np.max(np.abs(a), axis=(1, 2))
            continue
        for j, i in enumerate(members):
            one = a[j:j + 1]
            w[i] = np.max(np.abs(one[:, 0]) + np.sum(np.abs(one[:, 1:] - one[:, :1]), axis=1), axis=1)[0]
    return w


def _plan(item, f0: float, worst: bool, max_bits: int) -> dict:
    """One stage of :func:`flat_sweeps`: its values, variables and op-amp numbers at ``f0``
    (the same at every row: nothing in the stage depends on frequency), and the key of the
    stages whose rows are made with it."""
    sub, dyn, series, *compiled = item
    series = dict(series or {})
    topo = compiled[0] if compiled else mna.compile_circuit(sub, tuple(series))
    rs = np.array([series[role] for role, _, _ in topo.series], float) if topo.series else None
    if len(compiled) > 1 and not sub.capacitors:
        # the DC tolerance variables of the same circuit (tolerance.variables): the same
        # names and rows as _variables makes, without capacitor rows
        var = compiled[1]
        names, AR, AC, r0 = var.names, var.A, np.zeros((len(var.names), 0)), var.r0
    else:
        names, AR, AC = _variables(sub)
        r0 = mna.nominal_values(sub)[0]
    exhaustive = len(names) <= max_bits
    nO = len(dyn)
    any_cmrr = any(d.cmrr_db is not None for d in dyn)
    ns, S = _sign_rows(nO, any_cmrr, len(names), exhaustive, worst)
    f1 = np.full(1, float(f0))
    cinv = [d.cinv(f1) for d in dyn]
    p = {"topo": topo, "rs": rs, "r0": r0, "AR": AR, "AC": AC,
         "c0": np.array([c.farads.value for c in sub.capacitors], float), "names": tuple(names),
         "exhaustive": exhaustive, "ns": ns, "S": S, "nx": _corners(len(names), exhaustive).shape[0],
         "ainv": [d.ainv(f1)[0] for d in dyn], "cinv": [c[0] for c in cinv], "m": S.shape[0]}
    p["key"] = (AR.shape, AC.shape, exhaustive, nO, any_cmrr, tuple(c.dtype.str for c in cinv),
                None if rs is None else rs.size)
    return p


def _group_rows(plans: list[dict], f0: float, worst: bool) -> dict:
    """The assembly rows of stages with one key: per stage the nominal row, then every corner
    with every op-amp CMRR sign (as _worst_acm lays them out), stage after stage."""
    p0 = plans[0]
    G, m, S = len(plans), p0["m"], p0["S"]
    k = p0["AR"].shape[0]
    x = _corners(k, p0["exhaustive"])

    def values(base: str, var: str) -> np.ndarray:
        b = np.stack([p[base] for p in plans])                      # (G, n)
        if not worst:
            return b
        out = np.empty((G, m, b.shape[1]))
        out[:, 0] = b
        if k:
            A = np.stack([p[var] for p in plans])                   # (G, k, n)
            v = b[:, None, :] * np.prod(1.0 + x[None, :, :, None] * A[:, None, :, :], axis=2)
        else:
            v = np.broadcast_to(b[:, None, :], (G, 1, b.shape[1]))
        out[:, 1:] = np.repeat(v, p0["ns"], axis=1)
        return out.reshape(G * m, b.shape[1])

    nO = S.shape[1]
    rows = {"f": np.full(G * m, float(f0)), "R": values("r0", "AR"), "C": values("c0", "AC")}
    rows["ainv"] = np.repeat(np.array([p["ainv"] for p in plans], complex).reshape(G, nO), m,
                             axis=0) if nO else None
    rows["cinv"] = np.stack([(np.array([p["cinv"][j] for p in plans])[:, None] * S[None, :, j]).reshape(G * m)
                             for j in range(nO)], axis=1) if nO else None
    rows["rs"] = np.repeat(np.stack([p["rs"] for p in plans]), m, axis=0) if p0["rs"] is not None else None
    return rows


@functools.lru_cache(maxsize=None)
def _corners(k: int, exhaustive: bool) -> np.ndarray:
    """Rows of variable values: every corner of k variables at -1/+1 when ``exhaustive``,
    else the nominal and each variable alone at +1 (for the first-order bound). One read-only
    array per (k, exhaustive), shared by every stage that asks."""
    if exhaustive:
        x = np.array(np.meshgrid(*[[-1.0, 1.0]] * k, indexing="ij")).reshape(k, -1).T if k else np.zeros((1, 0))
    else:
        x = np.vstack([np.zeros((1, k)), np.eye(k)])
    x.setflags(write=False)
    return x


@functools.lru_cache(maxsize=None)
def _sign_rows(nO: int, any_cmrr: bool, k: int, exhaustive: bool, worst: bool) -> tuple:
    """(number of op-amp CMRR sign sets, (rows, nO) signs of a flat sweep's rows): the
    nominal row, then every corner of :func:`_corners` with every sign set. Read-only,
    shared by every stage with the same counts."""
    signs = np.array(np.meshgrid(*[[-1.0, 1.0]] * nO, indexing="ij")).reshape(nO, -1).T \
        if nO else np.ones((1, 0))
    if not any_cmrr:
        signs = np.ones((1, nO))
    nx = _corners(k, exhaustive).shape[0]
    S = np.vstack([np.ones((1, nO)), np.tile(signs, (nx, 1))]) if worst else np.ones((1, nO))
    S.setflags(write=False)
    return signs.shape[0], S


def _worst_acm(topo, freqs: np.ndarray, dyn, R: np.ndarray, C: np.ndarray, exhaustive: bool,
               rs) -> np.ndarray:
    """Worst |Acm| at each frequency over the parameter rows R, C (from :func:`_corners`)
    and every sign of each op-amp's own CMRR: the largest over all corners when
    ``exhaustive``, else |Acm0| + sum |dAcm/dx| (an upper bound)."""
    nO = len(dyn)
    signs_all = np.array(np.meshgrid(*[[-1.0, 1.0]] * nO, indexing="ij")).reshape(nO, -1).T \
        if nO else np.ones((1, 0))
    if not any(d.cmrr_db is not None for d in dyn):
        signs_all = np.ones((1, nO))
    fl = freqs.size
    worst_acm = np.empty(fl)
    nx = R.shape[0]
    Rb = np.repeat(R, signs_all.shape[0], axis=0)
    Cb = np.repeat(C, signs_all.shape[0], axis=0)
    Sb = np.tile(signs_all, (nx, 1))
    per = Rb.shape[0]
    step = max(1, BATCH // per)          # frequencies solved together
    for i0 in range(0, fl, step):
        fs = freqs[i0:i0 + step]
        m = fs.size
        _, a = _solve_acm(topo, np.repeat(fs, per), np.tile(Rb, (m, 1)), np.tile(Cb, (m, 1)), dyn,
                          np.tile(Sb, (m, 1)), rs)
        a = a.reshape(m, nx, -1)
        if exhaustive:
            worst_acm[i0:i0 + m] = np.max(np.abs(a), axis=(1, 2))
        else:
            bound = np.abs(a[:, 0]) + np.sum(np.abs(a[:, 1:] - a[:, :1]), axis=1)
            worst_acm[i0:i0 + m] = np.max(bound, axis=1)
    return worst_acm



def _finite_list(a) -> list:
    """The values as floats, None where not finite (as :func:`_finite` of each, in one pass)."""
    return [v if math.isfinite(v) else None for v in np.asarray(a, float).tolist()]


def _finite(x) -> float | None:
    return float(x) if np.isfinite(x) else None


def _stage_dynamics(sub: SubCircuit) -> list:
    dyn = []
    for d, o in zip(small_signal.dynamics_from_models(sub), sub.opamps):
        g = o.model.gbw
        dyn.append(small_signal.OpAmpDynamics(d.aol, g.value if g is not None else None, d.cmrr_db))
    return dyn


def _family_sweep(ctx, sub: SubCircuit, series, max_bits: int) -> CmrrSweep | None:
    """The flat sweep of ``sub`` at its one frequency (``DEFAULT_FREQS[0]``), solved with the
    rest of its tolerance family (``ctx`` is its ``tolerance.Context``), or None where that
    does not apply."""
    fam = getattr(ctx, "family", None)
    if fam is None or ctx.sub is not sub or set(series or {}) != {r for r, _, _ in ctx.topo.series}:
        return None

    def every(members):
        items, where, seen = [], [], {}
        for c, u in zip(members, fam.set_of.tolist()):
            dyn = _stage_dynamics(c.sub)
            if not _flat(c.sub, dyn):
                where.append(None)
                continue
            # members of one set of values with the same op-amp numbers: one sweep
            key = (u, tuple(dyn))
            if key not in seen:
                seen[key] = len(items)
                series = {r: float(v) for (r, _, _), v in zip(c.topo.series, c.rs)}
                # compiled with these series; its tolerance variables are the sweep's
                items.append((c.sub, dyn, series, c.topo, c.var))
            where.append((seen[key], tuple(c.var.names)))
        got = flat_sweeps(items, DEFAULT_FREQS[0], True, max_bits) if items else []
        return [None if w is None else _named(got[w[0]], w[1]) for w in where]

    return fam.shared(ctx, ("flat-sweep", max_bits), every)


def _named(one: CmrrSweep, variables: tuple) -> CmrrSweep:
    """A sweep of a set of values as a member's own (its own variable names)."""
    return CmrrSweep(one.freqs, one.ad, one.acm, one.nominal_db, one.worst_db, one.exhaustive,
                     variables)


_FREQS_HZ = DEFAULT_FREQS.tolist()


def _flat_lists(one: CmrrSweep) -> dict:
    """The lists of :func:`stage_sweep` of a flat sweep at ``DEFAULT_FREQS``: its one value at
    every frequency (what ``_finite_list`` of the repeated sweep gives)."""
    n = len(_FREQS_HZ)
    nominal, worst = (v if math.isfinite(v) else None
                      for v in (float(one.nominal_db[0]), float(one.worst_db[0])))
    return {"freqs_hz": list(_FREQS_HZ), "nominal_db": [nominal] * n, "worst_db": [worst] * n,
            "exhaustive": one.exhaustive}


def stage_sweep(sub: SubCircuit, cmrr_at_hz: float | None = None, max_bits: int = 10,
                series: dict[str, float] | None = None, ctx=None) -> dict:
    """The CMRR-against-frequency figures a stage's result carries (reports plot them and
    ``cmrr-budget`` judges the value at ``CMRR At``): each op-amp's GBW where its part data
    gives one, its DC CMRR flat (no part number gives a CMRR corner), ideal otherwise.

    Returns a dict of plain lists: ``freqs_hz``, ``nominal_db``, ``worst_db`` (None = infinite),
    ``exhaustive``, and with ``cmrr_at_hz`` also ``at_hz``, ``at_nominal_db``, ``at_worst_db``.
    ``ctx``: the stage's ``tolerance.Context``; with a family, a sweep that does not depend on
    frequency is solved for the whole family at once (:func:`flat_sweeps`).
    """
    one = _family_sweep(ctx, sub, series, max_bits) if ctx is not None else None
    dyn = _stage_dynamics(sub) if one is None or cmrr_at_hz else None
    if one is not None:
        out = _flat_lists(one)
    else:
        s = cmrr_sweep(sub, DEFAULT_FREQS, dyn, max_bits=max_bits, series=series)
        out = {"freqs_hz": s.freqs.tolist(), "nominal_db": _finite_list(s.nominal_db),
               "worst_db": _finite_list(s.worst_db), "exhaustive": s.exhaustive}
    out["gbw_from"] = [o.name for o in sub.opamps if o.model.gbw is not None]
    if cmrr_at_hz:
        a = cmrr_sweep(sub, [cmrr_at_hz], dyn, max_bits=max_bits, series=series)
        out.update({"at_hz": float(cmrr_at_hz), "at_nominal_db": _finite(a.nominal_db[0]),
                    "at_worst_db": _finite(a.worst_db[0])})
    return out
