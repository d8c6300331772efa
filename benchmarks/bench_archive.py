"""Benchmark: a large partitioned spot archive aggregated on Dask, and bounded-memory ingest.

1. Writes an archive of ``--rows`` spots (default 100 million) in the layout of
   :mod:`spotkit.io.store` (``band=/day=`` directories, a manifest) under ``--dir`` (outside the
   repository), straight from numpy to Parquet with dictionary-coded calls and locators and
   only the columns the coverage needs plus a few. An archive of the same size already
   there is reused.
2. Aggregates it into a coverage table per band and receiver locator square
   (:func:`spotkit.distributed.coverage_dask`) on a ``distributed.LocalCluster`` with one
   worker and then with two workers (one thread each, separate processes); prints rows per
   second, the ratio (target >= 1.6) and the peak memory of the whole process tree,
   workers included (target < 4 GB), sampled every 50 ms from /proc via psutil. The two
   tables must be identical.
3. Writes a time-ordered spot CSV three times larger than a memory cap (``--memory-mb``,
   default 1500 MiB; rows from about one million distinct locator pairs, one day of slots per
   500,000 rows) and ingests it into an archive with
   :func:`spotkit.io.archive.ingest_to_dataset` (``memory_mb`` = the cap: duplicate keys of
   the latest slot day only) in a child process; prints the cap and the child's peak
   resident memory (target: under the cap). A cap below what the memory model needs is
   refused; then the run is made with small chunks and the refusal printed beside it.

Usage::

    .venv/bin/python benchmarks/bench_archive.py --rows 2000000
    .venv/bin/python benchmarks/bench_archive.py            # 100 million rows
    .venv/bin/python benchmarks/bench_archive.py --skip-coverage --memory-mb 1500

The machine is shared: the 2-worker speed-up needs two idle cores; the load average is
printed beside the figures.
"""
from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pandas as pd
import psutil
import pyarrow as pa
import pyarrow.parquet as pq

from spotkit import columns as C
from spotkit import distributed as D
from spotkit.bands import BEACON_DIAL_KHZ
from spotkit.errors import UsageError
from spotkit.geo.locator import latlon_to_locator
from spotkit.io import archive, store
from spotkit.units import POWER_LADDER_DBM

BANDS = ["160m", "80m", "40m", "30m", "20m", "17m", "15m", "12m", "10m", "6m"]
N_RX = 3000
N_TX = 5000
ROWS_PER_FILE = 500_000
GB = 1e9


# --- memory sampling -----------------------------------------------------------------------
class TreeMemory:
    """Peak summed RSS of a process and all its descendants, sampled in a thread."""

    def __init__(self, pid: int | None = None, every_s: float = 0.05):
        self.proc = psutil.Process(pid or os.getpid())
        self.every_s = every_s
        self.peak = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def sample(self) -> int:
        total = 0
        try:
            procs = [self.proc] + self.proc.children(recursive=True)
        except psutil.NoSuchProcess:
            return 0
        for p in procs:
            try:
                total += p.memory_info().rss
            except psutil.NoSuchProcess:
                pass
        return total

    def _run(self):
        while not self._stop.is_set():
            self.peak = max(self.peak, self.sample())
            time.sleep(self.every_s)

    def __enter__(self):
        self.peak = self.sample()
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()
        self.peak = max(self.peak, self.sample())


# --- archive generator -----------------------------------------------------------------------
def _stations(rng):
    rx_lat = np.degrees(np.arcsin(rng.uniform(-0.95, 0.95, N_RX)))
    rx_lon = rng.uniform(-180, 180, N_RX)
    rx_loc = np.asarray(latlon_to_locator(rx_lat, rx_lon, precision=6), dtype=object)
    rx_call = np.array([f"Q{i % 10}R{i:04d}" for i in range(N_RX)], dtype=object)
    tx_call = np.array([f"Q{i % 10}T{i:04d}" for i in range(N_TX)], dtype=object)
    return rx_call, rx_loc, tx_call


