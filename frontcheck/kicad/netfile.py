"""Readers for netlists KiCad exported: the S-expression ``.net`` file and the ``.xml``
intermediate netlist (export versions D and E).

Both formats carry the same elements (``export/design``, ``components/comp``,
``libparts/libpart/pins/pin``, ``nets/net/node``); the XML reader turns elements into the same
nested-list shape the S-expression parser gives (``<field name="Tol">1%</field>`` becomes
``["field", ["name", "Tol"], "1%"]``), so a single walker builds the :class:`Netlist` and the
two formats cannot drift apart.

What the netlist is taken to mean (KiCad 9 and 10 behaviour, see docs/kicad-connectivity.md):

* Components marked ``exclude_from_board`` (``(on_board no)`` in the schematic) appear in the
  XML export but not in the ``.net`` export and have no pins in any net; they are dropped so
  that both formats and the schematic reader give the same components.
* A component's pins are the pins that appear as nodes: KiCad lists every pin of every placed
  unit in some net (single-pin nets included) and no pin of an unplaced unit, while
  ``libparts`` lists the whole library symbol.
* KiCad 10 writes ``pinfunction`` as ``<name>_<number>``; KiCad 9 and older write the bare
  name. Node and Pin names are always the bare name.
"""

from __future__ import annotations

import gc
import re
from contextlib import contextmanager
from pathlib import Path

from ..errors import InputError
from ..netlist import Component, Location, Net, Netlist, Node, Pin
from .limits import limit_error
from .netxml import HINT_EXPORT as _HINT_EXPORT, count_xml_elements, parse_xml as _parse_xml
from .sexpr import SExprError, SourceText, count_expressions, parse, read_text

__all__ = ["read_net", "read_xml", "KNOWN_VERSIONS"]

#: Export versions whose layout this reader knows: D (KiCad 5) and E (KiCad 6 and newer).
KNOWN_VERSIONS = ("D", "E")



# --------------------------------------------------------------------------------------
# entry points


def read_net(path: str | Path, max_expressions: int | None = None) -> Netlist:
    """Read KiCad's S-expression netlist export (``.net``).

    A file whose content is the XML netlist (KiCad's ``kicadxml`` export saved under another
    name) is read as XML, with a note. Raises :class:`~frontcheck.errors.InputError` (file,
    line, column, hint) when the file cannot be read, is not well-formed, or is not a KiCad
    netlist. More than ``max_expressions`` lists raise LimitError before any tree is built.
    """
    file = str(path)
    text = _read(path)
    _check_size(text, file, max_expressions)
    if _looks_like_xml(text):
        nl = _from_xml(text, file)
        nl.notes.insert(0, f"{file}: the content is KiCad's XML netlist; read as XML")
        return nl
    return _from_sexpr(text, file)


def read_xml(path: str | Path, max_expressions: int | None = None) -> Netlist:
    """Read KiCad's intermediate XML netlist (``.xml``, the file a BOM/netlist generator
    script receives as ``%I``).

    A file whose content is the S-expression netlist is read as such, with a note. Raises
    :class:`~frontcheck.errors.InputError` when the file cannot be read, is not well-formed
    XML, declares a DTD, or is not a KiCad netlist; more than ``max_expressions`` elements
    (or lists, for S-expression content) raise LimitError before any tree is built.
    """
    file = str(path)
    text = _read(path)
    _check_size(text, file, max_expressions)
    if text.lstrip().startswith("("):
        nl = _from_sexpr(text, file)
        nl.notes.insert(0, f"{file}: the content is KiCad's S-expression netlist; read as such")
        return nl
    return _from_xml(text, file)


def _check_size(text: str, file: str, max_expressions: int | None) -> None:
    """One limit for both formats: the elements of XML content, the lists of S-expression
    content, counted before any tree is built (a tree costs tens of bytes per input byte)."""
    if max_expressions is None:
        return
    count = count_xml_elements(text) if _looks_like_xml(text) else count_expressions(text)
    if count > max_expressions:
        raise limit_error("expressions in one file", max_expressions, "--max-expressions", file)


def _looks_like_xml(text: str) -> bool:
    return text.lstrip().startswith("<")


