"""Benchmark: the detection-model fits of this tree against an earlier revision, side by side.

One run measures, for this working tree and for ``--rev`` (default ``a04a907``, checked out
with ``git worktree`` into a temporary folder and imported from there), each case in a
fresh process (so that its peak resident memory is its own):

* ``compare``: the spot table of :mod:`bench_compare` (``--pairs``, ``--boot``; band x
  distance x bearing sector, 128 groups): ``estimate_groups`` on the compressed pairs,
  then ``compare_antennas`` end to end;
* ``effects``: ``compare_antennas(..., model="receiver-effects")`` by band on a mid-size
  table (``--effects-pairs`` pairs, ``--effects-boot`` resamples);
* ``demo``: the comparison step of ``spotkit demo`` (``standard_comparisons`` of both demo
  experiments, ``--demo-boot`` resamples; reading the files is not timed).

It prints the times and peak memory of both trees and the largest difference of the
numeric result columns between them (the fits must give the same answers).

Run: ``.venv/bin/python benchmarks/bench_fits.py [--rev a04a907] [--pairs 300000]
[--boot 300] [--cases compare,effects,demo]``
"""
from __future__ import annotations

import argparse
import os
import pickle
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

REPO = Path(__file__).resolve().parents[1]
BY = ("band", "distance", "bearing")


def peak_mb() -> float:
    kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return kb / 1024.0 if sys.platform != "darwin" else kb / 1024.0 / 1024.0


def numeric(frame: pd.DataFrame) -> np.ndarray:
    return frame.select_dtypes("number").to_numpy(dtype=float)


def child(case: str, path: str, n_boot: int, out: str) -> None:
    """One case on the spotkit that is first on ``sys.path``; figures and results to
    ``out``."""
    import spotkit
    from spotkit.compare.estimate import compare_antennas, estimate_groups
    from spotkit.compare.grouping import summarise_pairs
    from spotkit.compare.pairing import pair_spots

    fig, res = {"tree": str(Path(spotkit.__file__).parents[1])}, {}
    if case in ("compare", "effects"):
        spots = pd.read_parquet(path)
        if case == "compare":
            pairs = pair_spots(spots, "simultaneous", "Q1AAA", "Q1AAB")
            counts = summarise_pairs(pairs, BY)
            del pairs
            t = time.perf_counter()
            res["estimate_groups"] = numeric(estimate_groups(counts, n_boot=n_boot, seed=0))
            fig["estimate_groups"] = time.perf_counter() - t
            del counts
            t = time.perf_counter()
            r = compare_antennas(spots, "simultaneous", "Q1AAA", "Q1AAB", by=BY,
                                 n_boot=n_boot)
            fig["compare_antennas"] = time.perf_counter() - t
        else:
            t = time.perf_counter()
            r = compare_antennas(spots, "simultaneous", "Q1AAA", "Q1AAB", by=("band",),
                                 n_boot=n_boot, model="receiver-effects")
            fig["receiver-effects"] = time.perf_counter() - t
        res[case] = numeric(r.to_frame())
    else:
        from spotkit.demo import DEMO_EXPERIMENTS, demo_data_dir
        from spotkit.io.ingest import read_spots
        from spotkit.report import standard_comparisons
        from spotkit.sim.truth import Truth

        total = 0.0
        for stem, (design, by) in DEMO_EXPERIMENTS.items():
            truth = Truth.from_json(demo_data_dir() / f"{stem}.truth.json")
            spots = read_spots([demo_data_dir() / f"{stem}.csv.gz"], progress=False).spots
            t = time.perf_counter()
            results, map_result = standard_comparisons(spots, design, truth.a, truth.b, by=by,
                                                       n_boot=n_boot, progress=False)
            total += time.perf_counter() - t
            for i, r in enumerate([*results, map_result]):
                if r is not None:
                    res[f"demo {stem} {i}"] = numeric(r.to_frame())
        fig["demo compare"] = total
    fig["peak memory"] = peak_mb()
    with open(out, "wb") as f:
        pickle.dump((fig, res), f)