def make_archive(root: Path, rows: int, seed: int = 7) -> float:
    """Write the archive; returns seconds taken."""
    t0 = time.perf_counter()
    if root.exists():
        shutil.rmtree(root)
    root.mkdir(parents=True)
    rng = np.random.default_rng(seed)
    rx_call, rx_loc, tx_call = _stations(rng)
    rx_call_d, rx_loc_d, tx_call_d = (pa.array(x, pa.string()) for x in (rx_call, rx_loc, tx_call))
    n_files = max(1, int(np.ceil(rows / ROWS_PER_FILE)))
    days = max(1, n_files // len(BANDS))
    day0 = pd.Timestamp("2026-01-01", tz="UTC")
    files, written = [], 0
    schema = pa.schema([
        (C.SLOT, pa.timestamp("ns", tz="UTC")), (C.TX_CALL, pa.dictionary(pa.int32(), pa.string())),
        (C.RX_CALL, pa.dictionary(pa.int32(), pa.string())),
        (C.RX_LOCATOR, pa.dictionary(pa.int32(), pa.string())),
        (C.FREQ, pa.float64()), (C.SNR, pa.float64()), (C.POWER, pa.float64())])
    for i in range(n_files):
        n = min(ROWS_PER_FILE, rows - written)
        band = BANDS[i % len(BANDS)]
        day = day0 + pd.Timedelta(days=(i // len(BANDS)) % days)
        slot = day.value + rng.integers(0, 720, n, dtype=np.int64) * 120_000_000_000
        rx = rng.integers(0, N_RX, n, dtype=np.int32)
        tx = rng.integers(0, N_TX, n, dtype=np.int32)
        snr = np.clip(np.round(rng.normal(-15, 8, n)), -30, 25)
        power = POWER_LADDER_DBM[rng.integers(4, 16, n)]
        freq = BEACON_DIAL_KHZ[band] * 1e3 + 1400 + rng.integers(0, 200, n)
        table = pa.Table.from_arrays([
            pa.array(slot, pa.timestamp("ns", tz="UTC")),
            pa.DictionaryArray.from_arrays(pa.array(tx), tx_call_d),
            pa.DictionaryArray.from_arrays(pa.array(rx), rx_call_d),
            pa.DictionaryArray.from_arrays(pa.array(rx), rx_loc_d),
            pa.array(freq), pa.array(snr), pa.array(power)], schema=schema)
        rel = f"{C.BAND}={band}/{store.DAY}={day.date().isoformat()}/part-bench{i:05d}.parquet"
        (root / rel).parent.mkdir(parents=True, exist_ok=True)
        pq.write_table(table, root / rel, row_group_size=store.ROW_GROUP_ROWS)
        files.append(rel)
        written += n
    manifest = {"format": 1, "partition_by": [C.BAND, store.DAY], "batches": [{
        "token": "bench", "sha256": None, "source": "bench_archive.py", "rows": written,
        "rejected": 0, "written_utc": pd.Timestamp.now(tz="UTC").isoformat(), "files": files}]}
    (root / store.MANIFEST_NAME).write_text(json.dumps(manifest))
    return time.perf_counter() - t0


def archive_rows(root: Path) -> int:
    try:
        return int(sum(b["rows"] for b in store.dataset_manifest(root)["batches"]))
    except Exception:  # any problem: regenerate
        return -1


def warm_cache(root: Path) -> None:
    """Read every file once so both timed runs find it in the page cache."""
    for p in root.rglob("*.parquet"):
        with open(p, "rb") as fh:
            while fh.read(1 << 24):
                pass


# --- measurements -----------------------------------------------------------------------------
def run_coverage(root: Path, n_workers: int, rows: int):
    from distributed import Client, LocalCluster

    with LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True,
                      dashboard_address=":0", memory_limit="1.5GB") as cluster, \
            Client(cluster) as client:
        client.run(lambda: None)  # workers up
        with TreeMemory() as mem:
            t0 = time.perf_counter()
            table = D.coverage_dask(root, ("band", "square"), scheduler=client)
            secs = time.perf_counter() - t0
    return table, secs, mem.peak


def cpu_parallelism(loops: int = 20_000_000) -> float:
    """How many times faster two CPU-bound processes run side by side than one after the
    other (2.0 on two idle cores; 1.0 when only one core is free)."""
    code = f"x = 0\nfor i in range({loops}): x += i"

    def run(n):
        t0 = time.perf_counter()
        procs = [subprocess.Popen([sys.executable, "-c", code]) for _ in range(n)]
        for p in procs:
            p.wait()
        return time.perf_counter() - t0

    one = run(1)
    two = run(2)
    return 2 * one / two


def make_csv(path: Path, target_bytes: int, seed: int = 3, n_pairs: int = 1_000_000) -> int:
    """Write a spot CSV of about ``target_bytes``; returns rows written.

    Rows come from ``n_pairs`` distinct (transmitter, receiver) pairs of N_TX transmitters
    and N_RX receivers, one day of slots per block of 500,000 rows.
    """
    rng = np.random.default_rng(seed)
    rx_call, rx_loc, tx_call = _stations(rng)
    tx_loc = np.asarray(latlon_to_locator(rng.uniform(-60, 70, N_TX), rng.uniform(-180, 180, N_TX),
                                          precision=6), dtype=object)
    pair_tx = rng.integers(0, N_TX, n_pairs)
    pair_rx = rng.integers(0, N_RX, n_pairs)
    dial = np.array([BEACON_DIAL_KHZ[b] for b in BANDS[2:9]])
    block = 500_000
    rows = 0
    t = pd.Timestamp("2026-02-01", tz="UTC").value
    with open(path, "w") as fh:
        fh.write("time,tx call,tx locator,rx call,rx locator,frequency hz,snr,power dbm,drift\n")
        while fh.tell() < target_bytes:
            pair = rng.integers(0, n_pairs, block)
            tx, rx = pair_tx[pair], pair_rx[pair]
            freq = dial[rng.integers(0, len(dial), block)]
            slot = t + np.sort(rng.integers(0, 720, block)) * 120_000_000_000
            df = pd.DataFrame({
                "time": pd.to_datetime(slot, utc=True).strftime("%Y-%m-%d %H:%M:%S"),
                "tx": tx_call[tx], "txl": tx_loc[tx], "rx": rx_call[rx], "rxl": rx_loc[rx],
                "f": (freq * 1e3 + 1400 + rng.integers(0, 200, block)).astype(np.int64),
                "snr": rng.integers(-30, 20, block),
                "p": POWER_LADDER_DBM[rng.integers(4, 16, block)].astype(int),
                "d": rng.integers(-2, 3, block)})
            df.to_csv(fh, header=False, index=False)
            rows += block
            t += 86_400_000_000_000
    return rows


def run_ingest(csv: Path, root: Path, memory_mb: float | None, chunk_rows: int | None):
    if root.exists():
        shutil.rmtree(root)
    code = ("import sys; from spotkit import archive; "
            "m = None if sys.argv[3] == 'none' else float(sys.argv[3]); "
            "c = None if sys.argv[4] == 'none' else int(sys.argv[4]); "
            "s = archive.ingest_to_dataset(sys.argv[1], sys.argv[2], memory_mb=m, chunk_rows=c); "
            "print(s.accepted, s.rejected, s.duplicates)")
    t0 = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-c", code, str(csv), str(root),
                             str(memory_mb or "none"), str(chunk_rows or "none")],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    with TreeMemory(proc.pid, every_s=0.02) as mem:
        out, err = proc.communicate()
    secs = time.perf_counter() - t0
    if proc.returncode:
        raise SystemExit(f"ingest failed:\n{err}")
    return out.strip(), secs, mem.peak


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--rows", type=int, default=100_000_000)
    ap.add_argument("--dir", default="/tmp/spotkit_bench")
    ap.add_argument("--memory-mb", type=float, default=1500.0,
                    help="memory cap of the ingest run [MiB]; the CSV is 3x this")
    ap.add_argument("--fallback-chunk", type=int, default=50_000,
                    help="chunk rows when the cap is refused by the memory model")
    ap.add_argument("--skip-ingest", action="store_true")
    ap.add_argument("--skip-coverage", action="store_true")
    args = ap.parse_args(argv)
    base = Path(args.dir)
    base.mkdir(parents=True, exist_ok=True)
    print(f"load average at start: {os.getloadavg()}; cores: {os.cpu_count()}")
    if not args.skip_coverage:
        root = base / f"archive_{args.rows}"
        if archive_rows(root) != args.rows:
            secs = make_archive(root, args.rows)
            print(f"wrote {args.rows:,} rows in {len(store.archive_files(root))} files in "
                  f"{secs:.1f} s ({args.rows / secs / 1e6:.2f} M rows/s)")
        size = sum(p.stat().st_size for p in root.rglob("*.parquet"))
        print(f"archive: {root} ({size / GB:.2f} GB on disk)")
        warm_cache(root)
        results = {}
        for n in (1, 2):
            table, secs, peak = run_coverage(root, n, args.rows)
            results[n] = (table, secs, peak)
            print(f"coverage per band x square, {n} worker(s): {secs:.1f} s, "
                  f"{args.rows / secs / 1e6:.2f} M rows/s, peak memory (process tree) "
                  f"{peak / GB:.2f} GB (target < 4 GB); {len(table):,} rows; "
                  f"load {os.getloadavg()[0]:.1f}")
        pd.testing.assert_frame_equal(results[1][0], results[2][0])
        assert int(results[2][0][C.COUNT].sum()) == args.rows
        ratio = results[1][1] / results[2][1]
        print(f"throughput 2 workers / 1 worker: {ratio:.2f}x (target >= 1.6); "
              f"tables identical; counts sum to {args.rows:,}")
        print(f"machine check: two CPU-bound processes side by side ran "
              f"{cpu_parallelism():.2f}x as fast as one after the other (2.0 = two free cores)")
    if not args.skip_ingest:
        csv = base / "ingest_input.csv"
        target = int(3 * args.memory_mb * 2**20)
        stamp = base / "ingest_input.made"
        stale = not csv.exists() or not stamp.exists()
        if stale or abs(csv.stat().st_size - target) > 0.1 * target:
            t0 = time.perf_counter()
            n = make_csv(csv, target)
            stamp.write_text("1M pairs\n")
            print(f"wrote CSV {csv.stat().st_size / 2**20:.0f} MiB ({n:,} rows) in "
                  f"{time.perf_counter() - t0:.1f} s")
        size = csv.stat().st_size
        try:
            # what ingest_to_dataset does under a cap: duplicate keys of the latest slot day
            # only, chunk rows from the cap
            chunk = archive.chunk_rows_for_memory(args.memory_mb)
            how, mem_arg, chunk_arg = (
                f"memory_mb={args.memory_mb:.0f} -> chunk {chunk:,} rows, duplicate keys of "
                f"the latest {archive.DEDUPE_WINDOW_DAYS} slot day(s)", args.memory_mb, None)
        except UsageError as exc:
            how, mem_arg, chunk_arg = f"cap refused by the memory model ({exc}); measured " \
                f"with chunk_rows={args.fallback_chunk:,}", None, args.fallback_chunk
        out, secs, peak = run_ingest(csv, base / "ingest_archive", mem_arg, chunk_arg)
        n_rows = int(out.split()[0]) + int(out.split()[1]) + int(out.split()[2])
        print(f"ingest of a {size / 2**20:.0f} MiB CSV ({n_rows:,} rows, "
              f"{size / args.memory_mb / 2**20:.1f}x the cap) with memory cap "
              f"{args.memory_mb:.0f} MiB: {how}; peak {peak / 2**20:.0f} MiB "
              f"({'under' if peak < args.memory_mb * 2**20 else 'OVER'} the cap), {secs:.1f} s "
              f"({n_rows / secs / 1e3:.0f} k rows/s); accepted/rejected/duplicates {out}; "
              f"load {os.getloadavg()[0]:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
