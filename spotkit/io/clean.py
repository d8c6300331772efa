"""One chunk of cells -> the accepted rows' canonical columns and the rejects.

Model
-----
The cells arrive dictionary-encoded (:mod:`spotkit.io.csvread`): each distinct text is
parsed and checked once and the rows are reached by array gathers. Calls and locators are
normalised once per distinct text for the whole ingest (:class:`Distinct`). Each row is
checked field by field in glossary order (time, calls and locators, frequency, SNR, power,
drift); a row with any unusable field is rejected with its first failing field, the cell's
text and a plain reason, a blank line as such. Times are snapped to the start of their
slot. The report key of each accepted row is returned dictionary-encoded for
:mod:`spotkit.io.dedupe`.

Valid values: SNR -60..+60 dB and power 0..60 dBm (inclusive, common practice); times from
1990 to before 2100 (UTC) and no later than a day after the moment of ingest
(:data:`FUTURE_SLACK`: clocks and time zones a day off are tolerated, later times are
rejected as "time in the future"); epoch times in seconds or milliseconds; frequencies
inside an amateur band of the chosen IARU region (:mod:`spotkit.bands`, edges inclusive);
locators of 2, 4, 6, 8 or 10 characters
(:mod:`spotkit.geo.locator`); calls of letters and digits with at most a few "/" parts.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.bands import BAND_ORDER, band_plan
from spotkit.errors import UsageError
from spotkit.geo.locator import normalize_locator
from spotkit.io.csvread import TextChunk, TextColumn
from spotkit.io.dedupe import hash_values
from spotkit.io.sniff import _CALL_RE, _CLI_NAME, _Layout, _to_number
from spotkit.units import epoch_to_seconds, frequency_to_hz, power_to_dbm

#: Valid ranges (inclusive): SNR [dB] and power [dBm] (common practice).
SNR_RANGE_DB = (-60.0, 60.0)
POWER_RANGE_DBM = (0.0, 60.0)
#: Accepted report times [UTC]; earlier or later times are rejected as out of range.
TIME_RANGE = (pd.Timestamp("1990-01-01", tz="UTC"), pd.Timestamp("2100-01-01", tz="UTC"))
#: Times later than the moment of ingest plus this are rejected as in the future.
FUTURE_SLACK = pd.Timedelta(days=1)


def _per_row(table: np.ndarray, codes: np.ndarray, empty) -> np.ndarray:
    """``table[codes]``, with ``empty`` where the code is -1 (an empty cell)."""
    return np.take(np.append(table, np.asarray([empty], dtype=table.dtype)), codes)


def _status_rows(status: np.ndarray, col: TextColumn, empty: int) -> np.ndarray | None:
    """Status of each row from the status of each distinct cell (``empty`` for empty
    cells); None when no row can fail (the usual clean chunk: no gather needed)."""
    if not status.any() and not (empty and col.has_empty):
        return None
    return _per_row(status.astype(np.int8), col.codes, empty)


class Distinct:
    """Normalised values of one kind of text field (calls, locators), kept across chunks
    and files, so that each distinct cell text is checked and normalised once.

    Codes are given in order of first appearance; ``dtype`` has the normalised texts as
    categories and ``hashes`` their 64-bit hashes (:func:`spotkit.io.dedupe.hash_values`).
    """

    def __init__(self, fn):
        self.fn = fn  # array of texts -> normalised texts or None (bad)
        self.by_text: dict = {}  # cell text -> code, -2 for a bad value
        self.by_norm: dict = {}  # normalised text -> code
        self.texts: list = []
        self.hashes = np.zeros(0, dtype=np.uint64)
        self._dtype = None

    @property
    def dtype(self) -> pd.CategoricalDtype:
        """Categorical dtype of the normalised texts seen so far."""
        if self._dtype is None or len(self._dtype.categories) != len(self.texts):
            self._dtype = pd.CategoricalDtype(pd.Index(self.texts, dtype="str"))
        return self._dtype

    def codes(self, values: np.ndarray) -> np.ndarray:
        """Code of each distinct cell text in ``values`` (-2: bad value)."""
        get = self.by_text.get
        out = np.fromiter((get(v, -3) for v in values), dtype=np.int32, count=len(values))
        new = np.flatnonzero(out == -3)
        if new.size:
            texts = values[new]
            first = len(self.texts)
            for k, (t, v) in zip(new, zip(texts, self.fn(texts), strict=True), strict=True):
                if v is None:
                    c = -2
                else:
                    c = self.by_norm.get(v)
                    if c is None:
                        c = self.by_norm[v] = len(self.texts)
                        self.texts.append(v)
                self.by_text[t] = c
                out[k] = c
            self.hashes = np.concatenate([self.hashes, hash_values(
                np.asarray(self.texts[first:], dtype=object))])
        return out


def new_distinct() -> dict:
    """One :class:`Distinct` per call and locator field (each side numbered apart: the
    pair geometry is kept in a table of transmitter by receiver locators)."""
    return {C.TX_CALL: Distinct(_norm_calls), C.TX_LOCATOR: Distinct(normalize_locator),
            C.RX_CALL: Distinct(_norm_calls), C.RX_LOCATOR: Distinct(normalize_locator)}


def _norm_calls(cats):
    up = np.char.upper(np.char.strip(cats.astype(str)))
    ok = np.array([bool(_CALL_RE.match(x)) for x in up], dtype=bool)
    return np.where(ok, up, None)


def _time_codes(cols: list[TextColumn]) -> tuple[np.ndarray, np.ndarray]:
    """(code per row, -1 when a cell is empty; distinct time texts): one column as it is,
    a date and a time column joined by a blank."""
    if len(cols) == 1:
        return cols[0].codes, cols[0].values
    c0, c1 = (np.asarray(c.codes, dtype=np.int64) for c in cols)
    empty = (c0 < 0) | (c1 < 0)
    codes, uniq = pd.factorize(np.where(empty, -1, c0 * max(cols[1].values.size, 1) + c1))
    keys = np.asarray(uniq, dtype=np.int64)
    k0, k1 = np.divmod(np.maximum(keys, 0), max(cols[1].values.size, 1))
    first, second = cols[0].values, cols[1].values
    texts = np.array([f"{first[a]} {second[b]}" for a, b in zip(k0, k1, strict=True)],
                     dtype=object)
    codes = np.asarray(codes, dtype=np.int64)
    if (keys < 0).any():  # the empty combination: code -1
        blank = int(np.flatnonzero(keys < 0)[0])
        codes = np.where(codes == blank, -1, codes - (codes > blank))
        texts = np.delete(texts, blank)
    return codes, texts


#: Clock formats understood after a date (blank or ``T`` between); the compact HHMMSS and
#: HHMM of decode logs are given their colons first (exactly 6 or 4 digits).
CLOCK_FORMATS = ("%H:%M:%S", "%H:%M", "%H:%M:%S.%f")
_DATE_FORMATS = {"dmy": ("%d.%m.%Y", "%d/%m/%Y", "%d-%m-%Y"),
                 "mdy": ("%m/%d/%Y", "%m-%d-%Y", "%m.%d.%Y"),
                 "ymd": ("%Y-%m-%d", "%Y/%m/%d", "%Y.%m.%d")}


def time_formats(date_order: str | None) -> list[str]:
    """The explicit date-and-clock formats tried (after ISO 8601) for a date order.

    Examples
    --------
    >>> time_formats("dmy")[:2]
    ['%d.%m.%Y %H:%M:%S', '%d.%m.%Y %H:%M']
    >>> len(time_formats(None)), len(time_formats("mdy"))
    (6, 9)
    """
    dates = _DATE_FORMATS[date_order] if date_order else _DATE_FORMATS["ymd"][:1]
    return [f"{d}{sep}{c}" for d in dates for c in CLOCK_FORMATS
            for sep in ((" ", "T") if d == "%Y-%m-%d" else (" ",))]


def _in_range_ns(t: pd.Series) -> tuple[pd.Series, pd.Series]:
    """(``t`` in ns with the times outside :data:`TIME_RANGE` as NaT, which those were);
    the range is checked before the cast, which years such as 0001 would overflow."""
    bad = t.notna() & ((t < TIME_RANGE[0]) | (t >= TIME_RANGE[1]))
    return t.where(~bad).dt.as_unit("ns"), bad


def _parse_clock_texts(s: pd.Series, date_order: str | None) -> tuple[pd.Series, pd.Series]:
    """Text times -> (UTC timestamps in ns, NaT where unparseable or out of range; which
    were out of range): ISO 8601 always, then, on the texts still unparsed only, each
    explicit format of :func:`time_formats` (vectorised: one :func:`pandas.to_datetime`
    call per format, on the distinct texts; compact HHMMSS / HHMM clocks are first given
    their colons)."""
    parsed, bad = _in_range_ns(pd.to_datetime(s, format="ISO8601", utc=True, errors="coerce"))
    todo = parsed.isna() & ~bad & s.notna()
    if not todo.any():
        return parsed, bad
    rest = s[todo]
    compact = rest.str.match(r"^\S+[ T]\d{4}(\d{2})?$")
    if compact.any():  # HHMMSS / HHMM after the date: written with colons
        rest = rest.where(~compact, rest.str.replace(
            r"(\d{2})(\d{2})(\d{2})$", r"\1:\2:\3", regex=True).str.replace(
            r"([ T])(\d{2})(\d{2})$", r"\1\2:\3", regex=True))
    for fmt in time_formats(date_order):
        got = pd.to_datetime(rest, format=fmt, utc=True, errors="coerce").dropna()
        if len(got):
            ok, out = _in_range_ns(got)
            parsed.loc[ok.index[ok.notna()]] = ok.dropna()
            bad.loc[out.index[out]] = True
            rest = rest.drop(got.index)
            if rest.empty:
                break
    return parsed, bad


def _parse_times(texts: np.ndarray, unit: str, now: pd.Timestamp | None = None,
                 date_order: str | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Distinct time texts -> (int64 ns since 1970 UTC, status: 0 ok, 2 unparseable,
    3 out of range, 4 later than ``now`` plus :data:`FUTURE_SLACK`). ``date_order``:
    None for ISO 8601 dates, else one of :data:`spotkit.io.sniff.DATE_ORDERS`."""
    s = pd.Series(texts, dtype="str").str.strip()
    lo, hi = (t.value // 10**9 for t in TIME_RANGE)
    if unit.startswith("epoch"):
        count = _to_number(s, ".")
        secs = pd.Series(epoch_to_seconds(count, unit), index=count.index)
        unparsed = secs.isna().to_numpy()
        bad_range = ((secs < lo) | (secs >= hi)).to_numpy()
        ok = count.where(~bad_range)
        parsed = pd.to_datetime(ok, unit="ms" if unit == "epoch-ms" else "s", utc=True)
    else:
        parsed, bad = _parse_clock_texts(s, date_order)
        bad_range = bad.to_numpy()
        unparsed = parsed.isna().to_numpy() & ~bad_range
    ns = parsed.dt.as_unit("ns").dt.tz_localize(None).to_numpy().view("i8").copy()
    status = np.where(unparsed, 2, np.where(bad_range, 3, 0)).astype(np.int8)
    if now is not None:
        status[(status == 0) & (ns > (now + FUTURE_SLACK).value)] = 4
    ns[status != 0] = 0
    return ns, status


def _parse_numbers(col: TextColumn, decimal: str, lo, hi, convert=None):
    """Distinct cells of a numeric column -> (values, status: 0 ok, 2 not a number,
    3 outside lo..hi, 1 blanks only: empty, like an empty cell)."""
    texts = pd.Series(col.values, dtype="str")
    v = _to_number(texts, decimal).to_numpy(dtype=float)
    if convert is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            v = np.asarray(convert(v), dtype=float)
    status = np.where(np.isnan(v), 2, 0).astype(np.int8)
    if lo is not None:
        status[np.isinf(v) | (np.isfinite(v) & ((v < lo) | (v > hi)))] = 3
    # a cell of blanks (a quoted tab, non-breaking spaces) is empty, not "not a number"
    status[(status == 2) & (texts.str.strip() == "").to_numpy()] = 1
    return v, status


def _number_rows(col, decimal: str, lo, hi, convert=None):
    """A numeric column -> (value per row, status per row: 0 ok, 1 empty, 2 not a number,
    3 outside lo..hi; (codes, hash of each distinct value) or (None, value per row) for
    the report key).

    ``col`` is a :class:`TextColumn` (each distinct cell parsed once) or a float64 array
    parsed by the reader (NaN: empty cell; the reader leaves no other NaN or infinity). The
    status is None when no row can fail.
    """
    if isinstance(col, TextColumn):
        v_d, st_d = _parse_numbers(col, decimal, lo, hi, convert)
        return (_per_row(v_d, col.codes, np.nan), _status_rows(st_d, col, 1),
                (col.codes, hash_values(v_d)))
    v = col
    if convert is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            v = np.asarray(convert(col), dtype=float)
    status = np.zeros(v.size, dtype=np.int8)
    status[np.isnan(v)] = 2
    if lo is not None:
        status[np.isinf(v) | (v < lo) | (v > hi)] = 3
    status[np.isnan(col)] = 1
    return v, status, (None, v)


_NUL_REASON = {5: "NUL byte in the cell"}


def _nul_status(col) -> np.ndarray | None:
    """Status per row: 5 where the cell holds a NUL byte, else 0 (None: no cell does)."""
    if not isinstance(col, TextColumn) or not col.values.size:
        return None
    import pyarrow as pa
    import pyarrow.compute as pc

    has = pc.match_substring(pa.array(col.values, pa.string()), "\x00")
    has = np.asarray(has.to_numpy(zero_copy_only=False), dtype=bool)
    if not has.any():
        return None
    return _status_rows(np.where(has, 5, 0), col, 0)


def _cell_text(column, idx: np.ndarray, decimal: str, numeric: bool) -> np.ndarray:
    """Text of the cells ``idx`` for the rejects table; numbers in one spelling whichever
    way the reader took them (as text or as numbers), so it does not depend on chunking."""
    if not isinstance(column, TextColumn):
        return np.array(["" if np.isnan(x) else _fmt_number(x) for x in column[idx]],
                        dtype=object)
    text = column.cells(idx)
    if not numeric:
        return text
    nums = _to_number(pd.Series(text, dtype="str"), decimal).to_numpy(dtype=float)
    return np.array([_fmt_number(x) if np.isfinite(x) else t
                     for t, x in zip(text, nums, strict=True)], dtype=object)


def _fmt_number(x: float) -> str:
    return np.format_float_positional(x, trim="-")


_TIME_REASONS = {1: "empty time", 2: "unparseable time",
                 3: "time out of range (before 1990 or from 2100)",
                 4: "time in the future"}


def _number_reasons(label: str, lo, hi, unit_txt: str) -> dict:
    out = {1: f"empty {label}", 2: f"{label} not a number"}
    if lo is not None:
        out[3] = f"{label} outside {lo:+g}..{hi:+g} {unit_txt}".replace("+0..", "0..")
    return out


def clean_chunk(raw: TextChunk, layout: _Layout, rows: np.ndarray, region: str,
                 slot_minutes: int, distinct: dict | None = None
                 ) -> tuple[dict, pd.DataFrame, list]:
    """Validate and convert one chunk. ``distinct``: the calls and locators seen so far
    (:func:`new_distinct`, updated). Returns (spots: the accepted rows'
    columns, times as int64 ns; rejects; key parts of the accepted rows for
    :mod:`spotkit.io.dedupe`)."""
    if distinct is None:
        distinct = new_distinct()
    n = raw.n
    col = {f: [raw.columns[i] for i in pos] for f, pos in layout.fields.items()}
    for f, value in layout.constants.items():  # one value for all rows (--set)
        col[f] = [TextColumn(np.zeros(n, dtype=np.int32), np.array([value], dtype=object),
                             has_empty=False)]
    checks = []  # (field, status per row (0 ok), reasons by status), in order of checking
    keys = {}  # report-key field -> (codes per row or None, values or their hashes)

    t_codes, t_texts = _time_codes(col[C.TIME])
    t_ns, t_status = _parse_times(t_texts, layout.units["time"], layout.ingest_utc,
                                  layout.date_order)
    checks.append((C.TIME, _status_rows(t_status, col[C.TIME][0] if len(col[C.TIME]) == 1
                                        else TextColumn(t_codes, t_texts), 1), _TIME_REASONS))
    slot_ns = np.int64(slot_minutes) * 60 * 10**9
    slot_d = t_ns - np.mod(t_ns, slot_ns)
    keys[C.SLOT] = (t_codes, hash_values(slot_d))

    for f, what in ((C.TX_CALL, "call"), (C.TX_LOCATOR, "locator"), (C.RX_CALL, "call"),
                    (C.RX_LOCATOR, "locator")):
        c = col[f][0]
        mapping = distinct[f].codes(c.values)
        checks.append((f, _status_rows(np.where(mapping == -2, 2, 0), c, 1),
                       {1: f"empty {what}", 2: f"bad {what}"}))
        keys[f] = (_per_row(mapping, c.codes, -1), distinct[f].hashes)

    fcol = col[C.FREQ][0]
    if not isinstance(fcol, TextColumn):  # (the reader parses SNR, power and drift only)
        raise TypeError("the frequency column must be read as text")
    f_d, f_st = _parse_numbers(fcol, layout.decimal, None, None,
                               lambda v: frequency_to_hz(v, layout.units["frequency"]))
    band_d = _band_codes(f_d, region)
    f_st[(f_st == 0) & (band_d < 0)] = 4
    checks.append((C.FREQ, _status_rows(f_st, fcol, 1),
                   _number_reasons("frequency", None, None, "")
                   | {4: "frequency not in an amateur band"}))
    keys[C.FREQ] = (fcol.codes, hash_values(f_d))
    values = {}
    for f, label, rng, unit_txt, convert in (
            (C.SNR, "SNR", SNR_RANGE_DB, "dB", None),
            (C.POWER, "power", POWER_RANGE_DBM, "dBm",
             lambda v: power_to_dbm(v, layout.units["power"]))):
        v, st, keys[f] = _number_rows(col[f][0], layout.decimal, *rng, convert)
        checks.append((f, st, _number_reasons(label, *rng, unit_txt)))
        values[f] = v
    if C.DRIFT in col:
        drift, d_st, _ = _number_rows(col[C.DRIFT][0], layout.decimal, None, None)
        if d_st is not None:
            d_st[d_st == 1] = 0  # drift is optional: an empty cell is fine
            d_st[(d_st == 0) & np.isinf(drift)] = 2  # "inf" and overflow: not numbers either
            if d_st.any():
                drift = np.where(d_st == 0, drift, np.nan)
            checks.append((C.DRIFT, d_st, {2: "drift not a number"}))
    else:
        drift = np.full(n, np.nan)

    # a NUL byte costs its row, whatever field it is in (numpy's texts would drop it at
    # the end of a cell): checked first, so it is the reason given
    nul = [(f, st, _NUL_REASON) for f, cs in col.items() for st in map(_nul_status, cs)]
    checks = [c for c in nul + checks if c[1] is not None]
    bad = np.zeros(n, dtype=bool)
    for _, st, _ in checks:
        bad |= st != 0
    keep = ~bad if bad.any() else slice(None)

    def kept(codes):
        return codes[keep]

    t_kept = kept(t_codes)
    time_ns = np.take(t_ns, t_kept)
    spots = {C.TIME: time_ns, C.SLOT: np.take(slot_d, t_kept)}
    for f in (C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR):
        spots[f] = pd.Categorical.from_codes(kept(keys[f][0]), validate=False,  # valid codes
                                             dtype=distinct[f].dtype)
    spots[C.FREQ] = np.take(f_d, kept(fcol.codes))
    spots[C.BAND] = pd.Categorical.from_codes(
        np.take(band_d, kept(fcol.codes)), categories=pd.Index(BAND_ORDER, dtype="str"),
        validate=False)
    spots[C.SNR] = kept(values[C.SNR])
    spots[C.POWER] = kept(values[C.POWER])
    spots[C.DRIFT] = kept(drift)
    spots[C.SOURCE_ROW] = rows[keep]
    key_parts = [(None, hash_values(kept(v))) if codes is None else (kept(codes), v)
                 for codes, v in (keys[f] for f in C.REPORT_KEY)]
    return spots, _rejects(raw, layout, rows, bad, checks, col), key_parts


_NUMERIC = (C.FREQ, C.SNR, C.POWER, C.DRIFT)


def _rejects(raw: TextChunk, layout: _Layout, rows, bad, checks, col) -> pd.DataFrame:
    """Rejects table of the rows ``bad``: the first failing field (blank rows first), its
    cell text and the reason."""
    idx = np.flatnonzero(bad)
    field = np.full(idx.size, None, dtype=object)
    reason = np.full(idx.size, None, dtype=object)
    value = np.full(idx.size, "", dtype=object)
    if idx.size:
        blank = np.ones(idx.size, dtype=bool)
        for c in raw.columns:
            blank &= (c.codes[idx] < 0) if isinstance(c, TextColumn) else np.isnan(c[idx])
        field[blank], reason[blank] = "row", "blank line"
        todo = ~blank
        for f, st, reasons in checks:
            s = st[idx]
            hit = todo & (s != 0)
            if not hit.any():
                continue
            field[hit] = f
            reason[hit] = [reasons[int(k)] for k in s[hit]]
            cells = [_cell_text(c, idx[hit], layout.decimal, f in _NUMERIC) for c in col[f]]
            value[hit] = cells[0] if len(cells) == 1 else np.char.add(
                np.char.add(cells[0].astype(str), " "), cells[1].astype(str)).astype(object)
            todo &= ~hit
    return pd.DataFrame({
        C.SOURCE_FILE: layout.name,
        C.SOURCE_ROW: rows[idx].astype("int64"),
        C.REJECT_FIELD: [_CLI_NAME.get(f, f) for f in field],
        C.REJECT_VALUE: value,
        C.REJECT_REASON: reason,
    }, index=pd.RangeIndex(idx.size))


def check_constants(layout: _Layout) -> None:
    """Check the values given for whole fields (``--set FIELD=VALUE``) as a cell of that
    field would be checked (units from ``layout.units``).

    Raises
    ------
    UsageError
        Naming the option and why the value is not usable (a bad locator or call, a
        frequency outside the amateur bands, an SNR or power out of range).
    """
    for f, value in layout.constants.items():
        one = TextColumn(np.zeros(1, dtype=np.int32), np.array([value], dtype=object),
                         has_empty=False)
        if f in (C.TX_CALL, C.RX_CALL):
            ok, what = _norm_calls(np.array([value], dtype=object))[0] is not None, \
                "not a callsign (letters and digits, e.g. Q1ABC)"
        elif f in (C.TX_LOCATOR, C.RX_LOCATOR):
            ok, what = normalize_locator(np.array([value], dtype=object))[0] is not None, \
                "not a Maidenhead locator (2 to 10 characters, e.g. JO62qm)"
        elif f == C.FREQ:
            v, st = _parse_numbers(one, layout.decimal, None, None, lambda x: frequency_to_hz(
                x, layout.units["frequency"]))
            ok = st[0] == 0 and _band_codes(v, "all")[0] >= 0
            what = f"not a frequency in an amateur band (unit {layout.units['frequency']})"
        elif f == C.SNR:
            ok = _parse_numbers(one, layout.decimal, *SNR_RANGE_DB)[1][0] == 0
            what = "not an SNR in -60..+60 dB"
        elif f == C.POWER:
            ok = _parse_numbers(one, layout.decimal, *POWER_RANGE_DBM, lambda x: power_to_dbm(
                x, layout.units["power"]))[1][0] == 0
            what = f"not a power in 0..60 dBm (unit {layout.units['power']})"
        else:
            ok = _parse_numbers(one, layout.decimal, None, None)[1][0] == 0
            what = "not a number"
        if not ok:
            raise UsageError(f"--set {_CLI_NAME[f]}={value}: {what}")


# --- drivers -------------------------------------------------------------------------------------
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
