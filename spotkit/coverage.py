"""Coverage tables as mergeable partials: spots, stations heard and SNR per group.

Per group (band, locator square or field of the far station, UTC hour, either call, UTC
day) the number of spots, the number of distinct stations heard, and the mean, median and
maximum of the SNR normalised to 1 W. The computation is split into a partial of one piece
of the table (:func:`coverage_partials`: a histogram of (group, SNR-per-W value rounded to
1e-6 dB) counts plus the distinct (group, station) pairs), a merge of partials
(:func:`combine_coverage`) and the finish (:func:`finish_coverage`), so that
:func:`coverage_table` (pandas, the whole table at once) and
:func:`spotkit.distributed.coverage_dask` (one partial per partition) give the same answer.
All the figures, the median and the distinct count included, are exact after merging. The
histogram stays small because reported SNR is whole dB and power sits on a 0/3/7 dBm ladder
(common practice).
"""
from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_choice
from spotkit.errors import InputError, UsageError
from spotkit.io import store
from spotkit.units import snr_per_watt

# --- output columns of the coverage table -------------------------------------------------
#: Distinct stations heard (receivers with ``side="rx"``, transmitters with ``side="tx"``).
STATIONS = "stations"
#: Mean / median / maximum SNR normalised to 1 W [dB] over the group's spots.
SNR_MEAN = "snr_per_w_mean_db"
SNR_MEDIAN = "snr_per_w_median_db"
SNR_MAX = "snr_per_w_max_db"
#: The columns a coverage table has after its group keys, in order.
COVERAGE_COLUMNS = [C.COUNT, STATIONS, SNR_MEAN, SNR_MEDIAN, SNR_MAX]

CoverageKey = Literal["band", "square", "field", "hour", "tx_call", "rx_call", "day"]
COVERAGE_KEYS = ("band", "square", "field", "hour", "tx_call", "rx_call", "day")
Side = Literal["rx", "tx"]
SIDES = ("rx", "tx")
#: Digits SNR-per-W values are rounded to before they are counted [dB decimals].
VALUE_DECIMALS = 6


def _key_column(key: str, side: str) -> str:
    return {"band": C.BAND, "square": C.SQUARE, "field": C.FIELD, "hour": C.HOUR,
            "tx_call": C.TX_CALL, "rx_call": C.RX_CALL, "day": store.DAY}[key]


def coverage_columns_needed(by: Sequence[str], side: Side = "rx") -> list[str]:
    """Spot-table columns :func:`coverage_partials` reads for ``by`` and ``side``.

    Examples
    --------
    >>> coverage_columns_needed(["band", "square"])
    ['rx_call', 'rx_locator', 'band', 'snr_db', 'power_dbm']
    >>> coverage_columns_needed(["hour"], side="tx")
    ['slot_utc', 'tx_call', 'snr_db', 'power_dbm']
    """
    need = {C.SNR, C.POWER, C.RX_CALL if side == "rx" else C.TX_CALL}
    for key in by:
        check_choice(key, COVERAGE_KEYS, "coverage key")
        if key in ("square", "field"):
            need.add(C.RX_LOCATOR if side == "rx" else C.TX_LOCATOR)
        elif key in ("hour", "day"):
            need.add(C.SLOT)
        else:
            need.add(_key_column(key, side))
    return [c for c in C.CANONICAL if c in need]


# A key column is handled as (codes, uniques): int64 codes into ``uniques``, -1 = missing.
def _codes(values) -> tuple[np.ndarray, np.ndarray]:
    if isinstance(getattr(values, "dtype", None), pd.CategoricalDtype):
        cat = values.array if isinstance(values, pd.Series) else values
        return (np.asarray(cat.codes).astype(np.int64),
                np.asarray(cat.categories, dtype=object))
    codes, uniques = pd.factorize(np.asarray(values), use_na_sentinel=True)
    return codes.astype(np.int64), np.asarray(uniques)


def _locator_prefix(s: pd.Series, n: int) -> tuple[np.ndarray, np.ndarray]:
    """First ``n`` characters, upper case, computed once per distinct locator."""
    codes, uniques = _codes(s if isinstance(s.dtype, pd.CategoricalDtype)
                            else s.astype("category"))
    prefix = pd.Series(uniques, dtype=object).astype(str).str[:n].str.upper().to_numpy()
    pcodes, puniq = pd.factorize(prefix)
    pcodes = np.append(pcodes.astype(np.int64), -1)
    return pcodes[np.where(codes < 0, len(uniques), codes)], np.asarray(puniq, dtype=object)


