"""An integrated in-amp's gain network as drawn: which architecture its pins ask for, whether the
network is wired the way that architecture needs, and what the wiring as drawn gives
(docs/engineering.md sec. 3c).

Three networks are read from the pins and the wiring, with or without part data:

* RG between two RG pins: any series and parallel combination of resistors, potentiometers
  wired as rheostats or fixed resistors (:mod:`.rg_network`), or two halves meeting at a
  centre tap;
* a two-resistor feedback network: RF from the output to the feedback (gain) pin, RG from that
  pin to REF. Drawn with the second resistor from the output to REF instead, the gain pin sees
  the output through RF alone: the part runs at its base gain and that resistor only loads the
  output, a wiring error found here without part data;
* gain straps: pins named by the gain they give (``G=10``, ``G=100``), one of them tied to an
  RG or gain-sense pin; the gain as drawn is what the tied pin's name states.

Only the numbers the schematic itself holds are stated without part data: resistances, their
range over a wiper's travel, RF/RG, and a strap pin's stated gain (marked as read from the pin
name). Gains from a part's equations wait for its part data.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any

from frontcheck import formatting as fmt
from frontcheck.component import normalise_pin_name
from frontcheck.netlist import Component
from frontcheck.recognise.common import Group, NearMiss, NetlistView
from frontcheck.recognise.rg_network import RGNetwork, between

__all__ = ["COMMON_K_RANGE", "GainWiring", "Strap", "drawn_arch", "external", "gain_pins",
           "gain_range", "schematic_gain", "straps"]

#: Gain constants K of G = 1 + K/RG that integrated three-op-amp in-amps commonly state span
#: about 9.9 kOhm to 100 kOhm (common practice, from memory); without part data the gain is
#: said as the range this span gives, marked as not checked.
COMMON_K_RANGE = (9.9e3, 100e3)


@dataclass
class Strap:
    """A gain strap as drawn: the ``G=N`` pins tied to an RG or gain-sense pin."""

    made: list[tuple[str, str, float]]      # (strap pin, pin it is tied to, gain its name states)
    open: list[tuple[str, float]]           # strap pins left untied: (pin, gain)

    @property
    def gain(self) -> float | None:
        """The gain the tied pin's name states, when exactly one strap is made."""
        return self.made[0][2] if len(self.made) == 1 else None


@dataclass
class GainWiring:
    """What :func:`external` read: roles and groups of the external gain parts, notes, and
    whether a gain can be stated (``ok``)."""

    roles: dict[str, str] = field(default_factory=dict)
    ext: list[Group] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    ok: bool = True
    rg_return: bool = False                 # RG returns to the part's own RG pin (feedback pin)
    network: RGNetwork | None = None        # an RG network with a pot, a missing value or no form
    strap: Strap | None = None
    as_drawn: str = ""                      # what the wiring as drawn gives, in words
    arch: str = "rg-pair"                   # the network the pins ask for (drawn_arch)
    network_role: str = "RG"                # which resistor ``network`` is (RG, or RF)
    rg_ohms: float | None = None            # RG of a fixed network no single branch describes


def _first_net(pm, role) -> str | None:
    for _, net in pm.get(role, []):
        if net is not None:
            return net
    return None


def drawn_arch(pm) -> str:
    """The gain network the pins ask for: 'feedback-pin' for a feedback (FG/FB) pin or a lone
    RG pin, else 'rg-pair' (two RG pins, gain straps included)."""
    return "feedback-pin" if pm.get("fg") or len(pm.get("rg", [])) == 1 else "rg-pair"


def gain_pins(pm):
    """The pins the gain network hangs on: a feedback pin (FG/FB) when the part has one (the
    two-resistor network OUT -> FG -> REF; an RG pin beside it is where that network may
    return), else the RG pins."""
    return pm.get("fg", [])[:1] or pm.get("rg", [])


