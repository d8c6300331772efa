"""Coverage study: does the 95 % interval of B minus A hold on data real decoders produce?

Each regime generates many independent runs with the held-out generator
(``tests/heldout.py``, which shares no code with the package), compares A and B with the
public :func:`spotkit.compare_antennas` (simultaneous design, overall estimate) and checks
the estimate and its interval against the truth. The true difference depends on the path
(band x distance cell) in every regime, and in some on the receiver too, so there are two
truths: the *population* truth - the mean true B-minus-A over the pairs in which at least
one antenna was heard, among all the receivers a run could have drawn (computed once per
regime from 30,000 far stations, Monte Carlo SE about 0.002 dB) - which is what the
cluster bootstrap's interval is for and what a user wants to know about the antennas; and
the *run* truth, the same mean over the run's own pairs. Bias, SD and coverage are against
the population truth; coverage against the run truth is shown beside it (it is higher:
the receivers a run happened to draw are part of the error only in the first).

Regimes (about 7,000 pairs from 200 receivers per run, A and B at equal power, each also
with A 7 dB below B):

* ``hard threshold`` - practically continuous SNR reports (0.1 dB steps), hard threshold,
  normal fading;
* ``whole dB`` - reports rounded to whole dB, decision on the whole-dB report;
* ``whole dB, raw decision`` - decision on the raw SNR, the report rounded afterwards;
* ``soft threshold`` - detection curve Phi((s - t50) / 1 dB);
* ``heavy tails t3`` - Student t fast fading, 3 degrees of freedom, same SD;
* ``receiver heterogeneity`` - B-A offset per receiver (SD 1 dB), thresholds spread
  (SD 1.5 dB);

and ``large cell, all combined``: about 70,000 pairs from 150 receivers with all of the
above at once (soft curve, whole dB with raw decision, t3, heterogeneity, A 7 dB below B).

Columns: runs; mean pairs per run; bias (mean of estimate - population truth) [dB]; SD of
the estimates [dB]; mean interval width [dB]; width / ideal (the mean width over 2 z SD: 1
when the interval is as wide as the spread of the estimates says it should be); coverage
(share of runs whose interval holds the population truth; a run without an interval counts
as not covered) and its binomial SE; coverage of the run truth; runs without an estimate
or interval.

Targets (issue 15): |bias| <= 0.03 dB everywhere; coverage >= 93 % over >= 200 runs at
~7,000 pairs and >= 90 % over >= 60 runs in the large cell; width / ideal <= 1.5 in the
baseline (``hard threshold``).

Last full run (200 runs per regime, 60 in the large cell, 200 resamples, percentile,
the default model; 2026-12-06, two processes of about 26 and 31 min): 9 of the 13
regimes meet every target. Four do not: bias -0.033 dB (hard threshold, A 7 dB below B),
-0.044 dB (whole dB, A 7 dB below B) and -0.031 dB (heavy tails t3, A 7 dB below B), and
coverage 92.5 % +- 1.9 (receiver heterogeneity). The large cell: bias -0.017 dB, coverage
60 of 60. With A 7 dB below B the intervals are 1.40-1.54 times the ideal width and
cover 97-100 %.

Run: ``.venv/bin/python benchmarks/coverage_study.py [--runs 200] [--large-runs 60]
[--boot 200] [--interval percentile] [--tau-from pairs|reports] [--first-seed 1000]
[--regimes "hard threshold;whole dB, A 7 dB below B"]``; a quick look in about a minute:
``--runs 10 --large-runs 2``. ``--interval normal --boot 50`` is what the slow tests run
(``tests/compare/test_coverage_study.py``: a percentile interval from 50 resamples is
too noisy, a normal one is not).
"""
from __future__ import annotations

import argparse
import functools
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from scipy.stats import norm

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

import heldout  # tests/heldout.py: the independent generator

from spotkit import compare_antennas

