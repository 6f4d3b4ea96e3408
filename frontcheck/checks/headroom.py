"""headroom: every op-amp input and output stays inside its limits over the declared input box.

What it checks
    For each op-amp of a stage (internal ones too), the input common-mode voltage and the output
    voltage over the declared input box (``Input CM`` x ``Input Diff``, plus the reference
    voltage) and every resistor and REF tolerance corner, against that op-amp's limits relative
    to its own supply pins. The finding names the corner: input common mode and differential,
    and which parts are high or low. A limit no part data states is the supply rail itself for
    an output (only passing it is a finding) and none for an input (the op-amp's requirement
    says what range it needs). REF wired to the negative rail of the amplifier driving the
    output (a single-supply in-amp with REF on ground, integrated parts without part data too)
    makes the output unipolar: a negative declared Input Diff needs an output below that rail
    (the finding names the input, the output and the rail), and without Input Diff an info says
    so.

Why it matters
    Every node is affine in (Vcm, Vd), so a violation anywhere in the box shows at a corner.
    A saturated first stage of an in-amp is invisible at the output when Vd = 0, and a
    difference amplifier's op-amp sees (R4 V2 + R3 Vref)/(R3 + R4), not the input voltage:
    the output pin alone says nothing about internal clipping.

What good looks like
    A positive margin at every node and corner; the finding's margin says how close.

How to fix
    Reduce the first-stage gain, move REF towards mid-supply, widen the supplies, or choose an
    op-amp with rail-to-rail input or output, whichever the violated node calls for. With REF on
    the negative rail and a bipolar input (a bridge), bias REF at mid-supply.

Severity
    ``severity`` for a limit violated inside the declared box (a definite defect);
    ``low_margin_severity`` for margins under ``min_margin_v``; ``unchecked_severity`` when no
    input box is declared or an op-amp's supply rails were not found.

Example
    Fails: the op-amp's inputs, 2 V short of its ±5 V rails, see about 3.2 to 3.7 V when the
    input common mode is 3.5 to 4 V.
        R1 IN_N N 10k 0.1%
        R2 N OUT 100k 0.1%
        R3 IN_P P 10k 0.1%
        R4 P GND 100k 0.1%
        U1 opamp P N OUT +5V -5V | Part Class: general-purpose
          | Input CM: 3.5..4 V; Input Diff: ±0.1 V
        J1 connector IN_P IN_N GND
    Passes with:
        U1 opamp P N OUT +5V -5V | Part Class: general-purpose
          | Input CM: -1..1 V; Input Diff: ±0.1 V

Source
    Operating-region method: derived by frontcheck (every node voltage is affine in Vcm and Vd,
    so the corners of the declared box decide) and checked against ngspice. Node voltages of the
    three-op-amp in-amp: A. S. Sedra, K. C. Smith, Microelectronic Circuits, 6th ed., Example
    2.17.
"""

from __future__ import annotations

from .. import formatting as fmt
from .located_finding import finding, unit_ref
from .message_numbers import corner
from .params import number, severity

RULE_ID = "headroom"
SUMMARY = "Op-amp input common mode or output outside its limits inside the input box"
PARAMETERS = {
    "severity": severity("severity when a limit is violated inside the declared input box"),
    "min_margin_v": number(0.0, "margins below this, but not negative, are reported as low", "V"),
    "low_margin_severity": severity("severity of a low margin", "warning"),
    "unchecked_severity": severity("severity when no input box is declared or rails are unknown",
                                   "info"),
}


def _fix(chk) -> str:
    if chk.node == "output":
        return ("lower the gain, move REF to shift the output range, widen the supplies, or use "
                "an op-amp whose output swings closer to the rails")
    return ("limit the input common mode, shift REF (difference stage) or the supplies, or use "
            "an op-amp whose input range includes this voltage")


def _parts(chk) -> str:
    """The tolerance corner of a check: ', R1 low, R2 high' (empty at nominal values)."""
    tol = getattr(chk, "tolerances", None) or {}
    return "".join(f", {k} {v}" for k, v in tol.items())


def _nominal(h) -> str:
    nom = getattr(h, "nominal_margin_v", None)
    if nom is None or nom == h.margin_v:
        return ""
    return f"; at nominal values the worst margin is {fmt.volts(nom, signed=True)}"


