"""``--format html``: one self-contained review page.

Inline CSS and inline SVG drawn here; no script, no font and nothing else fetched from the
network, so the file can be archived with a design review and opened anywhere. A section per
stage holds the headroom operating region (the valid polygon in the (Vcm, Vout) plane, with the
declared input box drawn on it), Monte Carlo histograms of gain and CMRR, the error budget and
the findings with their fix hints.

The plots only draw numbers analysis produced (Headroom.region, the output op-amp's voltages at
the input-box corners, Spread.samples, CmrrResult.samples_db); binning samples for a histogram
is the only arithmetic done here.
"""

from __future__ import annotations

from .. import formatting as fmt
from ..result import bound_text as requirement_bound
from ..result import describe_opamps
from ..result import given_text as requirement_given
from ..result import requirement_label
from ..formatting import finite
from .model import KIND_LABELS, ProjectReport, Report, natural
from . import budget_view, stage_diagram
from .html_style import CSS
from .html_summary import anchor as _anchor
from .html_summary import esc as _e
from .html_summary import summary
from .palette import MARK_NOMINAL, MARK_STATISTICAL, MARK_WORST, REGION_FILL
from .plots import box_polygon, hist_svg, region_svg

# the page's names for what tests and other reporters reach through this module
_box_polygon = box_polygon
__all__ = ["CSS", "REGION_FILL", "region_svg", "hist_svg", "render"]


# -- page --------------------------------------------------------------------------------

def _finding_html(p: ProjectReport, i: int, number: int | None = None) -> str:
    f = p.findings[i]
    status = p.status(i)
    where = p.relpath(f.file)
    loc = (f' <span class="muted">at <code>{_e(where)}{":" + str(f.line) if f.line else ""}'
           f'</code></span>') if where else ""
    tag = ""
    if status == "waived":
        tag = f' <span class="muted">waived: {_e(f.waived)}</span>'
    elif status == "baseline":
        tag = ' <span class="muted">in baseline</span>'
    fix = f'<div class="fix">Fix: {_e(f.fix)}</div>' if f.fix else ""
    quiet = " quiet" if status != "new" else ""
    num = f'<span class="tag">{number}</span>' if number is not None else ""
    return (f'<div class="finding{quiet}">{num}<span class="sev sev-{_e(f.severity)}">'
            f'{_e(f.severity)}</span> <code>{_e(f.rule)}</code> {_e(f.message)}{tag}{loc}'
            f'{fix}</div>')


def _diagram_and_findings(p: ProjectReport, s, idx: list[int] | None = None) -> str:
    """The stage's diagram with the findings beside it (``idx``: their indices), numbered as
    the diagram tags them."""
    if idx is None:
        idx = [i for i, _ in p.findings_of(s.id)]
    numbered = [(n, p.findings[i]) for n, i in enumerate(idx, 1) if p.status(i) == "new"]
    svg, caption = stage_diagram.diagram_svg(s, stage_diagram.marks_for(s, numbered))
    if svg:
        fig = (f'<figure class="diagram">{svg}<figcaption>{_e(caption)}</figcaption></figure>')
    else:
        fig = f'<p class="muted diagram-missing">{_e(caption)}</p>'
    found = ("<h4>Findings</h4>" + "".join(_finding_html(p, i, n) for n, i in enumerate(idx, 1))
             if idx else "<h4>Findings</h4><p>None for this stage.</p>")
    return f'<div class="stage-top">{fig}<div class="stage-findings">{found}</div></div>'


def _summary_table(p: ProjectReport) -> str:
    rows = []
    for s in p.stages:
        r = p.results.get(s.id)
        head = (f'<td><a href="#{_e(_anchor(p, s.id))}"><code>{_e(s.id)}</code></a></td>'
                f'<td>{_e(KIND_LABELS.get(s.kind, s.kind))}</td>'
                f'<td>{_e(", ".join(natural(s.references)))}</td>')
        if r is None:
            rows.append(f"<tr>{head}<td colspan=\"7\">not analysed</td></tr>")
            continue
        g, cm = r.gain, r.cmrr
        m = r.headroom.margin_v
        cells = [fmt.number(g.nominal),
                 fmt.MISSING if g.worst_min is None else fmt.span(g.worst_min, g.worst_max),
                 fmt.db(cm.nominal_db), fmt.db(cm.worst_db), fmt.db(cm.statistical_db),
                 "no input box" if m is None else fmt.volts(m, signed=True),
                 budget_view.total_text(r.error_budget)]
        rows.append("<tr>" + head + "".join(f'<td class="num">{_e(c)}</td>' for c in cells)
                    + "</tr>")
    return ('<div class="scroll"><table class="summary"><thead><tr><th>Stage</th><th>Kind</th><th>References</th>'
            '<th>Gain</th><th>Gain worst range</th><th>CMRR nominal</th><th>CMRR worst</th>'
            '<th>CMRR statistical</th><th>Headroom margin</th><th>Error budget % FS worst / RSS</th>'
            '</tr></thead><tbody>' + "".join(rows) + "</tbody></table></div>")


