"""Numerical analysis of a recognised stage: gain, CMRR, headroom, DC paths, error budget.

Entry point: ``analyse(stage, netlist, rails, options) -> StageResult``; a stage that cannot
be analysed raises ``Unanalysable`` (an InputError with ``stage_id``, ``part``, ``reason``), so
the caller can report it on that stage and go on with the others.

* ``mna``       batched modified nodal analysis (DC and AC) of the stage's SubCircuit
* ``tolerance`` exact worst case over tolerance corners, Monte Carlo, input RFI filter
* ``headroom``  op-amp input and output limits over the declared box, operating region
* ``dc_paths``  bias-return paths, REF source and input source impedance in the whole netlist
* ``budget``    per-stage error budget in % of full scale
* ``neighbourhood`` the parts around the stage that change its figures (REF network, loads)
* ``corners``   node voltages over the tolerance corners and the declared box
* ``requirements`` what each op-amp must achieve for the declared targets
* ``diff_pair``  output common mode of a differential-output stage, the next stage's CMRR need
* ``composite``  first-stage gain G1, second-stage gain and total of a composite front end
* ``family``     stages of one topology family solved together (stacked solves)
* ``basis``      what the figures rest on, in words (assumed numbers, op-amp part data)

What the numbers include. ``gain`` and ``cmrr`` are the stage with the resistive network that
feeds REF, the loads on its inner nets and the signal source drawn at its inputs (a bridge's
arms, a divider: when the design shows the source of both inputs), every one of those parts
varied with the stage's own in the worst case and the Monte Carlo (``StageResult.varied``),
and with each op-amp's open-loop gain and CMRR from its part data; an op-amp without part data
is ideal in them and gets requirements instead. The source's cost at nominal values is also
reported apart (``source``) and is its own term in the error budget, whose stage terms leave
the source and the REF network out so that nothing is counted twice.
When REF sits on the net of one of the inputs (a shunt amplifier referred to the shunt's low
side), gain and CMRR are those of the output read relative to that net (see ``mna``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

import numpy as np

from frontcheck.analysis import budget as _budget
from frontcheck.analysis import (cmrr_frequency, composite, corners, dc_paths, diff_pair,
                                 headroom as _headroom, mna, neighbourhood, tolerance)
from frontcheck.analysis import requirements as _req
from frontcheck.analysis.basis import assumptions_of, opamp_basis
from frontcheck.analysis.result import RefSource, StageResult
from frontcheck.analysis.tolerance import Options
from frontcheck import formatting
from frontcheck.circuit import Sourced, Stage
from frontcheck.errors import InputError
from frontcheck.netlist import Netlist

__all__ = ["Options", "Unanalysable", "analyse", "analyse_many", "assumptions_of", "opamp_basis"]


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
    if _numbers_ok(sub):
        return

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
        for what in _OPAMP_NUMBERS:
            if getattr(m, what) is not None and math.isnan(getattr(m, what).value):
                refuse(o.name, f"op-amp {what} is not a number", "fix the op-amp's part data")


_OPAMP_NUMBERS = ("aol", "cmrr_db", "icm_low", "icm_high", "swing_low", "swing_high")


def _numbers_ok(sub) -> bool:
    """Every value :func:`_check_numbers` looks at is a number it accepts (the common case,
    told in one pass without building the reasons)."""
    isnan = math.isnan
    for r in sub.resistors:
        o, t = r.ohms, r.tol
        if o is None or t is None or isnan(o.value) or isnan(t.value) or o.value <= 0:
            return False
    for c in sub.capacitors:
        if isnan(c.farads.value) or isnan(c.tol.value):
            return False
    for o in sub.opamps:
        m = o.model
        for what in _OPAMP_NUMBERS:
            s = getattr(m, what)
            if s is not None and isnan(s.value):
                return False
    return True


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
    got = analyse_many([stage], netlist, rails, opt, dc)[0]
    if isinstance(got, Unanalysable):
        raise got
    return got


def _guarded(stage: Stage, fn, *args):
    """``fn(*args)``, or the Unanalysable that says why this stage cannot be analysed."""
    try:
        return fn(*args)
    except Unanalysable as e:
        return e
    except InputError as e:
        return Unanalysable(stage.id, "", e.message, e.hint, e.file, e.line)


def analyse_many(stages: list[Stage], netlist: Netlist | None = None,
                 rails: Mapping[str, Sourced] | None = None, options: Options | None = None,
                 dc: "dc_paths.DCView | None" = None, progress=None) -> list:
    """:func:`analyse` of every stage of one design, in order: a StageResult, or the
    Unanalysable that says why a stage could not be analysed (the others go on);
    ``progress(k, stage)`` is called before the figures of stage k are made.

    Stages of one topology family are solved together (frontcheck.analysis.family): each
    stage's circuit is prepared first, the tolerance evaluations every stage of a family asks
    alike are then one stacked solve for the family, and the figures are the same numbers a
    stage analysed alone gets."""
    from frontcheck.analysis import budget_terms, family

    opt = options or Options()
    if opt.distribution not in ("gaussian", "uniform"):
        # An option of the whole run, not a fault of this stage.
        raise InputError(f"unknown Monte Carlo distribution {opt.distribution!r}",
                         hint="use 'gaussian' (tolerance = 3 sigma) or 'uniform'")
    prepared = [_guarded(s, _prepare, s, netlist, rails, opt, dc) for s in stages]
    ok = [p for p in prepared if not isinstance(p, Unanalysable)]
    family.group(c for p in ok for c in p.contexts())
    for p, tr in zip(ok, budget_terms.transfers_many([(p.stage, p.source, p.contexts()) for p in ok])):
        p.transfers = tr
    out = []
    for k, (s, p) in enumerate(zip(stages, prepared)):
        if progress is not None:
            progress(k, s)
        out.append(p if isinstance(p, Unanalysable) else _guarded(s, _analyse, p, opt))
    return out


def _filter_freqs(intent) -> tuple[float, ...]:
    """The input filter's conversion is stated at the usual frequencies and at CMRR At."""
    at = intent.cmrr_at_hz
    return tolerance.FILTER_FREQS + ((float(at),) if at and at not in tolerance.FILTER_FREQS else ())


