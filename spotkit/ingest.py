"""Reading spot-report CSV files into the canonical table, losing nothing.

Model
-----
A spot file is a delimited text table (comma, semicolon, tab or runs of blanks), with or
without a heading line, UTF-8 (with or without byte-order mark) or Latin-1, plain or gzip.
Each data row is one report. The reader

1. sniffs the layout from the first lines (encoding, delimiter, heading line, decimal comma;
   :mod:`spotkit.sniff`);
2. maps the file's columns onto the glossary (:mod:`spotkit.columns`): an explicit
   ``mapping`` always wins; otherwise headings are matched by generic words (see
   :func:`spotkit.sniff.match_headings`), and a file without headings is classified column
   by column from its content (see :func:`spotkit.sniff.infer_columns`);
3. infers units not given (time ISO 8601 text or epoch seconds; frequency Hz, kHz or MHz from
   which unit puts the values into amateur bands; power dBm, W or mW, see
   :func:`spotkit.sniff.infer_power_unit`) from the first :data:`SAMPLE_ROWS` rows, and
   refuses when that is ambiguous;
4. validates every row; a row with any unusable field goes to the rejects table
   (:data:`spotkit.columns.REJECT_COLUMNS`) with the first failing field and a plain reason;
5. snaps each time to the start of its slot (``slot_minutes``, default 2: slots start at even
   UTC minutes, common practice), removes exact duplicates (equal on
   :data:`spotkit.columns.REPORT_KEY`, across chunks and files; the first is kept) and adds
   band, locator positions, distance and bearings (:func:`spotkit.geo.add_path_columns`).

``rows read = accepted + rejected + duplicates`` holds for every call. A *row* is one line
after the heading line, blank lines included (they are rejected as blank), and
``source_row`` is its 1-based number counted from the first line after the heading (the
heading line is not counted; quoted fields spanning lines are not supported).

Files are read by pyarrow's streaming CSV reader when they are comma, semicolon or tab
delimited with decimal points, and by pandas' C parser otherwise (blank-delimited files,
decimal commas); both give the same table. Rows with the wrong number of fields are set
aside ("wrong number of fields"); the pandas reader fills a row with too few fields with
empty cells instead (so such a row is accepted when only the optional drift is missing).
Files without a heading line: columns are classified by content (:func:`infer_columns`),
but which call is the transmitter cannot be seen in the data, so ``tx_call`` or ``rx_call``
must be mapped (``--map tx_call=7``: 1-based column position).

How the bulk path is kept fast: the CSV is read by pyarrow with several threads, one chunk
ahead in a second thread, with calls, locators and times dictionary-encoded (validated and
parsed once per distinct value) and the numeric columns parsed as numbers (a file with odd
numeric cells is read again as text from the first one, a row with the wrong number of
fields again in one thread, so that rejects keep their row numbers); duplicates are found
from one sort of the key hashes per chunk; pair geometry comes from a dense table of locator
numbers; Parquet chunks are built straight from the arrays and written in a third thread.

Speed (benchmarks/bench_ingest.py, 10 million rows, 646 MB, 2-core machine shared with
other jobs): 11.2 s streamed to Parquet (0.9 million rows/s), 4.5x the 2.5 s of a bare
``pandas.read_csv`` of the same file, when the machine was otherwise nearly idle; 16.7 s
(6.1x) when other jobs kept it busy. The target of 3x is not met: the ingest does 14-17 s
of CPU work against about 3 s for the bare read, and overlaps it on two cores only when
they are free. Peak memory 1.5 GB at 1 million rows per chunk (target < 6 GB).

Known limits: duplicates are found by a 64-bit hash of the report key, so two different
reports are wrongly taken as duplicates with probability about ``n**2 / 2**65`` (3e-6 for
10 million rows). Units are inferred once per file from its first rows. A file that mixes
UTF-8 and Latin-1 is read as Latin-1. Times without a zone are taken as UTC.
"""
from __future__ import annotations

import re
import warnings
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterator

import numpy as np
import pandas as pd

from . import columns as C
from .bands import BAND_ORDER, REGIONS, band_plan
from .errors import InputError, UsageError
from .locator import locator_to_latlon, normalize_locator
from .sniff import (  # noqa: F401  (public names re-exported from here)
    _CALL_RE, _CAT_FIELDS, _CLI_NAME, DELIMITERS, MAX_WATTS, SAMPLE_ROWS, TIME_UNITS,
    UNIT_CHOICES, Delimiter, Header, _check_mapping, _check_units, _csv_kwargs,
    _delimiter_arg, _Layout, _prepare_layout, _to_number, infer_columns, infer_frequency_unit,
    infer_power_unit, match_headings,
)
from .units import frequency_to_hz, power_to_dbm

#: Valid ranges (inclusive): SNR [dB] and power [dBm] (common practice).
SNR_RANGE_DB = (-60.0, 60.0)
POWER_RANGE_DBM = (0.0, 60.0)
#: Accepted report times [UTC]; earlier or later times are rejected as out of range.
TIME_RANGE = (pd.Timestamp("1990-01-01", tz="UTC"), pd.Timestamp("2100-01-01", tz="UTC"))


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
    """What :func:`read_spots` returns: the canonical table, the rejects and the summary."""

    spots: pd.DataFrame
    rejects: pd.DataFrame
    summary: IngestSummary

    def summary_text(self) -> str:
        """The summary as plain text."""
        return self.summary.text()


# --- reading -------------------------------------------------------------------------------------
def _raw_chunks(layout: _Layout, chunk_rows: int | None) -> Iterator[tuple[pd.DataFrame, list]]:
    """Yield (raw chunk, skipped lines [(line number, message)])."""
    kw = _csv_kwargs(layout)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        if chunk_rows:
            reader = pd.read_csv(layout.path, chunksize=chunk_rows, **kw)
            with reader:
                for chunk in reader:
                    yield chunk, _skipped_lines(caught)
        else:
            chunk = pd.read_csv(layout.path, **kw)
            yield chunk, _skipped_lines(caught)
    for w in caught:
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)