SIZE = dict(n_far=200, n_slots=130)  # about 7,000 pairs
LARGE_SIZE = dict(n_far=150, n_slots=1900)  # about 70,000 pairs from 150 receivers
EQUAL = dict(power_a_dbm=37.0, power_b_dbm=37.0)
APART = dict(power_a_dbm=30.0, power_b_dbm=37.0)  # A 7 dB below B
BASE_REGIMES = {
    "hard threshold": dict(report_step_db=0.1),
    "whole dB": dict(report_step_db=1.0, threshold_on="rounded"),
    "whole dB, raw decision": dict(report_step_db=1.0, threshold_on="raw"),
    "soft threshold": dict(report_step_db=0.1, detection_width_db=1.0),
    "heavy tails t3": dict(report_step_db=0.1, fading_df=3.0),
    "receiver heterogeneity": dict(report_step_db=0.1, station_sd_db=1.0, threshold_sd_db=1.5),
}
LARGE = "large cell, all combined"
REGIMES: dict[str, dict] = {}
for _name, _kw in BASE_REGIMES.items():
    REGIMES[_name] = {**SIZE, **EQUAL, **_kw}
    REGIMES[_name + ", A 7 dB below B"] = {**SIZE, **APART, **_kw}
REGIMES[LARGE] = {**LARGE_SIZE, **APART, "report_step_db": 1.0, "threshold_on": "raw",
                  "detection_width_db": 1.0, "fading_df": 3.0, "station_sd_db": 1.0,
                  "threshold_sd_db": 1.5}
BASELINE = "hard threshold"
#: Targets of issue 15.
MAX_BIAS_DB = 0.03
MIN_COVERAGE = 0.93
MIN_COVERAGE_LARGE = 0.90
MAX_WIDTH_RATIO = 1.5


@functools.cache
def population_truth(regime: str, n_far: int = 15000, n_slots: int = 40,
                     seeds: tuple = (10**6 + 1, 10**6 + 2)) -> float:
    """Mean true B-minus-A over the pairs heard by at least one antenna, among all the
    receivers a run of the regime could draw [dB]: the pair-weighted mean over
    ``len(seeds)`` populations of ``n_far`` far stations (seeds apart from the runs')."""
    kw = {k: v for k, v in REGIMES[regime].items() if k not in ("n_far", "n_slots")}
    cells = pd.concat([heldout.generate(n_far=n_far, n_slots=n_slots, seed=sd,
                                        truth_only=True, **kw)[1] for sd in seeds])
    return heldout.overall_truth(cells)


def run_once(regime: str, seed: int, n_boot: int = 200, confidence: float = 0.95,
             interval: str = "percentile", tau_from: str = "pairs",
             model: str = "detection") -> dict:
    """One run of a regime: generate, compare, check against the truth.

    Returns
    -------
    dict
        regime, seed, pairs, population_db (:func:`population_truth`), truth_db (the
        run's own), estimate_db, ci_low_db, ci_high_db [dB], covered (the population
        truth), covered_run (the run's truth).
    """
    return run_models(regime, seed, (model,), n_boot, confidence, interval, tau_from)[0]


def run_models(regime: str, seed: int, models=("detection",), n_boot: int = 200,
               confidence: float = 0.95, interval: str = "percentile",
               tau_from: str = "pairs") -> list[dict]:
    """One run of a regime compared by each of ``models`` (the same spots): a list of
    :func:`run_once`'s dicts, each with its ``model``, the compare time ``seconds`` and
    ``receiver_shift_db``."""
    spots, cells = heldout.generate(seed=seed, **REGIMES[regime])
    truth = heldout.overall_truth(cells)
    pop = population_truth(regime)
    rows = []
    for model in models:
        t0 = time.perf_counter()
        res = compare_antennas(spots, "simultaneous", heldout.CALL_A, heldout.CALL_B,
                               n_boot=n_boot, seed=seed, confidence=confidence,
                               interval=interval, tau_from=tau_from, model=model)
        o = res.overall
        lo, hi = float(o["ci_low_db"]), float(o["ci_high_db"])
        rows.append({"regime": regime, "model": model, "seed": seed,
                     "pairs": int(o["pairs"]), "population_db": pop, "truth_db": truth,
                     "estimate_db": float(o["b_minus_a_db"]), "ci_low_db": lo,
                     "ci_high_db": hi, "covered": bool(lo <= pop <= hi),
                     "covered_run": bool(lo <= truth <= hi),
                     "receiver_shift_db": float(o.get("receiver_shift_db", np.nan)),
                     "seconds": time.perf_counter() - t0})
    return rows


