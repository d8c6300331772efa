"""Parquet storage of the canonical spot table: single files and partitioned archives.

Two layouts:

* a **single file** (``write_spots`` / ``read_spots_parquet``), what ``spotkit ingest -o``
  writes;
* a **partitioned archive**: a directory of Parquet files in hive layout
  ``<root>/band=<band>/day=<YYYY-MM-DD>/part-<token>-<i>.parquet``, where ``day`` is the
  UTC date of the slot start (:data:`spotkit.columns.SLOT`). New exports are appended as new
  files; old files are never rewritten. A small JSON manifest (:data:`MANIFEST_NAME`) in the
  root lists every appended batch and its files, with the SHA-256 of the input file's
  bytes and of its content (decompressed), so the same export cannot be appended twice,
  not even gzipped or renamed. **The manifest is the archive**: every reader opens exactly
  the files it lists, and an append becomes visible in one atomic manifest update under an
  exclusive lock (the commit protocol of :mod:`spotkit.io.manifest`), so a killed or
  concurrent append never shows half its rows or doubles them.

Reads push filters down to Parquet (pyarrow.dataset): a band or time-range query opens only
the matching ``band=``/``day=`` directories and, inside the files, skips row groups whose
statistics exclude the query. Tables come back with the glossary dtypes
(:func:`spotkit.columns.apply_dtypes`): tz-aware UTC times, categoricals for callsigns,
locators and bands.

CSV exports go in with :func:`spotkit.io.archive.ingest_to_dataset`, which reads them chunk by
chunk and appends each chunk through this module's writer.

Known limits: partitioning by slot day keeps every spot of one slot in one partition, but a
run of slots that crosses midnight UTC is split over two partitions (see
:mod:`spotkit.distributed` for what that means for alternating designs). Duplicate reports
*across* two different exports that overlap in time are not removed on append; use
:func:`read_dataset` with ``dedupe=True`` to drop them on read. Appends may run at the same
time: each stages its files on its own, and their commits take turns under the archive's
lock (see :mod:`spotkit.io.manifest` for what that needs of the file system).
"""
from __future__ import annotations

import contextlib
import datetime as _dt
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.dataset as ds
import pyarrow.parquet as pq

from spotkit import columns as C
from spotkit._validate import check_choice, check_time
from spotkit.bands import BAND_ORDER
from spotkit.errors import InputError, UsageError
from spotkit.io.atomic import fsync_dir, fsync_file
from spotkit.io.manifest import (
    MANIFEST_NAME,
    REJECTS_DIR,
    StagingArea,
    archive_lock,
    check_not_taken,
    committed_files,
    dataset_manifest,
    empty_manifest,
    fault_point,
    file_sha256,  # noqa: F401 - kept importable from here, as before
    new_token,
    roll_back_leftovers,
    write_manifest,
)

#: Name of the partition key holding the UTC date of the slot start (not a glossary column:
#: it exists only as a directory level of an archive).
DAY = "day"
#: Partition keys an archive may use.
PARTITION_KEYS = (C.BAND, DAY)
#: Rows per Parquet row group written by spotkit.
ROW_GROUP_ROWS = 256_000

_CATEGORY_COLUMNS = [name for name, col in C.GLOSSARY.items() if str(col.dtype) == "category"]


# --- single files --------------------------------------------------------------------------
def write_spots(df: pd.DataFrame, path, *, row_group_rows: int = ROW_GROUP_ROWS) -> Path:
    """Write a spot table to one Parquet file with the glossary dtypes.

    Parameters
    ----------
    df : pandas.DataFrame
        Spot table (canonical columns or a subset; extra columns are kept).
    path : str or path-like
        Output file; parent directories are created.
    row_group_rows : int
        Rows per Parquet row group [rows].

    Returns
    -------
    pathlib.Path
        The file written.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 23:58", "2024-03-02 00:00",
    ...                                 "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 3, "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...     "band": ["20m", "20m", "40m"], "snr_db": [-12.0, -15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = write_spots(spots, pathlib.Path(d) / "out" / "spots.parquet")
    ...     back = read_spots_parquet(path)
    >>> path.name, len(back)
    ('spots.parquet', 3)
    >>> back.dtypes.astype(str).to_dict()
    {'slot_utc': 'datetime64[ns, UTC]', 'tx_call': 'category', 'rx_call': 'category',
     'band': 'category', 'snr_db': 'float64'}
    """
    path = Path(path)
    if path.is_dir():
        raise UsageError(f"{path}: is a directory; write_spots writes one file "
                         "(use append_to_dataset for an archive)")
    path.parent.mkdir(parents=True, exist_ok=True)
    table = _to_arrow(C.apply_dtypes(df))
    pq.write_table(table, path, row_group_size=row_group_rows)
    return path


