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


def test_markdown_stays_within_a_comment_limit():
    import copy
    report = make_report()
    p = report.projects[0]
    many = [copy.deepcopy(f) for _ in range(200) for f in p.findings]
    p.findings = many
    p.fingerprints = [f"fp{i}" for i in range(len(many))]
    full = markdown.render(report, limit=10**9)
    assert len(full) > 20000
    cut = markdown.render(report, limit=20000)
    assert len(cut) <= 20000
    assert "Report cut to fit a comment" in cut
    assert cut.splitlines()[0] == full.splitlines()[0]      # the verdict survives
    # dropping the folded details alone is enough when they are what overflows
    small = make_report()
    whole = markdown.render(small)
    no_details = markdown.render(small, limit=len(whole) - 1)
    assert "<details>" in whole and "<details>" not in no_details
    assert "Report cut" not in no_details