def run_regime(regime: str, runs: int, n_boot: int = 200, first_seed: int = 1000,
               confidence: float = 0.95, interval: str = "percentile",
               tau_from: str = "pairs", model: str = "detection") -> pd.DataFrame:
    """``runs`` independent runs of one regime (seeds ``first_seed`` and up); ``interval``:
    the bootstrap interval of :func:`spotkit.compare_antennas` ("percentile", its default,
    or "normal", which needs far fewer resamples); ``tau_from``: where the detection
    width comes from ("pairs", the default, or "reports", the earlier fit); ``model``: the
    estimator ("detection", the default, or "receiver-effects", the random effect per
    receiver)."""
    models = (model,) if isinstance(model, str) else tuple(model)
    return pd.DataFrame([r for i in range(runs)
                         for r in run_models(regime, first_seed + i, models, n_boot,
                                             confidence, interval, tau_from)])


def summarise(runs: pd.DataFrame, confidence: float = 0.95) -> pd.DataFrame:
    """One row per regime: runs, pairs, bias, SD, width, width / ideal, coverage (of the
    population truth, with its binomial SE, and of the run truth), failed runs."""
    z = norm.ppf(0.5 + confidence / 2)
    rows = []
    if "model" not in runs:
        runs = runs.assign(model="")
    for (regime, model), g in runs.groupby(["regime", "model"], sort=False):
        err = g["estimate_db"] - g["population_db"]
        err_run = g["estimate_db"] - g["truth_db"]
        width = g["ci_high_db"] - g["ci_low_db"]
        sd = float(err.std(ddof=1)) if err.notna().sum() > 1 else np.nan
        cov = float(g["covered"].mean())
        rows.append({"regime": regime, "model": model, "runs": len(g),
                     "pairs": int(g["pairs"].mean()),
                     "bias_db": float(err.mean()), "sd_db": sd,
                     "bias_run_db": float(err_run.mean()),
                     "bias_run_se_db": float(err_run.std(ddof=1) / np.sqrt(err_run.count()))
                     if err_run.count() > 1 else np.nan,
                     "width_db": float(width.mean()),
                     "width_ratio": float(width.mean() / (2 * z * sd)),
                     "coverage": cov, "coverage_se": float(np.sqrt(cov * (1 - cov) / len(g))),
                     "coverage_run": float(g["covered_run"].mean()),
                     "failed": int((g["estimate_db"].isna() | width.isna()).sum()),
                     "seconds": float(g["seconds"].mean()) if "seconds" in g else np.nan})
    return pd.DataFrame(rows)


def check_targets(summary: pd.DataFrame) -> pd.Series:
    """Per regime, "ok" or what missed its target (issue 15); with several models per
    regime keyed ``"regime [model]"``."""
    out = {}
    one_model = "model" not in summary or summary["model"].nunique() <= 1
    for r in summary.to_dict("records"):
        miss = []
        if not abs(r["bias_db"]) <= MAX_BIAS_DB:
            miss.append(f"bias {r['bias_db']:+.3f}")
        floor = MIN_COVERAGE_LARGE if r["regime"] == LARGE else MIN_COVERAGE
        if not r["coverage"] >= floor:
            miss.append(f"coverage {100 * r['coverage']:.1f} % < {100 * floor:.0f} %")
        if r["regime"] == BASELINE and not r["width_ratio"] <= MAX_WIDTH_RATIO:
            miss.append(f"width {r['width_ratio']:.2f} x ideal")
        key = r["regime"] if one_model else f"{r['regime']} [{r['model']}]"
        out[key] = "ok" if not miss else "; ".join(miss)
    return pd.Series(out, name="target")


