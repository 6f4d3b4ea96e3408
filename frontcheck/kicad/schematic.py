"""The schematic model: what one ``.kicad_sch`` file says, in KiCad's own terms.

This module reads a single sheet file (KiCad 6 to 10 formats) into plain dataclasses. It does
not follow sheets (``hierarchy``) and does not connect anything (``connectivity``). Every
coordinate is converted to KiCad's internal unit, 1 IU = 0.0001 mm, and rounded the way
KiCad rounds on load, because connections are decided by exact equality of those integers.

Unknown tokens are skipped: newer KiCad versions add tokens freely, and a reader that stops
on one would refuse files whose connectivity it fully understands.
"""

from __future__ import annotations

import datetime
import gc
from dataclasses import dataclass, field
from pathlib import Path

from frontcheck.errors import InputError
from frontcheck.kicad.libsymbols import (BODY_STYLES_DECLARED, LibPin, LibSymbol,
                                        read_lib_symbol, resolve_extends)
from frontcheck.kicad.sexpr import Pruning, SExprError, SourceText, parse_file
from frontcheck.kicad.sexpr_items import (IU_PER_MM, find, flag, kids, property_of, to_iu,
                                          xy_angle)

__all__ = [
    "IU_PER_MM", "to_iu", "LibPin", "LibSymbol", "PlacedSymbol", "Label", "SheetPin", "Sheet",
    "Wire", "BusEntry", "Schematic", "read_schematic", "parse_schematic",
    "BODY_STYLES_DECLARED",
]

# Versions at which KiCad changed the meaning of something we read (docs/kicad-connectivity.md
# sec. 3).
POWER_NAME_FROM_VALUE = 20230221   # power net = Value (before: the hidden pin's name)
TILDE_IS_LITERAL = 20250318        # pin name "~" is a real name (before: "no name")
# The newest file format frontcheck has been checked against (docs/kicad-connectivity.md).
NEWEST_KNOWN = (20260306, "KiCad 10")
# What the readers below never look at: text appearance, line styles, and anything of a
# property past its name and value (about half the lists of a sheet).
PRUNING = Pruning(heads=("effects", "stroke"), property_tails=True)


@dataclass
class PlacedSymbol:
    lib_id: str
    lib_name: str | None
    x: int
    y: int
    angle: int
    mirror: str | None            # None, "x" or "y"
    unit: int
    body_style: int
    fields: dict[str, str]
    uuid: str
    dnp: bool = False
    in_bom: bool = True
    on_board: bool = True
    exclude_from_sim: bool = False
    # instance path ("/root-uuid/sheet-uuid", as written) -> (reference, unit)
    instances: dict[str, tuple[str, int | None]] = field(default_factory=dict)
    line: int | None = None

    @property
    def lib_key(self) -> str:
        """Key into ``lib_symbols``: lib_name when present, else lib_id (docs/kicad-connectivity.md
        sec. 1)."""
        return self.lib_name or self.lib_id

    def place(self, px: int, py: int) -> tuple[int, int]:
        """Library pin point (IU, Y up) -> sheet point (IU, Y down): rotate, mirror, flip."""
        a = self.angle % 360
        if a == 0:
            rx, ry = px, py
        elif a == 90:
            rx, ry = -py, px
        elif a == 180:
            rx, ry = -px, -py
        else:
            rx, ry = py, -px
        if self.mirror == "x":
            ry = -ry
        elif self.mirror == "y":
            rx = -rx
        return self.x + rx, self.y - ry


@dataclass
class Label:
    kind: str         # "local", "global" or "hierarchical"
    text: str
    x: int
    y: int
    shape: str = ""
    uuid: str = ""


@dataclass
class SheetPin:
    name: str
    shape: str
    x: int
    y: int
    uuid: str = ""


@dataclass
class Sheet:
    name: str
    file: str
    uuid: str
    pins: list[SheetPin]
    fields: dict[str, str]
    pages: dict[str, str] = field(default_factory=dict)   # instance path -> page
    line: int | None = None


@dataclass
class Wire:
    x1: int
    y1: int
    x2: int
    y2: int


@dataclass
class BusEntry:
    x: int
    y: int
    dx: int
    dy: int


@dataclass
class Schematic:
    file: str
    version: int
    uuid: str
    source: SourceText | None = None
    lib_symbols: dict[str, LibSymbol] = field(default_factory=dict)
    symbols: list[PlacedSymbol] = field(default_factory=list)
    wires: list[Wire] = field(default_factory=list)
    buses: list[Wire] = field(default_factory=list)
    bus_entries: list[BusEntry] = field(default_factory=list)
    junctions: list[tuple[int, int]] = field(default_factory=list)
    no_connects: list[tuple[int, int]] = field(default_factory=list)
    labels: list[Label] = field(default_factory=list)
    sheets: list[Sheet] = field(default_factory=list)
    bus_aliases: dict[str, list[str]] = field(default_factory=dict)
    # KiCad 6 root-level (symbol_instances): "/sheet-uuids/symbol-uuid" -> (reference, unit)
    symbol_instances: dict[str, tuple[str, int | None]] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)   # readable, but say so in the report

    def line_of(self, needle: str) -> int | None:
        return self.source.line_of(needle) if (self.source and needle) else None


