"""What the wiring alone says about every amplifier, with or without part data.

The structural rules need no datasheet: a REF pin or an input with no DC path, a supply pin
that reaches a rail only through a capacitor, are faults of the drawing whatever the part is.
This module finds them for the parts recognition could not expand into a stage (an integrated
in-amp without part data) and for the supply pins of every amplifier of the design:

* ``unsupported_paths(dc, unsupported)``: the DC path of the inputs and of REF of each in-amp
  or difference amplifier without part data, written to its ``schematic`` facts as
  ``bias`` (one dict per input) and ``ref_path``;
* ``supply_paths(dc) -> list[SupplyPath]``: each amplifier supply pin whose net reaches no
  supply through a DC path (status ``'capacitor'``: only through capacitors, as when the
  decoupling capacitor is drawn and the wire to the rail is not; ``'none'``: through nothing).

DC view as in :mod:`.dc_view`: resistors, inductors, ferrites, fuses, jumpers and sources
conduct; capacitors are open; supplies, grounds and amplifier outputs have a defined potential.
"""

from __future__ import annotations

import re
from dataclasses import asdict, dataclass, field

from frontcheck.analysis.bias_return import net_bias
from frontcheck.analysis.dc_view import DCView
from frontcheck.analysis.result import BiasPath
from frontcheck.component import pin_key, pin_role

__all__ = ["SupplyPath", "ref_at_low_rail", "supply_paths", "unsupported_paths"]

_AMPLIFIERS = ("opamp", "inamp", "diffamp", "fda")
_SUPPLY_ROLES = {"vpos": "positive supply", "vneg": "negative supply", "gnd": "ground"}
# Names KiCad makes up for a net no label names: the net carries no designer's name at all.
_AUTO_NAME = re.compile(r"^(?:.*/)?(?:Net-\(|unconnected-\()")


@dataclass
class SupplyPath:
    """One amplifier supply pin without a DC path to a supply."""

    amplifier: str          # component reference, 'U3'
    pin: str                # 'V+ (pin 7)'
    role: str               # 'positive supply' | 'negative supply' | 'ground'
    net: str
    status: str             # 'capacitor' | 'none'
    reaches: list[str] = field(default_factory=list)   # rails reached through the capacitors
    parts: list[str] = field(default_factory=list)     # those capacitors


def _gain_parts(un) -> set[str]:
    """References in the part's own gain network (RG, RF): they load REF, never drive it."""
    return {p for role, expr in getattr(un, "roles", {}).items() if role.startswith(("RG", "RF"))
            for p in re.findall(r"[A-Za-z#_]+\d+", expr)}


def unsupported_paths(dc: DCView, unsupported) -> None:
    """Record the DC path of each input and of REF of every part without part data in its
    ``schematic`` facts (plain dicts: ``bias`` per input, ``ref_path``), for the ref-floating
    and bias-return rules. The part itself conducts nothing here: an in-amp's inputs and
    REF are high-impedance nodes whatever its internals. A difference amplifier's inputs are
    not: by its kind each feeds the part's own resistor network (+IN towards REF, -IN towards
    the output; Sedra & Smith, Microelectronic Circuits, 6th ed., sec. 2.4), so an input
    whose own wiring reaches no defined potential returns its bias through the part when
    REF (for +IN) or the part's own output (for -IN) is defined."""
    for un in unsupported:
        facts = un.schematic
        ref_path = None
        net = un.pins.get("ref")
        if net and net in dc.view.nodes:
            ref_path = net_bias(dc, f"{un.ref} REF", net, exclude=_gain_parts(un))
        bias = []
        for role, label in (("in_p", "+IN"), ("in_n", "-IN")):
            net = un.pins.get(role)
            if net and net in dc.view.nodes:
                bp = net_bias(dc, f"{un.ref} {label}", net)
                if bp.status != "ok" and un.kind == "integrated-diffamp":
                    bp = _through_own_network(dc, un, bp, role)
                bias.append(asdict(bp))
        facts["bias"] = bias
        if ref_path is not None:
            facts["ref_path"] = asdict(ref_path)


