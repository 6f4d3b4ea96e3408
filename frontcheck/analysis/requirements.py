"""What each op-amp of a stage must achieve for the declared targets to hold.

An op-amp without part data is ideal in the figures; what it must do instead is stated as a
requirement, given the worst case of everything the design does specify. Quantities (a list,
so that the error budget can add its own: ``vos_v``, ``ib_a``, ``en_v_rthz``, ...):

* ``cmrr_db`` (min): with a declared ``Min CMRR``. Each op-amp's own CMRR acts as an error
  Vcm_op / CMRR_op at its inputs; referred to the stage input it is s_i / CMRR_op,i, s_i the
  op-amp's sensitivity solved on the stage (1 for a difference amplifier's op-amp and for each
  first-stage op-amp of an in-amp, about 1/G1 for an in-amp's difference stage). Added in the
  worst case to the rest: 1/CMRR_min >= 1/CMRR_rest,worst + sum_i s_i / CMRR_op,i. The op-amps
  without part data share what is left with one common CMRR (those with part data count with
  their own); for an in-amp the "because" names the position (first-stage pair, difference
  stage). When the rest alone already misses the minimum, no op-amp can help: that is the
  cmrr-budget finding, not a requirement.
* ``aol`` (min): with a declared ``Target Gain``. Finite open-loop gain divides the gain by
  1 + sum_i n_i / A_i (n_i the noise gain that op-amp i sees, exact for one op-amp, first order
  for several), so the worst-case low gain over the tolerance corners reaches the band's lower
  edge when A = sum n_i / (G_min / G_lo - 1). When the resistors alone miss the band, that is
  the gain-error finding.
* ``input_low_v`` / ``input_high_v``, ``output_low_v`` / ``output_high_v``: with a declared
  input box, the lowest and highest voltage at each op-amp's non-inverting input and output
  over the box and the tolerance corners (frontcheck.analysis.corners): the op-amp's input
  range must reach down to ``max`` and up to ``min``, its output likewise.

References
----------
Worst-case addition of input-referred errors (each error term taken at its bound and added in
magnitude): R. Pallas-Areny, J. G. Webster, "Common mode rejection ratio in differential
amplifiers", IEEE Trans. Instrum. Meas. 40(4), 1991 (1/CMRR_total = 1/CMRR_R + 1/CMRR_OA);
the same worst-case sum of errors referred to the input is the method of C. Kitchin, L. Counts,
*A Designer's Guide to Instrumentation Amplifiers*, 3rd ed., Analog Devices, 2006, error budget
chapter [from memory]. Finite-gain closed-loop gain G A b / (1 + A b): Sedra & Smith,
*Microelectronic Circuits*, 6th ed., sec. 2.8 [from memory]; docs/engineering.md sec. 11.
"""

from __future__ import annotations

import math

import numpy as np

from frontcheck import formatting as fmt
from frontcheck.analysis import mna
from frontcheck.analysis.tolerance import Context
from frontcheck.circuit import Stage
from frontcheck.result import (Requirement, as_json, bound_text,  # noqa: F401
                               given_text, summary_lines)

EPS = 1e-7       # probe of 1/CMRR and 1/A: small enough to be linear, large against round-off


def _probe(ctx: Context, which: str) -> tuple[np.ndarray, float, float]:
    """Per op-amp, the change of (Acm or Ad) at nominal values for a unit 1/CMRR or 1/A."""
    n = len(ctx.sub.opamps)
    k = len(ctx.var.names)
    R = ctx.var.values(np.zeros((n + 1, k)))
    ainv = np.tile(ctx.ainv if which == "cmrr" else np.zeros(n), (n + 1, 1))
    c = np.zeros((n + 1, n))
    for i in range(n):
        if which == "cmrr":
            c[i + 1, i] = EPS
        else:
            ainv[i + 1, i] = EPS
    rs = np.broadcast_to(ctx.rs, (n + 1, ctx.rs.size))
    g = mna.gains(ctx.topo, mna.solve_dc(ctx.topo, R, ainv, c, rs))
    ad0, acm0 = float(g.ad[0]), float(g.acm[0])
    if which == "cmrr":
        return (g.acm[1:] - acm0) / EPS, ad0, acm0
    # 1/Ad is linear in one op-amp's 1/A (G/Ad = 1 + n/A for one op-amp): probe it there,
    # and return the relative gain drop per unit 1/A, -n.
    return -(ad0 / g.ad[1:] - 1.0) / EPS, ad0, acm0


def _position(stage: Stage, name: str) -> str:
    if stage.kind in ("three-opamp",) and stage.amplifiers and name != stage.amplifiers[-1]:
        return "first-stage op-amp"
    if stage.kind == "three-opamp":
        return "difference-stage op-amp"
    return "op-amp"