# ----------------------------------------------------------------------------- reading


def _instances(node: list) -> dict[str, tuple[str, int | None]]:
    out: dict[str, tuple[str, int | None]] = {}
    for proj in node[1:]:       # kids(...) inline, here and below: one block per symbol
        if not (isinstance(proj, list) and proj) or proj[0] != "project":
            continue
        for path in proj[1:]:
            if not (isinstance(path, list) and path) or path[0] != "path" or len(path) < 2:
                continue
            if len(path) == 4:      # (path "..." (reference "R1") (unit 1)): nearly always
                r, u = path[2], path[3]
                if type(r) is list and type(u) is list and len(r) == 2 and len(u) == 2 and \
                        r[0] == "reference" and u[0] == "unit":
                    if path[1] not in out:
                        out[path[1]] = (r[1], int(u[1]))
                    continue
            ref, unit = None, None
            for k in path[1:]:
                if isinstance(k, list) and len(k) > 1:
                    if k[0] == "reference":
                        ref = k[1]
                    elif k[0] == "unit":
                        unit = int(k[1])
            if ref is not None and path[1] not in out:
                out[path[1]] = (ref, unit)
    return out


def _placed(node: list) -> PlacedSymbol:
    lib_id, lib_name, x, y, angle, mirror, unit, body_style = "", None, 0, 0, 0, None, 1, 1
    fields: dict[str, str] = {}
    uuid, dnp, in_bom, on_board, sim = "", False, True, True, False
    instances: dict[str, tuple[str, int | None]] = {}
    for k in node[1:]:          # kids(node), inline: a sheet has thousands of symbols
        if not (isinstance(k, list) and k):
            continue
        h = k[0]
        # most frequent first: properties, then the pins' uuids (not read)
        if h == "property":
            if len(k) == 3 and type(k[1]) is str and type(k[2]) is str and k[1] != "private":
                fields[k[1]] = k[2]         # as the reader prunes it: name and value only
            else:
                p = property_of(k)
                if p:
                    fields[p[0]] = p[1]
        elif h == "pin":
            continue
        # then in the order KiCad writes them
        elif h == "lib_id":
            lib_id = k[1]
        elif h == "at":
            x, y, angle = xy_angle(k)
        elif h == "unit":
            unit = int(k[1])
        elif h == "exclude_from_sim":
            sim = flag(k)
        elif h == "in_bom":
            in_bom = flag(k)
        elif h == "on_board":
            on_board = flag(k)
        elif h == "dnp":
            dnp = flag(k)
        elif h == "uuid":
            uuid = k[1]
        elif h == "instances":
            instances = _instances(k)
        elif h == "lib_name":
            lib_name = k[1]
        elif h == "mirror" and len(k) > 1:
            mirror = k[1]
        elif h in ("convert", "body_style"):
            body_style = int(k[1])
    return PlacedSymbol(lib_id, lib_name, x, y, angle, mirror, unit, body_style, fields, uuid,
                        dnp, in_bom, on_board, sim, instances)


def _pts(node: list) -> list[tuple[int, int]]:
    for pts in node[1:]:
        if isinstance(pts, list) and pts and pts[0] == "pts":
            return [(to_iu(p[1]), to_iu(p[2])) for p in pts[1:]
                    if isinstance(p, list) and p and p[0] == "xy"]
    return []


def _sheet(node: list) -> Sheet:
    fields: dict[str, str] = {}
    pins: list[SheetPin] = []
    uuid = ""
    pages: dict[str, str] = {}
    for k in kids(node):
        h = k[0]
        if h == "property":
            p = property_of(k)
            if p:
                fields[p[0]] = p[1]
        elif h == "pin" and len(k) > 1:
            shape = k[2] if len(k) > 2 and isinstance(k[2], str) else ""
            at = find(k, "at")
            x, y, _ = xy_angle(at) if at else (0, 0, 0)
            u = find(k, "uuid")
            pins.append(SheetPin(name=k[1], shape=shape, x=x, y=y, uuid=u[1] if u else ""))
        elif h == "uuid":
            uuid = k[1]
        elif h == "instances":
            for proj in kids(k):
                for path in kids(proj):
                    if path[0] == "path" and len(path) > 1:
                        pg = find(path, "page")
                        pages[path[1]] = pg[1] if pg and len(pg) > 1 else ""
    name = fields.get("Sheetname", fields.get("Sheet name", ""))
    file = fields.get("Sheetfile", fields.get("Sheet file", ""))
    return Sheet(name=name, file=file, uuid=uuid, pins=pins, fields=fields, pages=pages)


