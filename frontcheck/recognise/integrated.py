"""Integrated in-amps and difference amplifiers, expanded from part data into internal op-amps
and resistors so that analysis solves them with the same nodal analysis as discrete stages.

Pins are found by name ('+IN', 'VIN-', 'Vip', 'REF', 'RG', 'Vfg', 'SNS', 'V+', ...). Three
architectures are modelled:

* ``rg-pair`` in-amp, G = 1 + K/RG: two input op-amps A1 (+in = IN+) and A2 (+in = IN-), each
  with an internal feedback resistor K/2 from its output to one RG pin; the external RG network
  between the RG pins (role 'RG'); a difference stage of internal resistors Ra (o2 -> n),
  Rb (n -> OUT, or SENSE), Rc (o1 -> p), Rd (p -> the REF pin's net) around A3.
  [source: docs/engineering.md sec. 3; the G = 1 + K/RG form of integrated three-op-amp in-amps]
* ``feedback-pin`` in-amp, G = G0 (1 + RF/RG): one gain pin (named RG or FG) with an external
  RF from it to OUT (role 'RF') and RG from it to REF (role 'RG'). Modelled as an internal
  difference stage of gain G0 from the inputs (input resistance from part data) whose output
  drives the + input of an output op-amp whose - input is the gain pin.
* difference amp (fixed gain G): R1 = R3 = Rin, R2 = R4 = G Rin around one internal op-amp;
  R2 ends on the SENSE pin when there is one; with two REF pins (current-sense amplifiers) R4
  is two resistors of 2 G Rin, one to each REF pin, so the reference is their mean.

No part data: the part is listed in ``Recognition.unsupported`` with the external parts found,
never modelled with assumed internals.
"""

from __future__ import annotations

import math
from typing import Any

from frontcheck import formatting as fmt
from frontcheck.circuit import OpAmp, OpAmpModel, Resistor, Sourced, Stage, SubCircuit
from frontcheck.netlist import Component
from frontcheck.component import normalise_pin_name, pin_channel, pin_key, pin_role
from frontcheck.recognise.common import GENERIC_OPAMP, Group, NearMiss, Unsupported, NetlistView
from frontcheck.recognise.gain_network import (COMMON_K_RANGE, GainWiring, drawn_arch, external,
                                              gain_pins, gain_range, schematic_gain)
from frontcheck.recognise.integrated_data import DiffAmpData, InAmpData, diffamp_data, inamp_data

__all__ = ["COMMON_K_RANGE", "InAmpData", "DiffAmpData", "find", "pin_map", "inamp_data", "diffamp_data",
           "schematic_gain"]


# --------------------------------------------------------------------------------------------


def pin_map(view: NetlistView, c: Component) -> dict[str, list[tuple[str, str | None]]]:
    """Role -> [(pin number, net or None when unconnected)] in pin order."""
    out: dict[str, list[tuple[str, str | None]]] = {}
    for num in sorted(c.pins, key=pin_key):
        r = pin_role(c.pins[num])
        if r is None:
            continue
        net = view.net_of.get((c.ref, num))
        out.setdefault(r, []).append((num, net))
    if "gnd" in out and "vneg" not in out:      # a ground pin is the negative supply
        out["vneg"] = out.pop("gnd")
    return out


def _first_net(pm, role) -> str | None:
    for _, net in pm.get(role, []):
        if net is not None:
            return net
    return None


def _open(view: NetlistView, pm, role) -> list[str]:
    """Pin numbers of ``role`` that are unconnected."""
    return [num for num, net in pm.get(role, []) if view.is_open(net)]


def find(view: NetlistView, used: set[str], parts: Any = None):
    """Stages, near misses and unsupported parts among integrated amplifiers. A part whose
    pins carry channel numbers or letters ('IN+1', 'OUT2') is one amplifier per channel,
    named 'U2A', 'U2B', ..."""
    stages: list[Stage] = []
    misses: list[NearMiss] = []
    unsupported: list[Unsupported] = []
    for ref, c in sorted(view.comps.items(), key=lambda kv: _natural(kv[0])):
        kind = view.kind[ref]
        if kind not in ("inamp", "diffamp") or ref in used:
            continue
        used.add(ref)
        for name, pm in channels(view, c):
            _one_amplifier(view, c, name, pm, kind, parts, stages, misses, unsupported)
    return stages, misses, unsupported


