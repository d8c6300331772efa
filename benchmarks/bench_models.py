"""Benchmark: the demo's comparisons under each estimator, time and estimate side by side.

For each demo experiment (``spotkit demo``: the simultaneous and the receive test, the
report's standard tables and its map) and for the three-antenna demo
(``compare_several``, every pair), runs the same comparisons with each ``--models``
entry and prints the time [s] and the overall estimate against the scenario's truth [dB]
in one table. The first model is the baseline: ``pooled`` (one law of B-A for every pair,
the default before the receiver shift), then ``detection`` (the default: the pooled fit
moved by the receiver shift, one receiver-effects fit per group); ``receiver-effects``
(refitted in every resample) can be added and is several times slower.

Run: ``.venv/bin/python benchmarks/bench_models.py [--models pooled,detection] [--boot
1000] [--skip-three]``; the spot files are read once and not timed.
"""
from __future__ import annotations

import argparse
import sys
import time

import pandas as pd

from spotkit import columns as C
from spotkit.compare import compare_several
from spotkit.demo import DEMO_EXPERIMENTS, demo_data_dir
from spotkit.io.ingest import read_spots
from spotkit.report import standard_comparisons
from spotkit.sim import truths_from_json
from spotkit.sim.truth import Truth


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--models", default="pooled,detection",
                    help="estimators separated by ',' (the first is the baseline)")
    ap.add_argument("--boot", type=int, default=1000, help="resamples of the tables "
                    "(the map: 200, as spotkit demo)")
    ap.add_argument("--three-boot", type=int, default=200,
                    help="resamples of the three-antenna comparison (notebook 08: 200)")
    ap.add_argument("--skip-three", action="store_true",
                    help="leave out the three-antenna demo")
    args = ap.parse_args(argv)
    models = [m.strip() for m in args.models.split(",") if m.strip()]
    data = demo_data_dir()
    rows = []
    for stem, (design, by) in DEMO_EXPERIMENTS.items():
        truth = Truth.from_json(data / f"{stem}.truth.json")
        spots = read_spots([data / f"{stem}.csv.gz"], progress=False).spots
        for model in models:
            t0 = time.perf_counter()
            results, _map = standard_comparisons(spots, design, truth.a, truth.b, by=by,
                                                 n_boot=args.boot, model=model)
            rows.append({"case": f"spotkit demo: {stem} (tables + map)", "model": model,
                         "seconds": time.perf_counter() - t0,
                         "estimate_db": results[0].overall[C.B_MINUS_A],
                         "truth_db": truth.overall[C.B_MINUS_A]})
            print(f"  {stem} [{model}]: {rows[-1]['seconds']:.1f} s", file=sys.stderr)
    if not args.skip_three:
        truths = truths_from_json(data / "three_antennas.truth.json")
        spots = read_spots([data / "three_antennas.csv.gz"], progress=False).spots
        calls = ["Q1ABC", "Q1ABD", "Q1ABE"]
        for model in models:
            t0 = time.perf_counter()
            res = compare_several(spots, "simultaneous", calls, all_pairs=True,
                                  n_boot=args.three_boot, seed=0, model=model)
            sec = time.perf_counter() - t0
            for r in res.contrasts.to_dict("records"):
                rows.append({"case": f"three antennas: {r[C.SECOND]} - {r[C.FIRST]}",
                             "model": model, "seconds": sec,
                             "estimate_db": r[C.B_MINUS_A],
                             "truth_db": truths[(r[C.FIRST], r[C.SECOND])].overall[
                                 C.B_MINUS_A]})
            print(f"  three antennas [{model}]: {sec:.1f} s", file=sys.stderr)
    t = pd.DataFrame(rows)
    t["error_db"] = t["estimate_db"] - t["truth_db"]
    wide = t.pivot_table(index="case", columns="model", values=["seconds", "error_db"],
                         sort=False)
    base = models[0]
    for m in models[1:]:
        wide[("time ratio", f"{m} / {base}")] = wide[("seconds", m)] / wide[("seconds", base)]
    truth = t.groupby("case", sort=False)["truth_db"].first()
    wide[("truth_db", "")] = truth
    pd.set_option("display.width", 200)
    print(wide.round(3).to_string())
    print(f"\ntables {args.boot} resamples, map 200, three antennas {args.three_boot}; "
          "error = overall estimate - the scenario's truth [dB]; seconds: wall time")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