@contextmanager
def _no_cycle_collection():
    """Trees, components, pins and nodes hold no reference cycles; collecting while tens of
    thousands of them are made only costs time (a third of an XML read)."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def _from_sexpr(text: str, file: str) -> Netlist:
    with _no_cycle_collection():
        try:
            tree = parse(text, file)
        except SExprError as e:
            raise InputError(e.message, file, e.line, e.column, hint=_HINT_EXPORT) from None
        return _build(tree, file, _sexpr_comp_lines(text, SourceText(text, file)))


def _from_xml(text: str, file: str) -> Netlist:
    with _no_cycle_collection():
        tree, lines = _parse_xml(text, file)
        return _build(tree, file, lines, xml=True)


def _read(path: str | Path) -> str:
    file = str(path)
    p = Path(path)
    try:
        if p.is_dir():
            raise InputError("is a folder, not a netlist file", file)
        if not p.exists() and not p.is_symlink():
            raise InputError("no such file", file)
        return read_text(p)
    except SExprError as e:
        raise InputError(e.message, file, e.line, e.column,
                         hint="this does not look like a file KiCad wrote") from None
    except FileNotFoundError:
        raise InputError("no such file", file) from None
    except PermissionError:
        raise InputError("permission denied: cannot read the file", file,
                         hint="check the file's permissions") from None
    except OSError as e:
        raise InputError(f"cannot read the file: {e.strerror or e}", file) from None


# --------------------------------------------------------------------------------------
# format-specific front halves


_COMP_REF = re.compile(r'\(comp\s*\(ref\s+("(?:[^"\\]|\\.)*"|[^\s()"]+)')


def _sexpr_comp_lines(text: str, src: SourceText) -> dict[str, int]:
    """Line of each ``(comp (ref ...))``: the writer puts ``ref`` first in every version."""
    from .sexpr import unescape

    lines: dict[str, int] = {}
    for m in _COMP_REF.finditer(text):
        raw = m.group(1)
        ref = unescape(raw[1:-1]) if raw.startswith('"') else raw
        lines.setdefault(ref, src.position(m.start())[0])
    return lines


# --------------------------------------------------------------------------------------
# the shared walker


def _items(node: list, key: str) -> list[list]:
    return [x for x in node[1:] if isinstance(x, list) and x and x[0] == key]


def _first(node: list, key: str) -> list | None:
    for x in node[1:]:
        if isinstance(x, list) and x and x[0] == key:
            return x
    return None


def _atoms(node: list | None) -> list[str]:
    return [] if node is None else [x for x in node[1:] if isinstance(x, str)]


def _val(node: list, key: str, default: str = "") -> str:
    """The first atom of the first ``(key ...)`` child: ``(ref "R1")`` -> ``R1``."""
    sub = _first(node, key)
    if sub is None:
        return default
    atoms = _atoms(sub)
    return atoms[0] if atoms else default


def _kv(node: list) -> dict[str, str]:
    """Every ``(key atom ...)`` child as key -> first atom, in one pass (first one wins).

    The walker's hot path: a 10,000-part netlist has some 400,000 such children."""
    out: dict[str, str] = {}
    for x in node[1:]:
        if type(x) is list and len(x) > 1:
            k, v = x[0], x[1]
            if type(k) is str and type(v) is str and k not in out:
                out[k] = v
    return out


def _kicad_major(tool: str) -> int | None:
    m = re.search(r"(\d+)\.(\d+)", tool)
    return int(m.group(1)) if m else None


def _build(tree, file: str, comp_lines: dict[str, int], xml: bool = False) -> Netlist:
    if not isinstance(tree, list) or not tree or tree[0] != "export":
        head = tree[0] if isinstance(tree, list) and tree and isinstance(tree[0], str) else "?"
        raise InputError(f"not a KiCad netlist: the top-level element is '{head}', "
                         "expected 'export'", file, 1, 1, hint=_HINT_EXPORT)
    nl = Netlist(source=file)
    version = _val(tree, "version")
    if not version:
        nl.notes.append(f"{file}: netlist export version not stated; read as version E")
    elif version not in KNOWN_VERSIONS:
        nl.notes.append(f"{file}: netlist export version {version!r} is not one this reader "
                        f"knows ({', '.join(KNOWN_VERSIONS)}); read as version E, "
                        "unknown elements ignored")
    components = _first(tree, "components")
    nets = _first(tree, "nets")
    if components is None and nets is None:
        raise InputError("not a KiCad netlist: neither a 'components' nor a 'nets' section",
                         file, 1, 1, hint=_HINT_EXPORT)
    design = _first(tree, "design")
    tool = _val(design, "tool") if design is not None else ""
    major = _kicad_major(tool)
    sheet_paths = sorted({_val(sh, "name") for sh in _items(design, "sheet")} - {""}
                         if design is not None else (), key=len, reverse=True)

    comps, excluded = _components(components, file, comp_lines, nl.notes)
    _nets(nets, nl, comps, excluded, _libparts(tree), sheet_paths, major, xml)
    unknown = sorted({n.ref for net in nl.nets for n in net.nodes} - comps.keys())
    if unknown:
        nl.notes.append(f"{file}: nodes name components the netlist does not list: "
                        + ", ".join(unknown[:10]) + (" ..." if len(unknown) > 10 else ""))
    _units_from_block(components, comps)
    nl.components = comps
    return nl