def _plots(s, r, total: int | None) -> list[str]:
    """The stage's figures (operating region, Monte Carlo gain and CMRR, CMRR against
    frequency, budget bars) in one row, or the note that says why headroom is not drawn."""
    out: list[str] = []
    plots = []
    reg = region_svg(s, r)
    if reg:
        box = r.headroom.box
        cap = "Valid operating region (filled) in the (Vcm, Vout) plane"
        if box:
            vd = lambda v: fmt.eng(v, "V", 5, signed=True, trim=True)   # noqa: E731
            declared = (f"declared inputs Vcm "
                        f"{fmt.span(box[0], box[1], lambda v: fmt.eng(v, 'V', 5, trim=True))}, "
                        f"Vd {fmt.span(box[2], box[3], vd)}")
            # the dashed box needs the output at all four input corners; where the results
            # carry fewer, the caption must not promise a box the plot does not show
            cap += (f"; dashed: {declared}" if box_polygon(s, r) else
                    f"; {declared} (their box is not drawn: the output at its four corners "
                    f"is not in the results)")
        if r.headroom.margin_v is not None:
            cap += f"; worst margin {fmt.volts(r.headroom.margin_v, signed=True)}"
        plots.append(f'<figure class="plot">{reg}<figcaption>{_e(cap)}</figcaption></figure>')
    elif r.headroom.margin_v is None:
        out.append('<p class="muted">No input range declared: headroom not plotted.</p>')
    gh = hist_svg(r.gain.samples, "differential gain (V/V)",
                  [("nominal", r.gain.nominal, MARK_NOMINAL),
                   ("worst min", r.gain.worst_min, MARK_WORST),
                   ("worst max", r.gain.worst_max, MARK_WORST)],
                  f"Monte Carlo gain of {s.id}", total)
    if gh:
        plots.append(f'<figure class="plot">{gh}<figcaption>Monte Carlo gain; dashed: '
                     f'nominal and worst-case corners</figcaption></figure>')
    ch = hist_svg(r.cmrr.samples_db, "CMRR (dB)",
                  [("worst", r.cmrr.worst_db, MARK_WORST),
                   (f"{fmt.number(r.cmrr.percentile)} % point", r.cmrr.statistical_db, MARK_STATISTICAL)],
                  f"Monte Carlo CMRR of {s.id}", total)
    if ch:
        plots.append(f'<figure class="plot">{ch}<figcaption>Monte Carlo CMRR; dashed: '
                     f'worst-case corner and the statistical figure</figcaption></figure>')
    cs = budget_view.cmrr_svg(getattr(r, "cmrr_sweep", None), s.intent.min_cmrr_db,
                              f"CMRR against frequency of {s.id}")
    if cs:
        plots.append(f'<figure class="plot">{cs}<figcaption>CMRR against frequency: nominal and '
                     f'worst case over the tolerance corners</figcaption></figure>')
    bars = budget_view.bars_svg(r.error_budget, f"Error budget of {s.id}")
    if bars:
        plots.append(f'<figure class="plot">{bars}<figcaption>Error budget terms</figcaption></figure>')
    if plots:
        out.append('<div class="plots">' + "".join(plots) + "</div>")
    return out


