"""What drives a stage's ports in the whole design, and what it costs: the source behind the
REF pin and the source resistance at each input, as Thevenin equivalents, with the CMRR and
gain error each adds to the stage.
"""

from __future__ import annotations

import math
from typing import Mapping

import numpy as np

from frontcheck.analysis import mna, tolerance
from frontcheck.analysis.dc_view import DCView, path_parts, walk
from frontcheck.analysis.result import RefSource, SourceLoading
from frontcheck.analysis.thevenin import thevenin
from frontcheck.circuit import Sourced, Stage, SubCircuit
from frontcheck.netlist import Netlist

__all__ = ["ref_source", "ref_cost", "source_impedances", "stage_parts", "loaded_gains",
           "source_effect"]


def stage_parts(stage: Stage) -> set[str]:
    """The stage's own resistors (left out when looking at what drives its ports)."""
    return {r.name for r in stage.circuit.resistors if not r.internal}


def ref_source(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
               dc: DCView | None = None, ideal_opamps: bool = True) -> RefSource | None:
    """What drives the stage's REF net, its Thevenin resistance and voltage, and their cost.

    The REF net's source resistance Rth is in series with the stage's REF-side resistor. Its
    CMRR limit (that Rth alone, all else ideal) and the fractional gain error it causes come
    from the stage's own equations with Rth added; for a difference amplifier they approach
    (1+G) R4/Rth and r/(2(1+G)), r = Rth/R4.

    Returns None when the stage has no REF port.

    References
    ----------
    docs/engineering.md sec. 5 [derived, ngspice-exact]: G = 1, 10 k, Rth = 10 ohm -> 66.03 dB,
    Ad = 1.00025.
    """
    net = stage.circuit.ports.get("ref")
    if net is None:
        return None
    dc = dc or DCView(netlist, rails if rails is not None else stage.circuit.rails)
    th = thevenin(netlist, net, exclude=stage_parts(stage), dc=dc)
    out = RefSource(net, th.kind, th.ohms, th.volts, th.driver, parts=list(th.parts))
    if th.kind == "floating":
        out.driver = "nothing: REF is floating"
        return out
    if th.ohms:
        out.cmrr_db, out.gain_error = ref_cost(stage, th.ohms, ideal_opamps)
    elif th.ohms == 0.0:
        out.cmrr_db, out.gain_error = math.inf, 0.0
    return out


def ref_cost(stage: Stage, rth: float, ideal_opamps: bool = True) -> tuple[float, float]:
    """(CMRR in dB from ``rth`` at REF alone, fractional gain error) of ``stage``.

    References
    ----------
    docs/engineering.md sec. 5: CMRR_ref ~ (1+G) R4/Rth (x G1 for a three-op-amp in-amp),
    Ad ~ G [1 + r/(2(1+G))] [derived, ngspice-exact].
    """
    return _port_cost(stage, {"ref": rth}, ideal_opamps)


def _port_cost(stage: Stage, series: dict[str, float], ideal_opamps: bool) -> tuple[float, float]:
    sub = stage.circuit
    k = len(tolerance.variables(sub).names)
    zero = np.zeros((1, k))
    base = tolerance.make_context(sub, None, ideal_opamps).evaluate(zero, use_opamp_cmrr=False)
    with_s = tolerance.make_context(sub, series, ideal_opamps).evaluate(zero, use_opamp_cmrr=False)
    # Ad of the circuit as drawn (with the series resistance) over the Acm it adds.
    db = float(tolerance.cmrr_db(with_s.ad, with_s.acm - base.acm, with_s.ad[0])[0])
    return db, float(with_s.ad[0] / base.ad[0] - 1.0)


def _connector_feed(dc: DCView, net: str, exclude: set[str]) -> str | None:
    """'J1 pin 2' when a connector pin is reached from ``net`` through resistors, shorts and
    capacitors (an AC-coupled input is still fed from there) before any net of defined
    potential; None otherwise."""
    parent, order = walk(dc.links(capacitors=True), net, lambda n: dc.defined(n) is not None,
                          exclude)
    for n in order:
        if n in dc.connectors and not dc.defined(n):
            ref, pin = dc.connectors[n][0]
            via = path_parts(parent, n)
            return f"{ref} pin {pin}" + (f" via {', '.join(via)}" if via else "")
    return None


