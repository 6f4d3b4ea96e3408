"""``--format json``: one JSON document per run, the contract of docs/architecture.md sec. 4.

    {"schema": 1, "tool": {...}, "stages": [...], "findings": [...], ...}

Stage: id, kind, references, gain {nominal, worst_min, worst_max}, cmrr_db {nominal, worst,
statistical}, headroom {margin_v, ...}. Finding: rule, severity, stage, references, message,
location {file, line}. Extra keys only ever get added. JSON has no infinity: a CMRR that is
unbounded (resistors exactly matched as drawn) is written as null and named in
``cmrr_db.unbounded``.
"""

from __future__ import annotations

import json
import math

from ..result import as_json as requirement_json
from . import json_text
from .model import SAFETY_NOTICE, ProjectReport, Report, budget_rows, finite, natural

SCHEMA = 1


_num = finite


def _spread(s) -> dict:
    return {
        "nominal": _num(s.nominal),
        "worst_min": _num(s.worst_min),
        "worst_max": _num(s.worst_max),
        "p_low": _num(s.p_low),
        "p_high": _num(s.p_high),
        "statistical_method": s.method,
    }


def _cmrr(c) -> dict:
    out = {
        "nominal": _num(c.nominal_db),
        "worst": _num(c.worst_db),
        "statistical": _num(c.statistical_db),
        "percentile": _num(c.percentile),
        "statistical_method": c.statistical_method,
        "ad_convention": c.ad_convention,
        "contributors": {k: _num(v) for k, v in c.contributors.items()},
    }
    unbounded = [k for k, v in (("nominal", c.nominal_db), ("worst", c.worst_db),
                                ("statistical", c.statistical_db))
                 if v is not None and isinstance(v, (int, float)) and math.isinf(v) and v > 0]
    if unbounded:
        out["unbounded"] = unbounded
    return out


def _headroom(h) -> dict:
    return {
        "margin_v": _num(h.margin_v),
        "box": list(h.box) if h.box else None,
        "unknown": list(h.unknown),
        "checks": [
            {"opamp": c.opamp, "node": c.node, "net": c.net, "corner": list(c.corner),
             "voltage": _num(c.voltage), "low": _num(c.low), "high": _num(c.high),
             "margin_v": _num(c.margin_v)}
            for c in h.checks
        ],
        "region": [list(p) for p in h.region],
    }


def _source(s) -> dict | None:
    if s is None:
        return None
    return {"rs_p": _num(s.rs_p), "rs_n": _num(s.rs_n), "gain_error": _num(s.gain_error),
            "cmrr_db": _num(s.cmrr_db), "detail": s.detail}


def _filter(f) -> dict | None:
    if f is None:
        return None
    return {"nets": list(f.nets), "f_dm_hz": _num(f.f_dm_hz), "f_cm_hz": _num(f.f_cm_hz),
            "cm_to_dm": [{"hz": _num(hz), "ratio": _num(v)} for hz, v in sorted(f.cm_to_dm.items())],
            "parts": list(f.parts)}


def stage_json(p: ProjectReport, stage) -> dict:
    r = p.results.get(stage.id)
    it = stage.intent
    d = {
        "id": stage.id,
        "project": p.name,
        "project_path": p.path,
        "kind": stage.kind,
        "references": natural(stage.references),
        "amplifiers": list(stage.amplifiers),
        "roles": dict(stage.roles),
        "intent": {
            "target_gain": it.target_gain, "gain_tol": it.gain_tol,
            "min_cmrr_db": it.min_cmrr_db,
            "input_cm": list(it.input_cm) if it.input_cm else None,
            "input_diff": list(it.input_diff) if it.input_diff else None,
            "ref_voltage": it.ref_voltage, "notes": list(it.notes), "source": dict(it.source),
            "band_hz": list(it.band_hz) if it.band_hz else None,
            "temp_range_c": list(it.temp_range_c) if it.temp_range_c else None,
            "cmrr_at_hz": it.cmrr_at_hz, "error_budget_fs": it.error_budget_fs,
            "error_budget_rti_v": it.error_budget_rti_v,
        },
        "gain": None, "cmrr_db": None, "headroom": None, "opamp_requirements": [],
        "notes": list(stage.notes),
        "cautions": list(p.cautions.get(stage.id, [])),
    }
    if r is None:
        return d
    rows, total = budget_rows(r.error_budget)
    d.update({
        "gain": _spread(r.gain),
        "cmrr_db": _cmrr(r.cmrr),
        "headroom": _headroom(r.headroom),
        "gain_cm": _num(r.gain_cm),
        "gain_ref": _num(r.gain_ref),
        "ref": None if r.ref is None else {
            "net": r.ref.net, "kind": r.ref.kind, "thevenin_ohms": _num(r.ref.thevenin_ohms),
            "voltage": _num(r.ref.voltage), "driver": r.ref.driver,
            "cmrr_db": _num(r.ref.cmrr_db), "gain_error": _num(r.ref.gain_error)},
        "bias": [{"pin": b.pin, "net": b.net, "status": b.status, "reaches": b.reaches}
                 for b in r.bias],
        "error_budget": {
            "terms": {t: _term(r.error_budget[t], w, s) for t, w, s in rows},
            "total": None if total is None else _term(r.error_budget.get("total", {}), *total),
            "unit": "percent of full-scale output",
        },
        "assumptions": list(r.assumptions),
        "result_notes": list(r.notes),
        "source": _source(getattr(r, "source", None)),
        "input_filter": _filter(getattr(r, "input_filter", None)),
        "varied_parts": list(r.varied),
        "opamp_requirements": [requirement_json(q) for q in r.requirements],
        "opamp_numbers": [
            {"opamp": b.opamp, "reference": b.reference, "model": b.model, "ideal": list(b.ideal),
             "numbers": {k: {"value": _num(v.value), "source": v.source, "detail": v.detail}
                         for k, v in b.numbers.items()}} for b in r.opamps],
        "cmrr_against_frequency": getattr(r, "cmrr_sweep", None),
    })
    if getattr(r, "differential_output", None):     # only differential-output stages have it
        d["differential_output"] = _clean(dict(r.differential_output))
    if getattr(r, "composite", None):               # only composite front ends have it
        d["composite"] = _clean(dict(r.composite))
    return d


