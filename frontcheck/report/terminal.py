"""``--format text``: the terminal report (rich).

One summary table (a row per stage: kind, references, gain nominal and worst range, CMRR
nominal / worst / statistical, headroom margin, error-budget total), then the findings grouped
by stage with severity, message and fix hint, then what was assumed. Where the table would not
fit the width (a terminal from 80 columns up), each stage's numbers are stacked as lines
instead: no number is ever cut, and a value stays on one line with its unit. Info findings that
say the same thing about several parts print once with a count. In a terminal it uses colour;
written to a pipe or a file it is plain text with ASCII boxes, as wide as COLUMNS says (100
when unset).
"""

from __future__ import annotations

import io
import os

from rich import box
from rich.console import Console, Group
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from ..result import summary_lines as requirement_lines
from ..result import describe_opamps
from .. import formatting as fmt
from . import budget_view, plain_layout
from .model import (KIND_LABELS, SAFETY_NOTICE, ProjectReport, Report, cmrr_scope,
                    gain_scope, natural)
from .safe_text import shown

# Joins a value to its unit while rich wraps the text (rich breaks at any whitespace, a
# no-break space included); turned back into a space in the output.
GLUE = "\ue000"
DEFAULT_WIDTH = 100
SEVERITY_STYLE = {"error": "bold red", "warning": "yellow", "info": "cyan"}
STATUS_STYLE = {"waived": "dim", "baseline": "dim"}


SHORT_KIND = {"difference": "diff amp", "three-opamp": "3-op-amp IA", "two-opamp": "2-op-amp IA",
              "diff-output": "IA input pair", "composite": "pair + IC in-amp",
              "integrated-inamp": "IC in-amp", "integrated-diffamp": "IC diff amp"}


def _grid() -> Table:
    """A two-column grid: the first column never wraps, the second wraps to the width."""
    g = Table.grid(padding=(0, 1))
    g.plain_layout = "grid"
    return g


def _gain_cell(r) -> str:
    g = r.gain
    if g.worst_min is None or g.worst_max is None:
        return fmt.number(g.nominal) + gain_scope(r)
    return f"{fmt.number(g.nominal)}\n{fmt.span(g.worst_min, g.worst_max)}{gain_scope(r)}"


def _cmrr_cell(r) -> str:
    cm = r.cmrr
    return (f"{fmt.db(cm.nominal_db)} / {fmt.db(cm.worst_db)} / {fmt.db(cm.statistical_db)}"
            + cmrr_scope(r))


def _margin(r) -> str:
    m = r.headroom.margin_v
    return "no input box" if m is None else fmt.volts(m, signed=True)


def _budget_total(r, sep: str = "\n") -> str:
    return budget_view.total_text(r.error_budget, sep)


def _left_out(r) -> str:
    terms = budget_view.left_out(r.error_budget)
    return f" ({', '.join(terms)} not included: requirements)" if terms else ""


def _summary_rows(p: ProjectReport) -> list[tuple[str, ...]]:
    rows = []
    for s in p.stages:
        r = p.results.get(s.id)
        refs = " ".join(natural(s.references))
        kind = SHORT_KIND.get(s.kind, s.kind)
        if r is None:
            rows.append((s.id, kind, refs, "not analysed", fmt.MISSING, fmt.MISSING, fmt.MISSING))
            continue
        rows.append((s.id, kind, refs, _gain_cell(r), _cmrr_cell(r), _margin(r), _budget_total(r)))
    return rows


def _summary_table(rows: list[tuple[str, ...]], ascii_only: bool) -> Table:
    t = Table(box=box.ASCII2 if ascii_only else box.SIMPLE_HEAVY, show_lines=True,
              title=None, expand=False, pad_edge=False)
    t.add_column("Stage", no_wrap=True)
    t.add_column("Kind", no_wrap=True)
    t.add_column("References", overflow="fold", ratio=1, min_width=12)
    t.add_column("Gain\nworst range", justify="right", no_wrap=True)
    t.add_column("CMRR\nnom/worst/stat", justify="right", no_wrap=True)
    t.add_column("Headroom\nmargin", justify="right", no_wrap=True)
    t.add_column("Budget % FS\nworst/RSS", justify="right", no_wrap=True)
    for row in rows:
        t.add_row(*row)
    return t


