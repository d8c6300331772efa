"""Reading spot-report CSV files into the canonical table, losing nothing.

Model
-----
A spot file is a delimited text table (comma, semicolon, tab or runs of blanks), with or
without a heading line, UTF-8 (with or without byte-order mark) or Latin-1, plain or gzip,
or the first sheet of a spreadsheet (``.xlsx``, ``.ods``; :mod:`spotkit.io.sheets`).
Each data row is one report. The reader

1. sniffs the layout from the first lines (encoding, delimiter, heading line, decimal comma;
   :mod:`spotkit.io.sniff`);
2. maps the file's columns onto the glossary (:mod:`spotkit.columns`): an explicit
   ``mapping`` always wins; otherwise headings are matched by generic words (see
   :func:`spotkit.io.sniff.match_headings`), and a file without headings is classified column
   by column from its content (see :func:`spotkit.io.sniff.infer_columns`);
3. infers units not given (time ISO 8601 text or epoch seconds; frequency Hz, kHz or MHz from
   which unit puts the values into amateur bands; power dBm, W or mW, see
   :func:`spotkit.io.sniff.infer_power_unit`; the order of day and month in dates that are
   not ISO 8601, :func:`spotkit.io.sniff.infer_date_order`) from the first
   :data:`SAMPLE_ROWS` rows, and refuses when that is ambiguous; fields the file does not
   carry may be given one value for all rows (``constants``); a date and a clock in two
   columns are joined (compact ``HHMMSS`` / ``HHMM`` clocks included);
4. validates every row; a row with any unusable field goes to the rejects table
   (:data:`spotkit.columns.REJECT_COLUMNS`) with the first failing field and a plain reason;
5. snaps each time to the start of its slot (``slot_minutes``, default 2: slots start at even
   UTC minutes, common practice), removes exact duplicates (equal on
   :data:`spotkit.columns.REPORT_KEY`, across chunks and files; the first is kept) and adds
   band, locator positions, distance and bearings (:func:`spotkit.geo.geodesic.add_path_columns`).

``rows read = accepted + rejected + duplicates`` holds for every call. Every removed
duplicate is traceable: :func:`read_spots` returns them (``.duplicates``) and the rejects
file of :func:`ingest_to_parquet` lists them, reason :data:`DUPLICATE_REASON`, with the
file and row of the report each repeats.

A run is not a success when it accepts no row of a non-empty input, or sets aside more
than :data:`MAX_REJECT_SHARE` of a file's rows for one reason
(:func:`check_reject_share`, which names the reason and its likely fix):
:func:`ingest_to_parquet` then raises :class:`~spotkit.errors.MostlyRejectedError` and
writes nothing; :func:`read_spots` does so when asked (``max_reject_share``).
:func:`ingest_to_parquet` writes its outputs as one transaction (:mod:`spotkit.io.atomic`):
they appear together when the run succeeds, and a failed or interrupted run leaves the
earlier files as they were. A *row* is one line
after the heading line, blank lines included (they are rejected as blank), and
``source_row`` is its 1-based number counted from the first line after the heading (the
heading line is not counted; quoted fields spanning lines are not supported).

Files are read by pyarrow's CSV reader when they are comma, semicolon or tab delimited
with decimal points, and by pandas' C parser otherwise (blank-delimited files, decimal
commas); both give the same table (:mod:`spotkit.io.csvread`). Rows with the wrong number of
fields are set aside ("wrong number of fields"); the pandas reader fills a row with too few
fields with empty cells instead (so such a row is accepted when only the optional drift is
missing). Files without a heading line: columns are classified by content
(:func:`infer_columns`), but which call is the transmitter cannot be seen in the data, so
``tx_call`` or ``rx_call`` must be mapped (``--map tx_call=7``: 1-based column position).

How the bulk path is kept fast: the file is parsed in 8 MB pieces, two at a time, a chunk
ahead of the cleaning, every column dictionary-encoded except SNR, power and
drift (parsed as numbers); each distinct cell is checked once (:mod:`spotkit.io.clean`; calls
and locators once per ingest), rows are reached by gathers; duplicates come from one sort
of 64-bit key hashes per chunk behind a byte map (:mod:`spotkit.io.dedupe`); pair geometry
from a dense table of locator numbers, each pair solved once (:mod:`spotkit.io.pathcache`);
Parquet chunks are built straight from the arrays and written in a third thread.

Speed (benchmarks/bench_ingest.py, 10 million rows, 646 MB, 2-core machine with nothing
else running; best of three interleaved runs): 6.8 to 8.6 s streamed to Parquet (1.2-1.5
million rows/s) against 1.6 to 1.9 s for a bare ``pandas.read_csv`` of the same file,
4.2-4.5x (one single run came to 3.2x). The target of 3x is not met: the ingest does
12-15 s of CPU work on two cores (pyarrow's parse about 4, writing Parquet 2.3, pair
geometry 1, the checks, hashes, duplicate sort and gathers about 3, start-up 0.7) against
about 3 s for the bare read, which itself uses both cores. Peak memory 1.1-1.2 GB at 1
million rows per chunk (target < 6 GB).

Known limits: duplicates are found by a 64-bit hash of the report key, so two different
reports are wrongly taken as duplicates with probability about ``n**2 / 2**65`` (3e-6 for
10 million rows); the duplicate then names a report that is not its twin. Tracing the
duplicates (:func:`read_spots`, :func:`ingest_to_parquet`) costs 8 more bytes per distinct
report and about 0.2 CPU-s per 10 million rows. Units are inferred once per file from its
first rows. A file that mixes
UTF-8 and Latin-1 is read as Latin-1. Times without a zone are taken as UTC.
"""
from __future__ import annotations

import contextlib
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.bands import BAND_ORDER, REGIONS
from spotkit.errors import InputError, MostlyRejectedError, SpotkitError, UsageError
from spotkit.io import clean, csvread
from spotkit.io.dedupe import DayKeys, SeenKeys, report_hashes
from spotkit.io.pathcache import PathCache
from spotkit.io.sanity import check_columns
from spotkit.io.sheets import is_spreadsheet, sheet_to_text
from spotkit.io.sniff import (
    _CLI_NAME,
    DateOrder,
    Delimiter,
    Header,
    _check_constants,
    _check_date_order,
    _check_mapping,
    _check_units,
    _delimiter_arg,
    _prepare_layout,
)


