"""Numerical analysis of a recognised stage: gain, CMRR, headroom, DC paths, error budget.

Entry point: ``analyse(stage, netlist, rails, options) -> StageResult``; a stage that cannot
be analysed raises ``Unanalysable`` (an InputError with ``stage_id``, ``part``, ``reason``), so
the caller can report it on that stage and go on with the others.

* ``mna``       batched modified nodal analysis (DC and AC) of the stage's SubCircuit
* ``tolerance`` exact worst case over tolerance corners, Monte Carlo, input RFI filter
* ``headroom``  op-amp input and output limits over the declared box, operating region
* ``dc_paths``  bias-return paths, REF source and input source impedance in the whole netlist
* ``budget``    per-stage error budget in % of full scale

What the numbers include. ``gain`` and ``cmrr`` are the stage with its REF source resistance
(when the netlist shows one) and with each op-amp's open-loop gain and CMRR from its model;
the resistance of the signal source driving the inputs is reported apart (``source``) and in
the budget, not folded into them, because it belongs to the sensor rather than to the stage.
When REF sits on the net of one of the inputs (a shunt amplifier referred to the shunt's low
side), gain and CMRR are those of the output read relative to that net (see ``mna``).
"""

from __future__ import annotations

import math
from typing import Mapping

from frontcheck.analysis import budget as _budget
from frontcheck.analysis import dc_paths, headroom as _headroom, mna, tolerance
from frontcheck.analysis.result import RefSource, StageResult
from frontcheck.analysis.tolerance import Options
from frontcheck import formatting
from frontcheck.circuit import Sourced, Stage
from frontcheck.errors import InputError
from frontcheck.netlist import Netlist

__all__ = ["Options", "Unanalysable", "analyse", "assumptions_of"]


class Unanalysable(InputError):
    """One stage cannot be analysed (a part value recognition could not read, a circuit that
    cannot be solved); the rest of the design can. The caller may turn it into a finding on
    this stage and carry on.

    Attributes
    ----------
    stage_id : str
        The stage, e.g. 'U2D'.
    part : str
        The part (or op-amp) whose value is the problem, '' when it is the circuit as a whole.
    reason : str
        What is wrong, in words.
    """

    def __init__(self, stage_id: str, part: str, reason: str, hint: str | None = None,
                 file: str | None = None, line: int | None = None):
        self.stage_id, self.part, self.reason = stage_id, part, reason
        super().__init__(f"stage {stage_id}: {part + ' ' if part else ''}{reason}", file=file,
                         line=line, hint=hint)


def _where(netlist: Netlist | None, name: str) -> tuple[str | None, int | None]:
    """File and line of a part (its reference is the name up to a unit or element suffix)."""
    if netlist is None:
        return None, None
    comps = netlist.components
    ref = name if name in comps else next((r for r in sorted(comps, key=len, reverse=True)
                                           if name.startswith(r)), None)
    loc = getattr(comps.get(ref), "location", None) if ref else None
    return (loc.file, loc.line) if loc is not None else (None, None)


def _check_numbers(stage: Stage, netlist: Netlist | None = None) -> None:
    """Analysis refuses a NaN or non-positive value: recognition marks unreadable values NaN.
    Raises :class:`Unanalysable` naming the stage and the part."""
    sub = stage.circuit

    def refuse(part: str, reason: str, hint: str) -> None:
        raise Unanalysable(stage.id, part, reason, hint, *_where(netlist, part))

    for r in sub.resistors:
        for what, s in (("resistance", r.ohms), ("tolerance", r.tol)):
            if s is None or math.isnan(s.value):
                refuse(r.name, f"{what} could not be read ({s.detail if s else ''})",
                       f"write a value such as '10k 0.1%' on {r.name}")
        if r.ohms.value <= 0:
            refuse(r.name, f"has resistance {formatting.ohms(r.ohms.value)}",
                   "a resistor in the stage must have a positive value")
    for c in sub.capacitors:
        if math.isnan(c.farads.value) or math.isnan(c.tol.value):
            refuse(c.name, f"value could not be read ({c.farads.detail})",
                   f"write a value such as '1n 5%' on {c.name}")
    for o in sub.opamps:
        m = o.model
        for what in ("aol", "cmrr_db", "icm_low", "icm_high", "swing_low", "swing_high"):
            if math.isnan(getattr(m, what).value):
                refuse(o.name, f"op-amp {what} is not a number", "fix the op-amp's part data")


def _fmt(v: float, unit: str) -> str:
    """A stated number in the report's one style (frontcheck.formatting); '%' takes a fraction."""
    unit = unit.strip()
    if unit == "%":
        return formatting.percent(v, trim=True)
    if unit == "dB":
        return f"{formatting.number(v)} dB"
    if unit == "V/V":
        return f"{formatting.number(v)} V/V"
    return formatting.eng(v, unit, 3, trim=True)


