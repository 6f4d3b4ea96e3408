"""Builders of small KiCad sheet files for tests: library symbols, placed symbols, wires,
labels and sheets written as S-expressions the way KiCad 8 writes them, and a runner that
exports the same file with KiCad 9 for comparison."""

from __future__ import annotations

import subprocess
from dataclasses import dataclass
from pathlib import Path

from conftest import need
from frontcheck.kicad.connectivity import build_netlist
from frontcheck.kicad.hierarchy import load_hierarchy
from frontcheck.kicad.netfile import read_net
from frontcheck.kicad.schematic import PlacedSymbol, to_iu

ROOT = "10000000-0000-4000-8000-000000000000"

# --------------------------------------------------------------------------- sheet builder

_EFF = "(effects (font (size 1.27 1.27)))"


def lib_pin(ptype, x, y, angle, name, number, hide=False):
    h = " (hide yes)" if hide else ""
    return (f'(pin {ptype} line (at {x} {y} {angle}) (length 2.54){h} '
            f'(name "{name}" {_EFF}) (number "{number}" {_EFF}))')


def libsym(lib_id, units, power=False, extra=""):
    name = lib_id.split(":")[1]
    body = "".join(f'(symbol "{name}_{u}_1" {" ".join(pins)})' for u, pins in units.items())
    pw = "(power) " if power else ""
    return (f'(symbol "{lib_id}" {pw}(exclude_from_sim no) (in_bom yes) (on_board yes) {extra}'
            f'(property "Reference" "X" (at 0 0 0) {_EFF}) '
            f'(property "Value" "{name}" (at 0 0 0) {_EFF}) {body})')


LIB = {
    # a resistor: unnamed pins at (0, +-3.81)
    "Device:R": libsym("Device:R", {1: [lib_pin("passive", 0, 3.81, 270, "~", 1),
                                         lib_pin("passive", 0, -3.81, 90, "~", 2)]}),
    # three named pins without any symmetry (docs/kicad-connectivity.md sec. 1 used such a part)
    "T:Tri": libsym("T:Tri", {1: [lib_pin("input", -5.08, 2.54, 0, "A", 1),
                                   lib_pin("output", 7.62, 0, 180, "B", 2),
                                   lib_pin("passive", 0, -5.08, 90, "C", 3)]}),
    "power:GND": libsym("power:GND", {1: [lib_pin("power_in", 0, 0, 270, "GND", 1, hide=True)]},
                         power=True),
    # an ordinary part with a legacy hidden power_in pin named VDDX
    "T:Hid": libsym("T:Hid", {1: [lib_pin("passive", -5.08, 0, 0, "IO", 1),
                                   lib_pin("power_in", 5.08, 0, 180, "VDDX", 2, hide=True)]}),
    # a two-unit op-amp: unit 1 pins 1-3, unit 2 pins 5-7, common (unit 0) supply pins hidden
    "T:Dual": libsym("T:Dual", {
        0: [lib_pin("power_in", 0, 7.62, 270, "V+", 8, hide=True),
            lib_pin("power_in", 0, -7.62, 90, "V-", 4, hide=True)],
        1: [lib_pin("input", -7.62, 2.54, 0, "+", 3), lib_pin("input", -7.62, -2.54, 0, "-", 2),
            lib_pin("output", 7.62, 0, 180, "~", 1)],
        2: [lib_pin("input", -7.62, 2.54, 0, "+", 5), lib_pin("input", -7.62, -2.54, 0, "-", 6),
            lib_pin("output", 7.62, 0, 180, "~", 7)]}),
    "T:NCpin": libsym("T:NCpin", {1: [lib_pin("passive", -5.08, 0, 0, "P", 1),
                                       lib_pin("no_connect", 5.08, 0, 180, "NC", 2)]}),
}

_n = [0]


def new_uuid():
    _n[0] += 1
    return f"20000000-0000-4000-8000-{_n[0]:012d}"


@dataclass
class Sym:
    lib_id: str
    ref: str
    x: float
    y: float
    angle: int = 0
    mirror: str | None = None
    unit: int = 1
    value: str = ""
    flags: str = ""

    def text(self, path=f"/{ROOT}"):
        m = f" (mirror {self.mirror})" if self.mirror else ""
        u = new_uuid()
        value = self.value or self.lib_id.split(":")[1]
        return (f'(symbol (lib_id "{self.lib_id}") (at {self.x} {self.y} {self.angle}){m} '
                f'(unit {self.unit}) {self.flags} (uuid "{u}") '
                f'(property "Reference" "{self.ref}" (at {self.x} {self.y} 0) {_EFF}) '
                f'(property "Value" "{value}" (at {self.x} {self.y} 0) {_EFF}) '
                f'(instances (project "t" (path "{path}" (reference "{self.ref}") '
                f'(unit {self.unit})))))')