def channels(view: NetlistView, c: Component) -> list[tuple[str, dict]]:
    """(name, pin map) per amplifier of the part: the whole part, or one per channel when its
    inputs carry distinct channel marks. Pins without a mark (supplies) belong to every
    channel; numbered REF pins ('REF1', 'REF2') go to the channel of that number."""
    pm = pin_map(view, c)
    inputs = pm.get("inp", [])
    marks = [pin_channel(c.pins[num]) for num, _ in inputs]
    if len(inputs) < 2 or not all(marks) or len(set(marks)) != len(marks):
        return [(c.ref, pm)]
    out = []
    for mark in sorted(marks, key=str):
        sub: dict[str, list[tuple[str, str | None]]] = {}
        for role, pins in pm.items():
            for num, net in pins:
                own = pin_channel(c.pins[num])
                if role == "ref" and len(pins) == len(marks):
                    own = normalise_pin_name(c.pins[num].name)[-1:] or None
                if own is None or own == mark:
                    sub.setdefault(role, []).append((num, net))
        letter = mark if mark.isalpha() else chr(ord("A") + int(mark) - 1)
        out.append((f"{c.ref}{letter}", sub))
    return out


def _one_amplifier(view: NetlistView, c: Component, name: str, pm, kind: str, parts: Any,
                   stages: list[Stage], misses: list[NearMiss],
                   unsupported: list[Unsupported]) -> None:
    """One integrated amplifier (a part, or one channel of it): a stage, a near miss or an
    unsupported part."""
    ref = c.ref
    stage_kind = "integrated-inamp" if kind == "inamp" else "integrated-diffamp"
    loc = view.location(ref)
    pins = {}
    for role in ("inp", "inn", "ref", "out", "sense", "vpos", "vneg", "rg", "fg"):
        for i, (num, net) in enumerate(pm.get(role, [])):
            key = {"inp": "in_p", "inn": "in_n"}.get(role, role)
            pins[key if len(pm[role]) == 1 else f"{key}{i + 1}"] = net or ""
    fatal = _pin_faults(view, name, ref, pm, kind, misses, stage_kind, loc)
    if kind == "inamp":
        data = inamp_data(_model(parts, "inamp_model", c))
    else:
        data = diffamp_data(_model(parts, "diffamp_model", c))
    g0 = getattr(getattr(data, "g0", None), "value", None)
    wiring = external(view, c, pm, kind, misses, stage_kind, loc, g0, name)
    if fatal or not wiring.ok:
        return
    variable = wiring.network is not None
    strap = wiring.strap.gain if wiring.strap is not None and "RG" not in wiring.roles else None
    other_arch = kind == "inamp" and data is not None and not data.missing \
        and data.arch != drawn_arch(pm)
    if data is None or data.missing or wiring.rg_return or variable or other_arch \
            or (wiring.strap is not None and wiring.strap.made and strap is None):
        unsupported.append(_not_analysed(view, c, name, kind, data, wiring, pins, loc))
        return
    notes = list(wiring.notes)
    if kind == "inamp":
        stage = _inamp_stage(view, c, pm, data, wiring.roles, wiring.ext, notes)
        if stage is not None and strap is not None:
            _add_strap(view, stage, pm, data, wiring.strap)
    else:
        stage = _diffamp_stage(view, c, pm, data, notes)
    if stage is not None:
        if name != ref:                 # one channel of a multi-channel part
            stage.id, stage.amplifiers = name, [name]
        stages.append(stage)


def _pin_faults(view: NetlistView, name: str, ref: str, pm, kind: str, misses: list[NearMiss],
                stage_kind: str, loc) -> bool:
    """Wiring faults first: each is a near miss, and a stage without inputs, output or REF
    cannot be analysed (True)."""
    fatal = False
    checked = (("inp", "non-inverting input"), ("inn", "inverting input"), ("out", "output"),
               ("ref", "REF"))
    if kind == "diffamp" and "ref" not in pm:
        # A current-sense amplifier without a REF pin: its output is referred to its
        # ground pin, which then plays REF.
        checked = checked[:3]
    for role, what in checked:
        bad = _open(view, pm, role)
        if bad or role not in pm:
            fatal = True
            misses.append(NearMiss(stage_kind, [ref], f"{name}: {what} pin "
                                   f"{', '.join(bad) or '(none found)'} is not connected",
                                   ref, f"{what} connection", loc))
    for role, what in (("vpos", "positive supply"), ("vneg", "negative supply")):
        bad = _open(view, pm, role)
        if bad:
            misses.append(NearMiss(stage_kind, [ref], f"{name}: {what} pin {', '.join(bad)} "
                                   "is not connected", ref, f"{what} connection", loc))
    return fatal


