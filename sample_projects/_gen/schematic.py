"""Build KiCad 9 schematics from placed parts, wires and labels, check the drawing, and say
which nets the drawing makes.

Coordinates are integers in grid steps of 1.27 mm (sheet frame, Y down), so connectivity is
exact: two things connect only where their points are equal, as in KiCad. The drawing rules
enforced here are stricter than KiCad's so that KiCad 9 and 10 read the same circuit:
- wires meet only at their end points (a wire end landing inside another wire splits it and
  gets a junction dot);
- no pin end lies inside a wire, no wire runs through a symbol body;
- every pin is wired, labelled or carries a no-connect flag.
The nets the drawing makes are computed with KiCad's naming rules (docs/kicad-connectivity.md
secs. 2-4), so tests can compare them with KiCad's own netlist export.
"""

from __future__ import annotations

import uuid
from dataclasses import dataclass, field

from .sexp import Q, dump
from .symbols import ALL, LIB, G, LibSymbol

NS = uuid.UUID("6f1c3d52-2a41-4c1e-9b7e-5d0f3c7a9e11")  # namespace of the samples' UUIDs

Pt = tuple[int, int]


def mm(v: int | float) -> float:
    return round(v * G, 4)


def uid(*parts: str) -> str:
    return str(uuid.uuid5(NS, "/".join(parts)))


def transform(px: float, py: float, angle: int, mirror: str | None) -> tuple[float, float]:
    """Library offset (Y up) -> sheet offset (Y down); docs/kicad-connectivity.md sec. 1."""
    c = {0: 1, 90: 0, 180: -1, 270: 0}[angle]
    s = {0: 0, 90: 1, 180: 0, 270: -1}[angle]
    rx, ry = px * c - py * s, px * s + py * c
    if mirror == "x":
        ry = -ry
    elif mirror == "y":
        rx = -rx
    return rx, -ry


@dataclass
class Part:
    sym: LibSymbol
    refs: list[str]                  # one reference per instance of the sheet
    value: str
    at: Pt
    angle: int = 0
    mirror: str | None = None
    unit: int = 1
    fields: dict[str, str] = field(default_factory=dict)   # extra fields, in order
    show: tuple[str, ...] = ()        # extra fields drawn on the sheet
    text_at: tuple[float, float] | str | None = None   # first text line, mm from `at`, or
                                     # 'above' | 'below' | 'left' | 'right' of the body
    justify: str | None = None       # left | right | center
    hide_value: bool = False
    key: str = ""                    # UUID seed, unique in the sheet

    def pin(self, number: str) -> Pt:
        for p in self.sym.pins_of(self.unit):
            if p.number == number:
                dx, dy = transform(p.x, p.y, self.angle, self.mirror)
                return (self.at[0] + round(dx), self.at[1] + round(dy))
        raise KeyError(f"{self.refs[0]} unit {self.unit} has no pin {number}")

    def __getitem__(self, number: str) -> Pt:
        return self.pin(number)

    def body_box(self) -> tuple[float, float, float, float]:
        """Body rectangle in sheet grid units (x0, y0, x1, y1)."""
        b = self.sym.body.get(self.unit) or self.sym.body.get(0)
        xs, ys = [], []
        for bx in (b[0], b[2]):
            for by in (b[1], b[3]):
                dx, dy = transform(bx / G, by / G, self.angle, self.mirror)
                xs.append(self.at[0] + dx)
                ys.append(self.at[1] + dy)
        return min(xs), min(ys), max(xs), max(ys)


@dataclass
class Label:
    kind: str        # label | global_label | hierarchical_label
    text: str
    at: Pt
    angle: int = 0   # 0: text runs right of the anchor; 180: left
    shape: str = "passive"


@dataclass
class SheetRef:
    """A sheet symbol on the root: one instance of a child sheet."""

    name: str
    child: "Sheet"
    at: Pt
    size: tuple[int, int]
    pins: list[tuple[str, str, Pt]] = field(default_factory=list)  # (name, shape, point)

    def pin(self, name: str) -> Pt:
        for n, _, p in self.pins:
            if n == name:
                return p
        raise KeyError(name)