_STRAP = re.compile(r"^G=(\d+(?:\.\d+)?)$")
_GAIN_SENSE = re.compile(r"^[+-]?G(?:AIN)?SENSE[+-]?$")


def straps(view: NetlistView, c: Component, pm) -> Strap | None:
    """The part's gain straps (pins named 'G=10', 'G=100', ...) and which of them are tied to
    an RG pin or a gain-sense pin ('+G_Sense', '-G_Sense'); None for a part without them."""
    named = []
    anchors: dict[str, str] = {}            # net -> the RG / gain-sense pin on it
    for num in sorted(c.pins, key=lambda p: (len(p), p)):
        name = normalise_pin_name(c.pins[num].name)
        net = view.net_of.get((c.ref, num))
        m = _STRAP.match(name)
        if m:
            named.append((num, float(m.group(1)), net))
        elif _GAIN_SENSE.match(name) and net and not view.is_open(net):
            anchors.setdefault(net, f"{c.pins[num].name} (pin {num})")
    if not named:
        return None
    for num, net in pm.get("rg", []):
        if net and not view.is_open(net):
            anchors.setdefault(net, f"{c.pins[num].name} (pin {num})")
    made, left = [], []
    for num, gain, net in named:
        tied = anchors.get(net) if net else None
        if tied is None and net and not view.is_open(net):
            # a 0-ohm link counts as a strap
            for far, g in view.groups(net).items():
                if far in anchors and view.is_zero(g):
                    tied = f"{anchors[far]} through {g.expr}"
        if tied:
            made.append((f"{c.pins[num].name} (pin {num})", tied, gain))
        else:
            left.append((f"{c.pins[num].name} (pin {num})", gain))
    return Strap(made, left)


def external(view: NetlistView, c: Component, pm, kind: str, misses: list[NearMiss],
             stage_kind: str, loc, g0: float | None = None,
             name: str | None = None) -> GainWiring:
    """External gain parts: the RG network between two RG pins, RF/RG on a feedback pin, or
    gain straps. ``ok`` is False when the gain network is so incomplete or miswired that no
    gain can be stated (then only the near miss is reported). ``pm`` may be one channel's pin
    map; its near misses then name that channel (``name``, 'U1B') while their references
    stay the part's."""
    w = GainWiring()
    if kind != "inamp":
        return w
    before = len(misses)
    w = _external(view, c, pm, misses, stage_kind, loc, g0)
    w.arch = drawn_arch(pm)
    if name and name != c.ref:
        for m in misses[before:]:
            if m.message.startswith(f"{c.ref}: "):
                m.message = f"{name}: " + m.message[len(c.ref) + 2:]
    return w


def _external(view: NetlistView, c: Component, pm, misses: list[NearMiss], stage_kind: str,
              loc, g0: float | None) -> GainWiring:
    w = GainWiring()
    ref = c.ref
    gp = gain_pins(pm)
    out, refnet = _first_net(pm, "out"), _first_net(pm, "ref")
    strap = straps(view, c, pm)
    if strap is not None:
        return _strapped(view, ref, gp, strap, (out, refnet), misses, stage_kind, loc)
    if len(gp) >= 2:
        return _rg_pair(view, ref, gp, (out, refnet), misses, stage_kind, loc)
    if len(gp) == 1:
        return _feedback_network(view, ref, pm, gp[0], (out, refnet), misses, stage_kind, loc, g0)
    return w


