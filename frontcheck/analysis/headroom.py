"""Headroom: every op-amp's input common mode and output against its own rail limits.

Every node voltage of the linear stage is affine in (Vcm, Vd) for a given Vref, so over a
declared box Vcm in [a, b], Vd in [c, d] the extremes of each node lie at the box's four
corners: checking them is exact. In the (Vcm, Vout) plane each limit is a straight line, so
the valid operating region is a convex polygon, obtained here by clipping a large rectangle
with one half-plane per limit.

Internal nodes are checked, never only Vout: a saturated first stage of an in-amp is
invisible at the output when Vd = 0 (docs/engineering.md sec. 4).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from frontcheck.analysis import mna
from frontcheck.analysis.result import Headroom, HeadroomCheck
from frontcheck.circuit import SubCircuit


@dataclass
class Limit:
    """low <= coef . (Vcm, Vd, Vref, 1) <= high for one op-amp terminal."""

    opamp: str
    node: str            # 'input' | 'output'
    net: str
    coef: np.ndarray     # (4,)
    low: float           # -inf / inf: no limit stated
    high: float
    basis: str = ""      # where the limits come from (part data, or RAIL_BASIS)
    stated: tuple[bool, bool] = (True, True)   # (low, high) given by part data

    def voltage(self, vcm, vd, vref):
        return self.coef[0] * vcm + self.coef[1] * vd + self.coef[2] * vref + self.coef[3]


def limits(sub: SubCircuit, R=None, series=(), rs=None, solved=None):
    """Linear limits of every op-amp whose rails are known, and the names of the others.

    Parameters
    ----------
    sub : SubCircuit
    R : array_like, optional
        Resistances (default nominal).
    series, rs : optional
        Series port resistances, as :func:`frontcheck.analysis.mna.compile_circuit`.
    solved : (mna.Topology, ndarray (1, size, 4)), optional
        The nominal solve of ``sub`` compiled with ``series`` when the caller has it already
        (one stacked solve for a family of stages, frontcheck.analysis.corners.nominal_nodes):
        the same numbers as solving here.

    Returns
    -------
    (list of Limit, out_coef (4,), list of str)
        ``out_coef`` is Vout's affine coefficients (out - out_n for a differential
        output); the last item lists op-amps whose supply
        nets are missing or have no known voltage.

    References
    ----------
    docs/engineering.md sec. 4 (affine node voltages, op-amp input CM and output swing limits
    relative to the op-amp's own supplies) [derived, ngspice-verified].
    """
    out_n = sub.ports.get("out_n")
    nets = {o.inp for o in sub.opamps} | {o.out for o in sub.opamps} | {sub.ports["out"]}
    wanted = sorted(nets | ({out_n} if out_n else set()))
    if solved is not None:
        topo, X = solved
        X0 = X[0]
        coef = {n: X0[topo.index[n]].copy() if n in topo.index else np.array(topo.fixed[n])
                for n in wanted}    # topo.coefficients(X, n)[0] of each, copied
    else:
        coef = mna.node_affine(sub, wanted, R=R, series=tuple(series), rs=rs)
    out, unknown = [], []
    for o in sub.opamps:
        if o.neighbour:
            continue           # outside the stage: not this stage's headroom
        vpv, vnv = _rail(sub, o.vpos), _rail(sub, o.vneg)
        if vpv is None or vnv is None:
            unknown.append(o.name)
            continue
        m = o.model
        # A limit the part data does not give: an input range is then unbounded (the node's
        # range becomes a requirement); an output still cannot pass its own supply rails.
        out.append(Limit(o.name, "input", o.inp, coef[o.inp],
                         vnv + m.icm_low.value if m.icm_low is not None else -np.inf,
                         vpv - m.icm_high.value if m.icm_high is not None else np.inf,
                         _basis(m.icm_low, m.icm_high, "no input range in part data"),
                         (m.icm_low is not None, m.icm_high is not None)))
        out.append(Limit(o.name, "output", o.out, coef[o.out],
                         vnv + m.swing_low.value if m.swing_low is not None else vnv,
                         vpv - m.swing_high.value if m.swing_high is not None else vpv,
                         _basis(m.swing_low, m.swing_high, RAIL_BASIS),
                         (m.swing_low is not None, m.swing_high is not None)))
    # a differential output (in-amp input pair): Vout is out - out_n
    vout = coef[sub.ports["out"]] - (coef[out_n] if out_n else 0.0)
    return out, vout, unknown


#: The basis of an output limit that no part data states: the supply rail itself, which no
#: op-amp output passes (common practice); only a violation of it is a finding.
RAIL_BASIS = "supply rail (no swing in part data)"


def _basis(low, high, missing: str) -> str:
    given = [s for s in (low, high) if s is not None]
    if not given:
        return missing
    words = sorted({s.detail or s.source for s in given})
    return "; ".join(words) + ("" if len(given) == 2 else f"; other side: {missing}")


def ref_at_low_rail(sub: SubCircuit) -> dict | None:
    """REF wired to the negative supply of the op-amp that drives the output: the same net,
    or a rail or ground net of the same voltage. Then Vout = Vref + G Vd sits on that rail at
    Vd = 0 and a negative differential input asks for an output below it: the output is
    unipolar (docs/engineering.md sec. 4a). None for any other stage, and for REF on an input's
    net or fed through a network (its voltage is not the rail's by wiring)."""
    ref, out = sub.ports.get("ref"), sub.ports.get("out")
    if not ref or not out or sub.ports.get("out_n") or ref in (sub.ports.get("in_p"),
                                                                sub.ports.get("in_n")):
        return None
    op = next((o for o in sub.opamps if o.out == out), None)
    if op is None or not op.vneg:
        return None
    vref, vn = _rail(sub, ref), _rail(sub, op.vneg)
    if ref != op.vneg and (vref is None or vn is None or abs(vref - vn) > 1e-12):
        return None
    return {"ref_net": ref, "ref_v": vref, "rail_net": op.vneg, "rail_v": vn,
            "amplifier": op.name}


def _rail(sub: SubCircuit, net: str | None) -> float | None:
    if not net:
        return None
    if net in sub.rails:
        return float(sub.rails[net].value)
    return 0.0 if mna.is_ground(net) else None


def check_box(lims: list[Limit], box, vref: float):
    """Check every limit at the four corners of ``box`` = (vcm_lo, vcm_hi, vd_lo, vd_hi).

    Returns (checks, worst margin). Exact because each voltage is affine in (Vcm, Vd).
    """
    checks = []
    corners = [(box[0], box[2]), (box[0], box[3]), (box[1], box[2]), (box[1], box[3])]
    for lim in lims:
        c0, c1, c2, c3 = np.asarray(lim.coef, dtype=float).tolist()
        for vcm, vd in corners:
            v = c0 * vcm + c1 * vd + c2 * vref + c3      # lim.voltage, in Python floats
            checks.append(HeadroomCheck(lim.opamp, lim.node, lim.net, (vcm, vd), v, lim.low,
                                        lim.high, min(v - lim.low, lim.high - v), lim.basis,
                                        lim.stated))
    margin = min((c.margin_v for c in checks), default=None)
    return checks, margin


def over_corners(hr: Headroom, extremes: dict) -> None:
    """Replace the nominal box-corner checks of ``hr`` by one check per op-amp terminal at its
    worst extreme over the tolerance and box corners (frontcheck.analysis.corners); the
    nominal worst margin stays as ``nominal_margin_v``."""
    new = []
    for chk in hr.checks:
        if any(c.opamp == chk.opamp and c.node == chk.node for c in new):
            continue
        if chk.net not in extremes:
            continue
        low, high = extremes[chk.net]
        m_lo, m_hi = low.volts - chk.low, chk.high - high.volts
        e = low if m_lo <= m_hi else high
        new.append(HeadroomCheck(chk.opamp, chk.node, chk.net, (e.vcm, e.vd), e.volts, chk.low,
                                 chk.high, min(m_lo, m_hi), chk.basis, chk.stated,
                                 dict(e.tolerances), (low.volts, high.volts)))
    hr.nominal_margin_v = hr.margin_v
    hr.checks = new
    hr.margin_v = min((c.margin_v for c in new), default=None)


def vcm_interval(lims: list[Limit], vd: float, vref: float):
    """Valid common-mode interval (lo, hi) at differential input ``vd``, or None if empty.

    Bounds are +-inf where no limit bounds the common mode.
    """
    lo, hi = -np.inf, np.inf
    for lim in lims:
        a = lim.coef[0]
        b = lim.coef[1] * vd + lim.coef[2] * vref + lim.coef[3]
        if abs(a) < 1e-15:
            if not (lim.low <= b <= lim.high):
                return None
            continue
        x1, x2 = (lim.low - b) / a, (lim.high - b) / a
        lo, hi = max(lo, min(x1, x2)), min(hi, max(x1, x2))
    return (float(lo), float(hi)) if lo <= hi else None


def _clip(poly, p, q, r):
    """Keep the part of convex polygon ``poly`` where p*x + q*y + r <= 0."""
    out = []
    n = len(poly)
    for i in range(n):
        a, b = poly[i], poly[(i + 1) % n]
        fa, fb = p * a[0] + q * a[1] + r, p * b[0] + q * b[1] + r
        if fa <= 0:
            out.append(a)
        if (fa < 0 < fb) or (fb < 0 < fa):
            t = fa / (fa - fb)
            out.append((a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])))
    return out