@dataclass
class Sheet:
    file: str
    title: str
    paper: str = "A4"
    parts: list[Part] = field(default_factory=list)
    wires: list[tuple[Pt, Pt]] = field(default_factory=list)
    labels: list[Label] = field(default_factory=list)
    no_connects: list[Pt] = field(default_factory=list)
    notes: list[tuple[str, Pt]] = field(default_factory=list)
    sheets: list[SheetRef] = field(default_factory=list)
    extra_junctions: list[Pt] = field(default_factory=list)
    taps: list[Pt] = field(default_factory=list)    # points where a pin sits on a wire run
    offset: Pt = (0, 0)   # moves the whole drawing on the page when written
    _n: dict = field(default_factory=dict)

    # -- building ----------------------------------------------------------------------
    def add(self, sym: str, refs: str | list[str], value: str, at: Pt, **kw) -> Part:
        refs = [refs] if isinstance(refs, str) else list(refs)
        p = Part(ALL[sym], refs, value, at, **kw)
        if not p.key:
            p.key = f"{refs[0]}:{p.unit}"
        self.parts.append(p)
        return p

    def power(self, name: str, at: Pt) -> Part:
        k = self._n.get("pwr", 0) + 1
        self._n["pwr"] = k
        return self.add(name, "#PWR?", name, at, key=f"pwr{k}")

    def flag(self, at: Pt) -> Part:
        k = self._n.get("flg", 0) + 1
        self._n["flg"] = k
        return self.add("SUPPLY_FLAG", "#FLG?", "SUPPLY", at, key=f"flg{k}")

    def wire(self, *pts: Pt) -> None:
        """A polyline through the points; each leg must be horizontal or vertical."""
        for a, b in zip(pts, pts[1:]):
            if a == b:
                continue
            if a[0] != b[0] and a[1] != b[1]:
                raise ValueError(f"{self.file}: diagonal wire {a} -> {b}")
            self.wires.append((a, b))

    def label(self, text: str, at: Pt, angle: int = 0) -> None:
        self.labels.append(Label("label", text, at, angle))

    def glabel(self, text: str, at: Pt, angle: int = 0, shape: str = "passive") -> None:
        self.labels.append(Label("global_label", text, at, angle, shape))

    def hlabel(self, text: str, at: Pt, angle: int = 0, shape: str = "passive") -> None:
        self.labels.append(Label("hierarchical_label", text, at, angle, shape))

    def nc(self, at: Pt) -> None:
        self.no_connects.append(at)

    def note(self, text: str, at: Pt) -> None:
        self.notes.append((text, at))

    def subsheet(self, name: str, child: "Sheet", at: Pt, size: tuple[int, int],
                 left: list[tuple[str, str]] = (), right: list[tuple[str, str]] = ()) -> SheetRef:
        """A sheet symbol; pins go down the left and right edges every 2 grid steps."""
        ref = SheetRef(name, child, at, size)
        for i, (n, shape) in enumerate(left):
            ref.pins.append((n, shape, (at[0], at[1] + 3 + 2 * i)))
        for i, (n, shape) in enumerate(right):
            ref.pins.append((n, shape, (at[0] + size[0], at[1] + 3 + 2 * i)))
        self.sheets.append(ref)
        return ref

    # -- geometry ----------------------------------------------------------------------
    def shifted(self) -> "Sheet":
        """A copy with every coordinate moved by ``offset`` (connectivity is unchanged)."""
        import copy
        dx, dy = self.offset
        if (dx, dy) == (0, 0):
            return self
        mv = lambda p: (p[0] + dx, p[1] + dy)  # noqa: E731
        out = copy.copy(self)
        out.parts = [copy.copy(p) for p in self.parts]
        for p in out.parts:
            p.at = mv(p.at)
        out.wires = [(mv(a), mv(b)) for a, b in self.wires]
        out.labels = [Label(l.kind, l.text, mv(l.at), l.angle, l.shape) for l in self.labels]
        out.no_connects = [mv(p) for p in self.no_connects]
        out.notes = [(t, mv(p)) for t, p in self.notes]
        out.extra_junctions = [mv(p) for p in self.extra_junctions]
        out.taps = [mv(p) for p in self.taps]
        out.sheets = []
        for r in self.sheets:
            c = copy.copy(r)
            c.at = mv(r.at)
            c.pins = [(n, sh, mv(p)) for n, sh, p in r.pins]
            out.sheets.append(c)
        out.offset = (0, 0)
        return out

    def tap(self, p: Pt) -> Pt:
        """Declare that a pin end sits on a wire run at p: the run is split there, as KiCad
        needs (a pin on a wire's interior does not connect)."""
        self.taps.append(p)
        return p

    def normalised_wires(self) -> list[tuple[Pt, Pt]]:
        """Wires split wherever another wire ends inside them (a drawn T) or at a tap."""
        ends = {p for w in self.wires for p in w} | set(self.taps)
        out = []
        for a, b in self.wires:
            cuts = sorted({p for p in ends if _inside(p, a, b)},
                          key=lambda p: abs(p[0] - a[0]) + abs(p[1] - a[1]))
            pts = [a, *cuts, b]
            out += list(zip(pts, pts[1:]))
        return out

    def pin_points(self) -> list[tuple[Part, str, Pt]]:
        return [(p, lp.number, p.pin(lp.number)) for p in self.parts for lp in p.sym.pins_of(p.unit)]

    def junctions(self) -> list[Pt]:
        count: dict[Pt, int] = {}
        for a, b in self.normalised_wires():
            for p in (a, b):
                count[p] = count.get(p, 0) + 1
        for _, _, p in self.pin_points():
            if p in count:
                count[p] += 1
        for r in self.sheets:
            for _, _, p in r.pins:
                if p in count:
                    count[p] += 1
        return sorted({p for p, n in count.items() if n >= 3} | set(self.extra_junctions))

    def check(self) -> list[str]:
        """Drawing problems; an empty list means the sheet is tidy by our rules."""
        errs = []
        wires = self.normalised_wires()
        pins = self.pin_points()
        wire_ends = {p for w in wires for p in w}
        label_pts = {l.at for l in self.labels}
        sheet_pin_pts = {p for r in self.sheets for _, _, p in r.pins}
        pin_pts: dict[Pt, list] = {}
        for part, num, p in pins:
            pin_pts.setdefault(p, []).append((part, num))
        for part, num, p in pins:
            ref = part.refs[0]
            for a, b in wires:
                if _inside(p, a, b):
                    errs.append(f"pin {ref}.{num} at {p} lies inside wire {a}-{b}")
            if part.sym.power and part.sym.pins[0].type == "power_in":
                touched = p in wire_ends or len(pin_pts[p]) > 1
            else:
                touched = (p in wire_ends or p in label_pts or p in self.no_connects
                           or len(pin_pts[p]) > 1 or p in sheet_pin_pts)
            if not touched:
                errs.append(f"pin {ref}.{num} at {p} is not connected")
        ends: dict[Pt, int] = {}
        for a, b in wires:
            for p in (a, b):
                ends[p] = ends.get(p, 0) + 1
        for p, n in ends.items():
            if n == 1 and p not in pin_pts and p not in label_pts and p not in sheet_pin_pts:
                errs.append(f"wire end at {p} touches nothing")
        for l in self.labels:
            if not (l.at in wire_ends or l.at in pin_pts or any(_inside(l.at, a, b) for a, b in wires)):
                errs.append(f"label {l.text} at {l.at} touches nothing")
        for p in self.no_connects:
            if p not in pin_pts:
                errs.append(f"no-connect at {p} is not on a pin")
        for part in self.parts:
            x0, y0, x1, y1 = part.body_box()
            for a, b in wires:
                if _crosses_box(a, b, x0, y0, x1, y1):
                    errs.append(f"wire {a}-{b} crosses the body of {part.refs[0]}")
        for i, (a, b) in enumerate(wires):
            for c, d in wires[i + 1:]:
                x = _crossing(a, b, c, d)
                if x:
                    errs.append(f"wires {a}-{b} and {c}-{d} cross at {x}")
                if _overlap(a, b, c, d):
                    errs.append(f"wires {a}-{b} and {c}-{d} overlap")
        for r in self.sheets:
            x0, y0 = r.at
            x1, y1 = x0 + r.size[0], y0 + r.size[1]
            for a, b in wires:
                if _crosses_box(a, b, x0, y0, x1, y1):
                    errs.append(f"wire {a}-{b} crosses sheet {r.name}")
        return [f"{self.file}: {e}" for e in errs]


