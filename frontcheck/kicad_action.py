"""The toolbar button's action: check the project open in KiCad and show the report.

KiCad (9 and 10) starts an IPC-API plugin's action as a process with ``KICAD_API_SOCKET`` and
``KICAD_API_TOKEN`` in its environment. The API of these releases exposes no schematic symbols,
fields or nets, so the action asks KiCad which project is open (``get_open_documents``, from
the kicad-python package the plugin's requirements install), checks that project's *saved*
files, writes ``<project>-frontcheck.html`` beside the project and opens it in the default
browser. KiCad does not show a plugin's output, so what the user must know (the schematic has
unsaved changes, the API server is off, nothing could be checked) is shown in a message box
(tkinter, when the Python running the plugin has it) or else in a small page opened in the
browser.

Unsaved changes are seen through KiCad 9's autosave files: ``_autosave-<sheet>.kicad_sch``
beside a sheet and newer than it holds edits that were not saved (KiCad writes it at its
autosave interval). KiCad 10 keeps autosaves in its local history instead, which this does not
read: there the warning does not appear.
"""

from __future__ import annotations

import html
import os
import sys
import tempfile
from pathlib import Path
from typing import Callable

from .errors import InputError
from .kicad_hook import REPORT_SUFFIX, open_in_browser, short_summary, write_report

AUTOSAVE_PREFIX = "_autosave-"
API_OFF = ("frontcheck could not reach KiCad's API server. Turn it on in KiCad: Preferences > "
           "Preferences... > Plugins > Enable KiCad API, then restart KiCad and press the "
           "button again.")

Notifier = Callable[[str, str], None]


def unsaved_sheets(project_dir: Path) -> list[str]:
    """Sheets whose KiCad autosave file is newer than the saved sheet (unsaved edits)."""
    out = []
    for auto in sorted(project_dir.glob(AUTOSAVE_PREFIX + "*.kicad_sch")):
        saved = auto.with_name(auto.name[len(AUTOSAVE_PREFIX):])
        if not saved.exists() or auto.stat().st_mtime > saved.stat().st_mtime:
            out.append(saved.name)
    return out


def notify(title: str, text: str) -> None:
    """A message the user sees: a message box, or a page in the browser without tkinter."""
    try:
        import tkinter
        from tkinter import messagebox

        win = tkinter.Tk()
        win.withdraw()
        messagebox.showinfo(title, text, parent=win)
        win.destroy()
        return
    except Exception:     # no tkinter, or no display: fall back to the browser
        pass
    if os.environ.get("FRONTCHECK_NO_OPEN") == "1":
        print(f"{title}: {text}", file=sys.stderr)
        return
    page = Path(tempfile.mkdtemp(prefix="frontcheck-")) / "message.html"
    page.write_text(f"<!doctype html><meta charset='utf-8'><title>{html.escape(title)}</title>"
                    f"<h1>{html.escape(title)}</h1><p>{html.escape(text)}</p>",
                    encoding="utf-8")
    if not open_in_browser(page):
        print(f"{title}: {text}", file=sys.stderr)


def open_project(kicad_factory=None) -> tuple[Path, str]:
    """(project folder, project name) of the document open in KiCad's schematic editor, or
    else in its PCB editor. Raises ConnectionError when KiCad cannot be reached."""
    from kipy import KiCad
    from kipy.errors import ApiError
    from kipy.errors import ConnectionError as KiCadConnectionError
    from kipy.proto.common.types import DocumentType

    try:
        kicad = (kicad_factory or KiCad)()
        for doc_type in (DocumentType.DOCTYPE_SCHEMATIC, DocumentType.DOCTYPE_PCB):
            try:
                docs = kicad.get_open_documents(doc_type)
            except ApiError:      # this editor is not open, or does not answer this type
                continue
            for doc in docs:
                if doc.project.path:
                    return Path(doc.project.path), doc.project.name
    except KiCadConnectionError as e:
        raise ConnectionError(str(e)) from None
    raise InputError("KiCad reports no open project",
                     hint="open the project's schematic in KiCad, save it and press the button "
                          "again")


def run(kicad_factory=None, opener=open_in_browser, notifier: Notifier = notify,
        samples: int | None = None) -> int:
    """The action: 0 report shown, 1 the report shows findings, 2 nothing could be checked."""
    from .pipeline import RunOptions, check_project, tool_info
    from .report.model import Report

    try:
        project_dir, name = open_project(kicad_factory)
    except ConnectionError:
        notifier("frontcheck", API_OFF)
        return 2
    except InputError as e:
        notifier("frontcheck", e.render())
        return 2
    try:
        opts = RunOptions(samples=samples)
        pro = project_dir / f"{name}.kicad_pro"
        project = check_project(str(pro if pro.exists() else project_dir), opts)
        report = Report(projects=[project], tool=tool_info(opts, project.profile))
        out = project_dir / (name + REPORT_SUFFIX)
        write_report(report, out)
    except InputError as e:
        notifier("frontcheck could not check the project", e.render())
        return 2
    opened = bool(opener(out))
    summary = short_summary(report, out, opened)
    print(summary, end="")
    stale = unsaved_sheets(project_dir)
    if stale:
        notifier("frontcheck checked the saved schematic",
                 f"{', '.join(stale)} has unsaved changes: the report shows the version saved "
                 f"on disk. Save (Ctrl+S) and press the button again.\n\n{summary}")
    elif not opened:
        notifier("frontcheck", summary)
    return 1 if report.failing() else 0


def main() -> int:
    return run()


if __name__ == "__main__":
    sys.exit(main())
