"""Sheet hierarchy: which sheet files are used where, and how often.

A sheet file used N times is N instances, each with its own references (KiCad 7+ keeps them in
each symbol's ``(instances ...)`` block keyed by the instance's UUID path; KiCad 6 keeps them in
the root file's ``symbol_instances``). Each file is read once; instances share the model.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from frontcheck.errors import InputError
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

    @property
    def path(self) -> str:
        """Human sheet path as KiCad names nets: ``/`` or ``/Sub A/Inner/``."""
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


def load_hierarchy(root_file: str | Path) -> Hierarchy:
    """Read the root sheet and every sheet below it. Missing files and sheets that include
    themselves raise InputError naming the sheet block's file and line."""
    root_path = Path(root_file)
    files: dict[str, Schematic] = {}

    def read(p: Path) -> Schematic:
        key = str(p.resolve())
        if key not in files:
            files[key] = read_schematic(p)
        return files[key]

    root = read(root_path)
    instances = [SheetInstance(root, (), ())]
    chain_files = {0: (str(root_path.resolve()),)}
    todo = [0]
    while todo:
        idx = todo.pop(0)
        inst = instances[idx]
        base = Path(inst.schematic.file).parent
        for sh in inst.schematic.sheets:
            if not sh.file:
                raise InputError(f"sheet '{sh.name}' names no sheet file", inst.schematic.file,
                                 sh.line, hint="set the sheet's file name in KiCad")
            rel = sh.file.replace("\\", "/")     # written on Windows
            sub = base / rel
            if not sub.is_file() and (root_path.parent / rel).is_file():
                sub = root_path.parent / rel        # older files: relative to the project
            if sub.suffix.lower() == ".sch":
                raise InputError(f"sheet '{sh.name}' uses a KiCad 5 legacy file {sh.file}",
                                 inst.schematic.file, sh.line,
                                 hint="open and save the project in KiCad 6 or newer")
            if not sub.is_file():
                raise InputError(f"sheet '{sh.name}' refers to {sh.file}, which does not exist",
                                 inst.schematic.file, sh.line,
                                 hint="restore the sheet file or fix the sheet's file name")
            key = str(sub.resolve())
            if key in chain_files[idx]:
                raise InputError(f"sheet '{sh.name}' includes {sh.file}, which contains this "
                                 "sheet itself (recursive hierarchy)", inst.schematic.file,
                                 sh.line, hint="a sheet must not be placed inside itself")
            child = SheetInstance(read(sub), inst.uuids + (sh.uuid,), inst.names + (sh.name,),
                                  parent=idx, sheet=sh)
            instances.append(child)
            cidx = len(instances) - 1
            inst.children.append(cidx)
            chain_files[cidx] = chain_files[idx] + (key,)
            todo.append(cidx)
    return Hierarchy(root=root, instances=instances, files=files,
                     project_name=root_path.stem)