def format_table(summary: pd.DataFrame) -> str:
    """The study as a Markdown table."""
    if "model" not in summary:
        summary = summary.assign(model="")
    t = summary.assign(target=check_targets(summary).to_numpy())
    head = ("| regime | model | runs | pairs | bias dB | SD dB | bias vs run truth dB | "
            "interval dB | width / ideal | coverage | coverage of the run truth | s per run | "
            "target |")
    lines = [head, "|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---|"]
    for r in t.to_dict("records"):
        lines.append(
            f"| {r['regime']} | {r['model']} | {r['runs']} | {r['pairs']:,} | "
            f"{r['bias_db']:+.3f} | {r['sd_db']:.3f} | "
            f"{r['bias_run_db']:+.3f} +- {r['bias_run_se_db']:.3f} | "
            f"{r['width_db']:.3f} | {r['width_ratio']:.2f} | "
            f"{100 * r['coverage']:.1f} % (+-{100 * r['coverage_se']:.1f}) | "
            f"{100 * r['coverage_run']:.1f} % | {r['seconds']:.1f} | {r['target']} |")
    return "\n".join(lines)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=200, help="runs per ~7,000-pair regime")
    ap.add_argument("--large-runs", type=int, default=60, help="runs of the large cell")
    ap.add_argument("--boot", type=int, default=200, help="bootstrap resamples per run")
    ap.add_argument("--regimes", help="regime names separated by ';' (default: all); "
                    f"known: {'; '.join(REGIMES)}", default=None)
    ap.add_argument("--interval", choices=("percentile", "normal"), default="percentile",
                    help="bootstrap interval (normal: estimate -+ z SE, fewer resamples)")
    ap.add_argument("--tau-from", choices=("pairs", "reports"), default="pairs",
                    help="detection width from the paired reports (default) or from the "
                    "receivers' report histograms (the earlier estimator: before/after)")
    ap.add_argument("--model", default="detection", help="estimator(s), separated by "
                    "',', each run compared by every one on the same spots: detection "
                    "(default: the pooled fit moved by the receiver shift), pooled (without "
                    "the shift) or receiver-effects (refitted in every resample, slower)")
    ap.add_argument("--first-seed", type=int, default=1000, help="seed of the first run")
    ap.add_argument("--csv", help="also write every run to this CSV")
    ap.add_argument("--from-csv", help="only summarise the runs saved in this CSV")
    args = ap.parse_args(argv)
    if args.from_csv:
        runs = pd.read_csv(args.from_csv)
        if "population_db" not in runs:  # saved before the population truth was added
            runs["population_db"] = runs["regime"].map(population_truth)
            runs["covered_run"] = runs["covered"]
            runs["covered"] = (runs["ci_low_db"] <= runs["population_db"]) & (
                runs["population_db"] <= runs["ci_high_db"])
        print(format_table(summarise(runs)))
        return 0
    models = tuple(m.strip() for m in args.model.split(",") if m.strip())
    names = list(REGIMES)
    if args.regimes is not None:
        names = [n.strip() for n in args.regimes.split(";") if n.strip()]
        unknown = [n for n in names if n not in REGIMES]
        if unknown:
            ap.error(f"unknown regime(s) {unknown}; known: {'; '.join(REGIMES)}")
    t0 = time.perf_counter()
    frames = []
    for name in names:
        n = args.large_runs if name == LARGE else args.runs
        t1 = time.perf_counter()
        frames.append(run_regime(name, n, n_boot=args.boot, first_seed=args.first_seed,
                                 interval=args.interval, tau_from=args.tau_from,
                                 model=models))
        for s in summarise(frames[-1]).to_dict("records"):
            print(f"  {name} [{s['model']}]: {n} runs in {time.perf_counter() - t1:.0f} s, "
                  f"bias {s['bias_db']:+.3f} dB (run truth {s['bias_run_db']:+.3f}), "
                  f"coverage {100 * s['coverage']:.1f} %", file=sys.stderr)
        if args.csv:  # as it goes, so that a long study keeps what it has done
            pd.concat(frames, ignore_index=True).to_csv(args.csv, index=False)
    runs = pd.concat(frames, ignore_index=True)
    print(format_table(summarise(runs)))
    print(f"\n{len(runs)} runs, {args.boot} bootstrap resamples each ({args.interval}), "
          f"detection width from the {args.tau_from}, model {args.model}, "
          f"{time.perf_counter() - t0:.0f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