def _widest_rows(rows: list[tuple[str, ...]]) -> list[tuple[str, ...]]:
    """The rows that set the summary's column widths: per column the row with the widest line
    and the row with the longest word (what rich measures), and the row with the longest first
    reference. Whether a cell is drawn whole depends only on it and its column's width, so
    these rows fit whole exactly when all rows do."""
    def lines(cell: str) -> int:
        return max(len(x) for x in cell.split("\n"))

    def word(cell: str) -> int:
        return max((len(w) for w in cell.split()), default=0)

    keep = set()
    for i in range(len(rows[0])):
        keep.add(max(range(len(rows)), key=lambda k: lines(rows[k][i])))
        keep.add(max(range(len(rows)), key=lambda k: word(rows[k][i])))
    keep.add(max(range(len(rows)), key=lambda k: len(rows[k][2].split(" ")[0])))
    return [rows[k] for k in sorted(keep)]


def _stacked(p: ProjectReport) -> Table:
    """The summary as lines per stage, for a terminal too narrow for the table."""
    g = _grid()
    g.add_column(no_wrap=True)
    g.add_column(ratio=1)
    for s in p.stages:
        r = p.results.get(s.id)
        g.add_row(Text(s.id, style="bold"), KIND_LABELS.get(s.kind, s.kind))
        g.add_row("  references", " ".join(natural(s.references)))
        if r is None:
            g.add_row("  numbers", "not analysed")
            continue
        gain = fmt.number(r.gain.nominal)
        if r.gain.worst_min is not None and r.gain.worst_max is not None:
            gain += f", worst case {fmt.span(r.gain.worst_min, r.gain.worst_max)}"
        gain += gain_scope(r)
        cm = r.cmrr
        rows = [("  gain", gain),
                ("  CMRR", f"{fmt.db(cm.nominal_db)} nominal, {fmt.db(cm.worst_db)} worst case, "
                           f"{fmt.db(cm.statistical_db)} statistical{cmrr_scope(r)}"),
                ("  headroom margin", _margin(r)),
                ("  budget % FS", _budget_total(r, " worst, ") + " RSS" + _left_out(r))]
        for key, value in rows:
            g.add_row(key, fmt.glue_units(value, GLUE))
    return g


def _summary(p: ProjectReport, console, ascii_only: bool):
    """The table where every cell fits whole into the console's width, else the stacked
    lines (rich would shrink the table by cutting numbers). Whether it fits is seen on a
    table of the rows that set the column widths (all of them when the design is small)."""
    rows = _summary_rows(p)
    probe = rows if len(rows) <= 16 else _widest_rows(rows)
    table = _summary_table(probe, ascii_only)
    if isinstance(console, _PlainConsole):
        lines = console.rich_lines(table)
        drawn = "\n".join(lines) + "\n"
    else:
        scratch = Console(width=console.width, file=io.StringIO(), color_system=None,
                          force_terminal=False, legacy_windows=False)
        with scratch.capture() as captured:
            scratch.print(table)
        drawn, lines = captured.get(), None
    # every header and every cell but the references (which may fold) must appear as
    # written, and the references column must show at least each stage's first reference
    whole = [line for col in table.columns for line in str(col.header).splitlines()]
    whole += [line for col in table.columns if col.header != "References"
              for cell in col.cells for line in str(cell).splitlines()]
    whole += [row[2].split(" ")[0] + " " for row in probe if row[2]]
    if not all(line in drawn for line in whole):
        return _stacked(p)
    if probe is not rows:
        return _summary_table(rows, ascii_only)
    return _Drawn(lines) if lines is not None else table


