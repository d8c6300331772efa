"""Benchmark: ingest of a large spot CSV against a bare ``pandas.read_csv`` of the same file.

Makes an invented spot CSV (default 10 million rows, about 600 MB; ``--rows`` to change) in a
temporary directory outside the repository, whose rows come from about 1 million distinct
(tx_locator, rx_locator) pairs, 5,000 transmitters and 3,000 receivers (Q-prefix calls).
Then measures, each in its own subprocess so that peak memory (VmHWM of the
process; ru_maxrss where /proc is missing) is per measurement:

1. ``pandas.read_csv(path)`` with default settings (the baseline);
2. ``spotkit.io.ingest.ingest_to_parquet(path, out, chunk_rows=...)`` (streamed, bounded memory);
3. optionally (``--read-spots``) ``spotkit.read_spots(path)`` in one go.

Each is measured ``--repeat`` times (default 3), interleaved, and the fastest run of each is
compared (other work on a shared machine only slows a run down). Prints wall-clock times,
rows per second, the ratio to the baseline (target <= 3x), the peak
memory (target < 6 GB) and the CPU time of each measurement (user + system, all threads: the
ingest reads, cleans and writes in overlapping threads, so on a busy machine its wall-clock
time depends on the free cores; the CPU time shows the work done).

    .venv/bin/python benchmarks/bench_ingest.py --rows 2000000
"""
from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv

TARGET_RATIO = 3.0
TARGET_PEAK_GB = 6.0
HEADINGS = ["time", "tx call", "tx locator", "rx call", "rx locator", "frequency mhz", "snr",
            "power dbm", "drift"]


def _locators(rng, n):
    """n random 6-character locators (field, square, subsquare)."""
    a = rng.integers(0, 18, (n, 2))
    d = rng.integers(0, 10, (n, 2))
    s = rng.integers(0, 24, (n, 2))
    field = np.array(list("ABCDEFGHIJKLMNOPQR"))
    chars = [field[a[:, 0]], field[a[:, 1]],
             d[:, 0].astype(str), d[:, 1].astype(str),
             np.array(list("abcdefghijklmnopqrstuvwx"))[s[:, 0]],
             np.array(list("abcdefghijklmnopqrstuvwx"))[s[:, 1]]]
    out = chars[0]
    for c in chars[1:]:
        out = np.char.add(out, c)
    return out


def _calls(prefix_digit_rng, n, tag):
    digits = prefix_digit_rng.integers(0, 10, n).astype(str)
    return np.char.add(np.char.add("Q", digits), np.char.add(tag, np.arange(n).astype(str)))


def make_csv(path: Path, rows: int, *, pairs=1_000_000, n_tx=5_000, n_rx=3_000, seed=1,
             block=1_000_000) -> None:
    """Write the benchmark CSV (invented data) to ``path``."""
    rng = np.random.default_rng(seed)
    tx_call, rx_call = _calls(rng, n_tx, "T"), _calls(rng, n_rx, "R")
    tx_loc, rx_loc = _locators(rng, n_tx), _locators(rng, n_rx)
    pair_ids = rng.choice(n_tx * n_rx, size=min(pairs, n_tx * n_rx), replace=False)
    dial = np.array([14.0956, 7.0386, 10.1387, 28.1246, 21.0946, 3.5686])
    slot0 = pd.Timestamp("2026-03-01", tz="UTC").value // 10**9
    with open(path, "wb") as fh:
        fh.write((",".join(HEADINGS) + "\n").encode())
        done = 0
        while done < rows:
            n = min(block, rows - done)
            pid = pair_ids[rng.integers(0, pair_ids.size, n)]
            ti, ri = pid // n_rx, pid % n_rx
            slots = slot0 + 120 * np.sort(rng.integers(0, 30 * 720, n))
            times = pd.to_datetime(slots, unit="s").strftime("%Y-%m-%d %H:%M")
            freq = dial[rng.integers(0, dial.size, n)] + rng.integers(1400, 1600, n) * 1e-6
            table = pa.table({
                "time": pa.array(np.asarray(times, dtype=object), pa.string()),
                "tx call": tx_call[ti], "tx locator": tx_loc[ti],
                "rx call": rx_call[ri], "rx locator": rx_loc[ri],
                "frequency mhz": np.round(freq, 6),
                "snr": rng.integers(-30, 10, n), "power dbm": rng.choice([23, 30, 37], n),
                "drift": rng.integers(-1, 2, n),
            })
            buf = pa.BufferOutputStream()
            pacsv.write_csv(table, buf, pacsv.WriteOptions(include_header=False,
                                                            quoting_style="none"))
            fh.write(buf.getvalue().to_pybytes())
            done += n


