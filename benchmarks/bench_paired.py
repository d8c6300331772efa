"""Benchmark: the Hodges-Lehmann shift on many distinct differences, time and peak memory.

:func:`spotkit.stats.paired.hodges_lehmann` (and its interval) used to form every distinct
Walsh average, ``K (K + 1) / 2`` of them from ``K`` distinct differences: fine on whole-dB
reports (a few dozen values), but differences of non-whole-dB reports are nearly all
distinct, and 60,000 of them took the machine's 24 GB. Above
:data:`~spotkit.stats.paired.WALSH_DIRECT_MAX` averages the median is now found by
bisection. Each case runs in a fresh process so that its peak memory (maximum resident
set size) is its own; the baseline is the direct table (``WALSH_DIRECT_MAX`` raised), run
only where it fits in ``--baseline-max`` distinct values.

Usage::

    .venv/bin/python benchmarks/bench_paired.py
    .venv/bin/python benchmarks/bench_paired.py --sizes 2000,10000,60000,300000
"""
from __future__ import annotations

import argparse
import json
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]

CHILD = """
import json, resource, sys, time
import numpy as np
sys.path.insert(0, {repo!r})
from spotkit.stats import paired
if {direct}:
    paired.WALSH_DIRECT_MAX = 10**18
d = np.random.default_rng(1).normal(0.7, 3.0, {n})
t0 = time.perf_counter()
hl = paired.hodges_lehmann(d)
lo, hi = paired.hodges_lehmann_ci(d)
dt = time.perf_counter() - t0
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps(dict(hl=hl, lo=lo, hi=hi, seconds=dt, peak_mb=peak)))
"""


def run(n: int, direct: bool) -> dict:
    code = CHILD.format(repo=str(REPO), direct=direct, n=n)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    return json.loads(out.stdout)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="2000,10000,60000",
                    help="numbers of distinct differences, comma-separated")
    ap.add_argument("--baseline-max", type=int, default=10_000,
                    help="largest size the direct table (the baseline) is run at")
    args = ap.parse_args(argv)
    print(f"{'distinct':>9} | {'direct table (baseline)':^27} | {'this tree':^27} | same")
    print(f"{'':>9} | {'time':>12} {'peak':>14} | {'time':>12} {'peak':>14} |")
    last = None  # (size, peak MB) of the largest baseline run so far
    for n in (int(s) for s in args.sizes.split(",")):
        new = run(n, direct=False)
        if n <= args.baseline_max:
            old = run(n, direct=True)
            base = f"{old['seconds']:10.2f} s {old['peak_mb']:11.0f} MB"
            same = all(old[k] == new[k] for k in ("hl", "lo", "hi"))
            last = (n, old["peak_mb"])
        else:
            # the table grows as K^2: extrapolated from the largest baseline run
            need = "" if last is None else f", ~{last[1] * (n / last[0]) ** 2 / 1024:.0f} GB"
            base = f"{'not run' + need:>27}"
            same = "-"
        print(f"{n:>9} | {base} | {new['seconds']:10.2f} s {new['peak_mb']:11.0f} MB | "
              f"{same}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
