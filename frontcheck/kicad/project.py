"""Find what to read from whatever path the user gave, and load it as a Netlist.

Accepted: a project folder, a ``.kicad_pro``, the root or any sub-sheet ``.kicad_sch`` (the
root is found through the ``.kicad_pro`` beside it), a ``.net`` or ``.xml`` netlist export.
Nothing is ever written.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

from frontcheck.errors import InputError
from frontcheck.kicad.files import inside, read_bytes
from frontcheck.kicad.limits import DEFAULT_LIMITS, LimitError, ReadLimits
from frontcheck.netlist import Netlist

__all__ = ["ProjectFiles", "find_project", "load", "load_hierarchy_for", "text_variables"]


@dataclass
class ProjectFiles:
    dir: Path
    pro: Path | None          # None when a lone .kicad_sch has no project file beside it
    root: Path                # root sheet
    given: Path               # what the user passed
    notes: list[str] = field(default_factory=list)


def _sheet_files_below(root: Path, limits: ReadLimits) -> set[str]:
    """Resolved paths of every sheet file reachable from ``root``."""
    from frontcheck.kicad.hierarchy import load_hierarchy

    try:
        h = load_hierarchy(root, limits)
    except LimitError:
        raise
    except InputError:
        return {str(root.resolve())}
    return set(h.files)


def find_project(path: str | Path, limits: ReadLimits | None = None) -> ProjectFiles:
    """Locate project folder, ``.kicad_pro`` and root sheet for a folder, project or sheet."""
    limits = limits or DEFAULT_LIMITS
    p = Path(path)
    if not p.exists():
        raise InputError("no such file or folder", str(p),
                         hint="pass a KiCad project folder, .kicad_pro, .kicad_sch, .net or .xml")
    if p.is_dir():
        pros = sorted(p.glob("*.kicad_pro"))
        if not pros:
            schs = sorted(p.glob("*.kicad_sch"))
            legacy = sorted(p.glob("*.pro")) + sorted(p.glob("*.sch"))
            if not schs and legacy:
                raise InputError("this folder holds a KiCad 5 project (.pro/.sch), which is not "
                                 "supported", str(p), hint="open and save it in KiCad 6 or newer")
            raise InputError("no KiCad project (.kicad_pro) in this folder", str(p),
                             hint="pass the project folder, its .kicad_pro or the root .kicad_sch")
        if len(pros) > 1:
            names = ", ".join(x.name for x in pros)
            raise InputError(f"this folder holds several projects ({names})", str(p),
                             hint="name the one to check, e.g. " + str(pros[0]))
        return _from_pro(pros[0], p, limits)
    suffix = p.suffix.lower()
    if suffix == ".kicad_pro":
        return _from_pro(p, p, limits)
    if suffix == ".pro" or suffix == ".sch":
        raise InputError("KiCad 5 legacy file; only KiCad 6 and newer files are read", str(p), 1,
                         hint="open and save the project in KiCad 6 or newer")
    if suffix == ".kicad_sch":
        folder = p.parent
        same = folder / (p.stem + ".kicad_pro")
        if same.is_file():
            return _from_pro(same, p, limits)
        pros = sorted(folder.glob("*.kicad_pro"))
        owners = []
        # A sheet kept in a subfolder belongs to a project up to a few folders above it.
        for d in [folder, *list(folder.resolve().parents)[:3]]:
            for pro in sorted(d.glob("*.kicad_pro")):
                root = pro.with_suffix(".kicad_sch")
                if root.is_file() and str(p.resolve()) in _sheet_files_below(root, limits):
                    owners.append(pro)
            if owners:
                break
        if len(owners) == 1:
            return _from_pro(owners[0], p, limits)
        if len(owners) > 1:
            names = ", ".join(x.name for x in owners)
            raise InputError(f"this sheet belongs to several projects ({names})", str(p),
                             hint="pass the .kicad_pro of the project to check")
        notes = []
        if pros:
            notes.append(f"{p.name} is not part of {', '.join(x.name for x in pros)}; "
                         "read it as a root sheet on its own")
        return ProjectFiles(dir=folder, pro=None, root=p, given=p, notes=notes)
    raise InputError(f"unsupported file type '{p.suffix}'", str(p),
                     hint="pass a KiCad project folder, .kicad_pro, .kicad_sch, .net or .xml")


def _from_pro(pro: Path, given: Path, limits: ReadLimits = DEFAULT_LIMITS) -> ProjectFiles:
    root = pro.with_suffix(".kicad_sch")
    if root.is_symlink() and not inside(root, (pro.parent, *limits.allowed_folders)):
        raise InputError(f"the root sheet {root.name} links to a file outside the project "
                         "folder", str(root), hint="frontcheck reads only the project folder: "
                         "copy the sheet into it, or allow its folder with --allow-folder DIR")
    if not root.is_file():
        if pro.with_suffix(".sch").is_file():
            raise InputError("the project's schematic is a KiCad 5 legacy .sch file", str(pro),
                             hint="open and save the project in KiCad 6 or newer")
        raise InputError(f"root sheet {root.name} not found beside the project file", str(pro),
                         hint="the root schematic must have the project's name")
    return ProjectFiles(dir=pro.parent, pro=pro, root=root, given=given)


def text_variables(pro: Path | None) -> dict[str, str]:
    """``text_variables`` of a .kicad_pro (JSON); {} when absent or unreadable as such."""
    if pro is None:
        return {}
    try:
        data = json.loads(read_bytes(pro).decode("utf-8"))
    except RecursionError:
        raise InputError("project file is nested too deeply to be a KiCad project", str(pro),
                         hint="re-save the project in KiCad") from None
    except (OSError, ValueError) as e:
        raise InputError(f"project file is not valid JSON: {e}", str(pro),
                         hint="re-save the project in KiCad") from None
    tv = data.get("text_variables") if isinstance(data, dict) else None
    return {str(k): str(v) for k, v in tv.items()} if isinstance(tv, dict) else {}


def load_hierarchy_for(path: str | Path, limits: ReadLimits = DEFAULT_LIMITS):
    """(ProjectFiles, Hierarchy) for a folder, project or sheet path."""
    from frontcheck.kicad.hierarchy import load_hierarchy

    pf = find_project(path, limits)
    return pf, load_hierarchy(pf.root, limits)


def load(path: str | Path, limits: ReadLimits | None = None) -> Netlist:
    """Read a design into a Netlist. See the module docstring for the accepted paths;
    ``limits`` bound the work and name the folders sheets may come from besides the
    project's own."""
    limits = limits or DEFAULT_LIMITS
    p = Path(path)
    suffix = p.suffix.lower()
    if p.is_file() and suffix in (".net", ".xml"):
        from frontcheck.kicad import netfile   # written alongside; imported only when needed

        return (netfile.read_net(p, limits.expressions) if suffix == ".net"
                else netfile.read_xml(p, limits.expressions))
    from frontcheck.kicad.connectivity import build_netlist

    pf, h = load_hierarchy_for(p, limits)
    variables = text_variables(pf.pro)
    if pf.pro is not None:
        variables.setdefault("PROJECTNAME", pf.pro.stem)
    nl = build_netlist(h, variables, source=str(pf.given))
    nl.notes[:0] = pf.notes
    return nl