#: Bytes per block of the pyarrow CSV reader.
_BLOCK_BYTES = 1 << 27


def _block_bytes(chunk_rows: int | None) -> int:
    """Reader block size: about one chunk (72 bytes a row), 1 MB to :data:`_BLOCK_BYTES`."""
    if not chunk_rows:
        return _BLOCK_BYTES
    return int(min(_BLOCK_BYTES, max(1 << 20, 72 * chunk_rows)))


class _RowNumbersUnknown(Exception):
    """A row was set aside by a multithreaded read, which does not know its line number."""


class _NotPlainNumbers(Exception):
    """A numeric column has a cell that is not a plain decimal number (or spells NaN or
    infinity): it must be read as text to tell empty, bad and out-of-range cells apart."""


def _arrow_chunks(layout: _Layout, chunk_rows: int | None
                  ) -> Iterator[tuple[pd.DataFrame, list]]:
    """Like :func:`_raw_chunks`, with pyarrow's streaming CSV reader (faster; used for
    comma, semicolon and tab files with decimal points). Rows with too few fields are set
    aside like rows with too many.

    The file is read with several threads; those cannot tell the line number of a row with
    the wrong number of fields, so at the first such row the file is read again in one
    thread from where the chunks handed out so far end (they held no such row). Likewise
    the numeric columns are first parsed as numbers by the reader, and read again as text
    from there at the first cell that is not a plain number.
    """
    done, threads, numbers = 0, True, True
    while True:
        try:
            for raw, skipped in _arrow_pass(layout, chunk_rows, threads, done, numbers):
                done += len(raw)
                yield raw, skipped
            return
        except _RowNumbersUnknown:
            threads = False
        except _NotPlainNumbers:
            numbers = False


def _arrow_pass(layout: _Layout, chunk_rows: int | None, threads: bool, skip: int,
                numbers: bool = False) -> Iterator[tuple[pd.DataFrame, list]]:
    """One read of the file for :func:`_arrow_chunks`, leaving out the first ``skip`` data
    rows (all good ones); ``numbers``: parse the numeric columns as float64."""
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pacsv

    names = [f"c{i}" for i in range(layout.ncols)]
    cats = {names[i] for f, pos in layout.fields.items() if f in _CAT_FIELDS for i in pos}
    nums = {names[i] for f, pos in layout.fields.items()
            if f in (C.FREQ, C.SNR, C.POWER, C.DRIFT) for i in pos} if numbers else set()
    types = {n: pa.dictionary(pa.int32(), pa.string()) if n in cats
             else pa.float64() if n in nums else pa.string() for n in names}
    bad: list = []
    unknown: list = []

    def handler(row):
        if row.number is None or row.number < 0:
            unknown.append(row)
        bad.append((row.number, f"expected {row.expected_columns} fields, "
                                f"saw {row.actual_columns}"))
        return "skip"

    def plain(batch) -> bool:  # parsed numbers all finite or empty
        return not any(pc.any(pc.invert(pc.is_finite(batch.column(n)))).as_py()
                       for n in nums)

    encoding = {"utf-8": "utf8", "utf-8-sig": "utf8", "latin-1": "latin1"}[layout.encoding]
    source = pa.input_stream(str(layout.path), compression=layout.compression)
    try:
        reader = _open_csv(
            pacsv, source, nums,
            read_options=pacsv.ReadOptions(column_names=names, skip_rows=layout.header_lines,
                                           block_size=_block_bytes(chunk_rows),
                                           use_threads=threads,
                                           encoding=encoding),
            parse_options=pacsv.ParseOptions(delimiter=layout.sep, invalid_row_handler=handler,
                                             ignore_empty_lines=False),
            convert_options=pacsv.ConvertOptions(column_types=types, strings_can_be_null=True,
                                                 quoted_strings_can_be_null=True,
                                                 null_values=[""]))
        if unknown:
            raise _RowNumbersUnknown
        batches, n = [], 0
        batch_iter = iter(reader)

        def emit():
            table = pa.Table.from_batches(batches, schema=reader.schema).unify_dictionaries()
            df = table.combine_chunks().to_pandas()
            skipped = [(line, msg) for line, msg in bad]
            bad.clear()
            return df, skipped

        while True:
            try:
                batch = next(batch_iter)
            except StopIteration:
                break
            except pa.ArrowInvalid:
                if nums:  # a cell the number parser refused: read as text from here
                    raise _NotPlainNumbers from None
                raise
            if unknown:  # the handler runs before the batch holding the row is returned
                raise _RowNumbersUnknown
            if nums and not plain(batch):
                raise _NotPlainNumbers
            if skip:
                k = min(skip, batch.num_rows)
                batch, skip = batch.slice(k), skip - k
                if not batch.num_rows:
                    continue
            batches.append(batch)
            n += batch.num_rows
            if chunk_rows and n >= chunk_rows:
                yield emit()
                batches, n = [], 0
        if unknown:
            raise _RowNumbersUnknown
        if batches or bad or not chunk_rows:
            yield emit()
    finally:
        source.close()


def _open_csv(pacsv, source, nums, **kw):
    """``pacsv.open_csv``; a cell the number parser refuses in the first block (read at
    once) raises :class:`_NotPlainNumbers`."""
    import pyarrow as pa

    try:
        return pacsv.open_csv(source, **kw)
    except pa.ArrowInvalid:
        if nums:
            raise _NotPlainNumbers from None
        raise


def _skipped_lines(caught) -> list:
    out = []
    rest = []
    for w in caught:
        for m in re.finditer(r"Skipping line (\d+): (.*)", str(w.message)):
            out.append((int(m.group(1)), m.group(2).strip()))
        if "Skipping line" not in str(w.message):
            rest.append(w)
    caught[:] = rest
    return out