def _finding_row(p: ProjectReport, i: int) -> tuple[Text, Text]:
    f = p.findings[i]
    status = p.status(i)
    sev = Text(f.severity.upper(), style=SEVERITY_STYLE.get(f.severity, "bold"))
    t = Text()
    t.append(f"{f.rule}  ", style="bold")
    if status == "waived":
        t.append(f"[waived: {f.waived}] ", style="dim")
    elif status == "baseline":
        t.append("[in baseline] ", style="dim")
    t.append(fmt.glue_units(f.message, GLUE), style=STATUS_STYLE.get(status, ""))
    if f.fix:
        t.append(f"\nfix: {fmt.glue_units(f.fix, GLUE)}", style="green" if status == "new" else "dim")
    where = p.relpath(f.file)
    if where:
        t.append(f"\nat {where}" + (f":{f.line}" if f.line else ""), style="dim")
    return sev, t


def _budget_table(r, ascii_only: bool) -> Table:
    bt = Table(box=box.ASCII2 if ascii_only else box.SIMPLE, pad_edge=False, title=None,
               show_edge=False)
    bt.plain_layout = "budget" if ascii_only else None
    for i, head in enumerate(budget_view.HEADER):
        bt.add_column(head, justify="left" if i in (0, 5) else "right", no_wrap=i < 5,
                      overflow="fold", ratio=1 if i == 5 else None)
    for row in budget_view.rows(r.error_budget):
        bt.add_row(*row, style="bold" if row[0] == "total" else None)
    return bt


def _repeated_grid(p: ProjectReport, repeated: list[list[int]]) -> Table:
    """One row per repeated info: the count, where it applies, and the first one in full."""
    g = _grid()
    g.add_column(no_wrap=True, min_width=7)
    g.add_column(ratio=1)
    for idx in repeated:
        first = p.findings[idx[0]]
        where = natural({p.findings[i].stage or ", ".join(p.findings[i].references) or "design"
                         for i in idx})
        shown_where = ", ".join(where[:6]) + (f" and {len(where) - 6} more" if len(where) > 6 else "")
        t = Text()
        t.append(f"{first.rule}  ", style="bold")
        t.append(f"{len(idx)} alike ({shown_where}); the first: ")
        t.append(fmt.glue_units(first.message, GLUE))
        if first.fix:
            t.append(f"\nfix: {fmt.glue_units(first.fix, GLUE)}", style="green")
        g.add_row(Text("INFO", style=SEVERITY_STYLE["info"]), t)
    return g


def _findings_grid(p: ProjectReport, idx: list[int]) -> Table:
    g = _grid()
    g.add_column(no_wrap=True, min_width=7)
    g.add_column(ratio=1)
    for i in idx:
        g.add_row(*_finding_row(p, i))
    return g


def _amplifier_lines(p: ProjectReport, console: Console, verbose: bool) -> None:
    """One count line; with --verbose every amplifier that is not a front-end stage and why."""
    others = [a for a in p.amplifiers if not a.get("stage")]
    if not p.amplifiers:
        return
    line = (f"amplifiers: {len(p.amplifiers) - len(others)} in stages, {len(others)} not a "
            "front-end stage")
    if others and not verbose:
        line += " (" + ", ".join(a["name"] for a in others[:8]) \
            + (", ..." if len(others) > 8 else "") + "; --verbose says why)"
    console.print(Text(line, style="dim"))
    if verbose:
        for a in others:
            console.print(Text(f"not a front-end stage: {a['name']} ({a['kind']}): {a['reason']}",
                               style="dim"))


