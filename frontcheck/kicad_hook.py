"""Run frontcheck from inside KiCad's schematic editor, as a netlist or BOM generator.

KiCad's generator dialogs (Tools > Generate Legacy Bill of Materials..., and File > Export >
Netlist... > Add Generator...) write the intermediate XML netlist and run a command line on
it, replacing ``%I`` with that XML file's path and ``%O`` with the output name (the project's
path without extension in the BOM dialog, the file chosen in the export dialog). They show
every line the command prints and its return code. Command line to paste::

    python -m frontcheck.kicad_hook "%I" "%O"

(use the Python that has frontcheck installed: ``python -m frontcheck.kicad_hook --command``
prints the line with that Python's full path, ready to paste). The hook reads the XML, checks the design with the
project's ``frontcheck.toml`` (found beside the project file the XML names), writes the full
HTML report to ``<%O>-frontcheck.html`` (``%O`` itself when it ends in ``.html``), prints a
short summary for KiCad's message box and opens the report in the default browser (not with
``--no-open``, nor when the environment sets ``FRONTCHECK_NO_OPEN=1``). It never writes
anything else and never touches the design files.

Exit status: 0 when the report was written, findings or not (KiCad calls any other status a
failed command; ``--exit-status`` gives 1 and ``--findings-exit N`` gives N for findings at or
above ``--fail-on``), 2 when the netlist or an option could not be read.

The short summary, report naming and browser opening here are shared with the jobset step
(frontcheck.kicad_jobset) and the toolbar action (frontcheck.kicad_action).
"""

from __future__ import annotations

import argparse
import os
import re
import sys
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import Callable

from .commands.check import SAMPLES_MAX, SEED_MAX, bounded
from .cli import could_not_check, say
from .errors import InputError

KICAD_FILES = (".kicad_sch", ".kicad_pro", ".kicad_pcb", ".kicad_sym", ".kicad_prl", ".net",
               ".xml")
REPORT_SUFFIX = "-frontcheck.html"
TOP_FINDINGS = 3          # findings named one line each in KiCad's message box
LINE_WIDTH = 120          # characters of a finding's line in that box

Opener = Callable[[Path], object]
_NUMBER = re.compile(r"^[-+±]?\d[\d.]*$")


def _design_source(xml_path: Path) -> Path | None:
    """The root schematic the XML says it was exported from (``export/design/source``)."""
    try:
        for _, el in ET.iterparse(xml_path, events=("end",)):
            if el.tag == "source" and el.text:
                return Path(el.text.strip())
            if el.tag == "design":
                break
    except (ET.ParseError, OSError):
        return None      # the netlist reader reports the real problem with its location
    return None


def project_dir_for(xml_path: Path) -> Path:
    """Where the project (and its frontcheck.toml) is: the folder of the schematic the XML
    was exported from when that is a schematic beside its project file here (the XML is
    text anyone can edit: its path is not trusted further), else the XML's own folder."""
    src = _design_source(xml_path)
    if (src is not None and src.suffix.lower() == ".kicad_sch" and src.is_file()
            and src.with_suffix(".kicad_pro").is_file()):
        return src.parent.resolve()
    return xml_path.resolve().parent


def output_path(out: str) -> Path:
    """The report's path for KiCad's ``%O``: ``%O`` itself when it ends in ``.html``, else
    ``%O`` without a KiCad extension plus ``-frontcheck.html`` (so that the BOM dialog's
    ``/designs/amp/amp`` gives ``/designs/amp/amp-frontcheck.html`` beside the project)."""
    p = Path(out)
    if p.suffix.lower() == ".html":
        return p
    if p.suffix.lower() in KICAD_FILES:
        p = p.with_suffix("")
    return p.with_name(p.name + REPORT_SUFFIX)


# -- shared with the jobset step and the toolbar action ------------------------------------

def open_in_browser(path: Path) -> bool:
    """Open the report in the default browser; False when the environment forbids it
    (``FRONTCHECK_NO_OPEN=1``, set by the test suite and useful on build machines) or no
    browser could be started."""
    if os.environ.get("FRONTCHECK_NO_OPEN") == "1":
        return False
    import webbrowser
    try:
        return bool(webbrowser.open(path.resolve().as_uri()))
    except Exception:    # a broken browser set-up must not turn a written report into an error
        return False


def write_report(report, path: Path) -> None:
    """The full HTML report, or an InputError that says where it could not be written."""
    from .report import html

    try:
        path.write_text(html.render(report), encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot write the report: {e.strerror}", file=str(path),
                         hint="choose an output folder you can write to") from None


def _one_line(text: str, width: int = LINE_WIDTH) -> str:
    """One line of at most ``width`` characters, cut between words (never inside a number:
    '0.102' cut to '0.1' would be a wrong figure, and not after a number whose unit was
    cut off) and marked with ' ...' where cut."""
    text = " ".join(text.split())
    if len(text) <= width:
        return text
    words = text[:width - 3].split(" ")[:-1] or [text[:width - 4]]
    # nor after a bare number whose unit was cut off ('1.96' of '1.96 %')
    while len(words) > 1 and _NUMBER.match(words[-1]):
        words.pop()
    return " ".join(words).rstrip(",;:") + " ..."


def top_findings(report, n: int = TOP_FINDINGS):
    """The n findings an engineer should read first (frontcheck.report.model.Report.top_findings:
    new before known-from-baseline, higher severity first, waived ones never)."""
    return [f for _, _, f in report.top_findings(n)]