def region(lims: list[Limit], out_coef, vref: float, span=(-100.0, 100.0)):
    """Valid operating region in the (Vcm, Vout) plane as a convex polygon (list of vertices).

    Each limit, rewritten through Vd = (Vout - Acm Vcm - Gref Vref - c) / Ad, is a half-plane in
    (Vcm, Vout); the polygon is a large rectangle ``span`` x ``span`` clipped by all of them.
    Empty list when no point is valid or Ad = 0.
    """
    o_cm, o_d, o_ref, o_c = np.asarray(out_coef, dtype=float).tolist()
    if abs(o_d) < 1e-15:
        return []
    o0 = o_ref * vref + o_c
    lo, hi = span
    poly = [(lo, lo), (hi, lo), (hi, hi), (lo, hi)]
    for lim in lims:
        a_cm, a_d, a_ref, a_c = np.asarray(lim.coef, dtype=float).tolist()
        p = a_cm - a_d * o_cm / o_d
        q = a_d / o_d
        r = a_ref * vref + a_c - a_d * o0 / o_d
        # A side the part data does not give (infinite) bounds nothing.
        if math.isfinite(lim.high):
            poly = _clip(poly, p, q, r - lim.high)      # v <= high
        if math.isfinite(lim.low):
            poly = _clip(poly, -p, -q, lim.low - r)     # v >= low
        if not poly:
            return []
    out = []
    for v in poly:
        v = (float(v[0]), float(v[1]))
        if not out or abs(v[0] - out[-1][0]) + abs(v[1] - out[-1][1]) > 1e-12:
            out.append(v)
    return out