@dataclass
class _Prepared:
    """A stage with everything its figures are solved on: the parts around it, the series
    resistances of its ports and its tolerance contexts (the stage's with them, and without
    the REF network for the error budget when that differs)."""

    stage: Stage
    netlist: Netlist | None
    rails: dict
    dc: "dc_paths.DCView | None"
    ref: RefSource | None
    series: dict
    source: object
    nb: object
    work: object
    base_sub: object
    ctx: tolerance.Context
    base_ctx: tolerance.Context | None
    notes: list
    transfers: object = None     # DC transfers of the error budget, solved with the family

    def contexts(self) -> list:
        return [self.ctx] + ([self.base_ctx] if self.base_ctx is not None else [])


def _prepare(stage: Stage, netlist: Netlist | None, rails: Mapping[str, Sourced] | None,
             opt: Options, dc: dc_paths.DCView | None = None) -> _Prepared:
    _check_numbers(stage, netlist)
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

    source = dc_paths.source_impedances(netlist, stage, rails, dc=dc) if dc is not None else None
    # Every part around the stage that changes its figures (REF network, loads on inner
    # nets) is solved and varied with it; the REF network then replaces its Thevenin series.
    nb = neighbourhood.extend(stage, dc, ref, source) if dc is not None else None
    work, base_sub = sub, sub
    if nb is not None and nb.added:
        work, base_sub = nb.sub, nb.loads_only
        notes += [n for n in nb.notes if n not in notes]
        if nb.ref_network:
            series.pop("ref", None)
    ctx = tolerance.make_context(work, series)
    base_ctx = tolerance.make_context(base_sub, None) if series or work is not base_sub else None
    return _Prepared(stage, netlist, rails, dc, ref, series, source, nb, work, base_sub, ctx,
                     base_ctx, notes)