def read_spots_parquet(path, *, columns: Sequence[str] | None = None,
                       filters: Any = None) -> pd.DataFrame:
    """Read a spot table from a Parquet file or a partitioned archive.

    Parameters
    ----------
    path : str or path-like
        A Parquet file written by :func:`write_spots` (or any Parquet file with glossary
        columns), or an archive directory written by :func:`append_to_dataset`.
    columns : sequence of str, optional
        Read only these columns.
    filters : pyarrow.compute.Expression or list of tuples, optional
        Row filter pushed down to Parquet, in pyarrow's forms: an expression such as
        ``pc.field("band") == "20m"`` or DNF tuples ``[("band", "==", "20m")]``.

    Returns
    -------
    pandas.DataFrame
        The rows, with glossary dtypes; the archive's ``day`` partition key is dropped
        unless it is asked for in ``columns``.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 23:58", "2024-03-02 00:00",
    ...                                 "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 3, "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...     "band": ["20m", "20m", "40m"], "snr_db": [-12.0, -15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = write_spots(spots, pathlib.Path(d) / "spots.parquet")
    ...     forty = read_spots_parquet(path, columns=["rx_call", "snr_db"],
    ...                                filters=[("band", "==", "40m")])
    >>> print(forty.to_string(index=False))
    rx_call  snr_db
      Q3DEF   -20.0
    """
    path = Path(path)
    if not path.exists():
        raise FileNotFoundError(f"{path}: no such file or directory")
    if path.is_dir():
        dataset, _ = _open_dataset(path)
    else:
        try:
            dataset = ds.dataset(path, format="parquet")
        except (pa.ArrowInvalid, OSError) as exc:
            raise InputError(f"{path}: not a Parquet file ({exc})") from None
    expr = _as_expression(filters)
    return _scan(dataset, columns=columns, expr=expr, source=path)


# --- partitioned archives --------------------------------------------------------------------
def _partitioning(partition_by: Sequence[str]) -> ds.Partitioning:
    fields = []
    for key in partition_by:
        if key == C.BAND:
            fields.append(pa.field(C.BAND, pa.string()))
        elif key == DAY:
            fields.append(pa.field(DAY, pa.date32()))
        else:
            check_choice(key, PARTITION_KEYS, "partition key")
    return ds.partitioning(pa.schema(fields), flavor="hive")


def _open_dataset(root: Path) -> tuple[ds.Dataset | None, list[str]]:
    """The archive's committed files as a pyarrow dataset (None when there are none) and its
    partition keys, both from one reading of the manifest: files the manifest does not list
    (left by an interrupted append) are never opened."""
    manifest = dataset_manifest(root)
    partition_by = list(manifest["partition_by"])
    files = committed_files(manifest)
    if not files:
        return None, partition_by
    missing = [f for f in files if not (root / f).is_file()]
    if missing:
        raise InputError(f"{root}: the manifest lists {len(missing)} file(s) that are not on "
                         f"disk, e.g. {missing[0]} (see 'spotkit archive info {root}')")
    dataset = ds.dataset([str(root / f) for f in files], format="parquet",
                         partitioning=_partitioning(partition_by), partition_base_dir=str(root))
    return dataset, partition_by


def _with_day(table: pa.Table) -> pa.Table:
    if C.SLOT in table.column_names:
        t = table.column(C.SLOT)
    elif C.TIME in table.column_names:
        t = table.column(C.TIME)
    else:
        raise InputError(f"a spot table needs {C.SLOT} or {C.TIME} to be partitioned by day")
    if not pa.types.is_timestamp(t.type):
        raise InputError(f"time column of type {t.type} is not a timestamp")
    # the UTC calendar date of the slot start
    day = pc.cast(pc.cast(t, pa.timestamp(t.type.unit, tz="UTC")), pa.date32())
    return table.append_column(DAY, day)


