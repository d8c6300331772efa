"""The same per-partition analysis on pandas and on Dask: coverage tables and A/B comparisons.

Every aggregation here is written once, as a pandas function on one partition that returns
a small **mergeable partial** (a table of counts), a function that merges partials, and a
function that turns the merged partial into the answer. The pandas path runs the three on
the whole table; the Dask path maps the first over the partitions of a
:mod:`dask.dataframe` (one Parquet file of a partitioned archive per partition, see
:mod:`spotkit.store`), merges the partials in a tree, and finishes on the client. There is
no second implementation of the maths, so the two paths give the same answers:

* **coverage** (:func:`coverage_partials`, :func:`combine_coverage`,
  :func:`finish_coverage`; :func:`coverage_table` is the pandas path and
  :func:`coverage_dask` the Dask one): per group (band, locator square or field of the far
  station, UTC hour, ...) the number of spots, the number of distinct stations heard, and
  the mean, median and maximum of the SNR normalised to 1 W. The partial is a histogram of
  (group, SNR-per-W value rounded to 1e-6 dB) counts plus the distinct (group, station)
  pairs, so all of these - the median and the distinct count included - are **exact** after
  merging, not approximations. The histogram is small because reported SNR is whole dB and
  power sits on a 0/3/7 dBm ladder (common practice).
* **comparison** (:func:`compare_dask`): per partition ``pairing.pair_spots`` then
  ``compare.summarise_pairs`` (the compressed pair table of group x cluster x kind x value
  counts), merged by summing counts, then ``compare.estimate_groups`` once on the merged
  table.

Known edge cases of partitioning by band and UTC day of the slot (the archive's layout):
every spot of one slot lands in one partition, so simultaneous-transmit and receive designs
pair exactly as in pandas. In the **alternating** design a pair joins an A slot with a
neighbouring B slot; the pair whose two slots straddle 00:00 UTC falls in two partitions and
is lost (at most one window per receiver and band per day: with 2-minute slots and a window
of one slot, about 1/720 of the pairs). Statistics that the pairing takes over the whole
table (each receiver's decode threshold, an antenna's median power) are computed per
partition unless they are passed in; :func:`compare_dask` computes them over all partitions
first when the pairing function accepts them.

The Dask path runs on any scheduler: the default threads, a local cluster it starts itself
(``scheduler="local"``), or a running cluster (``scheduler="tcp://host:8786"`` or a
:class:`distributed.Client`); workers of a remote cluster must see the archive at the same
path.
"""
from __future__ import annotations

import contextlib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd

from . import columns as C
from . import store
from .bands import BAND_ORDER
from .errors import InputError, UsageError
from .units import snr_per_watt

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


def _check_choice(value, valid, what):
    if value not in valid:
        raise ValueError(f"unknown {what} {value!r}; valid: {', '.join(valid)}")


def _key_column(key: str, side: str) -> str:
    return {"band": C.BAND, "square": C.SQUARE, "field": C.FIELD, "hour": C.HOUR,
            "tx_call": C.TX_CALL, "rx_call": C.RX_CALL, "day": store.DAY}[key]


def coverage_columns_needed(by: Sequence[str], side: Side = "rx") -> list[str]:
    """Spot-table columns :func:`coverage_partials` reads for ``by`` and ``side``."""
    need = {C.SNR, C.POWER, C.RX_CALL if side == "rx" else C.TX_CALL}
    for key in by:
        _check_choice(key, COVERAGE_KEYS, "coverage key")
        if key in ("square", "field"):
            need.add(C.RX_LOCATOR if side == "rx" else C.TX_LOCATOR)
        elif key in ("hour", "day"):
            need.add(C.SLOT)
        else:
            need.add(_key_column(key, side))
    return [c for c in C.CANONICAL if c in need]


def _locator_prefix(s: pd.Series, n: int) -> pd.Series:
    """First ``n`` characters, upper case, computed once per distinct value."""
    cat = s if isinstance(s.dtype, pd.CategoricalDtype) else s.astype("category")
    cats = pd.Series(np.asarray(cat.cat.categories, dtype=object)).astype(str).str[:n].str.upper()
    codes = cat.cat.codes.to_numpy()
    vals = np.append(cats.to_numpy(dtype=object), None)[np.where(codes < 0, len(cats), codes)]
    return pd.Series(vals, index=s.index, dtype=object).astype("category")