def _analyse(p: _Prepared, opt: Options) -> StageResult:
    stage, netlist, rails, dc, ref, series, source, notes = (
        p.stage, p.netlist, p.rails, p.dc, p.ref, p.series, p.source, p.notes)
    sub = stage.circuit
    nb, work, gain, cmrr, extra, bgain, bcmrr, bextra = _figures(p, opt, notes)
    varied = list(p.ctx.var.names)      # p.ctx is compiled from work

    it = stage.intent
    ref_net = sub.ports.get("ref")
    vref, box = _vref_and_box(stage, nb, ref, dc, notes)
    sub_h = work
    if set(rails) - set(work.rails):
        from dataclasses import replace
        sub_h = replace(work, rails={**work.rails, **{k: v for k, v in rails.items() if k not in work.rails}})
    hr = _headroom.headroom(sub_h, box, vref, series=tuple(series),
                            rs=[[series[k] for k in series]] if series else None,
                            solved=corners.nominal_nodes(p.ctx, sub_h, series))
    if vref is None:
        notes.append(f"headroom: the voltage at REF ({ref_net}) is unknown; declare it")
    if hr.ref_at_low_rail is not None and it.input_diff is not None and vref is not None:
        # REF on the low rail: the output a negative differential input asks for, at nominal
        # gain (Vout = Vref + G Vd, docs/engineering.md sec. 4a)
        lo = float(it.input_diff[0])
        hr.ref_at_low_rail.update({"vd_low": lo, "out_needed_v": vref + gain.nominal * lo})
    reqs = _corners_and_requirements(stage, sub_h, extra["ctx"], opt, box, vref, hr, gain, cmrr,
                                     source, notes)

    bias = dc_paths.bias_paths(netlist, stage, rails, dc=dc) if dc is not None else []
    ahead = None
    filt = tolerance.input_filter(sub, _filter_freqs(it)) if sub.capacitors else None
    if filt is None and dc is not None:
        # A filter drawn ahead of the stage's input ports: solved with the stage behind it,
        # so the amplifier's input loading is in its numbers.
        ahead = dc_paths.filter_ahead(netlist, stage, rails, dc=dc)
        filt = tolerance.input_filter(ahead, _filter_freqs(it)) if ahead is not None else None
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
    budget, bnotes = _budget.full_budget(stage, bgain, bcmrr, budget_ref, source, p.transfers)
    notes += bnotes
    pair = _differential_output(stage, extra["ctx"], opt, gain, cmrr, notes)
    chain = composite.figures(stage, gain, cmrr, opt, notes)
    sweep = cmrr_frequency.stage_sweep(ahead if filt is not None and ahead is not None else work,
                                       it.cmrr_at_hz, series=series, ctx=p.ctx)
    return StageResult(
        stage_id=stage.id, gain=gain, cmrr=cmrr, gain_cm=extra["acm_nominal"],
        gain_ref=extra["aref"] if "ref" in work.ports else bextra["aref"], varied=varied,
        headroom=hr, ref=ref, bias=bias, error_budget=budget,
        assumptions=assumptions_of(stage), notes=notes, source=source, input_filter=filt,
        opamps=opamp_basis(stage), requirements=reqs, cmrr_sweep=sweep, differential_output=pair,
        composite=chain)


def _differential_output(stage: Stage, ctx, opt: Options, gain, cmrr, notes: list[str]):
    """Output common mode and the next stage's CMRR need of a differential-output stage
    (frontcheck.analysis.diff_pair); None for a single-ended one."""
    if not stage.circuit.ports.get("out_n"):
        return None
    fig = diff_pair.pair_figures(ctx, opt, min(abs(gain.worst_min), abs(gain.worst_max)),
                                 cmrr.worst_db, stage.intent.min_cmrr_db)
    notes += diff_pair.notes(stage.circuit, fig, gain.nominal)
    return {"output_cm_gain": fig.cm_gain, "signal_to_output_cm": list(fig.dm_to_cm),
            "next_stage_cmrr_db": fig.next_cmrr_db}


