#!/usr/bin/env python3
"""Write the sample KiCad 9 projects (schematics, project files, READMEs).

    python sample_projects/generate.py [OUTDIR]

OUTDIR defaults to this script's folder. Output is byte-for-byte deterministic: UUIDs are
uuid5 of names, so a rebuild changes only what the generator changed. The generator refuses
to write a project whose drawing breaks its own rules (see _gen/schematic.py).
"""

from __future__ import annotations

import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
if str(HERE) not in sys.path:
    sys.path.insert(0, str(HERE))

from _gen import SAMPLES  # noqa: E402


def projects():
    """(module, Project) for every sample, in the order the samples are numbered."""
    return [(m, m.build()) for m in SAMPLES]


def write(outdir: Path) -> list[Path]:
    written = []
    for mod, proj in projects():
        errs = proj.check()
        if errs:
            raise SystemExit("drawing errors:\n  " + "\n  ".join(errs))
        folder = outdir / proj.name
        folder.mkdir(parents=True, exist_ok=True)
        files = proj.files()
        files["README.md"] = mod.README
        for name, text in sorted(files.items()):
            path = folder / name
            path.write_bytes(text.encode("utf-8"))
            written.append(path)
    return written


def main(argv: list[str]) -> int:
    out = Path(argv[1]) if len(argv) > 1 else HERE
    for p in write(out):
        print(p)
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv))
