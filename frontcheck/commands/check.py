"""``frontcheck check PATH...`` and ``frontcheck baseline PATH... -o FILE``.

check: load each design, find its stages, analyse them, run the rules, print one report.
Exit status 0 clean, 1 findings at or above ``--fail-on`` (waived findings and findings in
``--baseline`` never count), 2 a design or option could not be read.

baseline: record today's findings (their fingerprints) so that later checks with
``--baseline FILE`` fail only on new ones.

Output goes to stdout, or only to the file ``--output`` names; nothing is written beside the
design.
"""

from __future__ import annotations

import argparse
import contextlib
import sys
from pathlib import Path

from ..errors import InputError

FORMATS = ("text", "json", "sarif", "markdown", "html")
FAIL_LEVELS = ("error", "warning", "info")


# Bounds of the numeric options (shown in --help and the README). The sample bound keeps
# one stage's Monte Carlo under about 0.5 GB (1,000,000 samples of a three-op-amp stage
# measured 0.53 GB peak); the default is 20,000.
SAMPLES_MAX = 1_000_000
SEED_MAX = 2**32 - 1
JOBS_MAX = 64


def bounded(lo: int, hi: int):
    """An argparse type: a whole number in [lo, hi], else a usage error naming the bound."""
    def parse(text: str) -> int:
        try:
            v = int(text) if len(text) <= 40 else None
        except ValueError:
            v = None
        if v is None:
            raise argparse.ArgumentTypeError(f"{text[:40]!r} is not a whole number "
                                             f"(give {lo} to {hi:,})")
        if v > hi:
            raise argparse.ArgumentTypeError(f"{text.strip()} is above the upper bound {hi:,}")
        if v < lo:
            raise argparse.ArgumentTypeError(f"{text.strip()} is below the lower bound {lo}")
        return v
    return parse


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument("paths", nargs="*", metavar="PATH",
                   help="project folder, .kicad_pro, root or sub-sheet .kicad_sch, .net or .xml "
                        "netlist, or a folder with projects below it (several allowed)")
    p.add_argument("--profile", metavar="NAME",
                   help="rule profile (default, strict, ... or a profile file)")
    p.add_argument("--config", metavar="FILE", help="project file to read instead of the "
                                                    "frontcheck.toml beside the project")
    p.add_argument("--seed", type=bounded(0, SEED_MAX), metavar="N",
                   help=f"Monte Carlo random seed, 0 to {SEED_MAX:,} (default 1)")
    p.add_argument("--samples", type=bounded(0, SAMPLES_MAX), metavar="N",
                   help=f"Monte Carlo samples per stage, 0 (corners only) to {SAMPLES_MAX:,} "
                        f"(default 20,000)")
    p.add_argument("-j", "--jobs", type=bounded(1, JOBS_MAX), default=1, metavar="N",
                   help=f"check several projects in N parallel processes, 1 to {JOBS_MAX}")
    from ..kicad.limits import add_options
    add_options(p)


def add_parser(sub) -> None:
    c = sub.add_parser("check", help="check the front-end stages of KiCad designs",
                       description="Load each design, find its difference and instrumentation "
                                   "amplifier stages, analyse them, run the rules and print one "
                                   "report. Exit status: 0 clean; 1 findings at or above "
                                   "--fail-on (waived findings and findings in --baseline never "
                                   "count); 2 a design or option could not be read.")
    _common(c)
    c.add_argument("-f", "--format", choices=FORMATS, default="text",
                   help="report format (default text)")
    c.add_argument("-o", "--output", metavar="FILE",
                   help="write the report to FILE instead of standard output")
    c.add_argument("-v", "--verbose", action="store_true",
                   help="list every amplifier that is not a front-end stage, with the reason")
    c.add_argument("--fail-on", choices=FAIL_LEVELS, default="error",
                   help="lowest severity that fails the run (default error)")
    c.add_argument("--baseline", metavar="FILE",
                   help="fail only on findings not recorded in this baseline file")
    c.add_argument("--pre-commit", action="store_true",
                   help="PATHs are changed files (as pre-commit passes them): check each "
                        "project they belong to once, with its whole hierarchy")
    c.set_defaults(run=run)

    b = sub.add_parser("baseline", help="record today's findings so later checks fail only on "
                                        "new ones",
                       description="Record the fingerprints of today's findings in FILE; "
                                   "`frontcheck check --baseline FILE` then fails only on "
                                   "findings that are not in it.")
    _common(b)
    b.add_argument("-o", "--output", metavar="FILE", required=True,
                   help="baseline file to write")
    b.set_defaults(run=run_baseline)