def ref_at_low_rail(un, rails) -> dict | None:
    """REF of an in-amp without part data wired to its own negative supply: the same net, or
    nets of one known voltage (``rails``: net -> Sourced, grounds at 0 V). Whatever its gain,
    Vout = Vref + G Vd then needs an output below that rail for any negative Vd
    (docs/engineering.md sec. 4a). None otherwise."""
    if un.kind != "integrated-inamp":
        return None
    ref, vn = un.pins.get("ref"), un.pins.get("vneg")
    if not ref or not vn or _AUTO_NAME.match(ref) or _AUTO_NAME.match(vn):
        return None
    rv, nv = (rails.get(x) for x in (ref, vn))
    rv, nv = (None if x is None else float(x.value) for x in (rv, nv))
    if ref != vn and (rv is None or nv is None or abs(rv - nv) > 1e-12):
        return None
    return {"ref_net": ref, "ref_v": rv, "rail_net": vn, "rail_v": nv, "amplifier": un.ref}


def _through_own_network(dc: DCView, un, bp: BiasPath, role: str) -> BiasPath:
    """An integrated difference amplifier's input returned through the part's own resistors:
    -IN to its output (the part drives it), +IN to a REF pin (REF, or REF1/REF2 of a part
    with two) whose own path is defined."""
    if role == "in_n" and un.pins.get("out"):
        return BiasPath(bp.pin, bp.net, "ok", f"{un.ref} output through its own resistors")
    if role != "in_p":
        return bp
    for pin, net in sorted(un.pins.items()):
        if re.fullmatch(r"ref\d*", pin) and net in dc.view.nodes:
            ref = net_bias(dc, f"{un.ref} {pin.upper()}", net, exclude=_gain_parts(un))
            if ref.status == "ok":
                return BiasPath(bp.pin, bp.net, "ok",
                                f"{un.ref} {pin.upper()} (net {net}) through its own resistors",
                                list(ref.parts))
    return bp


def _may_be_fed_elsewhere(dc: DCView, island: set[str], supply_pins: set[tuple[str, str]]) -> bool:
    """True when something on the island could deliver supply current that the DC view does
    not model: a net with a designer's global name (a power symbol or global label may name a
    rail fed from outside this design), a connector, or a pin of any part other than resistors,
    capacitors, the DC shorts and the amplifiers' own supply pins (a regulator, a reference,
    a transistor)."""
    v = dc.view
    shorts = {ref for ref, _, _ in dc.shorts}
    for net in island:
        if "/" not in net and not _AUTO_NAME.match(net):
            return True
        if net in dc.connectors:
            return True
        for ref, pin in v.nodes.get(net, []):
            kind = v.kind.get(ref)
            if kind in ("resistor", "capacitor") or ref in shorts or (ref, pin) in supply_pins:
                continue
            return True
    return False


def supply_paths(dc: DCView) -> list[SupplyPath]:
    """Every amplifier supply pin whose net reaches no supply through a DC path, in reference
    and pin order. A pin left unconnected is not listed (recognition reports open pins), nor
    a net something else may feed (see :func:`_may_be_fed_elsewhere`)."""
    v = dc.view
    pins = []
    for ref in sorted(v.comps):
        if v.kind.get(ref) not in _AMPLIFIERS:
            continue
        c = v.comps[ref]
        for num in sorted(c.pins, key=pin_key):
            role = pin_role(c.pins[num])
            if role in _SUPPLY_ROLES:
                pins.append((ref, num, role))
    supply_pins = {(ref, num) for ref, num, _ in pins}
    links = dc.links()
    out: list[SupplyPath] = []
    for ref, num, role in pins:
        net = v.net_of.get((ref, num))
        if net is None or v.is_open(net) or dc.defined(net):
            continue
        island, queue = {net}, [net]
        while queue:
            for other, _part, _ref in links[0].get(queue.pop(), ()):
                if other not in island:
                    island.add(other)
                    queue.append(other)
        if any(dc.defined(n) for n in island) or _may_be_fed_elsewhere(dc, island, supply_pins):
            continue
        caps, rails = [], []
        for cref, a, b in v.capacitors:
            for mine, far in ((a, b), (b, a)):
                if mine in island and far not in island and far is not None and dc.is_rail(far):
                    caps.append(cref)
                    rails.append(far)
        name = v.comps[ref].pins[num].name or num
        out.append(SupplyPath(ref, f"{name} (pin {num})", _SUPPLY_ROLES[role], net,
                              "capacitor" if caps else "none", sorted(set(rails)),
                              sorted(set(caps))))
    return out