_LABELS = {"label": "local", "global_label": "global", "hierarchical_label": "hierarchical"}


def _lib_symbols(sch: Schematic, k: list) -> None:
    for s in kids(k):
        if s[0] == "symbol" and len(s) > 1:
            ls = read_lib_symbol(s)
            sch.lib_symbols[ls.name] = ls


def _segments(k: list) -> list[Wire]:
    p = _pts(k)
    return [Wire(a[0], a[1], b[0], b[1]) for a, b in zip(p, p[1:])]


def _wire(sch: Schematic, k: list) -> None:
    # (wire (pts (xy x1 y1) (xy x2 y2)) ...): nearly every wire, read without the loops
    pts = k[1] if len(k) > 1 else None
    if type(pts) is list and len(pts) == 3 and pts[0] == "pts":
        a, b = pts[1], pts[2]
        if type(a) is list and type(b) is list and len(a) > 2 and len(b) > 2 and \
                a[0] == "xy" and b[0] == "xy":
            sch.wires.append(Wire(to_iu(a[1]), to_iu(a[2]), to_iu(b[1]), to_iu(b[2])))
            return
    sch.wires.extend(_segments(k))


def _point(k: list) -> tuple[int, int] | None:
    at = find(k, "at")
    return xy_angle(at)[:2] if at else None


def _bus_entry(sch: Schematic, k: list) -> None:
    at, size = find(k, "at"), find(k, "size")
    if at and size:
        x, y, _ = xy_angle(at)
        sch.bus_entries.append(BusEntry(x, y, to_iu(size[1]), to_iu(size[2])))


def _label(sch: Schematic, k: list) -> None:
    if len(k) < 2 or not isinstance(k[1], str):
        return
    at = shape = u = None       # the first (at), (shape) and (uuid), in one pass
    for q in k[2:]:
        if isinstance(q, list) and q:
            h = q[0]
            if h == "at":
                at = at or q
            elif h == "shape":
                shape = shape or q
            elif h == "uuid":
                u = u or q
    x, y, _ = xy_angle(at) if at else (0, 0, 0)
    sch.labels.append(Label(_LABELS[k[0]], k[1], x, y,
                            shape[1] if shape and len(shape) > 1 else "",
                            u[1] if u and len(u) > 1 else ""))


def _bus_alias(sch: Schematic, k: list) -> None:
    if len(k) > 1:
        members = find(k, "members")
        sch.bus_aliases[k[1]] = ([m for m in members[1:] if isinstance(m, str)]
                                 if members else [])


def _symbol_instances(sch: Schematic, k: list) -> None:
    """KiCad 6's root-level block: "/sheet-uuids/symbol-uuid" -> (reference, unit)."""
    for path in kids(k):
        if path[0] != "path" or len(path) < 2:
            continue
        ref, unit = None, None
        for q in kids(path):
            if q[0] == "reference" and len(q) > 1:
                ref = q[1]
            elif q[0] == "unit" and len(q) > 1:
                unit = int(q[1])
        if ref is not None:
            sch.symbol_instances[path[1]] = (ref, unit)


def _add_point(points: list, k: list) -> None:
    pt = _point(k)
    if pt is not None:
        points.append(pt)


# What each top-level item adds to the model; anything else is skipped.
_READERS = {
    "version": lambda sch, k: setattr(sch, "version", _version(k, sch)),
    "uuid": lambda sch, k: setattr(sch, "uuid", k[1]),
    "lib_symbols": _lib_symbols,
    "symbol": lambda sch, k: sch.symbols.append(_placed(k)),
    "wire": _wire,
    "bus": lambda sch, k: sch.buses.extend(_segments(k)),
    "bus_entry": _bus_entry,
    "junction": lambda sch, k: _add_point(sch.junctions, k),
    "no_connect": lambda sch, k: _add_point(sch.no_connects, k),
    "label": _label, "global_label": _label, "hierarchical_label": _label,
    "sheet": lambda sch, k: sch.sheets.append(_sheet(k)),
    "bus_alias": _bus_alias,
    "symbol_instances": _symbol_instances,
}


