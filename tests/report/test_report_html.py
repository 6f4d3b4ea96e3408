"""HTML report: one self-contained file with the plots drawn by frontcheck itself."""

from __future__ import annotations

import re

from frontcheck.report import html
from test_report_handmade import check_golden, make_report


def test_html_is_self_contained():
    page = html.render(make_report())
    assert "<script" not in page.lower()
    assert not re.search(r"(?:https?:)?//[a-z0-9.-]+\.[a-z]{2,}", page, re.I)
    assert "@import" not in page and "url(" not in page
    assert page.count("<svg") == 8      # one region plot, two gain and two CMRR histograms, two
    # error-budget bar charts (the hand-made results carry no CMRR sweep), one stage diagram


def test_html_plots_the_region_and_the_declared_box():
    report = make_report()
    page = html.render(report)
    stage = report.projects[0].stages[1]
    result = report.projects[0].results[stage.id]
    svg = html.region_svg(stage, result)
    assert 'class="region"' in svg and html.REGION_FILL in svg
    assert 'class="input-box"' in svg
    # the box corners are the output voltages at the four input corners: Vout = 2.5 V +- 2 V
    # (docs/engineering.md section 4: G = 100, Vd = +-20 mV), so the box spans 0.5 .. 4.5 V
    box = [pt for _, pt in html._box_polygon(stage, result)]
    assert sorted({round(v, 9) for _, v in box}) == [0.5, 4.5]
    assert sorted({vcm for vcm, _ in box}) == [1.0, 3.0]
    # the broken corners (first-stage outputs at 0 V) are marked
    assert svg.count('class="broken"') == 2
    assert svg in page


def test_html_lists_findings_budget_and_safety():
    page = html.render(make_report())
    for needle in ("ref-impedance", "Fix: Drive REF", "Error budget", "RG tolerance",
                   "waived: trimmed in firmware", "electrical safety", "IEC 60601-1"):
        assert needle in page, needle


def test_html_golden():
    check_golden("handmade.html", html.render(make_report()))


def _summary_of(page: str) -> str:
    start = page.index('<section class="summary"')
    return page[start:page.index("</section>", start)]


def test_summary_leads_the_page():
    page = html.render(make_report())
    summary = _summary_of(page)
    # the summary comes before the first stage section and the stage table
    assert page.index('<section class="summary"') < page.index('<table class="summary">')
    assert page.index('<section class="summary"') < page.index('<section id="stage-')
    # verdict: two unwaived errors at the fail level 'error' (the waived warning never counts)
    assert "Fail: 2 finding(s) at or above" in summary
    # counts per severity leave out the waived finding only: 2 errors, 1 warning, 1 info
    assert re.search(r">2 error\(s\)<", summary) and re.search(r">1 warning\(s\)<", summary)
    assert re.search(r">1 info<", summary)
    # both stages listed with the worst severity of their new findings
    assert summary.count("<li>") >= 2 and "difference amplifier" in summary
    # read first: new errors before the baselined warning, the waived finding never
    items = re.findall(r"<li><span class=\"sev sev-(\w+)\">", summary)
    assert items[:2] == ["error", "error"]
    assert "trimmed in firmware" not in summary
    # what was not seen: the near miss is counted; the safety note names the marked stage
    assert "1 near miss(es)" in summary
    assert "electrical safety" in summary and "U2A/U2B/U2C" in summary


def test_summary_of_a_clean_run_passes():
    report = make_report()
    for f in report.projects[0].findings:
        f.waived = "accepted"
    summary = _summary_of(html.render(report))
    assert "Pass: nothing at or above" in summary and "No findings." in summary
    assert 'sev-zero">0 error(s)' in summary


def test_summary_says_a_repeated_fact_once():
    # sample_projects/strain-logger: one channel sheet placed four times, RG missing the gain
    # target in every channel (its README): one summary line naming the other three stages
    from conftest import REPO
    from frontcheck.pipeline import RunOptions, run
    report = run([str(REPO / "sample_projects" / "strain-logger")], RunOptions(samples=0, seed=1))
    summary = _summary_of(html.render(report))
    items = re.findall(r"<li><span class=\"sev sev-\w+\">.*?</li>", summary)
    gain = [i for i in items if "gain-error" in i]
    assert len(gain) == 1 and "the same in" in gain[0]
    assert all(f">{u}</a>" in gain[0] for u in ("U101", "U201", "U301", "U401"))


def test_region_caption_promises_the_box_only_when_drawn():
    report = make_report()
    stage = report.projects[0].stages[1]
    result = report.projects[0].results[stage.id]
    assert "dashed: declared inputs" in html.render(report)
    # keep one corner check only: the box cannot be drawn, and the caption says so
    result.headroom.checks = result.headroom.checks[:1]
    assert html._box_polygon(stage, result) == []
    page = html.render(report)
    assert "dashed: declared inputs" not in page
    assert "their box is not drawn" in page