# --- results -------------------------------------------------------------------------------
@dataclass
class IngestSummary:
    """Counts of one ingest: ``rows_read = accepted + rejected + duplicates``.

    Attributes
    ----------
    rows_read, accepted, rejected, duplicates : int
        Data rows read (blank lines included), rows in the table, rows set aside, exact
        duplicates removed.
    rejected_by_reason : dict of str to int
        Rejected rows per reason.
    spots_per_band : dict of str to int
        Accepted rows per band, in band-plan order.
    files : list of str
        The files read, in order.
    columns : dict of str to dict
        Per file: glossary field -> the column(s) it was read from.
    units : dict of str to dict
        Per file: CLI field -> unit used, marked "(inferred)" when not given.
    file_rows : dict of str to int
        Per file: data rows read.
    file_rejects : dict of str to dict
        Per file: rejected rows per reason.

    Examples
    --------
    >>> summary = IngestSummary(rows_read=5, accepted=3, rejected=1, duplicates=1,
    ...                         rejected_by_reason={"bad locator": 1})
    >>> summary.balanced
    True
    >>> print(summary.text())
    files read:         0
    rows read:          5
    accepted:           3
    rejected:           1
      bad locator: 1
    duplicates removed: 1
    accepted + rejected + duplicates = rows read: yes (3 + 1 + 1 = 5)
    """

    rows_read: int = 0
    accepted: int = 0
    rejected: int = 0
    duplicates: int = 0
    rejected_by_reason: dict = field(default_factory=dict)
    spots_per_band: dict = field(default_factory=dict)
    files: list = field(default_factory=list)
    columns: dict = field(default_factory=dict)
    units: dict = field(default_factory=dict)
    file_rows: dict = field(default_factory=dict)
    file_rejects: dict = field(default_factory=dict)

    @property
    def balanced(self) -> bool:
        """Whether accepted + rejected + duplicates equals rows read."""
        return self.accepted + self.rejected + self.duplicates == self.rows_read

    def _add_counts(self, counts: dict, target: dict) -> None:
        for k, n in counts.items():
            target[k] = target.get(k, 0) + int(n)

    def text(self) -> str:
        """A short plain-text summary."""
        ok = "yes" if self.balanced else "NO"
        lines = [
            f"files read:         {len(self.files)}",
            f"rows read:          {self.rows_read:,}",
            f"accepted:           {self.accepted:,}",
            f"rejected:           {self.rejected:,}",
        ]
        for reason, n in sorted(self.rejected_by_reason.items(), key=lambda kv: -kv[1]):
            lines.append(f"  {reason}: {n:,}")
        lines.append(f"duplicates removed: {self.duplicates:,}")
        lines.append(f"accepted + rejected + duplicates = rows read: {ok} "
                     f"({self.accepted:,} + {self.rejected:,} + {self.duplicates:,} = "
                     f"{self.accepted + self.rejected + self.duplicates:,})")
        if self.spots_per_band:
            lines.append("spots per band:")
            for band, n in self.spots_per_band.items():
                lines.append(f"  {band}: {n:,}")
        for f in self.files:
            cols = ", ".join(f"{_CLI_NAME.get(k, k)}<-{v}"
                             for k, v in self.columns.get(f, {}).items())
            units = ", ".join(f"{k} {v}" for k, v in self.units.get(f, {}).items())
            lines.append(f"{f}: columns {cols}; units {units}")
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.text()


@dataclass
class IngestResult:
    """What :func:`read_spots` returns: the canonical table, the rejects, the summary and
    the removed duplicates (as rejects: reason :data:`DUPLICATE_REASON`, value the file and
    row of the report each repeats).

    Examples
    --------
    >>> from spotkit.columns import empty_rejects, empty_spots
    >>> result = IngestResult(empty_spots(), empty_rejects(), IngestSummary())
    >>> len(result.spots), result.summary_text().splitlines()[1]
    (0, 'rows read:          0')
    """

    spots: pd.DataFrame
    rejects: pd.DataFrame
    summary: IngestSummary
    duplicates: pd.DataFrame = field(default_factory=C.empty_rejects)

    def summary_text(self) -> str:
        """The summary as plain text."""
        return self.summary.text()


# --- when a run is not a success -------------------------------------------------------------
#: Reason given to a removed exact duplicate in the rejects output.
DUPLICATE_REASON = "exact duplicate"
#: Default largest share of a file's rows that may be set aside for one reason.
MAX_REJECT_SHARE = 0.5

# reason (its start) -> what would most likely fix it; the first match wins
_HINTS = (
    ("unparseable time", "check the time column (--map time=COLUMN), its unit "
     "(--unit time=epoch or epoch-ms for numbers) or the order of day and month"),
    ("time out of range", "numbers may be epoch milliseconds (--unit time=epoch-ms) or "
     "another column (--map time=COLUMN)"),
    ("time in the future", "numbers may be epoch milliseconds (--unit time=epoch-ms) or "
     "another column (--map time=COLUMN)"),
    ("frequency not in an amateur band", "the values may be kHz or Hz rather than MHz "
     "(--unit frequency=Hz|kHz|MHz), another column (--map frequency=COLUMN) or outside "
     "the --region band plan"),
    ("frequency not a number", "check --map frequency=COLUMN and --delimiter"),
    ("SNR outside", "the column may not hold SNR (--map snr=COLUMN)"),
    ("SNR not a number", "the SNR column may use another minus sign or not hold SNR "
     "(--map snr=COLUMN)"),
    ("power outside", "check the power unit (--unit power=dBm|W|mW) or --map power=COLUMN"),
    ("power not a number", "check --map power=COLUMN"),
    ("bad locator", "check --map tx_locator=COLUMN / rx_locator=COLUMN"),
    ("bad call", "check --map tx_call=COLUMN / rx_call=COLUMN"),
    ("wrong number of fields", "check the delimiter (--delimiter) and quoting"),
    ("empty ", "the column may be missing or mapped wrongly (--map FIELD=COLUMN)"),
)


def reject_hint(reason: str) -> str | None:
    """What would most likely fix rows set aside for ``reason`` (None when nothing is
    known).

    Examples
    --------
    >>> reject_hint("frequency not in an amateur band")[:37]
    'the values may be kHz or Hz rather th'
    >>> reject_hint("blank line") is None
    True
    """
    for start, hint in _HINTS:
        if reason.startswith(start):
            return hint
    return None


def _share_text(share: float) -> str:
    return f"{100 * share:.0f} %" if share >= 0.01 else f"{100 * share:.2g} %"


def check_reject_share(summary: IngestSummary,
                       max_share: float | None = MAX_REJECT_SHARE) -> None:
    """Refuse a run that accepted nothing or set aside too much of a file for one reason.

    Parameters
    ----------
    summary : IngestSummary
        The counts of a finished run.
    max_share : float or None
        Largest share (0..1) of one file's rows that may be set aside for any one reason;
        1 allows any share but still refuses a run that accepted no row; None checks
        nothing.

    Raises
    ------
    MostlyRejectedError
        No data row at all, no row accepted from a non-empty input, a file whose every row
        was set aside, or a reason with more than ``max_share`` of a file's rows; the message
        names the file, the reason, its share and, where known, the likely fix
        (:func:`reject_hint`).

    Examples
    --------
    >>> s = IngestSummary(rows_read=10, accepted=4, rejected=6,
    ...                   rejected_by_reason={"unparseable time": 6}, files=["a.csv"],
    ...                   file_rows={"a.csv": 10}, file_rejects={"a.csv": {"unparseable time": 6}})
    >>> check_reject_share(s, 0.7)
    >>> check_reject_share(s)
    Traceback (most recent call last):
    ...
    spotkit.errors.MostlyRejectedError: a.csv: 6 of 10 rows (60 %) set aside as 'unparseable \
time', more than the 50 % allowed (--max-reject-share); check the time column (--map \
time=COLUMN), its unit (--unit time=epoch or epoch-ms for numbers) or the order of day and month
    """
    if max_share is None:
        return
    max_share = _check_share(max_share)

    def fail(text: str, reason: str | None) -> None:
        hint = reject_hint(reason) if reason else None
        raise MostlyRejectedError(text + (f"; {hint}" if hint else ""), summary)

    top = max(summary.rejected_by_reason.items(), key=lambda kv: kv[1], default=(None, 0))
    if not summary.rows_read:
        where = ", ".join(summary.files) if summary.files else "the input"
        fail(f"{where}: no data rows to read (a heading at most); check that this is the "
             "export you meant", None)
    if summary.rows_read and not summary.accepted:
        reasons = ", ".join(f"{k}: {v:,}" for k, v in sorted(
            summary.rejected_by_reason.items(), key=lambda kv: -kv[1]))
        where = summary.files[0] if len(summary.files) == 1 else "the input"
        fail(f"{where}: no row accepted ({summary.rows_read:,} read; set aside: "
             f"{reasons or 'none'})", top[0])
    for name in summary.files:
        rows = summary.file_rows.get(name, 0)
        counts = summary.file_rejects.get(name, {})
        if not rows or not counts:
            continue
        reason, n = max(counts.items(), key=lambda kv: kv[1])
        if sum(counts.values()) == rows and len(summary.files) > 1:
            fail(f"{name}: every row ({rows:,}) set aside, most as {reason!r} ({n:,})",
                 reason)
        if n > max_share * rows:
            fail(f"{name}: {n:,} of {rows:,} rows ({_share_text(n / rows)}) set aside as "
                 f"{reason!r}, more than the {_share_text(max_share)} allowed "
                 "(--max-reject-share)", reason)


