"""Build frontcheck's KiCad plugin package (Plugin and Content Manager, IPC API plugin).

    python -m frontcheck.kicad_package OUTDIR    ->  OUTDIR/frontcheck-kicad-<version>.zip

Install it in KiCad 9 or 10 with Tools > Plugin and Content Manager > Install from File...
(KiCad's API server must be on: Preferences > Preferences... > Plugins > Enable KiCad API).
The package holds:

- ``metadata.json``: PCM schema v1, type ``plugin``, runtime ``ipc``;
- ``plugins/plugin.json``: API plugin schema v1, Python runtime, one action for the schematic
  and PCB editors' toolbars, with our own icons for light and dark themes;
- ``plugins/requirements.txt``: what KiCad installs into the plugin's own environment (it
  installs binary wheels only): kicad-python to talk to KiCad, and frontcheck's run-time
  dependencies;
- ``plugins/frontcheck/``: frontcheck itself, the same files its wheel installs, rule profiles
  and part classes included (it is pure Python, so the entry point imports it from beside
  itself; nothing needs building);
- ``plugins/check_project.py``: the entry point, which runs :mod:`frontcheck.kicad_action`.
"""

from __future__ import annotations

import argparse
import json
import re
import struct
import sys
import zipfile
import zlib
from pathlib import Path

from . import __version__
from .profiles import shipped_dir

IDENTIFIER = "org.frontcheck.front-end-check"       # PCM and plugin identifier (two dots)
ACTION_ID = "check-front-end"
ENTRY_POINT = "check_project.py"
ICON_SIZES = (24, 48)                                # toolbar size and its high-DPI double
REQUIREMENTS = ("kicad-python>=0.3", "numpy>=1.24", "networkx>=3.0", "rich>=13.0",
                "schemdraw>=0.23")
DESCRIPTION = ("Checks the difference and instrumentation amplifier stages of the open "
               "project's saved schematic and opens frontcheck's HTML report.")
DESCRIPTION_FULL = (
    "frontcheck finds the difference amplifiers and instrumentation amplifiers of a KiCad "
    "schematic and computes their gain, CMRR and headroom (nominal, worst case over the "
    "parts' tolerances, statistical), then flags rule breaks such as resistor-ratio mismatch, "
    "a floating reference pin or a missing input bias return. The toolbar button checks the "
    "project's saved schematic and opens the report in your browser. frontcheck checks "
    "signal-chain design rules, not electrical safety.")

ENTRY_SCRIPT = '''"""KiCad starts this file for the frontcheck toolbar button."""
import os
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from frontcheck.kicad_action import main  # noqa: E402

sys.exit(main())
'''

# -- the icon: an amplifier triangle with a tick, drawn here (strokes in a 24-unit box) -------

_TRIANGLE = [((4.0, 3.5), (4.0, 20.5)), ((4.0, 20.5), (20.5, 12.0)), ((20.5, 12.0), (4.0, 3.5))]
_TICK = [((6.8, 12.3), (9.3, 15.0)), ((9.3, 15.0), (14.2, 8.6))]
PALETTES = {   # (outline, tick) as RGB; our own choice, readable on KiCad's light and dark bars
    "light": ((0x26, 0x3a, 0x4f), (0x1f, 0x8a, 0x5c)),
    "dark": ((0xe4, 0xea, 0xf0), (0x6c, 0xd6, 0x9c)),
}


def _segment_distance(px: float, py: float, a, b) -> float:
    (ax, ay), (bx, by) = a, b
    dx, dy = bx - ax, by - ay
    t = max(0.0, min(1.0, ((px - ax) * dx + (py - ay) * dy) / (dx * dx + dy * dy)))
    return ((px - ax - t * dx) ** 2 + (py - ay - t * dy) ** 2) ** 0.5


def icon_pixels(size: int, theme: str, oversample: int = 4) -> list[list[tuple[int, ...]]]:
    """RGBA rows of the icon, anti-aliased by oversampling."""
    outline, tick = PALETTES[theme]
    strokes = [(_TRIANGLE, 1.9, outline), (_TICK, 2.2, tick)]   # (segments, width, colour)
    scale = 24.0 / size
    rows = []
    for y in range(size):
        row = []
        for x in range(size):
            hits = [0] * len(strokes)
            for sy in range(oversample):
                for sx in range(oversample):
                    px = (x + (sx + 0.5) / oversample) * scale
                    py = (y + (sy + 0.5) / oversample) * scale
                    for k in range(len(strokes) - 1, -1, -1):    # the tick lies on top
                        segs, width, _ = strokes[k]
                        if min(_segment_distance(px, py, a, b) for a, b in segs) <= width / 2:
                            hits[k] += 1
                            break
            n = sum(hits)
            if n == 0:
                row.append((0, 0, 0, 0))
                continue
            rgb = tuple(round(sum(h * s[2][c] for h, s in zip(hits, strokes)) / n)
                        for c in range(3))
            row.append((*rgb, round(255 * n / oversample ** 2)))
        rows.append(row)
    return rows