def _arrow_type(name: str, series: pd.Series) -> pa.DataType:
    col = C.GLOSSARY.get(name)
    if col is None:
        return pa.Schema.from_pandas(series.to_frame(), preserve_index=False).field(0).type
    if col.dtype == C.UTC_DTYPE:
        return pa.timestamp("ns", tz="UTC")
    return {"category": pa.dictionary(pa.int32(), pa.string()), "float64": pa.float64(),
            "int64": pa.int64()}[str(col.dtype)]


def _to_arrow(df: pd.DataFrame) -> pa.Table:
    """Arrow table with a fixed type per glossary column (dictionary<int32, string> for
    categoricals, ns UTC timestamps), so tables of different chunks share one schema."""
    schema = pa.schema([pa.field(str(n), _arrow_type(n, df[n])) for n in df.columns])
    return pa.Table.from_pandas(df, schema=schema, preserve_index=False)


class _Appender:
    """Writes spot tables into the staging folder ``<root>/_staging-<token>/`` split by
    partition - one row group per written piece; :meth:`move_into_place` moves the files to
    their final names (under the archive lock, just before the manifest commits them). A
    partition's file stays open only while the pieces written keep reaching it: a partition
    that a piece does not reach is closed, and a later piece for it opens a new file
    (``part-<token>-<n>``). Memory: the table being written plus the writers of the
    partitions it reaches, however many partitions the input spans."""

    def __init__(self, root: Path, partition_by: Sequence[str], token: str | None = None):
        self.root = root
        self.partition_by = list(partition_by)
        self.token = token or new_token()
        self.stage = StagingArea(root, self.token)
        self.staging = self.stage.path
        self.rows = 0
        self.writers: dict[tuple, pq.ParquetWriter] = {}
        self.files: list[str] = []

    def _partition_values(self, table: pa.Table) -> pd.DataFrame:
        cols = {}
        for key in self.partition_by:
            if key == C.BAND:
                band = table.column(C.BAND)
                if band.null_count:
                    raise InputError(f"{band.null_count} spot(s) have no {C.BAND}; "
                                     "cannot partition by band")
                cols[key] = pd.Categorical(pc.cast(band, pa.string()).to_numpy(
                    zero_copy_only=False))
            else:
                day = _day_of(table)
                if day.null_count:
                    raise InputError(f"{day.null_count} spot(s) have no slot time; "
                                     "cannot partition by day")
                cols[key] = day.cast(pa.int32()).to_numpy(zero_copy_only=False)
        return pd.DataFrame(cols)

    def write(self, table: pa.Table) -> None:
        if table.num_rows == 0:
            return
        parts = self._partition_values(table)
        data = table.drop_columns([k for k in self.partition_by if k in table.column_names])
        groups = parts.groupby(self.partition_by, observed=True, sort=False).indices
        reached = set()
        for key, idx in groups.items():
            key = key if isinstance(key, tuple) else (key,)
            reached.add(key)
            writer = self.writers.get(key)
            if writer is None:
                rel = "/".join(f"{k}={_format_key(k, v)}"
                               for k, v in zip(self.partition_by, key, strict=True))
                n = sum(f.startswith(rel + "/") for f in self.files)
                rel = f"{rel}/part-{self.token}{'' if n == 0 else f'-{n}'}.parquet"
                path = self.staging / rel
                path.parent.mkdir(parents=True, exist_ok=True)
                writer = pq.ParquetWriter(path, data.schema)
                self.writers[key] = writer
                self.files.append(rel)
            writer.write_table(data.take(pa.array(np.sort(idx))), row_group_size=ROW_GROUP_ROWS)
        for key in [k for k in self.writers if k not in reached]:
            self.writers.pop(key).close()
        self.rows += table.num_rows
        fault_point("write")

    def close(self) -> None:
        """Close the open writers and flush every staged file to the disk."""
        for w in self.writers.values():
            w.close()
        self.writers = {}
        for rel in self.files:
            fsync_file(self.staging / rel)

    def move_into_place(self) -> list[str]:
        """Move the staged files to their final names; the caller holds the archive lock
        and commits them in the manifest next. Returns their relative paths."""
        moved, folders = [], set()
        for rel in sorted(self.files):
            dst = self.root / rel
            dst.parent.mkdir(parents=True, exist_ok=True)
            os.replace(self.staging / rel, dst)
            folders.add(dst.parent)
            moved.append(rel)
            fault_point("moved")
        for folder in sorted(folders):
            fsync_dir(folder)
        return moved

    def finish(self) -> None:
        """Remove the (now empty) staging folder and its lock."""
        self.stage.remove()

    def abort(self) -> None:
        try:
            for w in self.writers.values():
                with contextlib.suppress(Exception):
                    w.close()
            self.writers = {}
        finally:
            self.stage.remove()