def assumptions_of(stage: Stage) -> list[str]:
    """Every number of the stage whose source is 'default' or 'class', in words."""
    out: list[str] = []
    sub = stage.circuit

    def add(text: str) -> None:
        if text not in out:
            out.append(text)

    def say(owner: str, what: str, s: Sourced | None, unit: str = "") -> None:
        if s is None or s.source not in ("default", "class"):
            return
        val = _fmt(s.value, unit)
        # The detail usually names the source already ('class zero-drift'); say it once.
        where = s.detail if s.detail.startswith(s.source) else (
            f"{s.source}: {s.detail}" if s.detail else s.source)
        add(f"{owner} {what} assumed {val} ({where})")

    for r in sub.resistors:
        say(r.name, "resistance", r.ohms, "Ω")
        say(r.name, "tolerance", r.tol, "%")
        say(r.name, "ratio tolerance", r.match_tol, "%")
    for c in sub.capacitors:
        say(c.name, "capacitance", c.farads, " F")
        say(c.name, "tolerance", c.tol, "%")
    # Op-amp model numbers: op-amps with equal numbers (the units of one package, parts of one
    # class) share one line per source, so a stage of three op-amps reads as one statement.
    groups: dict[tuple, list[str]] = {}
    models = {}
    for o in sub.opamps:
        m = o.model
        key = (m.name, m.aol, m.cmrr_db, m.icm_low, m.icm_high, m.swing_low, m.swing_high,
               m.vos, m.ib)
        groups.setdefault(key, []).append(o.name)
        models[key] = m
    for key, names in groups.items():
        m = models[key]
        by_source: dict[str, list[str]] = {}
        for what, q, unit in (("open-loop gain", m.aol, " V/V"), ("CMRR", m.cmrr_db, " dB"),
                              ("input range above V-", m.icm_low, " V"),
                              ("input range below V+", m.icm_high, " V"),
                              ("output swing above V-", m.swing_low, " V"),
                              ("output swing below V+", m.swing_high, " V"),
                              ("offset voltage", m.vos, " V"), ("bias current", m.ib, " A")):
            if q is None or q.source not in ("default", "class"):
                continue
            where = q.detail if q.detail.startswith(q.source) else (
                f"{q.source}: {q.detail}" if q.detail else q.source)
            by_source.setdefault(where, []).append(f"{what} {_fmt(q.value, unit)}")
        for where, items in by_source.items():
            add(f"{', '.join(names)} assumed ({where}): {', '.join(items)}")
    for net, v in sub.rails.items():
        say(f"rail {net}", "voltage", v, " V")
    return out


def _ref_without_netlist(stage: Stage) -> RefSource | None:
    net = stage.circuit.ports.get("ref")
    if net is None:
        return None
    if net in stage.circuit.rails or mna.is_ground(net):
        v = stage.circuit.rails[net].value if net in stage.circuit.rails else 0.0
        return RefSource(net, "rail", 0.0, float(v), net, math.inf, 0.0)
    return None


def analyse(stage: Stage, netlist: Netlist | None = None,
            rails: Mapping[str, Sourced] | None = None,
            options: Options | None = None, dc: "dc_paths.DCView | None" = None) -> StageResult:
    """Analyse one stage.

    Parameters
    ----------
    stage : Stage
        From recognition; its SubCircuit is solved whatever the topology.
    netlist : Netlist, optional
        The whole design, for bias-return paths, the REF source and the input source. Without
        it those are skipped (a REF net on a rail is still recognised).
    rails : mapping, optional
        Supply net -> voltage for the whole design (default: the stage's own rails).
    options : Options, optional
        mc_samples, seed, distribution ('gaussian' | 'uniform'), percentile, ad_convention.
    dc : dc_paths.DCView, optional
        ``DCView(netlist, rails)`` built once by a caller analysing many stages of one design
        (it depends on the netlist and rails only); built here when not given.

    Returns
    -------
    StageResult

    Raises
    ------
    Unanalysable
        (an InputError) A value recognition could not read (NaN), or a circuit that cannot be
        solved: this stage only; the caller may report it on the stage and go on.

    References
    ----------
    See the modules: Sedra & Smith, *Microelectronic Circuits*, 6th ed. (Eq. 2.19 context,
    Ex. 2.15, 2.17, Problems 2.67, 2.75); Pallas-Areny & Webster, IEEE Trans. Instrum. Meas.
    40(4), 1991; docs/engineering.md secs. 1-7.
    """
    opt = options or Options()
    if opt.distribution not in ("gaussian", "uniform"):
        # An option of the whole run, not a fault of this stage.
        raise InputError(f"unknown Monte Carlo distribution {opt.distribution!r}",
                         hint="use 'gaussian' (tolerance = 3 sigma) or 'uniform'")
    _check_numbers(stage, netlist)
    try:
        return _analyse(stage, netlist, rails, opt, dc)
    except Unanalysable:
        raise
    except InputError as e:
        raise Unanalysable(stage.id, "", e.message, e.hint, e.file, e.line) from None