def _details(r) -> list[str]:
    """The budget table, REF, input filter, source, assumptions, op-amp numbers and the
    op-amp requirements of an analysed stage."""
    out: list[str] = []
    rows = budget_view.rows(r.error_budget)
    if rows:
        body = "".join(
            ("<tr>" if row[0] != "total" else '<tr class="total">')
            + "".join(f'<td{"" if i in (0, 5) else " class=num"}>{_e(c)}</td>' for i, c in enumerate(row))
            + "</tr>" for row in rows)
        out.append('<h4>Error budget</h4>'
                   '<table class="budget"><thead><tr>'
                   + "".join(f"<th>{_e(h)}</th>" for h in budget_view.HEADER)
                   + "</tr></thead><tbody>" + body + "</tbody></table>")
    if r.ref is not None:
        ref = r.ref
        out.append(f'<p>REF <code>{_e(ref.net)}</code>: {_e(ref.kind)}'
                   + (f", driven by {_e(ref.driver)}" if ref.driver else "")
                   + (f", Thevenin {fmt.ohms(ref.thevenin_ohms)}" if finite(ref.thevenin_ohms)
                      is not None else "") + "</p>")
    flt = getattr(r, "input_filter", None)
    if flt is not None:
        out.append(f"<p>Input filter ({_e(', '.join(flt.parts))}): differential corner "
                   f"{fmt.hertz(flt.f_dm_hz)}, common-mode corner {fmt.hertz(flt.f_cm_hz)}</p>")
    src = getattr(r, "source", None)
    if src is not None and src.detail:
        out.append(f"<p>Source at the inputs: {_e(src.detail)}</p>")
    if r.assumptions:
        out.append("<p class=\"muted\">Assumed: " + _e("; ".join(r.assumptions)) + "</p>")
    if r.opamps:
        out.append("<p class=\"muted\">Op-amp numbers: " + _e(describe_opamps(r.opamps)) + "</p>")
    if r.requirements:
        out.append("<h4>Op-amp requirements</h4><table class=\"budget\"><thead><tr><th>Op-amp</th>"
                   "<th>Quantity</th><th>Needs</th><th>Part data</th><th>Because</th></tr></thead><tbody>"
                   + "".join(f"<tr><td>{_e(', '.join(q.opamps))}</td><td>{_e(requirement_label(q.quantity))}</td>"
                             f"<td>{_e(requirement_bound(q))}</td><td>{_e(requirement_given(q))}</td>"
                             f"<td>{_e(q.because)}</td></tr>" for q in r.requirements)
                   + "</tbody></table>")
    return out


def _stage_section(p: ProjectReport, s, total: int | None = None,
                   idx: list[int] | None = None) -> str:
    r = p.results.get(s.id)
    out = [f'<section id="{_e(_anchor(p, s.id))}"><h3><code>{_e(s.id)}</code> '
           f'{_e(KIND_LABELS.get(s.kind, s.kind))}</h3>',
           f'<p class="muted">References: {_e(", ".join(natural(s.references)))}</p>']
    if p.cautions.get(s.id):
        # the notice itself stands once at the top of the page
        out.append(f'<p class="caution"><strong>Safety note applies</strong> (see the top of '
                   f'the page): {_e("; ".join(p.cautions[s.id]))}</p>')
    out.append(_diagram_and_findings(p, s, idx))
    if r is not None:
        out += _plots(s, r, total)
        out += _details(r)
    out.append("</section>")
    return "".join(out)


def render(report: Report) -> str:
    tool = report.tool
    title = ", ".join(p.name for p in report.projects) or "no project"
    parts = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>frontcheck: {_e(title)}</title><style>{CSS}</style></head><body>",
             f"<h1>frontcheck report: {_e(title)}</h1>",
             f'<p class="muted">{_e(tool.get("name", "frontcheck"))} {_e(tool.get("version", ""))}'
             + (f', profile {_e(tool["profile"])}' if tool.get("profile") else "")
             + (f', seed {_e(tool["seed"])}' if tool.get("seed") is not None else "")
             + (f', {_e(fmt.number(tool["samples"]))} Monte Carlo samples' if tool.get("samples") else "")
             + "</p>", summary(report, budget_view.LEGEND if report.has_budget else "")]
    for p in report.projects:
        parts.append(_project(p, tool))
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"


def _project(p: ProjectReport, tool: dict) -> str:
    parts = [f"<h2>{_e(p.name)} <span class=\"muted\">{_e(p.path)}</span></h2>"]
    if p.error:
        parts.append(f'<p class="fail">Could not be read: <code>{_e(p.error)}</code></p>')
        return "\n".join(parts)
    if p.stages:
        parts.append(_summary_table(p))
    else:
        parts.append("<p>No difference or instrumentation amplifier stage recognised.</p>")
    by_stage = p.findings_by_stage()
    for s in p.stages:
        parts.append(_stage_section(p, s, tool.get("samples"), by_stage.get(s.id, [])))
    stage_ids = {s.id for s in p.stages}
    loose = [i for i, f in enumerate(p.findings) if f.stage not in stage_ids]
    if loose:
        parts.append("<h3>Project-wide findings</h3>"
                     + "".join(_finding_html(p, i) for i in loose))
    extra = ([("Near miss", x) for x in p.near_misses]
             + [("Not analysed", x) for x in p.unsupported] + [("Note", x) for x in p.notes]
             + [("Not a front-end stage", f"{a['name']} ({a['kind']}): {a['reason']}")
                for a in p.amplifiers if not a.get("stage")])
    if extra:
        parts.append("<h3>Notes</h3><ul>" + "".join(
            f"<li>{_e(k)}: {_e(v)}</li>" for k, v in extra) + "</ul>")
    return "\n".join(parts)
