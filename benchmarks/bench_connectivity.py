"""Netlist build scaling: the connectivity pass must be linear in the size of the design.

Method. Generated sheets of N and 10 N resistors, each with a wire to its neighbour point and
a label on the wire's interior (the one test that is not a pure point lookup). The build
and the reading of the file are timed separately over several repetitions; the ratio
t(10 N) / t(N) of each is printed. Linear work gives about 10; quadratic point matching would give about 100.

Run: python benchmarks/bench_connectivity.py [--n N]
Exits 1 when the ratio exceeds 40.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from frontcheck.kicad.connectivity import build_netlist  # noqa: E402
from frontcheck.kicad.hierarchy import load_hierarchy  # noqa: E402
from kicad_sheets import Sym, label, sheet_text, wire  # noqa: E402


def build_time(n: int, folder: Path, reps: int = 3) -> tuple[float, float]:
    """(read time, build time) in seconds for a generated sheet of n resistors."""
    items = []
    for i in range(n):
        x, y = 20 + (i % 50) * 10, 20 + (i // 50) * 20
        items += [Sym("Device:R", f"R{i + 1}", x, y), wire(x, y + 3.81, x + 10, y + 3.81),
                  label(f"N{i}", x + 5, y + 3.81)]
    p = folder / f"s{n}.kicad_sch"
    p.write_text(sheet_text(items), encoding="utf-8")
    t = time.perf_counter()
    for _ in range(reps):
        h = load_hierarchy(p)
    t_read = (time.perf_counter() - t) / reps
    t = time.perf_counter()
    for _ in range(reps):
        nl = build_netlist(h)
    assert len(nl.components) == n
    return t_read, (time.perf_counter() - t) / reps


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=300)
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as d:
        small = build_time(args.n, Path(d))
        big = build_time(10 * args.n, Path(d))
    ok = True
    for what, a, b in (("read", small[0], big[0]), ("connect", small[1], big[1])):
        ratio = b / a
        ok &= ratio < 40
        print(f"{what}: {args.n} parts {a * 1e3:.1f} ms; {10 * args.n} parts {b * 1e3:.1f} ms;"
              f" ratio {ratio:.1f} (linear ~10, quadratic ~100)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
