"""Start-up benchmark: a whole check of a small design against importing numpy, from one run.

    python benchmarks/bench_startup.py [--repeat N] [--design DIR]

Reports, as ratios measured in the same run (interleaved, best of N, so that a load change
on the machine hits both sides alike):

* ``frontcheck check sample_projects/bench-scale`` (one three-op-amp stage, 20,000 Monte
  Carlo samples, text report to a pipe) against ``python -c "import numpy"`` (aim: < 2);
* ``frontcheck --version`` and ``frontcheck rules`` against the same reference (both load
  neither numpy nor networkx, tests/test_startup_imports.py; aim: well below 1);
* the same check with ``--format json`` (no terminal renderer).

Wall time and the children's CPU time are both given. Every command runs with a byte-code
cache in a temporary folder (``PYTHONPYCACHEPREFIX``), warmed by one run first: an installed
copy has its byte code compiled once, so compiling frontcheck's own sources on every run (as
with ``PYTHONDONTWRITEBYTECODE`` set) is not what a user waits for. The repository tree is
not written to.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parent


def _env(cache: str) -> dict:
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = cache
    env["PYTHONPATH"] = str(REPO) + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    return env


def _timed(cmd: list[str], env: dict) -> tuple[float, float]:
    """(wall s, CPU s of the child) of one run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, env=env, cwd=REPO, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                   check=False)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=7)
    ap.add_argument("--design", default=str(REPO / "sample_projects" / "bench-scale"))
    a = ap.parse_args(argv)

    py = sys.executable
    cmds = {
        "import numpy": [py, "-c", "import numpy"],
        "frontcheck --version": [py, "-m", "frontcheck", "--version"],
        "frontcheck rules": [py, "-m", "frontcheck", "rules"],
        "frontcheck check (text)": [py, "-m", "frontcheck", "check", a.design],
        "frontcheck check (json)": [py, "-m", "frontcheck", "check", a.design, "--format", "json"],
    }
    cache = tempfile.mkdtemp(prefix="fc-bench-pyc-")
    try:
        env = _env(cache)
        for cmd in cmds.values():          # warm the byte-code cache and the file cache
            _timed(cmd, env)
        best = {k: [float("inf"), float("inf")] for k in cmds}
        for _ in range(a.repeat):
            for k, cmd in cmds.items():
                w, c = _timed(cmd, env)
                best[k][0] = min(best[k][0], w)
                best[k][1] = min(best[k][1], c)
    finally:
        shutil.rmtree(cache, ignore_errors=True)

    ref_w, ref_c = best["import numpy"]
    print(f"python {sys.version.split()[0]} on {os.cpu_count()} CPUs, best of {a.repeat}")
    print(f"{'command':<26} {'wall s':>8} {'cpu s':>8} {'wall ratio':>11} {'cpu ratio':>10}")
    for k, (w, c) in best.items():
        print(f"{k:<26} {w:8.3f} {c:8.3f} {w / ref_w:11.2f} {c / ref_c:10.2f}")
    print(f"\ncheck of {Path(a.design).name} vs import numpy (wall): "
          f"{best['frontcheck check (text)'][0] / ref_w:.2f} (aim < 2)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
