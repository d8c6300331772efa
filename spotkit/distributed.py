"""The same per-partition analysis on pandas and on Dask: coverage tables and A/B comparisons.

Every aggregation here is written once, as a pandas function on one partition that returns
a small **mergeable partial** (a table of counts), a function that merges partials, and a
function that turns the merged partial into the answer. The pandas path runs the three on
the whole table; the Dask path maps the first over the partitions of a
:mod:`dask.dataframe` (one Parquet file of a partitioned archive per partition, see
:mod:`spotkit.io.store`), merges the partials in a tree, and finishes on the client. There is
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
  ``grouping.summarise_pairs`` (the compressed pair table of group x cluster x kind x value
  counts), merged by summing counts, then ``compare.estimate_groups`` once on the merged
  table. The detection width the paired outcomes support (``compare.width``, the default
  of the in-memory path too) is fitted between the receivers' pass and this one, from
  per-partition counts of identical pair outcomes (``width.pair_outcomes``), merged by
  summing counts: exact.

Partitions and the pairing. The archive is partitioned by band and UTC day of the slot, so
every spot of one slot lands in one partition: simultaneous-transmit and receive pairs
(same slot) never straddle partitions. The **alternating** design pairs an A slot with a
neighbouring B slot and checks the receiver heard the call in the slots around the pair (on
any band), so a pair at 00:00 UTC or one whose evidence sits on another band would be lost
if partitions were cut by band and day: :func:`compare_dask` therefore reads the reports of
the call under test (a small part of the archive) as one partition. The **before/after**
design needs both periods and the control stations: one partition per band. The one
statistic the pairing takes over the whole table - each receiver's decode threshold, the
50 % point of its detection curve fitted to its report histogram - is computed over all
partitions first (the histograms are merged), and the censoring limits of each
partition's pairs are moved from the partition's thresholds to the global ones.

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

from spotkit import columns as C
from spotkit._validate import check_choice
from spotkit.coverage import (
    SIDES,
    CoverageKey,
    Side,
    combine_coverage,
    coverage_columns_needed,
    coverage_partials,
    finish_coverage,
)
from spotkit.errors import InputError, UsageError
from spotkit.io import store

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
                          dashboard_address=":0") as cluster, \
                Client(cluster, set_as_default=False) as client:
            yield {"scheduler": client}
        return
    try:
        # not the default client: the scheduler goes to every compute explicitly, and a
        # Client that fails to connect must not leave Dask's global configuration pointing
        # at it (a later plain compute in the same process would fail)
        client = Client(scheduler, timeout="10s", set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise UsageError(f"cannot reach the Dask scheduler at {scheduler}: {exc}") from None
    except ValueError as exc:  # not an address at all, e.g. "bogus" (missing port number)
        raise UsageError(f"scheduler {scheduler!r}: not a scheduler address ({exc}); expected "
                         f"{', '.join(_LOCAL_SCHEDULERS)}, 'local' or an address such as "
                         "tcp://host:8786") from None
    with client:
        yield {"scheduler": client}


class _ArchiveReader:
    """Callable for :func:`dask.dataframe.from_map`: one archive file -> DataFrame."""

    def __init__(self, root, columns, selection):
        self.root, self.columns, self.selection = str(root), columns, selection
        self.partition_by = store.dataset_manifest(root).get("partition_by",
                                                             list(store.PARTITION_KEYS))

    def __call__(self, file):
        return store.read_archive_file(self.root, file, columns=self.columns,
                                       partition_by=self.partition_by, **self.selection)


def read_archive_dask(root, *, columns: Sequence[str] | None = None, bands=None, start=None,
                      end=None, tx_calls=None, rx_calls=None, locator_prefix=None,
                      group: Literal["file", "band", "all"] = "file"):
    """A partitioned archive as a :class:`dask.dataframe.DataFrame`, one partition per file.

    ``group="band"`` (archives partitioned band first) makes all files of one band one
    partition, ``group="all"`` everything one partition: for analyses that need a band's
    (or the selection's) whole period at once.

    Partitions whose band/day directory cannot match the selection are not opened; inside a
    file the selection is pushed down to Parquet (see :func:`spotkit.io.store.read_dataset`).

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
        if not (Path(root) / store.MANIFEST_NAME).exists():
            raise InputError(
                f"{root}: not a spotkit archive (no {store.MANIFEST_NAME}); a plain folder of "
                "Parquet spot files is read whole by spotkit.io.ingest.load_spots ('spotkit "
                "compare DIR'), or append it to an archive first")
        raise InputError(f"{root}: no spots in the archive match the selection")
    check_choice(group, ("file", "band", "all"), "partition grouping")
    if group == "band":
        groups: dict[str, list[str]] = {}
        for f in files:
            groups.setdefault(f.split("/", 1)[0], []).append(f)
        files = list(groups.values())
    elif group == "all":
        files = [files]
    reader = _ArchiveReader(root, list(columns) if columns is not None else None, selection)
    meta = reader(files[0]).iloc[:0]
    return dd.from_map(reader, files, meta=meta, enforce_metadata=False,
                       label="read-spot-archive")


def _partitions(source, columns, selection, group="file"):
    """Delayed pandas partitions of an archive path or a Dask DataFrame."""
    import dask.dataframe as dd

    if isinstance(source, dd.DataFrame):
        if any(v is not None for v in selection.values()):
            raise UsageError("a selection (bands, start, ...) applies to an archive path; "
                             "filter the Dask DataFrame yourself")
        ddf = source if columns is None else source[list(columns)]
    elif isinstance(source, (str, Path)):
        ddf = read_archive_dask(source, columns=columns, group=group, **selection)
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
        Archive directory (see :mod:`spotkit.io.store`) or a Dask DataFrame of spots.
    by, side
        As :func:`coverage_partials`.
    scheduler
        See :func:`dask_scheduler`.
    split_every : int
        Partials merged per tree node.
    bands, start, end, tx_calls, rx_calls, locator_prefix
        Selection pushed down to Parquet (archive paths only); see
        :func:`spotkit.io.store.dataset_filter`.

    Returns
    -------
    pandas.DataFrame
        As :func:`finish_coverage`.
    """
    import dask

    check_choice(side, SIDES, "side")
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


# --- A/B comparison -------------------------------------------------------------------------
@dataclass
class ComparePartials:
    """Mergeable partial of an A/B comparison.

    Attributes
    ----------
    overall, counts : pandas.DataFrame
        Compressed pair tables (:func:`spotkit.compare.grouping.summarise_pairs`) without and with
        the group keys.
    clusters : set of str
        Clusters (bootstrap units) that have pairs.
    set_aside : dict
        Reports or pairs set aside, by reason (summed over partitions).
    far : pandas.DataFrame or None
        With the ``receiver`` key: far-station locator and position by call.
    """

    overall: pd.DataFrame
    counts: pd.DataFrame
    clusters: set
    set_aside: dict
    far: pd.DataFrame | None = None


def receiver_partials(df: pd.DataFrame) -> pd.DataFrame:
    """Per receiver call and whole-dB SNR [dB]: number of reports (mergeable).

    The receiver thresholds (:func:`spotkit.compare.pairing.receiver_thresholds`) need each
    receiver's report histogram: the 50 % point of its detection curve is fitted to it."""
    v = np.floor(df[C.SNR].to_numpy(dtype=float) + 0.5)
    g = (pd.DataFrame({C.RX_CALL: df[C.RX_CALL].astype(str).to_numpy(), C.SNR: v})
         .dropna().groupby([C.RX_CALL, C.SNR]).size().rename("count").reset_index())
    return g


def combine_receivers(parts: Iterable[pd.DataFrame]) -> pd.DataFrame:
    """Merge :func:`receiver_partials`: counts summed per receiver and SNR."""
    cat = pd.concat(list(parts), ignore_index=True)
    return cat.groupby([C.RX_CALL, C.SNR], as_index=False)["count"].sum()


def reports_from_partials(partials: pd.DataFrame) -> pd.DataFrame:
    """A stand-in report table (``C.RX_CALL``, ``C.SNR`` [dB]) with the histograms of
    merged :func:`receiver_partials`: each receiver's whole-dB reports, as many as it
    sent (SNRs that were not whole dB are taken at their whole dB)."""
    reps = partials["count"].to_numpy(dtype=np.int64)
    return pd.DataFrame({
        C.RX_CALL: np.repeat(partials[C.RX_CALL].to_numpy(dtype=object), reps),
        C.SNR: np.repeat(partials[C.SNR].to_numpy(dtype=float), reps)})


def thresholds_from_partials(partials: pd.DataFrame, min_reports: int = 20, *,
                             tau_db: float | None = None,
                             whole_db: bool | None = None) -> pd.Series:
    """Receiver thresholds as :func:`spotkit.compare.pairing.receiver_thresholds` on the
    whole table, from merged :func:`receiver_partials`.

    The pairing function is run on a stand-in table with each receiver's whole-dB reports
    (:func:`reports_from_partials`: the same histograms). ``attrs["detection"]`` carries
    the detection model: of width ``tau_db`` [dB] when given, else fitted to all the
    reports' histograms. ``whole_db``: whether the reports are whole dB
    (:func:`spotkit.compare.pairing.is_whole_db` of the summed
    :func:`~spotkit.compare.pairing.whole_db_counts` of the partitions); the stand-in
    table is whole dB whatever the reports were, so None takes it as whole dB.
    """
    from spotkit.compare.pairing import receiver_thresholds

    return receiver_thresholds(reports_from_partials(partials), min_reports, tau_db=tau_db,
                               whole_db=whole_db)


def _calls_needed(design: str, a: str, b: str | None) -> tuple[str, list[str]]:
    a = str(a).strip().upper()
    b = a if b is None or not str(b).strip() else str(b).strip().upper()
    col = C.RX_CALL if design == "receive" else C.TX_CALL
    need = [a, b] if design in ("simultaneous", "receive") else [a]
    return col, need


def _partition_pairs(df: pd.DataFrame, design: str, a: str, b: str | None, *,
                     thresholds: pd.Series | None, schedule, change_at, window_slots: int,
                     min_receiver_reports: int, require_open_path: bool):
    """The pairs of one partition, their limits at the global ``thresholds``; None when
    the partition lacks a call the design needs or nothing pairs."""
    from spotkit.compare.pairing import pair_spots, receiver_thresholds
    from spotkit.errors import NoPairsError

    col, need = _calls_needed(design, a, b)
    present = set(df[col].astype(str).unique()) if len(df) else set()
    if not all(c in present for c in need):
        return None
    # the partition's thresholds use the width of the detection curve of the global ones
    tau = None if thresholds is None else (thresholds.attrs.get("detection") or {}).get(
        "tau_db")
    try:
        pairs = pair_spots(df, design, a, b, schedule=schedule, change_at=change_at,
                           window_slots=window_slots,
                           min_receiver_reports=min_receiver_reports,
                           require_open_path=require_open_path, tau_db=tau)
    except NoPairsError:
        return None
    if thresholds is not None:  # before/after too: its bounds use the threshold as well
        local = receiver_thresholds(df, min_receiver_reports, tau_db=tau)
        shift = thresholds.reindex(local.index).to_numpy(dtype=float) - local.to_numpy()
        shift = pd.Series(shift, index=local.index.astype(str))
        if design == "receive":
            pairs[C.LIMIT_A] += float(shift.get(need[0], 0.0))
            pairs[C.LIMIT_B] += float(shift.get(need[1], 0.0))
        else:  # receivers are the clusters
            d = pairs[C.CLUSTER].astype(str).map(shift).to_numpy(dtype=float)
            pairs[C.LIMIT_A] = pairs[C.LIMIT_A].to_numpy() + d
            pairs[C.LIMIT_B] = pairs[C.LIMIT_B].to_numpy() + d
    return pairs


def outcome_partials(df: pd.DataFrame, design: str, a: str, b: str | None = None, *,
                     thresholds: pd.Series | None = None, schedule=None, change_at=None,
                     window_slots: int = 1, min_receiver_reports: int = 20,
                     require_open_path: bool = True) -> pd.DataFrame:
    """Pair one partition and compress its pairs for the fit of the detection width.

    The pairs are those of :func:`compare_partials` (limits at the global
    ``thresholds``); the result is :func:`spotkit.compare.width.pair_outcomes` of them,
    mergeable exactly by :func:`spotkit.compare.width.merge_pair_outcomes` (empty when the
    partition has no pairs).
    """
    from spotkit.compare.width import empty_pair_outcomes, pair_outcomes

    pairs = _partition_pairs(df, design, a, b, thresholds=thresholds, schedule=schedule,
                             change_at=change_at, window_slots=window_slots,
                             min_receiver_reports=min_receiver_reports,
                             require_open_path=require_open_path)
    return empty_pair_outcomes() if pairs is None else pair_outcomes(pairs)


def compare_partials(df: pd.DataFrame, design: str, a: str, b: str | None = None, *,
                     by=(), thresholds: pd.Series | None = None, schedule=None,
                     change_at=None, window_slots: int = 1, min_receiver_reports: int = 20,
                     group_options: dict | None = None, day_hours: float = 24.0,
                     require_open_path: bool = True) -> ComparePartials:
    """Pair one partition and compress its pairs (the per-partition work of a comparison).

    Runs :func:`spotkit.compare.pairing.pair_spots` and
    :func:`spotkit.compare.grouping.summarise_pairs`.
    A partition without the calls the design needs gives empty tables; so does one where
    nothing pairs. With ``thresholds`` (receiver thresholds over the whole data, see
    :func:`thresholds_from_partials`) the censoring limits are moved from the partition's
    own thresholds to the global ones - the pairing takes each receiver's threshold from
    the table it is given, and the limit is ``threshold - (power - 30)`` - so the pairs equal
    those of the whole table. The partition's thresholds use the detection width of
    ``thresholds.attrs["detection"]``.
    """
    from spotkit.compare.grouping import summarise_pairs

    group_options = group_options or {}
    pairs = _partition_pairs(df, design, a, b, thresholds=thresholds, schedule=schedule,
                             change_at=change_at, window_slots=window_slots,
                             min_receiver_reports=min_receiver_reports,
                             require_open_path=require_open_path)
    if pairs is None:
        return _empty_compare(by, group_options)
    keys = _parse_by(by)
    overall = summarise_pairs(pairs, (), day_hours=day_hours)
    counts = summarise_pairs(pairs, keys, day_hours=day_hours, **group_options) if keys \
        else overall
    set_aside = dict(pairs.attrs.get("set_aside", {}))
    for k, v in (counts.attrs.get("set_aside", {}) if keys else {}).items():
        set_aside[f"groups: {k}"] = v
    far = None
    if "receiver" in keys:
        far = pairs.groupby(C.FAR_CALL, observed=True)[[C.FAR_LOCATOR, C.FAR_LAT,
                                                        C.FAR_LON]].first()
        far.index = far.index.astype(str)
        far[C.FAR_LOCATOR] = far[C.FAR_LOCATOR].astype(str)
    return ComparePartials(overall, counts, set(pairs[C.CLUSTER].astype(str)), set_aside, far)


def _parse_by(by) -> tuple:
    from spotkit.compare.grouping import parse_by

    return parse_by(by)


def _empty_compare(by, group_options) -> ComparePartials:
    from spotkit.compare.grouping import group_columns

    cols = list(group_columns(_parse_by(by))) + [C.CLUSTER, C.KIND, C.VALUE, C.COUNT]
    empty = pd.DataFrame({c: pd.Series(dtype=object) for c in cols})
    return ComparePartials(empty[[C.CLUSTER, C.KIND, C.VALUE, C.COUNT]], empty, set(), {}, None)


def combine_compare(partials: Iterable[ComparePartials]) -> ComparePartials:
    """Merge comparison partials: sum counts (:func:`spotkit.compare.grouping.merge_summaries`)."""
    from spotkit.compare.grouping import merge_summaries

    parts = list(partials)
    if not parts:
        raise UsageError("no comparison partials to combine")

    def merge(tables, template):
        full = [t for t in tables if len(t)]
        return merge_summaries(full) if full else template

    set_aside: dict = {}
    for p in parts:
        for k, v in p.set_aside.items():
            set_aside[k] = set_aside.get(k, 0) + int(v)
    fars = [p.far for p in parts if p.far is not None and len(p.far)]
    far = None
    if fars:
        far = pd.concat(fars)
        far = far[~far.index.duplicated(keep="first")]
    return ComparePartials(merge([p.overall for p in parts], parts[0].overall),
                           merge([p.counts for p in parts], parts[0].counts),
                           set().union(*(p.clusters for p in parts)), set_aside, far)


def finish_compare(merged: ComparePartials, design: str, a: str, b: str | None = None, *,
                   by=(), n_boot: int = 1000, seed: int = 0, min_pairs: int = 30,
                   confidence: float = 0.95, options: dict | None = None,
                   threshold_correction: str = "none", missed_reports: str = "fit",
                   detection: dict | None = None):
    """Estimate B minus A from merged partials, as
    :func:`spotkit.compare.estimate.compare_antennas`.

    Returns
    -------
    spotkit.compare.estimate.ComparisonResult
        ``pairs`` is an empty table: the distributed path keeps only the compressed counts.
    """
    from spotkit.compare.estimate import RESULT_COLUMNS, ComparisonResult, estimate_groups
    from spotkit.compare.grouping import group_columns
    from spotkit.compare.pairing import PAIR_COLUMNS
    from spotkit.errors import NoPairsError

    keys = _parse_by(by)
    if len(merged.overall) == 0:
        why = "; ".join(f"{k}: {v}" for k, v in merged.set_aside.items()) or "no reports"
        raise NoPairsError(f"no pairs found for the {design} design in any partition ({why})")
    label = "transmitters" if design == "receive" else "receivers"
    est = dict(n_boot=n_boot, seed=seed, confidence=confidence, min_pairs=min_pairs,
               clusters=sorted(merged.clusters), cluster_label=label,
               threshold_correction=threshold_correction, missed_reports=missed_reports,
               detection=detection)
    overall = estimate_groups(merged.overall, **est).iloc[0].to_dict()
    overall[C.P_ADJUSTED] = overall[C.P_VALUE]
    if keys:
        counts = merged.counts
        groups = (estimate_groups(counts, **est) if len(counts) else
                  pd.DataFrame(columns=group_columns(keys) + RESULT_COLUMNS))
        if merged.far is not None:
            groups = groups.merge(merged.far, left_on=C.FAR_CALL, right_index=True, how="left")
    else:
        counts = merged.overall
        groups = pd.DataFrame(columns=RESULT_COLUMNS)
    col, need = _calls_needed(design, a, b)
    pairs = pd.DataFrame(columns=PAIR_COLUMNS)
    return ComparisonResult(overall=overall, groups=groups.reset_index(drop=True),
                            pairs=pairs, design=design, a=need[0], b=need[-1], by=keys,
                            counts=counts, set_aside=merged.set_aside,
                            options=dict(options or {}, n_boot=int(n_boot), seed=int(seed),
                                         min_pairs=int(min_pairs),
                                         confidence=float(confidence), engine="dask"))


def compare_dask(source, design: str, a: str, b: str | None = None, *, by=(), schedule=None,
                 change_at=None, window_slots: int = 1, min_receiver_reports: int = 20,
                 distance_edges=None, bearing_width_deg: float = 45.0, hour: str = "utc",
                 elevation_edges=None, layer_height_km: float = 300.0, n_boot: int = 1000,
                 seed: int = 0, min_pairs: int = 30, confidence: float = 0.95,
                 scheduler: Scheduler = None, split_every: int = 16, bands=None, start=None,
                 end=None, threshold_correction: str = "none", missed_reports: str = "fit",
                 day_hours: float = 24.0, require_open_path: bool = True,
                 tau_db: float | None = None, tau_from: str = "pairs"):
    """Compare antennas A and B over a partitioned archive on Dask.

    Two passes over the partitions: (1) each receiver's report histogram
    (:func:`receiver_partials`), merged into the receiver thresholds of the whole data;
    (2) :func:`compare_partials` per partition (pairing + compressed pair table), merged by
    summing counts (:func:`combine_compare`), then one
    :func:`spotkit.compare.estimate.estimate_groups` (:func:`finish_compare`). Parameters are those
    of :func:`spotkit.compare.estimate.compare_antennas` plus ``scheduler``, ``split_every`` and a
    selection pushed down to Parquet (``bands``, ``start``, ``end`` [UTC]).

    The detection width, as in :func:`~spotkit.compare.estimate.compare_antennas`: ``tau_db``
    [dB] when given; else, with ``tau_from="pairs"`` (default) and a paired design, the
    width the paired outcomes support (:mod:`spotkit.compare.width`): between the two
    passes, :func:`outcome_partials` pairs every partition at the thresholds of pass 1 and
    compresses the pairs to counts of identical (receiver, SNRs, limits), merged exactly
    (:func:`spotkit.compare.width.merge_pair_outcomes`); the width is fitted on the client
    from the merged table and the histograms of pass 1
    (:func:`spotkit.compare.width.width_from_outcomes`), and pass 2 pairs at the
    thresholds of that width. The pairing thus runs twice (the reports of the calls under
    test are read twice), and the width and estimate equal those of the in-memory path to
    rounding. With ``tau_from="reports"`` or the before/after design, the width fitted
    to the receivers' report histograms.

    From an archive the result equals :func:`~spotkit.compare.estimate.compare_antennas` on the
    whole table (same seed, same bootstrap) for every design: the second pass reads only
    the reports of the calls under test (pushed down to Parquet), one partition per file for
    the simultaneous and receive designs; the alternating design's reports form a single
    partition (its pairing looks at neighbouring slots on every band) and the before/after
    design reads one partition per band (it needs the control stations and both periods).
    A Dask DataFrame given as ``source`` is used partition by partition as it is: then
    alternating pairs that straddle a partition edge are lost, and each partition must hold
    both periods of a before/after run.

    Returns
    -------
    spotkit.compare.estimate.ComparisonResult
        With an empty ``pairs`` table.
    """
    import dask

    from spotkit.compare.grouping import DEFAULT_DISTANCE_EDGES, DEFAULT_ELEVATION_EDGES
    from spotkit.compare.pairing import is_whole_db
    from spotkit.compare.width import (
        PAIRED_DESIGNS,
        WIDTH_FROM,
        merge_pair_outcomes,
        width_from_outcomes,
    )

    check_choice(tau_from, WIDTH_FROM, "tau_from")
    keys = _parse_by(by)
    group_options = dict(
        distance_edges=DEFAULT_DISTANCE_EDGES if distance_edges is None else distance_edges,
        bearing_width_deg=bearing_width_deg, hour=hour,
        elevation_edges=DEFAULT_ELEVATION_EDGES if elevation_edges is None else elevation_edges,
        layer_height_km=layer_height_km)
    selection = dict(bands=bands, start=start, end=end, tx_calls=None, rx_calls=None,
                     locator_prefix=None)
    col, need = _calls_needed(design, a, b)
    archive = isinstance(source, (str, Path))
    # pass 1 (thresholds, calls present) needs two columns of every spot
    parts1 = _partitions(source, [C.RX_CALL, C.TX_CALL, C.SNR] if archive else None,
                         selection)
    # pass 2: simultaneous / receive / alternating use only the reports of the calls under
    # test (filter pushed down to Parquet); alternating looks at neighbouring slots on every
    # band, so its reports form one partition; before/after needs the other stations
    # (controls) and both periods: one partition per band
    if design == "before-after":
        parts2 = _partitions(source, None, selection, group="band")
    elif archive:
        sel2 = dict(selection, **{"tx_calls" if col == C.TX_CALL else "rx_calls": need})
        parts2 = _partitions(source, None, sel2,
                             group="all" if design == "alternating" else "file")
    else:
        parts2 = _partitions(source, None, selection)
    rec_d = dask.delayed(receiver_partials, pure=True)
    calls_d = dask.delayed(_distinct_calls, pure=True)
    whole_d = dask.delayed(_whole_db_counts, pure=True)
    rec_total = _tree_reduce([rec_d(p) for p in parts1], combine_receivers, split_every)
    calls_total = _tree_reduce([calls_d(p, col) for p in parts1], _union, split_every)
    whole_total = _tree_reduce([whole_d(p) for p in parts1], _sum_counts, split_every)
    with dask_scheduler(scheduler) as kw:
        rec, calls, whole = dask.compute(rec_total, calls_total, whole_total, **kw)
        whole = is_whole_db(whole)  # as the in-memory path decides it on all reports
        missing = [c for c in need if c not in calls]
        if missing:
            shown = ", ".join(sorted(calls)[:15]) + (" ..." if len(calls) > 15 else "")
            raise InputError(f"call(s) {', '.join(missing)} not found among the "
                             f"{'receivers' if col == C.RX_CALL else 'transmitters'} of the "
                             f"archive; present: {shown}")
        thr = thresholds_from_partials(rec, min_receiver_reports, tau_db=tau_db,
                                       whole_db=whole)
        pairing = dict(schedule=schedule, change_at=change_at, window_slots=window_slots,
                       min_receiver_reports=min_receiver_reports,
                       require_open_path=require_open_path)
        if tau_db is None and tau_from == "pairs" and design in PAIRED_DESIGNS:
            out_d = dask.delayed(outcome_partials, pure=True)
            (outcomes,) = dask.compute(_tree_reduce(
                [out_d(p, design, a, b, thresholds=thr, **pairing) for p in parts2],
                merge_pair_outcomes, split_every), **kw)
            if len(outcomes):  # no pairs at all: pass 2 says why
                det = width_from_outcomes(reports_from_partials(rec), outcomes, design, a,
                                          b, detection=thr.attrs["detection"],
                                          min_receiver_reports=min_receiver_reports,
                                          whole_db=whole)
                thr = thresholds_from_partials(rec, min_receiver_reports,
                                               tau_db=det["tau_db"], whole_db=whole)
                thr.attrs["detection"] = det
        cmp_d = dask.delayed(compare_partials, pure=True)
        partials = [cmp_d(p, design, a, b, by=keys, thresholds=thr,
                          group_options=group_options, day_hours=day_hours, **pairing)
                    for p in parts2]
        (merged,) = dask.compute(_tree_reduce(partials, combine_compare, split_every), **kw)
    options = dict(group_options, window_slots=int(window_slots),
                   tau_db=None if tau_db is None else float(tau_db), tau_from=tau_from,
                   threshold_correction=threshold_correction, missed_reports=missed_reports,
                   day_hours=float(day_hours), require_open_path=bool(require_open_path),
                   schedule=schedule if isinstance(schedule, (str, type(None))) else "table",
                   change_at=None if change_at is None else str(change_at))
    options["distance_edges"] = [float(x) for x in options["distance_edges"]]
    options["elevation_edges"] = [float(x) for x in options["elevation_edges"]]
    return finish_compare(merged, design, a, b, by=keys, n_boot=n_boot, seed=seed,
                          min_pairs=min_pairs, confidence=confidence, options=options,
                          threshold_correction=threshold_correction,
                          missed_reports=missed_reports,
                          detection=thr.attrs.get("detection"))


def _whole_db_counts(df: pd.DataFrame) -> np.ndarray:
    from spotkit.compare.pairing import whole_db_counts

    return whole_db_counts(df[C.SNR].to_numpy(dtype=float))


def _sum_counts(parts) -> np.ndarray:
    return np.sum(np.stack(list(parts)), axis=0)


def _distinct_calls(df: pd.DataFrame, col: str) -> set:
    return set(df[col].astype(str).unique())


def _union(sets) -> set:
    return set().union(*sets)


def enrich_dask(ddf):
    """Add the path columns (:func:`spotkit.geo.geodesic.add_path_columns`) to every partition.

    Returns
    -------
    dask.dataframe.DataFrame
        Lazy; each partition solves its own distinct locator pairs once.
    """
    from spotkit.geo.geodesic import add_path_columns

    meta = add_path_columns(ddf._meta)
    return ddf.map_partitions(add_path_columns, meta=meta)


__all__ = [
    "dask_scheduler", "read_archive_dask", "coverage_dask", "enrich_dask",
    "ComparePartials", "receiver_partials", "combine_receivers", "reports_from_partials",
    "thresholds_from_partials", "outcome_partials", "compare_partials", "combine_compare",
    "finish_compare", "compare_dask",
]
