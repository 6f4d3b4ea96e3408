"""pre-commit support: map the files a commit touches to the projects to check.

pre-commit passes the changed ``.kicad_sch`` / ``.kicad_pro`` files. A changed sub-sheet
changes the circuit of every project whose hierarchy uses it, and a stage can only be
recognised in its whole hierarchy, so each such project is checked once, from its root.
A sheet that belongs to no project is checked as a root sheet on its own. A path that is
not an existing ``.kicad_sch`` / ``.kicad_pro`` file is an error (exit 2), not skipped.
"""

from __future__ import annotations

import os
from pathlib import Path

from .errors import InputError

DESIGN_SUFFIXES = (".kicad_sch", ".kicad_pro")


def _sheets_of(pro: Path) -> set[str]:
    from .kicad.hierarchy import load_hierarchy

    root = pro.with_suffix(".kicad_sch")
    if not root.is_file():
        return set()
    try:
        return set(load_hierarchy(root).files)
    except InputError:
        return {str(root.resolve())}


def _owners(sheet: Path, stop: Path, cache: dict[Path, set[str]]) -> list[Path]:
    """Projects, in ``sheet``'s folder or any folder above it up to ``stop``, whose hierarchy
    includes ``sheet``."""
    target = str(sheet.resolve())
    found: list[Path] = []
    d = sheet.resolve().parent
    stop = stop.resolve()
    while True:
        for pro in sorted(d.glob("*.kicad_pro")):
            if pro not in cache:
                cache[pro] = _sheets_of(pro)
            if target in cache[pro]:
                found.append(pro)
        if found or d == stop or d.parent == d or stop not in d.parents:
            break
        d = d.parent
    return found


def _require_design_file(p: Path) -> None:
    """pre-commit passes only files that exist and match the hook's ``files`` pattern, so
    anything else is a misconfigured hook or a typo, never something to skip in silence."""
    hint = ("pass changed .kicad_sch / .kicad_pro files (the hook's `files` pattern); "
            "put `--` before paths that start with '-'")
    if p.suffix.lower() not in DESIGN_SUFFIXES:
        raise InputError("not a KiCad schematic or project file", file=str(p), hint=hint)
    if not p.exists():
        raise InputError("file not found", file=str(p), hint=hint)
    if not p.is_file():
        raise InputError("not a regular file", file=str(p), hint=hint)


def projects_for(files: list[str], top: str | None = None) -> list[str]:
    """The projects to check for a list of changed files, each once, in a stable order.

    Parameters
    ----------
    files : list of str
        Paths as pre-commit passes them (relative to the repository root, or absolute).
    top : str, optional
        Highest folder to search for an owning project (default: the current folder, which
        pre-commit sets to the repository root).
    """
    stop = Path(top or os.getcwd())
    cache: dict[Path, set[str]] = {}
    out: list[str] = []
    seen: set[str] = set()

    def add(p: Path) -> None:
        key = str(p.resolve())
        if key not in seen:
            seen.add(key)
            out.append(str(p))

    for f in files:
        p = Path(f)
        _require_design_file(p)
        if p.suffix.lower() == ".kicad_pro":
            add(p)
            continue
        owners = _owners(p, stop, cache)
        if owners:
            for pro in owners:
                # keep the path relative when the input was relative (messages stay short)
                add(Path(os.path.relpath(pro)) if not p.is_absolute() else pro)
        else:
            add(p)
    return out