def _inside(p: Pt, a: Pt, b: Pt) -> bool:
    """p strictly inside the axis-parallel segment a-b."""
    if a[0] == b[0] == p[0]:
        return min(a[1], b[1]) < p[1] < max(a[1], b[1])
    if a[1] == b[1] == p[1]:
        return min(a[0], b[0]) < p[0] < max(a[0], b[0])
    return False


def _crosses_box(a: Pt, b: Pt, x0, y0, x1, y1) -> bool:
    eps = 0.05
    x0, y0, x1, y1 = x0 + eps, y0 + eps, x1 - eps, y1 - eps
    if a[0] == b[0]:
        return x0 < a[0] < x1 and min(a[1], b[1]) < y1 and max(a[1], b[1]) > y0
    return y0 < a[1] < y1 and min(a[0], b[0]) < x1 and max(a[0], b[0]) > x0


def _crossing(a, b, c, d):
    h1, h2 = a[1] == b[1], c[1] == d[1]
    if h1 == h2:
        return None
    (ha, hb), (va, vb) = ((a, b), (c, d)) if h1 else ((c, d), (a, b))
    x, y = va[0], ha[1]
    if min(ha[0], hb[0]) < x < max(ha[0], hb[0]) and min(va[1], vb[1]) < y < max(va[1], vb[1]):
        return (x, y)
    return None


