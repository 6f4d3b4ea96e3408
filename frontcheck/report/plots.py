"""The report's own plots as inline SVG: the headroom operating region (the valid polygon in
the (Vcm, Vout) plane, with the declared input box drawn on it) and Monte Carlo histograms.

The plots only draw numbers analysis produced (Headroom.region, the output op-amp's voltages at
the input-box corners, Spread.samples, CmrrResult.samples_db); binning samples for a histogram
is the only arithmetic done here. Colours come from frontcheck.report.palette.
"""

from __future__ import annotations

import html
import math

from .. import formatting as fmt
from ..formatting import finite
from .palette import AXIS, BAR_WORST, INPUT_BOX, PAPER, REGION_EDGE, REGION_FILL
from .safe_text import visible

BOX_STROKE = INPUT_BOX
BAR_FILL = BAR_WORST
FRAME = AXIS

__all__ = ["REGION_FILL", "region_svg", "hist_svg", "box_polygon"]


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
               f'height="{self.h - self.t - self.b}" fill="none" stroke="{FRAME}"/>']
        for t in _nice_ticks(self.xlo, self.xhi):
            x = self.x(t)
            out.append(f'<line x1="{_px(x)}" y1="{self.h - self.b}" x2="{_px(x)}" '
                       f'y2="{self.h - self.b + 4}" stroke="{FRAME}"/>')
            out.append(f'<text x="{_px(x)}" y="{self.h - self.b + 15}" '
                       f'text-anchor="middle">{_e(_tick_label(t))}</text>')
        if yticks:
            for t in _nice_ticks(self.ylo, self.yhi):
                y = self.y(t)
                out.append(f'<line x1="{self.l - 4}" y1="{_px(y)}" x2="{self.l}" y2="{_px(y)}" '
                           f'stroke="{FRAME}"/>')
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


def box_polygon(stage, result) -> list[tuple[float, float]]:
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
    corners = box_polygon(stage, result)
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
                            f'r="5" fill="{PAPER}" stroke="{BOX_STROKE}" stroke-width="2"/>')
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