def _progress_for(args):
    """A rich progress bar on stderr when it is a terminal; None otherwise."""
    if not sys.stderr.isatty():
        return None, None
    from rich.console import Console
    from rich.markup import escape
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    from ..report.safe_text import visible

    bar = Progress(TextColumn("{task.description}"), BarColumn(), TimeElapsedColumn(),
                   console=Console(stderr=True), transient=True)
    task = bar.add_task("checking", total=None)

    def update(label: str, done: int, total: int) -> None:
        # the label holds design text (project name, stage id): no markup, no control codes
        bar.update(task, description=escape(visible(label)), completed=done, total=max(total, 1))

    return bar, update


def _options(args, baseline: set[str] | None = None):
    from ..kicad.limits import from_options
    from ..pipeline import RunOptions

    return RunOptions(profile=args.profile, config_file=args.config, seed=args.seed,
                      samples=args.samples, fail_on=getattr(args, "fail_on", "error"),
                      baseline=baseline or set(), read_limits=from_options(args))


def _run_pipeline(args, paths, opts):
    from ..pipeline import expand_paths, run as run_pipeline

    paths = expand_paths(paths)
    bar, update = _progress_for(args)
    if bar is None:
        return run_pipeline(paths, opts, jobs=args.jobs)
    with bar:
        return run_pipeline(paths, opts, jobs=args.jobs, progress=update)


def _print_errors(report) -> None:
    from ..cli import say

    for p in report.projects:
        if p.error:
            say(p.error)


def _write(text: str, output: str | None) -> None:
    if output is None:
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    try:
        Path(output).write_text(text, encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot write the report: {e.strerror}", file=output,
                         hint="choose a writable path with --output") from None


def _check_not_an_input(output: str | None, paths: list[str]) -> None:
    """Refuse an --output that would overwrite a design file or a project's own files."""
    if output is None:
        return
    out = Path(output).resolve()
    for p in paths:
        pp = Path(p).resolve()
        if out == pp:
            raise InputError("--output names an input file; frontcheck never writes to a design",
                             file=output, hint="write the report somewhere else")
    if out.suffix.lower() in (".kicad_sch", ".kicad_pro", ".kicad_pcb", ".net", ".xml",
                              ".kicad_sym", ".kicad_prl") and out.exists():
        raise InputError("--output names an existing KiCad file; frontcheck never writes to a "
                         "design", file=output, hint="write the report somewhere else")


@contextlib.contextmanager
def _fewer_collections():
    """A check builds a design's worth of objects that live to the end of the run and few
    reference cycles: the cyclic collector's default pace (a young-generation pass every 700
    allocations) spent about a sixth of the CPU time of a 10,000-symbol check scanning them.
    The check collects less often; memory use stays the same (benchmarks/README.md). The
    previous pace is restored afterwards (tests and hooks run the command in-process)."""
    import gc

    before = gc.get_threshold()
    gc.set_threshold(max(before[0], 50_000), max(before[1], 20), max(before[2], 100))
    try:
        yield
    finally:
        gc.set_threshold(*before)


def run(args) -> int:
    with _fewer_collections():
        return _run(args)


def _run(args) -> int:
    from ..report import render

    paths = list(args.paths)
    if args.pre_commit:
        from ..precommit import projects_for
        paths = projects_for(paths)
        if not paths:
            return 0
    elif not paths:
        raise InputError("no design given", hint="frontcheck check PATH (a project folder, "
                                                 ".kicad_pro, .kicad_sch, .net or .xml)")
    _check_not_an_input(args.output, list(args.paths))
    baseline = None
    if args.baseline:
        from ..waivers import read_baseline
        baseline = read_baseline(args.baseline)
    report = _run_pipeline(args, paths, _options(args, baseline))
    report.verbose = bool(getattr(args, "verbose", False))
    _print_errors(report)
    if all(p.error for p in report.projects):
        return 2
    if args.format == "text" and args.output is None and sys.stdout.isatty():
        from rich.console import Console

        from ..report.terminal import render_to
        render_to(report, Console())
    else:
        _write(render(report, args.format), args.output)
    return report.exit_status()


def run_baseline(args) -> int:
    from ..waivers import write_baseline

    if not args.paths:
        raise InputError("no design given", hint="frontcheck baseline PATH -o FILE")
    _check_not_an_input(args.output, list(args.paths))
    report = _run_pipeline(args, list(args.paths), _options(args))
    _print_errors(report)
    if any(p.error for p in report.projects):
        return 2
    n = write_baseline(args.output, report)
    print(f"frontcheck: {n} finding(s) recorded in {args.output}", file=sys.stderr)
    return 0