def _unknown_rails(stage, unit: str) -> tuple[str, str]:
    """Message and fix for an op-amp whose supply voltages are not known: either its supply
    pins are not connected, or they are on nets whose names give no voltage (V+, V-)."""
    op = next(o for o in stage.circuit.opamps if o.name == unit)
    nets = [n for n in (op.vpos, op.vneg) if n and not n.startswith("unconnected-")
            and n not in stage.circuit.rails]
    if not nets:
        return (f"{stage.kind} stage {stage.id}: supply rails of {unit} not found; its headroom "
                "is unchecked",
                "connect the op-amp's supply pins to named power nets (e.g. +5V, -5V)")
    named = " and ".join(f"'{n}'" for n in nets)
    example = ", ".join(f'"{n}" = {v}' for n, v in zip(nets, ("5.0", "-5.0")))
    return (f"{stage.kind} stage {stage.id}: the supply voltage of {unit} is unknown: its supply "
            f"pins are on {named}, whose name{'s do' if len(nets) > 1 else ' does'} not give a "
            "voltage; its headroom is unchecked",
            f"declare the voltage{'s' if len(nets) > 1 else ''} under [rails] in frontcheck.toml "
            f"({example}), or name the supply nets by their voltage (e.g. +5V, -5V)")


#: What to do about an output made unipolar by REF on the negative rail.
UNIPOLAR_FIX = ("bias REF at mid-supply (a buffered divider or a reference) so that negative "
                "differential inputs have room, or declare Input Diff so that headroom is checked")


def _unipolar(fact: dict) -> str:
    """REF on the negative rail, in words (analysis.headroom.ref_at_low_rail's fact)."""
    v = "" if fact.get("ref_v") is None else f", {fmt.volts(fact['ref_v'])}"
    return (f"REF (net {fact['ref_net']}{v}) is at the negative rail {fact['rail_net']} of "
            f"{fact['amplifier']}, so the output is unipolar: negative differential inputs "
            "clip at the low rail")


def _below_rail(fact: dict, who: str, needed: str) -> str:
    rail = fact["rail_net"] + ("" if fact.get("rail_v") is None else
                               f" ({fmt.volts(fact['rail_v'])})")
    return (f"{who}: the declared Input Diff reaches {fmt.volts(fact['vd_low'])} (IN- above "
            f"IN+), which needs the output at {needed}, below the negative rail {rail}: "
            + _unipolar(fact))


def _low_rail_findings(ctx, pol, stage, res) -> list:
    """An analysed stage with REF on the negative rail and no declared input box: a declared
    negative Input Diff is a violation; none declared, an info (a box is checked as usual)."""
    h = res.headroom
    fact = getattr(h, "ref_at_low_rail", None)
    if not fact:
        return []
    data = {"ref_at_low_rail": fact}
    if h.box is None and fact.get("vd_low") is not None and fact["vd_low"] < 0:
        msg = _below_rail(fact, f"{stage.kind} stage {stage.id}",
                          f"{fmt.volts(fact['out_needed_v'])} at the nominal gain "
                          f"{fmt.number(res.gain.nominal)}")
        return [finding(ctx, RULE_ID, pol["severity"], msg, stage=stage, at=fact["amplifier"],
                        fix=UNIPOLAR_FIX.split(", or declare")[0], data=data)]
    if stage.intent.input_diff is None:
        where = "no input range declared" if h.box is None else "checked at Vd = 0 only"
        return [finding(ctx, RULE_ID, pol["unchecked_severity"],
                        f"{stage.kind} stage {stage.id}: {where}; {_unipolar(fact)}",
                        stage=stage, at=fact["amplifier"], fix=UNIPOLAR_FIX, data=data)]
    return []


def _unsupported_low_rail(ctx, pol) -> list:
    """An in-amp without part data whose REF is on its negative rail (found from the wiring):
    any positive gain puts a negative Vd below the rail, so a declared negative Input Diff is
    a violation and no Input Diff an info."""
    found = []
    for un in ctx.unsupported:
        fact = (getattr(un, "schematic", None) or {}).get("ref_low_rail")
        if not fact:
            continue
        vd = fact.get("input_diff")
        data = {"ref_at_low_rail": fact, "part_data": False}
        if vd is None:
            found.append(finding(ctx, RULE_ID, pol["unchecked_severity"],
                                 f"{un.ref}: no input range declared; {_unipolar(fact)} "
                                 "(found from the wiring; the part has no part data)",
                                 at=un.ref, references=[un.ref], fix=UNIPOLAR_FIX, data=data))
        elif vd[0] < 0:
            fact = dict(fact, vd_low=vd[0])
            ref_v = fact.get("ref_v")
            at_g1 = "" if ref_v is None else f" ({fmt.volts(ref_v + vd[0])} at G = 1)"
            msg = _below_rail(fact, un.ref, f"REF + G x ({fmt.volts(vd[0])}) for any positive "
                              f"gain G{at_g1}") + " (found from the wiring; the part has no part data)"
            found.append(finding(ctx, RULE_ID, pol["severity"], msg, at=un.ref,
                                 references=[un.ref], fix=UNIPOLAR_FIX.split(", or declare")[0],
                                 data=data))
    return found


