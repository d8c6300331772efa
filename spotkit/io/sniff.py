"""Sniffing a spot file: layout, headings, columns and units.

Model
-----
From the first 64 kB and the first :data:`SAMPLE_ROWS` rows of a file this module finds
the encoding (UTF-8 with or without byte-order mark, UTF-16 or UTF-32 with a byte-order
mark, UTF-16 without one when every other byte is zero, else Latin-1), compression (gzip),
delimiter (comma, semicolon, tab or runs of blanks; a first line ``sep=;`` written by
spreadsheet programs names it; mixed delimiters are refused), decimal comma, whether the
first line holds headings, which column holds which glossary field (an explicit mapping
wins; headings are matched by generic words, :func:`match_headings`; files without headings
are classified by content, :func:`infer_columns`) and the units not given
(:func:`infer_frequency_unit`, :func:`infer_power_unit`; times ISO 8601 text or epoch
seconds or milliseconds, told apart by magnitude; dates that are not ISO 8601 day-first or
month-first by :func:`infer_date_order`; a date column next to a clock column joined,
:func:`_join_date_and_clock`) and the fields set to one value for all rows
(``constants``), for which no column is sought. The result is a layout that
:mod:`spotkit.io.ingest` reads the whole file with.

Numbers: besides plain decimal numbers, cells may use the Unicode minus sign (U+2212) and
the other minus and plus signs of :data:`MINUS_SIGNS` and :data:`PLUS_SIGNS`, Unicode blanks
(:data:`UNICODE_BLANKS`, removed) and fullwidth digits; each distinct cell is parsed once.

A few NUL bytes make a file neither binary nor unreadable: the rows they are in are
rejected ("NUL byte in the cell", :mod:`spotkit.io.clean`), wherever they are in the file;
a file with more than :data:`MAX_NUL_SHARE` of NUL bytes in its first 64 kB is binary.

Known error: everything is decided from the first rows; a file whose layout or units change
further down is read with the first rows' choice (later rows that do not fit are rejected
row by row by the reader, not silently converted).
"""
from __future__ import annotations

import codecs
import csv
import gzip
import re
import unicodedata
import warnings
import zlib
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.bands import freq_to_band
from spotkit.errors import InputError, MappingError, NotASpotTableError, UsageError
from spotkit.geo.locator import normalize_locator
from spotkit.units import (
    EPOCH_RANGE_S,
    FREQUENCY_UNITS,
    POWER_LADDER_DBM,
    POWER_UNITS,
    TIME_UNITS,
    frequency_to_hz,
    infer_epoch_unit,
)

#: Rows read from the start of each file to infer layout, columns and units.
SAMPLE_ROWS = 10_000
#: Units accepted per CLI field.
UNIT_CHOICES = {"time": TIME_UNITS, "frequency": FREQUENCY_UNITS, "power": POWER_UNITS}
#: Delimiter keywords.
DELIMITERS = ("auto", ",", ";", "tab", "space")

#: Largest power taken as watts when inferring the unit [W] (common practice: the highest
#: amateur licence limits are about 1.5 kW).
MAX_WATTS = 1500.0

Delimiter = Literal["auto", ",", ";", "tab", "space"]
Header = Literal["auto"] | bool

_CALL_RE = re.compile(r"^(?=.*[A-Z])(?=.*[0-9])[A-Z0-9/]{3,16}$")
_DATE_RE = r"^(\d{4}-\d{2}-\d{2}|\d{4}[./]\d{1,2}[./]\d{1,2}|\d{1,2}[./-]\d{1,2}[./-]\d{4})$"
# a clock time: HH:MM, HH:MM:SS(.fff), or compact HHMM / HHMMSS (decode logs)
_CLOCK_RE = r"^(\d{1,2}:\d{2}(:\d{2}(\.\d+)?)?|\d{4}|\d{6})$"
# a date with its parts separated by ".", "/" or "-": (first, second, third) part
_DATE_PARTS_RE = r"^\s*(\d{1,4})[./-](\d{1,2})[./-](\d{1,4})(?:[ T]|$)"
#: Orders of the day, month and year in a date: day-first, month-first, year-first.
DATE_ORDERS = ("dmy", "mdy", "ymd")
DateOrder = Literal["dmy", "mdy", "ymd"]
_ISO_RE = r"^\d{4}-\d{2}-\d{2}[T ]\d{1,2}:\d{2}"
_NUMBER_RE = re.compile(r"^[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?$")

# --- heading vocabulary (generic English words) --------------------------------------------
_KIND_WORDS = {
    C.TIME: {"time", "date", "datetime", "timestamp", "utc", "when", "epoch", "unix"},
    "call": {"call", "callsign", "calls", "station", "sign"},
    "locator": {"locator", "loc", "grid", "gridsquare", "square", "maidenhead", "qth"},
    C.FREQ: {"frequency", "freq", "qrg"},
    C.SNR: {"snr", "sn", "s2n", "signal", "noise"},
    C.POWER: {"power", "pwr"},
    C.DRIFT: {"drift"},
}
# unit words name a kind only when no other kind word is present
_UNIT_KIND = {"hz": C.FREQ, "khz": C.FREQ, "mhz": C.FREQ, "dbm": C.POWER, "w": C.POWER,
              "watt": C.POWER, "watts": C.POWER, "mw": C.POWER, "milliwatt": C.POWER,
              "milliwatts": C.POWER, "db": C.SNR}
_UNIT_HINT = {"hz": ("frequency", "Hz"), "khz": ("frequency", "kHz"),
              "mhz": ("frequency", "MHz"), "dbm": ("power", "dBm"), "w": ("power", "W"),
              "watt": ("power", "W"), "watts": ("power", "W"), "mw": ("power", "mW"),
              "milliwatt": ("power", "mW"), "milliwatts": ("power", "mW"),
              "epoch": ("time", "epoch"), "unix": ("time", "epoch")}
_TX_WORDS = {"tx", "transmitter", "transmit", "transmitting", "sender", "sending", "sent",
             "from", "source", "src", "beacon"}
_RX_WORDS = {"rx", "receiver", "receive", "receiving", "received", "reporter", "reporting",
             "spotter", "listener", "heard", "by", "to"}
_ALL_WORDS = (set().union(*_KIND_WORDS.values()) | set(_UNIT_KIND) | set(_UNIT_HINT))
_ROLE_FIELDS = {("call", "tx"): C.TX_CALL, ("call", "rx"): C.RX_CALL,
                ("locator", "tx"): C.TX_LOCATOR, ("locator", "rx"): C.RX_LOCATOR}
_FIELD_ORDER = list(C.INPUT_FIELDS)
_CLI_NAME = {v: k for k, v in C.CLI_FIELDS.items()}