def _key_codes(df: pd.DataFrame, by: Sequence[str], side: str) -> dict:
    loc = C.RX_LOCATOR if side == "rx" else C.TX_LOCATOR
    out = {}
    for key in by:
        name = _key_column(key, side)
        if key == "square":
            out[name] = _locator_prefix(df[loc], 4)
        elif key == "field":
            out[name] = _locator_prefix(df[loc], 2)
        elif key == "hour":
            out[name] = (df[C.SLOT].dt.hour.to_numpy().astype(np.int64), np.arange(24))
        elif key == "day":
            ns = df[C.SLOT].to_numpy(dtype="datetime64[ns]").astype("datetime64[D]")
            c, u = pd.factorize(ns)
            out[name] = (c.astype(np.int64), np.asarray(pd.DatetimeIndex(u).strftime("%Y-%m-%d"),
                                                        dtype=object))
        else:
            out[name] = _codes(df[name])
    return out


def _decode(codes: np.ndarray, uniques: np.ndarray):
    """Codes back to values: a Categorical for text, an array for numbers (NaN if missing)."""
    if uniques.dtype.kind not in "fiub":
        return pd.Categorical.from_codes(codes, categories=pd.Index(uniques, dtype=object))
    missing = codes < 0
    if not missing.any():
        return uniques[codes]
    vals = uniques.astype(float)
    return np.append(vals, np.nan)[np.where(missing, len(vals), codes)]


def _combo_ids(cols: dict) -> tuple[np.ndarray, list[np.ndarray]]:
    """Row -> combination id, and per column the codes of each combination."""
    names = list(cols)
    n = len(next(iter(cols.values()))[0])
    dims = [len(u) + 1 for _, u in cols.values()]
    size = float(np.prod(np.array(dims, dtype=float)))
    if size < 2.0**62:
        key = np.ravel_multi_index([c + 1 for c, _ in cols.values()], dims)
        if size <= max(4 * n, 2**22):  # dense: no hashing
            seen = np.bincount(key, minlength=int(size)) > 0
            ukey = np.flatnonzero(seen)
            lookup = np.cumsum(seen) - 1
            inv = lookup[key]
        else:
            inv, ukey = pd.factorize(key)
        return inv.astype(np.int64), [p - 1 for p in np.unravel_index(ukey, dims)]
    # too many combinations for one integer: let pandas group
    frame = pd.DataFrame({nm: c for nm, (c, _) in cols.items()})
    inv = frame.groupby(names, sort=False).ngroup().to_numpy()
    first = pd.Series(np.arange(n)).groupby(inv).first().to_numpy()
    return inv.astype(np.int64), [frame[nm].to_numpy()[first] for nm in names]


def _count_combos(cols: dict, weights: np.ndarray | None = None) -> pd.DataFrame:
    """Distinct combinations of coded columns with their (weighted) counts.

    ``cols``: name -> (codes, uniques). Returns the decoded columns and ``C.COUNT``.
    """
    names = list(cols)
    n = len(next(iter(cols.values()))[0]) if cols else 0
    if not names:
        total = n if weights is None else int(np.sum(weights))
        return pd.DataFrame({C.COUNT: np.array([total], dtype=np.int64)})
    inv, first_codes = _combo_ids(cols)
    w = np.ones(n, dtype=np.int64) if weights is None else np.asarray(weights, dtype=np.int64)
    counts = np.bincount(inv, weights=w, minlength=len(first_codes[0])).astype(np.int64)
    out = pd.DataFrame({nm: _decode(fc, u) for nm, fc, (_, u) in
                        zip(names, first_codes, cols.values(), strict=True)})
    out[C.COUNT] = counts
    return out


@dataclass
class CoveragePartials:
    """Mergeable partial aggregate of a coverage table.

    Attributes
    ----------
    keys : list of str
        Group-key column names.
    station : str
        Column holding the station whose distinct count is wanted.
    values : pandas.DataFrame
        Columns ``keys + [C.SNR_PER_W, C.COUNT]``: how many spots of each group had each
        SNR-per-W value [dB] (rounded to :data:`VALUE_DECIMALS`; NaN for spots without SNR
        or power).
    stations : pandas.DataFrame
        Columns ``keys + [station]``: the distinct (group, station) pairs.
    """

    keys: list[str]
    station: str
    values: pd.DataFrame
    stations: pd.DataFrame


