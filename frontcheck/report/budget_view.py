"""How every reporter shows a stage's error budget: the table rows (% of full scale and volts
referred to the input, with the requirement a term states when part numbers are missing), the
bar chart of the terms and the CMRR-against-frequency plot, both inline SVG.

Only presentation: every number comes from the analysis result (``error_budget`` and
``cmrr_sweep``); nothing is computed here but positions on a drawing.
"""

from __future__ import annotations

import math

from frontcheck import formatting as fmt
from frontcheck.report.model import budget_rows
from frontcheck.report.palette import (AXIS, BAR_RSS, BAR_WORST, GRID, MARK_AT, MARK_NOMINAL,
                                       MARK_REQUIRED, MARK_WORST)

# Said once per report, wherever a budget is shown: the per-stage tables use the short forms.
LEGEND = f"{fmt.PERCENT_FS}: {fmt.PERCENT_FS_MEANING}; RTI: referred to the input."
HEADER = ("Term", "Worst % FS", "RSS % FS", "Worst RTI", "RSS RTI", "Basis")
_QUANTITY_WORDS = {"vos": "Vos", "ib": "Ib", "en": "en", "tcr": "TCR", "vos_drift": "Vos drift"}
# What each term needs from the parts (said when a term has no value and no bound).
_TERM_NUMBERS = {"offset": "Vos", "bias": "Ib or Ios", "noise": "en or in",
                 "drift": "TCR or Vos drift"}
_UNITS = {"V": "V", "A": "A", "V/rtHz": "V/rtHz", "V/K": "V/K", "1/K": "/K"}


def _bound_text(b: dict) -> str:
    what = _QUANTITY_WORDS.get(b["quantity"], b["quantity"])
    who = ", ".join(b.get("references") or [])
    if b.get("max") is None:
        return f"{what} of {who}: none fits (the known terms use the budget)"
    if b["quantity"] == "tcr":
        value = f"{fmt.number(b['max'] * 1e6, 3)} ppm/K"
    else:
        value = fmt.eng(b["max"], _UNITS.get(b["unit"], b["unit"]))
    return f"needs {what} <= {value} ({who})"


def _esc(text: str) -> str:
    """``html.escape``, imported when a drawing is made (the terminal report makes none)."""
    from html import escape
    return escape(text)


def left_out(budget: dict) -> list[str]:
    """The terms the budget's total leaves out (requirements add nothing to it): while any is
    left out the total is a lower bound."""
    return (budget.get("total") or {}).get("requirements") or []


def total_text(budget: dict, sep: str = " / ") -> str:
    """The total worst and RSS % FS as every summary shows them, each marked "≥" while a term is
    left out (a requirement adds nothing to the total, which is then a lower bound)."""
    _, total = budget_rows(budget)
    if total is None:
        return fmt.MISSING
    at_least = "≥ " if left_out(budget) else ""
    return f"{at_least}{fmt.percent_points(total[0])}{sep}{at_least}{fmt.percent_points(total[1])}"


def basis(term: dict, term_name: str = "") -> str:
    """The last column: what the term rests on, or the requirement it states; for the total,
    which terms it leaves out (a requirement adds nothing to it)."""
    if term_name == "total":
        missing = term.get("requirements") or []
        return f"known terms only: {', '.join(missing)} not included" if missing else ""
    if term.get("requirement"):
        b = term.get("bound")
        if b is None:
            # No Error Budget declared: nothing to derive a bound from, so say what is missing.
            what = _TERM_NUMBERS.get(term_name, "its numbers")
            return (f"not computed: {what} of {', '.join(term.get('missing') or [])} not given "
                    "(declare Error Budget to get the bound each must meet)")
        bounds = b if isinstance(b, list) else [b]
        return "; ".join(_bound_text(x) for x in bounds)
    if term.get("rti_pp_v") is not None:
        return (f"{fmt.volts(term['rti_rms_v'])} RMS, {fmt.volts(term['rti_pp_v'])} p-p over "
                f"{fmt.hertz(term['band_hz'][0])}..{fmt.hertz(term['band_hz'][1])}")
    return ""


def rows(budget: dict) -> list[tuple[str, str, str, str, str, str]]:
    """Display rows, the total last (bold in the reporters that can)."""
    out = []
    for name, term in budget.items():
        if not isinstance(term, dict):
            continue
        rti = term.get("rti_v") or {}
        out.append((name, fmt.percent_points(term.get("worst")), fmt.percent_points(term.get("rss")),
                    fmt.volts(rti.get("worst")) if rti.get("worst") is not None else fmt.MISSING,
                    fmt.volts(rti.get("rss")) if rti.get("rss") is not None else fmt.MISSING,
                    basis(term, name)))
    total = [r for r in out if r[0] == "total"]
    return [r for r in out if r[0] != "total"] + total


# -- SVG -------------------------------------------------------------------------------------

def _p(v: float) -> str:
    """An SVG coordinate (drawing, not a figure for the reader)."""
    return str(round(float(v), 2))


