"""Where a check's analysis spends its CPU time, phase by phase, and how many numpy solves it makes.

    python benchmarks/bench_phases.py DESIGN_DIR [DESIGN_DIR ...] [--repeat R]

Method. Each repeat is a fresh process that runs ``frontcheck check DIR --format json`` in
process (the report is discarded) with the analysis functions below wrapped to add up their
CPU time (``time.process_time``), and counts the calls of ``numpy.linalg.solve``. Printed per
design: the best of R for each phase (a phase nested in another is indented under it) and the
solve count (the same in every run; a count, unlike a time, does not move with the load).
Nothing is aimed at here: it says where to look, and what a change to the per-stage analysis
bought (run it before and after on the designs of ``gen_large.py``).
"""

from __future__ import annotations

import argparse
import contextlib
import functools
import importlib
import io
import json
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent

# (module, function, label): module attributes looked up at call time, so wrapping them times
# every call the check makes
PHASES = [
    ("frontcheck.analysis.dc_paths", "DCView", "DC view of the design"),
    ("frontcheck.analysis", "analyse_many", "analysis of every stage"),
    ("frontcheck.analysis", "_prepare", "  parts around each stage, tolerance contexts"),
    ("frontcheck.analysis.budget_terms", "transfers_many", "  error-budget DC transfers (stacked)"),
    ("frontcheck.analysis", "_figures", "  gain and CMRR (worst case, statistics)"),
    ("frontcheck.analysis.headroom", "headroom", "  headroom"),
    ("frontcheck.analysis.budget", "full_budget", "  error budget"),
    ("frontcheck.analysis.cmrr_frequency", "stage_sweep", "  CMRR against frequency"),
    ("frontcheck.analysis.dc_paths", "bias_paths", "  bias-return paths"),
]


def _child(design: str) -> dict:
    sys.path.insert(0, str(HERE.parent))
    import numpy as np

    spent: dict[str, float] = {}

    def wrap(mod: str, name: str, label: str) -> None:
        m = importlib.import_module(mod)
        f = getattr(m, name, None)
        if f is None:            # older code without this phase: left out
            return

        @functools.wraps(f)
        def timed(*a, **k):
            t = time.process_time()
            try:
                return f(*a, **k)
            finally:
                spent[label] = spent.get(label, 0.0) + time.process_time() - t
        setattr(m, name, timed)

    for mod, name, label in PHASES:
        wrap(mod, name, label)
    solves = [0]
    solve = np.linalg.solve

    def counted(*a, **k):
        solves[0] += 1
        return solve(*a, **k)
    np.linalg.solve = counted
    from frontcheck.cli import main
    t = time.process_time()
    with contextlib.redirect_stdout(io.StringIO()):
        try:
            main(["check", design, "--format", "json"])
        except SystemExit:
            pass
    spent["whole check (imports done)"] = time.process_time() - t
    return {"spent": spent, "solves": solves[0]}


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("designs", nargs="+")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--child", action="store_true", help=argparse.SUPPRESS)
    a = ap.parse_args()
    if a.child:
        print(json.dumps(_child(a.designs[0])))
        return 0
    best: dict[str, dict[str, float]] = {d: {} for d in a.designs}
    solves: dict[str, int] = {}
    for _ in range(a.repeat):
        for d in a.designs:          # interleaved: a change of load hits every design alike
            out = subprocess.run([sys.executable, __file__, "--child", d], check=True,
                                 capture_output=True, text=True).stdout
            got = json.loads(out)
            solves[d] = got["solves"]
            for k, v in got["spent"].items():
                best[d][k] = min(best[d].get(k, v), v)
    for d in a.designs:
        print(f"{d}: CPU s, best of {a.repeat}; numpy.linalg.solve calls: {solves[d]}")
        order = [label for _, _, label in PHASES] + ["whole check (imports done)"]
        for label in order:
            if label in best[d]:
                print(f"  {label:48s} {best[d][label]:8.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