def _strapped(view: NetlistView, ref: str, gp, strap: Strap, ends, misses: list[NearMiss],
              stage_kind: str, loc) -> GainWiring:
    """A part with gain straps: one strap made gives the gain its pin name states; none made
    leaves the RG pins to an external resistor or, without one, the part at its base gain."""
    names = ", ".join(p for p, _ in strap.open)
    if len(strap.made) > 1:
        made = "; ".join(f"{p} to {t}" for p, t, _ in strap.made)
        misses.append(NearMiss(stage_kind, [ref], f"{ref}: more than one gain strap is made "
                               f"({made}): the straps act together and the gain is none of "
                               "the values their pin names state", ref,
                               "one gain strap only", loc))
        return GainWiring(strap=strap, ok=False)
    if strap.made:
        pin, tied, gain = strap.made[0]
        w = GainWiring(strap=strap)
        w.as_drawn = (f"the strap ties {pin} to {tied}: gain {fmt.number(gain)} as "
                      "drawn, as the pin name states (read from the pin name, not checked)")
        w.notes.append(w.as_drawn)
        if len(gp) >= 2 and not any(view.is_open(n) for _, n in gp[:2]) and gp[0][1] != gp[1][1]:
            extra = between(view, gp[0][1], gp[1][1], {x for x in ends if x})
            if extra is not None:
                w.roles["RG"] = extra.expr
                w.as_drawn += (f"; but {extra.expr} between the RG pins acts with the strap, so "
                               "the gain is above that by an amount only part data can give")
        return w
    if len(gp) >= 2 and not any(view.is_open(n) for _, n in gp[:2]) \
            and between(view, gp[0][1], gp[1][1], set(ends)) is not None:
        w = _rg_pair(view, ref, gp, ends, misses, stage_kind, loc)
        w.notes.append(f"no gain strap made ({names} open): the gain is set by the RG network")
        return w
    misses.append(NearMiss(stage_kind, [ref], f"{ref}: no gain strap is made ({names} open) "
                           "and no resistor joins the RG pins: as drawn the in-amp runs at its "
                           "base gain (the pin names do not state it)", ref,
                           "a gain strap (tie one G= pin to the RG or gain-sense pin) or an RG "
                           "resistor", loc))
    return GainWiring(strap=strap, ok=False)


_RG_RETURN = "gain network returns to the RG pin"


def _rg_pair(view: NetlistView, ref: str, gp, ends, misses: list[NearMiss], stage_kind: str,
             loc) -> GainWiring:
    """RG between two RG pins: one branch, two halves at a centre tap, or any network of
    resistors and potentiometers (:mod:`.rg_network`)."""
    w = GainWiring()
    out, refnet = ends
    (p1, n1), (p2, n2) = gp[0], gp[1]
    open1, open2 = view.is_open(n1), view.is_open(n2)
    if open1 and open2:
        w.notes.append("RG pins not connected: the in-amp runs at its minimum gain")
        w.as_drawn = "no gain resistor: the in-amp runs at its minimum gain"
        misses.append(NearMiss(stage_kind, [ref], f"{ref}: no gain resistor between the RG "
                               f"pins {p1} and {p2}; the gain is the part's minimum",
                               ref, "RG resistor", loc))
        return w
    net = between(view, n1, n2, {x for x in ends if x}) if not (open1 or open2) else None
    g = view.groups(n1, ports={n2}).get(n2) if not (open1 or open2) else None
    same = g is not None and net is not None and len(net.elements) == len(g.elements)
    if net is not None and (net.pots or not net.reducible or (net.unknown and not same)):
        w.network = net
        w.roles["RG"] = net.expr
        w.as_drawn = f"RG = {net.describe()}"
        w.notes.append(w.as_drawn)
        return _loads(view, ref, gp, w, ends, misses, stage_kind, loc)
    if g is not None and (net is None or same):
        w.roles["RG"] = g.expr
        w.ext.append(g)
        if net is not None and len(net.elements) > 1:
            w.notes.append(f"gain network as drawn: RG = {net.describe()}")
    elif net is not None:
        # a series-parallel network of fixed resistors that no single branch describes: its
        # elements go into the stage as drawn
        w.roles["RG"] = net.expr
        w.ext.append(Group(n1, n2, [[_relem(view, e)] for e in net.elements]))
        w.rg_ohms = net.lo
        w.as_drawn = f"RG = {net.describe()}"
        w.notes.append(f"gain network as drawn: {w.as_drawn}")
    else:
        # Split RG with a centre tap: branches from each RG pin meeting at one net.
        g1 = view.groups(n1, ports={n2}) if not open1 else {}
        g2 = view.groups(n2, ports={n1}) if not open2 else {}
        taps = sorted((set(g1) & set(g2)) - {out, refnet})
        if taps:
            x = taps[0]
            w.roles.update({"RG": f"{g1[x].expr}+{g2[x].expr}", "RGa": g1[x].expr,
                            "RGb": g2[x].expr})
            w.ext += [g1[x], g2[x]]
            w.notes.append(f"RG is split: {g1[x].expr} and {g2[x].expr} meet at net {x!r}")
            return w
        which = p1 if open1 else p2 if open2 else f"{p1}/{p2}"
        misses.append(NearMiss(stage_kind, [ref], f"{ref}: RG pin {which} is not connected "
                               "to a gain resistor that reaches the other RG pin",
                               ref, f"RG pin {which} connection", loc))
        w.ok = False
        return w
    return _loads(view, ref, gp, w, ends, misses, stage_kind, loc)


