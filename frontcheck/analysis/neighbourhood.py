"""The stage with the parts around it that change its figures: the REF network and loads.

Recognition hands analysis the stage's own parts. Other resistors drawn in the design change
its gain, CMRR and node voltages too, and their tolerances belong in the worst case and the
Monte Carlo as much as the stage's own:

* the resistive network that feeds REF (a divider off the supplies): its parts, not only its
  nominal Thevenin resistance, are varied; the REF net becomes a node of the circuit;
* loads on the stage's inner nets (a resistor from an RG centre tap to a driven-reference
  amplifier, a resistor from an inverting node to a rail): with the others fixed, such a
  load at a tolerance corner turns common mode into differential signal.
* the signal source drawn at the inputs (a bridge's arms, a divider, series resistors from a
  buffer), when the design shows the source of both inputs: the inputs are driven behind it,
  so its resistance and its mismatch at the tolerance corners are in the figures (a source
  off the board, behind a connector, is unknown and stays out).

A load's far end must have a DC potential the analysis can hold: a supply or ground, a net of
the stage, or the inverting input of another op-amp with resistive feedback whose
non-inverting input is one of those (that op-amp, with its own part data, and its feedback
resistors are then solved with the stage; they get no headroom check or requirement here).
Anything else is left out with a note.

``extend(stage, dc, ref)`` returns a :class:`Neighbourhood`: the extended SubCircuit (the
stage's own one when nothing is added) and the names of every resistor varied.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from frontcheck.analysis import mna
from frontcheck.analysis.result import RefSource
from frontcheck.circuit import Resistor, Sourced, Stage, SubCircuit

__all__ = ["Neighbourhood", "extend"]


@dataclass
class Neighbourhood:
    """The stage's SubCircuit with the parts around it (``sub``; the stage's own when nothing
    is added), the same with the loads alone (``loads_only``: the REF network's cost is
    budgeted apart), whether REF's network is in ``sub`` (then the REF port is gone or moved
    to the network's driven end), and notes."""

    sub: SubCircuit
    loads_only: SubCircuit                                 # the stage with the loads alone
    ref_network: list[str] = field(default_factory=list)   # REF-network resistors added
    loads: list[str] = field(default_factory=list)         # load resistors added
    source_legs: list[str] = field(default_factory=list)   # source-network resistors added
    ref_moved_to: str | None = None       # the network's driven end, now the REF port
    drivers: list = field(default_factory=list)            # op-amps holding a load's far end
    notes: list[str] = field(default_factory=list)

    @property
    def added(self) -> list[str]:
        return self.ref_network + self.loads + self.source_legs


def _stage_nets(sub: SubCircuit) -> set[str]:
    nets = set()
    for r in sub.resistors:
        nets.update((r.a, r.b))
    for o in sub.opamps:
        nets.update(n for n in (o.inp, o.inn, o.out) if n)
    nets.update(v for v in sub.ports.values() if v)
    return nets


def _rail(dc, net: str) -> Sourced | None:
    """A supply or ground net of known voltage, as the Sourced the rails carry."""
    if not dc.is_rail(net):
        return None
    if net in dc.rails:
        return dc.rails[net]
    v = dc.rail_voltage(net)
    return None if v is None else Sourced(float(v), "value", f"voltage from the net name {net}")


def _ref_network(stage: Stage, dc, ref: RefSource, own: set[str], nets: set[str],
                 nb: Neighbourhood, rails: dict[str, Sourced]) -> list[Resistor] | None:
    """The resistors of the network feeding REF, or None when it cannot be modelled exactly
    (it reaches the stage's other nets, or more than one end of unknown voltage)."""
    v = dc.view
    elems = [e for e in v.resistors if e.name in set(ref.parts) and e.name not in own]
    if not elems or len(elems) != len(set(ref.parts)):
        return None
    ends = {n for e in elems for n in (e.a, e.b)}
    inner = {ref.net}
    driven = []
    for net in sorted(ends):
        if net == ref.net:
            continue
        if _rail(dc, net) is not None:
            rails[net] = _rail(dc, net)
        elif net in dc.outputs or dc.is_rail(net):
            driven.append(net)
        elif net in nets:
            return None          # the network reaches back into the stage
        else:
            inner.add(net)
    if len(driven) > 1:
        return None
    notes: list[str] = []
    out = [v.resistor(e, notes) for e in elems]
    nb.notes += [n for n in notes if n not in nb.notes]
    nb.ref_network = sorted(e.name for e in elems)
    nb.ref_moved_to = driven[0] if driven else None
    return out


