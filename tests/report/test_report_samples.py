"""Golden files of every report format for a sample project run through the whole pipeline.

shunt-monitor (a difference amplifier dividing a 0..48 V shunt down to a 5 V op-amp) has the
three findings its README expects: ratio-mismatch, cmrr-budget and headroom. Its reports change
only when the reading, the analysis, the rules' wording or a reporter changes. When one of
those changes on purpose, regenerate with ``FRONTCHECK_UPDATE_GOLDEN=1 python -m pytest
tests/test_report_samples.py`` and review the diff: every number in it is a result users sign
boards off with.
"""

from __future__ import annotations

import json
import os

import pytest

from conftest import REPO
from frontcheck.pipeline import RunOptions, run
from frontcheck.report import render
from test_report_handmade import check_golden

SAMPLE = "sample_projects/shunt-monitor"


@pytest.fixture(scope="module")
def report():
    assert (REPO / SAMPLE).is_dir(), "sample projects ship with the repository"
    cwd = os.getcwd()
    os.chdir(REPO)
    try:
        rep = run([SAMPLE], RunOptions(samples=2000, seed=1))
    finally:
        os.chdir(cwd)
    rep.projects[0].root = str(REPO)      # paths relative to the checkout, git or not
    return rep


@pytest.mark.parametrize("fmt,ext", [("text", "txt"), ("json", "json"), ("sarif", "sarif"),
                                     ("markdown", "md"), ("html", "html")])
def test_sample_golden(report, fmt, ext):
    check_golden(f"shunt-monitor.{ext}", render(report, fmt))


def test_sample_report_says_what_its_readme_expects(report):
    doc = json.loads(render(report, "json"))
    assert report.exit_status() == 1
    assert [s["kind"] for s in doc["stages"]] == ["difference"]
    st = doc["stages"][0]
    # 48 V common mode on a 5 V op-amp: the headroom margin is negative
    assert st["headroom"]["margin_v"] < 0
    assert st["error_budget"]["total"] is not None
    loud = {f["rule"] for f in doc["findings"] if f["severity"] in ("warning", "error")}
    assert loud == {"ratio-mismatch", "cmrr-budget", "headroom"}
    assert all(f["location"]["file"] == "sample_projects/shunt-monitor/shunt-monitor.kicad_sch"
               for f in doc["findings"])