# --- cleaning ------------------------------------------------------------------------------------
def _recode(cat: pd.Series, fn) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Apply ``fn`` (array of distinct strings -> array of normalised strings or None) to the
    categories; return (new categories, new codes, raw codes)."""
    codes = cat.cat.codes.to_numpy()
    cats = np.asarray(cat.cat.categories.astype("str"), dtype=object)
    norm = np.asarray(fn(cats), dtype=object) if cats.size else np.array([], dtype=object)
    ok = np.array([x is not None for x in norm], dtype=bool)
    uniq, inv = np.unique(norm[ok].astype(str), return_inverse=True) if ok.any() else (
        np.array([], dtype=str), np.array([], dtype=int))
    mapping = np.full(cats.size + 1, -2, dtype=np.int64)  # -1: empty cell, -2: bad value
    mapping[np.flatnonzero(ok)] = inv
    mapping[-1] = -1
    return uniq, mapping[codes], codes


def _norm_calls(cats):
    up = np.char.upper(np.char.strip(cats.astype(str)))
    ok = np.array([bool(_CALL_RE.match(x)) for x in up], dtype=bool)
    return np.where(ok, up, None)


def _parse_time(cols: list[pd.Series], unit: str) -> tuple[np.ndarray, np.ndarray]:
    """Parse time categories; returns (int64 ns since epoch, status) with status 0 ok,
    1 empty, 2 unparseable, 3 out of range."""
    codes = [c.cat.codes.to_numpy().astype(np.int64) for c in cols]
    cats = [np.asarray(c.cat.categories.astype("str"), dtype=object) for c in cols]
    empty = np.zeros(len(codes[0]), dtype=bool)
    for cd in codes:
        empty |= cd < 0
    if len(cols) == 2:
        combo = codes[0] * (len(cats[1]) + 1) + codes[1]
        keys, inv = np.unique(np.where(empty, -1, combo), return_inverse=True)
        texts = np.array([f"{cats[0][k // (len(cats[1]) + 1)]} {cats[1][k % (len(cats[1]) + 1)]}"
                          if k >= 0 else "" for k in keys], dtype=object)
    else:
        inv = np.where(empty, len(cats[0]), codes[0])
        texts = np.append(cats[0], "")
    s = pd.Series(texts, dtype="str").str.strip()
    lo, hi = (t.value // 10**9 for t in TIME_RANGE)
    if unit == "epoch":
        secs = _to_number(s, ".")
        unparsed = secs.isna().to_numpy()
        bad_range = ((secs < lo) | (secs >= hi)).to_numpy()
        parsed = pd.to_datetime(secs.where(~bad_range), unit="s", utc=True)
    else:
        parsed = pd.to_datetime(s, format="ISO8601", utc=True, errors="coerce")
        unparsed = parsed.isna().to_numpy()
        bad_range = (parsed.notna() & ((parsed < TIME_RANGE[0]) | (parsed >= TIME_RANGE[1]))
                     ).to_numpy()
        parsed = parsed.where(~bad_range)
    parsed = parsed.dt.as_unit("ns")
    ns = parsed.dt.tz_localize(None).to_numpy().view("i8")
    status_k = np.where(unparsed, 2, np.where(bad_range, 3, 0))
    status = np.where(empty, 1, status_k[inv])
    return ns[inv], status


def _fmt_number(x: float) -> str:
    return np.format_float_positional(x, trim="-") if np.isfinite(x) else str(x)


def _cell_text(s: pd.Series, decimal: str) -> np.ndarray:
    """Cell text for the rejects table; numbers in one spelling whether the column was
    read as numbers or as text (so the table does not depend on chunking)."""
    if pd.api.types.is_numeric_dtype(s.dtype):
        return np.array(["" if np.isnan(x) else _fmt_number(x) for x in s.to_numpy(float)],
                        dtype=object)
    text = s.astype("str").fillna("").to_numpy(dtype=object)
    nums = _to_number(s, decimal).to_numpy()
    return np.array([_fmt_number(x) if np.isfinite(x) else t for t, x in zip(text, nums)],
                    dtype=object)


class _Checker:
    """Collects the first failure of each row."""

    def __init__(self, n: int):
        self.field = np.full(n, None, dtype=object)
        self.reason = np.full(n, None, dtype=object)
        self.bad = np.zeros(n, dtype=bool)
        self.raw = {}

    def fail(self, name: str, mask: np.ndarray, reason, raw: pd.Series | None):
        new = mask & ~self.bad
        if not new.any():
            return
        self.bad |= new
        self.field[new] = name
        self.reason[new] = reason[new] if isinstance(reason, np.ndarray) else reason
        if raw is not None:
            self.raw.setdefault(name, raw)


def _clean_chunk(raw: pd.DataFrame, layout: _Layout, rows: np.ndarray, region: str,
                 slot_minutes: int) -> tuple[pd.DataFrame, pd.DataFrame]:
    n = len(raw)
    chk = _Checker(n)
    col = {f: [raw.iloc[:, i] for i in pos] for f, pos in layout.fields.items()}
    maybe_blank = np.flatnonzero(col[C.TIME][0].isna().to_numpy()
                                 & col[C.TX_CALL][0].isna().to_numpy())
    blank = np.zeros(n, dtype=bool)
    blank[maybe_blank] = raw.iloc[maybe_blank].isna().all(axis=1).to_numpy()
    chk.fail("row", blank, "blank line", None)

    ns, status = _parse_time(col[C.TIME], layout.units["time"])

    def time_text(idx):
        parts = [c.iloc[idx].astype("str").fillna("").to_numpy(dtype=object)
                 for c in col[C.TIME]]
        return parts[0] if len(parts) == 1 else np.char.add(
            np.char.add(parts[0].astype(str), " "), parts[1].astype(str)).astype(object)

    for code, reason in ((1, "empty time"), (2, "unparseable time"),
                         (3, "time out of range (before 1990 or from 2100)")):
        chk.fail(C.TIME, status == code, reason, time_text)

    out = {}
    for f, fn, what in ((C.TX_CALL, _norm_calls, "call"),
                        (C.TX_LOCATOR, normalize_locator, "locator"),
                        (C.RX_CALL, _norm_calls, "call"),
                        (C.RX_LOCATOR, normalize_locator, "locator")):
        cats, codes, _ = _recode(col[f][0], fn)
        chk.fail(f, codes == -1, f"empty {what}", col[f][0])
        chk.fail(f, codes == -2, f"bad {what}", col[f][0])
        out[f] = (cats, codes)

    def number(f, label, lo, hi, unit_txt, convert=None):
        rawc = col[f][0]
        v = _to_number(rawc, layout.decimal).to_numpy()
        empty = rawc.isna().to_numpy()  # numeric columns: also cells reading "nan"
        if convert is not None:
            with np.errstate(divide="ignore", invalid="ignore"):
                v = convert(v)
        nan = np.isnan(v)
        chk.fail(f, nan & empty, f"empty {label}", rawc)
        chk.fail(f, nan & ~empty, f"{label} not a number", rawc)
        if lo is not None:
            chk.fail(f, np.isfinite(v) & ((v < lo) | (v > hi)) | np.isinf(v),
                     f"{label} outside {lo:+g}..{hi:+g} {unit_txt}".replace("+0..", "0.."), rawc)
        return v

    freq = number(C.FREQ, "frequency", None, None, "",
                  lambda v: frequency_to_hz(v, layout.units["frequency"]))
    band = _band_codes(freq, region)
    chk.fail(C.FREQ, np.isfinite(freq) & (band < 0), "frequency not in an amateur band",
             col[C.FREQ][0])
    snr = number(C.SNR, "SNR", *SNR_RANGE_DB, "dB")
    power = number(C.POWER, "power", *POWER_RANGE_DBM, "dBm",
                   lambda v: power_to_dbm(v, layout.units["power"]))
    if C.DRIFT in col:
        rawd = col[C.DRIFT][0]
        drift = _to_number(rawd, layout.decimal).to_numpy()
        chk.fail(C.DRIFT, rawd.notna().to_numpy() & ~np.isfinite(drift), "drift not a number",
                 rawd)
    else:
        drift = np.full(n, np.nan)

    bad = chk.bad
    keep = ~bad if bad.any() else slice(None)
    time_ns = ns[keep]
    slot_ns = np.int64(slot_minutes) * 60 * 10**9
    spots = {  # times as int64 ns since 1970 UTC until the table is built
        C.TIME: time_ns,
        C.SLOT: time_ns - np.mod(time_ns, slot_ns),
    }
    for f in (C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR):
        cats, codes = out[f]
        spots[f] = pd.Categorical.from_codes(codes[keep], categories=pd.Index(cats, dtype="str"),
                                             validate=False)  # codes made by _recode
    spots[C.FREQ] = freq[keep]
    spots[C.BAND] = pd.Categorical.from_codes(band[keep], categories=pd.Index(BAND_ORDER,
                                                                               dtype="str"),
                                              validate=False)
    spots[C.SNR] = snr[keep]
    spots[C.POWER] = power[keep]
    spots[C.DRIFT] = drift[keep]
    spots[C.SOURCE_ROW] = rows[keep]

    idx = np.flatnonzero(bad)
    values = np.full(idx.size, "", dtype=object)
    for name, rawc in chk.raw.items():
        sel = chk.field[idx] == name
        if not sel.any():
            continue
        if callable(rawc):
            values[sel] = rawc(idx[sel])
            continue
        cells = rawc.iloc[idx[sel]]
        values[sel] = _cell_text(cells, layout.decimal) if name in (
            C.FREQ, C.SNR, C.POWER, C.DRIFT) else cells.astype("str").fillna("").to_numpy(
            dtype=object)
    rejects = pd.DataFrame({
        C.SOURCE_FILE: layout.name,
        C.SOURCE_ROW: rows[idx].astype("int64"),
        C.REJECT_FIELD: [_CLI_NAME.get(f, f) for f in chk.field[idx]],
        C.REJECT_VALUE: values,
        C.REJECT_REASON: chk.reason[idx],
    }, index=pd.RangeIndex(idx.size))
    return spots, rejects


# --- duplicates across chunks --------------------------------------------------------------------
class _SeenKeys:
    """Set of 64-bit report-key hashes kept as a few sorted arrays (log-structured).

    Queries come sorted, so that the binary searches walk each array in order
    (cache-friendly); arrays of similar size are merged, so there are O(log n) of them.
    """

    def __init__(self):
        self.runs: list[np.ndarray] = []

    def contains_sorted(self, hs: np.ndarray) -> np.ndarray:
        """Which of the sorted hashes ``hs`` are in the set."""
        found = np.zeros(hs.size, dtype=bool)
        for run in self.runs:
            pos = np.searchsorted(run, hs)
            pos[pos == run.size] = 0
            found |= run[pos] == hs
        return found

    def add_sorted(self, hs: np.ndarray) -> None:
        """Add sorted hashes not yet in the set."""
        if not hs.size:
            return
        self.runs.append(hs)
        while len(self.runs) > 1 and self.runs[-1].size * 2 >= self.runs[-2].size:
            b = self.runs.pop()
            a = self.runs.pop()
            merged = np.concatenate([a, b])
            del a, b  # free the two runs before sorting: peak 2n hashes, not 3n
            merged.sort(kind="stable")  # timsort/radix: two sorted runs merge in O(n)
            self.runs.append(merged)


def _duplicates(spots: dict, seen: _SeenKeys) -> np.ndarray:
    """Which rows repeat a report seen before (in this chunk or an earlier one)."""
    n = len(spots[C.SOURCE_ROW])
    if not n:
        return np.zeros(0, dtype=bool)
    h = np.zeros(n, dtype=np.uint64)
    with np.errstate(over="ignore"):
        for name in C.REPORT_KEY:
            v = spots[name]
            v = v.array if isinstance(v, pd.Index) else v
            h = h * np.uint64(0x100000001B3) ^ pd.util.hash_array(v)
    hs = np.sort(h)
    again = np.zeros(n, dtype=bool)  # sorted position repeats the one before it
    np.equal(hs[1:], hs[:-1], out=again[1:])
    found = seen.contains_sorted(hs)
    seen.add_sorted(hs[~again & ~found])  # sorted, distinct, new
    dup = np.zeros(n, dtype=bool)
    if again.any() or found.any():
        # the few rows whose hash repeats: a repeat within the chunk (the row read first is
        # kept) or a hash seen in an earlier chunk
        repeated = np.unique(hs[again | found])
        cand = np.flatnonzero(pd.Index(repeated).get_indexer(h) >= 0)
        hc = h[cand]
        dup[cand] = (pd.Series(hc).duplicated().to_numpy()
                     | (pd.Index(np.unique(hs[found])).get_indexer(hc) >= 0))
    return dup


class _DayKeys:
    """Report-key hashes kept per slot day, forgetting the days more than ``window_days``
    before the latest day read: bounded memory for time-ordered input.

    A duplicate shares its slot with the report it repeats, so only recent days need their
    keys. A report older than the forgotten days cannot be checked; it raises
    :class:`~spotkit.errors.InputError` instead of being let through unchecked.
    """

    _DAY_NS = 86_400 * 10**9

    def __init__(self, window_days: int):
        if window_days < 1:
            raise UsageError(f"dedupe_window_days must be 1 or more, not {window_days!r}")
        self.window = int(window_days)
        self.days: dict[int, _SeenKeys] = {}
        self.cutoff: int | None = None  # days before this one are forgotten

    def duplicates(self, spots: dict, source: str) -> np.ndarray:
        """Which rows repeat a report seen before (see :func:`_duplicates`)."""
        n = len(spots[C.SOURCE_ROW])
        if not n:
            return np.zeros(0, dtype=bool)
        day = np.asarray(spots[C.SLOT], dtype=np.int64) // self._DAY_NS
        if self.cutoff is not None and (day < self.cutoff).any():
            row = np.asarray(spots[C.SOURCE_ROW])[np.flatnonzero(day < self.cutoff)[0]]
            raise InputError(
                f"{source}, row {row}: a report more than {self.window} day(s) older than "
                "reports already read; ingest under a memory cap finds duplicates only in "
                "time-ordered input - sort the file by time or ingest it without a cap")
        days = np.unique(day)
        if days.size == 1:
            dup = _duplicates(spots, self.days.setdefault(int(days[0]), _SeenKeys()))
        else:
            dup = np.zeros(n, dtype=bool)
            for d in days:
                idx = np.flatnonzero(day == d)
                sub = {k: spots[k][idx] for k in (*C.REPORT_KEY, C.SOURCE_ROW)}
                dup[idx] = _duplicates(sub, self.days.setdefault(int(d), _SeenKeys()))
        cut = int(days[-1]) - self.window
        self.cutoff = cut if self.cutoff is None else max(self.cutoff, cut)
        for d in [d for d in self.days if d < self.cutoff]:
            del self.days[d]
        return dup


# --- drivers -------------------------------------------------------------------------------------
def _as_paths(paths) -> list[Path]:
    if isinstance(paths, (str, Path)):
        paths = [paths]
    out = [Path(p) for p in paths]
    if not out:
        raise UsageError("no input files given")
    return out


def _check_args(region, slot_minutes, chunk_rows):
    if region not in REGIONS:
        raise UsageError(f"unknown IARU region {region!r}; valid: {', '.join(REGIONS)}")
    if not isinstance(slot_minutes, (int, np.integer)) or slot_minutes < 1:
        raise UsageError(f"slot_minutes must be a whole number of minutes >= 1, "
                         f"not {slot_minutes!r}")
    if chunk_rows is not None and (not isinstance(chunk_rows, (int, np.integer))
                                   or chunk_rows < 1):
        raise UsageError(f"chunk_rows must be a positive whole number, not {chunk_rows!r}")


def _band_codes(freq_hz: np.ndarray, region: str) -> np.ndarray:
    """Position of each frequency's band in BAND_ORDER, -1 outside the bands (as
    :func:`spotkit.bands.freq_to_band`, edges inclusive)."""
    plan = band_plan(region)
    lows, highs = plan["low_hz"].to_numpy(), plan["high_hz"].to_numpy()
    order = np.array([BAND_ORDER.index(b) for b in plan["band"]] + [-1])
    f = np.asarray(freq_hz, dtype=float)
    idx = np.searchsorted(lows, f, side="right") - 1
    inside = (idx >= 0) & (f <= highs[np.clip(idx, 0, None)]) & np.isfinite(f)
    return order[np.where(inside, idx, len(lows))]


class _PathCache:
    """Geodesic distance and azimuths per locator pair, kept across chunks.

    Each distinct locator gets a number the first time it is seen (one per transmitter
    locator and one per receiver locator; its cell centre is decoded once,
    :mod:`spotkit.locator`); each distinct (tx, rx) pair is solved once by
    :func:`spotkit.geo.geodesic_inverse` and remembered in a dense table indexed by the two
    numbers, so a pair seen in an earlier chunk is not solved again. When the table would
    exceed :attr:`MAX_CELLS` cells, pairs are remembered under a 64-bit hash of the two
    locator texts instead (slower). Results equal :func:`spotkit.geo.add_path_columns`.
    """

    MAX_PAIRS = 5_000_000
    #: Largest dense pair table [cells of 4 bytes] (128 MB).
    MAX_CELLS = 1 << 25

    def __init__(self):
        self.ids = ({}, {})  # locator text -> number, for tx and rx
        self.pos = ([np.zeros(0), np.zeros(0)], [np.zeros(0), np.zeros(0)])  # lat, lon
        self.table = np.full((0, 0), -1, dtype=np.int32)  # pair -> column of vals
        # one row per pair: distance [km], bearing, reverse bearing [deg] (rows, so that
        # looking a pair up touches one cache line)
        self.vals = np.zeros((0, 3))
        self.n_vals = 0
        self.hashed = None  # _HashedPathCache once the dense table is too big

    def _numbers(self, side: int, cats: np.ndarray) -> np.ndarray:
        ids = self.ids[side]
        new = [c for c in cats if c not in ids]
        if new:
            first = len(ids)
            for k, c in enumerate(new):
                ids[c] = first + k
            lat, lon = (np.atleast_1d(a) for a in locator_to_latlon(
                np.asarray(new, dtype=object), "coerce"))
            self.pos[side][0] = np.concatenate([self.pos[side][0], lat])
            self.pos[side][1] = np.concatenate([self.pos[side][1], lon])
        return np.fromiter((ids[c] for c in cats), dtype=np.int64, count=len(cats))

    def lookup(self, tx: pd.Categorical, rx: pd.Categorical) -> list[np.ndarray]:
        if self.hashed is not None:
            return self.hashed.lookup(tx, rx)
        from .geo import geodesic_inverse

        tx_cats = np.asarray(tx.categories.astype("str"), dtype=object)
        rx_cats = np.asarray(rx.categories.astype("str"), dtype=object)
        tg = self._numbers(0, tx_cats)[np.asarray(tx.codes, dtype=np.int64)]
        rg = self._numbers(1, rx_cats)[np.asarray(rx.codes, dtype=np.int64)]
        ntx, nrx = len(self.ids[0]), len(self.ids[1])
        if ntx * nrx > self.MAX_CELLS:
            self.hashed = _HashedPathCache()
            self.table = np.full((0, 0), -1, dtype=np.int32)
            self.vals = np.zeros((0, 3))
            return self.hashed.lookup(tx, rx)
        if ntx > self.table.shape[0] or nrx > self.table.shape[1]:
            shape = (max(ntx, self.table.shape[0] * 5 // 4),
                     max(nrx, self.table.shape[1] * 5 // 4))  # room for a few more
            if shape[0] * shape[1] > self.MAX_CELLS:
                shape = (ntx, nrx)
            grown = np.full(shape, -1, dtype=np.int32)
            grown[:self.table.shape[0], :self.table.shape[1]] = self.table
            self.table = grown
        idx = self.table[tg, rg]
        miss = np.flatnonzero(idx < 0)
        if miss.size:
            key = pd.unique(tg[miss] * nrx + rg[miss])
            mt, mr = np.divmod(key, nrx)
            (tlat, tlon), (rlat, rlon) = self.pos
            dist_m, azi, rev = geodesic_inverse(tlat[mt], tlon[mt], rlat[mr], rlon[mr])
            new = np.column_stack([np.asarray(dist_m, dtype=float) / 1000.0, azi, rev])
            if self.n_vals + key.size > self.vals.shape[0]:
                grown = np.zeros((max(2 * self.vals.shape[0], self.n_vals + key.size), 3))
                grown[:self.n_vals] = self.vals[:self.n_vals]
                self.vals = grown
            self.vals[self.n_vals:self.n_vals + key.size] = new
            self.table[mt, mr] = np.arange(self.n_vals, self.n_vals + key.size,
                                           dtype=np.int32)
            self.n_vals += key.size
            idx[miss] = self.table[tg[miss], rg[miss]]
        (tlat, tlon), (rlat, rlon) = self.pos
        rows = self.vals[idx]
        return [tlat[tg], tlon[tg], rlat[rg], rlon[rg],
                *(np.ascontiguousarray(rows[:, j]) for j in range(3))]


class _HashedPathCache:
    """Pair geometry remembered under a 64-bit hash of the two locator texts (sorted
    arrays); used by :class:`_PathCache` when its dense table would be too big."""

    MAX_PAIRS = _PathCache.MAX_PAIRS

    def __init__(self):
        self.keys = np.zeros(0, dtype=np.uint64)
        self.vals = np.zeros((3, 0))  # distance [km], bearing, reverse bearing [deg]

    def lookup(self, tx: pd.Categorical, rx: pd.Categorical) -> list[np.ndarray]:
        from .geo import geodesic_inverse

        tx_cats = np.asarray(tx.categories.astype("str"), dtype=object)
        rx_cats = np.asarray(rx.categories.astype("str"), dtype=object)
        tx_lat, tx_lon = (np.atleast_1d(a) for a in locator_to_latlon(tx_cats, "coerce"))
        rx_lat, rx_lon = (np.atleast_1d(a) for a in locator_to_latlon(rx_cats, "coerce"))
        tc, rc = np.asarray(tx.codes, dtype=np.int64), np.asarray(rx.codes, dtype=np.int64)
        nrx = rx_cats.size
        pair_codes, uniq = pd.factorize(tc * nrx + rc, sort=False)
        ptx, prx = np.divmod(np.asarray(uniq, dtype=np.int64), nrx)
        with np.errstate(over="ignore"):
            h = (pd.util.hash_array(tx_cats)[ptx] * np.uint64(0x100000001B3)
                 ^ pd.util.hash_array(rx_cats)[prx])
        h_order = np.argsort(h)
        pos = np.empty(h.size, dtype=np.int64)
        pos[h_order] = np.searchsorted(self.keys, h[h_order])  # sorted queries: cache-friendly
        pos[pos == self.keys.size] = 0
        found = self.keys[pos] == h if self.keys.size else np.zeros(h.size, dtype=bool)
        if found.all():
            vals = self.vals[:, pos]
        else:
            miss = ~found
            m_tx, m_rx = ptx[miss], prx[miss]
            dist_m, azi, rev = geodesic_inverse(tx_lat[m_tx], tx_lon[m_tx],
                                                rx_lat[m_rx], rx_lon[m_rx])
            new = np.vstack([np.asarray(dist_m, dtype=float) / 1000.0, azi, rev])
            vals = np.empty((3, h.size))
            vals[:, found] = self.vals[:, pos[found]]
            vals[:, miss] = new
            if self.keys.size + new.shape[1] > self.MAX_PAIRS:
                self.keys, self.vals = self.keys[:0], self.vals[:, :0]
            keys = np.concatenate([self.keys, h[miss]])
            order = np.argsort(keys)
            self.keys = keys[order]
            self.vals = np.ascontiguousarray(np.concatenate([self.vals, new], axis=1)[:, order])
        return [tx_lat[tc], tx_lon[tc], rx_lat[rc], rx_lon[rc],
                *(v[pair_codes] for v in vals)]


def _enrich(spots: dict, keep: np.ndarray, name: str, cache: _PathCache) -> dict:
    """Keep rows ``keep``, add C.DERIVED columns and the source file; the table's columns
    (C.CANONICAL order) as arrays and categoricals."""
    cols = {c: v if keep.all() else v[keep] for c, v in spots.items()}
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
                     dedupe_window_days: int | None = None
                     ) -> Iterator[tuple[pd.DataFrame, pd.DataFrame]]:
    """Read spot files chunk by chunk; yield (spots, rejects) per chunk.

    Same parameters as :func:`read_spots`. ``summary`` (an :class:`IngestSummary`, updated in
    place as chunks are yielded) receives the counts. Duplicates are removed across chunks
    and files; memory grows only by 8 bytes per distinct report (the key hashes), or, with
    ``dedupe_window_days``, per distinct report of the latest days only: the keys of slot
    days more than that many days before the latest day read are forgotten, and a report
    older than that raises :class:`~spotkit.errors.InputError` (time-ordered input only).
    """
    for cols, rejects in _iter_chunk_columns(
            paths, mapping=mapping, units=units, delimiter=delimiter, header=header,
            slot_minutes=slot_minutes, region=region, chunk_rows=chunk_rows,
            progress=progress, summary=summary, dedupe_window_days=dedupe_window_days):
        yield _frame(cols), rejects


def _iter_chunk_columns(paths, *, mapping, units, delimiter, header, slot_minutes, region,
                        chunk_rows, progress, summary, dedupe_window_days=None):
    """As :func:`iter_spot_chunks`, yielding the spots as a dict of columns (times as int64
    ns; None for no spots) for :func:`_frame` or :func:`_table`."""
    _check_args(region, slot_minutes, chunk_rows)
    mapping = _check_mapping(mapping)
    units = _check_units(units)
    delimiter = _delimiter_arg(delimiter)
    paths = _as_paths(paths)
    summary = summary if summary is not None else IngestSummary()
    layouts = [_prepare_layout(p, mapping, units, delimiter, header) for p in paths]
    seen = _SeenKeys() if dedupe_window_days is None else _DayKeys(dedupe_window_days)
    cache = _PathCache()
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(unit=" rows", desc="ingest")
    try:
        for layout in layouts:
            summary.files.append(layout.name)
            summary.columns[layout.name] = layout.describe_columns()
            summary.units[layout.name] = {
                k: v + (f" ({layout.inferred[k]})" if k in layout.inferred else "")
                for k, v in layout.units.items()}
            next_row = 1
            skipped_all: dict[int, str] = {}
            fast = layout.sep in (",", ";", "\t") and layout.decimal == "."
            chunks = _prefetch(_arrow_chunks(layout, chunk_rows)) if fast \
                else _raw_chunks(layout, chunk_rows)
            for raw, skipped in chunks:
                for line, msg in skipped:
                    skipped_all[line - layout.header_lines] = msg
                rows, next_row = _row_numbers(len(raw), next_row, skipped_all)
                spots, rejects = _clean_chunk(raw, layout, rows, region, slot_minutes)
                done = [r for r in skipped_all if r < next_row]
                if done:
                    extra = pd.DataFrame({
                        C.SOURCE_FILE: layout.name, C.SOURCE_ROW: np.array(done, dtype="int64"),
                        C.REJECT_FIELD: "row",
                        C.REJECT_VALUE: [skipped_all.pop(r) for r in done],
                        C.REJECT_REASON: "wrong number of fields"})
                    rejects = pd.concat([rejects, extra], ignore_index=True)
                dup = (_duplicates(spots, seen) if isinstance(seen, _SeenKeys)
                       else seen.duplicates(spots, layout.name))
                spots = _enrich(spots, ~dup, layout.name, cache)
                _count(summary, len(raw) + len(done), spots, rejects, int(dup.sum()))
                if bar is not None:
                    bar.update(len(raw) + len(done))
                yield spots, _tidy_rejects(rejects)
            if skipped_all:  # bad lines after the last good row
                rows_left = sorted(skipped_all)
                rejects = pd.DataFrame({
                    C.SOURCE_FILE: layout.name, C.SOURCE_ROW: np.array(rows_left, dtype="int64"),
                    C.REJECT_FIELD: "row", C.REJECT_VALUE: [skipped_all[r] for r in rows_left],
                    C.REJECT_REASON: "wrong number of fields"})
                _count(summary, len(rows_left), None, rejects, 0)
                yield None, _tidy_rejects(rejects)
    finally:
        if bar is not None:
            bar.close()


def _prefetch(chunks: Iterator) -> Iterator:
    """Run the iterator ``chunks`` in a second thread, one item ahead of the consumer (the
    CSV reader releases the GIL while it parses, so reading overlaps cleaning)."""
    import queue
    import threading

    q: queue.Queue = queue.Queue(maxsize=1)
    stop = threading.Event()
    done = object()

    def put(item) -> bool:
        while not stop.is_set():
            try:
                q.put(item, timeout=0.1)
                return True
            except queue.Full:
                continue
        return False

    def run():
        try:
            for item in chunks:
                if not put((None, item)):
                    return
            put((None, done))
        except BaseException as exc:  # handed to the consumer
            put((exc, None))
        finally:
            if stop.is_set():
                close = getattr(chunks, "close", None)
                if close is not None:
                    close()

    worker = threading.Thread(target=run, name="spotkit-ingest-reader", daemon=True)
    worker.start()
    try:
        while True:
            exc, item = q.get()
            if exc is not None:
                raise exc
            if item is done:
                return
            yield item
    finally:
        stop.set()
        worker.join()


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


def _count(summary, n_read, spots, rejects, n_dup):
    summary.rows_read += n_read
    summary.rejected += len(rejects)
    summary.duplicates += n_dup
    summary._add_counts(rejects[C.REJECT_REASON].value_counts().to_dict(),
                        summary.rejected_by_reason)
    n = 0 if spots is None else len(spots[C.SOURCE_ROW])
    summary.accepted += n
    if n:
        band = spots[C.BAND]
        counts = np.bincount(np.asarray(band.codes)[np.asarray(band.codes) >= 0],
                             minlength=len(band.categories))
        summary._add_counts({b: k for b, k in zip(band.categories, counts) if k > 0},
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
               chunk_rows: int | None = None, progress: bool = False) -> IngestResult:
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

    Returns
    -------
    IngestResult
        ``.spots``: canonical table (:data:`spotkit.columns.CANONICAL`, glossary dtypes;
        frequency [Hz], SNR [dB], power [dBm], drift [Hz/min], distance [km], bearings
        [deg]); ``.rejects``: :data:`spotkit.columns.REJECT_COLUMNS`, one row per rejected
        input row with its first failing field; ``.summary``: :class:`IngestSummary`.

    Raises
    ------
    NotASpotTableError
        A file is empty, binary, HTML/XML or has too few columns.
    MappingError
        The columns cannot be matched onto the glossary unambiguously.
    InputError
        A unit cannot be inferred, or the heading and data rows disagree.
    UsageError
        Bad arguments.
    """
    summary = IngestSummary()
    spots, rejects = [], []
    for s, r in iter_spot_chunks(paths, mapping=mapping, units=units, delimiter=delimiter,
                                 header=header, slot_minutes=slot_minutes, region=region,
                                 chunk_rows=chunk_rows, progress=progress, summary=summary):
        spots.append(s)
        rejects.append(r)
    rej = pd.concat([r for r in rejects if len(r)] or [C.empty_rejects()], ignore_index=True)
    return IngestResult(_concat_spots(spots), rej[C.REJECT_COLUMNS], summary)


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
                      **kw) -> IngestSummary:
    """Stream spot files to one Parquet file chunk by chunk (bounded memory).

    Parameters
    ----------
    paths : str, path-like or sequence of them
        Input CSV files (as :func:`read_spots`).
    out_path : str or path-like
        Parquet file to write (the canonical table, glossary dtypes).
    chunk_rows : int
        Rows per chunk; peak memory grows with it (roughly 1 kB per row: two chunks are in
        flight, one being read while the one before is cleaned and written).
    rejects_path : str or path-like, optional
        CSV file for the rejects table.
    **kw
        Further keywords of :func:`read_spots` (mapping, units, delimiter, header,
        slot_minutes, region, progress).

    Returns
    -------
    IngestSummary
    """
    import pyarrow.parquet as pq

    out_path = Path(out_path)
    out_path.parent.mkdir(parents=True, exist_ok=True)
    schema = _arrow_schema()
    summary = IngestSummary()
    tmp = out_path.with_name(out_path.name + ".partial")
    rej_fh = None
    try:
        if rejects_path is not None:
            Path(rejects_path).parent.mkdir(parents=True, exist_ok=True)
            rej_fh = open(rejects_path, "w", encoding="utf-8", newline="")
            C.empty_rejects().to_csv(rej_fh, index=False)
        dict_cols = [n for n in C.CANONICAL if str(C.GLOSSARY[n].dtype) == "category"]
        # statistics for the plain columns only: min/max of the text columns cost a third
        # of the write time and say little (calls and locators are not sorted)
        plain = [n for n in C.CANONICAL if n not in dict_cols]
        # one chunk is encoded and written in a second thread (pyarrow releases the GIL)
        # while the next is read and cleaned; at most one chunk waits
        # numbers with few distinct values (positions of locators, SNR, power, drift) are
        # dictionary-encoded too: smaller and faster to write than plain + snappy
        few = [C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.SNR, C.POWER, C.DRIFT]
        with pq.ParquetWriter(tmp, schema, use_dictionary=dict_cols + few,
                              compression="snappy", write_statistics=plain) as writer, \
                ThreadPoolExecutor(max_workers=1) as pool:
            wrote, pending = False, None
            for spots, rejects in _iter_chunk_columns(paths, chunk_rows=chunk_rows,
                                                      summary=summary, **_read_kw(kw)):
                if (spots is not None and len(spots[C.SOURCE_ROW])) or not wrote:
                    table = _table(spots, schema)
                    if pending is not None:
                        pending.result()
                    pending = pool.submit(writer.write_table, table)
                    wrote = True
                if rej_fh is not None and len(rejects):
                    rejects[C.REJECT_COLUMNS].to_csv(rej_fh, index=False, header=False)
            if pending is not None:
                pending.result()
        tmp.replace(out_path)
    finally:
        if rej_fh is not None:
            rej_fh.close()
        if tmp.exists():
            tmp.unlink()
    return summary


