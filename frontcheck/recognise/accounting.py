"""Every amplifier of a design accounted for once: in a stage, or not a front-end stage with
the reason in plain words (an inverting amplifier of gain -78, an integrator, a follower, a
comparator, an unused unit, a part whose pins frontcheck cannot read).

A report is never silently clean about an amplifier it did not understand.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from frontcheck import component
from frontcheck import formatting as fmt
from frontcheck.circuit import Stage
from frontcheck.netlist import Location
from frontcheck.recognise.common import NearMiss, Unsupported
from frontcheck.netlist_view import OpUnit, NetlistView

__all__ = ["AmplifierUse", "account"]

_KIND_WORDS = {"opamp": "op-amp", "inamp": "in-amp", "diffamp": "difference amplifier",
               "fda": "fully differential amplifier", "ota": "transconductance amplifier",
               "other": "amplifier"}


@dataclass
class AmplifierUse:
    """One op-amp unit or amplifier part and what frontcheck made of it."""

    name: str                     # 'U2B' (a unit of a package) or 'U3'
    ref: str
    kind: str                     # 'op-amp', 'in-amp', 'difference amplifier', ...
    stage: str | None             # the stage it belongs to, or None
    reason: str = ""              # why it is not a front-end stage (plain words)
    location: Location | None = None


def _natural(s: str):
    return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", s)]


def _gain_text(g: float) -> str:
    return fmt.number(g, 3) if math.isfinite(g) else "not readable"


def _near_miss_of(misses: list[NearMiss], name: str, ref: str) -> NearMiss | None:
    for m in misses:
        if m.ref == ref and (name == ref or re.search(rf"\b{re.escape(name)}\b", m.message)):
            return m
    return None


def _opamp_reason(view: NetlistView, u: OpUnit) -> str:
    """What an op-amp unit outside every stage does, from its wiring."""
    n, p, o = u.inn, u.inp, u.out
    if view.is_open(o) and (view.is_open(p) or view.fixed(p) or view.is_open(n)):
        return "unused unit (output not connected)"
    if not (n and p and o) or view.is_open(n) or view.is_open(p):
        return "unused unit (an input not connected)"
    if o == n:
        return "follower (unity-gain buffer)" + (" of a fixed voltage" if view.fixed(p) else "")
    groups = view.groups(n, ports={o, p})
    rf = groups.pop(o, None)
    caps = [c for c in view.caps_at(o) if {c[1], c[2]} == {o, n}]
    if rf is None:
        qs = _transistor_loop(view, u)
        if qs:
            return f"amplifier with a transistor output stage (loop closed through {'/'.join(qs)})"
        if caps:
            return "integrator (capacitor from output to inverting input)"
        return "no feedback to the inverting input: comparator or open loop"
    to_signal = [g for far, g in groups.items() if not view.fixed(far) and far != p]
    to_fixed = [g for far, g in groups.items() if view.fixed(far)]
    rfo = view.group_ohms(rf)
    filt = " with a capacitor across the feedback resistor" if caps else ""
    if to_signal:
        rin = 1.0 / sum(1.0 / view.group_ohms(g) for g in to_signal) if all(
            view.group_ohms(g) > 0 for g in to_signal) else math.nan
        if _takes_signal(view, p, {o, n}):
            # Both inputs fed: which one carries the signal is the designer's (an AC-coupled
            # non-inverting stage whose gain resistor returns to an undeclared reference net
            # looks the same), so both gains are said.
            rall = 1.0 / sum(1.0 / view.group_ohms(g) for g in to_signal + to_fixed) if all(
                view.group_ohms(g) > 0 for g in to_signal + to_fixed) else math.nan
            far = ", ".join(sorted(g.far for g in to_signal))
            return (f"amplifier fed at both inputs: gain {_gain_text(1 + rfo / rall)} from its "
                    f"+ input, {_gain_text(-rfo / rin)} from {far}{filt}")
        kind = "summing amplifier" if len(to_signal) > 1 else "inverting amplifier"
        return f"{kind}, gain {_gain_text(-rfo / rin)}{filt}"
    if to_fixed:
        rg = 1.0 / sum(1.0 / view.group_ohms(g) for g in to_fixed) if all(
            view.group_ohms(g) > 0 for g in to_fixed) else math.nan
        return f"non-inverting amplifier, gain {_gain_text(1 + rfo / rg)}{filt}"
    return f"follower through feedback resistor {rf.expr}{filt}"


def _transistor_loop(view: NetlistView, u: OpUnit) -> list[str]:
    """Transistors inside the op-amp's loop (a follower or push-pull output stage): a
    transistor with a pin on a net the inverting input senses (directly or through one
    resistor) and another pin driven from the op-amp output through at most three resistors
    or two-pin diodes (common practice)."""
    links: dict[str, set[str]] = {}
    pairs = [(r.a, r.b) for r in view.resistors]
    for ref, c in view.comps.items():
        if component.ref_prefix(ref) == "D" and len(c.pins) == 2:
            pairs.append(tuple(view.net_of.get((ref, p)) for p in c.pins))
    for a, b in pairs:
        if a and b and a != b:
            links.setdefault(a, set()).add(b)
            links.setdefault(b, set()).add(a)
    drive, frontier = {u.out}, [u.out]
    for _ in range(3):
        frontier = [m for x in frontier for m in links.get(x, ()) if m not in drive
                    and not view.fixed(m)]
        drive.update(frontier)
    sensed = {u.inn} | {r.other(u.inn) for r in view.r_at.get(u.inn, [])}
    found = set()
    for net in sensed - {u.out}:
        for ref, pin in ([] if view.fixed(net) else view.nodes.get(net, [])):
            if view.kind.get(ref) != "other" or component.ref_prefix(ref) not in ("Q", "T", "M"):
                continue
            others = {view.net_of.get((ref, p)) for p in view.comps[ref].pins if p != pin}
            if others & (drive - {net}):
                found.add(ref)
    return sorted(found, key=_natural)


def _takes_signal(view: NetlistView, p: str, own: set[str]) -> bool:
    """True when a capacitor couples the non-inverting input to a net that is not fixed (an
    AC-coupled input): an inverting stage holds its + input at a fixed or reference net."""
    if view.fixed(p):
        return False
    others = (c[2] if c[1] == p else c[1] for c in view.caps_at(p))
    return any(not view.fixed(x) and x not in own for x in others)


def account(view: NetlistView, stages: list[Stage], misses: list[NearMiss],
            unsupported: list[Unsupported], pairs: list = ()) -> list[AmplifierUse]:
    """Each op-amp unit and amplifier part of the design, once, in natural reference order.
    ``pairs``: differential-output in-amp input stages whose gain resistor has no value
    (:mod:`.diff_output`; the others are stages)."""
    in_stage = {a: s.id for s in stages for a in s.amplifiers}
    in_pair = {u.name: p for p in pairs for u in (p.a1, p.a2)}
    out: list[AmplifierUse] = []
    for u in view.units:
        use = AmplifierUse(u.name, u.ref, "op-amp", in_stage.get(u.name),
                           location=view.location(u.ref))
        if use.stage is None and u.name in in_pair:
            use.reason = in_pair[u.name].reason(u.name)
        elif use.stage is None:
            nm = _near_miss_of(misses, u.name, u.ref)
            use.reason = (f"near miss of a {nm.kind} stage ({nm.missing} missing or wrong)"
                          if nm else _opamp_reason(view, u))
        out.append(use)
    lacking = {x.ref: x for x in unsupported}
    for ref, c in view.comps.items():
        kind = view.kind[ref]
        from_amp_library = component.library_of(c).startswith("amplifier_")
        if kind == "opamp" or kind not in _KIND_WORDS or (kind == "other" and not from_amp_library):
            continue
        staged = [s.id for s in stages if s.kind.startswith("integrated") and ref in s.references]
        use = AmplifierUse(ref, ref, _KIND_WORDS[kind], ", ".join(staged) or in_stage.get(ref),
                           location=view.location(ref))
        if use.stage is None:
            nm = _near_miss_of(misses, ref, ref)
            if ref in lacking:
                use.reason = "no part data for its gain equation and internal resistors"
            elif nm is not None:
                use.reason = f"near miss ({nm.missing} missing or wrong)"
            elif kind == "other":
                names = sorted({p.name for p in c.pins.values() if p.name}, key=_natural)
                use.reason = "unknown pin roles (pins " + ", ".join(names[:8]) \
                    + (", ..." if len(names) > 8 else "") + ")"
            else:
                use.reason = f"{use.kind}: not a stage kind frontcheck models"
        out.append(use)
    out.sort(key=lambda x: _natural(x.name))
    return out