# --- argument checks -----------------------------------------------------------------------
def _field_name(key: str) -> str:
    """Glossary name for a CLI field name or glossary name."""
    k = str(key).strip()
    if k in C.CLI_FIELDS:
        return C.CLI_FIELDS[k]
    if k in C.INPUT_FIELDS:
        return k
    raise UsageError(f"unknown field {key!r}; valid: {', '.join(C.CLI_FIELDS)}")


def _check_units(units) -> dict[str, str]:
    out = {}
    for key, unit in (units or {}).items():
        name = _CLI_NAME[_field_name(key)]
        if name not in UNIT_CHOICES:
            raise UsageError(f"field {name!r} takes no unit; units apply to "
                             f"{', '.join(UNIT_CHOICES)}")
        choices = UNIT_CHOICES[name]
        match = [c for c in choices if c.lower() == str(unit).strip().lower()]
        if not match:
            raise UsageError(f"unknown unit {unit!r} for {name}; valid: {', '.join(choices)}")
        out[name] = match[0]
    return out


def _check_mapping(mapping) -> dict[str, list]:
    out = {}
    for key, col in (mapping or {}).items():
        name = _field_name(key)
        if isinstance(col, (list, tuple)):
            cols = list(col)
        elif isinstance(col, str) and "+" in col and name == C.TIME:
            cols = [c.strip() for c in col.split("+")]
        else:
            cols = [col]
        if len(cols) > (2 if name == C.TIME else 1) or not cols:
            raise UsageError(f"field {_CLI_NAME[name]!r}: one column expected"
                             + (" (or DATE+TIME)" if name == C.TIME else "") + f", got {col!r}")
        out[name] = cols
    return out


def _check_constants(constants, mapping: dict | None = None) -> dict[str, str]:
    """Glossary name -> value text of the fields given as constants (``--set``); the
    values themselves are checked once the units are known
    (:func:`spotkit.io.clean.check_constants`)."""
    out = {}
    for key, value in (constants or {}).items():
        name = _field_name(key)
        if name == C.TIME:
            raise UsageError("the time cannot be set to one value for all rows; map its "
                             "column with --map time=COLUMN (or DATE+TIME)")
        if mapping and name in mapping:
            raise UsageError(f"field {_CLI_NAME[name]!r} is both mapped to a column (--map) "
                             "and set to a value (--set): give one")
        text = str(value).strip()
        if not text:
            raise UsageError(f"--set {_CLI_NAME[name]}=VALUE: the value is empty")
        out[name] = text
    return out


def _check_date_order(date_order) -> str | None:
    if date_order is None:
        return None
    from spotkit._validate import check_choice

    return check_choice(str(date_order).strip().lower(), DATE_ORDERS, "date order")


def _delimiter_arg(delimiter) -> str:
    d = {"\t": "tab", " ": "space", "whitespace": "space", r"\t": "tab"}.get(delimiter, delimiter)
    if d not in DELIMITERS:
        raise UsageError(f"unknown delimiter {delimiter!r}; valid: auto, ',', ';', tab, space")
    return d


# --- sniffing the file -----------------------------------------------------------------------
@dataclass
class _Layout:
    path: Path
    name: str
    compression: str | None
    encoding: str
    sep: str
    decimal: str
    header_lines: int  # lines before the first data row (a "sep=" line, the heading line)
    headings: list
    has_header: bool = False  # whether the headings come from a heading line
    fields: dict = field(default_factory=dict)  # glossary name -> list of positions
    units: dict = field(default_factory=dict)  # CLI field -> unit
    inferred: dict = field(default_factory=dict)  # CLI field -> how the unit was found
    constants: dict = field(default_factory=dict)  # glossary name -> value (--set)
    date_order: str | None = None  # None: ISO 8601 dates; else one of DATE_ORDERS
    # the moment of ingest: times later than this plus a day are rejected as in the future
    ingest_utc: pd.Timestamp = field(default_factory=lambda: pd.Timestamp.now(tz="UTC"))

    @property
    def ncols(self) -> int:
        return len(self.headings)

    def describe_columns(self) -> dict:
        out = {f: "+".join(self.label(i) for i in pos) for f, pos in self.fields.items()}
        return out | {f: f"set to {v!r}" for f, v in self.constants.items()}

    def label(self, i: int) -> str:
        h = self.headings[i]
        return f"{h!r}" if self.has_header else f"column {i + 1}"


def _open_binary(path: Path, compression):
    return gzip.open(path, "rb") if compression == "gzip" else open(path, "rb")


def _gzip_error(path: Path, exc: BaseException) -> InputError:
    return InputError(f"{path}: truncated or corrupt gzip file ({exc}); nothing was read "
                      "from it: compress the original again, or unpack what is left and "
                      "give the plain file")


