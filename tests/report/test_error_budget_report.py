"""The whole error budget end to end: analysis -> JSON contract, terminal table at 100 columns,
Markdown table, HTML bars and CMRR-against-frequency plot, and cmrr-budget judged at CMRR At.

Check values: hand arithmetic of docs/engineering.md sec. 11 (Vos through the noise gain) and
the worst-case CMRR (1 + G)/(4 t) of sec. 2 (Sedra & Smith 6th ed., Problem 2.67)."""

from __future__ import annotations

import json
import math
import re

import pytest

from frontcheck.analysis import analyse
from frontcheck.checks import run_rules
from frontcheck.circuit import Intent, OpAmpModel, Sourced
from frontcheck.report import budget_view, terminal
from rule_fixtures import context, diff_stage, only, result


def _model(**numbers):
    inf, zero = Sourced(math.inf, "field"), Sourced(0.0, "field")
    return OpAmpModel("part data", inf, inf, zero, zero, zero, zero,
                      **{k: Sourced(v, "field", f"{k} field of U1") for k, v in numbers.items()})


def _stage(**intent):
    # G = 1 difference amp (10k, 0.1 %), Vos 100 uV given, en and drift not.
    st = diff_stage(intent=Intent(input_diff=(-1.0, 1.0), input_cm=(-2.0, 2.0), **intent),
                    model=_model(vos=100e-6))
    return st


def test_budget_terms_in_the_result():
    st = _stage(band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0), cmrr_at_hz=50.0,
                error_budget_fs=0.01)
    r = analyse(st)
    b = r.error_budget
    assert set(b) >= {"gain", "cmrr", "offset", "bias", "noise", "drift", "total"}
    # Vos 100 uV through noise gain 2, over G = 1: 200 uV RTI = 0.02 % of the 1 V full scale.
    assert b["offset"]["rti_v"]["worst"] == pytest.approx(200e-6, rel=1e-9)
    assert b["offset"]["worst"] == pytest.approx(0.02, rel=1e-9)
    # neither en nor in given: a bound on each
    assert b["noise"]["requirement"] and [x["quantity"] for x in b["noise"]["bound"]] == ["en", "in"]
    assert all(x["max"] > 0 for x in b["noise"]["bound"])
    assert b["total"]["requirements"] == ["bias", "noise", "drift"]
    # CMRR against frequency: flat for a resistive stage with ideal op-amps, equal to the DC
    # worst case (1 + G)/(4 t) = 2 / 0.004 -> 53.98 dB (first order; exact corners 53.98 dB)
    sw = r.cmrr_sweep
    assert sw["freqs_hz"][0] == 1.0 and sw["freqs_hz"][-1] == pytest.approx(1e6)
    assert len(sw["freqs_hz"]) == 61
    assert sw["at_hz"] == 50.0 and sw["at_worst_db"] == pytest.approx(r.cmrr.worst_db, abs=0.01)
    assert sw["at_worst_db"] == pytest.approx(20 * math.log10(2 / 0.004), abs=0.05)


def test_json_contract(tmp_path):
    from frontcheck.report import json_report
    from test_report_handmade import make_report
    rep = make_report()
    st = _stage(band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0), error_budget_fs=0.01)
    r = analyse(st)
    p = rep.projects[0]
    p.stages.append(st)
    p.results[st.id] = r
    d = json.loads(json_report.render(rep))
    stage = next(s for s in d["stages"] if s["id"] == st.id)
    terms = stage["error_budget"]["terms"]
    for k in ("gain", "cmrr", "offset", "bias", "noise", "drift"):
        assert {"worst", "rss", "rti_v"} <= set(terms[k]), k
        assert {"worst", "rss"} <= set(terms[k]["rti_v"])
    assert terms["noise"]["requirement"] is True
    assert terms["noise"]["rti_rms_v"] is None
    assert [b["unit"] for b in terms["noise"]["bound"]] == ["V/rtHz", "A/rtHz"]
    assert terms["offset"]["requirement"] is False
    assert terms["offset"]["rti_v"]["worst"] == pytest.approx(200e-6)
    assert stage["intent"]["band_hz"] == [0.1, 10.0]
    assert len(stage["cmrr_against_frequency"]["worst_db"]) == 61


def test_noise_term_carries_rms_and_pp_in_json():
    st = diff_stage(intent=Intent(input_diff=(-1.0, 1.0), band_hz=(0.1, 10.0)),
                    model=_model(vos=1e-6, en=10e-9, **{"in_": 1e-12}))
    b = analyse(st).error_budget
    n = b["noise"]
    assert n["requirement"] is False
    assert n["rti_pp_v"] == pytest.approx(6.6 * n["rti_rms_v"])
    assert n["rti_v"]["worst"] == pytest.approx(3.3 * n["rti_rms_v"])


