"""Groups of A/B pairs and the compressed, mergeable pair table.

:func:`add_group_keys` adds the grouping columns asked for with ``by`` (band, distance
band, bearing sector, hour of day in UTC or at the path midpoint, elevation angle band
from the hop geometry, day/night/grey line at the path ends, far station's locator field
or square, or the far station itself) to a pairs table of
:func:`spotkit.compare.pairing.pair_spots`.
:func:`summarise_pairs` compresses the pairs to (group keys, cluster, kind, value, count)
rows: the statistics need only those, and tables of disjoint data merge by summing the
counts (:func:`merge_summaries`), which is how the Dask path combines partitions.
"""
from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import (
    check_choice,
    check_choices,
    check_divides,
    check_increasing,
    check_positive,
)
from spotkit.errors import NoPairsError, UsageError

#: Group keys accepted by :func:`add_group_keys` / :func:`summarise_pairs`.
GROUP_KEYS = ("band", "distance", "bearing", "hour", "elevation", "light", "field", "square",
              "receiver")
HourBasis = Literal["utc", "local"]

DEFAULT_DISTANCE_EDGES = (0.0, 1000.0, 3000.0, 6000.0, 20100.0)
DEFAULT_ELEVATION_EDGES = (0.0, 5.0, 10.0, 20.0, 40.0, 90.0)
#: before/after design: length of the day blocks resampled for day-to-day changes [h]
DEFAULT_DAY_HOURS = 24.0

_SLOT_NS = C.SLOT_MINUTES * 60 * 1_000_000_000
_DAY_NS = 86400 * 1_000_000_000


def _ns(series: pd.Series) -> np.ndarray:
    """UTC times as int64 nanoseconds since the epoch."""
    s = pd.to_datetime(series, utc=True)
    return s.dt.tz_localize(None).to_numpy().astype("datetime64[ns]").view(np.int64)


def _to_utc(ns: np.ndarray) -> pd.Series:
    return pd.Series(pd.to_datetime(np.asarray(ns, dtype=np.int64), unit="ns", utc=True))


def _edges(edges, what) -> np.ndarray:
    return np.asarray(check_increasing(edges, f"{what} edges"), dtype=float)


def _bin(x: np.ndarray, edges: np.ndarray):
    i = np.searchsorted(edges, x, side="right") - 1
    ok = (i >= 0) & (i < edges.size - 1) & np.isfinite(x)
    i = np.clip(i, 0, edges.size - 2)
    return np.where(ok, edges[i], np.nan), np.where(ok, edges[i + 1], np.nan)


def _positive_hours(hours) -> float:
    try:
        h = float(hours)
    except (TypeError, ValueError):
        h = float("nan")
    if not (np.isfinite(h) and h * 3600 >= C.SLOT_MINUTES * 60):
        raise UsageError(f"day_hours must be at least one slot ({C.SLOT_MINUTES} min), got "
                         f"{hours!r}")
    return h


def parse_by(by) -> tuple[str, ...]:
    """Normalise a ``by`` argument (``"band,distance"`` or a sequence) to a tuple of keys.

    Examples
    --------
    >>> parse_by("band, distance"), parse_by(["Hour"]), parse_by(None)
    (('band', 'distance'), ('hour',), ())
    >>> parse_by("band,colour")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: unknown group key(s) 'colour'; valid: band, distance, ...
    """
    if by is None:
        return ()
    if isinstance(by, str):
        by = [b for b in by.replace(" ", "").split(",") if b]
    keys = tuple(str(b).strip().lower() for b in by)
    check_choices(keys, GROUP_KEYS, "group key")
    if len(set(keys)) != len(keys):
        raise UsageError(f"group keys repeat: {', '.join(keys)}")
    return keys


def group_columns(by) -> list[str]:
    """Columns that :func:`add_group_keys` adds for the keys in ``by``, in order.

    Examples
    --------
    >>> group_columns("band,distance,hour")
    ['band', 'distance_min_km', 'distance_max_km', 'hour']
    """
    cols = {"band": [C.BAND], "distance": [C.DISTANCE_MIN, C.DISTANCE_MAX],
            "bearing": [C.BEARING_MIN, C.BEARING_MAX], "hour": [C.HOUR],
            "elevation": [C.ELEVATION_MIN, C.ELEVATION_MAX], "light": [C.PATH_LIGHT],
            "field": [C.FIELD], "square": [C.SQUARE], "receiver": [C.FAR_CALL]}
    return [c for k in parse_by(by) for c in cols[k]]