def _relem(view: NetlistView, e):
    return next(r for r in view.resistors if r.name == e.name)


def _loads(view: NetlistView, ref: str, gp, w: GainWiring, ends, misses: list[NearMiss],
           stage_kind: str, loc) -> GainWiring:
    """Resistors from an RG pin to a fixed net load it (noted, kept in the stage); one to a
    signal net leaves the gain unstated."""
    out, refnet = ends
    (p1, n1), (p2, n2) = gp[0], gp[1]
    inside = {n for e in (w.network.elements if w.network else []) for n in (e.a, e.b)}
    for pin, mine, other in ((p1, n1, n2), (p2, n2, n1)):
        for far, grp in view.groups(mine, ports={other, out, refnet}).items():
            if far == other or far in inside:
                continue
            if not view.fixed(far):
                misses.append(NearMiss(stage_kind, sorted({ref, *grp.refs}),
                                       f"{ref}: RG pin {pin} also connects through {grp.expr} "
                                       f"to {far!r}: the gain cannot be stated", ref,
                                       "gain resistor between the RG pins only", loc))
                w.ok = False
                return w
            w.ext.append(grp)
            w.notes.append(f"{grp.expr} loads RG pin {pin} to {far!r}")
    return w


def _feedback_network(view: NetlistView, ref: str, pm, pin: tuple[str, str | None],
                      ends: tuple[str | None, str | None], misses: list[NearMiss],
                      stage_kind: str, loc, g0: float | None) -> GainWiring:
    """RF from the output to the feedback (gain) pin and RG from it to REF, or to the part's
    own RG pin; anything else from the gain pin to a signal net leaves the gain unstated."""
    w = GainWiring()
    out, refnet = ends
    (p1, fg) = pin
    if view.is_open(fg):
        misses.append(NearMiss(stage_kind, [ref], f"{ref}: gain pin {p1} is not connected",
                               ref, f"gain pin {p1} connection", loc))
        w.ok = False
        return w
    returns = {net for _, net in pm.get("rg", []) if net and pm.get("fg")}
    g = view.groups(fg, ports={out, refnet, *returns})
    if out in g:
        rf = g.pop(out)
        w.roles["RF"] = rf.expr
        w.ext.append(rf)
    elif fg != out:
        w.notes.append("no resistor from the gain pin to the output")
    if refnet in g:
        w.roles["RG"] = g[refnet].expr
        w.ext.append(g.pop(refnet))
    _variable_feedback(view, fg, w, g, (out, refnet), returns)
    for far in sorted(returns & set(g)):
        # returned to the part's own RG pin: the schematic gives the ratio, but where that
        # pin sits inside the part is for part data to say
        w.roles["RG"] = g[far].expr
        w.notes.append(f"{g[far].expr} returns the gain pin to the RG pin (net {far!r})")
        w.ext.append(g.pop(far))
        w.rg_return = True
        return w
    for far, grp in g.items():
        if not view.fixed(far):
            misses.append(NearMiss(stage_kind, sorted({ref, *grp.refs}),
                                   f"{ref}: the gain pin {p1} also connects through "
                                   f"{grp.expr} to {far!r}, which is neither the output nor "
                                   "REF: the gain cannot be stated", ref,
                                   "gain network to OUT and REF only", loc))
            w.ok = False
            return w
        key = "RG" if "RG" not in w.roles else \
            f"RG{len([k for k in w.roles if k.startswith('RG')]) + 1}"
        w.roles[key] = grp.expr
        w.ext.append(grp)
        w.notes.append(f"{grp.expr} returns the gain pin to {far!r}, not to REF")
    if "RF" in w.roles and "RG" not in w.roles:
        _miswired_feedback(view, ref, p1, fg, w, ends, misses, stage_kind, loc, g0)
    elif "RF" not in w.roles and fg != out:
        # nothing brings the output back to the gain pin: the output amplifier has no DC
        # feedback
        w.as_drawn = ("no resistor joins the output to the gain pin, so the output amplifier "
                      "has no DC feedback: as drawn it runs open loop and its output sits at a "
                      "supply rail")
        misses.append(NearMiss(stage_kind, sorted({ref, *(e.ref for g in w.ext
                                                          for e in g.elements)}),
                               f"{ref}: the feedback network is miswired: {w.as_drawn}", ref,
                               f"a resistor (RF) from the output to the gain pin {p1}", loc,
                               miswired=True))
        w.ok = False
    return w


