"""Generate large KiCad 9 designs for the reader benchmarks.

    python benchmarks/gen_large.py OUTDIR [--files 25] [--instances 4] [--blocks 20]
                                          [--stress-stages 400]

writes two projects into OUTDIR (an invented circuit, repeated):

* ``OUTDIR/large/``: a hierarchical project. The root sheet holds ``files x instances``
  sheet symbols (default 25 x 4 = 100 sheet instances); each sheet file holds ``blocks``
  difference amplifiers (default 20: an op-amp and four resistors each, 100 symbols), so the
  design has 10,000 annotated symbols, with per-instance references in every symbol's
  ``(instances)`` block, as KiCad writes a sheet used more than once.
* ``OUTDIR/stress/``: one flat sheet with ``stress-stages`` difference amplifiers (default
  400, 2,000 symbols) - the many-stages case for recognition and analysis.

The files are in KiCad 9's format (version 20250114): library symbols embedded, short wires
from every pin to a local label or a power symbol (+5V, -5V, GND), coordinates on the
1.27 mm grid. KiCad 9's command-line tool loads them and exports the same netlist as
``frontcheck netlist`` (see benchmarks/README.md).

Nothing here is imported by frontcheck; the script only writes into the folder it is given.
"""

from __future__ import annotations

import argparse
import json
import uuid
from pathlib import Path

GRID = 1.27                       # mm
VERSION = "20250114"              # KiCad 9.0
NS = uuid.UUID("3b0f6f36-7d8e-4c52-9a0e-1f2d3c4b5a69")   # namespace of the generated UUIDs


def uid(*key: object) -> str:
    return str(uuid.uuid5(NS, "/".join(map(str, key))))


