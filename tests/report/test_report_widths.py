"""The text report at 80, 100 and 160 columns: snapshots, and what must hold at every width.

From 80 columns up no line is wider than the terminal, no number is cut ('…'), every figure of
the summary appears whole with its unit, and a value never leaves its unit on another line.
Piped output follows COLUMNS. Info findings that repeat one fact print once with a count;
references sort naturally (R5 before R10).
"""

from __future__ import annotations

import re
import subprocess
import sys

import pytest

from conftest import REPO
from frontcheck.finding import Finding
from frontcheck.report import terminal
from frontcheck.report.model import natural
from test_report_handmade import check_golden, make_report

WIDTHS = (80, 100, 160)
# figures of the hand-made report's summary, as the one number style writes them
FIGURES = ["1.0025", "0.9985 to 1.0065", "46.1 dB", "45.2 dB", "45.7 dB", "0.650 %", "0.275 %",
           "99.602 to 100.4", "∞ dB", "94.0 dB", "100.0 dB", "-100 mV", "1.40 %", "0.588 %"]


@pytest.mark.parametrize("width", WIDTHS)
def test_snapshot(width):
    check_golden(f"handmade-{width}.txt", terminal.render(make_report(), width=width))


@pytest.mark.parametrize("width", WIDTHS)
def test_fits_and_cuts_no_number(width):
    text = terminal.render(make_report(), width=width)
    assert max(len(line) for line in text.splitlines()) <= width
    assert "…" not in text
    flat = re.sub(r"\s+", " ", text)
    for figure in FIGURES:
        assert figure in text or figure in flat, figure
    # a value and its unit on one line: no line ends in a number whose unit opens the next
    lines = text.splitlines()
    for a, b in zip(lines, lines[1:]):
        assert not (re.search(r"\d$", a) and re.match(r"\s*[|]?\s*(?:[kmµnp]?(?:Ω|V|A|Hz|F)|dB|%)\b",
                                                       b)), (a, b)


def test_narrow_terminals_stack_the_summary():
    assert "| Stage" not in terminal.render(make_report(), width=80).replace("|Stage", "| Stage")
    wide = terminal.render(make_report(), width=160)
    assert "References" in wide and "R11 R12 R13 R14 R15 R16 R17 U2" in wide


def test_piped_output_follows_columns():
    out = subprocess.run([sys.executable, "-m", "frontcheck", "check",
                          "sample_projects/bench-scale"], cwd=REPO, capture_output=True,
                         text=True, env={"COLUMNS": "80", "PATH": "/usr/bin:/bin"})
    assert out.returncode == 0, out.stderr
    lines = out.stdout.splitlines()
    assert max(len(line) for line in lines) <= 80
    assert any(line.strip().startswith("gain") for line in lines)      # the stacked summary


@pytest.mark.parametrize("command", [["rules"], ["explain", "ratio-mismatch"],
                                     ["explain", "source-loading"]])
def test_rules_and_explain_fit_80_columns(command):
    out = subprocess.run([sys.executable, "-m", "frontcheck", *command], cwd=REPO,
                         capture_output=True, text=True, env={"COLUMNS": "80", "PATH": "/usr/bin:/bin"})
    assert out.returncode == 0, out.stderr
    assert max(len(line) for line in out.stdout.splitlines()) <= 80


def test_references_sort_naturally():
    assert natural(["R10", "R5", "U2A", "R11", "U10", "C1"]) == ["C1", "R5", "R10", "R11", "U2A",
                                                                   "U10"]


def test_repeated_infos_print_once_with_a_count():
    rep = make_report()
    p = rep.projects[0]
    base = len(p.findings)
    for n in (5, 6, 7, 8):
        p.findings.append(Finding(rule="design-note", severity="info", stage=None,
                                  references=[f"R{n}0"],
                                  message=f"R{n}0 has no footprint; left out of the BOM check.",
                                  fix="Give the resistor a footprint."))
    p.fingerprints += [f"extra{n}" for n in range(4)]
    text = terminal.render(rep, width=100)
    assert text.count("has no footprint") == 1
    assert "4 alike (R50, R60, R70, R80)" in text
    assert [i for g in p.repeated_infos() for i in g] == list(range(base, base + 4))
    from frontcheck.report import render
    assert render(rep, "json").count("has no footprint") == 4      # JSON keeps every one