def _commit(root: Path, partition_by: Sequence[str], staged: list[tuple[_Appender, dict]],
            *, lock_timeout: float | None = None) -> list[dict]:
    """Make staged appends visible: the commit protocol of :mod:`spotkit.io.manifest`.

    ``staged`` pairs each closed appender with its manifest entry (``sha256``,
    ``content_sha256``, ``source``, ``rejects`` ...; ``files`` and ``rows`` are filled in
    here). Under the archive lock: leftovers of dead appends are rolled back, the manifest
    is read again and every entry's hashes checked against it, the files are moved into
    place and one atomic manifest update commits them all. On any error before that update
    the moved files are removed again and the archive is as it was. The staging folders
    are removed in every case.
    """
    fault_point("staged")
    try:
        with archive_lock(root, timeout=lock_timeout):
            fault_point("locked")
            manifest = _manifest_for_append(root, partition_by)
            for _app, entry in staged:
                check_not_taken(manifest, entry.get("source") or "input", entry.get("sha256"),
                                entry.get("content_sha256"), root)
            new = {**manifest, "batches": list(manifest["batches"])}
            try:
                for app, entry in staged:
                    entry["files"] = app.move_into_place()
                    entry["rows"] = app.rows
                    if entry.get("rejects"):
                        (root / REJECTS_DIR).mkdir(exist_ok=True)
                        os.replace(app.staging / entry["rejects"], root / entry["rejects"])
                        fsync_dir(root / REJECTS_DIR)
                    entry["written_utc"] = _now()
                    new["batches"].append(entry)
                write_manifest(root, new)
            except BaseException:
                # what is on disk is the truth: remove whatever it does not commit
                with contextlib.suppress(Exception):
                    roll_back_leftovers(root, dataset_manifest(root))
                raise
            fault_point("committed")
    finally:
        for app, _entry in staged:
            app.finish()
    return [entry for _app, entry in staged]


def _day_of(table: pa.Table) -> pa.ChunkedArray:
    return _with_day(table.select([c for c in (C.SLOT, C.TIME) if c in table.column_names]
                                  )).column(DAY)


def _format_key(key: str, value) -> str:
    if key == DAY:
        return (_dt.date(1970, 1, 1) + _dt.timedelta(days=int(value))).isoformat()
    return str(value)


def append_to_dataset(df: pd.DataFrame, root, *, partition_by: Sequence[str] = PARTITION_KEYS,
                      source_hash: str | None = None, source: str | None = None,
                      lock_timeout: float | None = None) -> dict:
    """Append a spot table to a partitioned archive, without rewriting existing files.

    Parameters
    ----------
    df : pandas.DataFrame
        Spot table with the canonical columns (at least :data:`~spotkit.columns.SLOT` or
        :data:`~spotkit.columns.TIME` for the ``day`` key, and :data:`~spotkit.columns.BAND`
        when partitioning by band).
    root : str or path-like
        Archive directory (created if missing).
    partition_by : sequence of {"band", "day"}
        Partition keys, outermost first. Must match the archive's existing keys.
    source_hash : str, optional
        SHA-256 (hex) of the input the rows came from; if the manifest already holds it the
        append is refused with :class:`~spotkit.errors.InputError`.
    source : str, optional
        Name of the input, recorded in the manifest.
    lock_timeout : float, optional
        Seconds to wait while another process commits to the archive [s] (default
        :data:`spotkit.io.manifest.LOCK_TIMEOUT_S`); then :class:`~spotkit.errors.UsageError`.

    Returns
    -------
    dict
        The manifest entry of this batch (token, sha256, source, rows, files, ...).

    Examples
    --------
    The 23:58 slot goes to 1 March, the others to 2 March; each file name carries the
    batch's random token:

    >>> import pathlib, tempfile
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 23:58", "2024-03-02 00:00",
    ...                                 "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 3, "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...     "band": ["20m", "20m", "40m"], "snr_db": [-12.0, -15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     entry = append_to_dataset(spots, pathlib.Path(d), source="march.csv",
    ...                               source_hash="0123abcd")
    ...     try:
    ...         append_to_dataset(spots, pathlib.Path(d), source_hash="0123abcd")
    ...     except InputError as exc:
    ...         print("refused:", str(exc).split(";")[-1].strip())
    refused: not appended again
    >>> entry["rows"], [f.split("/part-")[0] for f in entry["files"]]
    (3, ['band=20m/day=2024-03-01', 'band=20m/day=2024-03-02', 'band=40m/day=2024-03-02'])
    """
    root = Path(root)
    _open_for_append(root, partition_by, lock_timeout=lock_timeout)
    check_not_taken(dataset_manifest(root), source or "input", source_hash, None, root)
    _check_partition_columns(df.columns, partition_by)
    app = _Appender(root, partition_by)
    entry = {"token": app.token, "sha256": source_hash, "source": source, "rejected": None}
    try:
        app.write(_to_arrow(C.apply_dtypes(df)))
        app.close()
    except BaseException:
        app.abort()
        raise
    (entry,) = _commit(root, partition_by, [(app, entry)], lock_timeout=lock_timeout)
    return entry


