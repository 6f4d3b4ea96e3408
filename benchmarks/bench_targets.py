"""The speed aims of a whole check, each as a ratio measured in one run; exit 1 when one is missed.

    python benchmarks/bench_targets.py [--design-dir DIR] [--repeat N] [--format default|json]

Every figure compares two commands run as child processes, interleaved, best of N, by the
children's CPU time (wall time printed beside it; on a shared machine CPU time is the steadier
of the two). Byte code is cached in a temporary folder, warmed by one run first
(bench_startup.py says why). The checks run with default settings (the terminal report,
written to a pipe) unless ``--format json`` asks for the JSON report.

* ``check`` of the flat 400-stage sheet against a kiutils load of the same file (a child that
  imports kiutils and builds its schematic object): aim <= 0.5;
* ``check`` of the 100-sheet-instance, 10,000-symbol hierarchy against kiutils loading its
  26 sheet files in one child: aim <= 0.5;
* ``check`` of an 800-stage sheet against the 400-stage one: aim <= 2.4 (linear is 2, within
  20 %);
* ``check`` of sample_projects/bench-scale against ``python -c "import numpy"``: aim <= 2;
* peak resident memory of the 400-stage check (the child's own maximum RSS): aim <= 200 MB.

Without --design-dir the designs are generated into a temporary folder (gen_large.py); the
800-stage sheet is always generated here. kiutils is a test-only dependency
(``pip install -e .[test]``).
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent
sys.path.insert(0, str(HERE))

import bench_startup  # noqa: E402  (benchmarks/ is not a package)
import gen_large  # noqa: E402

KIUTILS = ("import sys\nfrom kiutils.schematic import Schematic\n"
           "for f in sys.argv[1:]:\n    Schematic().from_file(f)\n")
PEAK = ("import resource, sys\nfrom frontcheck.cli import main\nrc = main(sys.argv[1:])\n"
        "sys.stderr.write(f'peak-kb {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}\\n')\n"
        "raise SystemExit(rc)\n")


def _best(cmds: dict[str, list[str]], env: dict, repeat: int) -> dict[str, tuple[float, float]]:
    """(wall s, CPU s), best of ``repeat`` interleaved runs of each command."""
    for cmd in cmds.values():                       # warm byte code and file cache
        bench_startup._timed(cmd, env)
    best = {k: [float("inf"), float("inf")] for k in cmds}
    for _ in range(repeat):
        for k, cmd in cmds.items():
            w, c = bench_startup._timed(cmd, env)
            best[k] = [min(best[k][0], w), min(best[k][1], c)]
    return {k: (w, c) for k, (w, c) in best.items()}


def _peak_mb(args: list[str], env: dict) -> float:
    r = subprocess.run([sys.executable, "-c", PEAK, *args], env=env, cwd=REPO,
                       stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    kb = [int(line.split()[1]) for line in r.stderr.splitlines() if line.startswith("peak-kb ")]
    return kb[-1] / 1024.0 if kb else float("nan")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--design-dir", type=Path, help="folder made by gen_large.py")
    ap.add_argument("--repeat", type=int, default=3, help="runs per command, best kept")
    ap.add_argument("--format", default="default", choices=("default", "json"),
                    help="report of the checks: default settings (the terminal report) or JSON")
    a = ap.parse_args(argv)

    tmp = tempfile.mkdtemp(prefix="fc-bench-targets-")
    try:
        design = a.design_dir
        if design is None:
            design = Path(tmp) / "designs"
            gen_large.generate_hierarchy(design)
            gen_large.generate_stress(design)
        stress = design / "stress" / "stress.kicad_sch"
        large = design / "large"
        double = gen_large.generate_stress(Path(tmp) / "double", 800) / "stress.kicad_sch"
        py = sys.executable
        fmt = [] if a.format == "default" else ["--format", a.format]

        def check(path) -> list[str]:
            return [py, "-m", "frontcheck", "check", str(path), *fmt]

        cmds = {
            "import numpy": [py, "-c", "import numpy"],
            "check bench-scale": check(REPO / "sample_projects" / "bench-scale"),
            "kiutils load, 400-stage sheet": [py, "-c", KIUTILS, str(stress)],
            "check 400-stage sheet": check(stress),
            "check 800-stage sheet": check(double),
            "kiutils load, 10,000-symbol hierarchy": [py, "-c", KIUTILS,
                                                       *map(str, sorted(large.glob("*.kicad_sch")))],
            "check 10,000-symbol hierarchy": check(large / "large.kicad_pro"),
        }
        env = bench_startup._env(str(Path(tmp) / "pyc"))
        load = os.getloadavg()[0]
        best = _best(cmds, env, a.repeat)
        peak = _peak_mb(["check", str(stress), *fmt], env)
        load_after = os.getloadavg()[0]
    finally:
        shutil.rmtree(tmp, ignore_errors=True)

    print(f"python {sys.version.split()[0]} on {os.cpu_count()} CPUs, best of {a.repeat}, "
          f"load average {load:.1f} before, {load_after:.1f} after; check reports: {a.format}")
    print(f"{'command':<40} {'wall s':>8} {'cpu s':>8}")
    for k, (w, c) in best.items():
        print(f"{k:<40} {w:8.3f} {c:8.3f}")

    def ratio(a_key: str, b_key: str) -> float:
        return best[a_key][1] / best[b_key][1]

    aims = [
        ("check 400-stage sheet / kiutils load of it (CPU)",
         ratio("check 400-stage sheet", "kiutils load, 400-stage sheet"), 0.5),
        ("check 10,000-symbol hierarchy / kiutils load of it (CPU)",
         ratio("check 10,000-symbol hierarchy", "kiutils load, 10,000-symbol hierarchy"), 0.5),
        ("check 800 stages / 400 stages (CPU)",
         ratio("check 800-stage sheet", "check 400-stage sheet"), 2.4),
        ("check bench-scale / import numpy (CPU)", ratio("check bench-scale", "import numpy"), 2.0),
        ("peak memory, check of the 400-stage sheet (MB)", peak, 200.0),
    ]
    print()
    missed = 0
    for what, value, aim in aims:
        ok = value <= aim
        missed += not ok
        print(f"{what:<58} {value:8.2f}  aim <= {aim:<5g} {'met' if ok else 'MISSED'}")
    for what, (a_key, b_key) in {
            "check 400-stage sheet / kiutils load": ("check 400-stage sheet",
                                                     "kiutils load, 400-stage sheet"),
            "check 10,000-symbol hierarchy / kiutils load": (
                "check 10,000-symbol hierarchy", "kiutils load, 10,000-symbol hierarchy"),
            "check bench-scale / import numpy": ("check bench-scale", "import numpy")}.items():
        wall = best[a_key][0] / best[b_key][0]
        print(f"{'(' + what + ', wall)':<58} {wall:8.2f}")
    return 1 if missed else 0


if __name__ == "__main__":
    raise SystemExit(main())
