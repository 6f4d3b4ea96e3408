"""Node voltages over the tolerance corners and the declared input box: the extremes every
headroom check and every op-amp input and output requirement rests on.

How the extremes are found. Every node voltage of the linear stage is affine in (Vcm, Vd, Vref)
for fixed resistor values, so over the declared box its extremes lie at the box's corners. In
the resistor values it is a ratio of multilinear polynomials (Cramer's rule on the nodal
equations, each conductance appearing in one row and column pair): with all others fixed it is
a bilinear fraction (a R + b)/(c R + d) of one resistor, which is monotone in that resistor
wherever the circuit is solvable. A function monotone in each variable separately takes its
extremes over a box on the box's vertices, so the extremes over the tolerance box lie on its
2^k corners. The corners are enumerated exactly (one batched solve) up to ``max_bits``
variables; above that, each node's own sensitivity-sign corners are taken (a note says so).
The two sets of corners combine: each tolerance corner is checked at each box corner.

References
----------
docs/engineering.md sec. 4 (affine node voltages, box corners) and sec. 11 (headroom over
tolerances); the monotonicity argument is that of the worst-case CMRR, sec. 2.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from frontcheck.analysis import mna
from frontcheck.analysis.tolerance import Context, corner_matrix


@dataclass
class Extreme:
    """The lowest or highest voltage of one net: where it happens (tolerance variables high or
    low, and the box corner)."""

    volts: float
    tolerances: dict[str, str]        # variable name -> 'high' | 'low' (parts whose end does
                                      # not change this voltage are left out)
    vcm: float
    vd: float


def box_corners(box) -> list[tuple[float, float]]:
    """The (Vcm, Vd) corners of ``box`` = (vcm_lo, vcm_hi, vd_lo, vd_hi), without repeats."""
    out = []
    for c in ((box[0], box[2]), (box[0], box[3]), (box[1], box[2]), (box[1], box[3])):
        if c not in out:
            out.append(c)
    return out


def _solve(ctx: Context, xs: np.ndarray, shared: bool = False) -> np.ndarray:
    """Node solution at the rows ``xs``; ``shared``: every stage of the context's family asks
    the same rows, so they are solved for the family at once (frontcheck.analysis.family)."""
    if shared and getattr(ctx, "family", None) is not None:
        return ctx.family.nodes(ctx, xs)
    R = ctx.var.values(xs)
    N = R.shape[0]
    ainv = np.broadcast_to(ctx.ainv, (N, ctx.ainv.size))
    rs = np.broadcast_to(ctx.rs, (N, ctx.rs.size))
    return mna.solve_dc(ctx.topo, R, ainv, None, rs)


def nominal_nodes(ctx: Context, sub, series) -> tuple | None:
    """(topology, node solution (1, size, 4)) of ``sub`` at its drawn values, ideal op-amp
    CMRR and the series resistances ``series`` (role -> ohms): what the headroom limits read
    (frontcheck.analysis.headroom.limits), solved for the whole family of ``ctx`` at once.
    None when ``ctx`` was not compiled from that same circuit with those series ports (the
    caller then solves alone)."""
    roles = [role for role, _, _ in ctx.topo.series]
    if ctx.sub is not sub or list(series) != roles:
        return None
    if any(ctx.rs[k] != series[role] for k, role in enumerate(roles)):
        return None
    return ctx.topo, _solve(ctx, np.zeros((1, len(ctx.var.names))), shared=True)


def _tolerance_points(ctx: Context, nets, excite: np.ndarray, max_bits: int):
    """Tolerance points to evaluate (rows of x) and a note when not every corner is."""
    k = len(ctx.var.names)
    if k <= max_bits:
        return corner_matrix(k), None
    # Each net's sensitivity-sign corners at each box corner: push every variable the way
    # that raises (or lowers) that node there.
    eye = np.vstack([np.zeros((1, k)), np.eye(k)])
    X = _solve(ctx, eye, shared=True)
    rows = []
    for net in nets:
        v = ctx.topo.coefficients(X, net) @ excite.T          # (k+1, n_box)
        s = np.sign(v[1:] - v[:1])
        s[s == 0] = 1.0
        for j in range(excite.shape[0]):
            rows += [s[:, j], -s[:, j]]
    note = (f"headroom: {k} tolerance variables; node extremes from each node's "
            f"sensitivity-sign corners, not all 2^{k} corners")
    return np.unique(np.array(rows), axis=0), note


def node_extremes(ctx: Context, nets, box, vref: float, max_bits: int = 14):
    """Lowest and highest voltage of each net in ``nets`` over the tolerance corners and the
    box corners (module docstring).

    Parameters
    ----------
    ctx : tolerance.Context
        The stage compiled with its tolerance variables.
    nets : iterable of str
    box : tuple (vcm_lo, vcm_hi, vd_lo, vd_hi)
    vref : float
        Voltage at the REF port (ignored when the stage has none).

    Returns
    -------
    (dict net -> (Extreme low, Extreme high), note or None)
    """
    nets = list(dict.fromkeys(nets))
    corners = box_corners(box)
    excite = np.array([[vcm, vd, vref, 1.0] for vcm, vd in corners])     # (n_box, 4)
    xs, note = _tolerance_points(ctx, nets, excite, max_bits)
    X = _solve(ctx, xs, shared=note is None)       # every corner: the same rows for a family
    names = ctx.var.names
    out = {}
    exact = note is None          # rows are corner_matrix order: bit m of the row is variable m
    for net in nets:
        v = ctx.topo.coefficients(X, net) @ excite.T            # (N, n_box)
        # Ties (a part that does not move this node, a symmetric stage) are broken by row
        # order on values rounded far below any reported digit, not by round-off.
        scale = max(1.0, float(np.max(np.abs(v))))
        vr = np.round(v / scale, 10)
        ends = []
        for flat in (int(np.argmin(vr)), int(np.argmax(vr))):
            i, j = divmod(flat, v.shape[1])
            tol = {}
            for m, n in enumerate(names):
                if exact and vr[i ^ (1 << m), j] == vr[i, j]:
                    continue          # either end of this part gives the same voltage here
                tol[n] = "high" if xs[i, m] > 0 else "low"
            ends.append(Extreme(float(v[i, j]), tol, float(corners[j][0]), float(corners[j][1])))
        out[net] = (ends[0], ends[1])
    return out, note
