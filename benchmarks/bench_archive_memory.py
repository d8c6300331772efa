"""Benchmark: peak memory of an archive ingest against its chunk size and its memory cap.

Writes a time-ordered spot CSV (``--rows`` rows from ``--pairs`` distinct locator pairs of
5,000 transmitters and 3,000 receivers, one day of slots per 500,000 rows; the generator of
``bench_archive.py``) and ingests it into a fresh archive in a child process, once per
chunk size in ``--chunks`` (duplicate keys of the latest slot day only, as under a cap)
and once per memory cap in ``--caps`` (``ingest_to_dataset(memory_mb=...)``). For each run
it prints the child's peak resident memory (RSS of the process, sampled every 20 ms from
/proc by psutil) in MiB; for a cap, the chunk size the memory model chose and whether the
peak stayed under the cap, or the model's refusal. The chunk runs give the figures the
model's constants come from: the peak at the smallest chunk (the fixed part) and the
slope per row.

Usage::

    .venv/bin/python benchmarks/bench_archive_memory.py
    .venv/bin/python benchmarks/bench_archive_memory.py --rows 3000000 --caps 300,400,800
    .venv/bin/python benchmarks/against_revision.py --rev main \\
        --bench archive_memory="--rows 1000000 --chunks 20000 --caps 300,500,900"
"""
from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from bench_archive import TreeMemory, make_csv  # the script's own folder is on sys.path

MiB = 2**20

CHILD = """
import sys
from spotkit.errors import UsageError
from spotkit.io import archive
csv, root, how, value = sys.argv[1:5]
try:
    if how == "cap":
        s = archive.ingest_to_dataset(csv, root, memory_mb=float(value))
    else:
        s = archive.ingest_to_dataset(csv, root, chunk_rows=int(value),
                                      dedupe_window_days=archive.DEDUPE_WINDOW_DAYS)
except UsageError as exc:
    print("refused", exc)
    sys.exit(0)
print("ok", s.accepted, s.rejected, s.duplicates)
"""


def run(csv: Path, root: Path, how: str, value) -> tuple[str, float, float]:
    if root.exists():
        shutil.rmtree(root)
    t0 = time.perf_counter()
    # run in the work folder: "python -c" puts the current folder first on sys.path, and
    # spotkit must come from PYTHONPATH (the revision measured), not from a checkout there
    proc = subprocess.Popen([sys.executable, "-c", CHILD, str(csv), str(root), how, str(value)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            cwd=root.parent)
    with TreeMemory(proc.pid, every_s=0.02) as mem:
        out, err = proc.communicate()
    if proc.returncode:
        raise SystemExit(f"ingest failed:\n{err}")
    return out.strip(), mem.peak / MiB, time.perf_counter() - t0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--rows", type=int, default=2_000_000, help="rows of the CSV")
    ap.add_argument("--pairs", type=int, default=1_000_000, help="distinct locator pairs")
    ap.add_argument("--chunks", default="10000,50000,150000",
                    help="chunk sizes [rows], comma-separated")
    ap.add_argument("--caps", default="300,400,600,900", help="memory caps [MiB]")
    ap.add_argument("--dir", default=None, help="work folder (default: a temporary one)")
    args = ap.parse_args(argv)
    work = Path(args.dir or tempfile.mkdtemp(prefix="spotkit_mem_"))
    work.mkdir(parents=True, exist_ok=True)
    csv = work / f"input_{args.rows}_{args.pairs}.csv"
    if not csv.exists():
        make_csv(csv, target_bytes=args.rows * 66, n_pairs=args.pairs)
    print(f"CSV {csv.stat().st_size / MiB:.0f} MiB; load average {os.getloadavg()[0]:.1f}")
    from spotkit.io import archive

    for chunk in [int(c) for c in args.chunks.split(",") if c]:
        out, peak, secs = run(csv, work / "arch", "chunk", chunk)
        print(f"chunk {chunk:>7} rows: peak {peak:.0f} MiB, {secs:.1f} s ({out})")
    for cap in [float(c) for c in args.caps.split(",") if c]:
        # what the model picks (as ingest_to_dataset does; earlier revisions kept a reserve
        # apart from the cap first)
        reserve = getattr(archive, "WINDOW_RESERVE_MB", 0)
        try:
            chosen = f"chunk {archive.chunk_rows_for_memory(cap - reserve):,} rows"
        except ValueError as exc:
            chosen = f"model refuses ({exc})"
        out, peak, secs = run(csv, work / "arch", "cap", cap)
        verdict = ("refused" if out.startswith("refused")
                   else "under the cap" if peak < cap else "OVER the cap")
        print(f"cap {cap:>5.0f} -> {chosen}: peak {peak:.0f} MiB ({verdict}), {secs:.1f} s; "
              f"{out[:160]}")
    if not args.dir:
        shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