def _term(term: dict, worst, rss) -> dict:
    """One budget term as the JSON contract gives it: % FS worst and RSS, volts referred to the
    input, and for a requirement its bound; the rest of what the analysis says, as it says it."""
    out = {k: v for k, v in term.items() if not k.startswith("_")}
    out["worst"], out["rss"] = worst, rss
    return _clean(out)


def _clean(x):
    """Non-finite numbers become null (JSON has no infinity)."""
    if isinstance(x, dict):
        return {k: v if type(v) in _KEPT or (type(v) is float and math.isfinite(v)) else _clean(v)
                for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [v if type(v) in _KEPT or (type(v) is float and math.isfinite(v)) else _clean(v)
                for v in x]
    if isinstance(x, float):
        return finite(x)
    return x


_KEPT = frozenset({str, int, bool, type(None)})        # values _clean gives back as they are


def finding_json(p: ProjectReport, i: int, where: dict | None = None) -> dict:
    """Finding ``i`` of ``p``; ``where``: the relative path of each file already asked for
    (one dict per project, kept by the caller)."""
    f = p.findings[i]
    d = f.to_json()
    if where is None:
        file = p.relpath(f.file)
    elif f.file in where:
        file = where[f.file]
    else:
        file = where[f.file] = p.relpath(f.file)
    d["location"] = {"file": file, "line": f.line}
    d["project"] = p.name
    d["project_path"] = p.path
    d["fingerprint"] = p.fingerprint(i)
    d["status"] = p.status(i)
    d["data"] = _data_json(f.data)
    return d


class _Unusual(Exception):
    """A value _plain leaves to the JSON round trip."""


_AS_IS = frozenset({str, int, bool, type(None)})
_STR_KEYS = frozenset({str})
_BIG_INT = 10 ** 4000         # the round trip refuses ints of more than 4,300 digits


def _data_json(data):
    """A finding's data as its JSON text reads back: ``json.dumps(data, default=str,
    allow_nan=True)`` read by ``json.loads`` with infinities and NaN as null. Data of plain
    types (dict with str keys, list, tuple, str, int, float, bool, None) is copied directly;
    anything else takes the round trip itself."""
    try:
        return _plain(data)
    except (_Unusual, RecursionError):
        return json.loads(json.dumps(data, default=str, allow_nan=True),
                          parse_constant=lambda c: None)


def _plain(x):
    kind = type(x)
    if kind is float:
        return x if math.isfinite(x) else None
    if kind in _AS_IS:
        if kind is int and not -_BIG_INT < x < _BIG_INT:
            raise _Unusual
        return x
    if kind is dict:
        if not _STR_KEYS.issuperset(map(type, x)):
            raise _Unusual
        return {k: _plain(v) for k, v in x.items()}
    if kind is list or kind is tuple:
        return [_plain(v) for v in x]
    raise _Unusual


def to_dict(report: Report) -> dict:
    failing = {id(f) for _, f in report.failing()}
    findings = []
    for p in report.projects:
        where: dict = {}
        for i, f in enumerate(p.findings):
            d = finding_json(p, i, where)
            d["fails"] = id(f) in failing
            findings.append(d)
    doc = {
        "schema": SCHEMA,
        "tool": dict(report.tool, fail_on=report.fail_on),
        "projects": [
            {"name": p.name, "path": p.path, "profile": p.profile, "error": p.error, "notes": list(p.notes),
             "near_misses": list(p.near_misses), "unsupported": list(p.unsupported),
             "amplifiers": [dict(a) for a in p.amplifiers],
             "cautions": {(k or "(design)"): list(v) for k, v in p.cautions.items() if v}}
            for p in report.projects
        ],
        "stages": [stage_json(p, s) for p in report.projects for s in p.stages],
        "findings": findings,
        "summary": {"counts": report.counts(), "failing": len(failing),
                    "exit_status": report.exit_status(), "coverage": report.coverage()},
    }
    if report.has_caution:
        doc["safety_notice"] = SAFETY_NOTICE
    return doc


def render(report: Report) -> str:
    return json_text.dumps(to_dict(report)) + "\n"     # json.dumps(indent=2), linear and faster
