"""The first screen of the HTML report: verdict, counts, stages found, the findings to read
first, what was checked and what could not be seen, and the safety note where a stage looks
patient-connected. Everything below it on the page is detail.

Only presentation: counts, ranking and coverage come from frontcheck.report.model.
"""

from __future__ import annotations

import html

from .model import KIND_LABELS, SAFETY_NOTICE, ProjectReport, Report, same_fact, severity_rank
from .safe_text import visible

READ_FIRST = 5          # findings named in the summary, one line each


def esc(x) -> str:
    return html.escape(visible(x), quote=True)


def anchor(p: ProjectReport, stage_id: str) -> str:
    return "stage-" + "".join(c if c.isalnum() else "-" for c in f"{p.name}-{stage_id}")


def verdict(report: Report) -> str:
    failing = len(report.failing())
    if report.exit_status() == 2:
        return '<span class="verdict fail">A project could not be read</span>'
    if failing:
        return (f'<span class="verdict fail">Fail: {failing} finding(s) at or above '
                f'&ldquo;{esc(report.fail_on)}&rdquo;</span>')
    return (f'<span class="verdict pass">Pass: nothing at or above '
            f'&ldquo;{esc(report.fail_on)}&rdquo;</span>')


def _counts(report: Report) -> str:
    c = report.counts()
    words = (("error", "error(s)"), ("warning", "warning(s)"), ("info", "info"))
    # a zero is written quietly: only counts that mean something carry a severity colour
    return '<span class="counts">' + " ".join(
        f'<span class="sev sev-{k if c.get(k, 0) else "zero"}">{c.get(k, 0)} {w}</span>'
        for k, w in words) + "</span>"


def worst_severity(p: ProjectReport, stage_id: str, idx: list[int] | None = None) -> str | None:
    """The highest severity among a stage's findings that are neither waived nor baselined
    (``idx``: the indices of its findings when the caller has them at hand)."""
    if idx is None:
        idx = [i for i, _ in p.findings_of(stage_id)]
    sev = [p.findings[i].severity for i in idx if p.status(i) == "new"]
    return max(sev, key=severity_rank) if sev else None


def _stage_list(report: Report) -> str:
    items = []
    for p in report.projects:
        prefix = f"{esc(p.name)}: " if len(report.projects) > 1 else ""
        if p.error:
            items.append(f"<li>{prefix}could not be read</li>")
            continue
        if not p.stages:
            items.append(f"<li>{prefix}no difference or instrumentation amplifier stage "
                         "recognised</li>")
        by_stage = p.findings_by_stage()
        for s in p.stages:
            worst = worst_severity(p, s.id, by_stage.get(s.id, []))
            mark = (f'<span class="sev sev-{esc(worst)}">{esc(worst)}</span>' if worst
                    else '<span class="sev sev-none">clean</span>')
            items.append(f'<li>{prefix}<a href="#{esc(anchor(p, s.id))}"><code>{esc(s.id)}</code>'
                         f'</a> {esc(KIND_LABELS.get(s.kind, s.kind))} {mark}</li>')
    return "<ul>" + "".join(items) + "</ul>"


def _unprefixed(f) -> str:
    """The message without its opening 'difference stage U1A: ' where the line already links
    the stage. Never cut otherwise: a shortened message could drop the qualifier of a figure."""
    lead = f"stage {f.stage}: "
    at = f.message.find(lead) if f.stage else -1
    if 0 <= at <= 40:
        return f.message[at + len(lead):]
    return f.message


def _read_first(report: Report) -> str:
    """The findings to read first, one line each; a fact repeated in several stages (the same
    rule and message but for the references) is one line naming the other stages."""
    lines: dict[tuple, list] = {}
    for p, _, f in report.top_findings(sum(len(q.findings) for q in report.projects)):
        key = same_fact(f)
        if key in lines:
            lines[key][1].append((p, f.stage))
        elif len(lines) < READ_FIRST:
            lines[key] = [(p, f), []]
    if not lines:
        return "<p>No findings.</p>"
    rows = []
    for (p, f), others in lines.values():
        where = (f' <a href="#{esc(anchor(p, f.stage))}">{esc(f.stage)}</a>'
                 if p.stage(f.stage) is not None else "")
        also = ""
        if others:
            links = ", ".join(f'<a href="#{esc(anchor(q, sid))}">{esc(sid)}</a>'
                              if q.stage(sid) is not None else esc(sid or q.name)
                              for q, sid in others)
            also = f' <span class="muted">(the same in {links})</span>'
        rows.append(f'<li><span class="sev sev-{esc(f.severity)}">{esc(f.severity)}</span> '
                    f'<code>{esc(f.rule)}</code>{where}: {esc(_unprefixed(f))}{also}</li>')
    return "<ol>" + "".join(rows) + "</ol>"


def _unseen(report: Report) -> str:
    """What the run could not see, counted, with where the details are."""
    parts = []
    for p in report.projects:
        name = f"{p.name}: " if len(report.projects) > 1 else ""
        if p.error:
            parts.append(f"{name}the project could not be read ({p.error})")
            continue
        skipped = [s.id for s in p.stages if s.id not in p.results]
        if skipped:
            parts.append(f"{name}{len(skipped)} stage(s) found but not analysed "
                         f"({', '.join(skipped)})")
        if p.near_misses:
            parts.append(f"{name}{len(p.near_misses)} near miss(es): wired almost as a stage, "
                         "not analysed")
        if p.unsupported:
            parts.append(f"{name}{len(p.unsupported)} amplifier(s) frontcheck cannot analyse")
    if not parts:
        return ""
    return ("<p><strong>Could not be seen:</strong> " + esc("; ".join(parts))
            + " (listed under Notes of each project).</p>")


def summary(report: Report, budget_legend: str = "") -> str:
    """The summary panel as an HTML fragment."""
    out = ['<section class="summary" aria-label="Summary">',
           f'<div class="head">{verdict(report)}{_counts(report)}</div>',
           '<div class="cols"><div><h2>Stages found</h2>', _stage_list(report), "</div>",
           "<div><h2>Read first</h2>", _read_first(report), "</div></div>",
           f"<p>{esc(report.coverage_text())}.</p>", _unseen(report)]
    if budget_legend:
        out.append(f'<p class="muted">{esc(budget_legend)}</p>')
    if report.has_caution:
        which = [f"{s_id or p.name} ({'; '.join(why)})" for p in report.projects
                 for s_id, why in p.cautions.items() if why]
        out.append(f'<p class="safety"><strong>Safety.</strong> {esc(SAFETY_NOTICE)}'
                   f'<br><span class="muted">Marked patient- or mains-connected: '
                   f'{esc("; ".join(which))}</span></p>')
    out.append("</section>")
    return "".join(out)