def _analyse(stage: Stage, netlist: Netlist | None, rails: Mapping[str, Sourced] | None,
             opt: Options, dc: dc_paths.DCView | None = None) -> StageResult:
    sub = stage.circuit
    rails = dict(rails) if rails is not None else dict(sub.rails)
    notes: list[str] = []
    if netlist is None:
        dc = None
    elif dc is None:
        dc = dc_paths.DCView(netlist, rails)

    ref = (dc_paths.ref_source(netlist, stage, rails, dc=dc) if dc is not None
           else _ref_without_netlist(stage))
    series = {}
    if ref is not None and ref.kind == "resistive" and ref.thevenin_ohms:
        series["ref"] = ref.thevenin_ohms
    if ref is not None and ref.kind == "floating":
        notes.append(f"REF net {ref.net} is floating: gain and CMRR computed as if it were driven "
                     f"by an ideal source")

    gain, cmrr, tnotes, extra = tolerance.analyse_tolerance(sub, opt, series)
    notes += [n for n in tnotes if n not in notes]
    if series:
        bgain, bcmrr, _, _ = tolerance.analyse_tolerance(sub, opt, None)
    else:
        bgain, bcmrr = gain, cmrr

    # Headroom: the REF voltage from a rail, the declaration, or the REF source's own voltage.
    it = stage.intent
    ref_net = sub.ports.get("ref")
    vref = None
    if ref_net is not None and ref_net in (sub.ports.get("in_p"), sub.ports.get("in_n")):
        vref = 0.0   # REF on an input's net follows that input: Vref drops out of every node
    elif ref_net is not None and (ref_net in sub.rails or mna.is_ground(ref_net)):
        vref = float(sub.rails[ref_net].value) if ref_net in sub.rails else 0.0
    elif it.ref_voltage is not None:
        vref = float(it.ref_voltage)
    elif ref is not None and ref.voltage is not None:
        vref = float(ref.voltage)
    elif ref_net is None:
        vref = 0.0
    box = None
    if it.input_cm is not None:
        vd = it.input_diff if it.input_diff is not None else (0.0, 0.0)
        if it.input_diff is None:
            notes.append("headroom: no differential input range declared; checked at Vd = 0 only")
        box = (float(it.input_cm[0]), float(it.input_cm[1]), float(vd[0]), float(vd[1]))
    elif it.input_diff is not None:
        notes.append("headroom: no common-mode range declared; only the operating region is reported")
    sub_h = sub
    if set(rails) - set(sub.rails):
        from dataclasses import replace
        sub_h = replace(sub, rails={**sub.rails, **{k: v for k, v in rails.items() if k not in sub.rails}})
    hr = _headroom.headroom(sub_h, box, vref, series=tuple(series),
                            rs=[[series[k] for k in series]] if series else None)
    if vref is None:
        notes.append(f"headroom: the voltage at REF ({ref_net}) is unknown; declare it")

    bias = dc_paths.bias_paths(netlist, stage, rails, dc=dc) if dc is not None else []
    source = dc_paths.source_impedances(netlist, stage, rails, dc=dc) if dc is not None else None
    filt = tolerance.input_filter(sub) if sub.capacitors else None
    if filt is None and dc is not None:
        # A filter drawn ahead of the stage's input ports: solved with the stage behind it,
        # so the amplifier's input loading is in its numbers.
        ahead = dc_paths.filter_ahead(netlist, stage, rails, dc=dc)
        filt = tolerance.input_filter(ahead) if ahead is not None else None
        if filt is not None:
            notes.append(f"input filter ahead of the stage ({', '.join(filt.parts)}) solved with "
                         f"the stage's input loading")

    budget_ref = ref
    if (ref_net is not None and ref_net in (sub.ports.get("in_p"), sub.ports.get("in_n"))
            and source is not None and ref is not None and ref.thevenin_ohms):
        # The REF net is an input's net: its source resistance is that input's, already in
        # the source term; counting it again as a REF term would double it.
        budget_ref = None
        notes.append(f"error budget: REF shares net {ref_net} with an input, so its source "
                     f"resistance is counted once, in the source term")
    budget, bnotes = _budget.error_budget(bgain, bcmrr, it, budget_ref, source)
    notes += bnotes
    return StageResult(
        stage_id=stage.id, gain=gain, cmrr=cmrr, gain_cm=extra["acm_nominal"],
        gain_ref=extra["aref"], headroom=hr, ref=ref, bias=bias, error_budget=budget,
        assumptions=assumptions_of(stage), notes=notes, source=source, input_filter=filt)