def _not_analysed(view: NetlistView, c: Component, name: str, kind: str, data, w: GainWiring,
                  pins: dict, loc) -> Unsupported:
    """A recognised part that is not analysed, with what the schematic says about its gain:
    no part data, a gain network that returns inside the part, a potentiometer or missing
    value in RG, or a gain strap (whose gain the pin name states)."""
    what = "in-amp" if kind == "inamp" else "difference amplifier"
    roles = w.roles
    fix = ""
    said, facts = schematic_gain(view, w) if kind == "inamp" else ("", {})
    if w.rg_return:
        why = (f"its gain network ({roles.get('RF', 'no RF')} to the gain pin, "
               f"{roles['RG']} from there to the part's RG pin) returns to a pin whose place "
               "inside the part frontcheck does not model")
    elif data is None or data.missing:
        why = ("no part data gives its gain equation and internal resistors" if data is None
               else f"its part data ({data.name}) lacks " + ", ".join(data.missing))
    elif kind == "inamp" and data.arch != w.arch:
        names = {"rg-pair": "an RG pair (RG between two RG pins)",
                 "feedback-pin": "a two-resistor feedback network on one gain pin"}
        why = (f"its part data ({data.name}) describes {names[data.arch]} while the symbol's "
               f"pins give {names[w.arch]}: the one contradicts the other")
        fix = (f"give {c.ref} the part class whose gain network matches its pins (arch in the "
               "part file), or the symbol of the part meant")
    elif w.network is not None:
        why = f"its gain is not one value: {w.network_role} = {w.network.describe()}"
        k = data.k if w.network_role == "RG" and data.arch == "rg-pair" else None
        lo, hi = gain_range(w.network, k) if k is not None else (None, None)
        said = ""
        if k is not None and (lo or hi):
            said = (f"with K = {fmt.ohms(data.k.value)} ({data.name}) the gain runs from "
                    f"{fmt.number(lo) if lo else 'unknown'} to {fmt.number(hi) if hi else 'unknown'}")
            facts["gain_range"] = [lo, hi]
            facts["gain_source"] = f"part data K ({data.name}) over the RG range as drawn"
        fix = (f"give {', '.join(w.network.unknown) or 'the gain network'} a value, or replace "
               "the potentiometer by the resistor it is set to, to analyse the stage at that gain")
    else:
        why = f"its gain is not stated by the wiring alone: {w.as_drawn}"
        said = ""
    text = (f"{name} ({c.value or c.lib_id}) has the pins of an integrated {what} but {why}"
            + (f"; {said}" if said else ""))
    if not fix:
        text += "; add them to the project's part file to analyse it"
    return Unsupported(c.ref, "integrated-inamp" if kind == "inamp" else "integrated-diffamp",
                       pins, text, loc, roles, facts, fix)


def _add_strap(view: NetlistView, stage: Stage, pm, d: InAmpData, strap) -> None:
    """The internal gain resistor a strap selects, between the two RG nodes: K/(G - 1) for the
    gain G the strap pin's name states, so that G = 1 + K/RG gives that gain; its error is
    the gain equation's (k_tol)."""
    ref = stage.id
    gp = gain_pins(pm)
    nodes = [gp[i][1] if len(gp) > i and not view.is_open(gp[i][1]) else f"{ref}:rg{i + 1}"
             for i in (0, 1)]
    gain = strap.gain
    pin = strap.made[0][0]
    ohms = Sourced(d.k.value / (gain - 1), d.k.source,
                   f"{d.k.detail}: K/(G - 1) for G = {fmt.number(gain)} ({pin})")
    tol = d.k_tol or Sourced(0.0, "class", f"class {d.name} states no tolerance for K")
    stage.circuit.resistors.append(_internal(ref, "RGstrap", nodes[0], nodes[1], ohms, tol, None))
    stage.roles["RG"] = f"{ref}.RGstrap"
    stage.notes.append(f"{ref}: the strap {pin} selects an internal gain resistor, modelled as "
                       f"K/(G - 1) = {fmt.ohms(ohms.value)} so that the part gives the gain its "
                       "pin name states")


def _natural(ref: str):
    import re
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", ref)]


def _model(parts: Any, method: str, c: Component):
    fn = getattr(parts, method, None) if parts is not None else None
    return fn(c) if callable(fn) else None


def _internal(ref: str, name: str, a: str, b: str, ohms: Sourced, tol: Sourced,
              mtol: Sourced | None) -> Resistor:
    return Resistor(f"{ref}.{name}", a, b, ohms, tol, internal=True, match_group=ref,
                    match_tol=mtol)