def cmrr_requirements(stage: Stage, ctx: Context, rest_worst_db: float, target_db: float,
                      other_db: list[float]) -> list[Requirement]:
    """``cmrr_db`` requirements (module docstring). ``rest_worst_db``: the stage's worst CMRR
    with every op-amp's CMRR infinite; ``other_db``: further contributors added in magnitude
    (a known source resistance)."""
    room = 10 ** (-target_db / 20) - 10 ** (-rest_worst_db / 20) - sum(
        10 ** (-d / 20) for d in other_db if math.isfinite(d))
    if room <= 0:
        return []
    dacm, ad0, _ = _probe(ctx, "cmrr")
    s = np.abs(dacm) / abs(ad0)
    ops = [o for o in ctx.sub.opamps if not (o.internal or o.neighbour)]
    idx = {o.name: i for i, o in enumerate(ctx.sub.opamps)}
    known = [o for o in ops if o.model.cmrr_db is not None]
    unknown = [o for o in ops if o.model.cmrr_db is None]
    out = []
    total = sum(s[idx[o.name]] for o in ops)
    if total <= 0:
        return []
    need_all = 20 * math.log10(total / room)
    for o in known:
        got = o.model.cmrr_db
        out.append(Requirement([o.ref], [o.name], "cmrr_db", need_all, None, "dB",
                               f"{_position(stage, o.name)} {o.name}: with every op-amp's CMRR "
                               f"equal, the Min CMRR {fmt.db(target_db)} needs >= {fmt.db(need_all)} "
                               f"(the rest of the stage allows {fmt.db(rest_worst_db)} worst case)",
                               got, bool(got.value >= need_all - 1e-9)))
    if unknown:
        left = room - sum(s[idx[o.name]] * 10 ** (-o.model.cmrr_db.value / 20) for o in known)
        share = sum(s[idx[o.name]] for o in unknown)
        if left > 0 and share > 0:
            need = 20 * math.log10(share / left)
            for o in unknown:
                out.append(Requirement(
                    [o.ref], [o.name], "cmrr_db", need, None, "dB",
                    f"{_position(stage, o.name)} {o.name} (no part data): the Min CMRR "
                    f"{fmt.db(target_db)} less the rest of the stage's worst case "
                    f"({fmt.db(rest_worst_db)}) leaves this for the op-amps, added in the worst case"))
    return out


def aol_requirements(stage: Stage, ctx: Context, gmin: float, gmax: float, target: float,
                     tol: float) -> list[Requirement]:
    """``aol`` requirements from the ideal-op-amp worst-case gain ``gmin`` .. ``gmax``."""
    lo, hi = target * (1 - tol), target * (1 + tol)
    if gmin < lo or gmax > hi or gmin <= 0:
        return []
    dn, _, _ = _probe(ctx, "aol")
    n = -dn                               # relative gain drop per unit 1/A: the noise gain
    ops = [o for o in ctx.sub.opamps if not (o.internal or o.neighbour)]
    idx = {o.name: i for i, o in enumerate(ctx.sub.opamps)}
    room = gmin / lo - 1.0
    if room <= 0:
        return []
    known = [o for o in ops if o.model.aol is not None and math.isfinite(o.model.aol.value)]
    unknown = [o for o in ops if o.model.aol is None]
    total = sum(abs(n[idx[o.name]]) for o in ops)
    out = []
    if total <= 0:
        return []
    need_all = total / room
    for o in known:
        got = o.model.aol
        out.append(Requirement([o.ref], [o.name], "aol", need_all, None, "V/V",
                               f"{o.name}: with every op-amp's open-loop gain equal, the worst-case "
                               f"gain {fmt.number(gmin)} stays above {fmt.number(lo)} (Target "
                               f"Gain {fmt.number(target)} -{fmt.percent(tol)}) only with Aol >= "
                               f"{fmt.number(need_all)}",
                               got, bool(got.value >= need_all * (1 - 1e-9))))
    if unknown:
        left = room - sum(abs(n[idx[o.name]]) / o.model.aol.value for o in known)
        share = sum(abs(n[idx[o.name]]) for o in unknown)
        if left > 0 and share > 0:
            need = share / left
            for o in unknown:
                out.append(Requirement(
                    [o.ref], [o.name], "aol", need, None, "V/V",
                    f"{o.name} (no part data, noise gain {fmt.number(abs(n[idx[o.name]]))}): the "
                    f"worst-case gain {fmt.number(gmin)} with ideal op-amps must stay above "
                    f"{fmt.number(lo)} (Target Gain {fmt.number(target)} -{fmt.percent(tol)})"))
    return out


def _where(e) -> str:
    tol = ", ".join(f"{k} {v}" for k, v in e.tolerances.items())
    return (f"Vcm = {fmt.volts(e.vcm, signed=True)}, Vd = {fmt.volts(e.vd, signed=True)}"
            + (f", {tol}" if tol else ""))


def range_requirements(stage: Stage, extremes: dict, rail_of) -> list[Requirement]:
    """Input and output range requirements from the node extremes. ``rail_of(net)`` gives an
    op-amp's supply voltage (or None)."""
    out = []
    for o in stage.circuit.opamps:
        if o.internal or o.neighbour:
            continue
        vp, vn = rail_of(o.vpos), rail_of(o.vneg)
        for node, net in (("input", o.inp), ("output", o.out)):
            if net not in extremes:
                continue
            low, high = extremes[net]
            for q, e in ((f"{node}_low_v", low), (f"{node}_high_v", high)):
                side = "low" if q.endswith("low_v") else "high"
                margin = ""
                if side == "low" and vn is not None:
                    d = e.volts - vn
                    margin = (f", {fmt.volts(abs(d))} {'above' if d >= 0 else 'below'} V- "
                              f"({fmt.volts(vn)})")
                if side == "high" and vp is not None:
                    d = vp - e.volts
                    margin = (f", {fmt.volts(abs(d))} {'below' if d >= 0 else 'above'} V+ "
                              f"({fmt.volts(vp)})")
                what = "non-inverting input" if node == "input" else "output"
                because = (f"{o.name} {what} (net {net}) reaches {fmt.volts(e.volts)} at "
                           f"{_where(e)}{margin}")
                out.append(Requirement([o.ref], [o.name], q,
                                       e.volts if side == "high" else None,
                                       e.volts if side == "low" else None, "V", because))
    return out