def _read_kw(kw: dict) -> dict:
    """Keywords of :func:`read_spots` with their defaults filled in."""
    defaults = dict(mapping=None, units=None, delimiter="auto", header="auto",
                    slot_minutes=C.SLOT_MINUTES, region="all", progress=False)
    unknown = set(kw) - set(defaults)
    if unknown:
        raise TypeError(f"unexpected keyword(s): {', '.join(sorted(unknown))}")
    return defaults | kw


def write_rejects(rejects: pd.DataFrame, path) -> Path:
    """Write a rejects table as CSV (UTF-8)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    rejects[C.REJECT_COLUMNS].to_csv(path, index=False)
    return path


def load_spots(source, **kw) -> pd.DataFrame:
    """A spot table from a DataFrame (returned as is), a Parquet file or spot CSV files.

    Parameters
    ----------
    source : pandas.DataFrame, str or path-like
        ``.parquet`` files (or directories of them) are read with the glossary dtypes; other
        files go through :func:`read_spots` (``**kw`` passed on).

    Raises
    ------
    InputError
        When a CSV gives no accepted row.
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
    from . import store

    return store.read_spots_parquet(path)


__all__ = ["IngestSummary", "IngestResult", "read_spots", "iter_spot_chunks",
           "ingest_to_parquet", "load_spots", "write_rejects", "match_headings",
           "infer_columns", "infer_frequency_unit", "infer_power_unit", "SAMPLE_ROWS"]