def _check_share(share) -> float:
    ok = isinstance(share, (int, float, np.integer, np.floating)) and \
        not isinstance(share, bool) and 0 <= share <= 1
    if not ok:
        raise UsageError(f"the largest share of rejects must be a number from 0 to 1, "
                         f"not {share!r}")
    return float(share)


# --- drivers ---------------------------------------------------------------------------------
def _as_paths(paths) -> list[Path]:
    if isinstance(paths, (str, Path)):
        paths = [paths]
    out = [Path(p) for p in paths]
    if not out:
        raise UsageError("no input files given")
    return out


def constants_by_file(constants, paths, mapping=None) -> list[dict[str, str]]:
    """The constants (``--set``) of each input file: those for all files and its own.

    Parameters
    ----------
    constants : dict or None
        Field -> value for every file's rows; and, per file, an input path (as given, or
        any path to the same file) -> a dict of field -> value for that file's rows only.
    paths : sequence of path-like
        The input files.
    mapping : dict, optional
        The ``--map`` fields (a field may not be both mapped and set).

    Returns
    -------
    list of dict
        Per input file, glossary name -> value text.

    Raises
    ------
    UsageError
        A per-file key that is not one of the input files (the message lists them), a
        field given both for all files and for one, or a bad field or empty value.

    Examples
    --------
    Two receivers' own decode logs, at one place, each with its own call:

    >>> constants_by_file({"rx_locator": "JO62qm", "rx1.log": {"rx_call": "Q1ABC"},
    ...                    "rx2.log": {"rx_call": "Q1ABD"}}, ["rx1.log", "rx2.log"])
    [{'rx_locator': 'JO62qm', 'rx_call': 'Q1ABC'}, {'rx_locator': 'JO62qm', 'rx_call': 'Q1ABD'}]
    >>> constants_by_file({"rx3.log": {"rx_call": "Q1ABC"}},
    ...                   ["rx1.log", "rx2.log"])  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: --set rx3.log:FIELD=VALUE: rx3.log is not one of the input ...
    """
    from collections.abc import Mapping

    paths = [Path(p) for p in paths]
    common, own = {}, [{} for _ in paths]
    for key, value in (constants or {}).items():
        if not isinstance(value, Mapping):
            common[key] = value
            continue
        i = _input_index(key, paths)
        own[i] = {**own[i], **_check_constants(value, mapping)}
    common = _check_constants(common, mapping)
    for p, mine in zip(paths, own, strict=True):
        both = sorted(set(mine) & set(common))
        if both:
            raise UsageError(f"--set: {', '.join(both)} given both for every file and for "
                             f"{p}: give one")
    return [{**common, **mine} for mine in own]


def _input_index(key, paths: list[Path]) -> int:
    """The index of the input file that ``key`` names (as given, or the same file)."""
    text = str(key)
    hits = [i for i, p in enumerate(paths) if str(p) == text or p == Path(text)]
    if not hits:
        target = Path(text)
        with contextlib.suppress(OSError):
            hits = [i for i, p in enumerate(paths)
                    if target.exists() and p.exists() and p.samefile(target)]
    if len(hits) != 1:
        shown = ", ".join(str(p) for p in paths[:8]) + (", ..." if len(paths) > 8 else "")
        why = "is not one of the input files" if not hits else "names several input files"
        raise UsageError(f"--set {text}:FIELD=VALUE: {text} {why} ({shown})")
    return hits[0]


def _check_args(region, slot_minutes, chunk_rows):
    if region not in REGIONS:
        raise UsageError(f"unknown IARU region {region!r}; valid: {', '.join(REGIONS)}")
    if not isinstance(slot_minutes, (int, np.integer)) or slot_minutes < 1:
        raise UsageError(f"slot_minutes must be a whole number of minutes >= 1, "
                         f"not {slot_minutes!r}")
    if chunk_rows is not None and (not isinstance(chunk_rows, (int, np.integer))
                                   or chunk_rows < 1):
        raise UsageError(f"chunk_rows must be a positive whole number, not {chunk_rows!r}")


def _enrich(spots: dict, keep: np.ndarray, name: str, cache: PathCache) -> dict:
    """Keep rows ``keep``, add C.DERIVED columns and the source file; the table's columns
    (C.CANONICAL order) as arrays and categoricals."""
    everything = bool(keep.all())
    cols = {c: v if everything else v[keep] for c, v in spots.items()}
    n = len(cols[C.SOURCE_ROW])
    vals = cache.lookup(cols[C.TX_LOCATOR], cols[C.RX_LOCATOR]) if n \
        else [np.zeros(0)] * len(C.DERIVED)
    for j, c in enumerate(C.DERIVED):
        cols[c] = vals[j]
    cols[C.SOURCE_FILE] = pd.Categorical.from_codes(
        np.zeros(n, dtype=np.int8), categories=pd.Index([name], dtype="str"))
    return {c: cols[c] for c in C.CANONICAL}


def _frame(cols: dict | None) -> pd.DataFrame:
    """The chunk's columns as a canonical DataFrame (None: an empty table)."""
    if cols is None:
        return C.empty_spots()
    return pd.DataFrame({c: (pd.to_datetime(cols[c], utc=True) if c in (C.TIME, C.SLOT)
                             else cols[c]) for c in C.CANONICAL})


def _table(cols: dict | None, schema):
    """The chunk's columns as a pyarrow Table with ``schema`` (no pandas round trip)."""
    import pyarrow as pa

    if cols is None:
        return schema.empty_table()
    arrays = []
    for f in schema:
        v = cols[f.name]
        if pa.types.is_dictionary(f.type):
            codes = np.asarray(v.codes, dtype=np.int32)
            arrays.append(pa.DictionaryArray.from_arrays(
                pa.array(codes, mask=codes < 0),
                pa.array(np.asarray(v.categories, dtype=object), pa.string())))
        elif pa.types.is_timestamp(f.type):
            arrays.append(pa.array(np.asarray(v, dtype=np.int64), pa.int64()).view(f.type))
        else:
            arrays.append(pa.array(np.asarray(v), f.type))
    return pa.Table.from_arrays(arrays, schema=schema)