def _variable_feedback(view: NetlistView, fg: str, w: GainWiring, g: dict, ends, returns) -> None:
    """RF or RG of a feedback network that holds a potentiometer (or lacks a value): read as
    a network (:mod:`.rg_network`) and stated as its range; the groups it is made of leave
    ``g``."""
    out, refnet = ends
    for role, far in (("RF", out), ("RG", refnet)):
        if role in w.roles or not far or far == fg:
            continue
        net = between(view, fg, far, {x for x in (out, refnet, *returns) if x and x != far})
        if net is None or net.fixed:
            continue
        w.roles[role] = net.expr
        w.network, w.network_role = net, role
        w.as_drawn = f"{role} = {net.describe()}"
        w.notes.append(w.as_drawn)
        inner = {n for e in net.elements for n in (e.a, e.b)} - {fg, far}
        for x in inner & set(g):
            g.pop(x)


def _miswired_feedback(view: NetlistView, ref: str, p1: str, fg: str, w: GainWiring, ends,
                       misses: list[NearMiss], stage_kind: str, loc, g0: float | None) -> None:
    """RF from the output to the gain pin and nothing from the gain pin to REF. With the
    second resistor drawn from the output to REF instead, that is a wiring error: the gain
    pin follows the output (no current flows in RF), the part runs at its base gain and the
    resistor only loads the output."""
    out, refnet = ends
    load = view.groups(out, ports={refnet, fg}).get(refnet) if out and refnet else None
    base = (f"G0 = {fmt.number(g0)} from part data" if g0 is not None else
            "G0 of G = G0 (1 + RF/RG), unity for a part whose gain is one plus RF/RG")
    rf = w.roles["RF"]
    if load is None:
        w.as_drawn = (f"no resistor from the gain pin to REF: the gain pin follows the output "
                      f"through {rf}, so the in-amp runs at its base gain ({base})")
        w.notes.append(w.as_drawn)
        return
    ohms = view.group_ohms(load)
    loaded = f"{load.expr} ({fmt.ohms(ohms)})" if math.isfinite(ohms) else load.expr
    w.as_drawn = (f"the gain pin {p1} sees the output through {rf} alone (no current flows in "
                  f"it), so the in-amp runs at its base gain ({base}), and {loaded} from the "
                  f"output to REF only loads the output")
    misses.append(NearMiss(stage_kind, sorted({ref, *load.refs}),
                           f"{ref}: the feedback network is miswired: {load.expr} runs from the "
                           f"output to REF instead of from the gain pin {p1} to REF. As drawn "
                           f"{w.as_drawn}", ref,
                           f"move {load.expr} from the output to the gain pin {p1} (RF from the "
                           "output to the gain pin, RG from the gain pin to REF)", loc,
                           miswired=True))
    w.ok = False


