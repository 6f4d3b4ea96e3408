"""Stages of one topology family solved together.

Two stages whose compiled circuits have the same structure (the same free nets in the same
order, every resistor, op-amp and series source stamped between the same rows, the same fixed
weights) differ only in their part values. A tolerance evaluation that asks every stage of such
a family the same question (the drawn values, all corners, the check draws of the statistics,
the node voltages at every corner that headroom reads) is then one stacked solve for all of them: the values of every stage are stacked along the
batch axis of ``mna.solve_dc`` and the answer is sliced back per stage.

The numbers do not change: each stacked matrix is assembled element by element from its own
stage's values, in the same order of operations as a solve of that stage alone, and
``numpy.linalg.solve`` factors every matrix of a stack on its own. A test compares the
batched and the single-stage results on a generated multi-stage design.

Only questions whose parameter sets are the same for every member are batched (the caller
says so with ``shared=True``); a question asked by one stage only (a Monte Carlo fallback,
the linear model's tail points) is solved for that stage alone.
"""

from __future__ import annotations

from typing import Iterable

import numpy as np

from frontcheck.analysis import mna
from frontcheck.errors import InputError

ROWS = 65536    # parameter sets of one stacked family solve (bounds memory, as mna.CHUNK does)


def signature(topo: mna.Topology) -> tuple:
    """The structure of a compiled circuit without its net and part names: equal signatures
    give equal matrices for equal values."""

    def term(t):
        return t if isinstance(t, int) else tuple(t[1].tolist())    # the weights as floats

    return (len(topo.free), tuple((term(a), term(b)) for _, a, b in topo.resistors),
            tuple((term(p), term(m), o) for _, p, m, o in topo.opamps),
            tuple((i, tuple(np.asarray(w, dtype=float).tolist())) for _, i, w in topo.series),
            topo.out, topo.out_neg, tuple(np.asarray(topo.out_offset, dtype=float).tolist()),
            tuple(i for i, n in enumerate(topo.free) if n in topo.floating) if topo.floating else ())


def _key(x: np.ndarray, signs, use_opamp_cmrr: bool, use_rs: bool) -> tuple:
    x = np.ascontiguousarray(x, dtype=float)
    s = None if signs is None else np.ascontiguousarray(signs, dtype=float)
    return (x.shape, x.tobytes(), None if s is None else (s.shape, s.tobytes()),
            bool(use_opamp_cmrr), bool(use_rs))


