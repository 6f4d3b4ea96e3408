"""``--format markdown``: a report fit for a pull-request comment.

GitHub-flavoured Markdown: a verdict line first (what a reviewer reads), a summary table per
project, the findings grouped by stage with fix hints, then the error budgets and assumptions
folded in ``<details>`` so that a long report does not swamp the review.
"""

from __future__ import annotations

from ..result import bound_text as requirement_bound
from ..result import given_text as requirement_given
from ..result import describe_opamps
from ..result import requirement_label
from .. import formatting as fmt
from . import budget_view, safe_text
from .model import (KIND_LABELS, SAFETY_NOTICE, ProjectReport, Report, cmrr_scope,
                    gain_scope, natural)

SEVERITY_MARK = {"error": "**error**", "warning": "warning", "info": "info"}


def _esc(text: str) -> str:
    """Escape what would break a table cell or start unintended formatting or a link."""
    return safe_text.markdown(text)


def _code(text: str) -> str:
    return "`" + safe_text.visible(text).replace("`", "'") + "`"


def _summary(p: ProjectReport) -> list[str]:
    lines = ["| Stage | Kind | References | Gain (worst range) | CMRR nom / worst / stat | "
             "Headroom margin | Error budget % FS worst / RSS |",
             "|---|---|---|---|---|---|---|"]
    for s in p.stages:
        r = p.results.get(s.id)
        kind = KIND_LABELS.get(s.kind, s.kind)
        refs = ", ".join(natural(s.references))
        if r is None:
            lines.append(f"| {_code(s.id)} | {kind} | {_esc(refs)} | not analysed | | | |")
            continue
        g = r.gain
        gain = fmt.number(g.nominal)
        if g.worst_min is not None and g.worst_max is not None:
            gain += f" ({fmt.span(g.worst_min, g.worst_max)})"
        gain += gain_scope(r)
        cm = r.cmrr
        cmrr = " / ".join(fmt.db(x) for x in (cm.nominal_db, cm.worst_db, cm.statistical_db))
        cmrr += cmrr_scope(r)
        m = r.headroom.margin_v
        budget = budget_view.total_text(r.error_budget)
        lines.append(f"| {_code(s.id)} | {kind} | {_esc(refs)} | {gain} | {cmrr} | "
                     f"{'no input box' if m is None else fmt.volts(m, signed=True)} | {budget} |")
    return lines


def _finding(p: ProjectReport, i: int) -> list[str]:
    f = p.findings[i]
    status = p.status(i)
    where = p.relpath(f.file)
    loc = f" ({_code(where + (f':{f.line}' if f.line else ''))})" if where else ""
    tag = {"waived": f" _waived: {_esc(f.waived)}_", "baseline": " _in baseline_"}.get(status, "")
    text = f"{SEVERITY_MARK.get(f.severity, f.severity)} {_code(f.rule)}: {_esc(f.message)}"
    if status != "new":
        text = f"~~{text}~~"
    lines = [f"- {text}{tag}{loc}"]
    if f.fix:
        lines.append(f"  - fix: {_esc(f.fix)}")
    return lines


def _repeated(p: ProjectReport, idx: list[int]) -> list[str]:
    """One info repeated for several parts: the count, where, and the first in full."""
    first = p.findings[idx[0]]
    where = natural({p.findings[i].stage or ", ".join(p.findings[i].references) or "design"
                     for i in idx})
    named = ", ".join(where[:6]) + (f" and {len(where) - 6} more" if len(where) > 6 else "")
    lines = [f"- info {_code(first.rule)}: {len(idx)} alike ({_esc(named)}); the first: "
             f"{_esc(first.message)}"]
    if first.fix:
        lines.append(f"  - fix: {_esc(first.fix)}")
    return lines


