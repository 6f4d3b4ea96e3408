"""What each op-amp of a stage must achieve for the declared targets to hold.

An op-amp without part data is ideal in the figures; what it must do instead is stated as a
requirement, given the worst case of everything the design does specify. Quantities (a list,
so that the error budget can add its own: ``vos_v``, ``ib_a``, ``en_v_rthz``, ...):

* ``cmrr_db`` (min): with a declared ``Min CMRR``. Each op-amp's own CMRR acts as an error
  Vcm_op / CMRR_op at its inputs; referred to the stage input it is s_i / CMRR_op,i, s_i the
  op-amp's sensitivity solved on the stage (1 for a difference amplifier's op-amp and for each
  first-stage op-amp of an in-amp; 1/G1 for an in-amp's difference stage, whose input common
  mode is Vcm G2/(1 + G2) and whose error reaches the output through its noise gain 1 + G2, over
  the stage gain G1 G2 [derived]). Added in the worst case to the rest: 1/CMRR_min >= 1/CMRR_rest,worst +
  sum_i s_i / CMRR_op,i. Each op-amp without part data gets an equal share of the room the rest
  leaves, so each position's requirement follows its own sensitivity: CMRR_op,i >= 20 log10(n
  s_i / room) (an in-amp's difference stage needs about 20 log10(G1) dB less than its first-stage
  pair). An op-amp with part data may use what is left with the others as they are (given ones
  at their numbers, the rest at their shares), so a given part misses its requirement only when
  the op-amps together miss the target. The "because" names the position (first-stage op-amp,
  difference-stage op-amp, input / output op-amp). When the rest alone already misses the
  minimum, no op-amp can help: that is the cmrr-budget finding, not a requirement.
* ``aol`` (min): with a declared ``Target Gain``. Finite open-loop gain divides the gain by
  1 + sum_i n_i / A_i (n_i the noise gain that op-amp i sees, exact for one op-amp, first order
  for several), so the worst-case low gain over the tolerance corners reaches the band's lower
  edge when sum_i n_i / A_i = G_min / G_lo - 1; that room is shared as for CMRR, so an op-amp
  without part data needs A_i >= n n_i / room. When the resistors alone miss the band, that is the gain-error
  finding.
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
    """Where an op-amp sits in the stage, as the requirement's reason names it."""
    amps = stage.amplifiers
    if stage.kind == "three-opamp" and amps:
        return "difference-stage op-amp" if name == amps[-1] else "first-stage op-amp"
    if stage.kind == "two-opamp" and amps:
        return "output op-amp" if name == amps[-1] else "input op-amp"
    return "op-amp"


def _shares(ops, weight: dict, room: float, contribution: dict):
    """Split ``room`` (module docstring). Each op-amp without part data gets an equal share,
    room / n, and needs weight x n / room. An op-amp with part data may use what is left with
    every other op-amp as it is (given ones at their own numbers, the others at their shares):
    then a given part misses its requirement only when the stage's op-amps together miss the
    target. Yields (op-amp, bound or None when nothing is left, its share of the room)."""
    n = len(ops)
    if not n:
        return
    reserved = room * sum(1 for o in ops if o.name not in contribution) / n
    for o in ops:
        if o.name in contribution:
            left = room - reserved - sum(c for k, c in contribution.items() if k != o.name)
            yield o, (weight[o.name] / left if left > 0 else None), max(left, 0.0) / room
        else:
            yield o, weight[o.name] * n / room, 1.0 / n


def _others(ops, given: dict) -> str:
    """How the other op-amps are counted in a requirement's reason."""
    if len(ops) < 2:
        return ""
    if all(o.name in given for o in ops):
        return " with the other op-amps as given"
    return " with the op-amps' part data as given and an equal share to each without"


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
    idx = {o.name: i for i, o in enumerate(ctx.sub.opamps)}
    ops = [o for o in ctx.sub.opamps if not (o.internal or o.neighbour) and s[idx[o.name]] > 0]
    weight = {o.name: float(s[idx[o.name]]) for o in ops}
    given = {o.name: weight[o.name] * 10 ** (-o.model.cmrr_db.value / 20)
             for o in ops if o.model.cmrr_db is not None}
    out = []
    for o, bound, share in _shares(ops, weight, room, given):
        if bound is None:
            continue
        need = 20 * math.log10(bound)
        why = (f"{_position(stage, o.name)} {o.name}{'' if o.name in given else ' (no part data)'}: "
               f"its CMRR error reaches the stage input x{fmt.number(weight[o.name])}; the Min CMRR "
               f"{fmt.db(target_db)} less the rest of the stage's worst case "
               f"({fmt.db(rest_worst_db)}) leaves {fmt.percent(share)} of the room to it"
               f"{_others(ops, given)}, errors added in the worst case")
        got = o.model.cmrr_db
        out.append(Requirement([o.ref], [o.name], "cmrr_db", need, None, "dB", why, got,
                               None if got is None else bool(got.value >= need - 1e-9)))
    return out


def aol_requirements(stage: Stage, ctx: Context, gmin: float, gmax: float, target: float,
                     tol: float) -> list[Requirement]:
    """``aol`` requirements from the ideal-op-amp worst-case gain ``gmin`` .. ``gmax``."""
    lo, hi = target * (1 - tol), target * (1 + tol)
    if gmin < lo or gmax > hi or gmin <= 0:
        return []
    dn, _, _ = _probe(ctx, "aol")
    n = np.abs(dn)                        # relative gain drop per unit 1/A: the noise gain
    room = gmin / lo - 1.0
    if room <= 0:
        return []
    idx = {o.name: i for i, o in enumerate(ctx.sub.opamps)}
    ops = [o for o in ctx.sub.opamps if not (o.internal or o.neighbour) and n[idx[o.name]] > 0]
    weight = {o.name: float(n[idx[o.name]]) for o in ops}
    given = {o.name: weight[o.name] / o.model.aol.value for o in ops if o.model.aol is not None}
    out = []
    for o, need, share in _shares(ops, weight, room, given):
        if need is None:
            continue
        why = (f"{_position(stage, o.name)} {o.name}{'' if o.name in given else ' (no part data)'}, "
               f"noise gain {fmt.number(weight[o.name])}: the worst-case gain {fmt.number(gmin)} "
               f"with ideal op-amps must stay above {fmt.number(lo)} (Target Gain "
               f"{fmt.number(target)} -{fmt.percent(tol)}); {fmt.percent(share)} of that room is "
               f"left to it{_others(ops, given)}")
        got = o.model.aol if o.name in given else None
        out.append(Requirement([o.ref], [o.name], "aol", need, None, "V/V", why, got,
                               None if got is None else bool(got.value >= need * (1 - 1e-9))))
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