def _figures(p: _Prepared, opt: Options, notes: list[str]):
    """Gain and CMRR of the stage with every part around it that changes them (REF network,
    loads on inner nets: frontcheck.analysis.neighbourhood), solved and varied with it; the
    REF network then replaces its Thevenin series resistance. Also the same figures without
    the REF network (the error budget counts REF apart)."""
    nb, ref, source, series = p.nb, p.ref, p.source, p.series
    gain, cmrr, tnotes, extra = tolerance.analyse_tolerance(p.work, opt, series, ctx=p.ctx)
    notes += [n for n in tnotes if n not in notes]
    if nb is not None and nb.ref_network and ref.cmrr_db is not None:
        cmrr.contributors["REF source"] = ref.cmrr_db     # the network at nominal, alone
    if nb is not None and nb.source_legs and source.cmrr_db is not None:
        cmrr.contributors["source impedance"] = source.cmrr_db   # the source at nominal, alone
    if p.base_ctx is not None:
        bgain, bcmrr, _, bextra = tolerance.analyse_tolerance(p.base_sub, opt, None, ctx=p.base_ctx)
    else:
        bgain, bcmrr, bextra = gain, cmrr, extra
    if nb is not None and nb.ref_network and "resistors" in bcmrr.contributors:
        # 'resistors' stays the stage's own (and its loads'); the REF network is its own term
        cmrr.contributors["resistors"] = bcmrr.contributors["resistors"]
    return nb, p.work, gain, cmrr, extra, bgain, bcmrr, bextra


def _vref_and_box(stage: Stage, nb, ref, dc, notes: list[str]):
    """The REF voltage for headroom (from a rail, the declaration, or the REF source's own
    voltage; None when unknown) and the declared (Vcm, Vd) box (None without one)."""
    sub = stage.circuit
    it = stage.intent
    ref_net = sub.ports.get("ref")
    vref = None
    if ref_net is not None and ref_net in (sub.ports.get("in_p"), sub.ports.get("in_n")):
        vref = 0.0   # REF on an input's net follows that input: Vref drops out of every node
    elif nb is not None and nb.ref_network:
        # REF is a node of its network now; a driven end of it is the REF port instead.
        vref = 0.0 if nb.ref_moved_to is None else dc_paths.thevenin(
            None, nb.ref_moved_to, dc=dc).volts
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
    return vref, box


def _corners_and_requirements(stage: Stage, sub_h, ctx, opt: Options, box, vref, hr, gain,
                              cmrr, source, notes: list[str]) -> list:
    """Headroom over the tolerance corners (replacing the nominal checks of ``hr`` in place)
    and what each op-amp must achieve (frontcheck.analysis.requirements)."""
    it = stage.intent
    reqs: list = []
    if box is not None and vref is not None:
        nets = [o.inp for o in sub_h.opamps] + [o.out for o in sub_h.opamps]
        ext, note = corners.node_extremes(ctx, nets, box, vref, opt.max_bits)
        if note:
            notes.append(note)
        _headroom.over_corners(hr, ext)
        reqs += _req.range_requirements(stage, ext, lambda net: _headroom._rail(sub_h, net))
    if it.min_cmrr_db is not None:
        if ctx.cmag.any():
            ad, acm, _ = tolerance.worst_corners(ctx, opt, use_opamp_cmrr=False)
            ad0 = float(ctx.evaluate(np.zeros((1, len(ctx.var.names))), use_opamp_cmrr=False).ad[0])
            rest = float(np.min(tolerance.cmrr_db(ad, acm, ad0, opt.ad_convention)))
        else:
            rest = cmrr.worst_db
        other = [source.cmrr_db] if source is not None and source.cmrr_db is not None else []
        reqs += _req.cmrr_requirements(stage, ctx, rest, float(it.min_cmrr_db), other)
    if it.target_gain is not None and it.gain_tol is not None:
        if ctx.ainv.any():
            ideal = tolerance.Context(ctx.sub, ctx.topo, ctx.var, np.zeros_like(ctx.ainv),
                                      ctx.cmag, ctx.rs)
            ad, _, _ = tolerance.worst_corners(ideal, opt, use_opamp_cmrr=False)
            gmin, gmax = float(np.min(np.abs(ad))), float(np.max(np.abs(ad)))
        else:
            gmin, gmax = sorted((abs(gain.worst_min), abs(gain.worst_max)))
        reqs += _req.aol_requirements(stage, ctx, gmin, gmax, abs(float(it.target_gain)),
                                      float(it.gain_tol))
    return reqs