def _scaled(s: Sourced, k: float, what: str) -> Sourced:
    return Sourced(s.value * k, s.source, f"{s.detail} ({what})" if s.detail else what)


def _opmodel(view: NetlistView, data, c: Component, notes: list[str]) -> OpAmpModel:
    m = data.opamp if isinstance(data.opamp, OpAmpModel) else None
    if m is None:
        notes.append(f"{c.ref}: part data gives no internal op-amp numbers; ideal assumed")
        return GENERIC_OPAMP
    return m


def _inamp_stage(view: NetlistView, c: Component, pm, d: InAmpData, roles, ext: list[Group],
                 notes: list[str]) -> Stage | None:
    ref = c.ref
    inp, inn = _first_net(pm, "inp"), _first_net(pm, "inn")
    out, refnet = _first_net(pm, "out"), _first_net(pm, "ref")
    sense = _first_net(pm, "sense") or out
    vp, vn = _first_net(pm, "vpos"), _first_net(pm, "vneg")
    model = _opmodel(view, d, c, notes)
    mtol = d.ratio_tol
    if mtol is None:
        notes.append(f"{ref}: part data gives no matching for the internal resistors; they are "
                     "treated as exact, so resistor mismatch inside the part is not in the CMRR")
    res: list[Resistor] = []
    ops: list[OpAmp] = []
    internal_roles: dict[str, str] = {}
    if d.arch == "rg-pair":
        gp = gain_pins(pm)
        rg1 = gp[0][1] if gp and not view.is_open(gp[0][1]) else f"{ref}:rg1"
        rg2 = gp[1][1] if len(gp) > 1 and not view.is_open(gp[1][1]) else f"{ref}:rg2"
        o1, o2, n3, p3 = (f"{ref}:{x}" for x in ("o1", "o2", "n3", "p3"))
        rf = _scaled(d.k, 0.5, "K/2")
        ktol = d.k_tol or mtol
        if ktol is None:
            notes.append(f"{ref}: part data gives no tolerance for K; internal resistors "
                         "treated as exact")
            ktol = Sourced(0.0, "class", f"class {d.name} states no tolerance")
        r = d.r_stage2
        g2 = d.g2.value if d.g2 is not None else 1.0
        rtol = mtol or Sourced(0.0, "class", f"class {d.name} states no matching")
        res += [
            _internal(ref, "Rf1", o1, rg1, rf, ktol, mtol),
            _internal(ref, "Rf2", o2, rg2, rf, ktol, mtol),
            _internal(ref, "Ra", o2, n3, r, rtol, mtol),
            _internal(ref, "Rb", n3, sense, _scaled(r, g2, "x stage-2 gain"), rtol, mtol),
            _internal(ref, "Rc", o1, p3, r, rtol, mtol),
            _internal(ref, "Rd", p3, refnet, d.r_ref or _scaled(r, g2, "x stage-2 gain"), rtol, mtol),
        ]
        ops += [OpAmp(f"{ref}.A1", ref, inp, rg1, o1, vp, vn, model, internal=True),
                OpAmp(f"{ref}.A2", ref, inn, rg2, o2, vp, vn, model, internal=True),
                OpAmp(f"{ref}.A3", ref, p3, n3, out, vp, vn, model, internal=True)]
        internal_roles = {k: f"{ref}.{k}" for k in ("Rf1", "Rf2", "Ra", "Rb", "Rc", "Rd")}
        if len(gp) >= 2:
            notes.append(f"{ref}: RG pin {gp[0][0]} taken as the IN+ side (the internal "
                         "feedback resistors are equal, so the side does not change the gain)")
    else:
        fg = gain_pins(pm)[0][1]
        x, nb, pb = (f"{ref}:{y}" for y in ("x", "nb", "pb"))
        rin = d.r_in
        g0 = d.g0.value
        rtol = mtol or Sourced(0.0, "class", f"class {d.name} states no matching")
        res += [
            _internal(ref, "R1", inn, nb, rin, rtol, mtol),
            _internal(ref, "R2", nb, x, _scaled(rin, g0, "x G0"), rtol, mtol),
            _internal(ref, "R3", inp, pb, rin, rtol, mtol),
            _internal(ref, "R4", pb, refnet, _scaled(rin, g0, "x G0"), rtol, mtol),
        ]
        ops += [OpAmp(f"{ref}.A1", ref, pb, nb, x, vp, vn, model, internal=True),
                OpAmp(f"{ref}.A2", ref, x, fg, out, vp, vn, model, internal=True)]
        internal_roles = {k: f"{ref}.{k}" for k in ("R1", "R2", "R3", "R4")}
        notes.append(f"{ref}: modelled as a gain-{g0:g} difference stage driving an output "
                     "amplifier whose feedback divider is RF/RG")
    ext_res = [view.resistor(e, notes) for g in ext for e in g.elements]
    res += ext_res
    all_roles = dict(roles)
    all_roles.update(internal_roles)
    circuit = SubCircuit(resistors=res, capacitors=[], opamps=ops,
                         ports={"in_p": inp, "in_n": inn, "ref": refnet, "out": out},
                         rails=view.rails_for(ops, {x for r in res for x in (r.a, r.b)}))
    refs = sorted({ref} | {e.ref for g in ext for e in g.elements})
    return Stage(id=ref, kind="integrated-inamp", references=refs, amplifiers=[ref],
                 roles=all_roles, circuit=circuit, notes=notes)