def _holder(dc, net: str, allowed: set[str]):
    """The op-amp unit that holds ``net`` by feedback: ``net`` is its inverting input, a
    resistor joins its output to ``net`` (or the output is ``net``), and its non-inverting
    input is in ``allowed``. Returns (unit, feedback resistor elements) or None."""
    v = dc.view
    for u in v.units:
        if u.inn != net or not u.inp or not u.out or u.inp not in allowed:
            continue
        fb = [e for e in v.r_at.get(net, []) if e.other(net) == u.out]
        if fb or u.out == net:
            return u, fb
    return None


def _loads(stage: Stage, dc, own: set[str], nets: set[str], nb: Neighbourhood,
           rails: dict[str, Sourced], skip: set[str]) -> list[Resistor]:
    """Resistors from the stage's inner nets (not its ports, rails or op-amp outputs, whose
    ideal sources a load does not move) to a net whose potential analysis can hold."""
    sub = stage.circuit
    v = dc.view
    outs = {o.out for o in sub.opamps}
    ports = {sub.ports.get(k) for k in ("in_p", "in_n", "ref", "out")}
    inner = sorted(n for n in nets if n not in outs and n not in ports and not dc.is_rail(n)
                   and not mna.is_ground(n))
    out: list[Resistor] = []
    notes: list[str] = []
    seen: set[str] = set()
    for net in inner:
        for e in v.r_at.get(net, []):
            if e.name in own or e.ref in own or e.name in skip or e.name in seen:
                continue
            seen.add(e.name)
            far = e.other(net)
            r = v.resistor(e, notes)
            if far in nets:
                out.append(r)
            elif _rail(dc, far) is not None:
                rails[far] = _rail(dc, far)
                out.append(r)
            else:
                held = _holder(dc, far, nets | set(dc.rails) | set(rails))
                if held is None:
                    nb.notes.append(f"{e.name} loads {net} into a network the analysis does "
                                    f"not solve: left out of the figures")
                    continue
                u, fb = held
                if u.name not in {o.name for o in nb.drivers}:
                    op = v.opamp(u, notes)
                    # Its inputs sit at a held net, not at the stage's common mode: its own
                    # CMRR moves nothing here, and only its open-loop gain is kept.
                    nb.drivers.append(replace(op, neighbour=True,
                                              model=replace(op.model, cmrr_db=None)))
                    out += [v.resistor(f, notes) for f in fb if f.name not in seen]
                    seen.update(f.name for f in fb)
                    if u.inp not in nets and _rail(dc, u.inp) is not None:
                        rails[u.inp] = _rail(dc, u.inp)
                nb.notes.append(f"{e.name} loads {net} into {u.name}'s inverting input, which "
                                f"{u.name}'s feedback holds at {u.inp}: {u.name} and its feedback "
                                f"are solved with the stage")
                out.append(r)
            nb.loads.append(e.name)
    nb.notes += [n for n in notes if n not in nb.notes]
    return out


