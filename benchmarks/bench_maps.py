"""Benchmark: render times of the maps (targets from the maps issue).

1. A coverage map of 50,000 distinct receivers with their great-circle paths
   (target: render < 15 s on 2 cores).
2. A difference map aggregated from 1 million pairs: compress the pairs per band and locator
   square (spotkit.compare.grouping.summarise_pairs), estimate B minus A per square
   (spotkit.compare.estimate.estimate_groups) and draw it (target: render < 15 s; the aggregation
   time is printed beside it).

The data are invented here (receivers at random places on land, Q-prefix calls). Run:
``.venv/bin/python benchmarks/bench_maps.py [--receivers 50000] [--pairs 1000000]``.
"""
from __future__ import annotations

import argparse
import os
import tempfile
import time

os.environ.setdefault("MPLBACKEND", "Agg")

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.geo.locator import latlon_to_locator, locator_to_latlon
from spotkit.viz.basemap import is_land

HOME = "JN58td"
TARGET_S = 15.0


def _places(n, rng):
    lat = np.empty(0)
    lon = np.empty(0)
    while lat.size < n:
        la = np.degrees(np.arcsin(rng.uniform(-0.85, 0.95, 4 * n)))
        lo = rng.uniform(-180, 180, 4 * n)
        keep = is_land(la, lo)
        lat, lon = np.r_[lat, la[keep]], np.r_[lon, lo[keep]]
    return lat[:n], lon[:n]


def coverage_spots(n_receivers: int, rng) -> pd.DataFrame:
    from spotkit.geo.geodesic import geodesic_inverse

    lat, lon = _places(n_receivers, rng)
    loc = latlon_to_locator(lat, lon, 8)
    rl, ro = locator_to_latlon(loc)
    hl, ho = locator_to_latlon(HOME)
    d, az, baz = geodesic_inverse(np.full(rl.size, hl), np.full(rl.size, ho), rl, ro)
    d = np.asarray(d) / 1e3
    return pd.DataFrame({
        C.BAND: "20m", C.TX_CALL: "Q1ABC", C.TX_LOCATOR: HOME,
        C.RX_CALL: [f"Q{i % 10}X{i:06d}" for i in range(rl.size)], C.RX_LOCATOR: loc,
        C.RX_LAT: rl, C.RX_LON: ro, C.DISTANCE: d, C.BEARING: az, C.REVERSE_BEARING: baz,
        C.SNR: np.round(-5 - d / 600 + rng.normal(0, 5, rl.size)), C.POWER: 37.0,
    })


def pairs_table(n_pairs: int, n_receivers: int, rng) -> pd.DataFrame:
    lat, lon = _places(n_receivers, rng)
    loc = latlon_to_locator(lat, lon, 6)
    rl, ro = locator_to_latlon(loc)
    r = rng.integers(0, n_receivers, n_pairs)
    band = np.where(rng.random(n_pairs) < 0.5, "20m", "10m")
    level = rng.normal(-12, 8, n_pairs)
    true = np.where(band == "10m", 1.5, 0.0) + 0.2 * np.sin(np.radians(ro[r]))
    sa = np.round(level + rng.normal(0, 1.5, n_pairs))
    sb = np.round(level + true + rng.normal(0, 1.5, n_pairs))
    limit = -28.0 - 7.0  # threshold -28 dB at 37 dBm, per watt
    ha, hb = sa >= limit, sb >= limit
    keep = ha | hb
    calls = np.array([f"Q{i % 10}Y{i:05d}" for i in range(n_receivers)])
    df = pd.DataFrame({
        C.CLUSTER: calls[r], C.BAND: band, C.FAR_CALL: calls[r], C.FAR_LOCATOR: loc[r],
        C.FAR_LAT: rl[r], C.FAR_LON: ro[r], C.TX_LOCATOR: HOME, C.RX_LOCATOR: loc[r],
        C.SNR_A: np.where(ha, sa, np.nan), C.SNR_B: np.where(hb, sb, np.nan),
        C.LIMIT_A: limit, C.LIMIT_B: limit, C.HEARD_A: ha, C.HEARD_B: hb,
    })
    return df[keep].reset_index(drop=True)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--receivers", type=int, default=50_000)
    ap.add_argument("--pairs", type=int, default=1_000_000)
    ap.add_argument("--pair-receivers", type=int, default=5_000)
    ap.add_argument("--boot", type=int, default=1000)
    args = ap.parse_args(argv)
    import matplotlib.pyplot as plt

    from spotkit.compare.estimate import estimate_groups
    from spotkit.compare.grouping import summarise_pairs
    from spotkit.viz import maps

    rng = np.random.default_rng(20261201)
    out = tempfile.mkdtemp(prefix="bench_maps_")

    spots = coverage_spots(args.receivers, rng)
    t0, c0 = time.perf_counter(), time.process_time()
    fig = maps.coverage_map(spots, paths=True)
    fig.savefig(os.path.join(out, "coverage.png"), dpi=100)
    t_cov, c_cov = time.perf_counter() - t0, time.process_time() - c0
    plt.close(fig)
    t0, c0 = time.perf_counter(), time.process_time()
    fig = maps.coverage_map(spots, paths=True, projection="world")
    fig.savefig(os.path.join(out, "coverage_world.png"), dpi=100)
    t_cov_w, c_cov_w = time.perf_counter() - t0, time.process_time() - c0
    plt.close(fig)

    pairs = pairs_table(args.pairs, args.pair_receivers, rng)
    t0, c0 = time.perf_counter(), time.process_time()
    counts = summarise_pairs(pairs, by=("band", "square"))
    groups = estimate_groups(counts, n_boot=args.boot, seed=0)
    t_agg, c_agg = time.perf_counter() - t0, time.process_time() - c0
    t0, c0 = time.perf_counter(), time.process_time()
    fig = maps.difference_map(groups, pairs=pairs)
    fig.savefig(os.path.join(out, "difference.png"), dpi=100)
    t_diff, c_diff = time.perf_counter() - t0, time.process_time() - c0
    plt.close(fig)

    def row(what, wall, cpu, target=True):
        verdict = ("ok" if wall < TARGET_S else "MISSED") if target else ""
        goal = f"< {TARGET_S:.0f} s" if target else "(no target)"
        print(f"{what:56s} {wall:8.2f} {cpu:8.2f}  {goal} {verdict}")

    print(f"{'what':56s} {'wall s':>8s} {'cpu s':>8s}  target (wall)")
    row(f"coverage map, {len(spots):,} receivers + paths, azimuthal", t_cov, c_cov)
    row(f"coverage map, {len(spots):,} receivers + paths, world", t_cov_w, c_cov_w)
    row(f"difference map render, {len(groups):,} band x square groups", t_diff, c_diff)
    row(f"  aggregation of {len(pairs):,} pairs, {args.boot} resamples", t_agg, c_agg, False)
    row("  difference map, aggregation + render", t_agg + t_diff, c_agg + c_diff, False)
    print("cpu s = this process's CPU time; wall > cpu means the machine was busy")
    print(f"pictures in {out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