def _now() -> str:
    return _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")


def _manifest_for_append(root: Path, partition_by: Sequence[str]) -> dict:
    """The manifest, checked for ``partition_by``, after rolling back dead appends' leftovers;
    a new archive gets an empty manifest. The caller holds the archive lock."""
    if not (root / MANIFEST_NAME).exists():
        stray = sorted(p.name for p in root.iterdir() if not p.name.startswith(("_", ".")))
        if stray:
            raise UsageError(f"{root}: not empty and not a spotkit archive (found {stray[0]})")
        manifest = empty_manifest(partition_by)
        write_manifest(root, manifest)
    manifest = dataset_manifest(root)
    if list(manifest["partition_by"]) != list(partition_by):
        raise UsageError(f"{root}: archive is partitioned by {','.join(manifest['partition_by'])}, "
                         f"not {','.join(partition_by)}")
    roll_back_leftovers(root, manifest)
    return manifest


def _open_for_append(root: Path, partition_by: Sequence[str], *,
                     lock_timeout: float | None = None) -> dict:
    """Check the partition keys, create the archive if needed (an empty manifest marks it as
    one from the start) and roll back what dead appends left, under the lock."""
    if not partition_by:
        raise UsageError(f"partition_by: give at least one key from {', '.join(PARTITION_KEYS)}")
    for key in partition_by:
        check_choice(key, PARTITION_KEYS, "partition key")
    if len(set(partition_by)) != len(partition_by):
        raise UsageError(f"partition keys repeat: {', '.join(partition_by)}")
    if root.exists() and not root.is_dir():
        raise UsageError(f"{root}: exists and is not a directory")
    root.mkdir(parents=True, exist_ok=True)
    with archive_lock(root, timeout=lock_timeout):
        return _manifest_for_append(root, partition_by)


def _check_partition_columns(names, partition_by) -> None:
    if C.BAND in partition_by and C.BAND not in names:
        raise InputError(f"spot table has no {C.BAND} column to partition by")
    if DAY in partition_by and C.SLOT not in names and C.TIME not in names:
        raise InputError(f"spot table has neither {C.SLOT} nor {C.TIME} to partition by day")