def _keys_frame(df: pd.DataFrame, by: Sequence[str], side: str) -> pd.DataFrame:
    loc = C.RX_LOCATOR if side == "rx" else C.TX_LOCATOR
    out = {}
    for key in by:
        name = _key_column(key, side)
        if key == "square":
            out[name] = _locator_prefix(df[loc], 4)
        elif key == "field":
            out[name] = _locator_prefix(df[loc], 2)
        elif key == "hour":
            out[name] = df[C.SLOT].dt.hour.astype("int64")
        elif key == "day":
            out[name] = df[C.SLOT].dt.strftime("%Y-%m-%d").astype("category")
        else:
            out[name] = df[name]
    return pd.DataFrame(out, index=df.index)


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


def _plain(df: pd.DataFrame) -> pd.DataFrame:
    """Categorical columns -> plain str/object, so partials from any partition concatenate."""
    out = df.copy()
    for name in out.columns:
        if isinstance(out[name].dtype, pd.CategoricalDtype):
            out[name] = out[name].astype(object).where(out[name].notna(), None)
    return out


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
    """
    _check_choice(side, SIDES, "side")
    by = list(by)
    for key in by:
        _check_choice(key, COVERAGE_KEYS, "coverage key")
    if len(set(by)) != len(by):
        raise UsageError(f"coverage keys repeat: {', '.join(by)}")
    missing = [c for c in coverage_columns_needed(by, side) if c not in df.columns]
    if missing:
        raise InputError(f"spot table has no column(s) {', '.join(missing)} for coverage")
    station = C.RX_CALL if side == "rx" else C.TX_CALL
    keys = _keys_frame(df, by, side)
    names = list(keys.columns)
    value = np.round(snr_per_watt(df[C.SNR].to_numpy(dtype=float),
                                  df[C.POWER].to_numpy(dtype=float)), VALUE_DECIMALS)
    vals = keys.assign(**{C.SNR_PER_W: value})
    values = (vals.groupby(names + [C.SNR_PER_W], observed=True, dropna=False, sort=False)
              .size().rename(C.COUNT).reset_index())
    st_cols = names if station in names else names + [station]
    st = keys if station in names else keys.assign(**{station: df[station]})
    stations = (st.groupby(st_cols, observed=True, dropna=False, sort=False).size()
                .index.to_frame(index=False))
    stations = stations.loc[stations[station].notna()].reset_index(drop=True)
    return CoveragePartials(names, station, _plain(values), _plain(stations))


def combine_coverage(partials: Iterable[CoveragePartials]) -> CoveragePartials:
    """Merge coverage partials (of disjoint parts of one table): sum counts, union stations.

    Parameters
    ----------
    partials : iterable of CoveragePartials
        Built with the same ``by`` and ``side``.

    Returns
    -------
    CoveragePartials
    """
    parts = list(partials)
    if not parts:
        raise UsageError("no coverage partials to combine")
    keys, station = parts[0].keys, parts[0].station
    if any(p.keys != keys or p.station != station for p in parts):
        raise UsageError("coverage partials were built with different keys or sides")
    values = pd.concat([p.values for p in parts], ignore_index=True)
    values = (values.groupby(keys + [C.SNR_PER_W], dropna=False, sort=False)[C.COUNT]
              .sum().reset_index())
    st_cols = keys + ([station] if station not in keys else [])
    stations = pd.concat([p.stations for p in parts], ignore_index=True)
    stations = stations.drop_duplicates(st_cols, ignore_index=True)
    return CoveragePartials(keys, station, values, stations)


def _sort_keys(df: pd.DataFrame, keys: list[str]) -> pd.DataFrame:
    """Sort by the keys (bands in band-plan order) and return with a fresh index."""
    if not keys or df.empty:
        return df.reset_index(drop=True)
    order = {}
    for k in keys:
        if k == C.BAND:
            rank = {b: i for i, b in enumerate(BAND_ORDER)}
            order[k] = df[k].map(lambda b: rank.get(b, len(BAND_ORDER)))
        else:
            order[k] = df[k]
    tmp = pd.DataFrame(order)
    idx = tmp.sort_values(keys, kind="stable", na_position="last").index
    return df.loc[idx].reset_index(drop=True)


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
    """
    keys, station = partials.keys, partials.station
    v = partials.values
    if keys:
        gid, uniq = _group_ids(v, keys)
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
        st_gid = _match_groups(partials.stations, keys, uniq)
        out[STATIONS] = np.bincount(st_gid[st_gid >= 0], minlength=n_groups).astype(np.int64)
    else:
        out[STATIONS] = np.int64(partials.stations[station].nunique(dropna=True))
    out[SNR_MEAN] = mean
    out[SNR_MEDIAN] = median
    out[SNR_MAX] = vmax
    if not keys:
        return out[COVERAGE_COLUMNS]
    out = _sort_keys(out, keys)
    for k in keys:
        if k != C.HOUR and (out[k].dtype == object or pd.api.types.is_string_dtype(out[k])):
            cats = [b for b in BAND_ORDER if b in set(out[k].dropna())] if k == C.BAND else \
                sorted(out[k].dropna().unique())
            if k == C.BAND:
                cats += sorted(set(out[k].dropna()) - set(cats))
            out[k] = pd.Categorical(out[k], categories=cats)
    return out[keys + COVERAGE_COLUMNS]