def iter_spot_chunks(paths, *, mapping=None, units=None, delimiter: Delimiter = "auto",
                     header: Header = "auto", slot_minutes: int = C.SLOT_MINUTES,
                     region="all", chunk_rows: int | None = 500_000, progress: bool = False,
                     summary: IngestSummary | None = None,
                     dedupe_window_days: int | None = None, constants=None,
                     date_order: DateOrder | None = None
                     ) -> Iterator[tuple[pd.DataFrame, pd.DataFrame]]:
    """Read spot files chunk by chunk; yield (spots, rejects) per chunk.

    Same parameters as :func:`read_spots`. ``summary`` (an :class:`IngestSummary`, updated in
    place as chunks are yielded) receives the counts. Duplicates are removed across chunks
    and files; memory grows only by 8 bytes per distinct report (the key hashes), or, with
    ``dedupe_window_days``, per distinct report of the latest days only: the keys of slot
    days more than that many days before the latest day read are forgotten, and a report
    older than that raises :class:`~spotkit.errors.InputError` (time-ordered input only).

    Examples
    --------
    A tiny file fits in one chunk (the fast reader parses pieces of at least 4 kB); the
    summary counts all chunks:

    >>> import pathlib, tempfile
    >>> rows = ["time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm",
    ...         "2024-03-01 10:00:12,Q1ABC,JO62qm,Q2XY,JN58td,14.0971,-12,37",
    ...         "2024-03-01 10:02:11,Q1ABC,JO62qm,Q3DEF,IO91lk,14.09712,-21,37"]
    >>> summary = IngestSummary()
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = pathlib.Path(d) / "spots.csv"
    ...     _ = path.write_text("\\n".join(rows) + "\\n")
    ...     sizes = [(len(s), len(r)) for s, r in iter_spot_chunks(path, summary=summary)]
    >>> sizes, summary.accepted
    ([(2, 0)], 2)
    """
    for cols, rejects in _iter_chunk_columns(
            paths, mapping=mapping, units=units, delimiter=delimiter, header=header,
            slot_minutes=slot_minutes, region=region, chunk_rows=chunk_rows,
            progress=progress, summary=summary, dedupe_window_days=dedupe_window_days,
            constants=constants, date_order=date_order):
        yield _frame(cols), rejects


def _iter_chunk_columns(paths, *, mapping, units, delimiter, header, slot_minutes, region,
                        chunk_rows, progress, summary, dedupe_window_days=None,
                        trace_duplicates=False, constants=None, date_order=None):
    """As :func:`iter_spot_chunks`, yielding the spots as a dict of columns (times as int64
    ns; None for no spots) for :func:`_frame` or :func:`_table`. ``trace_duplicates``: the
    removed duplicates are among the rejects too, reason :data:`DUPLICATE_REASON`, value
    the file and row of the report each repeats (counted as duplicates, not rejects)."""
    _check_args(region, slot_minutes, chunk_rows)
    mapping = _check_mapping(mapping)
    units = _check_units(units)
    date_order = _check_date_order(date_order)
    delimiter = _delimiter_arg(delimiter)
    paths = _as_paths(paths)
    per_file = constants_by_file(constants, paths, mapping)
    summary = summary if summary is not None else IngestSummary()
    temp = contextlib.ExitStack()
    try:
        layouts = [_prepare_file(p, mapping, units, delimiter, header, own, date_order,
                                 temp) for p, own in zip(paths, per_file, strict=True)]
    except BaseException:
        temp.close()
        raise
    with temp:
        yield from _read_layouts(layouts, summary, region, slot_minutes, chunk_rows, progress,
                                 dedupe_window_days, trace_duplicates)


def _prepare_file(path: Path, mapping, units, delimiter, header, constants, date_order,
                  temp: contextlib.ExitStack):
    """The layout of one file; a spreadsheet is first written as text into a temporary
    folder kept by ``temp`` (:mod:`spotkit.io.sheets`), its layout named after the
    spreadsheet."""
    if not is_spreadsheet(path):
        return _prepare_layout(path, mapping, units, delimiter, header, constants, date_order)
    import tempfile

    folder = Path(temp.enter_context(tempfile.TemporaryDirectory(prefix="spotkit-sheet-")))
    text = sheet_to_text(path, folder / (path.name + ".txt"))
    try:
        layout = _prepare_layout(text, mapping, units, "tab" if delimiter == "auto"
                                 else delimiter, header, constants, date_order)
    except SpotkitError as exc:  # messages name the spreadsheet, not the temporary file
        raise type(exc)(str(exc).replace(str(text), str(path))) from None
    layout.name = str(path)
    return layout


def _read_layouts(layouts, summary, region, slot_minutes, chunk_rows, progress,
                  dedupe_window_days, trace_duplicates):
    for layout in layouts:
        clean.check_constants(layout)  # --set values checked as cells (usage errors)
        check_columns(layout)  # column sanity before rows (spotkit.io.sanity)
    if trace_duplicates and dedupe_window_days is not None:
        raise UsageError("duplicates are traced only without a dedupe window")
    seen = SeenKeys(track_first=trace_duplicates) if dedupe_window_days is None \
        else DayKeys(dedupe_window_days)
    names = np.array([layout.name for layout in layouts], dtype=object)
    cache = PathCache()
    distinct = clean.new_distinct()
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(unit=" rows", desc="ingest")
    try:
        for file_no, layout in enumerate(layouts):
            summary.files.append(layout.name)
            summary.columns[layout.name] = layout.describe_columns()
            summary.units[layout.name] = {
                k: v + (f" ({layout.inferred[k]})" if k in layout.inferred else "")
                for k, v in layout.units.items()}
            next_row = 1
            skipped_all: dict[int, str] = {}
            fast = layout.sep in (",", ";", "\t") and layout.decimal == "."
            numbers = tuple(i for f in (C.SNR, C.POWER, C.DRIFT) for i in
                            layout.fields.get(f, ()))
            chunks = csvread.prefetch(csvread.arrow_chunks(layout, chunk_rows, numbers)) \
                if fast else csvread.pandas_chunks(layout, chunk_rows)
            for raw, skipped in chunks:
                for line, msg in skipped:
                    skipped_all[line - layout.header_lines] = msg
                rows, next_row = _row_numbers(raw.n, next_row, skipped_all)
                spots, rejects, key_parts = clean.clean_chunk(raw, layout, rows, region,
                                                         slot_minutes, distinct)
                done = [r for r in skipped_all if r < next_row]
                if done:
                    extra = pd.DataFrame({
                        C.SOURCE_FILE: layout.name, C.SOURCE_ROW: np.array(done, dtype="int64"),
                        C.REJECT_FIELD: "row",
                        C.REJECT_VALUE: [skipped_all.pop(r) for r in done],
                        C.REJECT_REASON: "wrong number of fields"})
                    rejects = pd.concat([rejects, extra], ignore_index=True)
                h = report_hashes(key_parts) if key_parts[0][0].size \
                    else np.zeros(0, dtype=np.uint64)
                if trace_duplicates:
                    dup, first = seen.duplicates_of(h, (np.int64(file_no) << _ROW_BITS)
                                                    + spots[C.SOURCE_ROW])
                else:
                    dup = (seen.duplicates(h) if isinstance(seen, SeenKeys) else
                           seen.duplicates(h, spots[C.SLOT], spots[C.SOURCE_ROW],
                                           layout.name))
                dup_rows = spots[C.SOURCE_ROW][dup] if trace_duplicates else None
                spots = _enrich(spots, ~dup, layout.name, cache)
                _count(summary, raw.n + len(done), spots, rejects, int(dup.sum()),
                       layout.name)
                if dup_rows is not None and dup_rows.size:
                    rejects = pd.concat([rejects, _duplicate_rejects(
                        layout.name, dup_rows, first[dup], names)], ignore_index=True)
                if bar is not None:
                    bar.update(raw.n + len(done))
                yield spots, _tidy_rejects(rejects)
            if skipped_all:  # bad lines after the last good row
                rows_left = sorted(skipped_all)
                rejects = pd.DataFrame({
                    C.SOURCE_FILE: layout.name, C.SOURCE_ROW: np.array(rows_left, dtype="int64"),
                    C.REJECT_FIELD: "row", C.REJECT_VALUE: [skipped_all[r] for r in rows_left],
                    C.REJECT_REASON: "wrong number of fields"})
                _count(summary, len(rows_left), None, rejects, 0, layout.name)
                yield None, _tidy_rejects(rejects)
    finally:
        if bar is not None:
            bar.close()


