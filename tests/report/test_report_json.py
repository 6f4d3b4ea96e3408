"""JSON report: the docs/architecture.md contract and a golden file of the hand-made report."""

from __future__ import annotations

import json
import math

import pytest

from frontcheck.report import json_report
from test_report_handmade import check_golden, make_report


def test_json_contract_keys():
    doc = json.loads(json_report.render(make_report()))
    assert doc["schema"] == 1
    assert doc["tool"]["name"] == "frontcheck"
    for st in doc["stages"]:
        assert st["kind"] in ("difference", "three-opamp", "two-opamp", "integrated-inamp",
                              "integrated-diffamp")
        assert set(st["gain"]) >= {"nominal", "worst_min", "worst_max"}
        assert set(st["cmrr_db"]) >= {"nominal", "worst", "statistical"}
        assert "margin_v" in st["headroom"]
        assert isinstance(st["references"], list)
    for f in doc["findings"]:
        assert set(f) >= {"rule", "severity", "stage", "references", "message", "location"}
        assert set(f["location"]) == {"file", "line"}


def test_json_carries_analysis_numbers_unchanged():
    # Reporters never compute: every number is the one analysis produced.
    report = make_report()
    doc = json.loads(json_report.render(report))
    p = report.projects[0]
    for st in doc["stages"]:
        r = p.results[st["id"]]
        assert st["gain"]["nominal"] == r.gain.nominal
        assert st["gain"]["worst_min"] == r.gain.worst_min
        assert st["headroom"]["margin_v"] == r.headroom.margin_v
        if math.isinf(r.cmrr.nominal_db):
            assert st["cmrr_db"]["nominal"] is None and "nominal" in st["cmrr_db"]["unbounded"]
        else:
            assert st["cmrr_db"]["nominal"] == r.cmrr.nominal_db


def test_json_paths_are_relative_to_the_repository_root():
    doc = json.loads(json_report.render(make_report()))
    files = {f["location"]["file"] for f in doc["findings"]}
    assert files == {"boards/frontend/frontend.kicad_sch", "boards/frontend/inamp.kicad_sch"}


def test_json_status_and_safety_notice():
    doc = json.loads(json_report.render(make_report()))
    status = {f["rule"]: f["status"] for f in doc["findings"]}
    assert status["gain-error"] == "waived"
    assert status["bias-return"] == "baseline"
    assert status["ref-impedance"] == "new"
    # failing = new and at or above 'error': ref-impedance and headroom
    assert sorted(f["rule"] for f in doc["findings"] if f["fails"]) == ["headroom", "ref-impedance"]
    assert doc["summary"]["exit_status"] == 1
    assert "electrical safety" in doc["safety_notice"]


def test_json_golden():
    check_golden("handmade.json", json_report.render(make_report()))


# Whatever numbers analysis hands over (NaN, infinities, huge or tiny values), every format
# renders and the JSON stays strict JSON (no NaN/Infinity tokens, which JSON does not allow).
from hypothesis import given, settings, strategies as st  # noqa: E402

_any = st.one_of(st.none(), st.floats(allow_nan=True, allow_infinity=True))


@pytest.mark.filterwarnings("error::RuntimeWarning")
@settings(max_examples=60, deadline=None)
@given(nom=st.floats(allow_nan=True, allow_infinity=True), lo=_any, hi=_any, cm=_any,
       worst=st.floats(allow_nan=True, allow_infinity=True), stat=_any, margin=_any,
       text=st.text(max_size=40))
def test_any_numbers_render_in_every_format(nom, lo, hi, cm, worst, stat, margin, text):
    from frontcheck.report import render
    report = make_report()
    p = report.projects[0]
    r = p.results["U1"]
    r.gain.nominal, r.gain.worst_min, r.gain.worst_max = nom, lo, hi
    r.cmrr.nominal_db, r.cmrr.worst_db, r.cmrr.statistical_db = cm if cm is not None else 0.0, worst, stat
    r.headroom.margin_v = margin
    r.error_budget = {"gain": {"worst": nom, "rss": worst}}
    p.findings[0].message = text
    p.findings[0].data = {"x": nom, "y": [worst, stat]}
    doc = json.loads(render(report, "json"), parse_constant=lambda c: pytest.fail(c))
    assert doc["stages"][0]["gain"]["nominal"] == (nom if math.isfinite(nom) else None)
    for fmt in ("text", "sarif", "markdown", "html"):
        assert render(report, fmt)
