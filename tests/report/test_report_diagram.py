"""Stage diagrams in the HTML report: every stage kind frontcheck recognises is drawn from its
roles with the values the design gives, parts a finding names are drawn in that finding's
colour and tagged with its number, and a stage no layout fits says so instead of a drawing.

Check values are the designs' own: the resistor values and tolerances written on the parts of
the netlists built here (tests/netlist_builder.py) and on the sample projects' schematics.
"""

from __future__ import annotations

import re
import subprocess
import sys

import pytest

from conftest import REPO
from frontcheck.finding import Finding
from frontcheck.recognise import find_stages
from frontcheck.report import html, palette
from frontcheck.report import stage_diagram as sd
from netlist_builder import NetlistBuilder
from test_diff_output_stage import _board
from test_recognise_integrated import GENERIC_RG, FakeParts, balanced_receiver, inamp_ic
from test_recognise_two_opamp import one, two_amp
from test_report_handmade import make_report


def texts(svg: str) -> list[str]:
    """The lines of text a reader sees on the drawing."""
    return [re.sub(r"<[^>]+>", "", t) for t in re.findall(r"<tspan[^>]*>.*?</tspan>", svg)]


def draw(stage, findings=()):
    numbered = list(enumerate(findings, 1))
    svg, caption = sd.diagram_svg(stage, sd.marks_for(stage, numbered))
    assert svg is not None, caption
    assert svg.startswith("<svg") and "xmlns" not in svg and "http" not in svg
    return svg, texts(svg), caption


def test_two_opamp_in_amp_drawn_with_its_values():
    stage = one(two_amp(rg="20k", vals=("100k 0.1%", "10k 0.1%", "10k 0.1%", "100k 0.1%")))
    _, lines, _ = draw(stage)
    for ref in ("R1", "R2", "R3", "R4"):
        assert ref in lines
    assert "R6 (RG)" in lines and lines.count("100 kΩ ±0.1 %") == 2 and lines.count("10.0 kΩ ±0.1 %") == 2
    # no tolerance written on R6: the drawing says the 1 % it shows is assumed
    assert "20.0 kΩ ±1 % assumed" in lines
    assert {"IN+", "IN−", "REF", "OUT"} <= set(lines) and "IN_P" in lines and "IN_N" in lines


def test_diff_output_pair_drawn_with_both_outputs():
    stage = next(s for s in find_stages(_board().build()).stages if s.kind == "diff-output")
    _, lines, _ = draw(stage)
    assert "R3 (Rf1)" in lines and "R4 (Rf2)" in lines and "R5 (RG)" in lines
    assert lines.count("10.0 kΩ ±1 %") == 2 and "1.00 kΩ ±1 %" in lines
    assert "OUT" in lines and "OUT−" in lines and "OP" in lines and "ON" in lines


def test_integrated_in_amp_block_with_external_rg():
    nb = inamp_ic(NetlistBuilder()).r("R1", "RGA", "RGB", "1k 0.1%")
    (stage,) = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG})).stages
    _, lines, caption = draw(stage)
    assert {"+IN", "−IN", "RG", "OUT", "REF"} <= set(lines)
    assert "R1 (RG)" in lines and "1.00 kΩ ±0.1 %" in lines
    # internal resistors come from part data: named in the caption, never drawn as placed parts
    # GENERIC_RG states K = 50 kΩ for G = 1 + K/RG = 1 + 2 Rf/RG: each Rf is K/2 = 25 kΩ
    assert "inside U3 (from part data, not drawn)" in caption and "Rf1 25.0 kΩ" in caption
    assert not any(t.startswith("U3.") for t in lines)


def test_integrated_in_amp_with_split_rg():
    nb = inamp_ic(NetlistBuilder()).r("R1", "RGA", "TAP", "500").r("R2", "TAP", "RGB", "500")
    nb.opamp("U4", {"": ("TAP", "DRL", "DRL")}, package="single")
    (stage,) = find_stages(nb.build(), FakeParts({"U3": GENERIC_RG})).stages
    _, lines, _ = draw(stage)
    assert "R1 (RGa)" in lines and "R2 (RGb)" in lines


def test_integrated_difference_amp_block():
    data = {"name": "test unity receiver", "gain": 1.0, "r_in": 10e3, "ratio_tol": 5e-4}
    (stage,) = find_stages(balanced_receiver(NetlistBuilder()).build(), FakeParts(diffamps={"U4": data})).stages
    _, lines, caption = draw(stage)
    assert {"+IN", "−IN", "OUT", "REF"} <= set(lines) and "RG" not in lines
    assert "AUD_P" in lines and "AUD_N" in lines and "R1 10.0 kΩ" in caption


