"""The cells of a delimited spot file, chunk by chunk, as dictionary-encoded text.

Model
-----
Every column is read as text and dictionary-encoded: per chunk, a code per row (-1 for an
empty cell) and the table of distinct cell texts (:class:`TextColumn`); the pyarrow reader
may take short numeric columns (SNR, power, drift) as float64 instead, which costs less
than text, until a cell is not a plain number. Spot files repeat
their values a lot (times, calls, locators, dial frequencies, whole-dB SNRs), so the
ingest parses and validates each distinct text once and reaches the rows by array
gathers; a reject keeps the cell's own text.

Two readers give the same chunks:

- pyarrow's streaming CSV reader (comma, semicolon or tab files with decimal points),
  with several threads. Those cannot tell the line number of a row with the wrong number of
  fields, so at the first such row the file is read again in one thread from where the
  chunks handed out so far end (they held no such row);
- pandas' C parser for the rest (runs of blanks, decimal commas), which fills a row with
  too few fields with empty cells.

Rows with the wrong number of fields are reported as skipped lines ``(line number,
message)``; :func:`prefetch` runs a reader one chunk ahead in a second thread.
"""
from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from typing import Iterator

import numpy as np
import pandas as pd

from .sniff import _csv_kwargs, _Layout

#: Bytes per block of the pyarrow CSV reader.
BLOCK_BYTES = 1 << 27


@dataclass
class TextColumn:
    """One column of a chunk: ``codes`` (int, one per row, -1 for an empty cell) into
    ``values`` (object array of the distinct cell texts)."""

    codes: np.ndarray
    values: np.ndarray
    has_empty: bool | None = None  # whether some code is -1 (None: not known yet)

    def __post_init__(self):
        if self.has_empty is None:
            self.has_empty = bool(self.codes.size) and bool((self.codes < 0).any())

    def cells(self, idx: np.ndarray) -> np.ndarray:
        """The text of rows ``idx`` ("" for empty cells), as an object array."""
        codes = self.codes[idx]
        out = np.full(codes.size, "", dtype=object)
        ok = codes >= 0
        out[ok] = self.values[codes[ok]]
        return out

    @classmethod
    def from_text(cls, series: pd.Series) -> "TextColumn":
        """Dictionary-encode a text column (missing values: empty cells)."""
        import pyarrow as pa
        import pyarrow.compute as pc

        arr = pa.array(series.array, type=pa.string())
        if isinstance(arr, pa.ChunkedArray):
            arr = arr.combine_chunks()
        return _text_column(pc.dictionary_encode(arr))


@dataclass
class TextChunk:
    """``n`` rows of a file as one column per file column: a :class:`TextColumn`, or for
    columns read as numbers a float64 array (NaN for empty cells)."""

    n: int
    columns: list


# --- pandas ----------------------------------------------------------------------------------
def pandas_chunks(layout: _Layout, chunk_rows: int | None,
                  numbers: tuple = ()) -> Iterator[tuple[TextChunk, list]]:
    """Chunks read by pandas' C parser; yields (chunk, skipped lines). Every column is read
    as text (``numbers`` is accepted for the signature of :func:`arrow_chunks`)."""
    kw = _csv_kwargs(layout)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        frames = pd.read_csv(layout.path, chunksize=chunk_rows, **kw) if chunk_rows \
            else [pd.read_csv(layout.path, **kw)]
        try:
            for frame in frames:
                cols = [TextColumn.from_text(frame.iloc[:, i]) for i in range(frame.shape[1])]
                yield TextChunk(len(frame), cols), _skipped_lines(caught)
        finally:
            close = getattr(frames, "close", None)
            if close is not None:
                close()
    for w in caught:
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)


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


# --- pyarrow ---------------------------------------------------------------------------------
def _block_bytes(chunk_rows: int | None) -> int:
    """Reader block size: about one chunk (72 bytes a row), 1 MB to :data:`BLOCK_BYTES`."""
    if not chunk_rows:
        return BLOCK_BYTES
    return int(min(BLOCK_BYTES, max(1 << 20, 72 * chunk_rows)))


class _RowNumbersUnknown(Exception):
    """A row was set aside by a multithreaded read, which does not know its line number."""


class _NotPlainNumbers(Exception):
    """A column read as numbers has a cell that is not a plain decimal number (or spells NaN
    or infinity): it must be read as text to tell empty, bad and out-of-range cells apart."""