def run_case(tree: Path, case: str, path: str, n_boot: int, tmp: str):
    out = os.path.join(tmp, f"{case}-{abs(hash(str(tree)))}.pkl")
    env = dict(os.environ, PYTHONPATH=str(tree))
    subprocess.run([sys.executable, __file__, "--child", case, path, str(n_boot), out],
                   env=env, cwd=tmp, check=True)
    with open(out, "rb") as f:
        fig, res = pickle.load(f)
    if Path(fig["tree"]).resolve() != tree.resolve():
        raise SystemExit(f"imported spotkit from {fig['tree']}, expected {tree}")
    return fig, res


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rev", default="a04a907", help="baseline revision (default a04a907)")
    ap.add_argument("--pairs", type=int, default=300_000)
    ap.add_argument("--boot", type=int, default=300)
    ap.add_argument("--effects-pairs", type=int, default=60_000)
    ap.add_argument("--effects-boot", type=int, default=100)
    ap.add_argument("--demo-boot", type=int, default=1000)
    ap.add_argument("--cases", default="compare,effects,demo")
    ap.add_argument("--child", nargs=4, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        case, path, n_boot, out = args.child
        child(case, path, int(n_boot), out)
        return 0
    sys.path.insert(0, str(Path(__file__).parent))
    from bench_compare import make_spots

    cases = [c.strip() for c in args.cases.split(",") if c.strip()]
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        old = Path(tmp) / "baseline"
        subprocess.run(["git", "-C", str(REPO), "worktree", "add", "--detach", "-q", str(old),
                        args.rev], check=True)
        try:
            for case in cases:
                path, n_boot = "", args.demo_boot
                if case in ("compare", "effects"):
                    n_pairs, n_boot = ((args.pairs, args.boot) if case == "compare" else
                                       (args.effects_pairs, args.effects_boot))
                    path = os.path.join(tmp, f"{case}.parquet")
                    make_spots(n_pairs, n_rx=3000 if case == "compare" else 300,
                               seed=0).to_parquet(path)
                f_old, r_old = run_case(old, case, path, n_boot, tmp)
                f_new, r_new = run_case(REPO, case, path, n_boot, tmp)
                diff = 0.0
                for key, a in r_old.items():
                    b = r_new[key]
                    if a.shape != b.shape or not np.array_equal(np.isnan(a), np.isnan(b)):
                        diff = float("inf")
                        continue
                    ok = np.isfinite(a)
                    if ok.any():
                        diff = max(diff, float(np.max(np.abs(a[ok] - b[ok]))))
                for name, v_old in f_old.items():
                    if name == "tree":
                        continue
                    unit = "MB" if name == "peak memory" else "s"
                    rows.append((case, name, v_old, f_new[name], unit))
                rows.append((case, "largest result difference", diff, None, ""))
                print(f"done: {case}", file=sys.stderr)
        finally:
            subprocess.run(["git", "-C", str(REPO), "worktree", "remove", "--force", str(old)],
                           check=False)
    print(f"detection-model fits: revision {args.rev} against this tree "
          f"(compare: {args.pairs:,} pairs, {args.boot} resamples; receiver-effects: "
          f"{args.effects_pairs:,} pairs, {args.effects_boot} resamples; demo: "
          f"{args.demo_boot} resamples)")
    print(f"{'case':<8} {'figure':<27} {'revision ' + args.rev:>18} {'this tree':>12} "
          f"{'ratio':>6}")
    for case, name, v_old, v_new, unit in rows:
        if v_new is None:
            print(f"{case:<8} {name:<27} {v_old:>18.1e}  (numeric columns, dB and p)")
            continue
        print(f"{case:<8} {name:<27} {v_old:>15,.1f} {unit:<2} {v_new:>9,.1f} {unit:<2} "
              f"{v_new / v_old:>6.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