def _tidy_rejects(rejects: pd.DataFrame) -> pd.DataFrame:
    """Rejects in row order, text columns as Python strings (as C.empty_rejects)."""
    out = rejects.sort_values(C.SOURCE_ROW, ignore_index=True)[C.REJECT_COLUMNS]
    text = [C.SOURCE_FILE, C.REJECT_FIELD, C.REJECT_VALUE, C.REJECT_REASON]
    return out.astype({c: object for c in text} | {C.SOURCE_ROW: "int64"})


def _row_numbers(n: int, start: int, skipped: dict) -> tuple[np.ndarray, int]:
    """Data-row numbers of ``n`` rows read from ``start`` on, leaving out skipped lines."""
    pending = sum(1 for r in skipped if r >= start)
    cand = np.arange(start, start + n + pending, dtype=np.int64)
    if pending:
        cand = cand[~np.isin(cand, np.fromiter(skipped, dtype=np.int64))]
    rows = cand[:n]
    return rows, (int(rows[-1]) + 1 if n else start)


# a duplicate's label of where its report was first read: file number << _ROW_BITS | row
_ROW_BITS = 40


def _duplicate_rejects(name: str, rows: np.ndarray, first: np.ndarray,
                       names: np.ndarray) -> pd.DataFrame:
    """Rejects rows for removed duplicates: value ``"FILE row N"`` of the report each
    repeats (``first``: file number << _ROW_BITS | row)."""
    first = np.asarray(first, dtype=np.int64)
    where = pd.Series(names[first >> _ROW_BITS], dtype=object) + " row " + \
        pd.Series(first & ((1 << _ROW_BITS) - 1)).astype(str)
    return pd.DataFrame({C.SOURCE_FILE: name, C.SOURCE_ROW: np.asarray(rows, dtype=np.int64),
                         C.REJECT_FIELD: "report", C.REJECT_VALUE: where.to_numpy(),
                         C.REJECT_REASON: DUPLICATE_REASON})


def _count(summary, n_read, spots, rejects, n_dup, name):
    summary.rows_read += n_read
    summary.rejected += len(rejects)
    summary.duplicates += n_dup
    by_reason = rejects[C.REJECT_REASON].value_counts().to_dict()
    summary._add_counts(by_reason, summary.rejected_by_reason)
    summary.file_rows[name] = summary.file_rows.get(name, 0) + int(n_read)
    summary._add_counts(by_reason, summary.file_rejects.setdefault(name, {}))
    n = 0 if spots is None else len(spots[C.SOURCE_ROW])
    summary.accepted += n
    if n:
        band = spots[C.BAND]
        counts = np.bincount(np.asarray(band.codes)[np.asarray(band.codes) >= 0],
                             minlength=len(band.categories))
        summary._add_counts({b: k for b, k in zip(band.categories, counts, strict=True)
                             if k > 0},
                            summary.spots_per_band)
    summary.spots_per_band = {b: summary.spots_per_band[b]
                              for b in BAND_ORDER if b in summary.spots_per_band}


def _concat_spots(parts: list[pd.DataFrame]) -> pd.DataFrame:
    """Concatenate chunks; categoricals get their used values as categories, sorted (bands
    in band-plan order), so the table does not depend on how it was chunked."""
    parts = [p for p in parts if len(p)] or [C.empty_spots()]
    cats = [n for n in C.CANONICAL if str(C.GLOSSARY[n].dtype) == "category"]
    plain = pd.concat([p.drop(columns=cats) for p in parts], ignore_index=True) \
        if len(parts) > 1 else parts[0].drop(columns=cats)
    cols = {}
    for name in cats:
        u = pd.api.types.union_categoricals([p[name].array for p in parts], ignore_order=True) \
            if len(parts) > 1 else parts[0][name].array
        cols[name] = _compact_categories(u, band=(name == C.BAND))
    return C.apply_dtypes(plain.assign(**cols)[C.CANONICAL])


def _compact_categories(cat: pd.Categorical, band: bool) -> pd.Categorical:
    """Keep only used categories, sorted (bands in band-plan order); O(n) in rows."""
    codes = np.asarray(cat.codes, dtype=np.int64)
    cats = np.asarray(cat.categories.astype("str"), dtype=object)
    used = np.bincount(codes[codes >= 0], minlength=cats.size) > 0
    if band:
        rank = {b: i for i, b in enumerate(BAND_ORDER)}
        keep = sorted(np.flatnonzero(used), key=lambda i: rank.get(cats[i], len(rank)))
    else:
        keep = sorted(np.flatnonzero(used), key=lambda i: cats[i])
    remap = np.full(cats.size + 1, -1, dtype=np.int64)
    remap[np.asarray(keep, dtype=np.int64)] = np.arange(len(keep))
    return pd.Categorical.from_codes(remap[codes], categories=pd.Index(
        cats[np.asarray(keep, dtype=np.int64)] if keep else [], dtype="str"))