def coverage_partials(df: pd.DataFrame, by: Sequence[CoverageKey] = ("band", "square"),
                      *, side: Side = "rx") -> CoveragePartials:
    """Partial coverage aggregate of one spot table (or one partition of it).

    Parameters
    ----------
    df : pandas.DataFrame
        Spot table with the columns of :func:`coverage_columns_needed`.
    by : sequence of {"band", "square", "field", "hour", "tx_call", "rx_call", "day"}
        Group keys. ``square``/``field``: the 4-/2-character locator of the far station
        (the receiver for ``side="rx"``); ``hour``: UTC hour of the slot start (0-23);
        ``day``: UTC date of the slot start.
    side : {"rx", "tx"}
        Whose coverage: ``"rx"`` counts and locates receivers (a transmitter's coverage),
        ``"tx"`` transmitters (what a receiver heard).

    Returns
    -------
    CoveragePartials
        Key columns hold plain values (str, int), so partials of any partitions merge.

    Examples
    --------
    Five invented spots of Q1ABC; SNR per W is ``snr - (power - 30)``:

    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02",
    ...                                 "2024-03-01 10:02", "2024-03-01 22:04",
    ...                                 "2024-03-01 22:06"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 5, "rx_call": ["Q2XY", "Q2XY", "Q3DEF", "Q4GH", "Q5JK"],
    ...     "rx_locator": ["JN58td", "JN58td", "JN58sc", "FN31pr", "IO91lk"],
    ...     "band": ["20m", "20m", "20m", "40m", "40m"],
    ...     "snr_db": [-12.0, -15.0, -20.0, -25.0, -18.0],
    ...     "power_dbm": [37.0, 37.0, 37.0, 37.0, 30.0]})
    >>> part = coverage_partials(spots, ["band"])
    >>> part.keys, part.station
    (['band'], 'rx_call')
    >>> print(part.values.to_string(index=False))
    band  snr_per_w_db  count
     20m         -19.0      1
     20m         -22.0      1
     20m         -27.0      1
     40m         -32.0      1
     40m         -18.0      1
    >>> part.stations["rx_call"].tolist()
    ['Q2XY', 'Q3DEF', 'Q4GH', 'Q5JK']
    """
    check_choice(side, SIDES, "side")
    by = list(by)
    for key in by:
        check_choice(key, COVERAGE_KEYS, "coverage key")
    if len(set(by)) != len(by):
        raise UsageError(f"coverage keys repeat: {', '.join(by)}")
    missing = [c for c in coverage_columns_needed(by, side) if c not in df.columns]
    if missing:
        raise InputError(f"spot table has no column(s) {', '.join(missing)} for coverage")
    station = C.RX_CALL if side == "rx" else C.TX_CALL
    keys = _key_codes(df, by, side)
    names = list(keys)
    value = np.round(snr_per_watt(df[C.SNR].to_numpy(dtype=float),
                                  df[C.POWER].to_numpy(dtype=float)), VALUE_DECIMALS)
    values = _count_combos({**keys, C.SNR_PER_W: _codes(value)})
    st_keys = dict(keys) if station in keys else {**keys, station: _codes(df[station])}
    stations = _count_combos(st_keys).drop(columns=C.COUNT)
    stations = stations.loc[stations[station].notna()].reset_index(drop=True)
    return CoveragePartials(names, station, values, stations)


def _recode(frames: list[pd.DataFrame], names: list[str]) -> dict:
    """Codes of the rows of all ``frames`` stacked, per column, against shared uniques.

    Categorical columns are re-coded through the union of their (few) categories, so no
    text is hashed per row; numeric columns are factorised.
    """
    out = {}
    for nm in names:
        cols = [f[nm] for f in frames]
        if all(isinstance(c.dtype, pd.CategoricalDtype) for c in cols):
            cats = [np.asarray(c.cat.categories, dtype=object) for c in cols]
            union = pd.Index(np.concatenate(cats) if cats else np.zeros(0, object)).unique()
            codes = []
            for c, k in zip(cols, cats, strict=True):
                m = np.append(union.get_indexer(k).astype(np.int64), -1)
                cc = c.cat.codes.to_numpy().astype(np.int64)
                codes.append(m[np.where(cc < 0, len(k), cc)])
            out[nm] = (np.concatenate(codes) if codes else np.zeros(0, np.int64),
                       np.asarray(union, dtype=object))
        else:
            vals = np.concatenate([np.asarray(c.astype(object) if isinstance(
                c.dtype, pd.CategoricalDtype) else c.to_numpy()) for c in cols])
            out[nm] = _codes(vals)
    return out


