"""The rest of a stage's error budget: offset, bias current, noise and drift, each referred to
the input and to full scale, and each a requirement where the numbers it needs are missing.

Every term is a dict (the JSON contract of ``error_budget.terms``)::

    {"worst": % FS, "rss": % FS, "rti_v": {"worst": V, "rss": V}, "sources": [...],
     "requirement": bool, "bound": {...} or None}            (noise also: rti_rms_v, rti_pp_v)

Full scale is the nominal differential gain times the largest declared differential input, so
a term's % FS is 100 x (its input-referred volts) / max |Input Diff|; without a declared
differential range only the volts are given.

Requirements instead of guesses. A term whose numbers are missing (an op-amp with no Vos, no
en, no Vos drift; a resistor with no TCR) is computed with what is known and marked
``"requirement": true``; when an ``Error Budget`` is declared its ``bound`` is the largest value
of the missing number that fits the term's share: what the fully known terms leave of the
budget (worst case, linear sum), split equally among the terms that are requirements. Noise
enters the budget as its peak value, half the peak-to-peak (3.3 x RMS, from the 6.6 x RMS
crest factor, common practice).

Formulas, sources and check values: docs/engineering.md sec. 11.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from frontcheck.analysis import drift, noise, offset, small_signal
from frontcheck.analysis.budget import total_of
from frontcheck.circuit import Intent, Stage, SubCircuit

T_DEFAULT_C = 25.0       # noise temperature without a declared range: the reference temperature
TERMS = ("offset", "bias", "noise", "drift")


@dataclass
class Context:
    """What every term needs: the stage, its nominal gain, the declared ranges, the source."""

    stage: Stage
    ad: float
    vd_max: float | None           # largest |declared differential input|, V
    vcm_max: float | None          # largest |declared common-mode input|, V
    rs: tuple[float, float] | None  # source resistance at in_p, in_n (None: unknown / none)

    @property
    def intent(self) -> Intent:
        return self.stage.intent

    @property
    def sub(self) -> SubCircuit:
        return self.stage.circuit

    def pct(self, rti_v: float | None) -> float | None:
        if rti_v is None or not self.vd_max:
            return None
        return 100.0 * rti_v / self.vd_max


def _fmt(v: float, unit: str) -> str:
    for scale, prefix in ((1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")):
        if abs(v) >= scale:
            return f"{v / scale:.3g} {prefix}{unit}"
    return f"{v:.3g} {unit}"


def _said(owner: str, what: str, s, unit: str) -> str:
    return f"{owner} {what} {_fmt(s.value, unit)} ({s.source}{': ' + s.detail if s.detail else ''})"


def _term(ctx: Context, worst_v: float, rss_v: float, sources: list[str], missing: list[str]) -> dict:
    """A term; with numbers missing it has no value, only the part that is known."""
    if missing:
        return {"worst": None, "rss": None, "rti_v": {"worst": None, "rss": None}, "sources": sources,
                "requirement": True, "missing": missing, "bound": None,
                "known_rti_v": {"worst": worst_v, "rss": rss_v}}
    return {"worst": ctx.pct(worst_v), "rss": ctx.pct(rss_v), "rti_v": {"worst": worst_v, "rss": rss_v},
            "sources": sources, "requirement": False}


def _split(ctx: Context):
    """(discrete op-amps with their indices, internal op-amps) of the stage."""
    ops = list(enumerate(ctx.sub.opamps))
    return [(i, o) for i, o in ops if not o.internal], [(i, o) for i, o in ops if o.internal]


def _transfers(ctx: Context):
    series = ("in_p", "in_n") if ctx.rs is not None else ()
    return offset.dc_transfers(ctx.sub, list(ctx.rs) if ctx.rs else None, series)


def _source_rs(source) -> tuple[float, float] | None:
    if source is not None and source.rs_p is not None and source.rs_n is not None:
        return float(source.rs_p), float(source.rs_n)
    return None


def transfers_many(items) -> list:
    """The DC transfers the offset, bias and drift terms of each (stage, source, tolerance
    contexts) of ``items`` read, those of stages of one structure solved together
    (offset.dc_transfers_many); None where a stage solves alone (``extend_budget`` then does)."""
    args = []
    for stage, source, contexts in items:
        rs = _source_rs(source)
        args.append((stage.circuit, list(rs) if rs else None,
                     ("in_p", "in_n") if rs is not None else (), contexts))
    return offset.dc_transfers_many(args)


def offset_term(ctx: Context, tr) -> dict:
    """Each op-amp's Vos through its transfer; an integrated part's Vos is input-referred."""
    ad, transfers = tr
    discrete, internal = _split(ctx)
    per, sources, missing = {}, [], []
    for i, o in discrete:
        if o.model.vos is None:
            missing.append(o.name)
            continue
        per[o.name] = abs(transfers[i].vos) * o.model.vos.value / abs(ad)
        sources.append(_said(o.name, "Vos", o.model.vos, "V"))
    parts = {o.ref: o for _, o in internal}
    for ref, o in parts.items():
        if o.model.vos is None:
            missing.append(ref)
            continue
        per[ref] = o.model.vos.value
        sources.append(_said(ref, "Vos (input-referred)", o.model.vos, "V"))
    worst = sum(per.values())
    return _term(ctx, worst, math.sqrt(sum(v * v for v in per.values())), sources, missing)


def bias_term(ctx: Context, tr) -> dict:
    """Bias currents through the resistance each input sees (source resistance included)."""
    ad, transfers = tr
    discrete, internal = _split(ctx)
    ib, ios, use, sources, missing = [], [], [], [], []
    for i, o in discrete:
        b, c = o.model.ib, o.model.ios
        if b is None and c is None:
            if transfers[i].z_p or transfers[i].z_n:
                missing.append(o.name)
            continue
        use.append(transfers[i])
        ib.append(b.value if b is not None else None)
        ios.append(c.value if c is not None else None)
        sources += [_said(o.name, name, s, "A") for name, s in (("Ib", b), ("Ios", c)) if s is not None]
    t = offset.bias_term(ad, use, ib, ios)
    worst, rss = t.worst_rti_v, t.rss_rti_v
    parts = {o.ref: o for _, o in internal}
    for ref, o in parts.items():
        if ctx.rs is None or not any(ctx.rs):
            continue        # inputs driven straight from the ports: no resistance to flow through
        if o.model.ib is None:
            missing.append(ref)
            continue
        e = o.model.ib.value * (ctx.rs[0] + ctx.rs[1])
        if o.model.ios is not None:
            e = min(e, o.model.ib.value * abs(ctx.rs[0] - ctx.rs[1]) + o.model.ios.value / 2 * sum(ctx.rs))
        worst, rss = worst + e, math.hypot(rss, e)
        sources.append(_said(ref, "Ib", o.model.ib, "A"))
    if ctx.rs is not None:
        sources.append(f"source resistance {_fmt(ctx.rs[0], 'ohm')} / {_fmt(ctx.rs[1], 'ohm')} at +IN / -IN (netlist)")
    return _term(ctx, worst, rss, sources, missing)


def _opamp_noise(o, with_unknown_as=None):
    m = o.model
    if m.en is None and m.in_ is None:
        return with_unknown_as
    return noise.OpAmpNoise(en=m.en.value if m.en else 0.0, in_=m.in_.value if m.in_ else 0.0,
                            en_corner_hz=m.en_corner.value if m.en_corner else 0.0,
                            in_corner_hz=m.in_corner.value if m.in_corner else 0.0)


def _dynamics(sub: SubCircuit):
    dyn = small_signal.dynamics_from_models(sub)
    out = []
    for d, o in zip(dyn, sub.opamps):
        g = getattr(o.model, "gbw", None)
        out.append(small_signal.OpAmpDynamics(d.aol, g.value if g is not None else None, d.cmrr_db))
    return out


def noise_term(ctx: Context, notes: list[str]) -> dict | None:
    """Noise over the declared band at the top of the declared temperature range."""
    band = ctx.intent.band_hz
    if band is None:
        notes.append("error budget: no Band declared, so noise is not in it")
        return None
    t_c = ctx.intent.temp_range_c[1] if ctx.intent.temp_range_c else T_DEFAULT_C
    kelvin = t_c + noise.ZERO_CELSIUS
    sub = ctx.sub
    discrete, internal = _split(ctx)
    part_noise = [None if o.internal else _opamp_noise(o) for o in sub.opamps]
    if internal:            # the part's own en / in are input-referred: its internals are not
        from dataclasses import replace
        sub = replace(sub, resistors=[r for r in sub.resistors if not r.internal])
    try:
        if internal:
            r = _integrated_noise(ctx, sub, band, kelvin)
        else:
            r = noise.stage_noise(sub, band, kelvin, part_noise, _dynamics(sub))
    except ValueError as e:
        notes.append(f"error budget: noise not computed: {e}")
        return None
    miss_en = [o.name for _, o in discrete if o.model.en is None] + \
        sorted({o.ref for _, o in internal if o.model.en is None})
    in_gain2 = _in_gain2(ctx, sub, band, kelvin, internal)
    miss_in = [who for who in dict.fromkeys(o.ref if o.internal else o.name for o in sub.opamps
                                            if o.model.in_ is None) if in_gain2.get(who, 0.0) > 0]
    missing = list(dict.fromkeys(miss_en + miss_in))
    sources = [f"4kTR of every resistor at {t_c:g} degC ({'top of Temp Range' if ctx.intent.temp_range_c else 'no Temp Range declared'})",
               f"band {band[0]:g}..{band[1]:g} Hz (Band)"]
    for o in sub.opamps:
        for what, s, unit in (("en", o.model.en, "V/rtHz"), ("in", o.model.in_, "A/rtHz"),
                              ("en 1/f corner", o.model.en_corner, "Hz"), ("in 1/f corner", o.model.in_corner, "Hz")):
            if s is not None:
                item = _said(o.ref if o.internal else o.name, what, s, unit)
                if item not in sources:
                    sources.append(item)
    peak = r.rti_pp_v / 2.0
    t = _term(ctx, peak, peak, sources, missing)
    known = not missing
    t.update({"rti_rms_v": r.rti_rms_v if known else None, "rti_pp_v": r.rti_pp_v if known else None,
              "band_hz": list(band), "kelvin": kelvin, "crest_factor": r.crest_factor})
    if not known:
        t["known_rti_rms_v"] = r.rti_rms_v
    t["_en_gain2"] = _en_gain2(ctx, sub, band, kelvin, internal) if miss_en else 0.0
    t["_in_gain2"] = sum(in_gain2[w] for w in miss_in)
    t["_missing_en"], t["_missing_in"] = miss_en, miss_in
    t["_rti_v2"] = r.rti_rms_v ** 2
    return t


def _integrated_noise(ctx: Context, sub: SubCircuit, band, kelvin) -> noise.NoiseResult:
    """An integrated part: its en and in (input-referred) with the source resistances."""
    o = sub.opamps[0]
    m = o.model
    rs = ctx.rs or (0.0, 0.0)
    en = m.en.value if m.en else 0.0
    i_n = m.in_.value if m.in_ else 0.0
    p_en = noise.band_power(en, band[0], band[1], m.en_corner.value if m.en_corner else 0.0)
    p_in = noise.band_power(i_n, band[0], band[1], m.in_corner.value if m.in_corner else 0.0) * (rs[0] ** 2 + rs[1] ** 2)
    p_rs = noise.band_power(noise.johnson_density(rs[0] + rs[1], kelvin), band[0], band[1])
    rms = math.sqrt(p_en + p_in + p_rs)
    return noise.NoiseResult(band_hz=tuple(band), kelvin=kelvin, out_rms_v=rms * abs(ctx.ad),
                             rti_rms_v=rms, rti_pp_v=noise.CREST_FACTOR * rms)


def _en_gain2(ctx: Context, sub: SubCircuit, band, kelvin, internal) -> float:
    """Sum over the op-amps without en of |T_en / Ad|^2 (white): RTI power per V^2/Hz of en."""
    if internal:
        return 1.0
    unit = [noise.OpAmpNoise(en=1.0) if (not o.internal and o.model.en is None) else None for o in sub.opamps]
    r = noise.stage_noise(sub, band, kelvin, unit, _dynamics(sub))
    return sum(s.rti_v2 for s in r.sources if s.kind == "en") / noise.band_power(1.0, band[0], band[1])


def _in_gain2(ctx: Context, sub: SubCircuit, band, kelvin, internal) -> dict[str, float]:
    """Per op-amp (an integrated part: per reference), the RTI noise power per A^2/Hz of a
    white current noise into its inputs: 0 where no resistance turns it into a voltage."""
    if internal:
        rs = ctx.rs or (0.0, 0.0)
        return {o.ref: rs[0] ** 2 + rs[1] ** 2 for o in sub.opamps}
    unit = [noise.OpAmpNoise(in_=1.0) for _ in sub.opamps]
    r = noise.stage_noise(sub, band, kelvin, unit, _dynamics(sub))
    bw = noise.band_power(1.0, band[0], band[1])
    out = {o.name: 0.0 for o in sub.opamps}
    for s in r.sources:
        if s.kind == "in":
            out[s.name.rsplit(" ", 1)[0]] += s.rti_v2 / bw
    return out


def _part_gain_drift(sub: SubCircuit) -> dict:
    """Integrated parts whose part data states their gain drift: reference -> Sourced (1/K)."""
    return {o.ref: o.model.gain_drift for o in sub.opamps
            if o.internal and getattr(o.model, "gain_drift", None) is not None}


def drift_term(ctx: Context, tr, notes: list[str]) -> dict | None:
    """Resistor TCR as gain and CM-gain drift, and Vos drift, over the declared range."""
    rng = ctx.intent.temp_range_c
    if rng is None:
        notes.append("error budget: no Temp Range declared, so drift is not in it")
        return None
    sub = ctx.sub
    parts = _part_gain_drift(sub)
    # A part's stated gain drift covers its internal resistors: they stay fixed in the resistor
    # drift, so the external gain resistors drift against them by their own TCR alone.
    tcr = [(0.0, 0.0) if r.internal and r.name.split(".")[0] in parts
           else (r.tcr.value if r.tcr is not None else None) for r in sub.resistors]
    tracking = {r.match_group: r.tcr_tracking.value for r in sub.resistors
                if r.match_group and r.tcr_tracking is not None}
    d = drift.resistor_drift(sub, tcr, rng, tracking)
    cm_scale = (ctx.vcm_max or 0.0) / abs(ctx.ad) if ctx.ad else 0.0
    worst = d.gain_worst * (ctx.vd_max or 0.0) + d.acm_worst * cm_scale
    rss2 = (d.gain_rss * (ctx.vd_max or 0.0)) ** 2 + (d.acm_rss * cm_scale) ** 2
    ad, transfers = tr
    sources = [f"{rng[0]:g}..{rng[1]:g} degC from 25 degC (Temp Range)"]
    dt = max(abs(rng[0] - drift.T_REF_C), abs(rng[1] - drift.T_REF_C))
    for ref, s in parts.items():
        e = s.value * dt * (ctx.vd_max or 0.0)      # a gain change, referred to the input
        worst += e
        rss2 += e * e
        sources.append(f"{ref} gain drift {s.value * 1e6:g} ppm/K ({s.source}"
                       f"{': ' + s.detail if s.detail else ''}) for the part with its internal "
                       f"resistors; external gain resistors by their own TCR; drift of the part's "
                       f"internal CMRR not in the term (no part number for it)")
    sources += [_said(r.name, "TCR", r.tcr, "/K") for r in sub.resistors if r.tcr is not None]
    groups = {r.match_group: r.tcr_tracking for r in sub.resistors if r.match_group and r.tcr_tracking is not None}
    sources += [_said(g, "TCR tracking", s, "/K") for g, s in groups.items()]
    missing_vos, seen = [], set()
    for i, o in enumerate(sub.opamps):
        who = o.ref if o.internal else o.name      # an integrated part's drift is input-referred, once
        if who in seen:
            continue
        seen.add(who)
        s = getattr(o.model, "vos_drift", None)
        if s is None:
            missing_vos.append(who)
            continue
        e = s.value * dt * (1.0 if o.internal else abs(transfers[i].vos) / abs(ad))
        worst += e
        rss2 += e * e
        sources.append(_said(who, "Vos drift", s, "V/K"))
    internal = {r.name: r.name.split(".")[0] + " internal resistors" for r in sub.resistors if r.internal}
    unknown = list(dict.fromkeys(internal.get(n, n) for n in d.unknown))
    t = _term(ctx, worst, math.sqrt(rss2), sources, unknown + missing_vos)
    if ctx.vd_max is None and (d.gain_worst or d.gain_per_unknown or parts):
        notes.append("error budget: no Input Diff declared, so the gain drift has no input-referred value")
    t["_per_tcr_v"] = d.gain_per_unknown * (ctx.vd_max or 0.0) + d.acm_per_unknown * cm_scale
    t["_unknown_tcr"] = unknown
    t["_missing_vos_drift"] = missing_vos
    gains = {}
    for i, o in enumerate(sub.opamps):
        who = o.ref if o.internal else o.name
        if who in missing_vos and who not in gains:
            gains[who] = 1.0 if o.internal else abs(transfers[i].vos) / abs(ad)
    t["_vos_drift_gain"] = sum(gains.values()) * dt
    return t


# --------------------------------------------------------------------------------------------
# Putting the budget together

def _budget_rti(ctx: Context) -> float | None:
    """The declared error budget in input-referred volts (the tighter of the two forms)."""
    it = ctx.intent
    cands = []
    if it.error_budget_rti_v is not None:
        cands.append(it.error_budget_rti_v)
    if it.error_budget_fs is not None and ctx.vd_max:
        cands.append(it.error_budget_fs * ctx.vd_max)
    return min(cands) if cands else None


def _bound(quantity: str, value: float | None, unit: str, refs: list[str], because: str) -> dict:
    return {"references": refs, "quantity": quantity, "max": value, "unit": unit, "because": because}


_QUANTITY = {"offset": "vos", "bias": "ib"}
_UNIT = {"offset": "V", "bias": "A"}


def _bounds(ctx: Context, terms: dict, tr, notes: list[str]) -> None:
    """Give each requirement term the largest missing number that fits its share."""
    req = [k for k in TERMS if k in terms and terms[k]["requirement"]]
    if not req:
        return
    total = _budget_rti(ctx)
    if total is None:
        notes.append("error budget: no Error Budget declared (or no Input Diff for a % FS budget), "
                     "so the terms that lack part numbers carry no bound: " + ", ".join(req))
        return
    used = sum(t["rti_v"]["worst"] for k, t in terms.items()
               if k != "total" and not t.get("requirement") and (t.get("rti_v") or {}).get("worst") is not None)
    share = (total - used) / len(req)
    why = (f"an equal share ({_fmt(max(share, 0.0), 'V')} RTI) of the Error Budget "
           f"({_fmt(total, 'V')} RTI) left by the known terms ({_fmt(used, 'V')})")
    ad, transfers = tr
    for k in req:
        t = terms[k]
        room = share - t["known_rti_v"]["worst"]    # what the known part of the term already uses
        if k == "drift":
            _drift_bound(t, room, why)
            continue
        if k == "noise":
            _noise_bound(t, share, why)
            continue
        if room <= 0:
            t["bound"] = _bound(_QUANTITY[k], None, _UNIT[k], t["missing"],
                                why + ": nothing left for the missing numbers")
            continue
        if k == "offset":
            gain = sum(1.0 if o.internal else abs(transfers[i].vos) / abs(ad)
                       for i, o in enumerate(ctx.sub.opamps) if (o.ref if o.internal else o.name) in t["missing"])
            t["bound"] = _bound("vos", room / gain if gain else None, "V", t["missing"], why)
        elif k == "bias":
            z = sum((abs(transfers[i].z_p) + abs(transfers[i].z_n)) / abs(ad)
                    for i, o in enumerate(ctx.sub.opamps) if o.name in t["missing"])
            if ctx.rs is not None:
                z += sum(ctx.rs) * len({o.ref for o in ctx.sub.opamps if o.internal and o.ref in t["missing"]})
            t["bound"] = _bound("ib", room / z if z else None, "A", t["missing"], why)


def _noise_bound(t: dict, share: float, why: str) -> None:
    """The largest white en and / or in that keep the noise peak (3.3 x RMS) within the share;
    with both missing, what the known sources leave is split equally (in power) between them."""
    kinds = [(q, refs, g, unit) for q, refs, g, unit in (
        ("en", t["_missing_en"], t["_en_gain2"], "V/rtHz"),
        ("in", t["_missing_in"], t["_in_gain2"], "A/rtHz")) if refs]
    rms_room = share / (noise.CREST_FACTOR / 2.0)
    left = rms_room ** 2 - t["_rti_v2"] if share > 0 else 0.0
    band = tuple(t["band_hz"])
    bounds = []
    for q, refs, gain2, unit in kinds:
        value = noise.max_en_for(math.sqrt(t["_rti_v2"] + left / len(kinds)), t["_rti_v2"], gain2,
                                 band) if left > 0 else None
        text = why + (" (as 3.3 x RMS, white" + (", shared equally with the other missing density"
                                                 if len(kinds) > 1 else "") + ")")
        if value is None:
            text += ": nothing left for the missing numbers"
        bounds.append(_bound(q, value, unit, refs, text))
    t["bound"] = bounds[0] if len(bounds) == 1 else bounds


def _drift_bound(t: dict, room: float, why: str) -> None:
    """Split the drift room between unknown TCRs and unknown Vos drifts (equally)."""
    kinds = [k for k, on in (("tcr", t["_unknown_tcr"]), ("vos_drift", t["_missing_vos_drift"])) if on]
    each = room / len(kinds)
    if each <= 0:
        why += ": nothing left for the missing numbers"
    bounds = []
    if "tcr" in kinds:
        per = t["_per_tcr_v"]
        bounds.append(_bound("tcr", each / per if per and each > 0 else None, "1/K", t["_unknown_tcr"], why))
    if "vos_drift" in kinds:
        g = t["_vos_drift_gain"]
        bounds.append(_bound("vos_drift", each / g if g and each > 0 else None, "V/K",
                             t["_missing_vos_drift"], why))
    t["bound"] = bounds[0] if len(bounds) == 1 else bounds


def extend_budget(stage: Stage, ad: float, budget: dict, source=None,
                  transfers=None) -> tuple[dict, list[str]]:
    """Add the offset, bias, noise and drift terms to ``budget`` (term -> dict, from
    :func:`frontcheck.analysis.budget.error_budget`), the input-referred volts to every term,
    and the bounds of the terms that are requirements; recompute the total.

    Parameters
    ----------
    stage : Stage
    ad : float
        Nominal differential gain (ideal ports).
    budget : dict
        The existing terms ('gain', 'cmrr', 'ref', 'source', 'total').
    source : SourceLoading, optional
        The source resistance at the inputs (from the netlist), when known.
    transfers : optional
        The stage's DC transfers when solved already with others (:func:`transfers_many`).

    Returns
    -------
    (dict, list of str)
    """
    it = stage.intent
    notes: list[str] = []
    vd_max = max(abs(v) for v in it.input_diff) if it.input_diff else None
    vcm_max = max(abs(v) for v in it.input_cm) if it.input_cm else None
    ctx = Context(stage, ad, vd_max or None, vcm_max, _source_rs(source))
    out = {k: dict(v) for k, v in budget.items() if k != "total"}
    for v in out.values():
        w, r = v.get("worst"), v.get("rss")
        v["rti_v"] = {"worst": None if w is None or not vd_max else w / 100.0 * vd_max,
                      "rss": None if r is None or not vd_max else r / 100.0 * vd_max}
        v.setdefault("requirement", False)
    if not ad or not ctx.sub.opamps:
        out["total"] = total_of(out)
        return out, notes
    tr = transfers if transfers is not None else _transfers(ctx)
    out["offset"] = offset_term(ctx, tr)
    out["bias"] = bias_term(ctx, tr)
    for key, term in (("noise", noise_term(ctx, notes)), ("drift", drift_term(ctx, tr, notes))):
        if term is not None:
            out[key] = term
    _bounds(ctx, out, tr, notes)
    for v in out.values():
        for k in [k for k in v if k.startswith("_")]:
            del v[k]
    out["total"] = total_of(out)
    return out, notes