def dataset_filter(*, bands=None, start=None, end=None, tx_calls=None, rx_calls=None,
                   locator_prefix=None, partition_by: Sequence[str] = PARTITION_KEYS
                   ) -> pc.Expression | None:
    """Build the pyarrow filter expression :func:`read_dataset` pushes down.

    Parameters
    ----------
    bands : str or sequence of str, optional
        Band names, e.g. ``"20m"``.
    start, end : str or datetime-like, optional
        Slot start range [UTC], ``start <= slot < end``; naive values are taken as UTC.
    tx_calls, rx_calls : str or sequence of str, optional
        Callsigns (upper case as stored).
    locator_prefix : str, optional
        Keep spots whose transmitter **or** receiver locator starts with this prefix
        (case-insensitive), e.g. ``"JN"`` or ``"IO91"``.
    partition_by : sequence of str
        The archive's partition keys; the ``day`` key is filtered too so whole directories
        are skipped.

    Returns
    -------
    pyarrow.compute.Expression or None

    Examples
    --------
    >>> dataset_filter() is None
    True
    >>> table = pa.table({"band": ["20m", "40m", "20m"], "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...                   "rx_locator": ["JN58td", "IO91lk", "FN31pr"],
    ...                   "tx_locator": ["JO62qm", "JO62qm", "JO62qm"]})
    >>> expr = dataset_filter(bands="20m,40m", rx_calls=["q2xy"], partition_by=["band"])
    >>> table.filter(expr).column("band").to_pylist()
    ['20m', '40m']
    >>> table.filter(dataset_filter(locator_prefix="io")).column("rx_call").to_pylist()
    ['Q2XY']
    """
    terms = []
    if bands is not None:
        terms.append(pc.field(C.BAND).isin(_as_list(bands)))
    if start is not None or end is not None:
        t0 = check_time(start, "start") if start is not None else None
        t1 = check_time(end, "end") if end is not None else None
        if t0 is not None and t1 is not None and t1 <= t0:
            raise UsageError(f"end {t1} is not after start {t0}")
        if t0 is not None:
            terms.append(pc.field(C.SLOT) >= pa.scalar(t0.to_pydatetime(),
                                                       pa.timestamp("us", "UTC")))
            if DAY in partition_by:
                terms.append(pc.field(DAY) >= pa.scalar(t0.date(), pa.date32()))
        if t1 is not None:
            terms.append(pc.field(C.SLOT) < pa.scalar(t1.to_pydatetime(),
                                                      pa.timestamp("us", "UTC")))
            if DAY in partition_by:
                terms.append(pc.field(DAY) <= pa.scalar(t1.date(), pa.date32()))
    if tx_calls is not None:
        terms.append(pc.field(C.TX_CALL).isin([s.upper() for s in _as_list(tx_calls)]))
    if rx_calls is not None:
        terms.append(pc.field(C.RX_CALL).isin([s.upper() for s in _as_list(rx_calls)]))
    if locator_prefix:
        prefix = str(locator_prefix).strip().upper()
        terms.append(pc.starts_with(pc.utf8_upper(pc.field(C.TX_LOCATOR).cast(pa.string())),
                                    prefix)
                     | pc.starts_with(pc.utf8_upper(pc.field(C.RX_LOCATOR).cast(pa.string())),
                                      prefix))
    if not terms:
        return None
    expr = terms[0]
    for t in terms[1:]:
        expr = expr & t
    return expr


def _as_list(value) -> list[str]:
    if isinstance(value, str):
        return [v.strip() for v in value.split(",") if v.strip()]
    return [str(v) for v in value]


def read_dataset(root, *, bands=None, start=None, end=None, tx_calls=None, rx_calls=None,
                 locator_prefix=None, columns: Sequence[str] | None = None,
                 dedupe: bool = False) -> pd.DataFrame:
    """Read spots from a partitioned archive, pushing the selection down to Parquet.

    Parameters
    ----------
    root : str or path-like
        Archive directory.
    bands, start, end, tx_calls, rx_calls, locator_prefix
        Selection; see :func:`dataset_filter`. ``start``/``end`` [UTC] apply to the slot
        start, ``start <= slot < end``.
    columns : sequence of str, optional
        Read only these columns (the filter columns need not be among them).
    dedupe : bool
        Drop rows equal on :data:`~spotkit.columns.REPORT_KEY` (overlapping exports), keeping
        the first. Needs the key columns to be read.

    Returns
    -------
    pandas.DataFrame
        Matching spots with the glossary dtypes, ordered by partition then file order.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 23:58", "2024-03-02 00:00",
    ...                                 "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 3, "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...     "band": ["20m", "20m", "40m"], "snr_db": [-12.0, -15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = append_to_dataset(spots, d)
    ...     everything = read_dataset(d)
    ...     selected = read_dataset(d, bands="20m", start="2024-03-02")
    >>> everything.shape
    (3, 5)
    >>> print(selected[["slot_utc", "rx_call", "snr_db"]].to_string(index=False))
                     slot_utc rx_call  snr_db
    2024-03-02 00:00:00+00:00    Q2XY   -15.0
    """
    root = Path(root)
    if not root.is_dir():
        raise FileNotFoundError(f"{root}: no such archive directory")
    dataset, partition_by = _open_dataset(root)
    expr = dataset_filter(bands=bands, start=start, end=end, tx_calls=tx_calls,
                          rx_calls=rx_calls, locator_prefix=locator_prefix,
                          partition_by=partition_by)
    read_cols = columns
    if dedupe and columns is not None:
        read_cols = list(dict.fromkeys([*columns, *C.REPORT_KEY]))
    out = _scan(dataset, columns=read_cols, expr=expr, source=root)
    if dedupe:
        out = out.loc[~out.duplicated(C.REPORT_KEY)].reset_index(drop=True)
        if columns is not None:
            out = out[list(columns)]
    return out


