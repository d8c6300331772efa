"""Benchmark: does the run-length planner's promised CI width hold when the run is simulated?

For every design, for a few seeds: the planner's default pilot
(:func:`spotkit.plan.duration.simulate_default_pilot`: a vertical against a dipole, unequal
powers, the simulator's heterogeneous receivers) predicts the 95 % CI width after a run of
``--hours`` (before-after: ``--ba-hours``); the simulator then runs that long with the same
station population (same seed; fresh propagation) and
:func:`spotkit.compare.estimate.compare_antennas` reports the width reached
(``ci_high_db - ci_low_db``). For reference, the same prediction from an optimistic pilot
with one constant B-A on every path (``difference_db``: what the planner used to assume) is
printed beside it. Target: the mean ratio reached / predicted within 25 % (issue 15).

Usage::

    .venv/bin/python benchmarks/bench_plan.py
    .venv/bin/python benchmarks/bench_plan.py --receivers 300 --band 10m --seeds 1,2,3,4,5,6

The machine may be shared: the load average and the wall time are printed.
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from spotkit.compare.estimate import compare_antennas
from spotkit.plan.duration import (
    DEFAULT_PILOT,
    PLAN_DESIGNS,
    pilot_parameters,
    simulate_default_pilot,
)
from spotkit.plan.schedule import make_schedule
from spotkit.sim.simulate import simulate_spots

START = "2026-03-02"


def _simulate(design, hours, seed, band, n_far, **kw):
    if design == "alternating":
        kw["schedule"] = make_schedule(START, hours / 24.0, [band], seed=seed)
    return simulate_spots(design, days=hours / 24.0, seed=seed, start=START, bands=(band,),
                          n_receivers=n_far, n_transmitters=n_far, **kw)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--band", default="20m")
    ap.add_argument("--receivers", type=int, default=60)
    ap.add_argument("--seeds", default="1,2,3,4")
    ap.add_argument("--hours", type=float, default=48.0)
    ap.add_argument("--ba-hours", type=float, default=192.0)
    ap.add_argument("--boot", type=int, default=200)
    ap.add_argument("--designs", default=",".join(PLAN_DESIGNS))
    args = ap.parse_args(argv)
    seeds = [int(s) for s in args.seeds.split(",") if s]
    print(f"planner check: {args.band}, {args.receivers} far stations, seeds {seeds}, "
          f"{args.boot} resamples; load average {os.getloadavg()[0]:.2f}")
    print(f"{'design':<13} {'hours':>6} {'predicted':>10} {'reached':>8} {'ratio':>6} "
          f"{'(sd)':>6} {'constant-B-A pilot':>19}  verdict")
    t0 = time.perf_counter()
    for design in args.designs.split(","):
        hours = args.ba_hours if design == "before-after" else args.hours
        pred, reached, naive = [], [], []
        for seed in seeds:
            pilot = simulate_default_pilot(design, args.band, n_receivers=args.receivers,
                                           seed=seed, n_boot=args.boot)
            pred.append(2 * 1.959964 * float(pilot.se_at(hours)))
            sim = _simulate(design, hours, seed, args.band, args.receivers, **DEFAULT_PILOT)
            o = compare_antennas(sim.spots, **sim.compare_kwargs(), n_boot=args.boot,
                                 seed=seed + 1000, min_pairs=2).overall
            reached.append(o["ci_high_db"] - o["ci_low_db"])
            days = 4 if design == "before-after" else 1
            flat = _simulate(design, 24.0 * days, seed, args.band, args.receivers,
                             difference_db=1.0)
            flat_pilot = pilot_parameters(flat.spots, design, flat.a, flat.b, band=args.band,
                                          schedule=flat.schedule, change_at=flat.change_at,
                                          n_boot=args.boot, seed=seed)
            naive.append(2 * 1.959964 * float(flat_pilot.se_at(hours)))
        ratio = np.array(reached) / np.array(pred)
        ok = abs(ratio.mean() - 1) <= 0.25
        print(f"{design:<13} {hours:6.0f} {np.mean(pred):10.2f} {np.mean(reached):8.2f} "
              f"{ratio.mean():6.2f} {ratio.std(ddof=1):6.2f} {np.mean(naive):19.2f}  "
              f"{'ok' if ok else 'MISSED'} (target 0.75-1.25)", flush=True)
    print(f"wall time {time.perf_counter() - t0:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