def add_group_keys(pairs: pd.DataFrame, by=(), *,
                   distance_edges=DEFAULT_DISTANCE_EDGES, bearing_width_deg: float = 45.0,
                   hour: HourBasis = "utc", elevation_edges=DEFAULT_ELEVATION_EDGES,
                   layer_height_km: float = 300.0) -> pd.DataFrame:
    """Add the grouping columns for ``by`` to a pairs table.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`pair_spots`.
    by : str or sequence of str
        Any of :data:`GROUP_KEYS`: ``band``; ``distance`` (bins of ``distance_edges`` [km]:
        ``C.DISTANCE_MIN``, ``C.DISTANCE_MAX``); ``bearing`` (sectors of
        ``bearing_width_deg`` [deg] from 0 deg, at the station under test); ``hour`` (hour of
        the slot, UTC or local mean solar time at the path midpoint, ``lon/15`` h); ``elevation``
        (bins of ``elevation_edges`` [deg] of the mirror-model take-off angle with a layer at
        ``layer_height_km``); ``light`` (day / night / greyline / mixed at the path ends, from
        :mod:`spotkit.geo.sun`); ``field`` / ``square`` (2- / 4-character locator of the far
        station); ``receiver`` (the far station's call).

    Returns
    -------
    pandas.DataFrame
        A copy with the columns of :func:`group_columns`; rows outside every bin have NaN
        there.

    Examples
    --------
    Four invented pairs of a station in JO62qm (bearings and distances towards the far
    station's locator):

    >>> nan = float("nan")
    >>> pairs = pd.DataFrame({
    ...     "cluster": ["Q2XY", "Q2XY", "Q3DEF", "Q4GH"],
    ...     "band": ["20m", "20m", "20m", "40m"],
    ...     "slot_utc": pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02",
    ...                                 "2024-03-01 10:00", "2024-03-01 22:04"], utc=True),
    ...     "far_locator": ["JN58td", "JN58td", "IO91lk", "FN31pr"],
    ...     "distance_km": [502.3, 502.3, 996.2, 6244.0],
    ...     "bearing_deg": [195.0, 195.0, 268.8, 296.1],
    ...     "snr_a_db": [-20.0, -26.0, nan, -27.0], "snr_b_db": [-17.0, -23.0, -25.0, nan],
    ...     "limit_a_db": [-28.0, -28.0, -29.0, -27.0],
    ...     "limit_b_db": [-28.0, -28.0, -29.0, -27.0]})
    >>> keyed = add_group_keys(pairs, "distance,bearing,hour,square")
    >>> print(keyed[group_columns("distance,bearing,hour,square")].to_string(index=False))
     distance_min_km  distance_max_km  bearing_min_deg  bearing_max_deg  hour square_locator
                 0.0           1000.0            180.0            225.0    10           JN58
                 0.0           1000.0            180.0            225.0    10           JN58
                 0.0           1000.0            225.0            270.0    10           IO91
              6000.0          20100.0            270.0            315.0    22           FN31
    """
    keys = parse_by(by)
    check_choice(hour, ("utc", "local"), "hour basis")
    # every option is checked, used or not: a bad one is a mistake even where it does not
    # matter yet (a negative layer height would put every pair outside the elevation bins)
    d_edges = _edges(distance_edges, "distance")
    e_edges = _edges(elevation_edges, "elevation")
    w = check_divides(bearing_width_deg, 360.0, "bearing width [deg]")
    check_positive(layer_height_km, "layer_height_km")
    out = pairs.copy()
    if "distance" in keys:
        lo, hi = _bin(out[C.DISTANCE].to_numpy(dtype=float), d_edges)
        out[C.DISTANCE_MIN], out[C.DISTANCE_MAX] = lo, hi
    if "bearing" in keys:
        brg = np.mod(out[C.BEARING].to_numpy(dtype=float), 360.0)
        lo = np.floor(brg / w + 1e-9) * w
        lo = np.where(lo >= 360.0 - 1e-9, 0.0, lo)
        out[C.BEARING_MIN], out[C.BEARING_MAX] = lo, lo + w
    if ("elevation" in keys or ("hour" in keys and hour == "local")) and (
            C.ELEVATION not in out or C.MID_LON not in out):
        from spotkit.geo.geodesic import add_path_geometry
        out = add_path_geometry(out, layer_height_km=layer_height_km)
    if "elevation" in keys:
        lo, hi = _bin(out[C.ELEVATION].to_numpy(dtype=float), e_edges)
        out[C.ELEVATION_MIN], out[C.ELEVATION_MAX] = lo, hi
    if "hour" in keys:
        ns = _ns(out[C.SLOT]) + _SLOT_NS // 2  # middle of the slot
        h = (ns % _DAY_NS) / 3.6e12
        if hour == "local":
            h = h + out[C.MID_LON].to_numpy(dtype=float) / 15.0
        out[C.HOUR] = np.floor(np.mod(h, 24.0)).astype(np.int64)
    if "light" in keys and C.PATH_LIGHT not in out:
        from spotkit.geo.sun import add_sun_columns
        out = add_sun_columns(out)
    if "field" in keys:
        out[C.FIELD] = out[C.FAR_LOCATOR].astype(str).str[:2].str.upper()
    if "square" in keys:
        out[C.SQUARE] = out[C.FAR_LOCATOR].astype(str).str[:4].str.upper()
    return out


