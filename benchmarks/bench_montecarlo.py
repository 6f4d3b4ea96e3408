"""Monte Carlo throughput: batched MNA against ngspice on the same three-op-amp stage.

Method. One three-op-amp in-amp (G = 11, 0.1 % resistors, op-amps with A = 1e6 and 100 dB
CMRR as B-sources). frontcheck draws N samples (default 100,000) and solves them in stacked
numpy solves; the wall time covers drawing, assembling and solving. ngspice runs the first
M of the very same draws (default 200) in ONE batch deck (``alter`` of the seven resistors,
and of each op-amp's CMRR term, then two operating points per sample: Vcm = 10 V for Acm and
Vd = 1 V for Ad); its wall time, process start and deck writing included, divided by M gives
a time per sample, extrapolated linearly to N. Op-amps are written there as three series
E-sources (the equation of docs/engineering.md sec. 9 with an alterable CMRR term). Both
sides' CMRR for those M samples are compared (they must agree) so the race is fair.

Run: python benchmarks/bench_montecarlo.py [--samples N] [--spice-samples M]
Prints the figures; exits 1 if the two disagree. Ratios, not absolute times, are what to
compare between machines.
"""

from __future__ import annotations

import argparse
import shutil
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))

from frontcheck.analysis import tolerance as T  # noqa: E402
from spice import model, run, three_opamp, write_deck  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--samples", type=int, default=100_000)
    ap.add_argument("--spice-samples", type=int, default=200)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args(argv)

    sub = three_opamp(rf=25e3, rg=5e3, ra=10e3, rb=10e3, tol=0.001, m=model(aol=1e6, cmrr_db=100.0))
    opt = T.Options(seed=args.seed)
    ctx = T.make_context(sub)
    ad_nom = float(ctx.evaluate(np.zeros((1, len(ctx.var.names))), use_opamp_cmrr=False).ad[0])

    t0 = time.perf_counter()
    rng = np.random.default_rng(args.seed)
    x, s = T.draw(ctx, opt, args.samples, rng)
    g = ctx.evaluate(x, s)
    t_ours = time.perf_counter() - t0
    db_ours = T.cmrr_db(g.ad, g.acm, ad_nom)

    exe = shutil.which("ngspice")
    print(f"frontcheck: {args.samples} samples in {t_ours:.3f} s "
          f"({t_ours / args.samples * 1e6:.2f} us/sample); "
          f"CMRR 0.135th percentile {np.percentile(db_ours, 0.135):.2f} dB")
    if exe is None:
        print("ngspice not installed: no comparison")
        return 0

    m = args.spice_samples
    R = ctx.var.values(x[:m])
    names = [r.name for r in sub.resistors]
    cinv = s[:m] * ctx.cmag[None, :]          # signed 1/CMRR of each op-amp, as drawn
    t0 = time.perf_counter()
    cases = []
    for i in range(m):
        rv = {n: float(R[i, j]) for j, n in enumerate(names)}
        cv = {o.name: float(cinv[i, k]) for k, o in enumerate(sub.opamps)}
        cases += [{"vcm": 10.0, "R": rv, "c": cv}, {"vd": 1.0, "R": rv, "c": cv}]
    rows = run(exe, write_deck(sub, cases, ["OUT"], split=True), ["OUT"], timeout=3600)
    acm = np.array([rows[2 * i]["OUT"] for i in range(m)]) / 10.0
    ad = np.array([rows[2 * i + 1]["OUT"] for i in range(m)])
    t_spice = time.perf_counter() - t0
    db_spice = T.cmrr_db(ad, acm, ad_nom)
    per = t_spice / m
    diff = float(np.max(np.abs(db_spice - db_ours[:m])))
    print(f"ngspice:    {m} samples in {t_spice:.3f} s in one batch deck "
          f"({per * 1e3:.3f} ms/sample) -> {args.samples} samples extrapolated: {per * args.samples:.1f} s")
    print(f"throughput ratio (ngspice time / frontcheck time, same sample count): "
          f"{per * args.samples / t_ours:.0f}x")
    print(f"agreement on the {m} shared samples: max |CMRR difference| = {diff:.2e} dB")
    return 0 if diff < 0.01 else 1


if __name__ == "__main__":
    sys.exit(main())