def test_a_gain_network_no_layout_fits_is_said_not_drawn():
    # RF from the output to the gain pin and RG to REF: the block layout has no place for RF
    nb = NetlistBuilder().part("U1", "fb-inamp", "Project:FbInAmp", pins=[
        ("1", "RG", "passive", "FB"), ("2", "VIN-", "input", "IN_N"), ("3", "VIN+", "input", "IN_P"),
        ("4", "V-", "power_in", "GND"), ("5", "REF", "input", "VREF"), ("6", "VOUT", "output", "OUT"),
        ("7", "V+", "power_in", "+3V3")]).pins_to("J1", "IN_P", "IN_N", "OUT", "VREF")
    nb.r("R6", "FB", "VREF", "10k").r("R7", "FB", "OUT", "10k")
    data = {"name": "test feedback-pin class", "arch": "feedback-pin", "g0": 5.0, "r_in": 1e9,
            "ratio_tol": 1e-3}
    (stage,) = find_stages(nb.build(), FakeParts({"U1": data})).stages
    svg, caption = sd.diagram_svg(stage, sd.Marks())
    assert svg is None and "No diagram of this stage" in caption and "RF" in caption


def test_finding_marks_its_parts_in_its_colour_with_its_number():
    stage = one(two_amp(rg="20k"))
    plain, _, _ = draw(stage)
    f_err = Finding(rule="ratio-mismatch", severity="error", stage=stage.id,
                    references=["R1", "R2", "U1"], message="ratio")
    f_warn = Finding(rule="headroom", severity="warning", stage=stage.id, references=["U1"],
                     message="output")
    f_info = Finding(rule="assumed-value", severity="info", stage=stage.id, references=["R6"],
                     message="assumed")
    f_out = Finding(rule="input-filter", severity="warning", stage=stage.id, references=["C9"],
                    message="filter")
    svg, lines, caption = draw(stage, [f_err, f_warn, f_info, f_out])
    assert palette.ERROR_INK not in plain and palette.WARNING_INK not in plain
    assert palette.ERROR_INK in svg
    # the error names resistors: they carry its number; the op-amps are not marked by it
    assert "R1  [1]" in lines and "R2  [1]" in lines and "R3" in lines
    # the warning names only the op-amp: both units carry its number and colour
    marked_amps = [t for t in lines if t.startswith("U1A") or t.startswith("U1B")]
    assert marked_amps == ["U1A  [2]", "U1B  [2]"] and palette.WARNING_INK in svg
    # info findings mark nothing; a finding about parts outside the stage is said in the caption
    assert "R6 (RG)" in lines and not any("[3]" in t for t in lines)
    assert "finding(s) 4 name only parts outside the stage" in caption


def test_sample_values_on_the_drawing_equal_the_schematic():
    # sample_projects/shunt-monitor: R2 and R4 100k, R3 10k, R5 10.2k, all 0.1 % on the sheet
    from frontcheck.pipeline import RunOptions, run
    report = run([str(REPO / "sample_projects" / "shunt-monitor")], RunOptions(samples=0, seed=1))
    p = report.projects[0]
    (stage,) = p.stages
    _, lines, _ = draw(stage)
    assert lines.count("100 kΩ ±0.1 %") == 2 and "10.0 kΩ ±0.1 %" in lines
    assert "10.2 kΩ ±0.1 %" in lines and "/BAT+" in lines and "/ISENSE" in lines


def test_page_shows_diagram_or_says_why_not():
    page = html.render(make_report())
    # U1 (difference amplifier) is drawn; the hand-made in-amp names its roles RF1/RF2, which
    # no layout knows: the page says so rather than draw it
    assert page.count('<figure class="diagram">') == 1
    assert "No diagram of this stage: the roles Ra, Rb, Rc, Rd, Rf1, Rf2 were not all found" in page


def test_rendering_loads_no_numpy_or_plotting_library():
    code = ("import sys; sys.path[:0] = ['tests', 'tests/report']; import frontcheck.report.html as h; "
            "assert 'schemdraw' not in sys.modules; "
            "from test_report_handmade import make_report; h.render(make_report()); "
            "assert 'schemdraw' in sys.modules; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('numpy', 'matplotlib')))")
    out = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True, text=True,
                         timeout=120)
    assert out.returncode == 0, out.stderr[-2000:]
    assert out.stdout.strip() == "[]"