def combine_coverage(partials: Iterable[CoveragePartials]) -> CoveragePartials:
    """Merge coverage partials (of disjoint parts of one table): sum counts, union stations.

    Parameters
    ----------
    partials : iterable of CoveragePartials
        Built with the same ``by`` and ``side``.

    Returns
    -------
    CoveragePartials

    Examples
    --------
    The spots of :func:`coverage_partials` in two pieces give the table of the whole (Q2XY
    is in both pieces but counted once):

    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02",
    ...                                 "2024-03-01 10:02", "2024-03-01 22:04",
    ...                                 "2024-03-01 22:06"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 5, "rx_call": ["Q2XY", "Q2XY", "Q3DEF", "Q4GH", "Q5JK"],
    ...     "rx_locator": ["JN58td", "JN58td", "JN58sc", "FN31pr", "IO91lk"],
    ...     "band": ["20m", "20m", "20m", "40m", "40m"],
    ...     "snr_db": [-12.0, -15.0, -20.0, -25.0, -18.0],
    ...     "power_dbm": [37.0, 37.0, 37.0, 37.0, 30.0]})
    >>> merged = combine_coverage([coverage_partials(spots.iloc[:1], ["band"]),
    ...                            coverage_partials(spots.iloc[1:], ["band"])])
    >>> finish_coverage(merged)[["count", "stations"]].to_numpy().tolist()
    [[2, 2], [3, 2]]
    >>> finish_coverage(merged).equals(coverage_table(spots, ["band"]))
    True
    """
    parts = list(partials)
    if not parts:
        raise UsageError("no coverage partials to combine")
    keys, station = parts[0].keys, parts[0].station
    if any(p.keys != keys or p.station != station for p in parts):
        raise UsageError("coverage partials were built with different keys or sides")
    vframes = [p.values for p in parts]
    values = _count_combos(_recode(vframes, keys + [C.SNR_PER_W]),
                           weights=np.concatenate([f[C.COUNT].to_numpy() for f in vframes]))
    st_cols = keys + ([station] if station not in keys else [])
    stations = _count_combos(_recode([p.stations for p in parts], st_cols)).drop(
        columns=C.COUNT)
    return CoveragePartials(keys, station, values, stations)


def finish_coverage(partials: CoveragePartials) -> pd.DataFrame:
    """Turn a (merged) coverage partial into the coverage table.

    Returns
    -------
    pandas.DataFrame
        Group keys, then ``C.COUNT`` (spots), :data:`STATIONS` (distinct stations),
        :data:`SNR_MEAN`, :data:`SNR_MEDIAN` (for an even count the mean of the two middle
        values, as :meth:`pandas.Series.median`) and :data:`SNR_MAX` [dB]; SNR statistics
        ignore spots without SNR or power and are NaN for a group with none. Sorted by the
        keys, bands in band-plan order; categorical key columns (band, square, field, calls).

    Examples
    --------
    Without keys, one row for everything:

    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02",
    ...                                 "2024-03-01 10:02", "2024-03-01 22:04",
    ...                                 "2024-03-01 22:06"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 5, "rx_call": ["Q2XY", "Q2XY", "Q3DEF", "Q4GH", "Q5JK"],
    ...     "rx_locator": ["JN58td", "JN58td", "JN58sc", "FN31pr", "IO91lk"],
    ...     "band": ["20m", "20m", "20m", "40m", "40m"],
    ...     "snr_db": [-12.0, -15.0, -20.0, -25.0, -18.0],
    ...     "power_dbm": [37.0, 37.0, 37.0, 37.0, 30.0]})
    >>> print(finish_coverage(coverage_partials(spots, [])).to_string(index=False))
     count  stations  snr_per_w_mean_db  snr_per_w_median_db  snr_per_w_max_db
         5         4              -23.6                -22.0             -18.0
    """
    keys, station = partials.keys, partials.station
    v = partials.values
    if keys:
        cols = _recode([v, partials.stations], keys)
        inv, first_codes = _combo_ids(cols)
        gid, st_gid = inv[:len(v)], inv[len(v):]
        uniq = pd.DataFrame({nm: _decode(fc, u) for nm, fc, (_, u) in
                             zip(keys, first_codes, cols.values(), strict=True)})
    else:
        gid, uniq = np.zeros(len(v), np.int64), pd.DataFrame(index=[0])
    n_groups = len(uniq)
    counts = v[C.COUNT].to_numpy(dtype=np.int64)
    x = v[C.SNR_PER_W].to_numpy(dtype=float)
    total = np.bincount(gid, weights=counts, minlength=n_groups).astype(np.int64)
    ok = ~np.isnan(x)
    wcount = np.bincount(gid[ok], weights=counts[ok], minlength=n_groups)
    wsum = np.bincount(gid[ok], weights=(x * counts)[ok], minlength=n_groups)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(wcount > 0, wsum / wcount, np.nan)
    vmax = np.full(n_groups, -np.inf)
    np.maximum.at(vmax, gid[ok], x[ok])
    vmax[wcount == 0] = np.nan
    median = _weighted_median(gid[ok], x[ok], counts[ok], n_groups)
    out = uniq.reset_index(drop=True).copy()
    out[C.COUNT] = total
    if keys:
        out[STATIONS] = np.bincount(st_gid[st_gid >= 0], minlength=n_groups).astype(np.int64)
    else:
        out[STATIONS] = np.int64(partials.stations[station].nunique(dropna=True))
    out[SNR_MEAN] = mean
    out[SNR_MEDIAN] = median
    out[SNR_MAX] = vmax
    if not keys:
        return out[COVERAGE_COLUMNS]
    for k in keys:
        if isinstance(out[k].dtype, pd.CategoricalDtype):
            out[k] = store.normalise_categories(out[k], band=(k == C.BAND))
    out = out.sort_values(keys, kind="stable", na_position="last", ignore_index=True)
    return out[keys + COVERAGE_COLUMNS]


