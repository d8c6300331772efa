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

- pyarrow's CSV reader (comma, semicolon or tab files with decimal points): the file is
  cut at line ends into pieces of about 8 MB, parsed two at a time, each in one thread (so
  the line number of a row with the wrong number of fields is known), and gathered into
  chunks;
- pandas' C parser for the rest (runs of blanks, decimal commas, UTF-16 and UTF-32 files),
  which fills a row with too few fields with empty cells.

Rows with the wrong number of fields are reported as skipped lines ``(line number, raw
text of the line)``; :func:`prefetch` runs a reader one chunk ahead in a second thread.

A quote mark that is never closed would make a CSV parser read on across line ends: the
pyarrow reader sets aside every line with an odd number of quote marks as a skipped line
(so a literal quote mark inside a cell, as in ``5" dish``, costs its row too); pandas'
reader stops with :class:`~spotkit.errors.InputError`. Quoted fields spanning lines are
not supported.
"""
from __future__ import annotations

import gzip
import re
import warnings
from collections import deque
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
import pandas as pd

from spotkit.errors import InputError
from spotkit.io.sniff import _csv_kwargs, _Layout, _split


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
    def from_text(cls, series: pd.Series) -> TextColumn:
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
    lines = _LineTexts(layout)
    # pandas cuts every row to the number of names, silently, when the first data row has
    # more fields: that row is skipped here and set aside like the other wide rows
    first = _wide_first_row(layout)
    if first is not None:
        kw["skiprows"] = list(range(layout.header_lines)) + [first[0] - 1]
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            frames = pd.read_csv(layout.path, chunksize=chunk_rows, **kw) if chunk_rows \
                else _quotes_checked(lambda: [pd.read_csv(layout.path, **kw)], layout)
            try:
                for frame in _quotes_checked(lambda: frames, layout):
                    if any("names does not match" in str(w.message) for w in caught):
                        # the first row pandas parsed is still wider (quote marks pairing
                        # across lines): every row would be cut to the headings
                        raise InputError(
                            f"{layout.name}: the first data row has more fields than the "
                            "headings, as read with quote marks pairing across lines; "
                            "check the quote marks near the top of the file")
                    cols = [TextColumn.from_text(frame.iloc[:, i])
                            for i in range(frame.shape[1])]
                    skipped = lines.texts(_skipped_lines(caught))
                    if first is not None:
                        skipped, first = [first] + skipped, None
                    yield TextChunk(len(frame), cols), skipped
            finally:
                close = getattr(frames, "close", None)
                if close is not None:
                    close()
    finally:
        lines.close()
    for w in caught:
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)


def _quotes_checked(frames, layout: _Layout):
    """The frames of pandas' reader (``frames()``); its error on a quote mark that is never
    closed as an :class:`~spotkit.errors.InputError` naming the file and row."""
    try:
        yield from frames()
    except pd.errors.ParserError as exc:
        raise InputError(f"{layout.name}: cannot read on ({exc}); a quote mark that is "
                         "never closed makes the rest of the file one field: remove it, "
                         "or save the file with every quote mark paired") from None


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


def _open_text(layout: _Layout):
    opener = gzip.open if layout.compression == "gzip" else open
    return opener(layout.path, "rt", encoding=layout.encoding, errors="replace", newline=None)


def _wide_first_row(layout: _Layout) -> tuple[int, str] | None:
    """(1-based line number, raw text) of the first data row when it has more fields than
    the layout has columns, else None."""
    with _open_text(layout) as fh:
        for _ in range(layout.header_lines):
            fh.readline()
        line = fh.readline().rstrip("\r\n").lstrip("\ufeff")
    if not line.strip() or len(_split(line, layout.sep)) <= layout.ncols:
        return None
    return layout.header_lines + 1, line


class _LineTexts:
    """The raw text of lines of a file by 1-based line number, asked for in increasing
    order (the file is read once, as far as the last line asked for, only when a line is
    asked for)."""

    def __init__(self, layout: _Layout):
        self.layout, self.fh, self.at = layout, None, 0

    def texts(self, skipped: list) -> list:
        """``[(line, text)]`` for ``[(line, message)]``."""
        out = []
        for line, _ in sorted(skipped):
            if self.fh is None:
                self.fh = _open_text(self.layout)
            text = ""
            while self.at < line:
                text = self.fh.readline()
                self.at += 1
                if not text:
                    break
            out.append((line, text.rstrip("\r\n").lstrip("\ufeff")))
        return out

    def close(self) -> None:
        if self.fh is not None:
            self.fh.close()


# --- pyarrow ---------------------------------------------------------------------------------
#: Bytes per piece parsed at once; pieces are gathered into chunks.
PIECE_BYTES = 1 << 23
#: Pieces parsed at the same time (one thread each) and pieces handed out ahead.
PARSERS, AHEAD = 2, 3


def _piece_bytes(chunk_rows: int | None, line_bytes: float) -> int | None:
    """Bytes per piece: :data:`PIECE_BYTES`, less for small chunks (None: the whole file
    in one piece)."""
    if not chunk_rows:
        return None
    return int(min(PIECE_BYTES, max(1 << 12, chunk_rows * line_bytes)))


class _NotPlainNumbers(Exception):
    """A column read as numbers has a cell that is not a plain decimal number (or spells NaN
    or infinity): it must be read as text to tell empty, bad and out-of-range cells apart."""


def _pieces(source, size: int | None):
    """Yield the stream in pieces of about ``size`` bytes that end at a line end."""
    carry = b""
    while True:
        data = source.read(size) if size else source.read()
        if not data:
            if carry:
                yield carry
            return
        data = carry + data
        cut = data.rfind(b"\n") + 1
        if size and cut == 0:  # no line end yet: a very long line
            carry = data
            continue
        if not size:
            cut = len(data)
        carry = data[cut:]
        yield data[:cut]


def _file_pieces(f, size: int | None):
    """Yield a seekable file in pieces of about ``size`` bytes that end at a line end, as
    pyarrow buffers read straight from the file (each piece starts where the last line end
    of the one before was; no bytes are copied to join pieces), each with the number of
    bytes left after it."""
    total, pos = f.size(), 0
    while pos < total:
        want = total - pos if not size else size
        while True:
            f.seek(pos)
            buf = f.read_buffer(min(want, total - pos))
            if pos + buf.size >= total:
                cut = buf.size
                break
            tail = buf.slice(max(0, buf.size - (1 << 16))).to_pybytes()
            k = tail.rfind(b"\n")
            if k >= 0:
                cut = buf.size - len(tail) + k + 1
                if cut > 0:
                    break
            want *= 2  # no line end near the end of the piece: read more
        pos += cut
        yield buf.slice(0, cut), total - pos


def arrow_chunks(layout: _Layout, chunk_rows: int | None,
                 numbers: tuple = ()) -> Iterator[tuple[TextChunk, list]]:
    """Chunks read by pyarrow's CSV reader; yields (chunk, skipped lines). Rows with too few
    fields are set aside like rows with too many.

    The file is cut at line ends into pieces of about :data:`PIECE_BYTES`, parsed
    :data:`PARSERS` at a time (each in one thread: pyarrow's own threads cannot tell the
    line number of a row with the wrong number of fields), and the pieces are gathered into
    chunks of at least ``chunk_rows`` rows (the first chunk is the first piece alone, and
    so are the pieces of the last chunk of a plain file, so that the work after reading
    starts early and ends soon after it). The columns at positions
    ``numbers`` are parsed as float64 (cheaper than text for short numbers; an empty cell is
    NaN) until a cell is not a plain finite decimal number; from that piece on, they are
    read as text.
    """
    import pyarrow as pa

    if layout.encoding not in ("utf-8", "utf-8-sig", "latin-1"):  # UTF-16, UTF-32
        yield from pandas_chunks(layout, chunk_rows)
        return
    plain = layout.compression is None
    source = pa.OSFile(str(layout.path)) if plain else pa.input_stream(
        str(layout.path), compression=layout.compression)
    tables, bad, rows, emitted = [], [], 0, False

    def emit():
        table = pa.concat_tables(tables) if len(tables) > 1 else tables[0]
        if any(c.num_chunks > 1 for c in table.columns):
            table = table.unify_dictionaries().combine_chunks()
        out = TextChunk(table.num_rows, [_column(c) for c in table.columns]), list(bad)
        tables.clear()
        bad.clear()
        return out

    try:
        head = source.read(1 << 16)
        line_bytes = max(len(head), 1) / max(head.count(b"\n"), 1)
        size = _piece_bytes(chunk_rows, line_bytes)
        lines_before = 0  # lines of the file before the piece (heading included)
        pieces = enumerate(_file_pieces(source, size) if plain else (
            (p, None) for p in _pieces(_Prepend(head, source), size)))
        chunk_bytes = (chunk_rows or 0) * line_bytes
        with ThreadPoolExecutor(max_workers=PARSERS) as pool:
            pending: deque = deque()  # (future, piece, lines to skip, bytes left after it)

            def submit(piece, skip, left):
                pending.append((pool.submit(_read_piece, layout, piece, skip, numbers),
                                piece, skip, left))

            def refill():
                while len(pending) < AHEAD:
                    k, item = next(pieces, (None, None))
                    if item is None:
                        return
                    submit(item[0], layout.header_lines if k == 0 else 0, item[1])

            refill()
            while pending:
                fut, piece, skip, left = pending.popleft()
                try:
                    table, piece_bad = fut.result()
                except _NotPlainNumbers:  # this piece and the ones after it: as text
                    numbers = ()
                    redo = [(piece, skip, left)] + [x[1:] for x in pending]
                    for x in pending:
                        x[0].cancel()
                    pending.clear()
                    for item in redo:
                        submit(*item)
                    if tables:  # the pieces so far hold numbers: a chunk of their own
                        rows, emitted = 0, True
                        yield emit()
                    continue
                refill()
                tables.append(table)
                bad.extend((lines_before + line, msg) for line, msg in piece_bad)
                rows += table.num_rows
                lines_before += skip + table.num_rows + len(piece_bad)  # a line is one of these
                # the first piece alone, so that the pipeline starts early; the pieces of
                # the last chunk one by one, so that it ends soon after the reading
                if chunk_rows and (rows >= chunk_rows or not emitted
                                   or (left is not None and left < chunk_bytes)):
                    rows, emitted = 0, True
                    yield emit()
        if tables or bad or not chunk_rows:
            if not tables:
                tables.append(_read_piece(layout, b"", 0, numbers)[0])
            yield emit()
    finally:
        source.close()


class _Prepend:
    """A stream with ``head`` (already read) put back in front."""

    def __init__(self, head: bytes, source):
        self.head, self.source = head, source

    def read(self, size=None) -> bytes:
        if self.head:
            if size is None or size >= len(self.head):
                out, self.head = self.head, b""
                rest = self.source.read() if size is None else self.source.read(
                    size - len(out))
                return out + rest
            out, self.head = self.head[:size], self.head[size:]
            return out
        return self.source.read() if size is None else self.source.read(size)


def _read_piece(layout: _Layout, piece: bytes, skip: int, numbers: tuple):
    """Parse one piece in one thread; (pyarrow table, bad rows [(line number in the piece,
    message)])."""
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pacsv

    names = [f"c{i}" for i in range(layout.ncols)]
    types = {n: pa.float64() if i in numbers else pa.dictionary(pa.int32(), pa.string())
             for i, n in enumerate(names)}
    bad: list = []

    def handler(row):
        bad.append((row.number, row.text))  # the raw text of the row
        return "skip"

    encoding = {"utf-8": "utf8", "utf-8-sig": "utf8", "latin-1": "latin1"}[layout.encoding]
    piece, unbalanced, kept_lines = _without_unbalanced_quotes(piece, skip, layout.encoding)

    def parse(on_bad_row):
        return pacsv.read_csv(
            pa.py_buffer(piece),
            read_options=pacsv.ReadOptions(column_names=names, skip_rows=skip,
                                           block_size=max(1 << 20, len(piece) + 1),
                                           use_threads=False, encoding=encoding),
            parse_options=pacsv.ParseOptions(delimiter=layout.sep,
                                             invalid_row_handler=on_bad_row,
                                             ignore_empty_lines=False),
            convert_options=pacsv.ConvertOptions(column_types=types, strings_can_be_null=True,
                                                 quoted_strings_can_be_null=True,
                                                 null_values=[""]))

    if not len(piece):  # nothing left (every line set aside): pyarrow refuses empty input
        table = pa.table({n: pa.array([], type=t) for n, t in types.items()})
        return table, sorted(unbalanced)
    try:
        # without a handler first: it makes the parse a sixth slower, and most pieces
        # have no row with the wrong number of fields (those raise and are parsed again)
        table = parse(None)
    except pa.ArrowInvalid:
        try:
            table = parse(handler)
        except pa.ArrowInvalid:
            if numbers:  # a cell the number parser refused
                raise _NotPlainNumbers from None
            raise
    if numbers and not all(  # NaN or infinity spelled out
            pc.all(pc.is_finite(table.column(i))).as_py() in (True, None) for i in numbers):
        raise _NotPlainNumbers
    if unbalanced:  # line numbers of the parsed piece -> of the piece as it was
        bad = sorted([(int(kept_lines[n - 1]), text) for n, text in bad] + unbalanced)
    return table, bad


def _without_unbalanced_quotes(piece, skip: int, encoding: str):
    """The piece without its lines (after the first ``skip``) that hold an odd number of
    quote marks, which would make the parser read on across line ends; (piece, [(1-based
    line number, raw text) of the lines taken out], 1-based numbers of the lines kept)."""
    b = np.frombuffer(piece, np.uint8)
    if not b.size or not (b == 34).any():  # no quote mark: the usual piece
        return piece, [], None
    ends = np.flatnonzero(b == 10) + 1  # end (exclusive) of each line
    if not ends.size or ends[-1] != b.size:
        ends = np.append(ends, b.size)
    starts = np.concatenate([[0], ends[:-1]])
    quotes = np.bincount(np.searchsorted(ends, np.flatnonzero(b == 34), side="right"),
                         minlength=ends.size)
    odd = np.flatnonzero(quotes[:ends.size] % 2 == 1)
    odd = odd[odd >= skip]
    if not odd.size:
        return piece, [], None
    data = bytes(b)
    out = [(int(k) + 1, data[starts[k]:ends[k]].rstrip(b"\r\n").decode(encoding, "replace"))
           for k in odd]
    keep = np.ones(ends.size, dtype=bool)
    keep[odd] = False
    kept = b"".join(data[s:e] for s, e in zip(starts[keep], ends[keep], strict=True))
    return kept, out, np.flatnonzero(keep) + 1


def _column(col):
    """A column of a table read by pyarrow: :class:`TextColumn` (dictionary-encoded text)
    or float64 array (numbers, NaN for empty cells)."""
    import pyarrow as pa

    if pa.types.is_floating(col.type):
        return np.asarray(col.to_numpy(), dtype=np.float64)
    if not col.num_chunks:
        return TextColumn(np.zeros(0, dtype=np.int32), np.zeros(0, dtype=object), False)
    return _text_column(col.chunk(0))


def _text_column(arr) -> TextColumn:
    """A pyarrow dictionary array as a :class:`TextColumn`."""
    idx = arr.indices
    if arr.null_count:
        idx = idx.fill_null(-1)
    return TextColumn(idx.to_numpy(zero_copy_only=False),
                      np.asarray(arr.dictionary.to_numpy(zero_copy_only=False), dtype=object),
                      arr.null_count > 0)


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
