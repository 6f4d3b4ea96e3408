"""Stage finding and report rendering at N and 2N stages: both must stay linear.

    python benchmarks/bench_scaling.py [--stages N] [--repeat R]

Method. gen_large.py writes two flat designs of N and 2N difference amplifiers (default
N = 200, 5 symbols a stage). Each is read once and checked once with ``samples=0`` (the
check only supplies a Report with its findings; it is not timed). Then, interleaved so that a
change of load on the machine hits both sizes alike, best of R:

* stage finding: ``recognise.find_stages`` on the loaded netlist, with the project's rails
  and part library as the pipeline passes them;
* JSON rendering: ``report.render(report, "json")``;
* terminal table: ``report.render(report, "text")`` (rich, 120 columns, no colour).

Printed: times, stages found, findings, and the ratio t(2N) / t(N) of each phase (CPU time of
this process, which other work on the machine disturbs less than wall time). Linear work gives
2.0; the aim is at most 2.4 (doubling the design at most doubles the time, within 20 %);
quadratic work would give 4. Exits 1 when a ratio exceeds 2.4. Ratios, not times, compare
between machines.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from gen_large import generate_stress  # noqa: E402

from frontcheck import pipeline  # noqa: E402
from frontcheck.config import load_config  # noqa: E402
from frontcheck.kicad.project import load  # noqa: E402
from frontcheck.recognise import find_stages  # noqa: E402
from frontcheck.report import render  # noqa: E402

AIM = 2.4


class Design:
    """One generated design, read and checked once; the phases below are timed on it."""

    def __init__(self, out: Path, stages: int):
        self.folder = generate_stress(out / f"n{stages}", stages)
        self.netlist = load(str(self.folder))
        self.config = load_config(self.folder, None, None)
        # the part library as the pipeline loads it (a private helper: the benchmark must
        # find stages with exactly what a check passes)
        self.parts = pipeline._load_parts(self.folder, self.config)
        self.report = pipeline.run([str(self.folder)], pipeline.RunOptions(samples=0))
        project = self.report.projects[0]
        assert project.error is None, project.error
        self.stages = len(project.stages)
        self.findings = len(project.findings)

    def find(self):
        tol = self.config.default_tolerance("resistor")
        return find_stages(self.netlist, self.parts, self.config.rail_voltage,
                           default_tol=float(tol.value), default_from=tol.detail or tol.source)

    def json(self):
        return render(self.report, "json")

    def text(self):
        return render(self.report, "text")


PHASES = ("find", "json", "text")
LABELS = {"find": "stage finding", "json": "JSON rendering", "text": "terminal table"}


def _cpu(fn) -> float:
    t = time.process_time()
    fn()
    return time.process_time() - t


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stages", type=int, default=200, help="N (default 200; 2N is also run)")
    ap.add_argument("--repeat", type=int, default=5, help="best of R (default 5)")
    a = ap.parse_args(argv)

    with tempfile.TemporaryDirectory(prefix="fc-bench-scaling-") as tmp:
        small, large = Design(Path(tmp), a.stages), Design(Path(tmp), 2 * a.stages)
        assert len(large.find().stages) == 2 * len(small.find().stages) == 2 * a.stages
        best = {(d, p): float("inf") for d in (0, 1) for p in PHASES}
        for _ in range(a.repeat):
            for p in PHASES:
                for d, design in enumerate((small, large)):
                    best[d, p] = min(best[d, p], _cpu(getattr(design, p)))

    print(f"stages found: {small.stages} and {large.stages}; findings: {small.findings} and "
          f"{large.findings}; CPU s, best of {a.repeat}")
    print(f"{'phase':<16} {'N':>9} {'2N':>9} {'ratio':>7}  (linear 2.0, aim <= {AIM})")
    worst = 0.0
    for p in PHASES:
        ratio = best[1, p] / best[0, p] if best[0, p] > 0 else float("nan")
        worst = max(worst, ratio)
        print(f"{LABELS[p]:<16} {best[0, p]:9.4f} {best[1, p]:9.4f} {ratio:7.2f}")
    return 0 if worst <= AIM else 1


if __name__ == "__main__":
    raise SystemExit(main())
