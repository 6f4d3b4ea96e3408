"""One number style: frontcheck.formatting writes every number a reader sees.

Unit checks of the formatter (values worked by hand: SI prefixes per the SI Brochure, 9th ed.,
table 7), a grep of the reporters and rule messages for number formatting done on the spot,
and a scan of every golden report for what the style forbids (exponents, '+-', 'ohm').
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import pytest

from conftest import REPO
from frontcheck import formatting as fmt
from test_report_handmade import GOLDEN


@pytest.mark.parametrize("value, unit, text", [
    (9090.0, "Ω", "9.09 kΩ"), (10e3, "Ω", "10.0 kΩ"), (175.0, "Ω", "175 Ω"),
    (1e-9, "A", "1.00 nA"), (2.5e-5, "V", "25.0 µV"), (0.005, "V", "5.00 mV"),
    (999.96, "Ω", "1.00 kΩ"), (4.7e-9, "F", "4.70 nF"), (0.0, "V", "0 V"),
    (math.inf, "dB", "∞ dB"), (None, "V", "n/a"),
])
def test_eng(value, unit, text):
    assert fmt.eng(value, unit) == text


def test_signed_and_trimmed():
    assert fmt.volts(-0.339, signed=True) == "-339 mV"
    assert fmt.volts(0.339, signed=True) == "+339 mV"
    assert fmt.eng(48.0, "V", 5, trim=True) == "48 V"
    assert fmt.eng(-0.02, "V", 5, signed=True, trim=True) == "-20 mV"


@pytest.mark.parametrize("fraction, text", [
    (0.0951, "9.51 %"), (0.07, "7.00 %"), (0.004, "0.400 %"), (5.44, "544 %"),
    (2.5e-6, "2.50 ppm"), (-1.75e-10, "under 0.001 ppm"), (0.0, "0 %"),
])
def test_percent_has_three_figures_and_no_exponent(fraction, text):
    assert fmt.percent(fraction) == text


def test_numbers_ranges_and_tolerances():
    assert fmt.number(205.647) == "205.65"
    assert fmt.number(201.0) == "201"
    assert fmt.number(300000.0) == "300,000"
    assert fmt.span(204.83, 206.467) == "204.83 to 206.47"
    assert fmt.tolerance(0.01) == "±1.00 %"
    assert fmt.db(72.66) == "72.7 dB" and fmt.db(math.inf) == "∞ dB"
    assert fmt.percent_points(9.51) == "9.51 %"


def test_glue_units_keeps_value_and_unit_together():
    glued = fmt.glue_units("through 175 Ω and 10.0 kΩ, 2.31 % off, 72.7 dB; R11 10 k")
    assert "175\u00a0Ω" in glued and "10.0\u00a0kΩ" in glued and "2.31\u00a0%" in glued
    assert "72.7\u00a0dB" in glued


# -- no number is formatted on the spot ------------------------------------------------------

PACKAGE = REPO / "frontcheck"
# a format spec applied to a number inside an f-string: {x:.3f} {x:g} {x:+.1f} {x:.4g} {x:%}
AD_HOC = re.compile(r"\{[^{};]*:\+?\d*\.?\d*[fgeEG%]\}")
WRITERS = sorted([*PACKAGE.glob("report/*.py"), *PACKAGE.glob("checks/*.py"),
                  PACKAGE / "analysis" / "__init__.py"])


def _offending_lines(path: Path) -> list[str]:
    out = []
    for n, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
        code = line.split("#", 1)[0]
        if AD_HOC.search(code) and "def _px" not in code:
            out.append(f"{path.relative_to(REPO)}:{n}: {line.strip()}")
    return out


def test_reporters_and_rules_use_the_one_formatter():
    found = [hit for path in WRITERS for hit in _offending_lines(path)]
    # plots._px writes SVG coordinates (drawing, not a figure a reader reads)
    found = [h for h in found if not re.search(r"plots\.py:\d+: return f\"\{v:\.2f\}\"", h)]
    assert found == [], "numbers formatted outside frontcheck.formatting:\n" + "\n".join(found)


def test_grep_catches_ad_hoc_formatting():
    assert AD_HOC.search('msg = f"gain {g:.5g} and {v:+.3f} V"')
    assert not AD_HOC.search('msg = f"gain {fmt.number(g)}"')


def _reader_text(path: Path) -> str:
    text = path.read_text(encoding="utf-8")
    if path.suffix in (".json", ".sarif"):
        # machine numbers may use exponents; what a reader sees are the strings
        strings: list[str] = []

        def walk(x):
            if isinstance(x, str):
                strings.append(x)
            elif isinstance(x, dict):
                for v in x.values():
                    walk(v)
            elif isinstance(x, list):
                for v in x:
                    walk(v)
        walk(json.loads(text))
        return "\n".join(strings)
    return text


@pytest.mark.parametrize("name", sorted(p.name for p in GOLDEN.iterdir() if p.is_file()))
def test_golden_reports_follow_the_style(name):
    text = _reader_text(GOLDEN / name)
    if name.endswith(".html"):
        text = re.sub(r"<svg.*?</svg>", "", text, flags=re.S)    # drawing coordinates
        text = re.sub(r"<style>.*?</style>", "", text, flags=re.S)
    assert not re.search(r"\b\d(?:\.\d+)?[eE][-+]\d", text), "exponent notation"
    assert not re.search(r"\+-\s?\d", text) and "+/-" not in text
    assert not re.search(r"\bohms?\b", text)
    assert "unbounded" not in text and " inf " not in text


def test_finite_gives_a_float_for_every_finite_number_and_none_otherwise():
    from frontcheck.formatting import finite

    class Big(float):
        pass

    for x, want in [(1.5, 1.5), (-0.0, -0.0), (3, 3.0), (Big(2.5), 2.5), ("4.5", 4.5),
                    (float("inf"), None), (float("-inf"), None), (float("nan"), None),
                    (None, None), (True, None), ("x", None), ([1.0], None)]:
        got = finite(x)
        assert got == want and (got is None or type(got) is float), x
    assert str(finite(-0.0)) == "-0.0"