def wire(x1, y1, x2, y2):
    return f'(wire (pts (xy {x1} {y1}) (xy {x2} {y2})) (uuid "{new_uuid()}"))'


def label(text, x, y, kind="label"):
    shape = " (shape input)" if kind != "label" else ""
    return f'({kind} "{text}"{shape} (at {x} {y} 0) {_EFF} (uuid "{new_uuid()}"))'


def junction(x, y):
    return f'(junction (at {x} {y}) (diameter 0) (color 0 0 0 0) (uuid "{new_uuid()}"))'


def noconnect(x, y):
    return f'(no_connect (at {x} {y}) (uuid "{new_uuid()}"))'


def sheet_text(items, uuid=ROOT, extra_libs=(), version=20231120):
    syms = [i for i in items if isinstance(i, Sym)]
    libs = sorted({s.lib_id for s in syms} | set(extra_libs))
    body = "\n".join(i.text() if isinstance(i, Sym) else i for i in items)
    return (f'(kicad_sch (version {version}) (generator "eeschema") (generator_version "8.0")'
            f' (uuid "{uuid}") (paper "A4")\n(lib_symbols {" ".join(LIB[k] for k in libs)})\n'
            f'{body}\n(sheet_instances (path "/" (page "1"))))\n')


def write(tmp_path: Path, items, name="t") -> Path:
    d = tmp_path / name
    d.mkdir(exist_ok=True)
    p = d / f"{name}.kicad_sch"
    p.write_text(sheet_text(items), encoding="utf-8")
    return p


def ours(path: Path):
    return build_netlist(load_hierarchy(path))


def named(nl) -> dict[str, set[tuple[str, str]]]:
    return {net.name: {(n.ref, n.pin) for n in net.nodes} for net in nl.nets}


def pin_at(sym: Sym, px: float, py: float) -> tuple[float, float]:
    """Sheet point (mm) of a library pin point, through the model's transform."""
    ps = PlacedSymbol(lib_id="", lib_name=None, x=to_iu(str(sym.x)), y=to_iu(str(sym.y)),
                      angle=sym.angle, mirror=sym.mirror, unit=1, body_style=1, fields={},
                      uuid="")
    x, y = ps.place(to_iu(str(px)), to_iu(str(py)))
    return round(x / 10000, 4), round(y / 10000, 4)


def sheet_block(name, file, uuid, x, y, pins):
    pin_text = " ".join(f'(pin "{p}" input (at {x} {py} 180) (uuid "{new_uuid()}") {_EFF})'
                        for p, py in pins)
    return (f'(sheet (at {x} {y}) (size 20 30) (uuid "{uuid}") '
            f'(property "Sheetname" "{name}" (at {x} {y} 0) {_EFF}) '
            f'(property "Sheetfile" "{file}" (at {x} {y} 0) {_EFF}) {pin_text} '
            f'(instances (project "t" (path "/{ROOT}" (page "2")))))')


@dataclass
class SubSym(Sym):
    refs: tuple = ()        # (sheet uuid, reference) per instance

    def text(self, path=None):
        u = new_uuid()
        value = self.lib_id.split(":")[1]
        inst = " ".join(f'(path "/{ROOT}/{r[0]}" (reference "{r[1]}") '
                        f'(unit {r[2] if len(r) > 2 else 1}))' for r in self.refs)
        return (f'(symbol (lib_id "{self.lib_id}") (at {self.x} {self.y} 0) (unit 1) '
                f'(uuid "{u}") (property "Reference" "{self.refs[0][1]}" (at 0 0 0) {_EFF}) '
                f'(property "Value" "{value}" (at 0 0 0) {_EFF}) '
                f'(instances (project "t" {inst})))')


def write_project(tmp_path: Path, root_items, subs: dict) -> Path:
    d = tmp_path / "h"
    d.mkdir(exist_ok=True)
    (d / "h.kicad_pro").write_text("{}", encoding="utf-8")
    (d / "h.kicad_sch").write_text(sheet_text(root_items), encoding="utf-8")
    for i, (f, items) in enumerate(subs.items()):
        (d / f).write_text(sheet_text(items, uuid=f"60000000-0000-4000-8000-{i:012d}",
                                      extra_libs=["Device:R", "T:Dual"]), encoding="utf-8")
    return d / "h.kicad_sch"




def kicad9_named(kicad9: Path, root: Path, tmp_path: Path) -> dict[str, set[tuple[str, str]]]:
    """KiCad 9's netlist export of ``root`` as {net name: {(ref, pin)}}."""
    out = tmp_path / (root.stem + ".k9.net")
    r = subprocess.run([str(kicad9), "netlist", str(root), str(out)], capture_output=True,
                       text=True, timeout=600)
    need(r.returncode == 0 and out.is_file(), f"kicad9 failed: {r.stderr[-300:]}")
    return named(read_net(out))
