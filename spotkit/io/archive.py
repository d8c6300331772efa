"""Archive ingest: spot CSV exports appended to a partitioned Parquet archive, chunk by chunk.

The files are read by :func:`spotkit.io.ingest.iter_spot_chunks`, each chunk is split by
partition and written at once through :mod:`spotkit.io.store`, so memory is bounded by the chunk
size (``memory_mb`` picks it, see :func:`chunk_rows_for_memory`) plus what the reader keeps
across chunks: its duplicate-key set (8 bytes per distinct report, briefly twice that while
two sorted runs of it merge) and its locator-pair cache. Under a memory cap
the reader keeps the keys of the latest slot days only (duplicates share their slot), so
memory no longer grows with the input; the input must then be in time order.

Crash safety: the files of one call are staged, then committed together by one atomic
manifest update under the archive's lock (:mod:`spotkit.io.manifest`); a killed run adds
nothing, and what it left is removed by the next append or ``spotkit archive repair``.

Known limits: see :mod:`spotkit.io.store` (duplicates across two overlapping exports are
removed on read with ``dedupe=True``, not on append).
"""
from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from spotkit import columns as C
from spotkit.errors import InputError, UsageError
from spotkit.io.atomic import fsync_file
from spotkit.io.ingest import IngestSummary, iter_spot_chunks
from spotkit.io.manifest import (
    REJECTS_DIR,
    check_not_taken,
    dataset_manifest,
    fault_point,
    file_hashes,
)
from spotkit.io.store import (
    PARTITION_KEYS,
    _Appender,
    _commit,
    _open_for_append,
    _to_arrow,
)

#: Resident memory of an ingest besides its chunk [MiB]: the process with pandas and pyarrow
#: loaded (about 120), the reader's pieces of the file, the duplicate keys of the latest slot
#: day under a cap, a locator-pair table of about a million pairs and the Parquet writers.
#: Measured by benchmarks/bench_archive_memory.py on 2 million time-ordered rows from a
#: million locator pairs (2-core VM, Dec 2026): peaks of 328 to 353 MiB at chunks of 2,400 to
#: 10,000 rows (296 MiB with 20,000 pairs); the runs of one setting vary by about 40 MiB.
BASE_MEMORY_MB = 360
#: Peak memory per row of a chunk [bytes]: the chunk read ahead, the one being cleaned and
#: enriched and the one being written are alive at once. Measured as above: peaks of 349 to
#: 385 MiB at 20,000 to 42,000 rows, 432 MiB at 100,000, 588 to 633 MiB at 131,000 to
#: 147,000, 613 MiB at 200,000 and 696 MiB at 274,000 rows; with :data:`BASE_MEMORY_MB` this
#: slope bounds them all.
CHUNK_BYTES_PER_ROW = 2600
#: Memory per distinct report kept by the reader to find duplicates across chunks [bytes]:
#: 8-byte hashes, twice that while its two largest sorted runs merge into one.
SEEN_BYTES_PER_ROW = 16
#: Bytes per CSV row assumed when estimating a file's row count for the duplicate keys.
CSV_BYTES_PER_ROW = 60
#: Days of slots whose duplicate keys are kept under a memory cap.
DEDUPE_WINDOW_DAYS = 1
MIN_CHUNK_ROWS = 1000