def _group_ids(df: pd.DataFrame, keys: list[str]):
    g = df.groupby(keys, dropna=False, sort=False, observed=True).ngroup().to_numpy()
    first = pd.Series(np.arange(len(df))).groupby(g).first().to_numpy()
    uniq = df.iloc[first][keys].reset_index(drop=True)
    return g.astype(np.int64), uniq


def _match_groups(df: pd.DataFrame, keys: list[str], uniq: pd.DataFrame) -> np.ndarray:
    """Row -> index of its group in ``uniq`` (-1 if absent)."""
    lookup = uniq.assign(_gid=np.arange(len(uniq)))
    merged = df[keys].merge(lookup, on=keys, how="left", sort=False)
    return merged["_gid"].fillna(-1).to_numpy(dtype=np.int64)


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
    """
    return finish_coverage(coverage_partials(df, by, side=side))


# --- Dask ------------------------------------------------------------------------------------
Scheduler = Any  # None | "threads" | "processes" | "sync" | "local" | "tcp://..." | Client
_LOCAL_SCHEDULERS = ("threads", "processes", "sync", "synchronous", "single-threaded")


@contextlib.contextmanager
def dask_scheduler(scheduler: Scheduler = None, *, n_workers: int = 2,
                   threads_per_worker: int = 1, processes: bool = True,
                   memory_limit: str | int = "auto"):
    """Context giving the keyword arguments for :func:`dask.compute` on a scheduler.

    Parameters
    ----------
    scheduler : None, str or distributed.Client
        ``None``: Dask's default (threads). ``"threads"``, ``"processes"``, ``"sync"``:
        Dask's local schedulers. ``"local"``: start a :class:`distributed.LocalCluster` with
        ``n_workers`` x ``threads_per_worker`` for the duration of the context. Any other
        string is the address of a running scheduler (``"tcp://host:8786"``); a
        :class:`distributed.Client` is used as it is.
    n_workers, threads_per_worker, processes, memory_limit
        For ``"local"`` only (memory limit per worker, bytes or e.g. ``"1GB"``).

    Yields
    ------
    dict
        ``{"scheduler": ...}`` to pass to :func:`dask.compute` (empty for the default).
    """
    if scheduler is None:
        yield {}
        return
    if isinstance(scheduler, str) and scheduler in _LOCAL_SCHEDULERS:
        yield {"scheduler": scheduler}
        return
    from distributed import Client, LocalCluster

    if isinstance(scheduler, Client):
        yield {"scheduler": scheduler}
        return
    if not isinstance(scheduler, str):
        raise UsageError(f"scheduler {scheduler!r}: expected None, "
                         f"{', '.join(_LOCAL_SCHEDULERS)}, 'local', an address or a Client")
    if scheduler == "local":
        with LocalCluster(n_workers=n_workers, threads_per_worker=threads_per_worker,
                          processes=processes, memory_limit=memory_limit,
                          dashboard_address=None) as cluster, Client(cluster) as client:
            yield {"scheduler": client}
        return
    try:
        client = Client(scheduler, timeout="10s")
    except (OSError, TimeoutError) as exc:
        raise UsageError(f"cannot reach the Dask scheduler at {scheduler}: {exc}") from None
    with client:
        yield {"scheduler": client}


class _ArchiveReader:
    """Callable for :func:`dask.dataframe.from_map`: one archive file -> DataFrame."""

    def __init__(self, root, columns, selection):
        self.root, self.columns, self.selection = str(root), columns, selection

    def __call__(self, file):
        return store.read_archive_file(self.root, file, columns=self.columns, **self.selection)


def read_archive_dask(root, *, columns: Sequence[str] | None = None, bands=None, start=None,
                      end=None, tx_calls=None, rx_calls=None, locator_prefix=None):
    """A partitioned archive as a :class:`dask.dataframe.DataFrame`, one partition per file.

    Partitions whose band/day directory cannot match the selection are not opened; inside a
    file the selection is pushed down to Parquet (see :func:`spotkit.store.read_dataset`).

    Returns
    -------
    dask.dataframe.DataFrame
        Glossary dtypes; categoricals have partition-local categories.
    """
    import dask.dataframe as dd

    selection = dict(bands=bands, start=start, end=end, tx_calls=tx_calls, rx_calls=rx_calls,
                     locator_prefix=locator_prefix)
    files = store.archive_files(root, bands=bands, start=start, end=end)
    if not files:
        raise InputError(f"{root}: no spots in the archive match the selection")
    reader = _ArchiveReader(root, list(columns) if columns is not None else None, selection)
    meta = reader(files[0]).iloc[:0]
    return dd.from_map(reader, files, meta=meta, enforce_metadata=False,
                       label="read-spot-archive")


def _partitions(source, columns, selection):
    """Delayed pandas partitions of an archive path or a Dask DataFrame."""
    import dask.dataframe as dd

    if isinstance(source, dd.DataFrame):
        if any(v is not None for v in selection.values()):
            raise UsageError("a selection (bands, start, ...) applies to an archive path; "
                             "filter the Dask DataFrame yourself")
        ddf = source if columns is None else source[list(columns)]
    elif isinstance(source, (str, Path)):
        ddf = read_archive_dask(source, columns=columns, **selection)
    else:
        raise UsageError(f"expected an archive directory or a Dask DataFrame, got "
                         f"{type(source).__name__}")
    return ddf.to_delayed()


def _tree_reduce(items: list, combine, split_every: int):
    import dask

    combine_d = dask.delayed(combine, pure=True)
    if split_every < 2:
        raise UsageError(f"split_every must be at least 2, got {split_every}")
    while len(items) > 1:
        items = [combine_d(items[i:i + split_every]) for i in range(0, len(items), split_every)]
    return items[0]


def coverage_dask(source, by: Sequence[CoverageKey] = ("band", "square"), *, side: Side = "rx",
                  scheduler: Scheduler = None, split_every: int = 16, bands=None, start=None,
                  end=None, tx_calls=None, rx_calls=None, locator_prefix=None) -> pd.DataFrame:
    """Coverage per group from a partitioned archive (or a Dask DataFrame) on Dask.

    Maps :func:`coverage_partials` over the partitions, merges the partials in a tree with
    :func:`combine_coverage` and finishes with :func:`finish_coverage`: the same result as
    :func:`coverage_table` on the whole table, exactly.

    Parameters
    ----------
    source : str, path-like or dask.dataframe.DataFrame
        Archive directory (see :mod:`spotkit.store`) or a Dask DataFrame of spots.
    by, side
        As :func:`coverage_partials`.
    scheduler
        See :func:`dask_scheduler`.
    split_every : int
        Partials merged per tree node.
    bands, start, end, tx_calls, rx_calls, locator_prefix
        Selection pushed down to Parquet (archive paths only); see
        :func:`spotkit.store.dataset_filter`.

    Returns
    -------
    pandas.DataFrame
        As :func:`finish_coverage`.
    """
    import dask

    _check_choice(side, SIDES, "side")
    by = list(by)
    cols = coverage_columns_needed(by, side)
    selection = dict(bands=bands, start=start, end=end, tx_calls=tx_calls, rx_calls=rx_calls,
                     locator_prefix=locator_prefix)
    parts = _partitions(source, cols, selection)
    partial_d = dask.delayed(coverage_partials, pure=True)
    total = _tree_reduce([partial_d(p, by, side=side) for p in parts], combine_coverage,
                         split_every)
    with dask_scheduler(scheduler) as kw:
        (merged,) = dask.compute(total, **kw)
    return finish_coverage(merged)


def enrich_dask(ddf):
    """Add the path columns (:func:`spotkit.geo.add_path_columns`) to every partition.

    Returns
    -------
    dask.dataframe.DataFrame
        Lazy; each partition solves its own distinct locator pairs once.
    """
    from .geo import add_path_columns

    meta = add_path_columns(ddf._meta)
    return ddf.map_partitions(add_path_columns, meta=meta)


__all__ = [
    "STATIONS", "SNR_MEAN", "SNR_MEDIAN", "SNR_MAX", "COVERAGE_COLUMNS", "COVERAGE_KEYS",
    "CoveragePartials", "coverage_columns_needed", "coverage_partials", "combine_coverage",
    "finish_coverage", "coverage_table", "dask_scheduler", "read_archive_dask", "coverage_dask",
    "enrich_dask",
]
