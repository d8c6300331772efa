"""Benchmark: A/B comparison of about 2 million pairs by band x distance x bearing sector.

Targets: under 30 s and under 2 GB peak memory for ``compare_antennas`` with 1,000 cluster
bootstrap resamples. The spot table (simultaneous design, two invented calls, far
receivers at random places, four bands) is generated first and not timed; the figures
printed are the time of pairing, compressing and estimating, and the peak resident memory
of a fresh process that loads the table from Parquet and runs the comparison.

Run: ``.venv/bin/python benchmarks/bench_compare.py [--pairs 2000000] [--boot 1000]``
"""
from __future__ import annotations

import argparse
import resource
import sys
import time

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.compare.estimate import compare_antennas, estimate_groups
from spotkit.compare.grouping import summarise_pairs
from spotkit.compare.pairing import pair_spots
from spotkit.geo.geodesic import add_path_columns
from spotkit.geo.locator import latlon_to_locator

BANDS = ("40m", "20m", "15m", "10m")
FREQ = {"40m": 7.0401e6, "20m": 14.0971e6, "15m": 21.0961e6, "10m": 28.1261e6}


def make_spots(n_pairs: int, n_rx: int = 3000, seed: int = 0) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    lat = np.rad2deg(np.arcsin(rng.uniform(-0.85, 0.94, n_rx)))
    lon = rng.uniform(-180, 180, n_rx)
    loc = latlon_to_locator(lat, lon, 6)
    calls = np.array([f"Q{d}{a}{b}{c}" for d, a, b, c in zip(
        rng.integers(0, 10, n_rx), *(np.array(list("ABCDEFGHIJKLMNOPQRSTUVWXYZ"))[
            rng.integers(0, 26, n_rx)] for _ in range(3)), strict=True)])
    calls = calls + np.char.mod("%d", np.arange(n_rx))  # unique
    n_paths = int(n_pairs * 1.1)
    rx = rng.integers(0, n_rx, n_paths)
    slot = rng.integers(0, 7 * 720, n_paths)
    key = np.unique(rx.astype(np.int64) * 10_000 + slot)
    rx, slot = (key // 10_000).astype(np.int64), key % 10_000
    band = np.asarray(BANDS)[slot % len(BANDS)]
    level = -38 + rng.gamma(1.6, 7.0, rx.size)
    delta = np.array([0.5, 1.0, -0.5, 1.5])[slot % len(BANDS)]
    a = np.round(level + rng.normal(0, 1.5, rx.size) + 7)
    b = np.round(level + delta + rng.normal(0, 1.5, rx.size))
    thr = np.where(rx % 3 == 0, -30.0, -28.0)
    frames = []
    for heard, snr, call, pw in ((a >= thr, a, "Q1AAA", 37.0), (b >= thr, b, "Q1AAB", 30.0)):
        frames.append(pd.DataFrame({
            C.SLOT: pd.Timestamp("2026-03-02T00:00Z") + pd.to_timedelta(
                slot[heard] * 2, unit="min"),
            C.TX_CALL: call, C.TX_LOCATOR: "JN58td", C.RX_CALL: calls[rx[heard]],
            C.RX_LOCATOR: loc[rx[heard]], C.BAND: band[heard], C.SNR: snr[heard],
            C.POWER: pw}))
    spots = pd.concat(frames, ignore_index=True)
    spots[C.TIME] = spots[C.SLOT]
    spots[C.FREQ] = spots[C.BAND].map(FREQ).astype(float)
    spots[C.DRIFT] = 0.0
    for col in (C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.BAND):
        spots[col] = spots[col].astype("category")
    spots = add_path_columns(spots)
    spots[C.SOURCE_FILE] = pd.Categorical(["bench"] * len(spots))
    spots[C.SOURCE_ROW] = np.arange(1, len(spots) + 1)
    return spots[C.CANONICAL]


def peak_mb() -> float:
    kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return kb / 1024.0 if sys.platform != "darwin" else kb / 1024.0 / 1024.0


def run(path: str, n_boot: int) -> None:
    """Load the spot table from Parquet and compare (in a fresh process, for memory)."""
    t = time.perf_counter()
    spots = pd.read_parquet(path)
    print(f"loaded {len(spots):,} spots from Parquet in {time.perf_counter() - t:.1f} s")
    by = ("band", "distance", "bearing")
    t0 = time.perf_counter()
    pairs = pair_spots(spots, "simultaneous", "Q1AAA", "Q1AAB")
    t1 = time.perf_counter()
    counts = summarise_pairs(pairs, by)
    t2 = time.perf_counter()
    groups = estimate_groups(counts, n_boot=n_boot, seed=0)
    t3 = time.perf_counter()
    print(f"pairs: {len(pairs):,}; compressed rows: {len(counts):,}; groups: {len(groups)}; "
          f"clusters: {pairs[C.CLUSTER].nunique():,}")
    print(f"  pair_spots       {t1 - t0:6.1f} s")
    print(f"  summarise_pairs  {t2 - t1:6.1f} s")
    print(f"  estimate_groups  {t3 - t2:6.1f} s  ({n_boot} resamples)")
    del pairs, counts
    t4 = time.perf_counter()
    res = compare_antennas(spots, "simultaneous", "Q1AAA", "Q1AAB", by=by, n_boot=n_boot)
    total = time.perf_counter() - t4
    mem = peak_mb()
    print(f"compare_antennas end to end (incl. overall estimate): {total:.1f} s  "
          f"target < 30 s  [{'ok' if total < 30 else 'MISSED'}]")
    print(f"peak resident memory of this process (spot table loaded + comparison): "
          f"{mem:,.0f} MB  target < 2,048 MB  [{'ok' if mem < 2048 else 'MISSED'}]")
    print(f"overall B-A {res.overall[C.B_MINUS_A]:+.2f} dB "
          f"({res.overall[C.CI_LOW]:+.2f} to {res.overall[C.CI_HIGH]:+.2f})")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pairs", type=int, default=2_000_000)
    ap.add_argument("--boot", type=int, default=1000)
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--child", metavar="PARQUET", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        run(args.child, args.boot)
        return 0
    import subprocess
    import tempfile
    t = time.perf_counter()
    spots = make_spots(args.pairs, seed=args.seed)
    with tempfile.TemporaryDirectory() as tmp:
        path = f"{tmp}/spots.parquet"
        spots.to_parquet(path)
        print(f"generated {len(spots):,} spots in {time.perf_counter() - t:.1f} s (not timed)")
        del spots
        return subprocess.call([sys.executable, __file__, "--child", path, "--boot",
                                str(args.boot)])


if __name__ == "__main__":
    sys.exit(main())