def _project(p: ProjectReport, console: Console, ascii_only: bool, many: bool,
             verbose: bool = False) -> None:
    head = f"{p.name}  ({p.path})" if many or p.path != p.name else p.name
    console.print(Text(head, style="bold underline"))
    if p.error:
        console.print(Text(f"could not be read: {p.error}", style="bold red"))
        console.print()
        return
    if p.has_caution:
        reasons = sorted({w for ws in p.cautions.values() for w in ws})
        body = Text(SAFETY_NOTICE + "\nMarked because: " + "; ".join(reasons))
        console.print(Panel(body, title="Safety", box=box.ASCII if ascii_only else box.ROUNDED,
                            border_style="red", expand=False))
    if p.stages:
        console.print(_summary(p, console, ascii_only))
    else:
        console.print("No difference or instrumentation amplifier stage recognised.")
    repeated = p.repeated_infos()
    folded = {i for group in repeated for i in group}
    groups: list[tuple[str, list[int], list[int]]] = []
    by_stage = p.findings_by_stage()
    for s in p.stages:
        every = by_stage.get(s.id, [])
        idx = [i for i in every if i not in folded]
        r = p.results.get(s.id)
        declared_budget = s.intent.error_budget_fs is not None or s.intent.error_budget_rti_v is not None
        if idx or (r and (r.assumptions or r.opamps)) or p.cautions.get(s.id) or (
                r and r.error_budget and declared_budget):
            groups.append((s.id, idx, every))
    stage_ids = {s.id for s in p.stages}
    loose = [i for i, f in enumerate(p.findings) if f.stage not in stage_ids and i not in folded]
    stages = p.stages_by_id()
    for sid, idx, every in groups:
        s = stages[sid]
        console.print(Text(f"{sid}  {KIND_LABELS.get(s.kind, s.kind)}", style="bold"))
        if idx:
            console.print(_findings_grid(p, idx))
        r = p.results.get(sid)
        if r and r.error_budget:
            console.print(_budget_table(r, ascii_only))
        # the assumed-value finding already lists them; repeat only when that rule is off
        if r and not any(p.findings[i].rule == "assumed-value" for i in every):
            for a in r.assumptions:
                console.print(Text(f"assumed: {a}", style="dim"))
        if r and r.opamps:
            console.print(Text(f"op-amp numbers: {describe_opamps(r.opamps)}", style="dim"))
        for line in (requirement_lines(r.requirements) if r else []):
            console.print(Text(line, style="dim"))
        if p.cautions.get(sid):
            console.print(Text("caution: " + "; ".join(p.cautions[sid]), style="red"))
    if repeated:
        console.print(Text("Said of several parts", style="bold"))
        console.print(_repeated_grid(p, repeated))
    if loose:
        console.print(Text("Project", style="bold"))
        console.print(_findings_grid(p, loose))
    for label, items in (("near miss", p.near_misses), ("not analysed", p.unsupported),
                         ("note", p.notes)):
        for item in items:
            console.print(Text(f"{label}: {item}", style="dim"))
    _amplifier_lines(p, console, verbose)
    console.print()


def _footer(report: Report) -> Text:
    c = report.counts()
    waived = sum(1 for p in report.projects for f in p.findings if f.waived)
    known = sum(1 for p in report.projects for i in range(len(p.findings))
                if p.status(i) == "baseline")
    failing = len(report.failing())
    parts = [f"{c.get('error', 0)} error(s)", f"{c.get('warning', 0)} warning(s)",
             f"{c.get('info', 0)} info"]
    extra = []
    if waived:
        extra.append(f"{waived} waived")
    if known:
        extra.append(f"{known} in baseline")
    t = Text("")
    if report.has_budget:
        t.append(budget_view.LEGEND + "\n", style="dim")
    t.append(", ".join(parts) + (f" ({', '.join(extra)})" if extra else "") + ". ")
    status = report.exit_status()
    if status == 2:
        t.append("A project could not be read.", style="bold red")
    elif failing:
        t.append(f"FAIL: {failing} finding(s) at or above '{report.fail_on}'.", style="bold red")
    else:
        t.append(f"PASS: nothing at or above '{report.fail_on}'.", style="bold green")
    t.append(f"\n{report.coverage_text()}.")
    return t