def read_spots(paths, *, mapping=None, units=None, delimiter: Delimiter = "auto",
               header: Header = "auto", slot_minutes: int = C.SLOT_MINUTES, region="all",
               chunk_rows: int | None = None, progress: bool = False,
               max_reject_share: float | None = None, constants=None,
               date_order: DateOrder | None = None) -> IngestResult:
    """Read spot-report CSV files into the canonical table.

    Parameters
    ----------
    paths : str, path-like or sequence of them
        CSV files (any delimiter, optional heading line, UTF-8 or Latin-1, plain or gzip).
    mapping : dict, optional
        Field -> column. Keys are glossary names or CLI field names (``time``, ``tx_call``,
        ``tx_locator``, ``rx_call``, ``rx_locator``, ``frequency``, ``snr``, ``power``,
        ``drift``); values are a heading or a 1-based column position (``time`` may be
        ``"DATE+TIME"``). An explicit mapping always wins over guessing.
    units : dict, optional
        Field -> unit: ``time`` iso|epoch, ``frequency`` Hz|kHz|MHz, ``power`` dBm|W|mW.
        Units not given are inferred per file (see the module docstring).
    delimiter : {"auto", ",", ";", "tab", "space"}
        Column delimiter; ``"auto"`` sniffs it (``"space"`` means runs of blanks).
    header : {"auto", True, False}
        Whether the first line holds headings; ``"auto"`` says yes when it has no numbers.
    slot_minutes : int
        Slot length [min]; slots start at multiples of it since 1970-01-01 UTC (for 2 min:
        even UTC minutes, common practice).
    region : {"1", "2", "3", "all"}
        IARU region whose band plan decides the band (``"all"``: the union).
    chunk_rows : int, optional
        Read this many rows at a time (bounded memory); the result is the same.
    progress : bool
        Show a progress bar on stderr.
    max_reject_share : float or None
        Largest share (0..1) of a file's rows that may be set aside for one reason; more,
        or no row accepted at all, raises :class:`~spotkit.errors.MostlyRejectedError`
        (see :func:`check_reject_share`; :data:`MAX_REJECT_SHARE` is what
        :func:`ingest_to_parquet` and ``spotkit ingest`` use). Default None: the table and
        its rejects are returned whatever their shares (the caller sees the rejects).
    constants : dict, optional
        Field -> one value for every row, for a field the file does not carry (a
        receiver's own decode log has no receiver call or locator column:
        ``{"rx_call": "Q1ABC", "rx_locator": "JO62qm"}``). Keys as in ``mapping`` (not
        ``time``); values are checked as a cell of that field would be (a bad one raises
        :class:`~spotkit.errors.UsageError`), numbers in the field's unit. For one file
        only: the file's path as the key and a dict of fields as the value (two
        receivers' logs: ``{"rx1.log": {"rx_call": "Q1ABC"}, "rx2.log": {"rx_call":
        "Q1ABD"}, "rx_locator": "JO62qm"}``; :func:`constants_by_file`).
    date_order : {"dmy", "mdy", "ymd"}, optional
        Order of day, month and year in dates that are not ISO 8601 (``02.03.2026``).
        Default: ISO dates as they are, other dates day-first or month-first as the
        first rows show (a day above 12); when they cannot show it, an
        :class:`~spotkit.errors.InputError` asks for this.

    Returns
    -------
    IngestResult
        ``.spots``: canonical table (:data:`spotkit.columns.CANONICAL`, glossary dtypes;
        frequency [Hz], SNR [dB], power [dBm], drift [Hz/min], distance [km], bearings
        [deg]); ``.rejects``: :data:`spotkit.columns.REJECT_COLUMNS`, one row per rejected
        input row with its first failing field; ``.summary``: :class:`IngestSummary`;
        ``.duplicates``: one row per removed duplicate, as the rejects (field ``report``,
        value the file and row of the report it repeats, reason :data:`DUPLICATE_REASON`).

    Raises
    ------
    NotASpotTableError
        A file is empty, binary, HTML/XML or has too few columns.
    MappingError
        The columns cannot be matched onto the glossary unambiguously.
    InputError
        A unit cannot be inferred, or the heading and data rows disagree.
    MostlyRejectedError
        No row accepted, or more than ``max_reject_share`` of a file set aside for one
        reason (its ``.result`` holds what was read).
    UsageError
        Bad arguments.

    Examples
    --------
    A tiny invented file: the second row repeats the first (a duplicate), ``XX99`` is no
    locator (``X`` is past the last field letter ``R``). Units come from the headings (MHz,
    dBm) or are inferred (ISO times); slots start at even minutes. The distances are WGS-84
    geodesics between the locator cell centres (``geographiclib``'s
    ``Geodesic.WGS84.Inverse`` gives the same, 502.3 km from JO62qm to JN58td):

    >>> import pathlib, tempfile
    >>> rows = ["time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm",
    ...         "2024-03-01 10:00:12,Q1ABC,JO62qm,Q2XY,JN58td,14.0971,-12,37",
    ...         "2024-03-01 10:00:12,Q1ABC,JO62qm,Q2XY,JN58td,14.0971,-12,37",
    ...         "2024-03-01 10:02:11,Q1ABC,JO62qm,Q3DEF,IO91lk,14.09712,-21,37",
    ...         "2024-03-01 10:04:10,Q1ABC,JO62qm,Q4GH,FN31pr,7.04013,-25,37",
    ...         "2024-03-01 10:06:00,Q1ABC,XX99,Q2XY,JN58td,14.0971,-12,37"]
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = pathlib.Path(d) / "spots.csv"
    ...     _ = path.write_text("\\n".join(rows) + "\\n")
    ...     result = read_spots(path)
    >>> s = result.summary
    >>> s.rows_read, s.accepted, s.rejected, s.duplicates, s.balanced
    (5, 3, 1, 1, True)
    >>> s.spots_per_band, s.rejected_by_reason
    ({'40m': 1, '20m': 2}, {'bad locator': 1})
    >>> table = result.spots[["slot_utc", "rx_call", "band", "snr_db", "distance_km"]]
    >>> print(table.round({"distance_km": 1}).to_string(index=False))
                     slot_utc rx_call band  snr_db  distance_km
    2024-03-01 10:00:00+00:00    Q2XY  20m   -12.0        502.3
    2024-03-01 10:02:00+00:00   Q3DEF  20m   -21.0        996.2
    2024-03-01 10:04:00+00:00    Q4GH  40m   -25.0       6244.0
    >>> print(result.rejects[["source_row", "field", "value", "reason"]].to_string(index=False))
     source_row      field value      reason
              5 tx_locator  XX99 bad locator
    >>> dup = result.duplicates
    >>> dup["source_row"].tolist(), dup["value"].str.endswith("spots.csv row 1").tolist()
    ([2], [True])
    """
    if max_reject_share is not None:
        _check_share(max_reject_share)
    summary = IngestSummary()
    spots, rejects = [], []
    for cols, r in _iter_chunk_columns(
            paths, mapping=mapping, units=units, delimiter=delimiter, header=header,
            slot_minutes=slot_minutes, region=region, chunk_rows=chunk_rows,
            progress=progress, summary=summary, trace_duplicates=True,
            constants=constants, date_order=date_order):
        spots.append(_frame(cols))
        rejects.append(r)
    rej = pd.concat([r for r in rejects if len(r)] or [C.empty_rejects()], ignore_index=True)
    is_dup = (rej[C.REJECT_REASON] == DUPLICATE_REASON).to_numpy()
    result = IngestResult(_concat_spots(spots), rej.loc[~is_dup, C.REJECT_COLUMNS]
                          .reset_index(drop=True), summary,
                          rej.loc[is_dup, C.REJECT_COLUMNS].reset_index(drop=True))
    try:
        check_reject_share(summary, max_reject_share)
    except MostlyRejectedError as exc:
        exc.result = result
        raise
    return result


def _arrow_schema():
    import pyarrow as pa

    types = {"category": pa.dictionary(pa.int32(), pa.string()), "float64": pa.float64(),
             "int64": pa.int64()}
    fields = []
    for name in C.CANONICAL:
        dt = C.GLOSSARY[name].dtype
        t = pa.timestamp("ns", tz="UTC") if dt == C.UTC_DTYPE else types[str(dt)]
        fields.append(pa.field(name, t))
    return pa.schema(fields)