def _components(components: list | None, file: str, comp_lines: dict[str, int],
                notes: list[str]) -> tuple[dict[str, Component], set[str]]:
    """(components by reference, references excluded from the board)."""
    excluded: set[str] = set()
    comps: dict[str, Component] = {}
    for comp in _items(components, "comp") if components is not None else ():
        c = _component(comp, file, comp_lines)
        if c is None:
            continue
        if c.ref in comps:
            notes.append(f"{file}: component {c.ref} listed twice; the first is kept")
            continue
        if "exclude_from_board" in _properties(comp):
            excluded.add(c.ref)
            continue
        comps[c.ref] = c
    return comps, excluded


def _nets(nets: list | None, nl: Netlist, comps: dict[str, Component], excluded: set[str],
          libparts, sheet_paths: list[str], major: int | None, xml: bool) -> None:
    """The nets, with pins of components that the net nodes show."""
    file = nl.source
    lib_of: dict[str, tuple[str, str]] = {
        r: tuple(c.lib_id.split(":", 1)) if ":" in c.lib_id else ("", c.lib_id)
        for r, c in comps.items()}
    seen_names: set[str] = set()
    for net in _items(nets, "net") if nets is not None else ():
        name = _val(net, "name")
        if not name:
            code = _val(net, "code")
            name = f"<net {code}>" if code else "<unnamed net>"
            nl.notes.append(f"{file}: a net without a name is called {name!r}")
        if xml:
            name = _escape_xml_net_name(name, sheet_paths)
        if name in seen_names:
            nl.notes.append(f"{file}: net name {name!r} appears more than once")
        seen_names.add(name)
        out = Net(name)
        for node in _items(net, "node"):
            kv = _kv(node)
            ref, pin = kv.get("ref", ""), kv.get("pin", "")
            if not ref or not pin:
                raise InputError(f"a node of net {name!r} has no ref or pin", file,
                                 hint=_HINT_EXPORT)
            if ref in excluded:
                continue
            lib_pin = libparts.get(lib_of.get(ref, ("", "")), {}).get(pin)
            func = _pin_function(kv.get("pinfunction", ""), pin,
                                 lib_pin.name if lib_pin else None, major)
            ptype = kv.get("pintype", "")
            out.nodes.append(Node(ref, pin, func, ptype))
            c = comps.get(ref)
            if c is None:
                continue
            if pin not in c.pins:
                if lib_pin is not None:
                    c.pins[pin] = Pin(pin, lib_pin.name, lib_pin.type, lib_pin.unit)
                else:
                    base_type = ptype.split("+")[0] if ptype else "passive"
                    c.pins[pin] = Pin(pin, func, base_type or "passive")
        nl.nets.append(out)


def _escape_xml_net_name(name: str, sheet_paths: list[str]) -> str:
    """Give an XML net name the spelling of the ``.net`` export.

    The ``.net`` writer keeps KiCad's escaped net name, where a '/' that is part of a label or
    pin name is written ``{slash}`` so that it cannot be taken for a sheet separator
    (``V{slash}2``, ``Net-(U3-VIO{slash}NSTDBY)``); the XML writer unescapes it. The sheet
    path at the start of a name (the longest sheet name from the design section) keeps its
    slashes; every later '/' was an escaped one.
    """
    if "/" not in name:
        return name
    prefix = ""
    if name.startswith("/"):
        prefix = next((p for p in sheet_paths if name.startswith(p)), "/")
    return prefix + name[len(prefix):].replace("/", "{slash}")


def _properties(comp: list) -> dict[str, str]:
    out: dict[str, str] = {}
    for p in _items(comp, "property"):
        kv = _kv(p)
        name = kv.get("name")
        if name:
            out[name] = kv.get("value", "")
    return out


