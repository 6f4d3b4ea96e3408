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

import html
import math

from .. import formatting as fmt
from ..result import bound_text as requirement_bound
from ..result import describe_opamps
from ..result import given_text as requirement_given
from ..formatting import finite
from .model import KIND_LABELS, SAFETY_NOTICE, ProjectReport, Report, budget_rows, natural
from . import budget_view
from .safe_text import visible

# Plot colours. REGION_FILL is drawn fully opaque so a rendered page can be checked for it.
REGION_FILL = "#2a9d8f"
REGION_EDGE = "#1d6f65"
BOX_STROKE = "#d1495b"
BAR_FILL = "#3d5a80"
MARK_WORST = "#d1495b"
MARK_NOMINAL = "#222222"
MARK_STAT = "#e9a03b"

CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,Helvetica,Arial,sans-serif;
margin:0;padding:0 2rem 3rem;color:#1f2328;background:#fff;line-height:1.45}
h1{font-size:1.5rem;margin:1.2rem 0 .3rem}h2{font-size:1.25rem;margin-top:2rem;
border-bottom:1px solid #d0d7de;padding-bottom:.2rem}h3{font-size:1.05rem;margin:1.2rem 0 .4rem}
table{border-collapse:collapse;margin:.5rem 0 1rem;font-size:.9rem}
th,td{border:1px solid #d0d7de;padding:.25rem .55rem;text-align:left;vertical-align:top}
th{background:#f6f8fa}td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
.verdict{font-size:1.1rem;font-weight:600;padding:.5rem .8rem;border-radius:6px;display:inline-block}
.pass{background:#dafbe1;color:#116329}.fail{background:#ffebe9;color:#a40e26}
.caution{color:#a40e26}.safety{border:2px solid #a40e26;background:#fff5f5;padding:.6rem .9rem;border-radius:6px;
max-width:60rem}.muted{color:#656d76}.sev{font-weight:700;text-transform:uppercase;
font-size:.8rem;padding:.05rem .35rem;border-radius:4px}
.sev-error{background:#ffebe9;color:#a40e26}.sev-warning{background:#fff8c5;color:#7d4e00}
.sev-info{background:#ddf4ff;color:#0550ae}.finding{margin:.45rem 0;max-width:70rem}
.finding.quiet{opacity:.6}.fix{margin-left:1.2rem;color:#116329}
.plots{display:flex;flex-wrap:wrap;gap:1rem}.plot{border:1px solid #d0d7de;border-radius:6px;
padding:.4rem}.plot figcaption{font-size:.85rem;color:#656d76;max-width:440px}
svg text{font-family:inherit;font-size:11px;fill:#1f2328}
.scroll{overflow-x:auto;max-width:100%}
code{font-family:ui-monospace,SFMono-Regular,Menlo,Consolas,monospace;font-size:.88em}
"""


def _e(x) -> str:
    return html.escape(visible(x), quote=True)


# -- plotting primitives --------------------------------------------------------------------

def _nice_ticks(lo: float, hi: float, n: int = 5) -> list[float]:
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return [lo]
    raw = (hi - lo) / n
    mag = 10 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 2.5, 5, 10) if m * mag >= raw)
    start = math.ceil(lo / step - 1e-9) * step
    ticks = []
    t = start
    while t <= hi + 1e-9 * step:
        ticks.append(round(t, 12))
        t += step
    return ticks


def _tick_label(t: float) -> str:
    return fmt.number(t, 6)


def _px(v: float) -> str:
    """An SVG coordinate (drawing, not a figure for the reader)."""
    return f"{v:.2f}"


class _Axes:
    """A linear x/y frame inside a W x H SVG, with margins for tick labels."""

    def __init__(self, xlo, xhi, ylo, yhi, w=440, h=300, left=52, right=12, top=14, bottom=40):
        if xhi <= xlo:
            xlo, xhi = xlo - 0.5, xhi + 0.5
        if yhi <= ylo:
            ylo, yhi = ylo - 0.5, yhi + 0.5
        self.xlo, self.xhi, self.ylo, self.yhi = xlo, xhi, ylo, yhi
        self.w, self.h, self.l, self.r, self.t, self.b = w, h, left, right, top, bottom

    def x(self, v: float) -> float:
        return self.l + (v - self.xlo) / (self.xhi - self.xlo) * (self.w - self.l - self.r)

    def y(self, v: float) -> float:
        return self.h - self.b - (v - self.ylo) / (self.yhi - self.ylo) * (self.h - self.t - self.b)

    def frame(self, xlabel: str, ylabel: str, yticks: bool = True) -> list[str]:
        out = [f'<rect x="{self.l}" y="{self.t}" width="{self.w - self.l - self.r}" '
               f'height="{self.h - self.t - self.b}" fill="none" stroke="#8c959f"/>']
        for t in _nice_ticks(self.xlo, self.xhi):
            x = self.x(t)
            out.append(f'<line x1="{_px(x)}" y1="{self.h - self.b}" x2="{_px(x)}" '
                       f'y2="{self.h - self.b + 4}" stroke="#8c959f"/>')
            out.append(f'<text x="{_px(x)}" y="{self.h - self.b + 15}" '
                       f'text-anchor="middle">{_e(_tick_label(t))}</text>')
        if yticks:
            for t in _nice_ticks(self.ylo, self.yhi):
                y = self.y(t)
                out.append(f'<line x1="{self.l - 4}" y1="{_px(y)}" x2="{self.l}" y2="{_px(y)}" '
                           f'stroke="#8c959f"/>')
                out.append(f'<text x="{self.l - 6}" y="{_px(y + 4)}" '
                           f'text-anchor="end">{_e(_tick_label(t))}</text>')
        out.append(f'<text x="{_px((self.l + self.w - self.r) / 2)}" y="{self.h - 6}" '
                   f'text-anchor="middle">{_e(xlabel)}</text>')
        out.append(f'<text x="12" y="{_px((self.t + self.h - self.b) / 2)}" text-anchor="middle" '
                   f'transform="rotate(-90 12 {_px((self.t + self.h - self.b) / 2)})">'
                   f'{_e(ylabel)}</text>')
        return out

    def svg(self, body: list[str], label: str) -> str:
        return (f'<svg role="img" aria-label="{_e(label)}" width="{self.w}" height="{self.h}" '
                f'viewBox="0 0 {self.w} {self.h}">' + "".join(body) + "</svg>")


def _box_polygon(stage, result) -> list[tuple[float, float]]:
    """The declared input box in the (Vcm, Vout) plane: the output op-amp's voltage at the
    four corners analysis checked, ordered around the box."""
    out_net = stage.circuit.ports.get("out")
    pts = {}
    for c in result.headroom.checks:
        if c.node == "output" and c.net == out_net:
            pts[(c.corner[0], c.corner[1])] = c.voltage
    if len(pts) < 4:
        return []
    vcms = sorted({k[0] for k in pts})
    vds = sorted({k[1] for k in pts})
    lo_cm, hi_cm, lo_d, hi_d = vcms[0], vcms[-1], vds[0], vds[-1]
    order = [(lo_cm, lo_d), (lo_cm, hi_d), (hi_cm, hi_d), (hi_cm, lo_d)]
    if any(k not in pts for k in order):
        return []
    return [(k, (k[0], pts[k])) for k in order]


def region_svg(stage, result) -> str | None:
    """The headroom operating region with the declared input box, or None when analysis gave
    neither."""
    h = result.headroom
    region = [(float(a), float(b)) for a, b in h.region]
    corners = _box_polygon(stage, result)
    box = [pt for _, pt in corners]
    pts = region + box
    if not pts:
        return None
    xs = [p[0] for p in pts]
    ys = [p[1] for p in pts]
    padx = 0.08 * (max(xs) - min(xs) or 1.0)
    pady = 0.08 * (max(ys) - min(ys) or 1.0)
    ax = _Axes(min(xs) - padx, max(xs) + padx, min(ys) - pady, max(ys) + pady)
    body = ax.frame("input common mode Vcm (V)", "output Vout (V)")
    if len(region) >= 3:
        poly = " ".join(f"{_px(ax.x(a))},{_px(ax.y(b))}" for a, b in region)
        body.append(f'<polygon class="region" points="{poly}" fill="{REGION_FILL}" '
                    f'stroke="{REGION_EDGE}" stroke-width="1.5"/>')
    if box:
        poly = " ".join(f"{_px(ax.x(a))},{_px(ax.y(b))}" for a, b in box)
        body.append(f'<polygon class="input-box" points="{poly}" fill="none" '
                    f'stroke="{BOX_STROKE}" stroke-width="2" stroke-dasharray="6 3"/>')
        broken = {tuple(c.corner) for c in h.checks if c.margin_v < 0}
        for corner, (a, b) in corners:
            # a corner where some op-amp leaves its range is drawn hollow and larger
            if corner in broken:
                body.append(f'<circle class="broken" cx="{_px(ax.x(a))}" cy="{_px(ax.y(b))}" '
                            f'r="5" fill="#ffffff" stroke="{BOX_STROKE}" stroke-width="2"/>')
            else:
                body.append(f'<circle cx="{_px(ax.x(a))}" cy="{_px(ax.y(b))}" r="3" '
                            f'fill="{BOX_STROKE}"/>')
    return ax.svg(body, f"operating region of {stage.id}")


def _histogram(values: list[float], bins: int, lo: float, hi: float) -> tuple[list[int], list[float]]:
    """Counts of ``values`` in ``bins`` equal bins from lo to hi (each bin holds its lower edge,
    the last also hi): sorting samples into bars for drawing, the way numpy.histogram does,
    without loading numpy into a reporter."""
    step = (hi - lo) / bins
    edges = [i * step + lo for i in range(bins)] + [hi]
    counts = [0] * bins
    for v in values:
        if not lo <= v <= hi:
            continue
        i = min(int((v - lo) * (bins / (hi - lo))), bins - 1)
        if v < edges[i]:
            i -= 1
        elif i < bins - 1 and v >= edges[i + 1]:
            i += 1
        counts[i] += 1
    return counts, edges


def hist_svg(samples, xlabel: str, marks: list[tuple[str, float | None, str]],
             label: str, total: int | None = None) -> str | None:
    """Histogram of Monte Carlo samples with vertical marks (name, value, colour). ``total``
    is the number of samples the run drew: when more than were kept for drawing, the plot
    says it shows a thinned set."""
    if not samples:
        return None
    a = [float(s) for s in samples if s is not None and math.isfinite(s)]
    if len(a) < 2:
        return None
    slo, shi = min(a), max(a)
    span = (shi - slo) or (abs(slo) * 1e-6 or 1e-9)
    if not math.isfinite(span):
        return None
    # marks far outside the samples would squash the histogram into one bar: those are named
    # in the legend as off scale instead of drawn
    vals = [v for _, v, _ in marks
            if finite(v) is not None and slo - 5 * span <= v <= shi + 5 * span]
    lo, hi = min([slo] + vals), max([shi] + vals)
    if hi <= lo:
        hi = lo + span
    counts, edges = _histogram(a, 30, lo, hi)
    pad = 0.03 * (hi - lo)      # keep marks at the extremes off the frame
    ax = _Axes(lo - pad, hi + pad, 0, float(max(counts)) * 1.1 or 1.0)
    body = ax.frame(xlabel, "samples")
    for c, e0, e1 in zip(counts, edges[:-1], edges[1:]):
        if c == 0:
            continue
        x0, x1 = ax.x(float(e0)), ax.x(float(e1))
        y = ax.y(float(c))
        body.append(f'<rect class="bar" x="{_px(x0)}" y="{_px(y)}" width="{_px(max(x1 - x0 - 1, 0.5))}" '
                    f'height="{_px(ax.y(0) - y)}" fill="{BAR_FILL}"/>')
    legend_y = ax.t + 12
    for name, v, colour in marks:
        v = finite(v)
        if v is None:
            continue
        if not lo <= v <= hi:
            body.append(f'<text x="{ax.w - ax.r - 4}" y="{legend_y}" text-anchor="end" '
                        f'style="fill:{colour}">{_e(name)} {_e(fmt.number(v, 6))} (off scale)</text>')
            legend_y += 13
            continue
        x = ax.x(v)
        body.append(f'<line x1="{_px(x)}" y1="{ax.t}" x2="{_px(x)}" y2="{_px(ax.y(0))}" '
                    f'stroke="{colour}" stroke-width="2" stroke-dasharray="4 2"/>')
        body.append(f'<text x="{ax.w - ax.r - 4}" y="{legend_y}" text-anchor="end" '
                    f'style="fill:{colour}">{_e(name)}</text>')
        legend_y += 13
    shown = f"n = {len(a):,}"
    if total and total > len(a):
        shown += f" of {total:,} samples (thinned)"
    body.append(f'<text x="{ax.l + 4}" y="{ax.t + 12}">{_e(shown)}</text>')
    return ax.svg(body, label)


# -- page --------------------------------------------------------------------------------

def _finding_html(p: ProjectReport, i: int) -> str:
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
    return (f'<div class="finding{quiet}"><span class="sev sev-{_e(f.severity)}">'
            f'{_e(f.severity)}</span> <code>{_e(f.rule)}</code> {_e(f.message)}{tag}{loc}'
            f'{fix}</div>')


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
        _, total = budget_rows(r.error_budget)
        cells = [fmt.number(g.nominal),
                 fmt.MISSING if g.worst_min is None else fmt.span(g.worst_min, g.worst_max),
                 fmt.db(cm.nominal_db), fmt.db(cm.worst_db), fmt.db(cm.statistical_db),
                 "no input box" if m is None else fmt.volts(m, signed=True),
                 fmt.MISSING if total is None else
                 f"{fmt.percent_points(total[0])} / {fmt.percent_points(total[1])}"]
        rows.append("<tr>" + head + "".join(f'<td class="num">{_e(c)}</td>' for c in cells)
                    + "</tr>")
    return ('<div class="scroll"><table class="summary"><thead><tr><th>Stage</th><th>Kind</th><th>References</th>'
            '<th>Gain</th><th>Gain worst range</th><th>CMRR nominal</th><th>CMRR worst</th>'
            '<th>CMRR statistical</th><th>Headroom margin</th><th>Error budget % FS worst / RSS</th>'
            '</tr></thead><tbody>' + "".join(rows) + "</tbody></table></div>")


def _anchor(p: ProjectReport, stage_id: str) -> str:
    return "stage-" + "".join(c if c.isalnum() else "-" for c in f"{p.name}-{stage_id}")


def _stage_section(p: ProjectReport, s, total: int | None = None) -> str:
    r = p.results.get(s.id)
    out = [f'<section id="{_e(_anchor(p, s.id))}"><h3><code>{_e(s.id)}</code> '
           f'{_e(KIND_LABELS.get(s.kind, s.kind))}</h3>',
           f'<p class="muted">References: {_e(", ".join(natural(s.references)))}</p>']
    if p.cautions.get(s.id):
        # the notice itself stands once at the top of the page
        out.append(f'<p class="caution"><strong>Safety note applies</strong> (see the top of '
                   f'the page): {_e("; ".join(p.cautions[s.id]))}</p>')
    idx = [i for i, _ in p.findings_of(s.id)]
    if idx:
        out.append("<h4>Findings</h4>" + "".join(_finding_html(p, i) for i in idx))
    if r is not None:
        plots = []
        reg = region_svg(s, r)
        if reg:
            box = r.headroom.box
            cap = "Valid operating region (filled) in the (Vcm, Vout) plane"
            if box:
                vd = lambda v: fmt.eng(v, "V", 5, signed=True, trim=True)   # noqa: E731
                cap += (f"; dashed: declared inputs Vcm "
                        f"{fmt.span(box[0], box[1], lambda v: fmt.eng(v, 'V', 5, trim=True))}, "
                        f"Vd {fmt.span(box[2], box[3], vd)}")
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
                       (f"{fmt.number(r.cmrr.percentile)} % point", r.cmrr.statistical_db, MARK_STAT)],
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
                       + "".join(f"<tr><td>{_e(', '.join(q.opamps))}</td><td>{_e(q.quantity)}</td>"
                                 f"<td>{_e(requirement_bound(q))}</td><td>{_e(requirement_given(q))}</td>"
                                 f"<td>{_e(q.because)}</td></tr>" for q in r.requirements)
                       + "</tbody></table>")
    out.append("</section>")
    return "".join(out)


def render(report: Report) -> str:
    tool = report.tool
    failing = len(report.failing())
    status = report.exit_status()
    if status == 2:
        verdict = '<span class="verdict fail">A project could not be read</span>'
    elif failing:
        verdict = (f'<span class="verdict fail">{failing} finding(s) at or above '
                   f'&ldquo;{_e(report.fail_on)}&rdquo;</span>')
    else:
        verdict = (f'<span class="verdict pass">Pass: nothing at or above '
                   f'&ldquo;{_e(report.fail_on)}&rdquo;</span>')
    title = ", ".join(p.name for p in report.projects) or "no project"
    parts = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>frontcheck: {_e(title)}</title><style>{CSS}</style></head><body>",
             f"<h1>frontcheck report: {_e(title)}</h1>",
             f'<p class="muted">{_e(tool.get("name", "frontcheck"))} {_e(tool.get("version", ""))}'
             + (f', profile {_e(tool["profile"])}' if tool.get("profile") else "")
             + (f', seed {_e(tool["seed"])}' if tool.get("seed") is not None else "")
             + (f', {_e(fmt.number(tool["samples"]))} Monte Carlo samples' if tool.get("samples") else "")
             + "</p>", verdict, f'<p class="muted">{_e(report.coverage_text())}.</p>']
    if report.has_budget:
        parts.append(f'<p class="muted">{_e(budget_view.LEGEND)}</p>')
    if report.has_caution:
        parts.append(f'<p class="safety"><strong>Safety.</strong> {_e(SAFETY_NOTICE)}</p>')
    for p in report.projects:
        parts.append(f"<h2>{_e(p.name)} <span class=\"muted\">{_e(p.path)}</span></h2>")
        if p.error:
            parts.append(f'<p class="fail">Could not be read: <code>{_e(p.error)}</code></p>')
            continue
        if p.stages:
            parts.append(_summary_table(p))
        else:
            parts.append("<p>No difference or instrumentation amplifier stage recognised.</p>")
        for s in p.stages:
            parts.append(_stage_section(p, s, tool.get("samples")))
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
    parts.append("</body></html>")
    return "\n".join(parts) + "\n"