def png_bytes(rows: list[list[tuple[int, ...]]]) -> bytes:
    """A minimal RGBA PNG (PNG specification, ISO/IEC 15948: IHDR, one IDAT, IEND)."""
    height, width = len(rows), len(rows[0])
    raw = b"".join(b"\x00" + bytes(v for px in row for v in px) for row in rows)

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))

    header = struct.pack(">IIBBBBB", width, height, 8, 6, 0, 0, 0)
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", header)
            + chunk(b"IDAT", zlib.compress(raw, 9)) + chunk(b"IEND", b""))


# -- the package's files -----------------------------------------------------------------------

def pcm_version(version: str = __version__) -> str:
    """The PCM's major[.minor[.patch]] form of frontcheck's version."""
    m = re.match(r"(\d{1,4})(?:\.(\d{1,4}))?(?:\.(\d{1,6}))?", version)
    if not m:
        raise ValueError(f"version {version!r} has no major.minor.patch part")
    return ".".join(p for p in m.groups() if p is not None)


def metadata() -> dict:
    return {
        "$schema": "https://go.kicad.org/pcm/schemas/v1",
        "name": "frontcheck",
        "description": DESCRIPTION[:500],
        "description_full": DESCRIPTION_FULL,
        "identifier": IDENTIFIER,
        "type": "plugin",
        "author": {"name": "frontcheck developers", "contact": {}},
        "license": "GPL-3.0",
        "resources": {},
        "tags": ["analog", "checks", "schematic"],
        "versions": [{"version": pcm_version(), "status": "testing", "kicad_version": "9.0",
                      "runtime": "ipc", "platforms": ["linux", "macos", "windows"]}],
    }


def _icon_path(theme: str, size: int) -> str:
    return f"icons/frontcheck-{theme}-{size}.png"


def plugin_json() -> dict:
    return {
        "$schema": "https://go.kicad.org/api/schemas/v1",
        "identifier": IDENTIFIER,
        "name": "frontcheck",
        "description": DESCRIPTION,
        "runtime": {"type": "python", "min_version": "3.11"},
        "actions": [{
            "identifier": ACTION_ID,
            "name": "Check front-end stages",
            "description": "Check the saved schematic's amplifier stages and open the report",
            "show-button": True,
            "scopes": ["schematic", "pcb"],
            "entrypoint": ENTRY_POINT,
            "icons-light": [_icon_path("light", s) for s in ICON_SIZES],
            "icons-dark": [_icon_path("dark", s) for s in ICON_SIZES],
        }],
    }


def package_files() -> dict[str, bytes]:
    """Archive path -> content of every file in the package."""
    files = {
        "metadata.json": json.dumps(metadata(), indent=2).encode() + b"\n",
        "plugins/plugin.json": json.dumps(plugin_json(), indent=2).encode() + b"\n",
        "plugins/requirements.txt": ("\n".join(REQUIREMENTS) + "\n").encode(),
        f"plugins/{ENTRY_POINT}": ENTRY_SCRIPT.encode(),
    }
    for theme in PALETTES:
        for size in ICON_SIZES:
            files[f"plugins/{_icon_path(theme, size)}"] = png_bytes(icon_pixels(size, theme))
    source = Path(__file__).resolve().parent
    for f in sorted(source.rglob("*")):
        if f.is_file() and "__pycache__" not in f.parts and f.suffix not in (".pyc", ".pyo"):
            files[f"plugins/frontcheck/{f.relative_to(source).as_posix()}"] = f.read_bytes()
    # the rule profiles and part classes, where a wheel puts them (frontcheck/rules), also
    # when this frontcheck runs from a checkout that keeps them in the top-level rules/
    rules = shipped_dir()
    for pattern in ("*.toml", "parts/*.toml"):
        for f in sorted(rules.glob(pattern)):
            files[f"plugins/frontcheck/rules/{f.relative_to(rules).as_posix()}"] = f.read_bytes()
    return files


def build(outdir: Path) -> Path:
    """Write the package; its path. Entries are sorted and dated alike (reproducible)."""
    outdir.mkdir(parents=True, exist_ok=True)
    target = outdir / f"frontcheck-kicad-{pcm_version()}.zip"
    with zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in sorted(package_files().items()):
            info = zipfile.ZipInfo(name, date_time=(2020, 1, 1, 0, 0, 0))
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            z.writestr(info, data)
    return target


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m frontcheck.kicad_package",
                                description="Build frontcheck's KiCad plugin package (.zip).")
    p.add_argument("outdir", help="folder to write frontcheck-kicad-<version>.zip into")
    args = p.parse_args(argv)
    try:
        target = build(Path(args.outdir))
    except OSError as e:
        print(f"frontcheck: {args.outdir}: cannot write the package: {e.strerror}\n"
              "  what to do: choose a folder you can write to", file=sys.stderr)
        return 2
    print(target)
    return 0


if __name__ == "__main__":
    sys.exit(main())
