"""Bias-current return of every amplifier input of a stage, looked for in the whole design:
each input must reach a net of defined potential through DC-conducting parts.
"""

from __future__ import annotations

from typing import Mapping

from frontcheck.analysis.dc_view import DCView, path_parts, walk
from frontcheck.analysis.result import BiasPath
from frontcheck.circuit import Sourced, Stage
from frontcheck.netlist import Netlist

__all__ = ["bias_paths", "net_bias"]



def bias_paths(netlist: Netlist, stage: Stage, rails: Mapping[str, Sourced] | None = None,
               dc: DCView | None = None) -> list[BiasPath]:
    """DC bias-return path of every amplifier input of ``stage``.

    Each input net must reach, through DC-conducting parts, a net of defined potential (a
    supply or ground, or an op-amp output): status 'ok'. Reaching only a connector pin is
    'connector' (the source off the board must provide it: a declaration is needed); reaching
    nothing is 'none'. Inputs of a part's internal op-amps are checked only where they are
    the part's own input pins (their other nets are inside the part).

    References
    ----------
    docs/engineering.md sec. 6 (input bias current needs a DC return inside the input CM range)
    [practice].
    """
    dc = dc or DCView(netlist, rails if rails is not None else stage.circuit.rails)
    g = dc.links()
    ports = stage.circuit.ports
    port_label = {ports.get("in_p"): "+IN", ports.get("in_n"): "-IN"}
    out, seen = [], set()
    for o in stage.circuit.opamps:
        for role, net in (("+in", o.inp), ("-in", o.inn)):
            if o.internal:
                if net not in port_label or net is None:
                    continue
                label = f"{o.ref} {port_label[net]}"
            else:
                label = f"{o.name} {role}"
            if net is None or net not in dc.view.nodes or (label, net) in seen:
                continue
            seen.add((label, net))
            out.append(_bias_of(dc, g, label, net))
    return out


def net_bias(dc: DCView, label: str, net: str, exclude: set[str] = frozenset()) -> BiasPath:
    """DC path of one net (an amplifier input or REF pin, ``label`` names it) as
    :func:`bias_paths` finds it for a stage's inputs, the parts in ``exclude`` left out."""
    return _bias_of(dc, dc.links(), label, net, exclude)


def _bias_of(dc: DCView, g, label: str, net: str, exclude: set[str] = frozenset()) -> BiasPath:
    if dc.defined(net):
        return BiasPath(label, net, "ok", f"{dc.defined(net)} directly")
    parent, order = walk(g, net, lambda n: dc.defined(n) is not None, exclude)
    for n in order:
        why = dc.defined(n)
        if why:
            via = path_parts(parent, n)
            return BiasPath(label, net, "ok", f"{why} via {', '.join(via)}", via)
    for n in order:
        if n in dc.connectors:
            ref, pin = dc.connectors[n][0]
            via = path_parts(parent, n)
            return BiasPath(label, net, "connector",
                            f"{ref} pin {pin}" + (f" via {', '.join(via)}" if via else ""),
                            via + [ref])
    return BiasPath(label, net, "none", "", _blocking_capacitors(dc, set(order)))


def _blocking_capacitors(dc: DCView, island: set[str]) -> list[str]:
    """Capacitors from the input's DC island to the outside: the coupling capacitors that
    leave the input without a DC return (what the designer must look at)."""
    v = dc.view
    caps = set()
    for n in island:
        for ref, _ in v.nodes.get(n, []):
            if v.kind.get(ref) != "capacitor":
                continue
            nets = {v.net_of.get((ref, p)) for p in v.comps[ref].pins}
            if nets - island - {None}:
                caps.add(ref)
    return sorted(caps)

