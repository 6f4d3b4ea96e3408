"""The HTML report's colours: every text colour is readable on what it sits on, and no colour
of the page, its plots or its style sheet is written anywhere but frontcheck.report.palette.

Contrast is computed as WCAG 2.1 defines it (W3C, Web Content Accessibility Guidelines 2.1,
"relative luminance" and "contrast ratio" in the glossary; success criterion 1.4.3 asks 4.5:1
for body text).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from frontcheck.report import palette

REPORT = Path(palette.__file__).resolve().parent


def _luminance(hex_colour: str) -> float:
    def channel(c: int) -> float:
        s = c / 255
        return s / 12.92 if s <= 0.04045 else ((s + 0.055) / 1.055) ** 2.4   # WCAG 2.1
    h = hex_colour.lstrip("#")
    r, g, b = (channel(int(h[i:i + 2], 16)) for i in (0, 2, 4))
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast(a: str, b: str) -> float:
    la, lb = sorted((_luminance(a), _luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_contrast_formula_on_known_pairs():
    # WCAG 2.1: black on white is 21:1, a colour on itself 1:1; #767676 on white is the
    # commonly quoted lightest grey that passes 4.5:1 (4.54:1) [common practice]
    assert contrast("#000000", "#ffffff") == pytest.approx(21.0)
    assert contrast("#336699", "#336699") == pytest.approx(1.0)
    assert contrast("#767676", "#ffffff") == pytest.approx(4.54, abs=0.01)


@pytest.mark.parametrize("what,ink,ground", palette.text_pairs(), ids=lambda x: str(x))
def test_text_colours_reach_4_5_to_1(what, ink, ground):
    assert contrast(ink, ground) >= 4.5, (what, ink, ground, round(contrast(ink, ground), 2))


def test_colours_are_defined_once():
    # a hex colour in a report module other than the palette is a colour that can drift
    hex_colour = re.compile(r"#[0-9a-fA-F]{6}\b|#[0-9a-fA-F]{3}\b")
    for path in sorted(REPORT.glob("*.py")):
        if path.name == "palette.py":
            continue
        found = hex_colour.findall(path.read_text(encoding="utf-8"))
        assert not found, (path.name, found)


def test_no_colour_of_the_former_palette():
    # the page's colours are our own: none of the ones it used before this palette
    former = {"#1f2328", "#d0d7de", "#f6f8fa", "#dafbe1", "#116329", "#ffebe9", "#a40e26",
              "#ddf4ff", "#0550ae", "#656d76", "#fff8c5", "#7d4e00", "#8c959f"}
    values = {v.lower() for k, v in vars(palette).items()
              if k.isupper() and isinstance(v, str) and v.startswith("#")}
    assert values and not values & former