def ingest_to_parquet(paths, out_path, *, chunk_rows: int = 1_000_000, rejects_path=None,
                      max_reject_share: float | None = MAX_REJECT_SHARE,
                      **kw) -> IngestSummary:
    """Stream spot files to one Parquet file chunk by chunk (bounded memory), as one
    transaction.

    The Parquet file and the rejects file are written under temporary names beside their
    targets and renamed into place together only when the run has succeeded
    (:func:`spotkit.io.atomic.staged`): after a failed or interrupted run the files that
    were there before are unchanged and no temporary file is left.

    Parameters
    ----------
    paths : str, path-like or sequence of them
        Input CSV files (as :func:`read_spots`).
    out_path : str or path-like
        Parquet file to write (the canonical table, glossary dtypes).
    chunk_rows : int
        Rows per chunk; peak memory grows with it (roughly 1 kB per row: two chunks are in
        flight, one being read while the one before is cleaned and written), plus 16
        bytes per distinct report (its key hash, and where it was first read so that each
        duplicate can name it).
    rejects_path : str or path-like, optional
        CSV file for the rejects table; removed duplicates are listed in it too (reason
        :data:`DUPLICATE_REASON`, field ``report``, value the file and row of the report
        each repeats), so its rows are ``rejected + duplicates`` of the summary.
    max_reject_share : float or None
        Largest share (0..1) of a file's rows that may be set aside for one reason
        (default :data:`MAX_REJECT_SHARE`, a half); a run refused by
        :func:`check_reject_share` (also: no row accepted) raises
        :class:`~spotkit.errors.MostlyRejectedError` and writes nothing; None: no check.
    **kw
        Further keywords of :func:`read_spots` (mapping, units, delimiter, header,
        slot_minutes, region, progress).

    Returns
    -------
    IngestSummary

    Raises
    ------
    UsageError
        An output is also an input, the two outputs are the same file, or an output is a
        folder (raised before anything is read or written).
    OutputError
        An output folder cannot be written in.
    MostlyRejectedError
        See ``max_reject_share``.
    KeyboardInterrupt
        Ctrl-C, or SIGTERM (:class:`spotkit.io.atomic.Interrupted`): nothing is written,
        unless it came during the commit, when the outputs are in place and the exception's
        ``committed`` is True.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> rows = ["time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm",
    ...         "2024-03-01 10:00:12,Q1ABC,JO62qm,Q2XY,JN58td,14.0971,-12,37",
    ...         "2024-03-01 10:04:00,Q1ABC,JO62qm,Q3XY,JN58td,14.0971,-15,37",
    ...         "2024-03-01 10:06:00,Q1ABC,XX99,Q2XY,JN58td,14.0971,-12,37"]
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = pathlib.Path(d) / "spots.csv"
    ...     _ = path.write_text("\\n".join(rows) + "\\n")
    ...     summary = ingest_to_parquet(path, pathlib.Path(d) / "out" / "spots.parquet",
    ...                                 rejects_path=pathlib.Path(d) / "rejects.csv")
    ...     written = sorted(p.name for p in pathlib.Path(d).rglob("*"))
    ...     spots = load_spots(pathlib.Path(d) / "out" / "spots.parquet")
    >>> summary.accepted, summary.rejected, written
    (2, 1, ['out', 'rejects.csv', 'spots.csv', 'spots.parquet'])
    >>> len(spots), spots["rx_call"].tolist()
    (2, ['Q2XY', 'Q3XY'])
    """
    from spotkit.io.atomic import check_outputs, signals_raise, staged

    inputs = _as_paths(paths)
    if max_reject_share is not None:
        _check_share(max_reject_share)
    outputs = check_outputs([out_path, rejects_path], inputs=inputs)
    out_path = outputs[0]
    rejects_path = outputs[1] if rejects_path is not None else None
    summary = IngestSummary()
    committed = False
    try:
        with signals_raise(), staged(outputs) as temps:
            _write_staged(inputs, temps[0], temps[1] if rejects_path is not None else None,
                          summary, chunk_rows, kw)
            try:
                check_reject_share(summary, max_reject_share)
            except MostlyRejectedError as exc:
                raise MostlyRejectedError(f"{exc}; nothing written, earlier files unchanged",
                                          summary) from None
            _pause_point("staged")
        committed = True
    except KeyboardInterrupt as exc:  # (SIGTERM too, as atomic.Interrupted)
        exc.committed = committed or getattr(exc, "committed", False)
        raise
    return summary


def _pause_point(name: str) -> None:
    from spotkit.io.atomic import _pause_point as pause

    pause(name)


def _write_staged(paths, tmp, rejects_tmp, summary, chunk_rows, kw) -> None:
    """Write the Parquet file ``tmp`` and the rejects CSV ``rejects_tmp`` (or none)."""
    import pyarrow.parquet as pq

    schema = _arrow_schema()
    with contextlib.ExitStack() as stack:
        rej_fh = None
        if rejects_tmp is not None:
            rej_fh = stack.enter_context(open(rejects_tmp, "w", encoding="utf-8", newline=""))
            C.empty_rejects().to_csv(rej_fh, index=False)
        dict_cols = [n for n in C.CANONICAL if str(C.GLOSSARY[n].dtype) == "category"]
        # statistics for the plain columns only: min/max of the text columns cost a third
        # of the write time and say little (calls and locators are not sorted)
        plain = [n for n in C.CANONICAL if n not in dict_cols]
        # one chunk is encoded and written in a second thread (pyarrow releases the GIL)
        # while the next is read and cleaned; at most one chunk waits
        # numbers with few distinct values (times, positions of locators, frequency, SNR,
        # power, drift) are dictionary-encoded too: smaller and faster to write than plain
        # + snappy; distance and bearings (a value per pair) are written plain, as snappy
        # does not shrink them; the row numbers as deltas (they count up); values are
        # encoded 65,536 at a time (the default 1,024 costs a tenth more CPU)
        few = [C.TIME, C.SLOT, C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.FREQ, C.SNR,
               C.POWER, C.DRIFT]
        raw = [C.DISTANCE, C.BEARING, C.REVERSE_BEARING]
        writer = stack.enter_context(pq.ParquetWriter(
            tmp, schema, use_dictionary=dict_cols + few,
            compression={n: "none" if n in raw else "snappy" for n in C.CANONICAL},
            column_encoding={C.SOURCE_ROW: "DELTA_BINARY_PACKED"},
            write_statistics=plain, write_batch_size=1 << 16))
        pool = stack.enter_context(ThreadPoolExecutor(max_workers=1))
        wrote, pending = False, None
        for spots, rejects in _iter_chunk_columns(paths, chunk_rows=chunk_rows,
                                                  summary=summary, trace_duplicates=True,
                                                  **_read_kw(kw)):
            if (spots is not None and len(spots[C.SOURCE_ROW])) or not wrote:
                table = _table(spots, schema)
                if pending is not None:
                    pending.result()
                pending = pool.submit(writer.write_table, table)
                wrote = True
            if rej_fh is not None and len(rejects):
                rejects[C.REJECT_COLUMNS].to_csv(rej_fh, index=False, header=False)
            _pause_point("chunk")
        if pending is not None:
            pending.result()


def _read_kw(kw: dict) -> dict:
    """Keywords of :func:`read_spots` with their defaults filled in."""
    defaults = dict(mapping=None, units=None, delimiter="auto", header="auto",
                    slot_minutes=C.SLOT_MINUTES, region="all", progress=False,
                    constants=None, date_order=None)
    unknown = set(kw) - set(defaults)
    if unknown:
        raise TypeError(f"unexpected keyword(s): {', '.join(sorted(unknown))}")
    return defaults | kw


def write_rejects(rejects: pd.DataFrame, path) -> Path:
    """Write a rejects table as CSV (UTF-8), in full or not at all
    (:func:`spotkit.io.atomic.staged`).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> rejects = pd.DataFrame({"source_file": ["spots.csv"], "source_row": [5],
    ...                         "field": ["tx_locator"], "value": ["XX99"],
    ...                         "reason": ["bad locator"]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = write_rejects(rejects, pathlib.Path(d) / "rejects.csv")
    ...     print(path.name)
    ...     print(path.read_text(encoding="utf-8"), end="")
    rejects.csv
    source_file,source_row,field,value,reason
    spots.csv,5,tx_locator,XX99,bad locator
    """
    from spotkit.io.atomic import staged

    path = Path(path)
    with staged([path]) as (tmp,):
        rejects[C.REJECT_COLUMNS].to_csv(tmp, index=False)
    return path