def render_to(report: Report, console: Console, ascii_only: bool | None = None) -> None:
    if ascii_only is None:
        ascii_only = not console.is_terminal
    with console.capture() as captured:
        _render(report, console, ascii_only)
    console.file.write(captured.get().replace(GLUE, " "))


def _render(report: Report, console: Console, ascii_only: bool) -> None:
    report = shown(report)      # design text with visible control characters
    tool = report.tool
    console.print(Text(f"{tool.get('name', 'frontcheck')} {tool.get('version', '')}".strip()
                       + (f"  profile {tool['profile']}" if tool.get("profile") else ""),
                       style="dim"))
    many = len(report.projects) > 1
    for p in report.projects:
        _project(p, console, ascii_only, many, report.verbose)
    console.print(_footer(report))


class _Drawn:
    """Lines already drawn (the summary table, drawn once to see whether it fits)."""

    def __init__(self, lines: list[str]):
        self.lines = lines


def _cell_text(cell) -> str | None:
    """A cell's text when it prints as written (a Text, or a str with no markup: the plain
    console reads no emoji codes and highlights nothing)."""
    if isinstance(cell, Text):
        return cell.plain if cell.end == "\n" and cell.justify is None and cell.overflow is None \
            and not cell.no_wrap else None
    if isinstance(cell, str) and "[" not in cell:
        return cell
    return None


class _PlainConsole:
    """Stands in for the console of the plain report: the report's own simple shapes (a Text
    line, a two-column grid, the budget table) are written by plain_layout, everything else
    by rich; both give the same lines (tests/report/test_plain_layout.py)."""

    def __init__(self, console: Console):
        self.console, self.width, self.lines = console, console.width, []

    def rich_lines(self, obj) -> list[str]:
        with self.console.capture() as captured:
            self.console.print(obj)
        return [line.rstrip() for line in captured.get().splitlines()]

    def _plain(self, obj) -> list[str] | None:
        if isinstance(obj, _Drawn):
            return obj.lines
        if isinstance(obj, Text):
            text = _cell_text(obj)
            return None if text is None else plain_layout.wrap(text, self.width)
        layout = getattr(obj, "plain_layout", None)
        if layout is None:
            return None
        cols = [[_cell_text(c) for c in col.cells] for col in obj.columns]
        if any(c is None for col in cols for c in col):
            return None
        rows = list(zip(*cols))
        if layout == "grid" and len(cols) == 2 and obj.columns[0].no_wrap:
            return plain_layout.grid(rows, self.width, obj.columns[0].min_width or 0)
        if layout == "budget" and not any(r.style for r in obj.rows if r.style != "bold"):
            return plain_layout.budget_table(tuple(str(c.header) for c in obj.columns), rows,
                                             self.width)
        return None

    def print(self, obj=None) -> None:
        if obj is None:
            self.lines.append("")
            return
        lines = self._plain(obj)
        self.lines.extend(self.rich_lines(obj) if lines is None else lines)


def output_width() -> int:
    """Columns for text written to a pipe or a file: COLUMNS when set (80 at least), else 100."""
    try:
        return max(80, int(os.environ.get("COLUMNS", "")))
    except ValueError:
        return DEFAULT_WIDTH


def render(report: Report, width: int | None = None) -> str:
    """The plain-text report (no colour, ASCII boxes), as written to pipes and files."""
    buf = io.StringIO()
    console = Console(file=buf, width=width or output_width(), color_system=None,
                      force_terminal=False, no_color=True, highlight=False, emoji=False,
                      soft_wrap=False, legacy_windows=False)
    plain = _PlainConsole(console)
    _render(report, plain, ascii_only=True)
    # rich pads table lines to the full width; trailing blanks only make diffs noisy
    text = "\n".join(plain.lines).replace(GLUE, " ")
    return "\n".join(line.rstrip() for line in text.splitlines()) + "\n"