def _diffamp_stage(view: NetlistView, c: Component, pm, d: DiffAmpData, notes: list[str]) -> Stage | None:
    ref = c.ref
    inp, inn = _first_net(pm, "inp"), _first_net(pm, "inn")
    out = _first_net(pm, "out")
    sense = _first_net(pm, "sense") or out
    refs_pins = [net for _, net in pm.get("ref", []) if net is not None]
    if not refs_pins:
        ground = _first_net(pm, "vneg")
        if ground is None:
            return None
        refs_pins = [ground]
        notes.append(f"{ref}: no REF pin; the output is taken as referred to the ground pin's "
                     f"net {ground!r}")
    vp, vn = _first_net(pm, "vpos"), _first_net(pm, "vneg")
    model = _opmodel(view, d, c, notes)
    n, p = f"{ref}:n", f"{ref}:p"
    g = d.gain.value
    mtol = d.ratio_tol
    if mtol is None:
        notes.append(f"{ref}: part data gives no matching for the internal resistors; they are "
                     "treated as exact, so resistor mismatch inside the part is not in the CMRR")
    tol = d.abs_tol or mtol or Sourced(0.0, "class", f"class {d.name} states no tolerance")
    res = [
        _internal(ref, "R1", inn, n, d.r_in, tol, mtol),
        _internal(ref, "R2", n, sense, _scaled(d.r_in, g, "x gain"), tol, mtol),
        _internal(ref, "R3", inp, p, d.r_in, tol, mtol),
    ]
    roles = {"R1": f"{ref}.R1", "R2": f"{ref}.R2", "R3": f"{ref}.R3"}
    if len(refs_pins) == 1:
        res.append(_internal(ref, "R4", p, refs_pins[0], _scaled(d.r_in, g, "x gain"), tol, mtol))
        roles["R4"] = f"{ref}.R4"
        refport = refs_pins[0]
    else:
        # Two REF pins: R4 split in two equal halves, so V(p) sees the mean of the REF nets.
        names = []
        for i, net in enumerate(refs_pins, start=1):
            res.append(_internal(ref, f"R4{'ab'[i - 1] if i <= 2 else i}", p, net,
                                 _scaled(d.r_in, g * len(refs_pins), f"x gain x {len(refs_pins)}"),
                                 tol, mtol))
            names.append(res[-1].name)
        roles["R4"] = "||".join(names)
        # The port is the REF net whose voltage is not a known supply; the others stay
        # fixed at their rail voltage.
        unknown = [x for x in refs_pins if view.rail(x) is None]
        refport = unknown[0] if unknown else refs_pins[0]
        if len(set(refs_pins)) > 1:
            notes.append(f"{ref}: REF pins on {', '.join(sorted(set(refs_pins)))}: the output "
                         f"rests at their mean; the 'ref' port is {refport!r}")
        for x in sorted(set(unknown) - {refport}):
            notes.append(f"{ref}: REF net {x!r} has no known voltage; give it in the project file")
    op = OpAmp(f"{ref}.A1", ref, p, n, out, vp, vn, model, internal=True)
    if math.isclose(g, 1.0):
        notes.append(f"{ref}: unity-gain difference amplifier")
    circuit = SubCircuit(resistors=res, capacitors=[], opamps=[op],
                         ports={"in_p": inp, "in_n": inn, "ref": refport, "out": out},
                         rails=view.rails_for([op], refs_pins))
    return Stage(id=ref, kind="integrated-diffamp", references=[ref], amplifiers=[ref],
                 roles=roles, circuit=circuit, notes=notes)
