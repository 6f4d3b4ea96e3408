"""Run frontcheck from inside KiCad's schematic editor, as a netlist generator.

KiCad (8 and 9: Schematic Editor > File > Export > Netlist > Add Generator...) runs a command
line on its intermediate XML netlist, replacing ``%I`` with that XML file's path and ``%O``
with the output path the user chose. Command line to paste::

    python -m frontcheck.kicad_hook "%I" "%O"

(use the Python that has frontcheck installed, e.g. ``/path/to/venv/bin/python``; on Windows
``py -m frontcheck.kicad_hook "%I" "%O"``). The hook reads the XML, checks the design with the
project's ``frontcheck.toml`` (found beside the project file the XML names), writes the HTML
report to ``%O.html`` and prints a short summary, which KiCad shows in the export dialog.
It never writes anything else and never touches the design files.

Exit status: 0 when the report was written (findings or not: KiCad reports any other status
as a failed command; pass ``--exit-status`` to get 1 for findings at or above ``--fail-on``),
2 when the netlist or an option could not be read.
"""

from __future__ import annotations

import argparse
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

from .commands.check import SAMPLES_MAX, SEED_MAX, bounded
from .errors import InputError

KICAD_FILES = (".kicad_sch", ".kicad_pro", ".kicad_pcb", ".kicad_sym", ".kicad_prl", ".net",
               ".xml")


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
    """``%O`` with ``.html`` added (KiCad passes the chosen name, with or without extension)."""
    p = Path(out)
    if p.suffix.lower() == ".html":
        return p
    if p.suffix.lower() in KICAD_FILES:
        p = p.with_suffix("")
    return p.with_name(p.name + ".html")


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="python -m frontcheck.kicad_hook",
        description="Check a design from KiCad's netlist generator: reads the intermediate XML "
                    "netlist (%%I) and writes an HTML report to %%O.html.")
    p.add_argument("netlist", help="KiCad's intermediate XML netlist (%%I)")
    p.add_argument("output", help="output path chosen in KiCad (%%O); the report goes to "
                                  "OUTPUT.html")
    p.add_argument("--profile", metavar="NAME", help="rule profile")
    p.add_argument("--config", metavar="FILE", help="project file instead of frontcheck.toml")
    p.add_argument("--fail-on", choices=("error", "warning", "info"), default="error")
    p.add_argument("--samples", type=bounded(0, SAMPLES_MAX), metavar="N",
                   help=f"Monte Carlo samples per stage, 0 to {SAMPLES_MAX:,}")
    p.add_argument("--seed", type=bounded(0, SEED_MAX), metavar="N",
                   help=f"Monte Carlo seed, 0 to {SEED_MAX:,}")
    p.add_argument("--exit-status", action="store_true",
                   help="exit 1 when findings reach --fail-on (KiCad then reports a failure)")
    return p


def summary(report, html_path: Path) -> str:
    """A few lines for KiCad's export dialog."""
    from .report.model import SAFETY_NOTICE

    lines = []
    c = report.counts()
    for p in report.projects:
        lines.append(f"frontcheck: {p.name}: {len(p.stages)} stage(s); "
                     f"{c.get('error', 0)} error(s), {c.get('warning', 0)} warning(s), "
                     f"{c.get('info', 0)} info")
    failing = report.failing()
    for p, f in failing[:20]:
        lines.append(f"  {f.severity.upper()} {f.rule}: {f.message}")
    if len(failing) > 20:
        lines.append(f"  ... and {len(failing) - 20} more")
    lines.append(("FAIL" if failing else "PASS") + f" (fail level '{report.fail_on}'); "
                 f"report: {html_path}")
    if report.has_caution:
        lines.append("Safety: " + SAFETY_NOTICE)
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as e:
        return int(e.code or 0)
    try:
        return _run(args)
    except InputError as e:
        print(f"frontcheck: {e.render()}", file=sys.stderr)
        return 2


def _run(args) -> int:
    from .kicad.project import load
    from .pipeline import RunOptions, check_netlist, tool_info
    from .report import html
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
    opts = RunOptions(profile=args.profile, config_file=args.config, seed=args.seed,
                      samples=args.samples, fail_on=args.fail_on)
    netlist = load(xml_path)
    project_dir = project_dir_for(xml_path)
    src = _design_source(xml_path)
    name = src.stem if src is not None else xml_path.stem
    project = check_netlist(netlist, project_dir, name, str(xml_path), opts)
    report = Report(projects=[project], tool=tool_info(opts, project.profile),
                    fail_on=opts.fail_on)
    try:
        out.write_text(html.render(report), encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot write the report: {e.strerror}", file=str(out),
                         hint="choose another output file in KiCad's export dialog") from None
    sys.stdout.write(summary(report, out))
    if args.exit_status:
        return report.exit_status()
    return 0


def entry() -> None:
    sys.exit(main())


if __name__ == "__main__":
    entry()
