"""Op-amp requirements in every report format: the JSON contract (``opamp_requirements``, one
entry per op-amp and quantity with min and/or max, unit and reason), one terminal line per
op-amp, a table in Markdown and HTML.

The numbers themselves are checked against hand calculations and ngspice in
tests/test_analysis_requirements.py and tests/test_analysis_headroom_corners.py; here each
report must carry what the analysis found, for every op-amp of the stage. The case is the
ecg-frontend sample (three op-amps, a declared target gain, Min CMRR and input box).
"""

from __future__ import annotations

import html
import json

import pytest

from conftest import REPO
from frontcheck.pipeline import RunOptions, run
from frontcheck.report import render
from frontcheck.result import bound_text, summary_lines

QUANTITIES = {"cmrr_db", "aol", "input_low_v", "input_high_v", "output_low_v", "output_high_v"}
UNITS = {"cmrr_db": "dB", "aol": "V/V"}


@pytest.fixture(scope="module")
def report():
    rep = run([str(REPO / "sample_projects" / "ecg-frontend")], RunOptions(samples=0, seed=1))
    p = rep.projects[0]
    (stage,) = p.stages
    return rep, stage, p.results[stage.id]


def test_json_contract(report):
    rep, stage, res = report
    (sj,) = json.loads(render(rep, "json"))["stages"]
    reqs = sj["opamp_requirements"]
    # every quantity for every op-amp of the stage: the sample declares gain, CMRR and a box
    assert {(o, q["quantity"]) for q in reqs for o in q["opamps"]} == {
        (o.name, k) for o in stage.circuit.opamps for k in QUANTITIES}
    for q in reqs:
        assert {"references", "quantity", "min", "max", "unit", "because"} <= set(q)
        assert q["quantity"] in QUANTITIES and q["because"]
        assert q["min"] is not None or q["max"] is not None
        assert q["unit"] == UNITS.get(q["quantity"], "V")
        assert set(q["references"]) <= set(stage.references)
    # the same numbers the analysis computed, in the same order
    assert [(q["quantity"], q["min"], q["max"]) for q in reqs] == [
        (r.quantity, r.min, r.max) for r in res.requirements]
    # class numbers are checked against their requirement and named with their source
    for q in reqs:
        if q["quantity"] in ("cmrr_db", "aol"):
            assert q["given"]["source"] == "class" and q["met"] is True


def test_one_terminal_line_per_opamp(report):
    rep, stage, res = report
    text = render(rep, "text")
    lines = summary_lines(res.requirements)
    assert [ln.split()[0] for ln in lines] == [o.name for o in stage.circuit.opamps]
    for ln in lines:
        assert " needs CMRR >= " in ln and "inputs" in ln and "output" in ln
        assert " ".join(ln.split()) in " ".join(text.split())


@pytest.mark.parametrize("fmt", ["markdown", "html"])
def test_table_in_markdown_and_html(report, fmt):
    rep, stage, res = report
    out = render(rep, fmt)
    if fmt == "html":
        out = html.unescape(out)
    else:
        out = out.replace("&lt;", "<").replace("&gt;", ">")
    rows = [ln for ln in out.splitlines() if ln.startswith("| U")] if fmt == "markdown" else None
    for r in res.requirements:
        assert bound_text(r) in out and r.because in out
    if rows is not None:
        assert sum(1 for ln in rows if ">= " in ln or "<= " in ln) >= len(res.requirements)