def test_terminal_budget_table_fits_100_columns():
    from test_report_handmade import make_report
    rep = make_report()
    st = _stage(band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0), error_budget_fs=0.01)
    rep.projects[0].stages.append(st)
    rep.projects[0].results[st.id] = analyse(st)
    text = terminal.render(rep, width=100)
    lines = text.splitlines()
    assert max(len(x) for x in lines) <= 100
    start = max(i for i, x in enumerate(lines) if x.startswith("U1A  difference"))   # its section
    head = next(i for i, x in enumerate(lines) if i > start and x.startswith("Term") and "Worst RTI" in x)
    block = "\n".join(lines[head:head + 14])
    for needle in ("offset", "noise", "drift", "needs en <=", "needs Vos drift <=", "200 µV"):
        assert needle in block, needle


def test_markdown_and_html_show_the_budget():
    from frontcheck.report import html as html_report, markdown
    from test_report_handmade import make_report
    rep = make_report()
    st = _stage(band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0), cmrr_at_hz=50.0, error_budget_fs=0.01,
                min_cmrr_db=50.0)
    rep.projects[0].stages.append(st)
    rep.projects[0].results[st.id] = analyse(st)
    md = markdown.render(rep)
    assert "| Term | Worst % FS | RSS % FS | Worst RTI | RSS RTI | Basis |" in md
    assert re.search(r"\| offset \| 0\.0200 % \|", md) or "| offset | 0.02 % |" in md
    h = html_report.render(rep)
    assert 'aria-label="CMRR against frequency of U1A"' in h
    assert 'aria-label="Error budget of U1A"' in h
    assert "<script" not in h.lower()


def test_svg_helpers_degrade_without_data():
    assert budget_view.cmrr_svg(None, 80.0, "x") is None
    assert budget_view.bars_svg({"noise": {"requirement": True, "worst": None, "rss": None}}, "x") is None


def _filtered_stage(cmrr_at=None):
    """Three-op-amp in-amp (G = 1 + 2 x 10k/10k = 3, exact resistors) behind two RC legs,
    10k with 10 nF +-5 % to ground: the op-amp inputs do not load the filter."""
    from frontcheck.circuit import Capacitor, Stage
    from spice import res, three_opamp
    sub = three_opamp(rf=10e3, rg=10e3, tol=0.0)
    sub.resistors += [res("RFP", "SRC_P", "FP", 10e3, 0.0), res("RFN", "SRC_N", "FN", 10e3, 0.0)]
    sub.capacitors = [Capacitor("CP", "FP", "GND", Sourced(10e-9), Sourced(0.05)),
                      Capacitor("CN", "FN", "GND", Sourced(10e-9), Sourced(0.05))]
    sub.opamps[0].inp, sub.opamps[1].inp = "FP", "FN"
    sub.ports["in_p"], sub.ports["in_n"] = "SRC_P", "SRC_N"
    return Stage("U1A/U1B/U1C", "three-opamp", ["CN", "CP", "U1"], ["U1A", "U1B", "U1C"], {}, sub,
                 Intent(min_cmrr_db=40.0, cmrr_at_hz=cmrr_at))


def test_cmrr_budget_is_judged_at_cmrr_at():
    # Two RC legs with the time constants 10k x 10 nF x (1 +- 5 %): the common mode reaches the
    # in-amp as |1/(1+jw ta) - 1/(1+jw tb)| of differential signal (Kitchin & Counts, RFI
    # chapter), the signal itself as |1/(1+jw t)|, so CMRR = |Hdm| / conversion.
    def expected_db(f):
        w = 2 * math.pi * f
        conv = abs(1 / (1 + 1j * w * 10.5e-5) - 1 / (1 + 1j * w * 9.5e-5))
        return 20 * math.log10(abs(1 / (1 + 1j * w * 1e-4)) / conv)
    assert expected_db(50.0) > 40.0 > expected_db(1e3)       # 50.07 dB and 25.5 dB
    for at, fails in ((50.0, False), (1e3, True)):
        st = _filtered_stage(at)
        r = analyse(st)
        assert r.cmrr_sweep["at_worst_db"] == pytest.approx(expected_db(at), abs=0.01)
        fs = only(run_rules(context([st], [r])), "cmrr-budget")
        assert bool(fs and fs[0].severity == "error") == fails, (at, [f.message for f in fs])
        if fails:
            assert "(at 1.00 kHz) CMRR 25.5 dB" in fs[0].message and "at DC: nominal" in fs[0].message


def test_percent_of_full_scale_is_spelled_out_once_per_report():
    # issue "one number style": "% FS" is explained once per report; per-stage budget
    # headings use the short form, in every format that shows budgets
    from frontcheck import formatting as fmt
    from frontcheck.report import render
    from test_report_handmade import make_report

    report = make_report()
    assert len([r for p in report.projects for r in p.results.values() if r.error_budget]) == 2
    for form in ("text", "markdown", "html"):
        text = render(report, form)
        assert text.count(fmt.PERCENT_FS_MEANING) == 1, form
        assert text.count("full-scale") == 1, form


