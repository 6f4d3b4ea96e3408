"""The HTML report's one style sheet: screen and print, colours from frontcheck.report.palette.

No web font, no external file: the system's own sans-serif and monospace faces. The page fits a
1280-pixel window without horizontal scrolling (wide tables scroll inside their own box) and
prints on A4 or Letter: backgrounds may be dropped by the browser, so nothing is told by a tint
alone, and figures, findings and table rows are not split across pages.
"""

from __future__ import annotations

from . import palette

_SHEET = """
*{box-sizing:border-box}
body{font-family:system-ui,-apple-system,"Segoe UI",Roboto,"Noto Sans","Liberation Sans",Arial,
sans-serif;margin:0 auto;padding:0 1.5rem 3rem;max-width:1240px;color:var(--ink);
background:var(--paper);line-height:1.45;font-size:15px}
a{color:var(--link)}
h1{font-size:1.45rem;margin:1.1rem 0 .2rem}
h2{font-size:1.2rem;margin:2rem 0 .6rem;border-bottom:2px solid var(--rule);padding-bottom:.2rem}
h3{font-size:1.05rem;margin:1.6rem 0 .4rem;padding-top:.6rem;border-top:1px solid var(--rule)}
h4{font-size:.95rem;margin:1rem 0 .3rem}
table{border-collapse:collapse;margin:.4rem 0 1rem;font-size:.88rem}
th,td{border:1px solid var(--rule);padding:.22rem .5rem;text-align:left;vertical-align:top}
th{background:var(--panel)}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
tr.total td{font-weight:600}
code{font-family:ui-monospace,"DejaVu Sans Mono","Liberation Mono",Menlo,Consolas,monospace;
font-size:.87em}
.muted{color:var(--ink-quiet)}
.scroll{overflow-x:auto;max-width:100%}
.verdict{font-size:1.05rem;font-weight:700;padding:.35rem .75rem;border-radius:4px;
display:inline-block;border:2px solid currentColor}
.pass{background:var(--pass-tint);color:var(--pass-ink)}
.fail{background:var(--error-tint);color:var(--error-ink)}
.sev{font-weight:700;text-transform:uppercase;font-size:.72rem;letter-spacing:.03em;
padding:0 .35rem;border-radius:3px;border:1px solid currentColor;white-space:nowrap}
.sev-error{background:var(--error-tint);color:var(--error-ink)}
.sev-warning{background:var(--warning-tint);color:var(--warning-ink)}
.sev-info{background:var(--info-tint);color:var(--info-ink)}
.sev-none{color:var(--pass-ink)}.sev-zero{color:var(--ink-quiet)}
.summary{background:var(--panel);border:1px solid var(--rule);border-radius:6px;
padding:.8rem 1.1rem;margin:.8rem 0 1.2rem}
.summary h2{border:0;margin:.6rem 0 .3rem;font-size:1rem;padding:0}
.summary .head{display:flex;flex-wrap:wrap;align-items:center;gap:.6rem 1.2rem}
.summary .counts{font-size:1rem}.summary .counts .sev{font-size:.8rem;padding:.05rem .45rem}
.summary .cols{display:grid;grid-template-columns:minmax(0,2fr) minmax(0,3fr);gap:.4rem 2rem}
.summary ul,.summary ol{margin:.2rem 0;padding-left:1.3rem}.summary li{margin:.15rem 0}
.summary p{margin:.4rem 0}
.caution{color:var(--error-ink)}
.safety{border:2px solid var(--error-ink);background:var(--paper);padding:.55rem .85rem;
border-radius:4px;max-width:62rem}
.finding{margin:.45rem 0;max-width:72rem}.finding.quiet{opacity:.65}
.fix{margin-left:1.2rem;color:var(--fix-ink)}
.tag{display:inline-block;min-width:1.3em;text-align:center;font-weight:700;font-size:.75rem;
border:1px solid currentColor;border-radius:50%;margin-right:.3rem}
.stage-top{display:flex;flex-wrap:wrap;gap:1rem 1.5rem;align-items:flex-start}
.diagram{border:1px solid var(--rule);border-radius:4px;padding:.4rem;margin:0;
max-width:100%;overflow-x:auto}
.diagram svg{display:block;max-width:100%;height:auto}
.diagram figcaption{font-size:.82rem;color:var(--ink-quiet);max-width:560px}
.stage-findings{flex:1 1 24rem;min-width:0}
.plots{display:flex;flex-wrap:wrap;gap:1rem}
.plot{border:1px solid var(--rule);border-radius:4px;padding:.4rem;margin:0}
.plot figcaption{font-size:.82rem;color:var(--ink-quiet);max-width:440px}
svg text{font-family:inherit;font-size:11px;fill:var(--ink)}
@page{margin:14mm 12mm}
@media print{
body{padding:0;max-width:none;font-size:11pt}
.scroll,.diagram{overflow:visible}
figure,.finding,tr,.summary,.safety{break-inside:avoid}
h2,h3,h4{break-after:avoid}
.plot svg{max-width:100%;height:auto}
a{color:inherit;text-decoration:none}
}
"""

CSS = palette.css_variables() + _SHEET