def headroom(sub: SubCircuit, box=None, vref: float | None = None, series=(), rs=None,
             solved=None) -> Headroom:
    """Headroom of a stage over a declared (Vcm, Vd) box.

    Parameters
    ----------
    sub : SubCircuit
    box : tuple (vcm_lo, vcm_hi, vd_lo, vd_hi) or None
        None: the region is still reported, the margin is None.
    vref : float or None
        Voltage at REF; None when unknown (then nothing can be checked: empty result).
    solved : optional
        The nominal node solution, as :func:`limits`.

    Returns
    -------
    Headroom

    References
    ----------
    docs/engineering.md sec. 4 (corner checks are exact for affine node voltages).
    """
    lims, out_coef, unknown = limits(sub, series=series, rs=rs, solved=solved)
    at_rail = ref_at_low_rail(sub) if "ref" not in series else None
    if vref is None:
        return Headroom(margin_v=None, box=box, unknown=unknown + ["REF voltage"],
                        ref_at_low_rail=at_rail)
    rails = [float(v.value) for v in sub.rails.values()] or [0.0]
    width = max(rails) - min(rails) or 1.0
    span = (min(rails) - 50 * width, max(rails) + 50 * width)
    poly = region(lims, out_coef, vref, span)
    if box is None:
        return Headroom(margin_v=None, region=poly, box=None, unknown=unknown,
                        ref_at_low_rail=at_rail)
    checks, margin = check_box(lims, box, vref)
    return Headroom(margin_v=margin, checks=checks, region=poly, box=box, unknown=unknown,
                    ref_at_low_rail=at_rail)