def load_spots(source, **kw) -> pd.DataFrame:
    """A spot table from a DataFrame (returned as is), a Parquet file or spot CSV files.

    Parameters
    ----------
    source : pandas.DataFrame, str or path-like
        ``.parquet`` files are read with the glossary dtypes; so are directories: a spotkit
        archive (its committed files, :mod:`spotkit.io.store`) or a plain folder of
        ``.parquet`` / ``.pq`` files (all of them, subfolders included, stacked); other
        files go through :func:`read_spots` (``**kw`` passed on).

    Raises
    ------
    InputError
        When a CSV gives no accepted row; when a folder is neither an archive nor holds a
        Parquet file (the message lists what it holds); when a Parquet file holds no spot
        column at all
        (:class:`~spotkit.errors.NotASpotTableError`) or a spot column of the wrong type
        (e.g. SNR as text).

    Warns
    -----
    SpotkitWarning
        When a Parquet file's times carry no time zone: they are read as UTC, the time of
        every spot report.

    Examples
    --------
    A DataFrame comes back as it is; a CSV is read with :func:`read_spots` (a Parquet file
    is shown under :func:`ingest_to_parquet`):

    >>> from spotkit.columns import empty_spots
    >>> frame = empty_spots()
    >>> load_spots(frame) is frame
    True
    >>> import pathlib, tempfile
    >>> rows = ["time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm",
    ...         "2024-03-01 10:00:12,Q1ABC,JO62qm,Q2XY,JN58td,14.0971,-12,37"]
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = pathlib.Path(d) / "spots.csv"
    ...     _ = path.write_text("\\n".join(rows) + "\\n")
    ...     spots = load_spots(path)
    >>> spots[["tx_call", "rx_call", "band", "power_dbm"]].to_dict("records")
    [{'tx_call': 'Q1ABC', 'rx_call': 'Q2XY', 'band': '20m', 'power_dbm': 37.0}]
    """
    if isinstance(source, pd.DataFrame):
        return source
    path = Path(source)
    if path.is_dir() or path.suffix.lower() in (".parquet", ".pq"):
        return _read_parquet(path)
    res = read_spots(path, **kw)
    if res.spots.empty:
        reasons = ", ".join(f"{k}: {v}" for k, v in res.summary.rejected_by_reason.items())
        raise InputError(f"{path}: no usable spot rows ({res.summary.rows_read} read; "
                         f"rejected {reasons or 'none'})")
    return res.spots


def _read_parquet(path: Path) -> pd.DataFrame:
    """A Parquet spot table (a file, or an archive folder through :mod:`spotkit.io.store`).

    A file's schema is checked before its rows are read: it must hold at least one glossary
    column, times must be timestamps and numbers numbers (an :class:`InputError` naming the
    column otherwise). Times without a time zone are read as UTC, with a
    :class:`~spotkit.errors.SpotkitWarning` that says so.
    """
    import warnings

    import pyarrow as pa
    import pyarrow.parquet as pq

    from spotkit.errors import NotASpotTableError, SpotkitError, SpotkitWarning
    from spotkit.io import store
    from spotkit.io.manifest import MANIFEST_NAME

    if path.is_dir() and not (path / MANIFEST_NAME).exists():
        return _read_parquet_folder(path)
    if not path.is_file():  # an archive folder, or nothing: the store says which
        return store.read_spots_parquet(path)
    try:
        schema = pq.read_schema(path)
    except (pa.ArrowException, OSError):  # not Parquet: the store's message says so
        return store.read_spots_parquet(path)
    names = list(schema.names)
    if not any(n in C.GLOSSARY for n in names):
        shown = ", ".join(names[:8]) + (", ..." if len(names) > 8 else "")
        raise NotASpotTableError(
            f"{path}: not a spot table: none of its columns ({shown or 'none'}) is a spot "
            f"column such as {C.TIME}, {C.TX_CALL} or {C.SNR}; make one with 'spotkit ingest'")
    naive, wrong = [], []
    for f in schema:
        col = C.GLOSSARY.get(f.name)
        if col is None or pa.types.is_null(f.type):
            continue
        if col.dtype == C.UTC_DTYPE:
            if not pa.types.is_timestamp(f.type):
                wrong.append(f"{f.name} holds {f.type}, not times")
            elif f.type.tz is None:
                naive.append(f.name)
        elif str(col.dtype) in ("float64", "int64") and not (
                pa.types.is_integer(f.type) or pa.types.is_floating(f.type)):
            wrong.append(f"{f.name} holds {f.type}, not numbers")
    if wrong:
        raise InputError(f"{path}: {'; '.join(wrong)}")
    try:
        if not naive:
            return store.read_spots_parquet(path)
        table = pq.read_table(path)
        for name in naive:
            i = table.schema.get_field_index(name)
            utc = pa.timestamp(table.schema.field(i).type.unit, tz="UTC")
            table = table.set_column(i, name, table.column(i).cast(utc))
        spots = store.table_to_spots(table)
    except SpotkitError:
        raise
    except (pa.ArrowException, ValueError, TypeError) as exc:
        raise InputError(f"{path}: cannot read as a spot table ({exc})") from None
    warnings.warn(f"{path}: the times in {', '.join(naive)} carry no time zone; read as UTC",
                  SpotkitWarning, stacklevel=3)
    first = [n for n in C.CANONICAL if n in spots.columns]
    return spots[first + [n for n in spots.columns if n not in first]]


#: file name endings read as Parquet in a folder that is not an archive
PARQUET_SUFFIXES = (".parquet", ".pq")


def _read_parquet_folder(path: Path) -> pd.DataFrame:
    """A folder of Parquet spot files that is not a spotkit archive (no manifest): every
    ``.parquet`` / ``.pq`` file in it and its subfolders, in name order, each read and
    checked as a single file (:func:`_read_parquet`), stacked.

    An :class:`InputError` says what the folder holds when it has no Parquet file. Rows
    are taken as they are (no de-duplication across files; an archive, ``spotkit ingest
    --dataset``, keeps each export once).
    """
    from spotkit.io.manifest import MANIFEST_NAME

    files = sorted(p for p in path.rglob("*") if p.is_file()
                   and p.suffix.lower() in PARQUET_SUFFIXES and not p.name.startswith("."))
    if not files:
        found = sorted(p.relative_to(path).as_posix() for p in path.rglob("*") if p.is_file())
        shown = ", ".join(found[:5]) + (", ..." if len(found) > 5 else "")
        raise InputError(
            f"{path}: expected a spotkit archive (a folder with {MANIFEST_NAME}) or a "
            f"folder of Parquet spot files "
            f"({'/'.join(PARQUET_SUFFIXES)}); found "
            + (f"{len(found)} other file(s): {shown}" if found else "no files at all"))
    parts = [_read_parquet(f) for f in files]
    spots = pd.concat(parts, ignore_index=True) if len(parts) > 1 else parts[0]
    return C.apply_dtypes(spots)


__all__ = [
    "PARQUET_SUFFIXES", "constants_by_file",
    "IngestSummary", "IngestResult", "read_spots", "iter_spot_chunks", "ingest_to_parquet",
    "load_spots", "write_rejects", "DUPLICATE_REASON", "MAX_REJECT_SHARE",
    "check_reject_share", "reject_hint",
]