_BASE = """
import resource, time, json, sys
_ru = resource.getrusage(resource.RUSAGE_SELF)
cpu0 = _ru.ru_utime + _ru.ru_stime
t = time.perf_counter()
{body}
dt = time.perf_counter() - t
ru = resource.getrusage(resource.RUSAGE_SELF)
hwm = [l for l in open("/proc/self/status") if l.startswith("VmHWM")]
peak = int(hwm[0].split()[1]) if hwm else ru.ru_maxrss
print(json.dumps({{"seconds": dt, "cpu_seconds": ru.ru_utime + ru.ru_stime - cpu0,
                  "peak_kb": peak, "extra": extra}}))
"""


def _measure(body: str) -> dict:
    code = _BASE.format(body=body)
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    if res.returncode:
        raise SystemExit(res.stderr)
    return json.loads(res.stdout.strip().splitlines()[-1])


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=10_000_000)
    ap.add_argument("--chunk-rows", type=int, default=1_000_000)
    ap.add_argument("--read-spots", action="store_true", help="also time read_spots in one go")
    ap.add_argument("--repeat", type=int, default=3,
                    help="measure each this many times, interleaved, and keep the fastest")
    ap.add_argument("--keep", action="store_true", help="keep the temporary directory")
    ap.add_argument("--csv", type=Path, help="use this CSV made by an earlier run (--keep) "
                    "instead of making one; --rows must match it")
    args = ap.parse_args(argv)
    tmp = Path(tempfile.mkdtemp(prefix="spotkit_bench_ingest_"))
    csv_path = args.csv or tmp / "spots.csv"
    if args.csv is None:
        t = time.perf_counter()
        make_csv(csv_path, args.rows)
        print(f"made {args.rows:,} rows ({csv_path.stat().st_size / 1e6:,.0f} MB) in "
              f"{time.perf_counter() - t:.1f} s: {csv_path}")
    else:
        print(f"using {csv_path} ({csv_path.stat().st_size / 1e6:,.0f} MB)")
    runs = {
        "pandas.read_csv": f"import pandas as pd\ndf = pd.read_csv({str(csv_path)!r})\n"
                           "extra = len(df)",
        "ingest_to_parquet": "from spotkit.io.ingest import ingest_to_parquet\n"
                             f"s = ingest_to_parquet({str(csv_path)!r}, "
                             f"{str(tmp / 'out.parquet')!r}, chunk_rows={args.chunk_rows})\n"
                             "extra = [s.rows_read, s.accepted, s.rejected, s.duplicates]",
    }
    if args.read_spots:
        runs["read_spots"] = ("from spotkit.io.ingest import read_spots\n"
                              f"r = read_spots({str(csv_path)!r})\n"
                              "s = r.summary\nextra = [s.rows_read, s.accepted, s.rejected, "
                              "s.duplicates]")
    # interleaved repeats, the fastest of each kept: other work on the machine only ever
    # slows a run down, so the minimum is the least disturbed figure of each
    every = {name: [] for name in runs}
    for _ in range(args.repeat):
        for name, body in runs.items():
            every[name].append(_measure(body))
    results = {name: min(rs, key=lambda r: r["seconds"]) for name, rs in every.items()}
    if args.repeat > 1:
        for name, rs in every.items():
            print(f"{name}: " + ", ".join(f"{r['seconds']:.1f}" for r in rs) + " s")
    base = results["pandas.read_csv"]["seconds"]
    print(f"{'measurement':<20}{'seconds':>9}{'rows/s':>14}{'x read_csv':>12}{'peak GB':>9}"
          f"{'CPU s':>8}")
    ok = True
    for name, r in results.items():
        ratio = r["seconds"] / base
        peak = r["peak_kb"] / 1e6
        print(f"{name:<20}{r['seconds']:>9.1f}{args.rows / r['seconds']:>14,.0f}"
              f"{ratio:>12.2f}{peak:>9.2f}{r['cpu_seconds']:>8.1f}   "
              f"{r['extra'] if name != 'pandas.read_csv' else ''}")
        if name != "pandas.read_csv":
            ok &= ratio <= TARGET_RATIO and peak < TARGET_PEAK_GB
    print(f"targets: ratio <= {TARGET_RATIO:g}x read_csv, peak < {TARGET_PEAK_GB:g} GB -> "
          + ("met" if ok else "NOT met"))
    if not args.keep:
        for p in tmp.iterdir():
            p.unlink()
        tmp.rmdir()
    return 0


if __name__ == "__main__":
    sys.exit(main())