class Family:
    """Tolerance contexts (``tolerance.Context``) of stages with one signature, the same
    number of tolerance variables, the same op-amps with a CMRR and the same series sources.

    Members with the same values (the identical channels of a multi-channel design) have the
    same answer to every question: each set of values is solved once (``sets``: the member
    that stands for each set; ``set_of``: each member's set) and its answer given to every
    member of the set."""

    def __init__(self, contexts: list):
        self.members = contexts
        self.topo = contexts[0].topo
        self._r0 = np.stack([c.var.r0 for c in contexts])                   # (S, nR)
        k = len(contexts[0].var.names)
        self._A = np.stack([c.var.A for c in contexts]) if k else None      # (S, k, nR)
        self._ainv = np.stack([c.ainv for c in contexts])                   # (S, nO)
        self._cmag = np.stack([c.cmag for c in contexts])                   # (S, nO)
        self._rs = np.stack([c.rs for c in contexts])                       # (S, nS)
        self._pos = {id(c): i for i, c in enumerate(contexts)}
        self._results: dict[tuple, dict[int, mna.Gains]] = {}
        seen: dict[tuple, int] = {}
        sets, set_of = [], []
        for j, c in enumerate(contexts):
            # the very bits of every number a solve reads (shapes are the family's)
            key = (c.var.r0.tobytes(), c.var.A.tobytes(), c.ainv.tobytes(), c.cmag.tobytes(),
                   c.rs.tobytes())
            u = seen.setdefault(key, len(sets))
            if u == len(sets):
                sets.append(j)
            set_of.append(u)
        self.sets = np.array(sets, dtype=np.intp)          # (U,) a member of each set of values
        self.set_of = np.array(set_of, dtype=np.intp)      # (S,) the set of each member

    def stacked(self, idx) -> tuple:
        """(r0, A, ainv, cmag, rs) of the members ``idx``, stacked."""
        return (self._r0[idx], None if self._A is None else self._A[idx], self._ainv[idx],
                self._cmag[idx], self._rs[idx])

    def _values(self, x: np.ndarray, idx: np.ndarray) -> np.ndarray:
        """(len(idx) * N, nR): ``Variables.values`` of the members ``idx`` at the rows ``x``
        (N, k), or at each one's own rows (len(idx), N, k); the same products in the same
        order (a factor 1 + 0 * x where a variable does not touch a resistor is exactly 1)."""
        r0 = self._r0[idx]
        S, nR = r0.shape
        N = x.shape[-2]
        out = np.empty((S, nR, N))
        out[:] = r0[:, :, None]
        if self._A is not None:
            A = self._A[idx]
            xm = x[None, None] if x.ndim == 2 else x[:, None]
            for v in range(A.shape[1]):
                out *= 1.0 + A[:, v, :, None] * xm[..., v]
        return out.transpose(0, 2, 1).reshape(S * N, nR)

    def _solve_all(self, x, signs, use_opamp_cmrr: bool, use_rs: bool, idx) -> np.ndarray:
        """(len(idx) * N, size, 4): ``mna.solve_dc`` of the members ``idx`` at the rows ``x``
        (and ``signs``), shared (N, k) or each one's own (len(idx), N, k)."""
        N = x.shape[-2]
        S = len(idx)
        nO, nS = self._cmag.shape[1], self._rs.shape[1]
        R = self._values(x, idx)
        ainv = np.repeat(self._ainv[idx], N, axis=0)
        c = None
        if use_opamp_cmrr and nO:
            s = np.ones((N, nO)) if signs is None else np.asarray(signs, dtype=float)
            s = s[None, :, :] if s.ndim == 2 else s
            c = (s * self._cmag[idx][:, None, :]).reshape(S * N, nO)
        rs = np.repeat(self._rs[idx], N, axis=0) if use_rs else np.zeros((S * N, nS))
        return mna.solve_dc(self.topo, R, ainv, c, rs)

    @staticmethod
    def _batches(N: int, count: int):
        """Slices of ``count`` members of at most ROWS parameter sets each: the node solutions
        of one slice are held at once (ROWS * size * 4 numbers), not those of the whole family."""
        step = max(1, ROWS // max(N, 1))
        return [slice(j, j + step) for j in range(0, count, step)]

    def _per_set(self, N: int, solve) -> dict:
        """{set: its N rows of ``solve(members)``} for every set of values, solved by batches
        of sets; ``solve`` gives an array or a tuple of arrays, row-stacked member by member."""
        out = {}
        for m in self._batches(N, len(self.sets)):
            got = solve(self.sets[m])
            for i, u in enumerate(range(*m.indices(len(self.sets)))):
                rows = slice(i * N, (i + 1) * N)
                out[u] = tuple(a[rows] for a in got) if isinstance(got, tuple) else got[rows]
        return out

    def _gains_all(self, x, signs, use_opamp_cmrr: bool, use_rs: bool) -> dict[int, mna.Gains]:
        x = np.atleast_2d(np.asarray(x, dtype=float))

        def solve(idx):
            g = mna.gains(self.topo, self._solve_all(x, signs, use_opamp_cmrr, use_rs, idx))
            return g.ad, g.acm, g.aref, g.const

        per = self._per_set(x.shape[0], solve)
        return {j: mna.Gains(*(a.copy() for a in per[u])) for j, u in enumerate(self.set_of.tolist())}

    def gains_stacked(self, x, signs, use_opamp_cmrr: bool = True, use_rs: bool = True,
                      per_set: bool = False) -> mna.Gains:
        """Gains of every member, each field (S, N), at the rows ``x`` and op-amp CMRR factors
        ``signs``: shared, (N, k) and (N, n_opamps), or each member's own, (S, N, ...). With
        ``per_set``, of every set of values instead, (U, N), the rows shared or each set's
        own (U, N, ...). Not kept: the caller asks once for all members."""
        x = np.asarray(x, dtype=float)
        shared = x.ndim == 2 and (signs is None or np.ndim(signs) == 2)
        idx = self.sets if shared or per_set else np.arange(len(self.members))
        N = x.shape[-2]
        parts = []
        for m in self._batches(N, len(idx)):
            xm = x if x.ndim == 2 else x[m]
            sm = signs if signs is None or np.ndim(signs) == 2 else np.asarray(signs)[m]
            parts.append(mna.gains(self.topo, self._solve_all(xm, sm, use_opamp_cmrr, use_rs, idx[m])))
        got = [np.concatenate([getattr(g, f) for g in parts]).reshape(len(idx), N)
               for f in ("ad", "acm", "aref", "const")]
        if shared and not per_set:
            got = [a[self.set_of] for a in got]           # each member its set's rows
        return mna.Gains(*got)

    def answers(self, x, signs, use_opamp_cmrr: bool, use_rs: bool) -> dict[int, mna.Gains]:
        """Every member's answer to ``evaluate`` at ``x`` still held (those not yet taken), by
        member position; the answers stay for their members to take."""
        x = np.atleast_2d(np.asarray(x, dtype=float))
        return self._answers(_key(x, signs, use_opamp_cmrr, use_rs),
                             lambda: self._gains_all(x, signs, use_opamp_cmrr, use_rs))

    def index(self, ctx) -> int:
        """The position of the member ``ctx``."""
        return self._pos[id(ctx)]

    def nodes(self, ctx, x) -> np.ndarray:
        """(N, size, 4) node solution of the member ``ctx`` at the rows ``x`` (ideal op-amp
        CMRR, its series sources in): what the headroom extremes read
        (frontcheck.analysis.corners), solved for every set of values on the first ask (the
        members of a set share its solution: read, never written)."""
        x = np.atleast_2d(np.asarray(x, dtype=float))

        def every():
            per = self._per_set(x.shape[0], lambda idx: self._solve_all(x, None, False, True, idx))
            return {j: per[u] for j, u in enumerate(self.set_of.tolist())}

        got = self._take(ctx, self._answers(("nodes",) + _key(x, None, False, True), every))
        if got is not None:
            return got
        R = ctx.var.values(x)
        n = R.shape[0]
        return mna.solve_dc(ctx.topo, R, np.broadcast_to(ctx.ainv, (n, ctx.ainv.size)), None,
                            np.broadcast_to(ctx.rs, (n, ctx.rs.size)))

    def _answers(self, key: tuple, compute) -> dict:
        """Every member's answer to ``key`` (computed on the first ask). When one member's
        circuit cannot be solved (a singular matrix stops the whole stacked solve) there are
        none: each member then solves alone, and only that member reports the failure."""
        got = self._results.get(key)
        if got is None:
            try:
                got = compute()
            except InputError:
                got = {}
            self._results[key] = got
        return got

    def _take(self, ctx, got: dict):
        """The member's answer, taken once (memory stays bounded), or None."""
        return got.pop(self._pos[id(ctx)], None)

    def evaluate(self, ctx, x, signs, use_opamp_cmrr: bool, use_rs: bool) -> mna.Gains:
        """``ctx.evaluate`` of the member ``ctx``, solved for every member on the first ask."""
        got = self._take(ctx, self._answers(_key(x, signs, use_opamp_cmrr, use_rs),
                                            lambda: self._gains_all(x, signs, use_opamp_cmrr, use_rs)))
        return got if got is not None else ctx.evaluate(x, signs, use_opamp_cmrr, use_rs)

    def shared(self, ctx, key: tuple, every):
        """The answer of the member ``ctx`` to a question every member asks alike:
        ``every(members)`` gives all answers in member order, on the first ask."""
        return self._take(ctx, self._answers(key, lambda: dict(enumerate(every(self.members)))))

    def adjoint(self, ctx):
        """``mna.solve_dc_adjoint`` at the drawn values of the member ``ctx``: (X, y) of shape
        (size, 4) and (size,), solved for every set of values on the first ask."""
        def every():
            r0, _, ainv, cmag, rs = self.stacked(self.sets)
            X, Y = mna.solve_dc_adjoint(self.topo, r0, ainv, np.zeros_like(cmag), rs)
            return {j: (X[u], Y[u]) for j, u in enumerate(self.set_of.tolist())}

        got = self._take(ctx, self._answers(("adjoint",), every))
        if got is not None:
            return got
        X, Y = mna.solve_dc_adjoint(ctx.topo, ctx.var.r0[None, :], ctx.ainv[None, :],
                                    np.zeros((1, ctx.cmag.size)), ctx.rs[None, :])
        return X[0], Y[0]


def group(contexts: Iterable) -> list[Family]:
    """Join contexts into families (each context's ``family`` is set); a family of one is
    left alone (its own solves are already one call each)."""
    by: dict[tuple, list] = {}
    for c in contexts:
        key = (signature(c.topo), len(c.var.names), tuple(c.cmag != 0), c.rs.size)
        by.setdefault(key, []).append(c)
    out = []
    for members in by.values():
        if len(members) < 2:
            continue
        fam = Family(members)
        for c in members:
            c.family = fam
        out.append(fam)
    return out
