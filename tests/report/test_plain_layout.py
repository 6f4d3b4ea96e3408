"""The plain report's own layouts (report/plain_layout.py) draw exactly what rich draws.

rich is the oracle: the same grid, budget table or text line is drawn by rich on a plain console
and by plain_layout, on seeded random texts (words of every kind the reports write: numbers with
units, references, long words, several blanks, line breaks) at widths from 20 to 160 columns, and
on whole reports (the hand-made report and every sample project at 80, 100 and 160 columns):
the lines must be equal. Where plain_layout declines (returns None) rich draws, so a test also
asserts that it declines only rarely on report-like text.
"""

from __future__ import annotations

import io
import random

import pytest
from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from conftest import REPO
from frontcheck.pipeline import RunOptions, run
from frontcheck.report import budget_view, plain_layout, terminal
from test_report_handmade import make_report

WORDS = ["a", "ab", "abc", "word", "longer", "numbers", "0.200 %", "R1333", "U1A+U1B+U2",
         "(declare", "Ω", "µV", "∞", "≥", "x" * 15, "±1%", "-", "fix:", terminal.GLUE + "dB",
         "at sample_projects/shunt-monitor/shunt-monitor.kicad_sch:2198"]
SAMPLES = sorted(p for p in (REPO / "sample_projects").iterdir() if (p / "README.md").is_file())


def _console(width: int) -> Console:
    return Console(file=io.StringIO(), width=width, color_system=None, force_terminal=False,
                   no_color=True, highlight=False, emoji=False, soft_wrap=False,
                   legacy_windows=False)


def _rich(renderable, width: int) -> list[str]:
    c = _console(width)
    with c.capture() as cap:
        c.print(renderable)
    return [line.rstrip() for line in cap.get().splitlines()]


def _text(rng: random.Random, most: int) -> str:
    parts = []
    for _ in range(rng.randint(0, most)):
        parts += [rng.choice(WORDS), rng.choice([" ", " ", " ", "  ", "\n"])]
    text = "".join(parts)
    return text.strip(" ") if rng.random() < 0.8 else text


def _case(rng: random.Random):
    width = rng.randint(20, 160)
    kind = rng.choice(["grid", "wrap", "budget"])
    if kind == "grid":
        rows = [(rng.choice(["ERROR", "INFO", "WARNING", "  headroom margin", "U1", "U1A\nx"]),
                 _text(rng, 40)) for _ in range(rng.randint(1, 4))]
        first = rng.choice([0, 7])
        g = Table.grid(padding=(0, 1))
        g.add_column(no_wrap=True, min_width=first or None)
        g.add_column(ratio=1)
        for a, b in rows:
            g.add_row(Text(a), Text(b))
        return plain_layout.grid(rows, width, first), _rich(g, width)
    if kind == "wrap":
        t = _text(rng, 60)
        return plain_layout.wrap(t, width), _rich(Text(t), width)
    rows = [(rng.choice(["gain", "offset", "total"]), rng.choice(["0.200 %", "n/a", "12.3 %"]),
             "1 %", "n/a", rng.choice(["n/a", "33.3 µV"]), _text(rng, 25).replace("\n", " "))
            for _ in range(rng.randint(1, 5))]
    t = Table(box=box.ASCII2, pad_edge=False, title=None, show_edge=False)
    for i, head in enumerate(budget_view.HEADER):
        t.add_column(head, justify="left" if i in (0, 5) else "right", no_wrap=i < 5,
                     overflow="fold", ratio=1 if i == 5 else None)
    for r in rows:
        t.add_row(*r)
    return plain_layout.budget_table(budget_view.HEADER, rows, width), _rich(t, width)


@pytest.mark.parametrize("seed", range(2))
def test_random_layouts_equal_rich(seed):
    rng = random.Random(seed)
    drawn = 0
    for _ in range(1000):
        ours, theirs = _case(rng)
        if ours is not None:
            drawn += 1
            assert ours == theirs
    assert drawn > 550           # it declines only for words wider than their column


def test_declines_what_it_cannot_draw():
    assert plain_layout.wrap("x" * 30, 20) is None                # a word wider than the line
    assert plain_layout.wrap("wide 漢字", 40) is None              # two-cell characters
    assert plain_layout.grid([("ERROR", "a\tb")], 40) is None      # a control character
    assert plain_layout.budget_table(("a", "b"), [("x",)], 40) is None


def _rich_report(report, width: int) -> str:
    """The report drawn by rich alone (terminal.render_to on a plain console)."""
    buf = io.StringIO()
    console = Console(file=buf, width=width, color_system=None, force_terminal=False,
                      no_color=True, highlight=False, emoji=False, soft_wrap=False,
                      legacy_windows=False)
    terminal.render_to(report, console, ascii_only=True)
    return "\n".join(line.rstrip() for line in buf.getvalue().splitlines()) + "\n"


@pytest.mark.parametrize("width", (80, 100, 160))
def test_handmade_report_equals_rich(width):
    report = make_report()
    assert terminal.render(report, width=width) == _rich_report(report, width)


@pytest.mark.parametrize("project", SAMPLES, ids=lambda p: p.name)
def test_sample_reports_equal_rich(project):
    report = run([str(project)], RunOptions(samples=200, seed=1))
    for width in (80, 100, 160):
        assert terminal.render(report, width=width) == _rich_report(report, width)


def _many_stage_report():
    """The hand-made report with 40 stages of varied ids and reference lists (some long)."""
    import dataclasses

    report = make_report()
    p = report.projects[0]
    base = list(p.stages)
    stages, results = [], {}
    for k in range(40):
        s = base[k % len(base)]
        sid = f"U{k + 1}" if k % 7 else f"U{k + 1}A+U{k + 1}B+U{k + 1}C"
        refs = [f"R{k}{j}" for j in range(k % 9 + 1)] + [f"U{k + 1}"]
        if k == 23:
            refs[0] = "J23000000000000000000000000001"   # sorts first, wider than the rest
        stages.append(dataclasses.replace(s, id=sid, references=refs))
        results[sid] = p.results[s.id]
    p.stages, p.results, p.findings = stages, results, []
    return report


@pytest.mark.parametrize("width", range(80, 201, 6))
def test_summary_probe_decides_as_the_whole_table(width, monkeypatch):
    # the table (or the stacked lines) chosen from the rows that set the widths is the one the
    # whole table would give
    report = _many_stage_report()
    fast = terminal.render(report, width=width)
    monkeypatch.setattr(terminal, "_widest_rows", lambda rows: rows)
    assert fast == terminal.render(report, width=width)
