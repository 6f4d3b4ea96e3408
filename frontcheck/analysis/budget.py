"""Per-stage error budget, in percent of full-scale output.

Full scale is the nominal differential gain times the largest declared differential input.
Terms (each {'worst': %, 'rss': %}):

* 'gain'   - gain error from resistor tolerances and finite open-loop gain, against the target
             gain when one is declared, else against the nominal gain. 'worst' from the exact
             tolerance corners, 'rss' from the Monte Carlo percentile.
* 'cmrr'   - output error Acm * |Vcm|max at the declared common mode (resistors and op-amps);
             'worst' from the worst-case |Acm|, 'rss' from the Monte Carlo percentile CMRR.
* 'ref'    - the REF source resistance: its gain error plus its common-mode error (fixed, so
             'rss' = 'worst').
* 'source' - the resistance of the source driving the inputs, likewise.
* 'total'  - linear sum of the 'worst' column and root-sum-square of the 'rss' column.

Terms needing a declared common-mode range or differential range are left out when that range
is not declared (the caller notes it).
"""

from __future__ import annotations

import math

from frontcheck.analysis.result import CmrrResult, RefSource, SourceLoading, Spread
from frontcheck.circuit import Intent


def _pct(x: float) -> float:
    return 100.0 * x


def _acm_of(ad: float, db: float | None) -> float | None:
    if db is None:
        return None
    return 0.0 if math.isinf(db) else abs(ad) / 10.0 ** (db / 20.0)


def error_budget(gain: Spread, cmrr: CmrrResult, intent: Intent, ref: RefSource | None = None,
                 source: SourceLoading | None = None) -> tuple[dict[str, dict[str, float]], list[str]]:
    """Error budget of one stage.

    Parameters
    ----------
    gain, cmrr : Spread, CmrrResult
        From :func:`frontcheck.analysis.tolerance.analyse_tolerance` with ideal ports (the REF
        and source terms are budgeted separately).
    intent : Intent
        Declared ranges and target gain.
    ref, source : optional
        REF source and input source loading with their CMRR and gain-error costs.

    Returns
    -------
    (dict, list of str)
        The budget and notes on terms left out.

    References
    ----------
    Worst case as the linear sum and statistical total as the root-sum-square of independent
    error terms [practice]; CMRR-to-output error Acm * Vcm from the definition CMRR = Ad/Acm
    (Sedra & Smith, *Microelectronic Circuits*, 6th ed., sec. 2.7).
    """
    out, notes = _terms(gain, cmrr, intent, ref, source)
    if out:
        out["total"] = total_of(out)
    return out, notes


def _terms(gain: Spread, cmrr: CmrrResult, intent: Intent, ref: RefSource | None,
           source: SourceLoading | None) -> tuple[dict[str, dict[str, float]], list[str]]:
    """The terms of :func:`error_budget`, without the total."""
    notes: list[str] = []
    out: dict[str, dict[str, float]] = {}
    ad = gain.nominal
    target = intent.target_gain if intent.target_gain else ad
    if not target:
        return out, ["no differential gain: error budget not computed"]
    ws = [v for v in (gain.worst_min, gain.worst_max) if v is not None] or [ad]
    worst = max(abs(v / target - 1.0) for v in ws)
    ps = [v for v in (gain.p_low, gain.p_high) if v is not None]
    rss = max(abs(v / target - 1.0) for v in ps) if ps else worst
    out["gain"] = {"worst": _pct(worst), "rss": _pct(rss)}

    cm_scale = None
    if intent.input_cm and intent.input_diff:
        vd = max(abs(v) for v in intent.input_diff)
        vcm = max(abs(v) for v in intent.input_cm)
        if vd > 0:
            cm_scale = vcm / (abs(ad) * vd)
    if cm_scale is None:
        notes.append("error budget: no declared common-mode and differential range, "
                     "so the CMRR terms are not in it")
    else:
        w = _acm_of(ad, cmrr.worst_db)
        s = _acm_of(ad, cmrr.statistical_db)
        out["cmrr"] = {"worst": _pct(w * cm_scale), "rss": _pct((s if s is not None else w) * cm_scale)}

    if source is not None and (source.rs_p is None or source.rs_n is None):
        why = "; ".join(d for d in source.detail.split("; ") if "unknown" in d) or source.detail
        notes.append("error budget: the source resistance at the inputs is unknown"
                     + (f" ({why})" if why else "") + ", so the source term is not in it")
    for key, cost in (("ref", ref), ("source", source)):
        if cost is None or cost.gain_error is None:
            continue
        e = abs(cost.gain_error)
        if cm_scale is not None and cost.cmrr_db is not None:
            # Its CMRR is relative to the gain of the circuit with that resistance in it.
            e += _acm_of(ad * (1.0 + cost.gain_error), cost.cmrr_db) * cm_scale
        if e > 1e-9:     # below 1 ppb of full scale: round-off of the solve, not a term
            out[key] = {"worst": _pct(e), "rss": _pct(e)}
    return out, notes


def total_of(terms: dict[str, dict]) -> dict:
    """The budget's total: the linear sum of the terms' worst cases and the root-sum-square of
    their statistical values, in % FS and in volts referred to the input (the usual way of
    stacking independent error terms, common practice), and which terms are requirements.
    A term without a value (a requirement) adds nothing; a column with no value is None."""
    ws, rs, rw, rr = [], [], [], []
    rti = requirement = False
    for k, v in terms.items():
        if k == "total" or not isinstance(v, dict):
            continue
        if (x := v.get("worst")) is not None:
            ws.append(abs(x))
        if (x := v.get("rss")) is not None:
            rs.append(x)
        t = v.get("rti_v") or {}
        if (x := t.get("worst")) is not None:
            rw.append(abs(x))
        if (x := t.get("rss")) is not None:
            rr.append(x)
        rti = rti or "rti_v" in v
        requirement = requirement or "requirement" in v
    out = {"worst": sum(ws) if ws else None, "rss": math.hypot(*rs) if rs else None}
    if rti:
        out["rti_v"] = {"worst": sum(rw) if rw else None, "rss": math.hypot(*rr) if rr else None}
    if requirement:
        out["requirements"] = [k for k, v in terms.items() if k != "total" and v.get("requirement")]
    return out


def full_budget(stage, gain: Spread, cmrr: CmrrResult, ref: RefSource | None = None,
                source: SourceLoading | None = None,
                transfers=None) -> tuple[dict[str, dict], list[str]]:
    """:func:`error_budget` with the offset, bias, noise and drift terms of
    :mod:`frontcheck.analysis.budget_terms` added, each term also in volts referred to the
    input, and the terms that lack part numbers stated as requirements (``transfers``: the
    stage's DC transfers when solved with others, budget_terms.transfers_many)."""
    from frontcheck.analysis.budget_terms import extend_budget

    # extend_budget totals the terms once they are all there
    out, notes = _terms(gain, cmrr, stage.intent, ref, source)
    if not out:
        return out, notes
    more, more_notes = extend_budget(stage, gain.nominal, out, source, transfers)
    return more, notes + more_notes