def _overlap(a, b, c, d) -> bool:
    if a[1] == b[1] == c[1] == d[1]:
        lo, hi = max(min(a[0], b[0]), min(c[0], d[0])), min(max(a[0], b[0]), max(c[0], d[0]))
        return lo < hi
    if a[0] == b[0] == c[0] == d[0]:
        lo, hi = max(min(a[1], b[1]), min(c[1], d[1])), min(max(a[1], b[1]), max(c[1], d[1]))
        return lo < hi
    return False


# =============================================================================================
# Project: instances, writing, intended netlist


@dataclass
class Instance:
    sheet: Sheet
    index: int            # which instance of this sheet file (selects Part.refs)
    path: str             # "/<root-uuid>[/<sheet-uuid>]"
    name_path: str        # "/" or "/Channel 1/"
    depth: int
    ref: SheetRef | None  # the sheet symbol (None for the root)
    page: str


class Project:
    def __init__(self, name: str, root: Sheet):
        self.name = name
        self.root = root
        self.root_uuid = uid(name, "root")
        self.instances: list[Instance] = [Instance(root, 0, "/" + self.root_uuid, "/", 0, None, "1")]
        seen: dict[str, int] = {}
        for k, r in enumerate(root.sheets):
            idx = seen.get(r.child.file, 0)
            seen[r.child.file] = idx + 1
            self.instances.append(Instance(r.child, idx, f"/{self.root_uuid}/{self.sheet_uuid(r)}",
                                           f"/{r.name}/", 1, r, str(k + 2)))
        self._annotate_power()

    def sheet_uuid(self, r: SheetRef) -> str:
        return uid(self.name, "sheet", r.name)

    def sheet_files(self) -> list[Sheet]:
        out = [self.root]
        for r in self.root.sheets:
            if r.child not in out:
                out.append(r.child)
        return out

    def _annotate_power(self) -> None:
        """#PWR01.. and #FLG01.. over the whole hierarchy, per instance, in drawing order."""
        n = {"#PWR": 0, "#FLG": 0}
        for sh in self.sheet_files():
            insts = [i for i in self.instances if i.sheet is sh]
            for part in sh.parts:
                if part.refs[0].startswith("#"):
                    prefix = part.refs[0].rstrip("?")
                    refs = []
                    for _ in insts:
                        n[prefix] += 1
                        refs.append(f"{prefix}{n[prefix]:02d}")
                    part.refs = refs

    # -- checks ------------------------------------------------------------------------
    def check(self) -> list[str]:
        errs = []
        for sh in self.sheet_files():
            errs += sh.check()
            n = len([i for i in self.instances if i.sheet is sh])
            for p in sh.parts:
                if len(p.refs) != n:
                    errs.append(f"{sh.file}: {p.refs} has {len(p.refs)} references for {n} instances")
            keys = [p.key for p in sh.parts]
            if len(keys) != len(set(keys)):
                errs.append(f"{sh.file}: duplicate part keys")
        for r in self.root.sheets:
            hl = {l.text for l in r.child.labels if l.kind == "hierarchical_label"}
            pins = {n for n, _, _ in r.pins}
            if hl != pins:
                errs.append(f"sheet {r.name}: pins {sorted(pins)} vs hierarchical labels {sorted(hl)}")
        return errs

    # -- writing -----------------------------------------------------------------------
    def files(self) -> dict[str, str]:
        out = {}
        for sh in self.sheet_files():
            out[sh.file] = dump(self._sheet_sexpr(sh)) + "\n"
        out[f"{self.name}.kicad_pro"] = self._pro()
        # The symbols are embedded in each sheet; the same definitions also ship as the
        # project's own library so that KiCad finds every lib_id it is told about.
        used = sorted({p.sym.name for sh in self.sheet_files() for p in sh.parts})
        out[f"{LIB}.kicad_sym"] = dump(["kicad_symbol_lib", ["version", 20241209],
                                        ["generator", Q("kicad_symbol_editor")],
                                        ["generator_version", Q("9.0")],
                                        *[ALL[n].sexpr(prefix=False) for n in used]]) + "\n"
        out["sym-lib-table"] = dump(["sym_lib_table", ["version", 7],
                                     ["lib", ["name", Q(LIB)], ["type", Q("KiCad")],
                                      ["uri", Q("${KIPRJMOD}/" + LIB + ".kicad_sym")],
                                      ["options", Q("")], ["descr", Q("frontcheck sample symbols")]]]) + "\n"
        return out

    def _pro(self) -> str:
        import json
        sheets = [[self.root_uuid, "Root"]] + [[self.sheet_uuid(r), r.name] for r in self.root.sheets]
        doc = {
            "board": {"design_settings": {}},
            "boards": [],
            "libraries": {"pinned_footprint_libs": [], "pinned_symbol_libs": []},
            "meta": {"filename": f"{self.name}.kicad_pro", "version": 3},
            "net_settings": {"classes": [{"name": "Default", "wire_width": 6, "bus_width": 12,
                                          "line_style": 0, "schematic_color": "rgba(0, 0, 0, 0.000)",
                                          "priority": 2147483647}],
                             "meta": {"version": 4}},
            "schematic": {"drawing": {"default_text_size": 50.0, "default_line_thickness": 6.0},
                          "legacy_lib_dir": "", "legacy_lib_list": []},
            "sheets": sheets,
            "text_variables": {},
        }
        return json.dumps(doc, indent=2) + "\n"

    def _sheet_sexpr(self, sheet: Sheet) -> list:
        is_root = sheet is self.root
        sh = sheet.shifted()
        file_uuid = self.root_uuid if is_root else uid(self.name, "file", sh.file)
        insts = [i for i in self.instances if i.sheet is sheet]
        used = sorted({p.sym.name for p in sh.parts})
        doc: list = ["kicad_sch", ["version", 20250114], ["generator", Q("eeschema")],
                     ["generator_version", Q("9.0")], ["uuid", Q(file_uuid)], ["paper", Q(sh.paper)],
                     ["title_block", ["title", Q(sh.title)], ["company", Q("frontcheck sample project")]],
                     ["lib_symbols", *[ALL[n].sexpr() for n in used]]]
        seed = (self.name, sh.file)
        for j in sh.junctions():
            doc.append(["junction", ["at", mm(j[0]), mm(j[1])], ["diameter", 0], ["color", 0, 0, 0, 0],
                        ["uuid", Q(uid(*seed, "junction", f"{j}"))]])
        for p in sh.no_connects:
            doc.append(["no_connect", ["at", mm(p[0]), mm(p[1])], ["uuid", Q(uid(*seed, "nc", f"{p}"))]])
        for k, (a, b) in enumerate(sh.normalised_wires()):
            doc.append(["wire", ["pts", ["xy", mm(a[0]), mm(a[1])], ["xy", mm(b[0]), mm(b[1])]],
                        ["stroke", ["width", 0], ["type", "default"]],
                        ["uuid", Q(uid(*seed, "wire", f"{a}{b}"))]])
        for k, (t, at) in enumerate(sh.notes):
            doc.append(["text", Q(t), ["exclude_from_sim", "no"], ["at", mm(at[0]), mm(at[1]), 0],
                        ["effects", ["font", ["size", 1.27, 1.27]], ["justify", "left", "top"]],
                        ["uuid", Q(uid(*seed, "text", str(k)))]])
        for k, l in enumerate(sh.labels):
            doc.append(self._label(l, uid(*seed, "label", l.kind, l.text, f"{l.at}")))
        for p in sh.parts:
            doc.append(self._symbol(p, insts, uid(*seed, "symbol", p.key)))
        for r in sh.sheets:
            doc.append(self._sheet_symbol(r))
        if is_root:
            doc.append(["sheet_instances", ["path", Q("/"), ["page", Q("1")]]])
        doc.append(["embedded_fonts", "no"])
        return doc

    def _label(self, l: Label, u: str) -> list:
        just = ["justify", "left" if l.angle == 0 else "right"]
        at = ["at", mm(l.at[0]), mm(l.at[1]), l.angle]
        font = ["font", ["size", 1.27, 1.27]]
        if l.kind == "label":
            return ["label", Q(l.text), at, ["effects", font, just + ["bottom"]], ["uuid", Q(u)]]
        if l.kind == "hierarchical_label":
            return ["hierarchical_label", Q(l.text), ["shape", l.shape], at, ["effects", font, just],
                    ["uuid", Q(u)]]
        return ["global_label", Q(l.text), ["shape", l.shape], at, ["fields_autoplaced", "yes"],
                ["effects", font, just], ["uuid", Q(u)],
                ["property", Q("Intersheetrefs"), Q("${INTERSHEET_REFS}"), at,
                 ["effects", font, just, ["hide", "yes"]]]]

    def _symbol(self, p: Part, insts: list[Instance], u: str) -> list:
        x, y = mm(p.at[0]), mm(p.at[1])
        node: list = ["symbol", ["lib_id", Q(p.sym.lib_id)], ["at", x, y, p.angle]]
        if p.mirror:
            node.append(["mirror", p.mirror])
        node += [["unit", p.unit], ["exclude_from_sim", "no"], ["in_bom", "yes"], ["on_board", "yes"],
                 ["dnp", "no"], ["uuid", Q(u)]]
        shown = [("Reference", p.refs[0])] if not p.sym.ref_hidden else []
        if not p.hide_value:
            shown.append(("Value", p.value))
        shown += [(k, p.fields[k]) for k in p.show]
        lines, just = self._text_layout(p, len(shown))
        if p.mirror == "y":   # KiCad mirrors a field's justification with its symbol
            just = {"left": "right", "right": "left"}.get(just, just)
        fangle = 90 if p.angle in (90, 270) else 0
        pos = {name: lines[i] for i, (name, _) in enumerate(shown)}
        allf = [("Reference", p.refs[0]), ("Value", p.value), ("Footprint", ""), ("Datasheet", ""),
                ("Description", p.sym.description)] + list(p.fields.items())
        for name, val in allf:
            eff: list = ["effects", ["font", ["size", 1.27, 1.27]]]
            if name in pos:
                at = pos[name]
                if just != "center":
                    eff.append(["justify", just])
            else:
                at = (x, y)
                eff.append(["hide", "yes"])
            node.append(["property", Q(name), Q(val), ["at", at[0], at[1], fangle], eff])
        for lp in p.sym.pins_of(p.unit):
            node.append(["pin", Q(lp.number), ["uuid", Q(uid(u, "pin", lp.number))]])
        paths = [["path", Q(i.path), ["reference", Q(p.refs[i.index])], ["unit", p.unit]] for i in insts]
        node.append(["instances", ["project", Q(self.name), *paths]])
        return node

    def _text_layout(self, p: Part, n: int) -> tuple[list[tuple[float, float]], str]:
        """Where the shown fields go: lines 2.54 mm apart from an anchor beside the body."""
        x, y = mm(p.at[0]), mm(p.at[1])
        if isinstance(p.text_at, tuple):
            dx, dy = p.text_at
            just = p.justify or "left"
        elif isinstance(p.text_at, str):
            x0, y0, x1, y1 = (mm(v) for v in p.body_box())
            cx, cy = x - mm(p.at[0]) + (x0 + x1) / 2, (y0 + y1) / 2
            side = p.text_at
            if side == "above":
                dx, dy, just = cx - x, y0 - y - 1.905 - 2.54 * (n - 1), "center"
            elif side == "below":
                dx, dy, just = cx - x, y1 - y + 1.905, "center"
            elif side == "left":
                dx, dy, just = x0 - x - 1.016, cy - y - 1.27 * (n - 1), "right"
            else:
                dx, dy, just = x1 - x + 1.016, cy - y - 1.27 * (n - 1), "left"
        elif p.sym.power:
            v = p.sym.value_at[1]
            dx, dy = 0.0, -v if p.mirror != "x" else v
            just = "center"
        elif p.sym.name in ("R", "C") and p.angle in (0, 180):
            dx, dy = 2.54, -1.27 * (n - 1)
            just = "left"
        elif p.sym.name in ("R", "C"):
            dx, dy = 0.0, -2.54 - 2.54 * (n - 1)
            just = "center"
        else:
            x0, y0, x1, y1 = p.body_box()
            dx, dy = 0.0, mm(y1 - p.at[1]) + 2.54
            just = "center"
        return [(round(x + dx, 4), round(y + dy + 2.54 * i, 4)) for i in range(n)], just

    def _sheet_symbol(self, r: SheetRef) -> list:
        x, y = mm(r.at[0]), mm(r.at[1])
        w, h = mm(r.size[0]), mm(r.size[1])
        su = self.sheet_uuid(r)
        font = ["font", ["size", 1.27, 1.27]]
        node: list = ["sheet", ["at", x, y], ["size", w, h], ["exclude_from_sim", "no"], ["in_bom", "yes"],
                      ["on_board", "yes"], ["dnp", "no"], ["fields_autoplaced", "yes"],
                      ["stroke", ["width", 0.1524], ["type", "solid"]], ["fill", ["color", 0, 0, 0, 0.0]],
                      ["uuid", Q(su)],
                      ["property", Q("Sheetname"), Q(r.name), ["at", x, round(y - 0.7116, 4), 0],
                       ["effects", font, ["justify", "left", "bottom"]]],
                      ["property", Q("Sheetfile"), Q(r.child.file), ["at", x, round(y + h + 0.5846, 4), 0],
                       ["effects", font, ["justify", "left", "top"]]]]
        for name, shape, p in r.pins:
            left = p[0] == r.at[0]
            node.append(["pin", Q(name), shape, ["at", mm(p[0]), mm(p[1]), 180 if left else 0],
                         ["uuid", Q(uid(su, "pin", name))],
                         ["effects", font, ["justify", "left" if left else "right"]]])
        inst = next(i for i in self.instances if i.ref is not None and i.ref.name == r.name)
        node.append(["instances", ["project", Q(self.name),
                                   ["path", Q("/" + self.root_uuid), ["page", Q(inst.page)]]]])
        return node

    # -- intended netlist --------------------------------------------------------------
    def nets(self) -> dict[str, set[tuple[str, str]]]:
        """Net name -> {(ref, pin)} as KiCad 9 should export it (nets with no pin left out)."""
        parent: dict = {}

        def find(a):
            parent.setdefault(a, a)
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        def union(a, b):
            ra, rb = find(a), find(b)
            if ra != rb:
                parent[ra] = rb

        drivers: dict = {}   # item -> list of (rank, depth, name)
        pins: dict = {}      # item -> (ref, pin, display candidates)
        for k, inst in enumerate(self.instances):
            sh = inst.sheet
            wires = sh.normalised_wires()
            for w, (a, b) in enumerate(wires):
                item = (k, "w", w)
                find(item)
                union(item, (k, "pt", a))
                union(item, (k, "pt", b))
            for part, num, p in sh.pin_points():
                ref = part.refs[inst.index]
                item = (k, "pin", ref, num, part.unit)
                union(item, (k, "pt", p))
                if part.sym.power and part.sym.pins[0].type == "power_in":
                    drivers.setdefault(item, []).append((0, 0, part.value))
                    union(item, ("global", part.value))
                elif not ref.startswith("#"):
                    pins[item] = (ref, num, part)
            for l in sh.labels:
                item = (k, "label", l.kind, l.text, l.at)
                pt = (k, "pt", l.at)
                if (k, "pt", l.at) not in parent:
                    for w, (a, b) in enumerate(wires):
                        if _inside(l.at, a, b):
                            pt = (k, "w", w)
                union(item, pt)
                if l.kind == "global_label":
                    drivers.setdefault(item, []).append((0, 0, l.text))
                    union(item, ("global", l.text))
                elif l.kind == "label":
                    drivers.setdefault(item, []).append((1, inst.depth, inst.name_path + l.text))
                    union(item, (k, "local", l.text))
                else:
                    drivers.setdefault(item, []).append((2, inst.depth, inst.name_path + l.text))
                    union(item, (k, "hier", l.text))
            for p in sh.no_connects:
                union((k, "nc", p), (k, "pt", p))
            for r in sh.sheets:
                child = next(j for j, i in enumerate(self.instances) if i.ref is r)
                for name, _, p in r.pins:
                    item = (k, "sheetpin", r.name, name)
                    union(item, (k, "pt", p))
                    union(item, (child, "hier", name))
                    drivers.setdefault(item, []).append((3, inst.depth, inst.name_path + name))
        groups: dict = {}
        for item in list(parent):
            groups.setdefault(find(item), []).append(item)
        nc_roots = {find(x) for x in parent if len(x) == 3 and x[1] == "nc"}
        out = {}
        for root, items in groups.items():
            nodes = [pins[i] for i in items if i in pins]
            if not nodes:
                continue
            cands = [d for i in items for d in drivers.get(i, [])]
            if cands:
                name = min(cands)[2]
            else:
                npins = sum(1 for i in items if len(i) == 5 and i[1] == "pin")
                single = npins == 1 or root in nc_roots
                name = _default_name(nodes, single)
            if name in out:
                raise ValueError(f"two nets named {name}")
            out[name] = {(r, n) for r, n, _ in nodes}
        return out


def _pin_label(ref: str, num: str, part: Part, single: bool) -> str:
    lp = next(p for p in part.sym.pins if p.number == num)
    unit = chr(64 + part.unit) if part.sym.units > 1 else ""
    name = "" if lp.name == "~" else lp.name
    if not name or name == num:
        return f"{ref}-Pad{num}"
    # KiCad 9 names "-" of unit A Net-(U1A--) although unit B has a "-" too: unit by unit.
    dup = sum(1 for p in part.sym.pins_of(part.unit) if p.name == lp.name) > 1
    if single or dup:
        return f"{ref}{unit}-{name}-Pad{num}"
    return f"{ref}{unit}-{name}"


def _default_name(nodes, single: bool) -> str:
    labels = [_pin_label(r, n, part, single) for r, n, part in nodes]
    labels.sort(key=lambda s: ("-Pad" in s, s))
    return ("unconnected-(" if single else "Net-(") + labels[0] + ")"