def source_impedances(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
                      dc: DCView | None = None, ideal_opamps: bool = True) -> SourceLoading:
    """Thevenin resistance of the source driving each input port, and its cost.

    A resistive source in the design (a bridge, a divider) adds its resistance to the stage's
    input resistors; a difference amplifier's two input resistances (R1, R3+R4) differ, so even
    equal source resistances unbalance its ratios. Gain error and CMRR from the source alone
    come from the stage's equations with the two resistances added in series with the inputs.
    Unknown (None) where an input is fed from a connector (through resistors or capacitors):
    the source is off the board, and the parts on the board are its load.

    References
    ----------
    docs/engineering.md sec. 4, last paragraph (loading of the unequal input resistances) [derived].
    """
    dc = dc or DCView(netlist, rails if rails is not None else stage.circuit.rails)
    ex = stage_parts(stage)
    legs = {}
    details = []
    for role in ("in_p", "in_n"):
        net = stage.circuit.ports.get(role)
        if net is None:
            legs[role] = None
            continue
        plug = _connector_feed(dc, net, ex)
        if plug is not None:
            # The signal comes from off the board: what the design shows at this input (bias
            # resistors, a divider) is its load, not its source.
            legs[role] = None
            details.append(f"{role} {net}: fed from connector {plug}, source resistance unknown")
            continue
        th = thevenin(netlist, net, exclude=ex, dc=dc)
        legs[role] = th.ohms
        details.append(f"{role} {net}: {th.kind}, {th.driver}")
    out = SourceLoading(legs["in_p"], legs["in_n"], None, None, "; ".join(details))
    if legs["in_p"] is not None and legs["in_n"] is not None:
        if legs["in_p"] == 0.0 and legs["in_n"] == 0.0:
            out.gain_error, out.cmrr_db = 0.0, math.inf
        else:
            out.cmrr_db, out.gain_error = _port_cost(stage, {"in_p": legs["in_p"], "in_n": legs["in_n"]},
                                                     ideal_opamps)
    return out


def loaded_gains(sub: SubCircuit, rs_p: float, rs_n: float) -> tuple[float, float, float, float]:
    """(Ad, Acm) unloaded and loaded: the stage solved with ideal op-amps and nominal
    resistors, its inputs driven directly and through ``rs_p`` / ``rs_n``.

    Returns (ad0, acm0, ad1, acm1).

    References
    ----------
    C.-W. Ho, A. E. Ruehli, P. A. Brennan, "The modified nodal approach to network analysis",
    IEEE Trans. Circuits Syst. 22(6), 1975 (the solver in frontcheck.analysis.mna).
    """
    topo = mna.compile_circuit(sub, series=("in_p", "in_n"))
    R = mna.nominal_values(sub)
    order = [role for role, _, _ in topo.series]
    rs = np.array([[0.0] * len(order), [rs_p if r == "in_p" else rs_n for r in order]])
    X = mna.solve_dc(topo, np.repeat(R, 2, axis=0), rs=rs)
    g = mna.gains(topo, X)
    return float(g.ad[0]), float(g.acm[0]), float(g.ad[1]), float(g.acm[1])


def _cmrr_db(ad: float, acm: float) -> float:
    return math.inf if acm == 0 else 20.0 * math.log10(abs(ad / acm))


def source_effect(ad0: float, acm0: float, ad1: float, acm1: float) -> dict:
    """The CMRR with and without the source, and what the source alone adds: its own
    common-mode gain (loaded minus unloaded) as a CMRR and as a share of the loaded
    common-mode gain. Ideal op-amps make an exact match exact, so a common-mode gain below
    1e-12 of Ad is round-off and taken as zero."""
    def cmrr(ad: float, acm: float) -> float:
        return math.inf if abs(acm) <= 1e-12 * abs(ad) else _cmrr_db(ad, acm)
    added = acm1 - acm0
    c_src = cmrr(ad1, added)
    size = abs(acm0) + abs(added)
    share = 0.0 if math.isinf(c_src) or size == 0 else abs(added) / size
    return {"cmrr_unloaded": cmrr(ad0, acm0), "cmrr_loaded": cmrr(ad1, acm1),
            "cmrr_src": c_src, "share": share}
