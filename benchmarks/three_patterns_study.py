"""Bias and coverage of ``compare_several`` per estimator when the antennas differ in
pattern (the three-antenna demo's antennas on 20 m: a vertical and dipoles at 10 m and
20 m), every model on the same simulated runs.

The runs are those of ``tests/compare/test_three_patterns_coverage.py`` (150 receivers,
half a day, seeds 500 and up, bootstrap seed = run number). Per model and contrast it
prints the mean error against the simulator's truth (:attr:`spotkit.sim.Simulation.truths`:
the mean true difference over the run's pairs heard by either antenna) with its SE, the
SD of the errors, the coverage of the simultaneous intervals and, per model, the family
coverage (all three contrasts inside) and the time per run.

Run: ``.venv/bin/python benchmarks/three_patterns_study.py [--runs 16] [--boot 100]
[--models pooled,detection]``
"""
from __future__ import annotations

import argparse
import sys
import time

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.compare import compare_several
from spotkit.sim import THREE_DEMO, make_antenna
from spotkit.sim.simulate import simulate_spots


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=16)
    ap.add_argument("--boot", type=int, default=100)
    ap.add_argument("--first-seed", type=int, default=500)
    ap.add_argument("--models", default="pooled,detection")
    args = ap.parse_args(argv)
    models = [m.strip() for m in args.models.split(",") if m.strip()]
    ants = [make_antenna(kind, ("20m",), **kw) for _, kind, kw, _ in THREE_DEMO]
    rows = []
    for i in range(args.runs):
        sim = simulate_spots("simultaneous", days=0.5, n_receivers=150, bands=("20m",),
                             seed=args.first_seed + i, antenna_a=ants[0],
                             antenna_b=ants[1], more_antennas=ants[2:])
        for model in models:
            t0 = time.perf_counter()
            res = compare_several(sim.spots, "simultaneous", sim.params["calls"],
                                  all_pairs=True, n_boot=args.boot, seed=i, model=model)
            sec = time.perf_counter() - t0
            for r in res.contrasts.to_dict("records"):
                truth = sim.truths[(r[C.FIRST], r[C.SECOND])].overall[C.B_MINUS_A]
                rows.append({"run": i, "model": model, "seconds": sec,
                             "contrast": f"{r[C.SECOND]} - {r[C.FIRST]}",
                             "error_db": r[C.B_MINUS_A] - truth,
                             "inside": r[C.CI_SIM_LOW] <= truth <= r[C.CI_SIM_HIGH],
                             "width_db": r[C.CI_SIM_HIGH] - r[C.CI_SIM_LOW]})
        print(f"  run {i}: done", file=sys.stderr)
    t = pd.DataFrame(rows)
    per = t.groupby(["model", "contrast"], sort=False).agg(
        runs=("error_db", "size"), bias_db=("error_db", "mean"), sd_db=("error_db", "std"),
        coverage=("inside", "mean"), width_db=("width_db", "mean"))
    per["bias_se_db"] = per["sd_db"] / np.sqrt(per["runs"])
    fam = t.groupby(["model", "run"], sort=False).agg(
        all_inside=("inside", "all"), seconds=("seconds", "first")).groupby(
        "model", sort=False).mean()
    pd.set_option("display.width", 200)
    print(per[["runs", "bias_db", "bias_se_db", "sd_db", "width_db", "coverage"]]
          .round(3).to_string())
    print()
    print(fam.rename(columns={"all_inside": "family coverage",
                              "seconds": "s per run"}).round(3).to_string())
    print(f"\n{args.runs} runs (seeds {args.first_seed}+), {args.boot} resamples, "
          "simultaneous 95 % intervals")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