def arrow_chunks(layout: _Layout, chunk_rows: int | None,
                 numbers: tuple = ()) -> Iterator[tuple[TextChunk, list]]:
    """Chunks read by pyarrow's streaming reader; yields (chunk, skipped lines). Rows with
    too few fields are set aside like rows with too many.

    The columns at positions ``numbers`` are parsed as float64 by the reader (cheaper than
    text for short numbers; an empty cell is NaN) until a cell is not a plain finite
    decimal number; from the chunk holding it on, they are read as text.
    """
    done, threads = 0, True
    while True:
        try:
            for chunk, skipped in arrow_pass(layout, chunk_rows, threads, done, numbers):
                done += chunk.n
                yield chunk, skipped
            return
        except _RowNumbersUnknown:
            threads = False
        except _NotPlainNumbers:
            numbers = ()


def _open_csv(pacsv, source, numbers, **kw):
    """``pacsv.open_csv``; a cell the number parser refuses in the first block (read at
    once) raises :class:`_NotPlainNumbers`."""
    import pyarrow as pa

    try:
        return pacsv.open_csv(source, **kw)
    except pa.ArrowInvalid:
        if numbers:
            raise _NotPlainNumbers from None
        raise


def _column(col):
    """A column of a table read by pyarrow: :class:`TextColumn` (dictionary-encoded text)
    or float64 array (numbers, NaN for empty cells)."""
    import pyarrow as pa

    if pa.types.is_floating(col.type):
        return np.asarray(col.to_numpy(), dtype=np.float64)
    if not col.num_chunks:
        return TextColumn(np.zeros(0, dtype=np.int32), np.zeros(0, dtype=object))
    return _text_column(col.chunk(0))


def _text_column(arr) -> TextColumn:
    """A pyarrow dictionary array as a :class:`TextColumn`."""
    idx = arr.indices
    if arr.null_count:
        idx = idx.fill_null(-1)
    return TextColumn(idx.to_numpy(zero_copy_only=False),
                      np.asarray(arr.dictionary.to_numpy(zero_copy_only=False), dtype=object),
                      arr.null_count > 0)


def arrow_pass(layout: _Layout, chunk_rows: int | None, threads: bool, skip: int,
               numbers: tuple = ()) -> Iterator[tuple[TextChunk, list]]:
    """One read of the file for :func:`arrow_chunks`, leaving out the first ``skip`` data
    rows (all good ones); columns at positions ``numbers`` parsed as float64."""
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pacsv

    names = [f"c{i}" for i in range(layout.ncols)]
    types = {n: pa.float64() if i in numbers else pa.dictionary(pa.int32(), pa.string())
             for i, n in enumerate(names)}
    bad: list = []
    unknown: list = []

    def handler(row):
        if row.number is None or row.number < 0:
            unknown.append(row)
        bad.append((row.number, f"expected {row.expected_columns} fields, "
                                f"saw {row.actual_columns}"))
        return "skip"

    encoding = {"utf-8": "utf8", "utf-8-sig": "utf8", "latin-1": "latin1"}[layout.encoding]
    source = pa.input_stream(str(layout.path), compression=layout.compression)
    try:
        reader = _open_csv(
            pacsv, source, numbers,
            read_options=pacsv.ReadOptions(column_names=names, skip_rows=layout.header_lines,
                                           block_size=_block_bytes(chunk_rows),
                                           use_threads=threads, encoding=encoding),
            parse_options=pacsv.ParseOptions(delimiter=layout.sep, invalid_row_handler=handler,
                                             ignore_empty_lines=False),
            convert_options=pacsv.ConvertOptions(column_types=types, strings_can_be_null=True,
                                                 quoted_strings_can_be_null=True,
                                                 null_values=[""]))
        if unknown:
            raise _RowNumbersUnknown
        batches, n = [], 0

        def emit():
            table = pa.Table.from_batches(batches, schema=reader.schema)
            if len(batches) > 1:
                table = table.unify_dictionaries().combine_chunks()
            cols = [_column(c) for c in table.columns]
            skipped = list(bad)
            bad.clear()
            return TextChunk(table.num_rows, cols), skipped

        batch_iter = iter(reader)
        while True:
            try:
                batch = next(batch_iter)
            except StopIteration:
                break
            except pa.ArrowInvalid:
                if numbers:  # a cell the number parser refused: read as text from here
                    raise _NotPlainNumbers from None
                raise
            if unknown:  # the handler runs before the batch holding the row is returned
                raise _RowNumbersUnknown
            if numbers and not all(  # NaN or infinity spelled out: read as text from here
                    pc.all(pc.is_finite(batch.column(i))).as_py() in (True, None)
                    for i in numbers):
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


# --- reading ahead ---------------------------------------------------------------------------
def prefetch(chunks: Iterator) -> Iterator:
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
