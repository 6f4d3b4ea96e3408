"""Reader benchmarks: one run, figures as ratios against references measured in the same run.

    python benchmarks/bench_reader.py [--design-dir DIR] [--repeat N] [--check]

Reports
* tokenizer throughput (MB/s) on the generated 100-sheet project and, when the shared corpus
  sits beside the repository, on the corpus (best of N, CPU time and wall time);
* whole-design load (files -> Netlist with connectivity) of the 100-sheet, 10,000-symbol
  project against kiutils loading the same sheet files (kiutils only builds its object model,
  no connectivity), as a ratio of CPU times, interleaved runs (aim: 0.5 or less);
* peak Python memory of that load (tracemalloc);
* start-up of ``frontcheck --version`` against ``python -c "import numpy"``, as a ratio;
* with ``--check``: wall and CPU time of ``frontcheck check`` on the flat 400-stage sheet, and
  the CPU ratio against a 200-stage sheet (about 2 when the check is linear in stages).

Without --design-dir the designs are generated into a temporary folder (gen_large.py).
kiutils is a test-only dependency (``pip install -e .[test]``).
"""

from __future__ import annotations

import argparse
import gc
import os
import shutil
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent


def best(fn, repeat: int, clock=time.perf_counter) -> float:
    times = []
    for _ in range(repeat):
        gc.collect()
        t0 = clock()
        fn()
        times.append(clock() - t0)
    return min(times)


def tokenizer(files: list[Path], repeat: int) -> dict:
    from frontcheck.kicad.sexpr import parse, read_text

    texts = [read_text(f) for f in files]
    mb = sum(len(t.encode("utf-8")) for t in texts) / 1e6

    def run():
        for t in texts:
            parse(t)

    cpu = best(run, repeat, time.process_time)
    wall = best(run, repeat)
    return {"files": len(files), "MB": mb, "MB/s cpu": mb / cpu, "MB/s wall": mb / wall}


def load_vs_kiutils(project: Path, repeat: int) -> dict:
    from frontcheck.kicad.project import load

    sheets = sorted(project.glob("*.kicad_sch"))

    def ours():
        nl = load(project)
        assert len(nl.components) >= 10_000 or "stress" in project.name

    def theirs():
        from kiutils.schematic import Schematic

        for f in sheets:
            Schematic().from_file(str(f))

    # Interleaved, best of each: a load change during the run hits both sides alike.
    t_ours = t_kiutils = float("inf")
    for _ in range(repeat):
        t_ours = min(t_ours, best(ours, 1, time.process_time))
        t_kiutils = min(t_kiutils, best(theirs, 1, time.process_time))
    gc.collect()
    tracemalloc.start()
    nl = load(project)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    size = sum(f.stat().st_size for f in sheets) / 1e6
    return {"sheet files": len(sheets), "MB on disk": size, "components": len(nl.components),
            "nets": len(nl.nets), "frontcheck cpu s": t_ours, "kiutils cpu s": t_kiutils,
            "ratio": t_ours / t_kiutils, "peak MB": peak / 1e6}


def startup(repeat: int) -> dict:
    exe = shutil.which("frontcheck")
    ours = [exe, "--version"] if exe else [sys.executable, "-m", "frontcheck.cli", "--version"]
    numpy = [sys.executable, "-c", "import numpy"]

    def timed(cmd):
        def run():
            subprocess.run(cmd, check=True, capture_output=True)
        return best(run, repeat)

    t_ours, t_numpy = timed(ours), timed(numpy)
    return {"frontcheck --version s": t_ours, "import numpy s": t_numpy,
            "ratio": t_ours / t_numpy, "command": " ".join(Path(ours[0]).name if i == 0 else c
                                                           for i, c in enumerate(ours))}


def _check_run(sheet: Path) -> tuple[int, int | None, float, float]:
    """(exit status, stages, wall s, CPU s of the child) of one ``frontcheck check``."""
    import json
    import resource

    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, "-m", "frontcheck.cli", "check", str(sheet),
                        "--format", "json"], capture_output=True, text=True)
    dt = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    stages = len(json.loads(r.stdout)["stages"]) if r.stdout.startswith("{") else None
    return r.returncode, stages, dt, cpu


def check_time(stress: Path) -> dict:
    """The 400-stage sheet, and a half-size sheet generated here: a check linear in the
    number of stages takes about twice the CPU time for twice the stages."""
    sys.path.insert(0, str(HERE))
    import gen_large

    code, stages, wall, cpu = _check_run(stress)
    out = {"exit": code, "stages": stages, "wall s": wall, "cpu s": cpu}
    if stages:
        with tempfile.TemporaryDirectory() as d:
            half = gen_large.generate_stress(Path(d), stages // 2)
            _, h_stages, _, h_cpu = _check_run(half)
        out.update({"half sheet stages": h_stages, "half sheet cpu s": h_cpu,
                    "cpu ratio full/half": cpu / h_cpu})
    return out


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--design-dir", type=Path,
                   help="folder made by gen_large.py (default: generate into a temp folder)")
    p.add_argument("--repeat", type=int, default=5, help="runs per figure, best kept")
    p.add_argument("--check", action="store_true",
                   help="also time `frontcheck check` on the 400-stage sheet")
    a = p.parse_args(argv)

    tmp = None
    design = a.design_dir
    if design is None:
        sys.path.insert(0, str(HERE))
        import gen_large

        tmp = tempfile.TemporaryDirectory()
        design = Path(tmp.name)
        gen_large.generate_hierarchy(design)
        gen_large.generate_stress(design)
    large, stress = design / "large", design / "stress"
    try:
        print(f"python {sys.version.split()[0]} on {os.cpu_count()} CPUs, "
              f"load average {os.getloadavg()[0]:.1f}")
        rows = [("tokenizer, generated 100-sheet project",
                 tokenizer(sorted(large.glob("*.kicad_sch")), a.repeat))]
        shared = REPO.parent / "shared" / "corpus"
        if shared.is_dir():
            files = sorted(f for f in shared.rglob("*") if f.suffix in (".kicad_sch", ".net"))
            rows.append(("tokenizer, shared corpus", tokenizer(files, a.repeat)))
        rows.append(("load 100 sheets / 10,000 symbols vs kiutils",
                     load_vs_kiutils(large, max(2, a.repeat // 2))))
        rows.append(("load flat 400-stage sheet vs kiutils",
                     load_vs_kiutils(stress, max(2, a.repeat // 2))))
        rows.append(("start-up", startup(max(3, a.repeat * 2))))
        if a.check:
            rows.append(("check, flat 400-stage sheet (JSON report)", check_time(stress)))
        for title, figures in rows:
            print(f"\n{title}")
            for k, v in figures.items():
                print(f"  {k:24s} {v:.3f}" if isinstance(v, float) else f"  {k:24s} {v}")
    finally:
        if tmp is not None:
            tmp.cleanup()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
