"""Small things a reader notices: SARIF sentences, one safety box in HTML, thinned histograms."""

from __future__ import annotations

import json
import re

from frontcheck.report import html, sarif
from test_report_handmade import make_report


def test_sarif_message_and_fix_read_as_sentences():
    rep = make_report()
    rep.projects[0].findings[0].message = "REF of U1 is driven by a divider"     # no full stop
    doc = json.loads(sarif.render(rep))
    texts = [r["message"]["text"] for r in doc["runs"][0]["results"]]
    assert texts[0].startswith("REF of U1 is driven by a divider. Fix: ")
    for t in texts:
        assert not re.search(r"[^.!?] (Fix|Note): ", t), t


def test_html_safety_notice_once():
    page = html.render(make_report())
    assert page.count("It does not check electrical safety") == 1
    assert "Safety note applies" in page        # the marked stage still says so


def test_html_histograms_say_they_are_thinned():
    rep = make_report()
    rep.tool["samples"] = 20000
    page = html.render(rep)
    assert "n = 400 of 20,000 samples (thinned)" in page
    rep.tool["samples"] = 400
    assert "(thinned)" not in html.render(rep)


def test_readme_names_netlist_and_has_a_working_pre_commit_snippet():
    from conftest import REPO

    readme = (REPO / "README.md").read_text(encoding="utf-8")
    assert "frontcheck netlist PATH" in readme
    snippet = readme.split("```yaml", 1)[1].split("```", 1)[0]
    assert "<" not in snippet and "repo: local" in snippet
    hook = (REPO / ".pre-commit-hooks.yaml").read_text(encoding="utf-8")
    for key in ("entry", "files"):
        ours = re.search(rf"{key}: (.*)", hook).group(1).strip()
        theirs = re.search(rf"{key}: (.*)", snippet).group(1).strip()
        assert ours == theirs, key          # the snippet runs what the published hook runs
