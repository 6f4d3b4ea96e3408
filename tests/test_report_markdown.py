"""Markdown report for pull-request comments."""

from __future__ import annotations

from frontcheck.report import markdown
from test_report_handmade import check_golden, make_report


def test_markdown_verdict_table_and_findings():
    md = markdown.render(make_report())
    first = md.splitlines()[0]
    assert "2 finding(s)" in first and "`error`" in first
    assert "| Stage | Kind | References |" in md
    assert "- **error** `ref-impedance`" in md
    assert "~~warning `gain-error`" in md           # waived: struck through, still listed
    assert "> **Safety.**" in md
    # table rows have as many cells as the header
    rows = [l for l in md.splitlines() if l.startswith("| `")]
    assert rows and all(l.count(" | ") == 6 for l in rows)


def test_markdown_golden():
    check_golden("handmade.md", markdown.render(make_report()))