def _project(p: ProjectReport, many: bool, details: bool = True) -> list[str]:
    out = [f"### {_esc(p.name)}" if many else f"**Project:** {_esc(p.name)}", ""]
    if p.error:
        return out + [f"Could not be read: {_code(p.error)}", ""]
    if p.has_caution:
        why = sorted({w for ws in p.cautions.values() for w in ws})
        out += [f"> **Safety.** {SAFETY_NOTICE}", ">", f"> Marked because: {_esc('; '.join(why))}",
                ""]
    if p.stages:
        out += _summary(p) + [""]
    else:
        out += ["No difference or instrumentation amplifier stage recognised.", ""]
    stage_ids = {s.id for s in p.stages}
    repeated = p.repeated_infos()
    folded = {i for group in repeated for i in group}
    by_stage = p.findings_by_stage()
    for s in p.stages:
        idx = [i for i in by_stage.get(s.id, ()) if i not in folded]
        if idx:
            out.append(f"**{_code(s.id)}** ({KIND_LABELS.get(s.kind, s.kind)})")
            out.append("")
            for i in idx:
                out += _finding(p, i)
            out.append("")
    loose = [i for i, f in enumerate(p.findings) if f.stage not in stage_ids and i not in folded]
    if loose:
        out += ["**Project-wide**", ""]
        for i in loose:
            out += _finding(p, i)
        out.append("")
    if repeated:
        out += ["**Said of several parts**", ""]
        for idx in repeated:
            out += _repeated(p, idx)
        out.append("")
    extra = []
    for s in p.stages:
        r = p.results.get(s.id)
        if r is None:
            continue
        rows = budget_view.rows(r.error_budget)
        if rows:
            extra += [f"Error budget of {_code(s.id)}:", "", "| " + " | ".join(budget_view.HEADER) + " |",
                      "|---|---:|---:|---:|---:|---|"]
            for row in rows:
                cells = [_esc(c) for c in row]
                if row[0] == "total":
                    cells = [f"**{c}**" if c else c for c in cells]
                extra.append("| " + " | ".join(cells) + " |")
            extra.append("")
        for a in r.assumptions:
            extra.append(f"- {_code(s.id)} assumed: {_esc(a)}")
        if r.opamps:
            extra.append(f"- {_code(s.id)} op-amp numbers: {_esc(describe_opamps(r.opamps))}")
        if r.requirements:
            extra += ["", f"Op-amp requirements of {_code(s.id)}:", "",
                      "| Op-amp | Quantity | Needs | Part data | Because |", "|---|---|---|---|---|"]
            extra += [f"| {_esc(', '.join(q.opamps))} | {requirement_label(q.quantity)} | {_esc(requirement_bound(q))} | "
                      f"{_esc(requirement_given(q))} | {_esc(q.because)} |" for q in r.requirements]
            extra.append("")
        if r.assumptions or r.opamps:
            extra.append("")
    for label, items in (("Near miss", p.near_misses), ("Not analysed", p.unsupported),
                         ("Note", p.notes)):
        extra += [f"- {label}: {_esc(x)}" for x in items]
    extra += [f"- Not a front-end stage: {_esc(a['name'])} ({_esc(a['kind'])}): {_esc(a['reason'])}"
              for a in p.amplifiers if not a.get("stage")]
    if details and extra:
        out += ["<details><summary>Error budgets, assumptions and notes</summary>", ""] + extra
        out += ["", "</details>", ""]
    return out


# GitHub refuses comments longer than 65536 characters; stay well below it.
COMMENT_LIMIT = 60000


def render(report: Report, limit: int = COMMENT_LIMIT) -> str:
    """The Markdown report; longer than ``limit`` characters, it drops the folded details
    first, then cuts the findings list and says how much was left out."""
    text = _render(report, details=True)
    if len(text) <= limit:
        return text
    text = _render(report, details=False)
    if len(text) <= limit:
        return text
    note = ("\n\n_Report cut to fit a comment: {n} more line(s) left out. Run "
            "`frontcheck check --format markdown -o FILE` for the whole report._\n")
    lines = text.splitlines()
    kept: list[str] = []
    size = len(note) + 20
    for line in lines:
        if size + len(line) + 1 > limit:
            break
        kept.append(line)
        size += len(line) + 1
    return "\n".join(kept) + note.format(n=len(lines) - len(kept))


def _render(report: Report, details: bool) -> str:
    failing = len(report.failing())
    c = report.counts()
    status = report.exit_status()
    if status == 2:
        verdict = "**frontcheck: could not read a project**"
    elif failing:
        verdict = (f"**frontcheck: {failing} finding(s) at or above "
                   f"{_code(report.fail_on)} need attention**")
    else:
        verdict = f"**frontcheck: pass** (nothing at or above {_code(report.fail_on)})"
    tool = report.tool
    out = [verdict, "",
           f"{c.get('error', 0)} error(s), {c.get('warning', 0)} warning(s), "
           f"{c.get('info', 0)} info; {tool.get('name', 'frontcheck')} {tool.get('version', '')}"
           + (f", profile {_code(tool['profile'])}" if tool.get("profile") else ""), "",
           f"{report.coverage_text()}.", ""]
    if report.has_budget:
        out += [budget_view.LEGEND, ""]
    many = len(report.projects) > 1
    for p in report.projects:
        out += _project(p, many, details)
    return "\n".join(out).rstrip() + "\n"