def _component(comp: list, file: str, comp_lines: dict[str, int]) -> Component | None:
    top = _kv(comp)
    ref = top.get("ref", "")
    if not ref:
        raise InputError("a component ('comp') without a reference", file, hint=_HINT_EXPORT)
    c = Component(ref=ref)
    c.value = top.get("value", "")
    c.footprint = top.get("footprint", "")
    src = _first(comp, "libsource")
    if src is not None:
        kv = _kv(src)
        lib, part = kv.get("lib", ""), kv.get("part", "")
        c.lib_id = f"{lib}:{part}" if lib else part
    fields: dict[str, str] = {"Reference": ref, "Value": c.value}
    if c.footprint:
        fields["Footprint"] = c.footprint
    for key, fname in (("datasheet", "Datasheet"), ("description", "Description")):
        v = top.get(key)
        if v:
            fields[fname] = v
    fsec = _first(comp, "fields")
    for f in _items(fsec, "field") if fsec is not None else ():
        name = _kv(f).get("name")
        if name:
            atoms = _atoms(f)
            fields[name] = atoms[0] if atoms else ""
    c.fields = fields
    props = _properties(comp)
    c.dnp = "dnp" in props and props["dnp"].lower() not in ("no", "0", "false")
    c.in_bom = "exclude_from_bom" not in props
    c.exclude_from_sim = "exclude_from_sim" in props
    sp = _first(comp, "sheetpath")
    if sp is not None:
        c.sheet_path = _val(sp, "names", "/") or "/"
    stamps: list[str] = []
    for key in ("tstamps", "tstamp"):
        for t in _items(comp, key):
            for a in _atoms(t):
                stamps.extend(a.split())
    c.uuids = tuple(stamps)
    c.location = Location(file, comp_lines.get(ref))
    return c


def _libparts(tree: list) -> dict[tuple[str, str], dict[str, Pin]]:
    out: dict[tuple[str, str], dict[str, Pin]] = {}
    sec = _first(tree, "libparts")
    if sec is None:
        return out
    for lp in _items(sec, "libpart"):
        lib, part = _val(lp, "lib"), _val(lp, "part")
        pins: dict[str, Pin] = {}
        psec = _first(lp, "pins")
        for p in _items(psec, "pin") if psec is not None else ():
            kv = _kv(p)
            num = kv.get("num")
            if not num:
                continue
            name = kv.get("name", "")
            if name == "~":
                name = ""
            pins.setdefault(num, Pin(num, name, kv.get("type") or "passive"))
        out[(lib, part)] = pins
        aliases = _first(lp, "aliases")   # version D: one libpart for several names
        for a in _items(aliases, "alias") if aliases is not None else ():
            for name in _atoms(a):
                out.setdefault((lib, name), pins)
    return out


def _pin_function(func: str, pin: str, lib_name: str | None, major: int | None) -> str:
    """The bare pin name from a node's ``pinfunction``.

    KiCad 10 writes ``<name>_<number>``; KiCad 9 and older write ``<name>``. The library pin
    name decides where it is known (a KiCad 9 pin really named ``Pin_1`` stays ``Pin_1``);
    otherwise the writer's major version does.
    """
    if not func:
        return ""
    suffix = "_" + pin
    if lib_name is not None:
        if func == lib_name:
            return func
        if func == lib_name + suffix:
            return lib_name
    if major is not None and major >= 10 and func.endswith(suffix):
        return func[: -len(suffix)]
    return func


def _units_from_block(components: list | None, comps: dict[str, Component]) -> None:
    """KiCad 10 lists each unit's pins in ``(units (unit (name "A") (pins (pin (num "1")))))``;
    a pin in exactly one unit of a multi-unit part gets that unit's number (1-based, in
    listing order); pins of all units and of single-unit parts stay 0 (common), which is all
    a KiCad 9 netlist can say."""
    if components is None:
        return
    for comp in _items(components, "comp"):
        c = comps.get(_val(comp, "ref"))
        units = _first(comp, "units")
        if c is None or units is None:
            continue
        unit_list = _items(units, "unit")
        if len(unit_list) < 2:     # a single-unit part: its pins are common, as in KiCad 9
            continue
        where: dict[str, list[int]] = {}
        for i, u in enumerate(unit_list, start=1):
            psec = _first(u, "pins")
            for p in _items(psec, "pin") if psec is not None else ():
                where.setdefault(_val(p, "num"), []).append(i)
        for num, pin in c.pins.items():
            us = where.get(num)
            if us and len(us) == 1:
                pin.unit = us[0]
