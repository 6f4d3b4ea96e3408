"""The worst-case figures of a stage, alone and for every stage of a topology family at once.

``worst_figures`` is what ``tolerance.analyse_tolerance`` reads of a stage besides its
statistics: the gains as drawn (with and without the series port resistances), Ad and Acm at
every tolerance corner with each op-amp's CMRR sign, the worst CMRR over them, and the CMRR of
the resistors alone and of each op-amp's own CMRR alone (``series_contributors`` adds the
series sources alone).

For a member of a ``family.Family`` those have the same shape for every member: each is one
stacked solve and one array operation for the family (``many``), and every member's record is
sliced from them. The numbers are those of the stage alone: the same stacked solves the family
made when each member asked in turn, elementwise operations, and per-member minima and maxima
over the same values (exact whatever the order). The corners that are not the same for every
member (sensitivity-sign corners above ``max_bits`` variables) and op-amp CMRR added in
magnitude (above ``joint_bits``) are left to each member. A test compares the two
(tests/analysis/test_statistics_many.py).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from frontcheck.analysis import mna
from frontcheck.analysis.options import Options
from frontcheck.analysis.tolerance import (Context, cmrr_db, corner_matrix, make_context,
                                           worst_corners)


@dataclass
class Worst:
    """What ``analyse_tolerance`` reads of a stage besides its statistics: the gains as drawn
    (with and without the series port resistances), Ad and Acm at every corner (and the note
    on how they were chosen), the nominal and worst CMRR, the CMRR of each contributor alone
    (the series sources apart: ``series_contributors``)."""

    ad_nom: float
    acm_nom: float
    aref: float
    ad_base: float
    acm_base: float
    nominal_db: float
    ad: np.ndarray
    acm: np.ndarray
    note: str | None
    worst_db: float
    contributors: dict
    ad_min: float = None        # np.min(ad), np.max(ad) and np.max(np.abs(acm)): made with
    ad_max: float = None        # the corners (for a family, one reduction for every member)
    acm_worst: float = None

    def __post_init__(self):
        if self.ad_min is None:
            self.ad_min, self.ad_max = float(np.min(self.ad)), float(np.max(self.ad))
            self.acm_worst = float(np.max(np.abs(self.acm)))


def worst_figures(ctx: Context, opt: Options) -> Worst:
    """The :class:`Worst` of the stage in ``ctx``; a stage of a family gets it made for every
    member at once (``many``: the same numbers)."""
    if ctx.family is not None:
        got = family_worst(ctx, opt)
        if got is not None:
            return got
    zero, conv = np.zeros((1, len(ctx.var.names))), opt.ad_convention
    nom = ctx.evaluate(zero, use_opamp_cmrr=False, shared=True)   # as drawn, ideal op-amp CMRR
    base = ctx.evaluate(zero, use_opamp_cmrr=False, use_rs=False, shared=True)
    ad, acm, note = worst_corners(ctx, opt)
    return Worst(float(nom.ad[0]), float(nom.acm[0]), float(nom.aref[0]), float(base.ad[0]),
                 float(base.acm[0]), float(cmrr_db(nom.ad, nom.acm, nom.ad[0], conv)[0]), ad, acm,
                 note, float(np.min(cmrr_db(ad, acm, float(nom.ad[0]), conv))),
                 _contributors(ctx, opt, base))


def _contributors(ctx: Context, opt: Options, base: mna.Gains) -> dict[str, float]:
    """Worst CMRR (dB) of each contributor alone, everything else ideal: the resistors and
    each op-amp's own CMRR."""
    zero, conv = np.zeros((1, len(ctx.var.names))), opt.ad_convention
    rad, racm, _ = worst_corners(ctx, opt, use_opamp_cmrr=False, use_rs=False)
    out = {"resistors": float(np.min(cmrr_db(rad, racm, float(base.ad[0]), conv)))}
    for i, o in enumerate(ctx.sub.opamps):
        if ctx.cmag[i] == 0:
            continue
        signs = np.zeros((1, ctx.cmag.size))
        signs[0, i] = 1.0
        g = ctx.evaluate(zero, signs, use_rs=False, shared=True)
        out[o.name] = float(cmrr_db(base.ad, g.acm - base.acm, base.ad[0], conv)[0])
    return out