def _wide_encoding(head: bytes) -> str | None:
    """UTF-16 or UTF-32 from a byte-order mark, or UTF-16 without one from where the zero
    bytes sit (text of mostly ASCII characters has a zero in every other byte)."""
    if head.startswith((codecs.BOM_UTF32_LE, codecs.BOM_UTF32_BE)):
        return "utf-32"
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return "utf-16"
    b = np.frombuffer(head[:len(head) // 2 * 2], np.uint8)
    if b.size < 16:
        return None
    even, odd = (b[0::2] == 0).mean(), (b[1::2] == 0).mean()
    if odd >= 0.9 and even <= 0.1:
        return "utf-16-le"
    if even >= 0.9 and odd <= 0.1:
        return "utf-16-be"
    return None


def _detect_encoding(path: Path, compression, head: bytes) -> str:
    """UTF-16/32 when :func:`_wide_encoding` says so; else UTF-8 (BOM or not) unless some
    byte sequence is not UTF-8; then Latin-1. The whole file is read (a truncated or
    corrupt gzip file raises :class:`InputError` here, before any row is read)."""
    wide = _wide_encoding(head)
    dec = codecs.getincrementaldecoder("utf-8")()
    buf = bytearray(1 << 23)
    utf8 = wide is None
    try:
        with _open_binary(path, compression) as fh:
            while True:
                k = fh.readinto(buf)
                if not k:
                    try:
                        if utf8:
                            dec.decode(b"", final=True)  # a sequence cut off at the end
                    except UnicodeDecodeError:
                        utf8 = False
                    break
                # all bytes below 128 (ASCII, the usual file) is checked at memory speed;
                # other blocks go through the decoder
                if utf8 and np.frombuffer(buf, np.uint8, k).max() >= 128:
                    try:
                        dec.decode(bytes(buf[:k]))
                    except UnicodeDecodeError:
                        utf8 = False
                        if compression is None:
                            break
    except (OSError, EOFError, zlib.error) as exc:
        if compression != "gzip":
            raise
        raise _gzip_error(path, exc) from None
    if wide is not None:
        return wide
    if not utf8:
        return "latin-1"
    return "utf-8-sig" if head.startswith(codecs.BOM_UTF8) else "utf-8"


def _read_head(path: Path) -> tuple[bytes, str | None]:
    if not path.exists():
        raise FileNotFoundError(f"{path}: no such file")
    if path.is_dir():
        raise IsADirectoryError(f"{path}: is a directory, not a spot file")
    with open(path, "rb") as fh:
        magic = fh.read(2)
    compression = "gzip" if magic == b"\x1f\x8b" else None
    try:
        with _open_binary(path, compression) as fh:
            head = fh.read(1 << 16)
    except (OSError, EOFError, zlib.error) as exc:
        if compression != "gzip":
            raise
        raise _gzip_error(path, exc) from None
    return head, compression


#: Largest share of control bytes (other than tab, line feed, carriage return and NUL) in
#: the first 64 kB of a text file, and largest share of NUL bytes; a file with more is
#: binary. A few NUL bytes cost only the rows they are in, wherever they are in the file.
MAX_CONTROL_SHARE, MAX_NUL_SHARE = 0.01, 0.05


def _check_text(path: Path, head: bytes, encoding: str | None = None) -> None:
    if encoding is not None:  # UTF-16 or UTF-32: look at the decoded text
        head = head[:len(head) // 4 * 4].decode(encoding, errors="replace").encode(
            "utf-8", errors="replace")
    if not head.strip():
        raise NotASpotTableError(f"{path}: not a spot table (the file is empty)")
    body = head.removeprefix(codecs.BOM_UTF8)
    control = sum(body.count(bytes([b])) for b in range(1, 32) if b not in (9, 10, 13))
    if control > MAX_CONTROL_SHARE * len(body) or body.count(b"\x00") > MAX_NUL_SHARE * len(body):
        raise NotASpotTableError(f"{path}: not a spot table (binary content, not text)")
    start = body.lstrip()[:512].lower()
    if start.startswith((b"<!doctype", b"<html", b"<?xml", b"<head", b"<body", b"<table")) or (
            start.startswith(b"<") and b">" in start):
        raise NotASpotTableError(f"{path}: not a spot table (it looks like HTML or XML)")


def _split(line: str, sep: str) -> list[str]:
    if sep == r"\s+":  # runs of ASCII blanks and tabs, quotes honoured (as pandas' parser)
        line = line.replace("\t", " ").strip(" \r\n")
        return next(csv.reader([line], delimiter=" ", skipinitialspace=True)) if line else []
    return [t.strip() for t in next(csv.reader([line], delimiter=sep))]


#: Share of the first lines that must split into as many fields as the first line for a
#: delimiter to be taken at once; failing that, a delimiter that splits at least
#: :data:`SEP_SHARE_LOW` of them so is taken (the others are rows with the wrong number of
#: fields) unless a second delimiter splits :data:`MIXED_SHARE` of the lines into 3 or
#: more fields (mixed delimiters).
SEP_SHARE, SEP_SHARE_LOW, MIXED_SHARE = 0.9, 0.5, 0.1

_SEP_LINE = re.compile(r'^\s*"?sep=(.)"?[,;\t]*\s*$', re.IGNORECASE)


def _sniff_sep(lines: list[str], delimiter: str, path: Path | None = None) -> str:
    if delimiter != "auto":
        return {"tab": "\t", "space": r"\s+"}.get(delimiter, delimiter)
    counts = {sep: np.array([len(_split(ln, sep)) for ln in lines]) for sep in ("\t", ";", ",")}
    for sep, c in counts.items():
        # consistent when the first line and most lines split into the same >= 3 fields
        if c.size and c[0] >= 3 and np.mean(c == c[0]) >= SEP_SHARE:
            return sep
    wide = {sep: float(np.mean(c >= 3)) for sep, c in counts.items() if c.size}
    mixed = [sep for sep, share in wide.items() if share >= MIXED_SHARE]
    if len(mixed) > 1:
        shares = ", ".join(f"{_sep_label(sep)} in {100 * wide[sep]:.0f} %"
                           for sep in sorted(mixed, key=lambda x: -wide[x]))
        raise InputError(f"{path or 'the file'}: mixed delimiters: of the first "
                         f"{len(lines)} lines, fields are separated by {shares}; save the "
                         "file with one delimiter, or give it with --delimiter (lines "
                         "that do not split into the right number of fields are then "
                         "rejected)")
    for sep, c in counts.items():
        if c.size and c[0] >= 3 and np.mean(c == c[0]) >= SEP_SHARE_LOW:
            return sep
    return r"\s+"


def _is_number(tok: str) -> bool:
    return bool(_NUMBER_RE.match(tok.strip()))


def _sniff_layout(path: Path, delimiter: str, header) -> _Layout:
    head, compression = _read_head(path)
    _check_text(path, head, _wide_encoding(head))
    encoding = _detect_encoding(path, compression, head)
    if encoding.startswith(("utf-16", "utf-32")):
        head = head[:len(head) // 4 * 4]
    text = head.decode(encoding, errors="replace").replace("\x00", "")
    if len(head) >= (1 << 16) - 3:
        text = text.rsplit("\n", 1)[0]  # drop the cut-off last line
    raw_lines = text.splitlines()
    # a first line "sep=," (written by spreadsheet programs) names the delimiter
    sep_line = _SEP_LINE.match(raw_lines[0]) if raw_lines else None
    preamble = 1 if sep_line else 0
    if sep_line and delimiter == "auto":
        delimiter = _delimiter_arg({"\t": "tab", " ": "space"}.get(sep_line.group(1),
                                                                  sep_line.group(1)))
    lines = [ln for ln in raw_lines[preamble:] if ln.strip()][:200]
    # lines with a quote mark never closed are set aside by the reader: not sniffed either
    lines = lines[:1] + [ln for ln in lines[1:] if ln.count('"') % 2 == 0]
    if not lines:
        raise NotASpotTableError(f"{path}: not a spot table (no text lines)")
    sep = _sniff_sep(lines, delimiter, path)
    first = _split(lines[0], sep)
    if header == "auto":
        # no numbers in the first line, and numbers below it or a known heading word in it
        has_header = not any(_is_number(t) for t in first) and (
            len(lines) == 1
            or any(sum(_is_number(t) for t in _split(ln, sep)) >= 2 for ln in lines[1:50])
            or any(_heading_kind(t)[0] is not None for t in first))
    elif isinstance(header, bool):
        has_header = header
    else:
        raise UsageError(f"header must be 'auto', True or False, not {header!r}")
    data = lines[1:] if has_header else lines
    counts = [len(_split(ln, sep)) for ln in data] or [len(first)]
    nfields = int(pd.Series(counts).mode().max())
    if nfields < 4:
        raise NotASpotTableError(
            f"{path}: not a spot table (found {nfields} column(s) with delimiter "
            f"{_sep_label(sep)}; a spot table has at least time, calls, locators, "
            "frequency, SNR and power)")
    decimal = "."
    if sep != ",":
        toks = [t for ln in data[:50] for t in _split(ln, sep)]
        if any(re.fullmatch(r"-?\d+,\d+", t) for t in toks):
            decimal = ","
    if has_header:
        headings = [h.strip() for h in first]
        if nfields == len(headings) + 1 and sep == r"\s+":
            headings = _split_date_time_heading(path, headings, _split(data[0], sep))
        elif nfields > len(headings) and all(
                not t for ln in data[:50] for t in _split(ln, sep)[len(headings):]):
            # rows end with a delimiter the heading line lacks: extra empty columns
            headings += [f"(unnamed {i + 1})" for i in range(len(headings), nfields)]
        elif nfields > len(headings):
            raise InputError(f"{path}: the heading line has {len(headings)} headings but data "
                             f"rows have {nfields} fields (delimiter {_sep_label(sep)})")
    else:
        headings = [f"column {i + 1}" for i in range(nfields)]
    return _Layout(path=path, name=str(path), compression=compression, encoding=encoding,
                   sep=sep, decimal=decimal, header_lines=preamble + int(has_header),
                   headings=headings, has_header=bool(has_header))


def _split_date_time_heading(path, headings, row):
    """Blank-delimited rows may split 'DATE TIME' into two fields under one heading."""
    for k, h in enumerate(headings):
        if _heading_kind(h)[0] == C.TIME and k + 1 < len(row) and re.match(
                _DATE_RE, row[k]) and re.match(_CLOCK_RE, row[k + 1]):
            return headings[:k] + [f"{h} (date)", f"{h} (clock)"] + headings[k + 1:]
    raise InputError(f"{path}: the heading line has {len(headings)} headings but data rows "
                     f"have {len(headings) + 1} fields")


def _sep_label(sep: str) -> str:
    return {"\t": "tab", r"\s+": "blanks"}.get(sep, repr(sep))


# --- mapping headings onto the glossary --------------------------------------------------------
def _heading_words(heading: str) -> list[str]:
    h = unicodedata.normalize("NFKD", str(heading))
    h = "".join(ch for ch in h if not unicodedata.combining(ch))
    for unit in ("kHz", "MHz", "dBm", "mW"):  # keep unit spellings whole
        h = h.replace(unit, f" {unit.lower()} ")
    h = re.sub(r"([a-z])([A-Z])", r"\1 \2", h).lower().replace("s/n", "snr")
    words = []
    for w in re.split(r"[^a-z0-9]+", h):
        if not w:
            continue
        m = re.match(r"^(tx|rx)([a-z]+)$", w)
        if m and m.group(2) in _ALL_WORDS:
            words += [m.group(1), m.group(2)]
        else:
            words.append(w)
    return words


def _heading_kind(heading: str) -> tuple[str | None, str | None, dict]:
    """(kind, role, unit hints) of one heading; kind None when no word matches,
    "?" when words of several kinds match."""
    words = _heading_words(heading)
    kinds = {k for k, ws in _KIND_WORDS.items() if ws & set(words)}
    if not kinds:
        kinds = {_UNIT_KIND[w] for w in words if w in _UNIT_KIND}
    roles = {"tx" for w in words if w in _TX_WORDS} | {"rx" for w in words if w in _RX_WORDS}
    hints = dict(_UNIT_HINT[w] for w in words if w in _UNIT_HINT)
    role = roles.pop() if len(roles) == 1 else ("?" if roles else None)
    if not kinds and role in ("tx", "rx"):
        kinds = {"call"}  # a role word alone ("sender", "receiver") names that station
    if len(kinds) > 1:
        return "?", role, hints
    return (kinds.pop() if kinds else None), role, hints


def match_headings(headings: Sequence[str], given: Sequence[str] = ()) -> tuple[dict, dict]:
    """Match column headings onto glossary fields by generic words.

    Rules: each heading is split into lower-case words (at blanks, punctuation and camelCase;
    ``txcall`` -> ``tx call``). Kind words: time/date/timestamp/utc/epoch -> time;
    call/callsign/station -> call; locator/grid/loc/square/qth -> locator;
    frequency/freq/qrg -> frequency; snr/s/n/signal/noise -> SNR; power/pwr -> power;
    drift -> drift; unit words (Hz, kHz, MHz, dBm, W, mW, dB) name a kind only when no kind
    word is present. Role words: tx/transmitter/sender/from/source/beacon -> transmitter;
    rx/receiver/reporter/spotter/listener/heard/by/to -> receiver; a role word alone names
    that station's call. A call or locator heading without a role takes the role left
    over when the other role is named by another heading, or given otherwise (``given``:
    glossary names of fields set to one value, ``--set``, which no heading is matched
    to). Separate date and time headings are joined (a date column next to a time
    column).

    Returns
    -------
    fields : dict
        Glossary name -> list of column positions (0-based).
    problems : dict
        Glossary name -> text describing why it is missing or ambiguous.

    Examples
    --------
    Separate date and time columns are joined; ``TxLoc`` splits into ``tx loc``:

    >>> fields, problems = match_headings(
    ...     ["Date", "Time", "Sender", "TxLoc", "Reporter", "RxGrid", "Freq (MHz)", "SNR dB",
    ...      "Power dBm", "Drift"])
    >>> fields
    {'time_utc': [0, 1], 'tx_call': [2], 'tx_locator': [3], 'rx_call': [4],
     'rx_locator': [5], 'freq_hz': [6], 'snr_db': [7], 'power_dbm': [8], 'drift_hz': [9]}
    >>> problems
    {}

    A call heading without a role takes the one left over:

    >>> fields, problems = match_headings(["time", "call", "locator", "rx call", "rx locator",
    ...                                    "frequency", "snr", "power"])
    >>> fields["tx_call"], fields["tx_locator"], problems
    ([1], [2], {})

    Two calls without roles, and no power column:

    >>> fields, problems = match_headings(["time", "call", "call", "grid", "freq", "snr"])
    >>> problems["tx_call"]
    "no heading says transmitter or receiver: 'call', 'call'"
    >>> problems["power_dbm"]
    'no heading found'
    """
    cand: dict[str, list[int]] = {f: [] for f in _FIELD_ORDER}
    roleless: dict[str, list[int]] = {"call": [], "locator": []}
    problems: dict[str, str] = {}
    for i, h in enumerate(headings):
        kind, role, _ = _heading_kind(h)
        if kind in ("call", "locator"):
            if role in ("tx", "rx"):
                cand[_ROLE_FIELDS[(kind, role)]].append(i)
            else:
                roleless[kind].append(i)
        elif kind in cand:
            cand[kind].append(i)
    given = set(given)
    for kind, idx in roleless.items():
        tx, rx = _ROLE_FIELDS[(kind, "tx")], _ROLE_FIELDS[(kind, "rx")]
        has_tx, has_rx = bool(cand[tx]) or tx in given, bool(cand[rx]) or rx in given
        if len(idx) == 1 and has_tx != has_rx:
            cand[rx if has_tx else tx].append(idx[0])
        elif idx:
            for f in (tx, rx):
                if not cand[f] and f not in given:
                    problems[f] = ("no heading says transmitter or receiver: "
                                   + ", ".join(repr(headings[i]) for i in idx))
    t = cand[C.TIME]
    if len(t) == 2:
        w = [set(_heading_words(headings[i])) for i in t]
        dated = [("date" in x) for x in w]
        if sum(dated) == 1:
            cand[C.TIME] = [t[dated.index(True)], t[dated.index(False)]]
    fields = {}
    for f in _FIELD_ORDER:
        idx = cand[f]
        if f in given:
            continue
        if f == C.TIME and len(idx) == 2 and any("date" in _heading_words(headings[i])
                                                 for i in idx[:1]):
            fields[f] = idx
        elif len(idx) == 1:
            fields[f] = idx
        elif len(idx) > 1:
            problems[f] = "ambiguous: " + ", ".join(repr(headings[i]) for i in idx)
        elif f in C.REQUIRED_INPUT and f not in problems:
            problems[f] = "no heading found"
    return fields, problems


def _apply_mapping(layout: _Layout, mapping: dict) -> dict:
    """Resolve explicit mapping values (heading text or 1-based position) to positions."""
    lookup = {h.strip().lower(): i for i, h in enumerate(layout.headings)} \
        if layout.has_header else {}
    out = {}
    for f, cols in mapping.items():
        pos = []
        for col in cols:
            key = str(col).strip()
            if key.lower() in lookup:
                pos.append(lookup[key.lower()])
            elif re.fullmatch(r"\d+", key) and 1 <= int(key) <= layout.ncols:
                pos.append(int(key) - 1)
            else:
                raise MappingError(
                    f"{layout.name}: --map {_CLI_NAME[f]}={col}: no such column; "
                    + _columns_help(layout))
        out[f] = pos
    return out


def _columns_help(layout: _Layout, sample: pd.DataFrame | None = None) -> str:
    parts = []
    for i, h in enumerate(layout.headings):
        ex = ""
        if sample is not None and i < sample.shape[1]:
            vals = sample.iloc[:3, i].dropna().astype(str).tolist()
            ex = f" e.g. {', '.join(vals)}" if vals else ""
        parts.append(f"{i + 1}: {h!r}{ex}" if layout.has_header else f"column {i + 1}{ex}")
    return ("columns found: " + "; ".join(parts) + ". Map them with --map FIELD=COLUMN "
            "(heading or 1-based position; in Python mapping={'tx_call': ...}); FIELD is one "
            "of " + ", ".join(C.CLI_FIELDS))


# --- content-based column inference (files without headings) -----------------------------------
def _frac(mask, base) -> float:
    n = int(np.sum(base))
    return float(np.sum(mask & base)) / n if n else 0.0


def _column_profile(s: pd.Series) -> dict:
    s = s.astype("str").str.strip()
    present = s.notna() & (s != "")
    num = _to_number(s.str.replace(",", ".", regex=False), ".")
    isnum = num.notna().to_numpy()
    p = present.to_numpy()
    up = s.str.upper()
    prof = {
        "date": _frac(s.str.match(_DATE_RE).fillna(False).to_numpy(), p),
        "clock": _frac(s.str.match(_CLOCK_RE).fillna(False).to_numpy(), p),
        "iso": _frac(s.str.match(_ISO_RE).fillna(False).to_numpy(), p),
        "locator": _frac((normalize_locator(up.fillna("").to_numpy()) != None)  # noqa: E711
                         & (s.str.len() >= 4).fillna(False).to_numpy(), p),
        "call": _frac(up.str.match(_CALL_RE.pattern).fillna(False).to_numpy(), p),
        "number": _frac(isnum, p),
        "values": num[isnum].to_numpy(dtype=float),
    }
    v = prof["values"]
    lo, hi = EPOCH_RANGE_S  # seconds or milliseconds
    prof["epoch"] = _frac((((num >= lo) & (num < hi)) | ((num >= lo * 1e3) & (num < hi * 1e3))
                           ).to_numpy(), p)
    prof["integer"] = float(np.mean(v == np.round(v))) if v.size else 0.0
    return prof


def infer_columns(sample: pd.DataFrame, known: dict | None = None,
                  given: Sequence[str] = ()) -> tuple[dict, dict]:
    """Classify the columns of a file without headings by their content.

    Time: ISO 8601 text (or a date column followed by a clock column) or epoch seconds or
    milliseconds;
    locators: valid Maidenhead locators of 4 or more characters; calls: letters and digits
    with at least one of each; frequency: the one numeric column that lands in amateur bands
    in Hz, kHz or MHz; power: whole numbers 0..60 on the dBm ladder; SNR: whole numbers in
    -60..60 with negative values; drift: small whole numbers. Each kind must be matched in at
    least 90 % of the non-empty cells. Transmitter and receiver cannot be told apart by
    content: one call column must be mapped (``tx_call`` or ``rx_call``); a locator column
    right after a call column belongs to that station.

    Parameters
    ----------
    sample : pandas.DataFrame
        The first rows of the file as text, one column per field position.
    known : dict, optional
        Glossary name -> list of positions already mapped.
    given : sequence of str, optional
        Glossary names of fields set to one value (``--set``): no column is sought for them.

    Returns
    -------
    fields, problems : dict
        As :func:`match_headings`.

    Examples
    --------
    >>> sample = pd.DataFrame(
    ...     [["2024-03-01 10:00", "Q1ABC", "JO62qm", "Q2XY", "JN58td", "14.0971", "-12", "37"],
    ...      ["2024-03-01 10:02", "Q1ABC", "JO62qm", "Q3DEF", "IO91lk", "14.0971", "-21", "37"]])
    >>> fields, problems = infer_columns(sample)
    >>> sorted(fields.items())
    [('freq_hz', [5]), ('power_dbm', [7]), ('snr_db', [6]), ('time_utc', [0])]
    >>> problems["tx_call"]
    'calls found in column 2, column 4 but a file without headings does not say which is
     the transmitter: map one, e.g. --map tx_call=N'

    With the transmitter's call mapped, the rest follows:

    >>> fields, problems = infer_columns(sample, known={"tx_call": [1]})
    >>> fields["rx_call"], fields["tx_locator"], fields["rx_locator"], problems
    ([3], [2], [4], {})
    """
    known = dict(known or {})
    used = {i for pos in known.values() for i in pos}
    prof = {i: _column_profile(sample.iloc[:, i]) for i in range(sample.shape[1]) if i not in used}
    fields, problems = dict(known), {}
    hit = 0.9

    def pick(f, idx):
        if f in fields:
            return
        if len(idx) == 1:
            fields[f] = [idx[0]]
            for i in idx:
                prof.pop(i, None)
        elif len(idx) > 1:
            problems[f] = "ambiguous: " + ", ".join(f"column {i + 1}" for i in idx)

    if C.TIME not in fields:
        iso = [i for i, p in prof.items() if p["iso"] >= hit]
        dates = [i for i, p in prof.items() if p["date"] >= hit and p["iso"] < hit]
        clock_next = len(dates) == 1 and dates[0] + 1 in prof and prof[dates[0] + 1]["clock"] >= hit
        if not iso and clock_next:
            fields[C.TIME] = [dates[0], dates[0] + 1]
            prof.pop(dates[0]), prof.pop(dates[0] + 1)
        else:
            pick(C.TIME, iso or [i for i, p in prof.items()
                                 if p["epoch"] >= hit and p["integer"] >= hit])
    locs = [i for i, p in prof.items() if p["locator"] >= hit]
    calls = [i for i, p in prof.items() if p["call"] >= hit and i not in locs]
    _assign_roles(fields, problems, calls, locs, set(given))
    for i in set(calls) | set(locs):
        prof.pop(i, None)
    numeric = {i: p for i, p in prof.items() if p["number"] >= hit and p["values"].size}
    if C.FREQ not in fields:
        pick(C.FREQ, [i for i, p in numeric.items()
                      if max(_band_hits(p["values"]).values()) >= hit])
    numeric = {i: p for i, p in numeric.items() if i in prof}
    if C.POWER not in fields:
        pick(C.POWER, [i for i, p in numeric.items() if p["integer"] >= hit and np.mean(
            np.isin(p["values"], POWER_LADDER_DBM)) >= hit and p["values"].min() >= 0])
    numeric = {i: p for i, p in numeric.items() if i in prof}
    if C.SNR not in fields:
        pick(C.SNR, [i for i, p in numeric.items() if p["integer"] >= hit
                     and p["values"].min() < 0 and np.abs(p["values"]).max() <= 60
                     and np.abs(p["values"]).max() > 5])
    numeric = {i: p for i, p in numeric.items() if i in prof}
    if C.DRIFT not in fields:
        small = [i for i, p in numeric.items()
                 if p["integer"] >= hit and np.abs(p["values"]).max() <= 5]
        if len(small) == 1:
            fields[C.DRIFT] = small
    for f in C.REQUIRED_INPUT:
        if f not in fields and f not in problems and f not in given:
            problems[f] = "no column looks like it"
    return fields, problems


def _join_date_and_clock(sample: pd.DataFrame, fields: dict) -> list:
    """The time column, joined with the column next to it when one holds dates only and
    the other clock times only (by content, at least 90 % of the non-empty cells)."""
    pos = fields[C.TIME]
    if len(pos) != 1 or not sample.shape[0]:
        return pos
    i = pos[0]
    used = {j for f, p in fields.items() if f != C.TIME for j in p}

    def share(j, pattern):
        s = sample.iloc[:, j].astype("str").str.strip()
        s = s[s.notna() & (s != "")]
        return float(s.str.match(pattern).mean()) if len(s) else 0.0

    mine_date, mine_clock = share(i, _DATE_RE), share(i, _CLOCK_RE)
    for j in (i - 1, i + 1):
        if j < 0 or j >= sample.shape[1] or j in used:
            continue
        if mine_clock >= 0.9 and share(j, _DATE_RE) >= 0.9:
            return [j, i]
        if mine_date >= 0.9 and share(j, _CLOCK_RE) >= 0.9:
            return [i, j]
    return pos


def _assign_roles(fields, problems, calls, locs, given=frozenset()):
    want = [C.TX_CALL, C.RX_CALL]
    have = [f for f in want if f in fields or f in given]
    free_calls = [i for i in calls if all(i not in p for p in fields.values())]
    if len(have) == 1 and len(free_calls) == 1:
        other = C.RX_CALL if have[0] == C.TX_CALL else C.TX_CALL
        fields[other] = free_calls
    elif len(have) == 0 and free_calls:
        for f in want:
            problems[f] = ("calls found in " + ", ".join(f"column {i + 1}" for i in free_calls)
                           + " but a file without headings does not say which is the "
                           "transmitter: map one, e.g. --map tx_call=N")
        for f in (C.TX_LOCATOR, C.RX_LOCATOR):
            problems[f] = "taken from the column right after each call once the calls are mapped"
        return
    for call_f, loc_f in ((C.TX_CALL, C.TX_LOCATOR), (C.RX_CALL, C.RX_LOCATOR)):
        if loc_f in fields or loc_f in given or call_f not in fields:
            continue
        nxt = fields[call_f][0] + 1
        if nxt in locs:
            fields[loc_f] = [nxt]
        else:
            problems[loc_f] = (f"no locator column right after the {_CLI_NAME[call_f]} column; "
                               f"map it with --map {_CLI_NAME[loc_f]}=N")


# --- units -------------------------------------------------------------------------------------
def _band_hits(values_num: np.ndarray) -> dict[str, float]:
    v = values_num[np.isfinite(values_num)]
    if not v.size:
        return {u: 0.0 for u in FREQUENCY_UNITS}
    return {u: float(np.mean(pd.notna(freq_to_band(frequency_to_hz(v, u)))))
            for u in FREQUENCY_UNITS}


def infer_frequency_unit(values) -> str:
    """Unit (Hz, kHz or MHz) that puts the frequencies into amateur bands.

    The unit must put at least half of the values into a band (IARU plans, all regions)
    while every other unit puts fewer than 5 % there; otherwise the unit is ambiguous.

    Raises
    ------
    InputError
        When no unit or more than one unit fits.

    Examples
    --------
    >>> infer_frequency_unit([14097100, 7040100])
    'Hz'
    >>> infer_frequency_unit([14.0971, 10.1401])
    'MHz'
    >>> infer_frequency_unit([14097.1])
    'kHz'
    >>> infer_frequency_unit([5])
    Traceback (most recent call last):
    ...
    spotkit.errors.InputError: cannot tell the frequency unit (Hz: 0 % in a band, ...
    """
    hits = _band_hits(np.asarray(values, dtype=float))
    best = max(hits, key=hits.get)
    others = [u for u in hits if u != best and hits[u] >= 0.05]
    if hits[best] < 0.5 or others:
        shares = ", ".join(f"{u}: {100 * h:.0f} % in a band" for u, h in hits.items())
        raise InputError(f"cannot tell the frequency unit ({shares}); give it, e.g. "
                         "--unit frequency=MHz")
    return best


def infer_power_unit(values) -> str:
    """Unit (dBm, W or mW) of reported transmit powers.

    Rules, in order: dBm when at least 90 % of the values are whole numbers on the beacon
    ladder (0..60 ending in 0, 3 or 7; common practice); W when some values have fractions
    and none exceeds :data:`MAX_WATTS`; mW when all are whole numbers and some exceed
    :data:`MAX_WATTS`. Anything else (e.g. whole numbers 61..1500, which could be W or mW)
    is ambiguous.

    Raises
    ------
    InputError
        When the unit is ambiguous.

    Examples
    --------
    >>> infer_power_unit([37, 23, 30]), infer_power_unit([0.2, 5, 1]), infer_power_unit([200, 5000])
    ('dBm', 'W', 'mW')
    >>> infer_power_unit([100, 200])
    Traceback (most recent call last):
    ...
    spotkit.errors.InputError: cannot tell the power unit (values [100.0, 200.0]...): give it, ...
    """
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if not v.size:
        raise InputError("cannot tell the power unit: no numeric powers; give --unit power=...")
    whole = v == np.round(v)
    if np.mean(whole & np.isin(v, POWER_LADDER_DBM)) >= 0.9:
        return "dBm"
    if (~whole).any() and v.max() <= MAX_WATTS and v.min() >= 0:
        return "W"
    if whole.all() and v.max() > MAX_WATTS:
        return "mW"
    raise InputError(f"cannot tell the power unit (values {np.unique(v)[:6].tolist()}...): "
                     "give it, e.g. --unit power=W")


def _to_number(raw: pd.Series, decimal: str) -> pd.Series:
    """Text cells to float64; cells that are not plain decimal numbers become NaN."""
    import pyarrow as pa
    import pyarrow.compute as pc

    if pd.api.types.is_numeric_dtype(raw.dtype):
        return raw.astype("float64")
    arr = pa.array(raw.astype("str").array)
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    arr = arr.cast(pa.string())
    if decimal == ".":
        try:  # the usual case: clean cells, no blanks around them
            vals = pc.cast(arr, pa.float64())
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            pass
        else:
            return _checked_numbers(vals, arr, raw.index)
    arr = pc.utf8_trim_whitespace(_plain_signs(arr))
    if decimal == ",":
        arr = pc.replace_substring(arr, ",", ".")
    pattern = _NUMBER_PATTERN
    try:
        # fast path: arrow's parser accepts every plain decimal number the pattern accepts,
        # and besides them only spellings of NaN and infinity; NaN comes out as NaN either
        # way, so only infinite results are checked against the pattern
        vals = pc.cast(pc.if_else(pc.equal(arr, ""), pa.scalar(None, pa.string()), arr),
                       pa.float64())
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        ok = pc.match_substring_regex(arr, pattern)
        vals = pc.cast(pc.if_else(ok, arr, pa.scalar(None, pa.string())), pa.float64())
        out = vals.to_numpy(zero_copy_only=False)
        return pd.Series(np.asarray(out, dtype="float64"), index=raw.index)
    return _checked_numbers(vals, arr, raw.index)


_NUMBER_PATTERN = r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$"

#: Characters written for a minus sign in numeric cells: U+2212 MINUS SIGN, hyphens and
#: dashes used as minus (U+2010..U+2013), small and fullwidth hyphen-minus (U+FE63, U+FF0D).
MINUS_SIGNS = "\u2212\u2010\u2011\u2012\u2013\ufe63\uff0d"
#: Characters written for a plus sign: small and fullwidth plus (U+FE62, U+FF0B).
PLUS_SIGNS = "\ufe62\uff0b"
#: Blanks other than the ASCII space that may pad or group the digits of a number:
#: no-break, en/em, figure, thin, hair, narrow no-break, medium mathematical and
#: ideographic spaces, zero-width space and no-break (byte-order mark).
UNICODE_BLANKS = "\u00a0\u2000-\u200b\u202f\u205f\u3000\ufeff"


def _plain_signs(arr):
    """Text cells with Unicode minus and plus signs written as ASCII ``-`` and ``+``,
    Unicode blanks removed and fullwidth digits made ASCII (NFKC); ASCII cells unchanged.

    Only cells with a character outside ASCII are touched (vectorised over the distinct
    cells by pyarrow)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    ascii_ = pc.string_is_ascii(arr)
    if pc.all(ascii_).as_py() in (True, None):
        return arr
    other = pc.replace_substring_regex(arr, f"[{UNICODE_BLANKS}]", "")
    other = pc.utf8_normalize(other, "NFKC")
    other = pc.replace_substring_regex(other, f"[{MINUS_SIGNS}]", "-")
    other = pc.replace_substring_regex(other, f"[{PLUS_SIGNS}]", "+")
    return pc.if_else(ascii_, arr, other).cast(pa.string())


def _checked_numbers(vals, arr, index) -> pd.Series:
    """Arrow-parsed numbers ``vals`` of text ``arr``, infinities kept only when spelled as
    plain decimal numbers (overflow); "inf", "infinity" and the like become NaN."""
    import pyarrow as pa
    import pyarrow.compute as pc

    out = np.asarray(vals.to_numpy(zero_copy_only=False), dtype="float64")
    inf = np.flatnonzero(np.isinf(out))
    if inf.size:
        out = out.copy()
        text = pc.utf8_trim_whitespace(arr.take(pa.array(inf)))
        ok = pc.match_substring_regex(text, _NUMBER_PATTERN).to_numpy(zero_copy_only=False)
        out[inf[~np.asarray(ok, dtype=bool)]] = np.nan
    return pd.Series(out, index=index)


def _infer_units(layout: _Layout, sample: pd.DataFrame, units: dict) -> None:
    hints = {}
    if layout.has_header:
        for f, pos in layout.fields.items():
            for i in pos:
                for k, u in _heading_kind(layout.headings[i])[2].items():
                    if k == _CLI_NAME[f]:
                        hints[k] = u
    out = {}
    for name in UNIT_CHOICES:
        if name in units:
            out[name] = units[name]
            continue
        if name in hints:
            out[name] = hints[name]
            layout.inferred[name] = "from heading"
            continue
        f = C.CLI_FIELDS[name]
        if f in layout.constants:  # one value for all rows (--set): its unit from it
            pos, col = [], pd.Series([layout.constants[f]], dtype="str")
        else:
            pos = layout.fields[f]
            col = sample.iloc[:, pos[0]]
        if not len(sample) and pos:  # no data rows: nothing to infer from, nothing to convert
            out[name] = UNIT_CHOICES[name][0]
            layout.inferred[name] = "no rows"
            continue
        try:
            if name == "time":
                nums = _to_number(col, ".")
                present = col.notna() & (col.astype("str").str.strip() != "")
                epoch = len(pos) == 1 and present.any() and nums[present].notna().mean() >= 0.9
                out[name] = "epoch" if epoch else "iso"
            elif name == "frequency":
                out[name] = infer_frequency_unit(_to_number(col, layout.decimal))
            else:
                out[name] = infer_power_unit(_to_number(col, layout.decimal))
        except InputError as exc:
            if not pos:  # a value given on the command line: a usage error
                raise UsageError(f"--set {name}={layout.constants[f]}: {exc}") from None
            raise InputError(f"{layout.name}: column {layout.label(pos[0])}: {exc}") from None
        layout.inferred[name] = "inferred"
    if out["time"] == "epoch" and "time" not in units and len(sample):
        # epoch times not said to be seconds: seconds or milliseconds by magnitude
        col = sample.iloc[:, layout.fields[C.TIME][0]]
        out["time"] = infer_epoch_unit(_to_number(col, "."))
        layout.inferred["time"] = layout.inferred.get("time", "inferred") + ", by magnitude"
    layout.units = out
    if out["time"] == "iso" and layout.date_order is None and len(sample):
        layout.date_order = infer_date_order(_time_texts(layout, sample),
                                             f"{layout.name}: column "
                                             + "+".join(map(layout.label,
                                                            layout.fields[C.TIME])))


def _time_texts(layout: _Layout, sample: pd.DataFrame) -> pd.Series:
    """The sample's time cells as text, a date and a clock column joined by a blank."""
    pos = layout.fields[C.TIME]
    cols = [sample.iloc[:, i].astype("str").str.strip() for i in pos]
    return cols[0] if len(cols) == 1 else cols[0] + " " + cols[1]


def infer_date_order(texts, where: str = "the time column") -> str | None:
    """Order of day, month and year in dates such as ``02.03.2026`` or ``3/14/2026``.

    ISO dates (year first, ``2026-03-02``) need no order (None). Dates with the year last
    are day-first when some first part exceeds 12 and no second part does, month-first in
    the opposite case; when no part exceeds 12 (or both do) the order cannot be told from
    the data. Texts that are no such date are left out.

    Parameters
    ----------
    texts : sequence of str
        Time cells (a date, optionally followed by a blank or ``T`` and a clock time).
    where : str
        What the texts are, for the message.

    Returns
    -------
    {"dmy", "mdy", "ymd"} or None
        ``"ymd"`` for year-first dates not in ISO 8601 spelling (``2026/03/02``, dots),
        None for ISO dates or when no text is a date with separators.

    Raises
    ------
    InputError
        When the dates are ambiguous; the message names the option ``--date-order``.

    Examples
    --------
    >>> infer_date_order(["02.03.2026 00:00", "14.03.2026 12:00"])
    'dmy'
    >>> infer_date_order(["3/14/2026 10:00"]), infer_date_order(["2026-03-14 10:00"])
    ('mdy', None)
    >>> infer_date_order(["02.03.2026 00:00"])
    Traceback (most recent call last):
    ...
    spotkit.errors.InputError: the time column: cannot tell whether the dates are day-first ...
    """
    s = pd.Series(np.asarray(texts, dtype=object), dtype="str")
    parts = s.str.extract(_DATE_PARTS_RE).dropna()
    if parts.empty:
        return None
    width = parts[0].str.len()
    if (width == 4).mean() >= 0.5:
        iso = s.str.match(r"^\s*\d{4}-\d{2}-\d{2}").mean() >= 0.5
        return None if iso else "ymd"
    a, b = parts[0].astype(int), parts[1].astype(int)
    day_first, month_first = bool((a > 12).any()), bool((b > 12).any())
    if day_first != month_first:
        return "dmy" if day_first else "mdy"
    example = s[parts.index[0]]
    why = ("some dates have a first part above 12 and others a second part above 12"
           if day_first else "no part of the dates in the first rows is above 12")
    raise InputError(f"{where}: cannot tell whether the dates are day-first or month-first "
                     f"(e.g. {example!r}; {why}): give --date-order dmy or --date-order mdy "
                     "(in Python date_order='dmy' or 'mdy')")


# --- preparing a file: layout, columns, units ----------------------------------------------
def _csv_kwargs(layout: _Layout) -> dict:
    """Keywords of :func:`pandas.read_csv` reading every cell as text."""
    names = [f"c{i}" for i in range(layout.ncols)]
    dtype = "str"
    kw = dict(sep=layout.sep, header=None, names=names, skiprows=layout.header_lines,
              encoding=layout.encoding, compression=layout.compression, dtype=dtype,
              keep_default_na=False, na_values=[""], skip_blank_lines=False,
              on_bad_lines="warn", index_col=False, decimal=layout.decimal, low_memory=False,
              encoding_errors="replace")
    if layout.sep != r"\s+":
        kw["skipinitialspace"] = True
    return kw


def _read_sample(layout: _Layout) -> pd.DataFrame:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            return pd.read_csv(layout.path, nrows=SAMPLE_ROWS, **_csv_kwargs(layout))
        except pd.errors.ParserError:  # a quote mark never closed: quotes as plain text
            return pd.read_csv(layout.path, nrows=SAMPLE_ROWS, quoting=csv.QUOTE_NONE,
                               **_csv_kwargs(layout))


def _prepare_layout(path: Path, mapping, units, delimiter, header, constants=None,
                    date_order=None) -> _Layout:
    layout = _sniff_layout(path, delimiter, header)
    layout.constants = dict(constants or {})
    layout.date_order = date_order
    sample = _read_sample(layout)
    known = _apply_mapping(layout, mapping)
    given = tuple(layout.constants)
    if layout.has_header:
        guessed, problems = match_headings(layout.headings, given)
        taken = {i for pos in known.values() for i in pos}
        fields = dict(known)
        for f, pos in guessed.items():
            if f not in fields and not taken & set(pos):
                fields[f] = pos
        problems = {f: p for f, p in problems.items() if f not in fields}
    else:
        fields, problems = infer_columns(sample, known, given)
        if not known and not fields:
            raise NotASpotTableError(
                f"{path}: not a spot table (no heading line and no column looks like times, "
                "callsigns, locators or numbers; if it is one, map every column with --map)")
    fields = {f: pos for f, pos in fields.items() if f not in layout.constants}
    if C.TIME in fields and C.TIME not in known:
        fields[C.TIME] = _join_date_and_clock(sample, fields)
    missing = [f for f in C.REQUIRED_INPUT if f not in fields and f not in layout.constants]
    if missing or any(f in problems for f in missing):
        lines = [f"  {_CLI_NAME[f]}: {problems.get(f, 'not found')}" for f in missing]
        how = "headings" if layout.has_header else "content (no heading line)"
        raise MappingError(f"{path}: cannot map the columns from their {how}:\n"
                           + "\n".join(lines) + "\n" + _columns_help(layout, sample))
    layout.fields = {f: fields[f] for f in _FIELD_ORDER if f in fields}
    _infer_units(layout, sample, units)
    return layout


__all__ = ["match_headings", "infer_columns", "infer_frequency_unit", "infer_power_unit",
           "infer_date_order", "DATE_ORDERS",
           "SAMPLE_ROWS", "TIME_UNITS", "UNIT_CHOICES", "DELIMITERS", "MAX_WATTS"]