def _weighted_median(gid, x, w, n_groups) -> np.ndarray:
    """Exact median per group of values ``x`` repeated ``w`` times (pandas convention)."""
    out = np.full(n_groups, np.nan)
    if len(x) == 0:
        return out
    order = np.lexsort((x, gid))
    g, xs, ws = gid[order], x[order], w[order].astype(np.int64)
    cum = np.cumsum(ws)
    n = np.bincount(g, weights=ws, minlength=n_groups).astype(np.int64)
    start = np.concatenate([[0], np.cumsum(n)[:-1]])
    has = n > 0
    k_lo = start + (n + 1) // 2  # 1-based ranks of the middle value(s)
    k_hi = start + n // 2 + 1
    i_lo = np.searchsorted(cum, k_lo[has], side="left")
    i_hi = np.searchsorted(cum, k_hi[has], side="left")
    odd = (n[has] % 2) == 1
    out[has] = np.where(odd, xs[i_lo], 0.5 * (xs[i_lo] + xs[np.minimum(i_hi, len(xs) - 1)]))
    return out


def coverage_table(df: pd.DataFrame, by: Sequence[CoverageKey] = ("band", "square"), *,
                   side: Side = "rx") -> pd.DataFrame:
    """Coverage per group from a spot table in memory (the pandas path).

    ``finish_coverage(coverage_partials(df, by, side=side))``; see
    :func:`coverage_partials` for the keys and :func:`finish_coverage` for the columns.

    Examples
    --------
    The spots of :func:`coverage_partials` by band and receiver square (40 m before 20 m:
    band-plan order), then by UTC hour:

    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02",
    ...                                 "2024-03-01 10:02", "2024-03-01 22:04",
    ...                                 "2024-03-01 22:06"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 5, "rx_call": ["Q2XY", "Q2XY", "Q3DEF", "Q4GH", "Q5JK"],
    ...     "rx_locator": ["JN58td", "JN58td", "JN58sc", "FN31pr", "IO91lk"],
    ...     "band": ["20m", "20m", "20m", "40m", "40m"],
    ...     "snr_db": [-12.0, -15.0, -20.0, -25.0, -18.0],
    ...     "power_dbm": [37.0, 37.0, 37.0, 37.0, 30.0]})
    >>> print(coverage_table(spots).round(2).to_string(index=False))
    band square_locator  count  stations  snr_per_w_mean_db  snr_per_w_median_db  snr_per_w_max_db
     40m           FN31      1         1             -32.00                -32.0             -32.0
     40m           IO91      1         1             -18.00                -18.0             -18.0
     20m           JN58      3         2             -22.67                -22.0             -19.0
    >>> table = coverage_table(spots, ["hour"])
    >>> table[["hour", "count", "stations"]].to_numpy().tolist()
    [[10, 3, 2], [22, 2, 2]]
    """
    return finish_coverage(coverage_partials(df, by, side=side))


__all__ = ["COVERAGE_COLUMNS", "COVERAGE_KEYS", "SIDES", "STATIONS", "SNR_MEAN", "SNR_MEDIAN",
           "SNR_MAX", "VALUE_DECIMALS", "CoveragePartials", "coverage_columns_needed",
           "coverage_partials", "combine_coverage", "finish_coverage", "coverage_table"]