def archive_files(root, *, bands=None, start=None, end=None, tx_calls=None, rx_calls=None,
                  locator_prefix=None) -> list[str]:
    """Data files of an archive whose partition (band, day) can match a selection.

    Only the directory levels are looked at (no file is opened); the row-level part of the
    selection is applied by :func:`read_archive_file`. Used to make one Dask partition per
    file (:mod:`spotkit.distributed`).

    Returns
    -------
    list of str
        Paths relative to ``root`` (POSIX separators), sorted.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 23:58", "2024-03-02 00:00",
    ...                                 "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 3, "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...     "band": ["20m", "20m", "40m"], "snr_db": [-12.0, -15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = append_to_dataset(spots, d)
    ...     files = archive_files(d)
    ...     day2 = archive_files(d, start="2024-03-02")
    >>> [f.split("/part-")[0] for f in files]
    ['band=20m/day=2024-03-01', 'band=20m/day=2024-03-02', 'band=40m/day=2024-03-02']
    >>> [f.split("/part-")[0] for f in day2]
    ['band=20m/day=2024-03-02', 'band=40m/day=2024-03-02']
    """
    root = Path(root)
    if not root.is_dir():
        raise FileNotFoundError(f"{root}: no such archive directory")
    dataset, partition_by = _open_dataset(root)
    if dataset is None:
        return []
    expr = dataset_filter(bands=bands, start=start, end=end, partition_by=partition_by)
    parts = dataset.get_fragments(filter=expr) if expr is not None else dataset.get_fragments()
    return sorted(Path(f.path).relative_to(root).as_posix() for f in parts)


def read_archive_file(root, file, *, columns: Sequence[str] | None = None, bands=None,
                      start=None, end=None, tx_calls=None, rx_calls=None,
                      locator_prefix=None, partition_by: Sequence[str] | None = None
                      ) -> pd.DataFrame:
    """Read one data file of an archive (with its partition values) and filter its rows.

    Parameters
    ----------
    root : str or path-like
        Archive directory.
    file : str or list of str
        Path(s) relative to ``root``, as returned by :func:`archive_files`; several files
        are read as one table.
    columns, bands, start, end, tx_calls, rx_calls, locator_prefix
        As :func:`read_dataset`.
    partition_by : sequence of str, optional
        The archive's partition keys (read from the manifest when not given).

    Returns
    -------
    pandas.DataFrame
        With the glossary dtypes.

    Examples
    --------
    The band comes from the file's directory:

    >>> import pathlib, tempfile
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 23:58", "2024-03-02 00:00",
    ...                                 "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 3, "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...     "band": ["20m", "20m", "40m"], "snr_db": [-12.0, -15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = append_to_dataset(spots, d)
    ...     first = archive_files(d)[0]
    ...     part = read_archive_file(d, first, columns=["rx_call", "band", "snr_db"])
    >>> print(part.to_string(index=False))
    rx_call band  snr_db
       Q2XY  20m   -12.0
    """
    root = Path(root)
    files = [file] if isinstance(file, (str, os.PathLike)) else list(file)
    if partition_by is None:
        partition_by = dataset_manifest(root).get("partition_by", list(PARTITION_KEYS))
    dataset = ds.dataset([str(root / f) for f in files], format="parquet",
                         partitioning=_partitioning(partition_by), partition_base_dir=str(root))
    expr = dataset_filter(bands=bands, start=start, end=end, tx_calls=tx_calls,
                          rx_calls=rx_calls, locator_prefix=locator_prefix,
                          partition_by=partition_by)
    return _scan(dataset, columns=columns, expr=expr, source=root / files[0])