def check(ctx) -> list:
    pol = ctx.policy(RULE_ID)
    found = _unsupported_low_rail(ctx, pol)
    for stage, res in ctx.analysed():
        low_rail = _low_rail_findings(ctx, pol, stage, res)
        found += low_rail
        h = res.headroom
        units = {op.name for op in stage.circuit.opamps}
        for item in h.unknown:
            if item in units:
                msg, fix = _unknown_rails(stage, item)
            else:
                msg = f"{stage.kind} stage {stage.id}: {item} unknown; headroom unchecked"
                fix = ("declare Ref Voltage on the amplifier symbol, or drive REF from a net "
                       "whose voltage frontcheck can see")
            found.append(finding(ctx, RULE_ID, pol["unchecked_severity"], msg, stage=stage,
                                 at=item if item in units else None, fix=fix,
                                 data={"unknown": item}))
        if h.box is None:
            if low_rail:
                continue              # said above, with the REF on the negative rail
            found.append(finding(
                ctx, RULE_ID, pol["unchecked_severity"],
                f"{stage.kind} stage {stage.id}: no input range declared; headroom unchecked",
                stage=stage, fix="declare Input CM and Input Diff on the amplifier symbol "
                                 "(e.g. Input CM = 0.5..4.5 V, Input Diff = -10..10 mV)"))
            continue
        # worst corner per (op-amp, node): one finding each
        worst: dict[tuple[str, str], list] = {}
        for chk in h.checks:
            key = (chk.opamp, chk.node)
            worst.setdefault(key, []).append(chk)
        for (opname, node), chks in worst.items():
            w = min(chks, key=lambda c: c.margin_v)
            bad = [c for c in chks if c.margin_v < 0]
            if bad:
                sev = pol["severity"]
                side = "above its upper" if w.voltage > w.high else "below its lower"
                msg = (f"{stage.kind} stage {stage.id}: {opname} {node} (net {w.net}) reaches "
                       f"{fmt.volts(w.voltage)} at {corner(w.corner)}{_parts(w)}, "
                       f"{fmt.volts(-w.margin_v)} {side} limit ({fmt.span(w.low, w.high, fmt.volts)}"
                       f"{_nominal(h)})")
                fix = _fix(w)
                fact = getattr(h, "ref_at_low_rail", None)
                if (fact and node == "output" and w.net == stage.circuit.ports.get("out")
                        and w.voltage < w.low and w.corner[1] < 0):
                    msg += "; " + _unipolar(fact)
                    fix = UNIPOLAR_FIX.split(", or declare")[0] + "; or " + fix
            elif w.margin_v < pol["min_margin_v"] and w.limit_stated:
                # (a limit no part data states is the bare rail or none: the op-amp's
                # requirement, not a finding, until it goes past the rail)
                sev = pol["low_margin_severity"]
                msg = (f"{stage.kind} stage {stage.id}: {opname} {node} (net {w.net}) has only "
                       f"{fmt.volts(w.margin_v)} margin at {corner(w.corner)}{_parts(w)} (limits "
                       f"{fmt.span(w.low, w.high, fmt.volts)}, wanted at least {fmt.volts(pol['min_margin_v'])})")
                fix = "as for a violation, with the margin to spare: " + _fix(w)
            else:
                continue
            # The finding is about the amplifier whose node runs out of room, not the whole
            # stage: name that part (its package reference for a unit such as U1A).
            owner = unit_ref(stage, opname)
            found.append(finding(
                ctx, RULE_ID, sev, msg, stage=stage, at=opname, fix=fix, references=[owner],
                data={"opamp": opname, "node": node, "net": w.net, "corner": list(w.corner),
                      "voltage": w.voltage, "low": w.low, "high": w.high,
                      "margin_v": w.margin_v, "violating_corners": len(bad),
                      "tolerances": dict(getattr(w, "tolerances", {}) or {}),
                      "range_v": list(w.range_v) if getattr(w, "range_v", None) else None}))
    return found