def chunk_rows_for_memory(memory_mb: float, *, total_input_bytes: int = 0) -> int:
    """Chunk size [rows] that keeps an ingest under ``memory_mb`` [MiB].

    Budget: ``memory_mb = BASE_MEMORY_MB + rows_estimate * SEEN_BYTES_PER_ROW / 2**20
    + chunk_rows * CHUNK_BYTES_PER_ROW / 2**20``, with ``rows_estimate`` the input size over
    :data:`CSV_BYTES_PER_ROW` (0 for an archive ingest under a cap, which keeps the keys of
    the latest slot day only). The constants are measurements on one machine
    (benchmarks/bench_archive_memory.py), not guarantees. Not modelled: a locator-pair table
    much larger than a million pairs (the dense table grows to 128 MiB with the number of
    distinct transmitter x receiver locators, and is briefly held twice while it grows), and
    the duplicate keys of a slot day of more than about two million reports (16 bytes each).

    Because the reader of ``spotkit ingest -o`` keeps every report's key to find
    duplicates, the memory it needs grows with the input (about 16/60 of the CSV size at
    its peak): a cap far below the input size cannot be honoured and is refused rather than
    exceeded silently.

    Raises
    ------
    UsageError
        When the cap leaves room for fewer than :data:`MIN_CHUNK_ROWS` rows per chunk; the
        message gives the least cap that would do.

    Examples
    --------
    >>> chunk_rows_for_memory(400)
    16131
    >>> chunk_rows_for_memory(300)
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: a memory cap of 300 MiB ... it needs at least 363 MiB
    """
    if not np.isfinite(memory_mb) or memory_mb <= 0:
        raise UsageError(f"memory_mb must be a positive number of MiB, not {memory_mb!r}")
    seen_mb = total_input_bytes / CSV_BYTES_PER_ROW * SEEN_BYTES_PER_ROW / 2**20
    room = (memory_mb - BASE_MEMORY_MB - seen_mb) * 2**20
    rows = int(room // CHUNK_BYTES_PER_ROW)
    if rows < MIN_CHUNK_ROWS:
        need = BASE_MEMORY_MB + seen_mb + MIN_CHUNK_ROWS * CHUNK_BYTES_PER_ROW / 2**20
        raise UsageError(f"a memory cap of {memory_mb:g} MiB is too small for this input; "
                         f"it needs at least {np.ceil(need):.0f} MiB")
    return rows


def ingest_to_dataset(paths, root, *, chunk_rows: int | None = None,
                      memory_mb: float | None = None,
                      partition_by: Sequence[str] = PARTITION_KEYS, progress: bool = False,
                      lock_timeout: float | None = None, **read_kw):
    """Read spot CSV files chunk by chunk and append them to a partitioned archive.

    Every input file's SHA-256, of its bytes and of its content (decompressed, so a gzip or
    renamed copy counts as the same file), is checked against the archive's manifest first:
    a file already appended (or given twice) is refused with
    :class:`~spotkit.errors.InputError` and nothing is written. The check is made again
    under the archive's lock just before the commit, so of two runs appending the same file
    at once exactly one succeeds. The files are read by :func:`spotkit.io.ingest.iter_spot_chunks`
    (duplicates removed across chunks and files of this call), each chunk is split by
    partition and written as it comes, so peak memory is bounded by the chunk size. Rejected
    rows are kept as ``<root>/_rejects/<token>.csv``. The files of all inputs become part of
    the archive together, in one atomic manifest update, only when all inputs were read; on
    an error or a kill nothing is added (:mod:`spotkit.io.manifest`).

    Parameters
    ----------
    paths : str, path-like or sequence of them
        Spot CSV files.
    root : str or path-like
        Archive directory (created if missing).
    chunk_rows : int, optional
        Rows per chunk.
    memory_mb : float, optional
        Memory cap [MiB]. The reader then keeps duplicate keys for the latest
        :data:`DEDUPE_WINDOW_DAYS` slot days only, so memory does not grow with the input,
        and the input must be in time order (a report older than that raises
        :class:`~spotkit.errors.InputError`); ``chunk_rows`` comes from
        :func:`chunk_rows_for_memory` of the cap (the smaller of the two when both are
        given). The least cap is about 363 MiB (the message of a refusal says it). Default
        without either: 500,000 rows, duplicate keys of the whole input.
    partition_by : sequence of {"band", "day"}
        Partition keys (must match an existing archive).
    progress : bool
        Progress bar on stderr.
    lock_timeout : float, optional
        Seconds to wait while another process commits to the archive [s] (default
        :data:`spotkit.io.manifest.LOCK_TIMEOUT_S`); then :class:`~spotkit.errors.UsageError`.
    **read_kw
        Keywords of :func:`spotkit.io.ingest.read_spots` (mapping, units, delimiter, header,
        slot_minutes, region).

    Returns
    -------
    spotkit.io.ingest.IngestSummary
        Counts over all files; the manifest has one batch per file.
    """
    if isinstance(paths, (str, os.PathLike)):
        paths = [paths]
    paths = [Path(p) for p in paths]
    if not paths:
        raise UsageError("no input files given")
    for p in paths:
        if not p.is_file():
            raise FileNotFoundError(f"{p}: no such file")
    if memory_mb is not None:
        # keys of the latest slot days only: memory no longer grows with the input, but the
        # input must be in time order (the reader refuses a report older than the window)
        read_kw.setdefault("dedupe_window_days", DEDUPE_WINDOW_DAYS)
        by_mem = chunk_rows_for_memory(memory_mb)
        chunk_rows = by_mem if chunk_rows is None else min(chunk_rows, by_mem)
    elif chunk_rows is None:
        chunk_rows = 500_000
    root = Path(root)
    _open_for_append(root, partition_by, lock_timeout=lock_timeout)
    manifest = dataset_manifest(root)
    hashes: dict[Path, tuple[str, str]] = {}
    for p in paths:
        raw, content = file_hashes(p)
        check_not_taken(manifest, str(p), raw, content, root)  # early; again at the commit
        first = next((q for q, (_r, c) in hashes.items() if c == content), None)
        if first is not None:
            raise InputError(f"{p}: same content as {first} (SHA-256 {content[:12]}...); "
                             "give each export once")
        hashes[p] = (raw, content)
    summary = IngestSummary()
    apps: dict[int, _Appender] = {}  # by position of the input file
    rej_fhs: dict[int, Any] = {}
    rej_counts: dict[int, int] = {}
    try:
        for n_chunk, (spots, rejects) in enumerate(iter_spot_chunks(
                paths, chunk_rows=chunk_rows, summary=summary, progress=progress, **read_kw)):
            if n_chunk == 1:
                fault_point("read")  # a kill while reading, with the first chunk staged
            i = len(summary.files) - 1
            app = apps.get(i)
            if app is None:
                app = apps[i] = _Appender(root, partition_by)
            if len(spots):
                app.write(_to_arrow(spots))
            if len(rejects):
                fh = rej_fhs.get(i)
                if fh is None:
                    (app.staging / REJECTS_DIR).mkdir(parents=True, exist_ok=True)
                    fh = rej_fhs[i] = open(app.staging / REJECTS_DIR / f"{app.token}.csv", "w",
                                           encoding="utf-8", newline="")
                    rejects[C.REJECT_COLUMNS].iloc[:0].to_csv(fh, index=False)
                rejects[C.REJECT_COLUMNS].to_csv(fh, index=False, header=False)
                rej_counts[i] = rej_counts.get(i, 0) + len(rejects)
        for i, fh in rej_fhs.items():
            fh.close()
            fsync_file(apps[i].staging / REJECTS_DIR / f"{apps[i].token}.csv")
        staged = []
        for i, p in enumerate(paths):
            app = apps.get(i)
            if app is None:
                app = apps[i] = _Appender(root, partition_by)
            app.close()
            staged.append((app, {
                "token": app.token, "sha256": hashes[p][0], "content_sha256": hashes[p][1],
                "source": str(p), "rejected": rej_counts.get(i, 0),
                "rejects": f"{REJECTS_DIR}/{app.token}.csv" if i in rej_fhs else None}))
    except BaseException:
        for fh in rej_fhs.values():
            fh.close()
        for app in apps.values():
            app.abort()
        raise
    _commit(root, partition_by, staged, lock_timeout=lock_timeout)
    return summary


__all__ = ["BASE_MEMORY_MB", "CHUNK_BYTES_PER_ROW", "SEEN_BYTES_PER_ROW", "CSV_BYTES_PER_ROW",
           "MIN_CHUNK_ROWS", "DEDUPE_WINDOW_DAYS", "chunk_rows_for_memory", "ingest_to_dataset"]