def schematic_gain(view: NetlistView, w: GainWiring) -> tuple[str, dict]:
    """What the schematic says about an in-amp's gain when no part data gives its equation:
    the gain resistor's value and the gain the usual G = 1 + K/RG would give over
    :data:`COMMON_K_RANGE`, or why the value cannot be read. (sentence, data)."""
    roles, ext = w.roles, w.ext
    if w.strap is not None and w.strap.gain is not None and "RG" not in roles:
        return w.as_drawn, {"strap": w.strap.made[0][0], "strapped_to": w.strap.made[0][1],
                            "gain_as_drawn": w.strap.gain, "gain_source": "pin name"}
    if w.network is not None:
        net = w.network
        key = w.network_role.lower()
        facts = {key: net.expr, f"{key}_ohms_range": [fmt.finite(net.lo), fmt.finite(net.hi)],
                 "potentiometers": list(net.pots), "no_value": list(net.unknown)}
        if w.network_role != "RG" or "RF" in roles:
            return (f"the schematic gives {w.network_role} = {net.describe()}; over that "
                    "range the gain follows the gain equation of the part"), facts
        return (f"the schematic gives RG = {net.describe()}; over that range the gain follows "
                "the gain equation of the part, whose constant K only part data gives"), facts
    if "RG" not in roles or not ext:
        return "", {}
    if "RF" in roles and len(ext) >= 2:
        rf, rg = (view.group_ohms(g) for g in ext[:2])
        if not (math.isfinite(rf) and math.isfinite(rg) and rg > 0):
            return "", {}
        return (f"the schematic gives RF = {roles['RF']} = {fmt.ohms(rf)} and RG = "
                f"{roles['RG']} = {fmt.ohms(rg)} (RF/RG = {fmt.number(rf / rg)}; the gain G = "
                "G0 + k RF/RG needs the part's G0 and k)"), {"rf_ohms": rf, "rg_ohms": rg}
    rg_groups = ext[:2] if "RGa" in roles else ext[:1]
    ohms = w.rg_ohms or sum(view.group_ohms(g) for g in rg_groups)
    if "RF" in roles or not math.isfinite(ohms) or ohms <= 0:
        if not math.isfinite(ohms):
            refs = sorted({e.ref for g in rg_groups for e in g.elements})
            return (f"the gain resistor {roles['RG']} has no readable value "
                    f"({', '.join(refs)})"), {"rg": roles["RG"], "rg_ohms": None}
        return "", {}
    lo, hi = (1 + k / ohms for k in COMMON_K_RANGE)
    said = (f"the schematic gives RG = {roles['RG']} = {fmt.ohms(ohms)}: with the usual "
            f"G = 1 + K/RG and K from {fmt.ohms(COMMON_K_RANGE[0])} to "
            f"{fmt.ohms(COMMON_K_RANGE[1])} (common gain constants) the gain would be "
            f"{fmt.number(lo)} to {fmt.number(hi)} (not checked)")
    return said, {"rg": roles["RG"], "rg_ohms": ohms, "gain_range_not_checked": [lo, hi],
                  "k_range": list(COMMON_K_RANGE)}


def gain_range(net: RGNetwork, k: Any) -> tuple[float | None, float | None]:
    """(lowest, highest) gain of G = 1 + K/RG over the network's range, None where unknown."""
    kv = getattr(k, "value", k)
    hi = 1 + kv / net.lo if net.lo and math.isfinite(net.lo) and net.lo > 0 else None
    lo = 1 + kv / net.hi if math.isfinite(net.hi) and net.hi > 0 else None
    return lo, hi