def _stage_line(project) -> str:
    from .report.model import KIND_LABELS

    if not project.stages:
        return f"{project.name}: no amplifier stage found"
    kinds = ", ".join(f"{s.id} {KIND_LABELS.get(s.kind, s.kind)}" for s in project.stages[:4])
    more = f", and {len(project.stages) - 4} more" if len(project.stages) > 4 else ""
    return f"{project.name}: {len(project.stages)} stage(s) found: {kinds}{more}"


def short_summary(report, html_path: Path | str, opened: bool) -> str:
    """What KiCad's message box (or a jobset log) shows: stages, counts, the three findings to
    read first, the verdict and where the full report is."""
    from .report.model import SAFETY_NOTICE

    c = report.counts()
    lines = [_stage_line(p) for p in report.projects]
    lines.append(f"{c.get('error', 0)} error(s), {c.get('warning', 0)} warning(s), "
                 f"{c.get('info', 0)} info")
    top = top_findings(report)
    if top:
        lines.append("Read first:")
        for f in top:
            lines.append("  " + _one_line(f"{f.severity.upper()} {f.rule}: {f.message}"))
    failing = report.failing()
    lines.append(("FAIL" if failing else "PASS") + f" at fail level '{report.fail_on}'")
    lines.append(f"Full report: {html_path}" + (" (opened in your browser)" if opened else ""))
    if report.has_caution:
        lines.append("Safety: " + SAFETY_NOTICE)
    return "\n".join(lines) + "\n"


def findings_status(report, args) -> int:
    """0, or the status the options ask for when findings reach --fail-on."""
    if not report.failing():
        return 0
    if args.findings_exit is not None:
        return args.findings_exit
    return 1 if args.exit_status else 0


def add_common_options(p: argparse.ArgumentParser, browser: bool = True) -> None:
    p.add_argument("--profile", metavar="NAME", help="rule profile")
    p.add_argument("--config", metavar="FILE", help="project file instead of frontcheck.toml")
    p.add_argument("--fail-on", choices=("error", "warning", "info"), default="error")
    p.add_argument("--samples", type=bounded(0, SAMPLES_MAX), metavar="N",
                   help=f"Monte Carlo samples per stage, 0 to {SAMPLES_MAX:,}")
    p.add_argument("--seed", type=bounded(0, SEED_MAX), metavar="N",
                   help=f"Monte Carlo seed, 0 to {SEED_MAX:,}")
    p.add_argument("--exit-status", action="store_true",
                   help="exit 1 when findings reach --fail-on (KiCad then reports a failure)")
    p.add_argument("--findings-exit", type=int, metavar="N",
                   help="exit N when findings reach --fail-on (5 in a KiCad jobset: the job "
                        "is marked failed and its report is kept)")
    if browser:
        p.add_argument("--no-open", action="store_true",
                       help="do not open the report in the default browser")


def run_options(args):
    from .pipeline import RunOptions

    return RunOptions(profile=args.profile, config_file=args.config, seed=args.seed,
                      samples=args.samples, fail_on=args.fail_on)


# -- the generator command -----------------------------------------------------------------

def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="python -m frontcheck.kicad_hook",
        description="Check a design from KiCad's netlist or BOM generator: reads the "
                    "intermediate XML netlist (%%I) and writes an HTML report named after "
                    "%%O.")
    p.epilog = "--command alone prints the command line to paste into KiCad."
    p.add_argument("netlist", help="KiCad's intermediate XML netlist (%%I)")
    p.add_argument("output", help="output name from KiCad (%%O); the report goes to "
                                  "OUTPUT-frontcheck.html (OUTPUT itself if it ends in .html)")
    add_common_options(p)
    return p


def command_line() -> str:
    """The exact generator command line for this installation (its own Python)."""
    return f'"{sys.executable}" -m frontcheck.kicad_hook "%I" "%O"'


def main(argv: list[str] | None = None, opener: Opener = open_in_browser) -> int:
    argv = sys.argv[1:] if argv is None else argv
    if argv == ["--command"]:
        print(command_line())          # to paste into KiCad's generator dialog
        return 0
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as e:
        return int(e.code or 0)
    try:
        return _run(args, opener)
    except InputError as e:
        say(e.render())
        return 2
    except KeyboardInterrupt:
        return 130
    except Exception as e:     # never a traceback in KiCad's message box; exit 2: not checked
        return could_not_check(e)


def _run(args, opener: Opener) -> int:
    from .kicad.project import load
    from .pipeline import check_netlist, tool_info
    from .report.model import Report

    xml_path = Path(args.netlist)
    if not xml_path.is_file():
        raise InputError("no such netlist file", file=str(xml_path),
                         hint='in KiCad the generator command line must pass "%I"')
    if xml_path.suffix.lower() != ".xml":
        raise InputError("expected KiCad's intermediate XML netlist (.xml)", file=str(xml_path),
                         hint='pass "%I" as the first argument')
    out = output_path(args.output)
    if out.resolve() == xml_path.resolve():
        raise InputError("the report would overwrite the netlist", file=str(out),
                         hint='pass "%O" as the second argument')
    opts = run_options(args)
    netlist = load(xml_path)
    project_dir = project_dir_for(xml_path)
    src = _design_source(xml_path)
    name = src.stem if src is not None else xml_path.stem
    project = check_netlist(netlist, project_dir, name, str(xml_path), opts)
    report = Report(projects=[project], tool=tool_info(opts, project.profile),
                    fail_on=opts.fail_on)
    write_report(report, out)
    opened = False if args.no_open else bool(opener(out))
    sys.stdout.write(short_summary(report, out, opened))
    return findings_status(report, args)


def entry() -> None:
    sys.exit(main())


if __name__ == "__main__":
    entry()