def parse_schematic(tree: list, file: str, source: SourceText | None = None) -> Schematic:
    """Build the model from a parsed ``(kicad_sch ...)`` tree."""
    if not tree or tree[0] != "kicad_sch":
        head = tree[0] if tree else "nothing"
        raise InputError(f"not a KiCad schematic: the file starts with ({head} ...)", file, 1,
                         hint="pass a .kicad_sch, .kicad_pro, .net or .xml file, or a project "
                              "folder")
    sch = Schematic(file=file, version=0, uuid="", source=source)
    for k in kids(tree):
        reader = _READERS.get(k[0])
        if reader is not None:
            reader(sch, k)
    resolve_extends(sch.lib_symbols)
    if source is not None:
        _locate(source, sch.symbols)
        _locate(source, sch.sheets)
    for s in sch.symbols:
        # KiCad itself refuses such a file ("Failed to load schematic"),
        # docs/kicad-connectivity.md sec. 1.
        if s.angle % 90 or s.mirror not in (None, "x", "y"):
            what = f"rotation {s.angle}" if s.angle % 90 else f"(mirror {s.mirror})"
            raise InputError(f"symbol {s.fields.get('Reference', s.lib_id)} has {what}; KiCad "
                             "only places symbols at 0/90/180/270 degrees, mirrored x or y",
                             file, s.line, hint="fix the symbol in KiCad (KiCad cannot open "
                             "this file either)")
    return sch


def _version(item: list, sch: Schematic) -> int:
    """The ``(version YYYYMMDD)`` date. Not a date: InputError. Newer than the newest format
    frontcheck knows: a warning that reaches the report."""
    text = item[1] if len(item) > 1 and isinstance(item[1], str) else ""
    try:
        datetime.date(int(text[:4]), int(text[4:6]), int(text[6:]))
        ok = len(text) == 8 and text.isdigit() and text.isascii()
    except ValueError:
        ok = False
    if not ok:
        raise InputError(f"file format version {text!r} is not a date (KiCad writes "
                         "YYYYMMDD, e.g. 20231120)", sch.file, sch.line_of("(version"),
                         hint="the file is damaged or was not written by KiCad; re-save it "
                              "in KiCad")
    version = int(text)
    newest, name = NEWEST_KNOWN
    if version > newest:
        sch.warnings.append(f"{sch.file}: file format version {version} is newer than {name} "
                            f"({newest}); results may miss new syntax")
    return version


def _locate(source: SourceText, items) -> None:
    """Line of each item's UUID. Items come in file order, so each search starts where the
    previous one ended (one pass over the text instead of one per item), and the line is
    the previous one plus the line breaks between (the line of offset i is one more than
    the line breaks before i)."""
    pos, line = 0, 1
    text = source.text
    for it in items:
        if not it.uuid:
            it.line = None
            continue
        i = text.find(it.uuid, pos)
        if i < 0:
            i = text.find(it.uuid)
            if i >= 0:
                pos, line = 0, 1
        if i < 0:
            it.line = None
            continue
        line += text.count("\n", pos, i)
        pos = i
        it.line = line


def read_schematic(path: str | Path, max_expressions: int | None = None) -> Schematic:
    """Read one ``.kicad_sch`` file. Raises InputError (file, line, column) when unreadable,
    LimitError when it holds more than ``max_expressions`` lists."""
    p = Path(path)
    if p.suffix.lower() == ".sch":
        raise InputError("KiCad 5 legacy schematic (.sch) is not supported", str(p), 1,
                         hint="open and save it in KiCad 6 or newer, then pass the .kicad_sch")
    # Parsing builds a large tree of small lists and frees nothing; the cyclic collector's
    # full scans would only make reading superlinear in file size.
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        return _read(p, max_expressions)
    finally:
        if was_enabled:
            gc.enable()


def _read(p: Path, max_expressions: int | None) -> Schematic:
    try:
        tree, src = parse_file(p, max_expressions, PRUNING)
    except FileNotFoundError:
        raise InputError("file not found", str(p)) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a schematic file", str(p)) from None
    except OSError as e:
        raise InputError(f"cannot read: {e.strerror}", str(p)) from None
    except SExprError as e:
        if src_is_legacy(p):
            raise InputError("KiCad 5 legacy schematic format is not supported", str(p), 1,
                             hint="open and save it in KiCad 6 or newer") from None
        raise InputError(f"malformed schematic: {e.message}", e.file or str(p), e.line, e.column,
                         hint="the file is damaged or not a KiCad schematic; re-save it in KiCad"
                         ) from None
    try:
        return parse_schematic(tree, str(p), src)
    except (ValueError, IndexError, TypeError, AttributeError, OverflowError) as e:
        # Well-formed S-expression, but a value is not what KiCad writes (a word where a
        # number belongs, a list where a name belongs).
        raise InputError(f"unreadable schematic content ({type(e).__name__}: {e})", str(p),
                         hint="the file is damaged or was not written by KiCad; "
                              "re-save it in KiCad") from None


def src_is_legacy(p: Path) -> bool:
    try:
        with open(p, "rb") as f:
            return f.read(32).startswith(b"EESchema Schematic File")
    except OSError:
        return False