def summarise_pairs(pairs: pd.DataFrame, by=(), *, day_hours: float = DEFAULT_DAY_HOURS,
                    **group_options) -> pd.DataFrame:
    """Compress a pairs table into counts of (group, cluster, kind, value).

    ``both``: value = SNR_B - SNR_A (the difference); ``only_a``: LIMIT_B - SNR_A (an upper
    bound of B - A); ``only_b``: SNR_B - LIMIT_A (a lower bound). Extra rows of kind
    ``edge_a`` / ``edge_b`` (value 0) count the pairs in which A / B was heard exactly at
    its receiver's decode threshold (for the correction in :mod:`spotkit.compare.estimate`; they are
    not pairs and not counted in the pair totals). Before/after pairs give
    kinds ``before`` / ``after`` with the relative SNR as value and ``before_below`` /
    ``after_below`` (:data:`spotkit.columns.PERIOD_BOUND_KINDS`) with its upper bound, and
    one more column, ``C.SLOT``: the start of the block of ``day_hours`` (counted from
    00:00 UTC, 1 January 1970; with 24 h the UTC date) the observation falls in, so that
    :mod:`spotkit.compare.estimate` can resample days as well as receivers. Values are rounded to
    1e-6 dB before counting. The table is mergeable: tables of disjoint parts of the data
    (e.g. Dask partitions) combine by concatenating and summing ``C.COUNT`` over the other
    columns (:func:`merge_summaries`).

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`pair_spots`.
    by : str or sequence of str
        Group keys (:func:`add_group_keys`, whose keyword options ``group_options`` are).
    day_hours : float
        Before/after design: length of the day blocks [h] (default 24: UTC dates).

    Returns
    -------
    pandas.DataFrame
        Columns :func:`group_columns` ``(by)`` (+ ``C.SLOT`` [UTC], before/after) +
        ``C.CLUSTER``, ``C.KIND``, ``C.VALUE`` [dB], ``C.COUNT``. ``attrs["set_aside"]``
        counts pairs outside every group bin.

    Examples
    --------
    The pairs of :func:`add_group_keys`: Q2XY heard B 3 dB above A twice; Q3DEF heard only
    B, 4 dB above A's limit (B - A >= 4 dB); Q4GH heard only A, exactly at its threshold
    (B - A <= 0 dB, and an ``edge_a`` row):

    >>> nan = float("nan")
    >>> pairs = pd.DataFrame({
    ...     "cluster": ["Q2XY", "Q2XY", "Q3DEF", "Q4GH"],
    ...     "band": ["20m", "20m", "20m", "40m"],
    ...     "slot_utc": pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02",
    ...                                 "2024-03-01 10:00", "2024-03-01 22:04"], utc=True),
    ...     "far_locator": ["JN58td", "JN58td", "IO91lk", "FN31pr"],
    ...     "distance_km": [502.3, 502.3, 996.2, 6244.0],
    ...     "bearing_deg": [195.0, 195.0, 268.8, 296.1],
    ...     "snr_a_db": [-20.0, -26.0, nan, -27.0], "snr_b_db": [-17.0, -23.0, -25.0, nan],
    ...     "limit_a_db": [-28.0, -28.0, -29.0, -27.0],
    ...     "limit_b_db": [-28.0, -28.0, -29.0, -27.0]})
    >>> print(summarise_pairs(pairs).to_string(index=False))
    cluster   kind  value_db  count
       Q2XY   both       3.0      2
      Q3DEF only_b       4.0      1
       Q4GH only_a       0.0      1
       Q4GH edge_a       0.0      1
    >>> summarise_pairs(pairs, "band")["band"].tolist()
    ['20m', '20m', '40m', '40m']

    A pair beyond the last distance edge is set aside:

    >>> summarise_pairs(pairs, "distance", distance_edges=(0, 1000, 3000)).attrs
    {'set_aside': {'outside the distance_min_km bins': 1}}
    """
    keys = parse_by(by)
    df = add_group_keys(pairs, keys, **group_options) if keys else pairs
    gcols = group_columns(keys)
    sa = df[C.SNR_A].to_numpy(dtype=float)
    sb = df[C.SNR_B].to_numpy(dtype=float)
    block = None
    if C.KIND in df.columns:  # before/after
        after = (df[C.KIND].astype(str) == "after").to_numpy()
        obs = np.where(after, sb, sa)
        bound = np.where(after, df[C.LIMIT_B].to_numpy(dtype=float),
                         df[C.LIMIT_A].to_numpy(dtype=float))
        heard = ~np.isnan(obs)
        kcode = after.astype(np.int64) + 2 * (~heard)  # into C.PERIOD_KINDS + C.PERIOD_BOUND_KINDS
        value = np.where(heard, obs, bound)
        cats = list(C.PERIOD_KINDS) + list(C.PERIOD_BOUND_KINDS)
        rows = np.arange(len(df))
        # the day block of each observation (for the day-to-day part of the interval)
        block_ns = int(round(_positive_hours(day_hours) * 3.6e12))
        block = (_ns(df[C.SLOT]) // block_ns) * block_ns
    else:
        ha, hb = ~np.isnan(sa), ~np.isnan(sb)
        la = df[C.LIMIT_A].to_numpy(dtype=float)
        lb = df[C.LIMIT_B].to_numpy(dtype=float)
        kcode = np.where(ha & hb, 0, np.where(ha, 1, 2))  # index into C.KINDS
        value = np.where(ha & hb, sb - sa, np.where(ha, lb - sa, sb - la))
        cats = list(C.KINDS) + list(C.EDGE_KINDS)
        # extra rows: pairs in which A (B) was heard exactly at its decode threshold
        with np.errstate(invalid="ignore"):
            edge_a = ha & (np.abs(sa - la) < 0.5)
            edge_b = hb & (np.abs(sb - lb) < 0.5)
        rows = np.concatenate([np.arange(len(df)), np.flatnonzero(edge_a),
                               np.flatnonzero(edge_b)])
        kcode = np.concatenate([kcode, np.full(int(edge_a.sum()), 3),
                                np.full(int(edge_b.sum()), 4)])
        value = np.concatenate([value, np.zeros(int(edge_a.sum() + edge_b.sum()))])
    value = np.round(value, 6)
    ok = np.isfinite(value)
    set_aside = {}
    if (~ok[:len(df)]).any():
        set_aside["censoring limit unknown"] = int((~ok[:len(df)]).sum())
    n_pairs = len(df)
    for col in gcols:
        missing = df[col].isna().to_numpy()[rows]
        bad = missing & ok
        if bad[:n_pairs].any():
            set_aside[f"outside the {col} bins"] = int(bad[:n_pairs].sum())
        ok &= ~missing
    sel = rows[ok]

    def take(col):
        if isinstance(df[col].dtype, pd.CategoricalDtype):
            return df[col].array[sel].remove_unused_categories()
        return df[col].to_numpy()[sel]

    frame = pd.DataFrame({col: take(col) for col in gcols})
    if block is not None:
        frame[C.SLOT] = _to_utc(block[sel]).array
    frame[C.CLUSTER] = take(C.CLUSTER)
    frame[C.KIND] = pd.Categorical.from_codes(kcode[ok], categories=cats)
    frame[C.VALUE] = value[ok]
    day = [C.SLOT] if block is not None else []
    counts = (frame.groupby(gcols + day + [C.CLUSTER, C.KIND, C.VALUE], observed=True,
                            sort=True)
              .size().rename(C.COUNT).reset_index())
    counts[C.COUNT] = counts[C.COUNT].astype(np.int64)
    counts.attrs["set_aside"] = set_aside
    return counts


def merge_summaries(tables) -> pd.DataFrame:
    """Combine compressed pair tables of disjoint data by summing ``C.COUNT``.

    Examples
    --------
    Two parts of the pairs of :func:`add_group_keys` give the table of the whole:

    >>> nan = float("nan")
    >>> pairs = pd.DataFrame({
    ...     "cluster": ["Q2XY", "Q2XY", "Q3DEF", "Q4GH"],
    ...     "band": ["20m", "20m", "20m", "40m"],
    ...     "slot_utc": pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02",
    ...                                 "2024-03-01 10:00", "2024-03-01 22:04"], utc=True),
    ...     "far_locator": ["JN58td", "JN58td", "IO91lk", "FN31pr"],
    ...     "distance_km": [502.3, 502.3, 996.2, 6244.0],
    ...     "bearing_deg": [195.0, 195.0, 268.8, 296.1],
    ...     "snr_a_db": [-20.0, -26.0, nan, -27.0], "snr_b_db": [-17.0, -23.0, -25.0, nan],
    ...     "limit_a_db": [-28.0, -28.0, -29.0, -27.0],
    ...     "limit_b_db": [-28.0, -28.0, -29.0, -27.0]})
    >>> merged = merge_summaries([summarise_pairs(pairs.iloc[:1]),
    ...                           summarise_pairs(pairs.iloc[1:])])
    >>> merged.equals(summarise_pairs(pairs))
    True
    >>> merged["count"].tolist()
    [2, 1, 1, 1]
    """
    tables = [t for t in tables if len(t)]
    if not tables:
        raise NoPairsError("no pairs in any part of the data")
    df = pd.concat(tables, ignore_index=True)
    keys = [c for c in df.columns if c != C.COUNT]
    return df.groupby(keys, observed=True, sort=True, dropna=False)[C.COUNT].sum().reset_index()


def group_index(counts: pd.DataFrame, keys: list[str]):
    """(group code of each row, one row per group with its key values, sorted); one
    group when ``keys`` is empty.

    Examples
    --------
    >>> counts = pd.DataFrame({"band": ["40m", "20m", "40m"], "cluster": ["Q2XY"] * 3,
    ...                        "kind": ["both"] * 3, "value_db": [1.0, 2.0, 3.0],
    ...                        "count": [1, 1, 1]})
    >>> codes, groups = group_index(counts, ["band"])
    >>> codes.tolist(), groups["band"].tolist()
    ([1, 0, 1], ['20m', '40m'])
    >>> group_index(counts, [])[0].tolist()
    [0, 0, 0]
    """
    if not keys:
        return np.zeros(len(counts), dtype=np.int64), pd.DataFrame(index=[0])
    codes, uniq = pd.factorize(pd.MultiIndex.from_frame(counts[keys]), sort=True)
    frame = uniq.to_frame(index=False)
    frame.columns = keys
    return codes.astype(np.int64), frame


__all__ = ["GROUP_KEYS", "DEFAULT_DISTANCE_EDGES", "DEFAULT_ELEVATION_EDGES",
           "DEFAULT_DAY_HOURS", "parse_by", "group_columns", "add_group_keys",
           "summarise_pairs", "merge_summaries", "group_index"]