def test_reporters_show_the_total_the_analysis_gave_and_add_nothing():
    from frontcheck.report.model import budget_rows

    rows, total = budget_rows({"a": {"worst": 1.0, "rss": 1.0}, "b": {"worst": 2.0, "rss": 2.0}})
    assert [r[0] for r in rows] == ["a", "b"] and total is None
    # the analysis' own total: linear sum and root-sum-square (1 + 2, sqrt(1 + 4))
    from frontcheck.analysis.budget import total_of
    t = total_of({"a": {"worst": 1.0, "rss": 1.0}, "b": {"worst": 2.0, "rss": 2.0}})
    assert t["worst"] == 3.0 and t["rss"] == pytest.approx(math.sqrt(5.0), rel=1e-12)


def test_total_with_a_requirement_term_is_a_lower_bound_and_says_what_it_leaves_out():
    # G = 1 difference amp with Vos given but no Ib, en or TCR: bias, noise and drift are
    # requirements (no value), so the total holds gain, cmrr and offset only and must say so.
    r = analyse(_stage(band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0), error_budget_fs=0.01))
    total = r.error_budget["total"]
    assert total["requirements"] == ["bias", "noise", "drift"]
    rows = budget_view.rows(r.error_budget)
    assert rows[-1][0] == "total"
    assert rows[-1][5] == "known terms only: bias, noise, drift not included"
    assert terminal._budget_total(r, " / ").startswith("≥ ")
    assert "(bias, noise, drift not included: requirements)" in terminal._left_out(r)
    # every number given: nothing left out, no lower-bound mark
    full = _model(vos=100e-6, ib=1e-9, ios=0.1e-9, en=8e-9, in_=0.2e-12, vos_drift=1e-6)
    st = diff_stage(intent=Intent(input_diff=(-1.0, 1.0), input_cm=(-2.0, 2.0), band_hz=(0.1, 10.0)),
                    model=full)
    r2 = analyse(st)
    assert not r2.error_budget["total"].get("requirements")
    assert not terminal._budget_total(r2).startswith("≥") and terminal._left_out(r2) == ""
    assert budget_view.rows(r2.error_budget)[-1][5] == ""


def test_term_without_value_or_bound_names_what_is_missing():
    # No Error Budget declared: a missing Vos cannot become a bound; the row says what is missing.
    st = diff_stage(intent=Intent(input_diff=(-1.0, 1.0), input_cm=(-2.0, 2.0)), model=_model())
    r = analyse(st)
    text = budget_view.basis(r.error_budget["offset"], "offset")
    assert text.startswith("not computed: Vos of U1") and "declare Error Budget" in text


def _summary_budget_cells(stage, result) -> tuple[str, str]:
    """The budget cell of the stage's summary row in the Markdown and the HTML report."""
    from frontcheck.report import html as html_report, markdown
    from test_report_handmade import make_report
    rep = make_report()
    rep.projects[0].stages.append(stage)
    rep.projects[0].results[stage.id] = result
    md_row = next(line for line in markdown.render(rep).splitlines()
                  if line.startswith(f"| `{stage.id}` |"))
    md_cell = md_row.rstrip(" |").rsplit(" | ", 1)[-1]
    h = html_report.render(rep)
    html_row = h[h.index('<table class="summary">'):]
    html_row = html_row[html_row.index(f">{stage.id}<"):]
    html_row = html_row[:html_row.index("</tr>")]
    html_cell = re.findall(r'<td class="num">([^<]*)</td>', html_row)[-1]
    return md_cell, html_cell


def test_every_summary_row_marks_a_lower_bound_total():
    # Bias, noise and drift are requirements here (no Ib, en or TCR given): the total is a lower
    # bound, and a summary row that showed it bare would read as the whole budget.
    st = _stage(band_hz=(0.1, 10.0), temp_range_c=(-20.0, 60.0), error_budget_fs=0.01)
    r = analyse(st)
    assert r.error_budget["total"]["requirements"]
    for cell in _summary_budget_cells(st, r):
        assert cell.count("≥ ") == 2 and " / " in cell, cell
    full = _model(vos=100e-6, ib=1e-9, ios=0.1e-9, en=8e-9, in_=0.2e-12, vos_drift=1e-6)
    st2 = diff_stage(intent=Intent(input_diff=(-1.0, 1.0), input_cm=(-2.0, 2.0), band_hz=(0.1, 10.0)),
                     model=full)
    r2 = analyse(st2)
    for cell in _summary_budget_cells(st2, r2):
        assert "≥" not in cell and "%" in cell, cell
