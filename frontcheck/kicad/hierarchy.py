"""Sheet hierarchy: which sheet files are used where, and how often.

A sheet file used N times is N instances, each with its own references (KiCad 7+ keeps them in
each symbol's ``(instances ...)`` block keyed by the instance's UUID path; KiCad 6 keeps them in
the root file's ``symbol_instances``). Each file is read once; instances share the model.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

from frontcheck.errors import InputError
from frontcheck.kicad.files import inside
from frontcheck.kicad.limits import DEFAULT_LIMITS, ReadLimits, limit_error
from frontcheck.kicad.schematic import PlacedSymbol, Schematic, Sheet, read_schematic

__all__ = ["SheetInstance", "Hierarchy", "load_hierarchy", "sheet_path_name"]


@dataclass
class SheetInstance:
    schematic: Schematic
    uuids: tuple[str, ...]          # sheet UUIDs from the root down (root itself excluded)
    names: tuple[str, ...]          # sheet names from the root down
    parent: int | None = None       # index of the parent instance
    sheet: Sheet | None = None      # the (sheet ...) block in the parent that placed this one
    children: list[int] = field(default_factory=list)

    @property
    def depth(self) -> int:
        return len(self.uuids)

    @cached_property
    def path(self) -> str:
        """Human sheet path as KiCad names nets: ``/`` or ``/Sub A/Inner/`` (read for every
        label and symbol of the instance; ``names`` never changes once built)."""
        return sheet_path_name(self.names)


def sheet_path_name(names) -> str:
    return "/" + "".join(n.replace("/", "{slash}") + "/" for n in names)


@dataclass
class Hierarchy:
    root: Schematic
    instances: list[SheetInstance]
    files: dict[str, Schematic]        # resolved path -> model
    project_name: str = ""

    def reference(self, inst: SheetInstance, sym: PlacedSymbol) -> tuple[str, int]:
        """(reference, unit) of a placed symbol in one sheet instance (docs/kicad-connectivity.md
        sec. 4)."""
        root_uuid = self.root.uuid
        key = "/" + "/".join((root_uuid,) + inst.uuids) if root_uuid else ""
        hit = sym.instances.get(key) if key else None
        if hit is None and sym.instances:
            # Paths written under another root UUID (a sheet copied from another project):
            # match on the sheet chain below the root.
            for path, val in sym.instances.items():
                if tuple(path.strip("/").split("/")[1:]) == inst.uuids:
                    hit = val
                    break
        if hit is None and self.root.symbol_instances:
            hit = self.root.symbol_instances.get("".join("/" + u for u in inst.uuids)
                                                 + "/" + sym.uuid)
        if hit is None:
            return sym.fields.get("Reference", "?"), sym.unit
        ref, unit = hit
        return ref, unit if unit is not None else sym.unit


    def references(self, inst: SheetInstance) -> list[tuple[str, int]]:
        """:meth:`reference` of every placed symbol of ``inst``, the instance path made once."""
        root_uuid = self.root.uuid
        key = "/" + "/".join((root_uuid,) + inst.uuids) if root_uuid else ""
        out = []
        for sym in inst.schematic.symbols:
            hit = sym.instances.get(key) if key else None
            if hit is None:
                out.append(self.reference(inst, sym))
            else:
                ref, unit = hit
                out.append((ref, unit if unit is not None else sym.unit))
        return out


def load_hierarchy(root_file: str | Path, limits: ReadLimits = DEFAULT_LIMITS) -> Hierarchy:
    """Read the root sheet and every sheet below it. Missing files, sheets that include
    themselves and sheet files outside the project folder raise InputError naming the sheet
    block's file and line; more sheet instances or symbols than ``limits`` allow raise
    LimitError."""
    root_path = Path(root_file)
    folders = (root_path.absolute().parent, *limits.allowed_folders)
    files: dict[str, Schematic] = {}
    # (placing file, sheet file as written) -> (the file, resolved): the same for every
    # instance of the placing file
    placed: dict[tuple[str, str], tuple[Path, str]] = {}

    def read(p: Path, key: str) -> Schematic:
        if key not in files:
            files[key] = read_schematic(p, limits.expressions)
        return files[key]

    root = read(root_path, str(root_path.resolve()))
    instances = [SheetInstance(root, (), ())]
    chain_files = {0: (str(root_path.resolve()),)}
    symbols = len(root.symbols)
    todo = deque([0])
    while todo:
        idx = todo.popleft()
        inst = instances[idx]
        for sh in inst.schematic.sheets:
            where = (inst.schematic.file, sh.file)
            if where not in placed:
                sub = _sheet_file(inst.schematic, sh, root_path, folders)
                placed[where] = (sub, str(sub.resolve()))
            sub, key = placed[where]
            if key in chain_files[idx]:
                raise InputError(f"sheet '{sh.name}' includes {sh.file}, which contains this "
                                 "sheet itself (recursive hierarchy)", inst.schematic.file,
                                 sh.line, hint="a sheet must not be placed inside itself")
            if len(instances) >= limits.sheet_instances:
                raise limit_error("sheet instances", limits.sheet_instances, "--max-sheets",
                                  str(root_path))
            child = SheetInstance(read(sub, key), inst.uuids + (sh.uuid,), inst.names + (sh.name,),
                                  parent=idx, sheet=sh)
            symbols += len(child.schematic.symbols)
            if symbols > limits.symbols:
                raise limit_error("placed symbols", limits.symbols, "--max-symbols",
                                  str(root_path))
            instances.append(child)
            cidx = len(instances) - 1
            inst.children.append(cidx)
            chain_files[cidx] = chain_files[idx] + (key,)
            todo.append(cidx)
    if symbols > limits.symbols:
        raise limit_error("placed symbols", limits.symbols, "--max-symbols", str(root_path))
    return Hierarchy(root=root, instances=instances, files=files,
                     project_name=root_path.stem)


def _sheet_file(parent: Schematic, sh: Sheet, root_path: Path, folders) -> Path:
    """The file a sheet block places, checked to be a KiCad 6+ sheet inside ``folders``
    before anything is opened."""
    if not sh.file:
        raise InputError(f"sheet '{sh.name}' names no sheet file", parent.file, sh.line,
                         hint="set the sheet's file name in KiCad")
    rel = sh.file.replace("\\", "/")     # written on Windows
    sub = Path(parent.file).parent / rel
    older = root_path.parent / rel      # older files: relative to the project
    if not inside(sub, folders) or not _present(sub):
        if inside(older, folders) and _present(older) and not older.is_dir():
            sub = older
        elif not inside(sub, folders):
            raise InputError(f"sheet '{sh.name}' refers to {sh.file}, which is outside the "
                             f"project folder {folders[0]}", parent.file, sh.line,
                             hint="frontcheck reads only the project folder: move the sheet "
                                  "into it, or allow its folder with --allow-folder DIR")
    if sub.suffix.lower() == ".sch":
        raise InputError(f"sheet '{sh.name}' uses a KiCad 5 legacy file {sh.file}",
                         parent.file, sh.line,
                         hint="open and save the project in KiCad 6 or newer")
    if not _present(sub):
        raise InputError(f"sheet '{sh.name}' refers to {sh.file}, which does not exist",
                         parent.file, sh.line,
                         hint="restore the sheet file or fix the sheet's file name")
    return sub


def _present(p: Path) -> bool:
    """Is there anything at ``p`` (a dangling link counts: reading it says what is wrong)?"""
    try:
        return p.exists() or p.is_symlink()
    except OSError:           # a name too long, a loop of links: nothing readable there
        return False
