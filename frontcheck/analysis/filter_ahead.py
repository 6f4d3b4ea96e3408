"""An input RFI filter drawn ahead of a stage's input ports, found in the whole design, and
the stage extended back through it (docs/engineering.md sec. 7).
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Mapping

from frontcheck.analysis.dc_view import DCView
from frontcheck.analysis.thevenin import thevenin
from frontcheck.circuit import Capacitor, Sourced, Stage, SubCircuit
from frontcheck.errors import InputError
from frontcheck.netlist import Netlist
from frontcheck.netlist_view import RElem
from frontcheck.values import capacitance_of

__all__ = ["filter_ahead"]


def filter_ahead(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
                 dc: DCView | None = None) -> SubCircuit | None:
    """The stage extended back through an input RFI filter drawn ahead of its input ports.

    The filter of docs/engineering.md sec. 7, found in the design around the ports 'in_p' and
    'in_n': one series resistor into each port from a net of undefined potential (the source side),
    a capacitor Cc from each port to a net of defined potential (supply, ground, an op-amp or
    buffer output: AC ground), optionally Cd across the two ports; every leg needs its Cc, or
    the legs share a Cd. Resistors from a port to a net of defined potential (bias returns)
    load the filter and are kept. The returned SubCircuit is the stage with those parts added,
    its input ports moved to the source side of the series resistors, and the nets of defined
    potential they reach added as rails (at their known voltage, else 0 V: only their being
    fixed matters to the filter's AC response). None when no such filter is drawn, or a value
    in it cannot be read.

    References
    ----------
    docs/engineering.md sec. 7 (series R per leg, Cc per leg to ground, Cd across) [derived].
    """
    sub = stage.circuit
    p, n = sub.ports.get("in_p"), sub.ports.get("in_n")
    if not p or not n or p == n:
        return None
    dc = dc or DCView(netlist, rails if rails is not None else sub.rails)
    own = {r.name for r in sub.resistors} | {c.name for c in sub.capacitors} | set(stage.references)
    if dc.defined(p) or dc.defined(n):
        return None
    legs = _resistor_legs(dc, p, n, own)
    if legs is None:
        return None
    series, bias = legs
    caps = _filter_capacitors(dc, p, n, own)
    if caps is None:
        return None
    return _extended(dc, sub, p, n, series, bias, caps)


def _resistor_legs(dc: DCView, p: str, n: str,
                   own: set[str]) -> tuple[dict[str, RElem], list[RElem]] | None:
    """The one series resistor into each port ({port: element}) and the bias resistors from
    a port to a net of defined potential; None unless each port has exactly one series leg."""
    series: dict[str, RElem] = {}
    bias: list[RElem] = []
    for port in (p, n):
        legs = []
        for e in dc.view.r_at.get(port, []):
            if e.name in own or e.ref in own:
                continue
            far = e.other(port)
            if dc.defined(far):
                bias.append(e)
            elif far not in (p, n):
                legs.append(e)
        if len(legs) != 1:
            return None          # no series leg, or several: not the sec. 7 shape
        series[port] = legs[0]
    return series, bias


def _filter_capacitors(dc: DCView, p: str, n: str,
                       own: set[str]) -> list[tuple[str, str, str]] | None:
    """The filter's capacitors (Cc from a port to a defined net, Cd across the ports);
    None unless every leg has its Cc or the legs share a Cd."""
    caps, has_cc, has_cd = [], {p: False, n: False}, False
    for ref, a, b in dc.view.capacitors:
        if ref in own:
            continue
        if {a, b} == {p, n}:
            has_cd = True
        elif a in (p, n) and dc.defined(b):
            has_cc[a] = True
        elif b in (p, n) and dc.defined(a):
            has_cc[b] = True
        else:
            continue
        caps.append((ref, a, b))
    if not ((has_cc[p] and has_cc[n]) or has_cd):
        return None
    return caps


def _extended(dc: DCView, sub: SubCircuit, p: str, n: str, series: dict[str, RElem],
              bias: list[RElem], caps: list[tuple[str, str, str]]) -> SubCircuit | None:
    """``sub`` with the filter's parts added, its input ports on the source side of the series
    resistors and the defined nets the filter reaches as rails; None when a value is unreadable."""
    v = dc.view
    notes: list[str] = []
    extra_rails: dict[str, Sourced] = {}

    def fixed_net(net: str) -> None:
        if net in sub.rails or net in extra_rails:
            return
        volts = dc.rail_voltage(net)
        if volts is None:
            volts = thevenin(None, net, dc=dc).volts
        extra_rails[net] = Sourced(float(volts) if volts is not None else 0.0, "default",
                                   f"{net} taken as AC ground for the input filter")

    new_r = []
    for port, e in series.items():
        r = v.resistor(e, notes)
        # Orient the series resistor source side -> port.
        new_r.append(replace(r, a=e.other(port), b=port))
    for e in bias:
        new_r.append(v.resistor(e, notes))
        fixed_net(e.b if e.a in (p, n) else e.a)
    new_c = []
    for ref, a, b in caps:
        try:
            f, t = capacitance_of(v.comps[ref], 0.1, "assumed for capacitors")
        except (InputError, ValueError):
            return None
        new_c.append(Capacitor(ref, a, b, f, t))
        for net in (a, b):
            if net not in (p, n):
                fixed_net(net)
    if any(math.isnan(r.ohms.value) or math.isnan(r.tol.value) for r in new_r):
        return None
    ports = {**sub.ports, "in_p": series[p].other(p), "in_n": series[n].other(n)}
    if ports["in_p"] == ports["in_n"]:
        return None
    return replace(sub, resistors=list(sub.resistors) + new_r,
                   capacitors=list(sub.capacitors) + new_c, ports=ports,
                   rails={**sub.rails, **extra_rails})
