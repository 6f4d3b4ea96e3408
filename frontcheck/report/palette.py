"""The colours of the HTML report, chosen for this report and defined once, by meaning.

Every colour the page, its plots and its stage diagrams use is named here for what it says
(an error, the valid operating region, a worst-case mark), never for its hue, so a change of
palette is one edit and no two places drift apart.

Rules the choice follows (tests/test_report_palette.py checks the first two):

* text colours reach a WCAG 2.x contrast ratio of at least 4.5:1 on white and on the tint
  they sit on (W3C, Web Content Accessibility Guidelines 2.1, success criterion 1.4.3, with
  relative luminance as WCAG 2.1 defines it);
* a severity is never told by a background tint alone: the tag has a border and its word in
  the ink colour, so a page printed without backgrounds (the browsers' default) still reads;
* plots stay legible in grey-scale print: the region fill is light, marks are dark and dashed.
"""

from __future__ import annotations

# -- page ------------------------------------------------------------------------------------
PAPER = "#ffffff"            # page background
INK = "#1c2026"              # body text
INK_QUIET = "#545b66"        # secondary text: paths, units, captions
RULE_LINE = "#c3c8d0"        # table borders, section rules, plot frames
PANEL = "#f2f4f7"            # table headers, the summary panel
LINK = "#1b4f8a"             # anchors inside the page

# -- verdicts and severities: (ink, tint) ------------------------------------------------------
PASS_INK, PASS_TINT = "#245c2e", "#e2f0e0"
ERROR_INK, ERROR_TINT = "#9c2019", "#f8e3df"
WARNING_INK, WARNING_TINT = "#6f4a00", "#fbeecb"
INFO_INK, INFO_TINT = "#22577a", "#e2eef5"
SEVERITY_COLOURS = {"error": (ERROR_INK, ERROR_TINT), "warning": (WARNING_INK, WARNING_TINT),
                    "info": (INFO_INK, INFO_TINT)}
FIX_INK = PASS_INK           # the fix hint under a finding

# -- plots -----------------------------------------------------------------------------------
# REGION_FILL is drawn fully opaque so a rendered page can be checked for it.
REGION_FILL = "#9fd3c7"      # valid operating region
REGION_EDGE = "#2f7466"
INPUT_BOX = "#b0361e"        # declared input box and its corners
BAR_WORST = "#2e5b8c"        # Monte Carlo bars, error-budget worst-case bars
BAR_RSS = "#a8c3df"          # error-budget RSS bars
MARK_NOMINAL = INK
MARK_WORST = ERROR_INK
MARK_STATISTICAL = "#a85d00"
MARK_REQUIRED = MARK_STATISTICAL   # a declared minimum drawn on a plot
MARK_AT = BAR_WORST                # the frequency a figure is judged at
GRID = "#e4e7ec"             # decade lines
AXIS = "#7f8794"             # plot frames and ticks

# -- stage diagrams --------------------------------------------------------------------------
WIRE = INK                   # parts and wires as recognised
INTERNAL = INK_QUIET         # parts inside an integrated amplifier (from part data)
PORT = LINK                  # the stage's inputs, REF and output


def css_variables() -> str:
    """The palette as CSS custom properties on :root, for the page's style sheet."""
    names = {"paper": PAPER, "ink": INK, "ink-quiet": INK_QUIET, "rule": RULE_LINE,
             "panel": PANEL, "link": LINK, "pass-ink": PASS_INK, "pass-tint": PASS_TINT,
             "error-ink": ERROR_INK, "error-tint": ERROR_TINT, "warning-ink": WARNING_INK,
             "warning-tint": WARNING_TINT, "info-ink": INFO_INK, "info-tint": INFO_TINT,
             "fix-ink": FIX_INK}
    return ":root{" + ";".join(f"--{k}:{v}" for k, v in names.items()) + "}"


def text_pairs() -> list[tuple[str, str, str]]:
    """(what, text colour, background) for every text the page sets on a colour."""
    pairs = [("body text", INK, PAPER), ("quiet text", INK_QUIET, PAPER),
             ("quiet text on a panel", INK_QUIET, PANEL), ("table header", INK, PANEL),
             ("link", LINK, PAPER), ("fix hint", FIX_INK, PAPER),
             ("pass verdict", PASS_INK, PASS_TINT), ("port label", PORT, PAPER)]
    for name, (ink, tint) in SEVERITY_COLOURS.items():
        pairs += [(f"{name} tag", ink, tint), (f"{name} word on white", ink, PAPER)]
    pairs += [("plot mark: worst", MARK_WORST, PAPER),
              ("plot mark: statistical", MARK_STATISTICAL, PAPER),
              ("plot mark: frequency", MARK_AT, PAPER), ("input box label", INPUT_BOX, PAPER)]
    return pairs