def _as_expression(filters) -> pc.Expression | None:
    if filters is None or isinstance(filters, pc.Expression):
        return filters
    return pq.filters_to_expression(filters)


def _scan(dataset: ds.Dataset | None, *, columns, expr, source) -> pd.DataFrame:
    if dataset is None:  # an archive with no data files yet
        out = C.empty_spots()
        return out if columns is None else out[[c for c in columns if c in out.columns]]
    names = dataset.schema.names
    if columns is None:
        canonical = [n for n in C.CANONICAL if n in names]
        cols = canonical + [n for n in names if n not in canonical and n != DAY]
    else:
        missing = [c for c in columns if c not in names]
        if missing:
            raise InputError(f"{source}: no column(s) {', '.join(missing)}; "
                             f"has {', '.join(names)}")
        cols = list(columns)
    try:
        table = dataset.to_table(columns=cols, filter=expr)
    except pa.ArrowInvalid as exc:
        raise InputError(f"{source}: cannot read ({exc})") from None
    return table_to_spots(table)


def table_to_spots(table: pa.Table) -> pd.DataFrame:
    """Convert an Arrow table of spots to pandas with the glossary dtypes.

    Band categories follow :data:`spotkit.bands.BAND_ORDER` (bands found outside it are
    appended in sorted order); other categoricals take their distinct values, sorted.

    Examples
    --------
    >>> table = pa.table({"band": pa.array(["40m", "20m", "160m"]).dictionary_encode(),
    ...                   "rx_call": ["Q3DEF", "Q2XY", "Q2XY"]})
    >>> spots = table_to_spots(table)
    >>> spots["band"].cat.categories.tolist(), spots["rx_call"].cat.categories.tolist()
    (['160m', '40m', '20m'], ['Q2XY', 'Q3DEF'])
    """
    df = table.to_pandas()
    df = C.apply_dtypes(df)
    for name in _CATEGORY_COLUMNS:
        if name in df.columns:
            df[name] = normalise_categories(df[name], band=(name == C.BAND))
    if DAY in df.columns:
        df[DAY] = pd.to_datetime(df[DAY]).dt.date if len(df) else df[DAY]
    return df


def normalise_categories(s: pd.Series, *, band: bool) -> pd.Series:
    """Drop unused categories and order the rest (bands by band plan, others sorted).

    Examples
    --------
    >>> bands = pd.Series(pd.Categorical(["20m", "160m"], categories=["20m", "40m", "160m"]))
    >>> normalise_categories(bands, band=True).cat.categories.tolist()
    ['160m', '20m']
    >>> calls = pd.Series(pd.Categorical(["Q2XY", "Q1ABC"], categories=["Q2XY", "Q1ABC"]))
    >>> normalise_categories(calls, band=False).tolist()
    ['Q2XY', 'Q1ABC']
    >>> normalise_categories(calls, band=False).cat.categories.tolist()
    ['Q1ABC', 'Q2XY']
    """
    codes = s.cat.codes.to_numpy()
    cats = s.cat.categories
    used = np.bincount(codes[codes >= 0], minlength=len(cats)) > 0
    values = np.asarray(cats, dtype=object)[used].astype(str)
    if band:
        present = set(values)
        known = [b for b in BAND_ORDER if b in present]
        order = known + sorted(present - set(known))
    else:
        order = sorted(values)
    if used.all() and list(values) == order:
        return s
    position = {v: i for i, v in enumerate(order)}
    mapping = np.full(len(cats) + 1, -1, dtype=np.int64)
    mapping[np.flatnonzero(used)] = [position[v] for v in values]
    new_codes = mapping[np.where(codes < 0, len(cats), codes)]
    cat = pd.Categorical.from_codes(new_codes, categories=pd.Index(order, dtype=cats.dtype))
    return pd.Series(cat, index=s.index, name=s.name)


__all__ = [
    "DAY", "PARTITION_KEYS", "ROW_GROUP_ROWS",
    "write_spots", "read_spots_parquet", "append_to_dataset", "read_dataset",
    "dataset_filter", "table_to_spots", "archive_files", "read_archive_file",
    "normalise_categories",
]
