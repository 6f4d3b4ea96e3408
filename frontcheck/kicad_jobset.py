"""Run frontcheck as a step of a KiCad jobset (``.kicad_jobset``, KiCad 9 and later).

A jobset's "Execute Command" step (job type ``special_execute``) runs a command line in which
KiCad expands ``${KIPRJMOD}`` (the project folder) and other path variables. The command::

    python3 -m frontcheck.kicad_jobset "${KIPRJMOD}" --findings-exit 5

checks the saved project and writes the HTML report ``<project>-frontcheck.html``: into the
jobset's output when KiCad says where that is being assembled (the ``JOBSET_OUTPUT_WORK_PATH``
environment variable, set by KiCad 10), else beside the project (KiCad 9.0 does not set it);
``--output FILE`` names another file. It prints the same short summary as the generator hook,
which KiCad records as the step's log when "Record output" is on. It never opens a browser.

Exit status: 0 when the report was written; with ``--findings-exit 5`` 5 for findings at or
above ``--fail-on`` (KiCad then marks the job failed but keeps its output files; any other
non-zero status discards them); 2 when the project or an option could not be read.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from .cli import could_not_check, say
from .errors import InputError
from .kicad_hook import (REPORT_SUFFIX, add_common_options, findings_status, run_options,
                         short_summary, write_report)

WORK_PATH_VARIABLE = "JOBSET_OUTPUT_WORK_PATH"


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="python3 -m frontcheck.kicad_jobset",
        description="Check a KiCad project as a jobset step and write its HTML report.")
    p.add_argument("project", help='the project folder or .kicad_pro ("${KIPRJMOD}" in a '
                                   "jobset)")
    p.add_argument("--output", metavar="FILE",
                   help="the report's path (default: <project>-frontcheck.html in "
                        f"${WORK_PATH_VARIABLE} when KiCad sets it, else beside the project)")
    add_common_options(p, browser=False)
    return p


def project_path(given: str) -> Path:
    """The project KiCad named. KiCad 9.0's kicad-cli leaves ${KIPRJMOD} empty when it was
    given the project by a relative path: then the working folder, if it holds a project."""
    if given.strip():
        return Path(given)
    here = Path.cwd()
    if any(here.glob("*.kicad_pro")):
        return here
    raise InputError("KiCad passed an empty project folder (${KIPRJMOD})",
                     hint="run kicad-cli jobset run with the project's absolute path")


def _work_path(environ) -> Path | None:
    """Where KiCad assembles the jobset's output (KiCad 10 says so; KiCad 9.0 does not)."""
    work = environ.get(WORK_PATH_VARIABLE, "")
    return Path(work) if work and Path(work).is_dir() else None


def report_path(project, args, environ=os.environ) -> Path:
    if args.output:
        return Path(args.output)
    name = project.name + REPORT_SUFFIX
    work = _work_path(environ)
    if work is not None:
        return work / name
    folder = Path(project.path)
    if not folder.is_dir():     # a .kicad_pro or a sheet
        folder = folder.parent
    return folder / name


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as e:
        return int(e.code or 0)
    try:
        return _run(args)
    except InputError as e:
        say(e.render())
        return 2
    except KeyboardInterrupt:
        return 130
    except Exception as e:     # never a traceback in KiCad's message box; exit 2: not checked
        return could_not_check(e)


def _run(args) -> int:
    from .pipeline import check_project, tool_info
    from .report.model import Report

    opts = run_options(args)
    path = project_path(args.project)
    if not path.exists():
        raise InputError("no such project", file=str(path),
                         hint='pass "${KIPRJMOD}" as the first argument')
    project = check_project(str(path), opts)
    report = Report(projects=[project], tool=tool_info(opts, project.profile),
                    fail_on=opts.fail_on)
    out = report_path(project, args)
    write_report(report, out)
    # KiCad's work folder is temporary: name the report as the user will find it
    where = (f"{out.name} in the jobset's output" if not args.output and
             out.parent == _work_path(os.environ) else str(out))
    sys.stdout.write(short_summary(report, where, opened=False))
    sys.stdout.flush()
    return findings_status(report, args)


def entry() -> None:
    sys.exit(main())


if __name__ == "__main__":
    entry()