def _source_legs(stage: Stage, dc, source, own: set[str], nets: set[str],
                 nb: Neighbourhood) -> tuple[list[Resistor], dict[str, str]]:
    """The resistive networks that drive the two inputs (a bridge's arms, a divider, a series
    resistor from a low-impedance source), when the design shows both inputs' sources.

    Each network is copied with its ends of defined potential (supplies, ground, op-amp
    outputs) joined into one source node that becomes the input port: the signal then reaches
    the stage behind the network's exact Thevenin resistance at every tolerance corner (the
    Thevenin resistance is that of the network with its sources zeroed, so joining the ends
    changes nothing else). Nets joined by shorts stay joined. A network that reaches back into
    the stage or into the other input's network is left out with a note.

    Returns (resistors, ports to replace).
    """
    from frontcheck.analysis.dc_paths import thevenin

    sub = stage.circuit
    if source is None or source.rs_p is None or source.rs_n is None \
            or not (source.rs_p or source.rs_n):
        return [], {}
    inputs = {sub.ports["in_p"], sub.ports["in_n"]}
    if not any(r.a in inputs or r.b in inputs for r in sub.resistors):
        # Only op-amp inputs at the ports: no current flows in the source, whose resistance
        # then changes no figure (and varying it would only cost corners).
        nb.notes.append("the signal source drawn at the inputs is not solved with the stage: "
                        "its inputs are op-amp inputs, which draw no current in the figures, so "
                        "the source's resistance changes none of them")
        return [], {}
    v = dc.view
    uf, members, _, _ = dc.resistive_groups(own)

    def is_fixed(group: str) -> bool:
        return any(dc.is_rail(n) or n in dc.outputs for n in members.get(group, [group]))

    out: list[Resistor] = []
    ports: dict[str, str] = {}
    notes: list[str] = []
    claimed: set[str] = set()
    legs = []
    for role in ("in_p", "in_n"):
        net = sub.ports[role]
        th = thevenin(None, net, exclude=own, dc=dc)
        if th.kind != "resistive" or not th.ohms:
            continue                   # driven at low impedance: nothing to vary
        port_group = uf.find(net)
        src = f"{net} (source)"
        elems = [e for e in v.resistors if e.name in set(th.parts)]
        copy = []
        for e in elems:
            ends = []
            for n in (e.a, e.b):
                g = uf.find(n)
                if g == port_group:
                    ends.append(net)
                elif is_fixed(g):
                    ends.append(src)
                elif g in claimed or any(m in nets for m in members.get(g, [g])):
                    nb.notes.append(f"the source network at {net} ({', '.join(th.parts)}) "
                                    "reaches the stage or the other input's source: not varied "
                                    "with the stage")
                    return [], {}
                else:
                    ends.append(g)
            copy.append((e, ends))
        claimed |= {uf.find(n) for e in elems for n in (e.a, e.b)} - {port_group}
        claimed = {g for g in claimed if not is_fixed(g)}
        for e, (a, b) in copy:
            r = v.resistor(e, notes)
            out.append(replace(r, a=a, b=b))
        ports[role] = src
        legs.append(f"{'/'.join(sorted(th.parts))} at {net}")
    if out:
        nb.source_legs = sorted(r.name for r in out)
        nb.notes += [n for n in notes if n not in nb.notes]
        nb.notes.append("the signal source drawn at the inputs (" + "; ".join(legs) + ") is "
                        "solved and varied with the stage: the inputs are driven behind its "
                        "resistance")
    return out, ports


def extend(stage: Stage, dc, ref: RefSource | None, source=None) -> Neighbourhood:
    """The stage with its REF network and the loads on its inner nets (module docstring).

    Parameters
    ----------
    stage : Stage
    dc : dc_paths.DCView
        The design's DC view.
    ref : RefSource or None
        From :func:`frontcheck.analysis.dc_paths.ref_source`.
    source : SourceLoading or None
        From :func:`frontcheck.analysis.dc_paths.source_impedances`: the source networks at
        the inputs are solved and varied with the stage when it knows both.

    Returns
    -------
    Neighbourhood
    """
    sub = stage.circuit
    own = {r.name for r in sub.resistors} | set(stage.references)
    nets = _stage_nets(sub)
    nb = Neighbourhood(sub, sub)
    rails: dict[str, Sourced] = {}
    ref_res: list[Resistor] = []
    ref_net = sub.ports.get("ref")
    shared = ref_net in (sub.ports.get("in_p"), sub.ports.get("in_n"))
    if ref is not None and ref.kind == "resistive" and ref.parts and not shared:
        ref_res = _ref_network(stage, dc, ref, own, nets, nb, rails) or []
    load_res = _loads(stage, dc, own, nets, nb, rails, set(nb.ref_network))
    src_res, src_ports = ([], {}) if shared else _source_legs(stage, dc, source, own, nets, nb)
    if not ref_res and not load_res and not src_res:
        return nb
    new_rails = {**{k: v for k, v in rails.items() if k not in sub.rails}, **sub.rails}
    ops = list(sub.opamps) + nb.drivers
    nb.loads_only = replace(sub, resistors=list(sub.resistors) + load_res, rails=new_rails,
                            opamps=ops)
    ports = dict(sub.ports)
    if ref_res:
        if nb.ref_moved_to is None:
            ports.pop("ref", None)          # REF is a node of the divider now
        else:
            ports["ref"] = nb.ref_moved_to
    ports.update(src_ports)
    nb.sub = replace(sub, resistors=list(sub.resistors) + load_res + ref_res + src_res, ports=ports,
                     rails=new_rails, opamps=ops)
    return nb