def series_contributors(ctx: Context, opt: Options, acm_base: float,
                         series: dict[str, float] | None, out: dict[str, float]) -> None:
    """Add the worst CMRR (dB) of the REF source and of the source impedances alone to ``out``."""
    zero, conv = np.zeros((1, len(ctx.var.names))), opt.ad_convention
    for role, _, _ in ctx.topo.series:
        label = "REF source" if role == "ref" else "source impedance"
        if label in out:
            continue
        only = {r: v for r, v in (series or {}).items() if (r == "ref") == (role == "ref")}
        g = make_context(ctx.sub, only).evaluate(zero, use_opamp_cmrr=False)
        out[label] = float(cmrr_db(g.ad, g.acm - acm_base, g.ad[0], conv)[0])


def family_worst(ctx, opt):
    """``worst_figures`` of the member ``ctx``, made for every member on the first
    ask; None when the family cannot answer (the member then goes alone)."""
    fam = ctx.family
    k = len(ctx.var.names)
    nO = int(np.count_nonzero(ctx.cmag))
    if k > opt.max_bits or (nO and k + nO > opt.joint_bits):
        return None
    return fam.shared(ctx, ("worst", opt.max_bits, opt.joint_bits, opt.ad_convention),
                      lambda members: many(fam, opt))


def many(fam, opt) -> list:
    """``worst_figures`` of every member of ``fam``, in member order (None for a member
    whose drawn-value gains the family no longer holds). Each set of equal values
    (``family.Family.sets``) is solved once; the contributors are named per member."""
    members = fam.members
    first = members[0]
    k = len(first.var.names)
    conv = opt.ad_convention
    zero = np.zeros((1, k))
    nomd = fam.answers(zero, None, False, True)
    based = fam.answers(zero, None, False, False)
    have = [j for j in range(len(members)) if j in nomd and j in based]
    if not have:
        return [None] * len(members)
    set_of = fam.set_of.tolist()
    src: dict[int, int] = {}                 # a member of each set whose gains are held
    for j in have:
        src.setdefault(set_of[j], j)

    def one(d, field):
        return np.array([getattr(d[src[u]], field)[0] if u in src else 1.0
                         for u in range(len(fam.sets))])

    nom_ad, nom_acm, base_ad, base_acm = (one(nomd, "ad"), one(nomd, "acm"), one(based, "ad"),
                                          one(based, "acm"))
    # every corner with every op-amp CMRR sign (tolerance.worst_corners, enumerated jointly)
    xs = corner_matrix(k)
    active = np.flatnonzero(first.cmag)
    if active.size:
        sg = corner_matrix(active.size)
        signs = np.ones((sg.shape[0], first.cmag.size))
        signs[:, active] = sg
        X, Sg = np.repeat(xs, signs.shape[0], axis=0), np.tile(signs, (xs.shape[0], 1))
    else:
        X, Sg = xs, None
    g = fam.gains_stacked(X, Sg, per_set=True)
    worst_db = np.min(cmrr_db(g.ad, g.acm, nom_ad[:, None], conv), axis=1)
    # each set's extremes over its own corners (minima and maxima are exact in any order)
    ad_min, ad_max = np.min(g.ad, axis=1).tolist(), np.max(g.ad, axis=1).tolist()
    acm_worst = np.max(np.abs(g.acm), axis=1).tolist()
    nominal_db = cmrr_db(nom_ad, nom_acm, nom_ad, conv)
    r = fam.gains_stacked(xs, None, use_opamp_cmrr=False, use_rs=False, per_set=True)
    resistors_db = np.min(cmrr_db(r.ad, r.acm, base_ad[:, None], conv), axis=1)
    opamp_db = {}
    for i in active:
        one_sign = np.zeros((1, first.cmag.size))
        one_sign[0, i] = 1.0
        o = fam.gains_stacked(zero, one_sign, use_rs=False, per_set=True)
        opamp_db[i] = cmrr_db(base_ad, o.acm[:, 0] - base_acm, base_ad, conv)
    out = []
    for j, ctx in enumerate(members):
        if j not in have:
            out.append(None)
            continue
        u = set_of[j]
        contributors = {"resistors": float(resistors_db[u])}
        for i, d in opamp_db.items():
            contributors[ctx.sub.opamps[i].name] = float(d[u])
        out.append(Worst(float(nom_ad[u]), float(nom_acm[u]), float(nomd[j].aref[0]),
                         float(base_ad[u]), float(base_acm[u]), float(nominal_db[u]),
                         g.ad[u].copy(), g.acm[u].copy(), None, float(worst_db[u]),
                         contributors, ad_min[u], ad_max[u], acm_worst[u]))
    return out