def mm(grid_units: float) -> str:
    """A grid coordinate as KiCad writes millimetres (no trailing zeros)."""
    s = f"{grid_units * GRID:.4f}".rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def q(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'


FONT = "(effects (font (size 1.27 1.27)))"
HIDDEN = "(effects (font (size 1.27 1.27)) (hide yes))"

# Library symbols, embedded in every sheet as KiCad does. Generic parts only.
LIB_SYMBOLS = f"""	(lib_symbols
		(symbol "Device:R" (pin_numbers (hide yes)) (pin_names (offset 0)) (exclude_from_sim no) (in_bom yes) (on_board yes)
			(property "Reference" "R" (at 2.032 0 90) {FONT})
			(property "Value" "R" (at 0 0 90) {FONT})
			(property "Footprint" "" (at -1.778 0 90) {HIDDEN})
			(property "Datasheet" "~" (at 0 0 0) {HIDDEN})
			(property "Description" "Resistor" (at 0 0 0) {HIDDEN})
			(symbol "R_0_1"
				(rectangle (start -1.016 -2.54) (end 1.016 2.54) (stroke (width 0.254) (type default)) (fill (type none))))
			(symbol "R_1_1"
				(pin passive line (at 0 3.81 270) (length 1.27) (name "~" {FONT}) (number "1" {FONT}))
				(pin passive line (at 0 -3.81 90) (length 1.27) (name "~" {FONT}) (number "2" {FONT})))
			(embedded_fonts no))
		(symbol "bench:OpAmp" (pin_names (offset 0.127)) (exclude_from_sim no) (in_bom yes) (on_board yes)
			(property "Reference" "U" (at 0 5.08 0) {FONT})
			(property "Value" "OpAmp" (at 0 -5.08 0) {FONT})
			(property "Footprint" "" (at 0 0 0) {HIDDEN})
			(property "Datasheet" "~" (at 0 0 0) {HIDDEN})
			(property "Description" "Operational amplifier" (at 0 0 0) {HIDDEN})
			(symbol "OpAmp_0_1"
				(polyline (pts (xy -5.08 5.08) (xy 5.08 0) (xy -5.08 -5.08) (xy -5.08 5.08))
					(stroke (width 0.254) (type default)) (fill (type background))))
			(symbol "OpAmp_1_1"
				(pin input line (at -7.62 2.54 0) (length 2.54) (name "+" {FONT}) (number "3" {FONT}))
				(pin input line (at -7.62 -2.54 0) (length 2.54) (name "-" {FONT}) (number "2" {FONT}))
				(pin output line (at 7.62 0 180) (length 2.54) (name "~" {FONT}) (number "1" {FONT}))
				(pin power_in line (at -2.54 7.62 270) (length 3.81) (name "V+" {FONT}) (number "8" {FONT}))
				(pin power_in line (at -2.54 -7.62 90) (length 3.81) (name "V-" {FONT}) (number "4" {FONT})))
			(embedded_fonts no))
""" + "".join(f"""		(symbol "power:{name}" (power) (pin_numbers (hide yes)) (pin_names (offset 0) (hide yes)) (exclude_from_sim no) (in_bom yes) (on_board yes)
			(property "Reference" "#PWR" (at 0 -3.81 0) {HIDDEN})
			(property "Value" "{name}" (at 0 3.556 0) {FONT})
			(property "Footprint" "" (at 0 0 0) {HIDDEN})
			(property "Datasheet" "" (at 0 0 0) {HIDDEN})
			(property "Description" "Power symbol creates a global label with name \\"{name}\\"" (at 0 0 0) {HIDDEN})
			(symbol "{name}_0_1"
				(polyline (pts (xy 0 0) (xy 0 1.27)) (stroke (width 0) (type default)) (fill (type none))))
			(symbol "{name}_1_1"
				(pin power_in line (at 0 0 90) (length 0) (hide yes) (name "{name}" {FONT}) (number "1" {FONT})))
			(embedded_fonts no))
""" for name in ("+5V", "-5V", "GND")) + "\t)\n"


class Sheet:
    """Writes one sheet file; ``paths`` are the instance paths of the sheet (one per use)."""

    def __init__(self, key: str, project: str, paths: list[str]):
        self.key, self.project, self.paths = key, project, paths
        self.items: list[str] = []
        self.n = 0

    def _uid(self, *k: object) -> str:
        self.n += 1
        return uid(self.key, self.n, *k)

    def _instances(self, refs: list[str]) -> str:
        body = "".join(f"\n\t\t\t\t(path {q(p)} (reference {q(r)}) (unit 1))"
                       for p, r in zip(self.paths, refs))
        return f"\t\t(instances\n\t\t\t(project {q(self.project)}{body}))\n"

    def symbol(self, lib_id: str, refs: list[str], value: str, x: int, y: int, angle: int,
               pins: list[str], fields: dict[str, str] | None = None) -> None:
        hide_ref = refs[0].startswith("#")
        props = [("Reference", refs[0], hide_ref), ("Value", value, False),
                 ("Footprint", "", True), ("Datasheet", "~", True), ("Description", "", True)]
        props += [(k, v, True) for k, v in (fields or {}).items()]
        text = [f"\t(symbol (lib_id {q(lib_id)}) (at {mm(x)} {mm(y)} {angle}) (unit 1)\n"
                f"\t\t(exclude_from_sim no) (in_bom yes) (on_board yes) (dnp no)\n"
                f"\t\t(uuid {q(self._uid('sym'))})\n"]
        for i, (name, val, hide) in enumerate(props):
            text.append(f"\t\t(property {q(name)} {q(val)} (at {mm(x + 2)} {mm(y + i)} 0) "
                        f"{HIDDEN if hide else FONT})\n")
        for p in pins:
            text.append(f"\t\t(pin {q(p)} (uuid {q(self._uid('pin'))}))\n")
        text.append(self._instances(refs))
        text.append("\t)\n")
        self.items.append("".join(text))

    def wire(self, x1: int, y1: int, x2: int, y2: int) -> None:
        self.items.append(f"\t(wire (pts (xy {mm(x1)} {mm(y1)}) (xy {mm(x2)} {mm(y2)}))\n"
                          f"\t\t(stroke (width 0) (type default)) (uuid {q(self._uid('w'))}))\n")

    def label(self, text: str, x: int, y: int) -> None:
        self.items.append(f"\t(label {q(text)} (at {mm(x)} {mm(y)} 0) (fields_autoplaced yes)\n"
                          f"\t\t(effects (font (size 1.27 1.27)) (justify left bottom))\n"
                          f"\t\t(uuid {q(self._uid('l'))}))\n")

    def sheet_symbol(self, name: str, file: str, x: int, y: int, root_path: str,
                     page: int) -> str:
        u = self._uid("sheet")
        self.items.append(
            f"\t(sheet (at {mm(x)} {mm(y)}) (size {mm(24)} {mm(16)})\n"
            f"\t\t(exclude_from_sim no) (in_bom yes) (on_board yes) (dnp no) (fields_autoplaced yes)\n"
            f"\t\t(stroke (width 0.1524) (type solid)) (fill (color 0 0 0 0.0000))\n"
            f"\t\t(uuid {q(u)})\n"
            f"\t\t(property \"Sheetname\" {q(name)} (at {mm(x)} {mm(y - 1)} 0)\n"
            f"\t\t\t(effects (font (size 1.27 1.27)) (justify left bottom)))\n"
            f"\t\t(property \"Sheetfile\" {q(file)} (at {mm(x)} {mm(y + 17)} 0)\n"
            f"\t\t\t(effects (font (size 1.27 1.27)) (justify left top)))\n"
            f"\t\t(instances (project {q(self.project)} (path {q(root_path)} (page {q(str(page))}))))\n"
            f"\t)\n")
        return u

    def text(self, file_uuid: str, paper: str, root: bool) -> str:
        tail = '\t(sheet_instances (path "/" (page "1")))\n' if root else ""
        return (f"(kicad_sch (version {VERSION}) (generator \"eeschema\") (generator_version \"9.0\")\n"
                f"\t(uuid {q(file_uuid)})\n\t(paper {paper})\n" + LIB_SYMBOLS
                + "".join(self.items) + tail + "\t(embedded_fonts no)\n)\n")


def diff_amp(sh: Sheet, k: int, ox: int, oy: int, ref_of) -> None:
    """One difference amplifier in a 36 x 30 grid cell at (ox, oy).

    R1 IN_N -> NINV, R2 NINV -> OUT (feedback), R3 IN_P -> PINV, R4 PINV -> GND; the op-amp
    has + on PINV, - on NINV, output OUT, supplies +5V / -5V. Every pin gets a 2-grid wire
    stub ending in a label or a power symbol.
    """
    t = f"_{k}"
    res = {"R1": (4, 8, "IN_N", "NINV"), "R2": (10, 8, "NINV", "OUT"),
           "R3": (4, 22, "IN_P", "PINV"), "R4": (10, 22, "PINV", None)}
    vals = {"R1": "10k", "R2": "100k", "R3": "10k", "R4": "100k"}
    for j, (name, (dx, dy, top, bottom)) in enumerate(res.items()):
        x, y = ox + dx, oy + dy
        sh.symbol("Device:R", ref_of("R", 4 * k + j + 1), vals[name], x, y, 0, ["1", "2"],
                  {"Tolerance": "0.1%"})
        sh.wire(x, y - 3, x, y - 5)              # pin 1 (lib y +3.81 -> sheet up)
        sh.label(top + t, x, y - 5)
        sh.wire(x, y + 3, x, y + 5)              # pin 2
        if bottom is None:
            sh.symbol("power:GND", ref_of("#PWR", 3 * k + 1), "GND", x, y + 5, 0, ["1"])
        else:
            sh.label(bottom + t, x, y + 5)
    ux, uy = ox + 24, oy + 16
    sh.symbol("bench:OpAmp", ref_of("U", k + 1), "OpAmp", ux, uy, 0, ["1", "2", "3", "4", "8"])
    sh.wire(ux - 6, uy - 2, ux - 8, uy - 2)      # + (lib y +2.54 -> sheet y -2)
    sh.label("PINV" + t, ux - 8, uy - 2)
    sh.wire(ux - 6, uy + 2, ux - 8, uy + 2)      # -
    sh.label("NINV" + t, ux - 8, uy + 2)
    sh.wire(ux + 6, uy, ux + 8, uy)              # output
    sh.label("OUT" + t, ux + 8, uy)
    sh.wire(ux - 2, uy - 6, ux - 2, uy - 8)      # V+
    sh.symbol("power:+5V", ref_of("#PWR", 3 * k + 2), "+5V", ux - 2, uy - 8, 0, ["1"])
    sh.wire(ux - 2, uy + 6, ux - 2, uy + 8)      # V-
    sh.symbol("power:-5V", ref_of("#PWR", 3 * k + 3), "-5V", ux - 2, uy + 8, 180, ["1"])


def write_project(folder: Path, name: str, sheets: list[tuple[str, str]]) -> None:
    folder.mkdir(parents=True, exist_ok=True)
    pro = {"meta": {"filename": f"{name}.kicad_pro", "version": 1},
           "sheets": [list(s) for s in sheets]}
    (folder / f"{name}.kicad_pro").write_text(json.dumps(pro, indent=2) + "\n")


def generate_hierarchy(out: Path, files: int = 25, instances: int = 4, blocks: int = 20) -> Path:
    name = "large"
    folder = out / name
    folder.mkdir(parents=True, exist_ok=True)
    root_uuid = uid(name, "root")
    root = Sheet(f"{name}/root", name, ["/"])
    cols = 10
    sheet_uuids: dict[int, list[str]] = {f: [] for f in range(files)}
    for i in range(files * instances):
        f = i % files
        x, y = 10 + 30 * (i % cols), 10 + 22 * (i // cols)
        sheet_uuids[f].append(root.sheet_symbol(f"CH{i + 1:03d}", f"channel_{f + 1:02d}.kicad_sch",
                                                x, y, f"/{root_uuid}", i + 2))
    (folder / f"{name}.kicad_sch").write_text(
        root.text(root_uuid, '"A2"', root=True))
    for f in range(files):
        paths = [f"/{root_uuid}/{s}" for s in sheet_uuids[f]]
        # Instance n of file f is sheet number i = f + n * files; its references are
        # R<i>01..., U<i>01..., #PWR<i>001...
        sheet_numbers = [f + n * files + 1 for n in range(instances)]
        sh = Sheet(f"{name}/channel/{f}", name, paths)

        def ref_of(prefix: str, n: int, _nums=sheet_numbers) -> list[str]:
            width = 3 if prefix == "#PWR" else 2
            return [f"{prefix}{s}{n:0{width}d}" for s in _nums]

        for k in range(blocks):
            diff_amp(sh, k, 20 + 36 * (k % 5), 20 + 30 * (k // 5), ref_of)
        (folder / f"channel_{f + 1:02d}.kicad_sch").write_text(
            sh.text(uid(name, "file", f), '"A3"', root=False))
    write_project(folder, name, [(root_uuid, "Root")])
    return folder


def generate_stress(out: Path, stages: int = 400) -> Path:
    name = "stress"
    folder = out / name
    folder.mkdir(parents=True, exist_ok=True)
    root_uuid = uid(name, "root")
    sh = Sheet(f"{name}/root", name, [f"/{root_uuid}"])

    def ref_of(prefix: str, n: int) -> list[str]:
        return [f"{prefix}{n}"]

    cols = 20
    for k in range(stages):
        diff_amp(sh, k, 10 + 36 * (k % cols), 10 + 30 * (k // cols), ref_of)
    rows = (stages + cols - 1) // cols
    paper = f'"User" {round((20 + 36 * cols) * GRID)} {round((20 + 30 * rows) * GRID)}'
    (folder / f"{name}.kicad_sch").write_text(sh.text(root_uuid, paper, root=True))
    write_project(folder, name, [(root_uuid, "Root")])
    return folder


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("outdir", type=Path, help="folder to write the two projects into")
    p.add_argument("--files", type=int, default=25, help="distinct sheet files (default 25)")
    p.add_argument("--instances", type=int, default=4,
                   help="instances of each sheet file (default 4)")
    p.add_argument("--blocks", type=int, default=20,
                   help="difference amplifiers per sheet file (default 20 = 100 symbols)")
    p.add_argument("--stress-stages", type=int, default=400,
                   help="difference amplifiers on the flat stress sheet (default 400)")
    a = p.parse_args(argv)
    h = generate_hierarchy(a.outdir, a.files, a.instances, a.blocks)
    s = generate_stress(a.outdir, a.stress_stages)
    n_sheets = a.files * a.instances
    print(f"{h}: {n_sheets} sheet instances of {a.files} files, "
          f"{n_sheets * a.blocks * 5} symbols")
    print(f"{s}: {a.stress_stages} difference amplifiers, {a.stress_stages * 5} symbols")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