def bars_svg(budget: dict, label: str) -> str | None:
    """Horizontal bars of each term's worst and RSS (% FS); requirement terms are named
    without a bar. None when no term has a % FS value."""
    items = [(k, t) for k, t in budget.items() if isinstance(t, dict) and k != "total"]
    vals = [v for _, t in items for v in (t.get("worst"), t.get("rss")) if v is not None and math.isfinite(v)]
    if not vals or max(vals) <= 0:
        return None
    top = max(vals)
    w, left, right, row = 440, 70, 60, 26
    h = 30 + row * len(items)
    body = [f'<text x="{left}" y="14">{fmt.PERCENT_FS}: worst (dark), RSS (light)</text>']
    for i, (name, t) in enumerate(items):
        y = 22 + i * row
        body.append(f'<text x="{left - 6}" y="{_p(y + 13)}" text-anchor="end">{_esc(name)}</text>')
        if t.get("requirement"):
            body.append(f'<text x="{left + 4}" y="{_p(y + 13)}" class="muted">requirement</text>')
            continue
        for j, (key, colour) in enumerate((("worst", BAR_WORST), ("rss", BAR_RSS))):
            v = t.get(key)
            if v is None or not math.isfinite(v):
                continue
            length = (w - left - right) * v / top
            body.append(f'<rect x="{left}" y="{_p(y + j * 10)}" width="{_p(max(length, 0.5))}" height="9" '
                        f'fill="{colour}"/>')
            if key == "worst":
                body.append(f'<text x="{_p(left + max(length, 0.5) + 4)}" y="{_p(y + 9)}">'
                            f'{_esc(fmt.percent_points(v))}</text>')
    return (f'<svg role="img" aria-label="{_esc(label)}" width="{w}" height="{h}" '
            f'viewBox="0 0 {w} {h}">' + "".join(body) + "</svg>")


def cmrr_svg(sweep: dict | None, min_cmrr_db: float | None, label: str) -> str | None:
    """CMRR against frequency on a log axis: nominal and worst case, the declared minimum and
    the CMRR At frequency marked. None without a sweep or without a finite value."""
    if not sweep:
        return None
    f = sweep["freqs_hz"]
    lines = [(sweep.get("nominal_db") or [], MARK_NOMINAL, "nominal"),
             (sweep.get("worst_db") or [], MARK_WORST, "worst case")]
    finite = [v for ys, _, _ in lines for v in ys if v is not None]
    if not finite:
        return None
    lo = min(finite + ([min_cmrr_db] if min_cmrr_db else []))
    hi = max(finite + ([min_cmrr_db] if min_cmrr_db else []))
    lo, hi = 20 * math.floor(lo / 20) - (20 if lo == hi else 0), 20 * math.ceil(hi / 20) + (20 if lo == hi else 0)
    w, h, left, right, top, bottom = 440, 300, 52, 12, 14, 40
    lf0, lf1 = math.log10(f[0]), math.log10(f[-1])

    def x(v): return left + (math.log10(v) - lf0) / (lf1 - lf0) * (w - left - right)

    def y(v): return h - bottom - (min(max(v, lo), hi) - lo) / (hi - lo) * (h - top - bottom)

    body = [f'<rect x="{left}" y="{top}" width="{w - left - right}" height="{h - top - bottom}" '
            f'fill="none" stroke="{AXIS}"/>']
    for d in range(int(math.ceil(lf0)), int(math.floor(lf1)) + 1):
        xv = x(10.0 ** d)
        body.append(f'<line x1="{_p(xv)}" y1="{top}" x2="{_p(xv)}" y2="{h - bottom}" stroke="{GRID}"/>')
        body.append(f'<text x="{_p(xv)}" y="{h - bottom + 15}" text-anchor="middle">'
                    f'{_esc(fmt.hertz(10.0 ** d))}</text>')
    for t in range(int(lo), int(hi) + 1, 20):
        body.append(f'<text x="{left - 6}" y="{_p(y(t) + 4)}" text-anchor="end">{t}</text>')
    body.append(f'<text x="{(left + w - right) // 2}" y="{h - 6}" text-anchor="middle">frequency</text>')
    body.append(f'<text x="12" y="{(top + h - bottom) // 2}" text-anchor="middle" '
                f'transform="rotate(-90 12 {(top + h - bottom) // 2})">CMRR (dB)</text>')
    for ys, colour, _ in lines:
        pts = " ".join(f"{_p(x(fv))},{_p(y(v))}" for fv, v in zip(f, ys) if v is not None)
        if pts:
            body.append(f'<polyline points="{pts}" fill="none" stroke="{colour}" stroke-width="2"/>')
    if min_cmrr_db:
        body.append(f'<line x1="{left}" y1="{_p(y(min_cmrr_db))}" x2="{w - right}" y2="{_p(y(min_cmrr_db))}" '
                    f'stroke="{MARK_REQUIRED}" stroke-dasharray="4 2"/>')
    at = sweep.get("at_hz")
    if at and f[0] <= at <= f[-1]:
        body.append(f'<line x1="{_p(x(at))}" y1="{top}" x2="{_p(x(at))}" y2="{h - bottom}" '
                    f'stroke="{MARK_AT}" stroke-dasharray="4 2"/>')
    legend = [(c, n) for _, c, n in lines] + ([(MARK_REQUIRED, "Min CMRR")] if min_cmrr_db else []) + \
        ([(MARK_AT, f"CMRR At {fmt.hertz(at)}")] if at else [])
    for i, (colour, name) in enumerate(legend):
        body.append(f'<text x="{w - right - 4}" y="{top + 12 + 13 * i}" text-anchor="end" '
                    f'style="fill:{colour}">{_esc(name)}</text>')
    return (f'<svg role="img" aria-label="{_esc(label)}" width="{w}" height="{h}" '
            f'viewBox="0 0 {w} {h}">' + "".join(body) + "</svg>")
