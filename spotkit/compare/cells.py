"""Intervals for small cells (one receiver, one locator square): blocks of hours as clusters.

The cluster bootstrap of :mod:`spotkit.compare.estimate` resamples whole receivers
(transmitters in the receive design), because one receiver's reports share its noise
floor, antenna and paths. A group held by one receiver (``by="receiver"``) has a single
cluster; :func:`spotkit.compare.estimate.estimate_groups` then resamples its pairs as if
independent, and a difference map marked every one of 140 receivers of a three-day run
significant. A locator square with two or three receivers is little better: a bootstrap
over three units cannot show their spread.

Here such groups are re-estimated with a different cluster key, not a different fit: in a
group carried by fewer than ``min_clusters`` receivers each receiver's pairs are cut into
blocks of ``block_hours`` (counted from 00:00 UTC) and the blocks are the clusters, so the
interval resamples stretches of time within the receiver (fading, propagation and the
receiver's conditions change slowly within a block and are shared by its pairs). Groups
with enough receivers keep their estimates. Benjamini-Hochberg is redone over all groups.

Known error: the interval is conditional on the cell's receivers (it says how well that
receiver's B - A is known, not how another receiver in the square would see it); blocks
are taken as exchangeable although propagation follows the time of day, and correlation
that outlasts a block (a receiver's antenna, days of similar conditions) is not
resampled, so with short blocks the interval is still somewhat narrow. A receiver with
fewer than :data:`spotkit.compare.estimate.MIN_CLUSTERS` blocks gets no verdict.

References
----------
.. [1] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
   s. 3.8 (cluster bootstrap) and s. 8.2 (block resampling of dependent data).
   doi:10.1017/CBO9780511802843
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.compare.estimate import MIN_CLUSTERS, RESULT_COLUMNS, estimate_groups
from spotkit.compare.grouping import add_group_keys, group_columns, summarise_pairs
from spotkit.errors import UsageError
from spotkit.stats.paired import benjamini_hochberg

#: default length of the time blocks resampled within a receiver [h]
DEFAULT_BLOCK_HOURS = 6.0

_GROUP_OPTIONS = ("distance_edges", "bearing_width_deg", "hour", "elevation_edges",
                  "layer_height_km")


def block_clusters(pairs: pd.DataFrame, by=(), *, block_hours: float = DEFAULT_BLOCK_HOURS,
                   min_clusters: int = MIN_CLUSTERS, **group_options) -> pd.Series:
    """The cluster key of each pair: its receiver, or receiver and time block in groups
    carried by fewer than ``min_clusters`` receivers.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (``C.CLUSTER``, ``C.SLOT`` and the
        columns the group keys need).
    by : str or sequence of str
        Group keys (:func:`spotkit.compare.grouping.add_group_keys`).
    block_hours : float
        Length of the blocks [h], counted from 00:00 UTC.
    min_clusters : int
        Groups with at least this many receivers keep receivers as clusters.
    **group_options
        Passed to :func:`spotkit.compare.grouping.add_group_keys`.

    Returns
    -------
    pandas.Series of str
        Same index as ``pairs``: ``"Q2XY"`` or ``"Q2XY@2024-03-01T06"`` (receiver @ block
        start, UTC).

    Examples
    --------
    One receiver heard over two 6-hour blocks, grouped by receiver:

    >>> pairs = pd.DataFrame({
    ...     "cluster": ["Q2XY", "Q2XY", "Q2XY"], "far_call": ["Q2XY"] * 3,
    ...     "slot_utc": pd.to_datetime(["2024-03-01 01:00", "2024-03-01 05:58",
    ...                                 "2024-03-01 06:02"], utc=True)})
    >>> block_clusters(pairs, "receiver").tolist()
    ['Q2XY@2024-03-01T00', 'Q2XY@2024-03-01T00', 'Q2XY@2024-03-01T06']
    >>> block_clusters(pairs, "receiver", min_clusters=1).tolist()
    ['Q2XY', 'Q2XY', 'Q2XY']
    """
    h = float(block_hours)
    if not (np.isfinite(h) and h * 60 >= C.SLOT_MINUTES):
        raise UsageError(f"block_hours must be at least one slot ({C.SLOT_MINUTES} min), got "
                         f"{block_hours!r}")
    cl = pairs[C.CLUSTER].astype(str)
    if by:
        df = add_group_keys(pairs, by, **group_options)
        gcols = group_columns(by)
        n_rx = df.groupby(gcols, observed=True, dropna=True)[C.CLUSTER].transform("nunique")
        few = (n_rx < min_clusters).fillna(False).to_numpy(dtype=bool)
    else:
        few = np.full(len(pairs), cl.nunique() < min_clusters)
    slot = pd.to_datetime(pairs[C.SLOT], utc=True)
    block = slot.dt.floor(f"{int(round(h * 60))}min")
    keyed = cl + "@" + block.dt.strftime("%Y-%m-%dT%H")
    return pd.Series(np.where(few, keyed, cl), index=pairs.index, name=C.CLUSTER)


def estimate_cells(result, *, block_hours: float = DEFAULT_BLOCK_HOURS,
                   min_clusters: int = MIN_CLUSTERS) -> pd.DataFrame:
    """A comparison's groups, with time blocks as clusters where few receivers carry a group.

    Parameters
    ----------
    result : ComparisonResult
        From :func:`spotkit.compare.estimate.compare_antennas` with ``by`` including
        ``"receiver"``, ``"square"`` or ``"field"`` (any ``by`` works). Its options (``n_boot``,
        ``seed``, ``confidence``, ``min_pairs``, bin edges...) are reused.
    block_hours : float
        Length of the blocks resampled within a receiver [h].
    min_clusters : int
        Groups with at least this many receivers keep their estimates.

    Returns
    -------
    pandas.DataFrame
        ``result.groups`` with the groups of fewer than ``min_clusters`` receivers
        re-estimated (:data:`spotkit.compare.estimate.RESULT_COLUMNS`; ``C.CLUSTERS`` then
        counts receiver-blocks, and ``C.METHOD`` says so), ``C.P_ADJUSTED`` redone over all
        groups. ``attrs["block_hours"]`` and ``attrs["reestimated"]`` (number of groups).
        Before/after comparisons are returned unchanged (they resample days already).

    Examples
    --------
    A short simulated run, one estimate per receiver: each receiver's interval now comes
    from its 2-hour blocks (the run lasts about 7 hours, so at most 4 blocks each - too
    few for a verdict):

    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.estimate import compare_antennas
    >>> sim = simulate_spots(days=0.3, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> res = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=50,
    ...                        by="receiver", min_pairs=10)
    >>> cells = estimate_cells(res, block_hours=2)
    >>> int(cells["clusters"].max()) <= 4, int(res.groups["clusters"].max())
    (True, 1)
    """
    groups = result.groups.copy()
    opts = result.options
    if result.design == "before-after" or not len(groups) or result.pairs is None:
        groups.attrs.update(block_hours=None, reestimated=0)
        return groups
    keys = tuple(result.by)
    gopts = {k: opts[k] for k in _GROUP_OPTIONS if k in opts}
    pairs = result.pairs
    key = block_clusters(pairs, keys, block_hours=block_hours, min_clusters=min_clusters,
                         **gopts)
    blocked = key.str.contains("@", regex=False).to_numpy()
    if not blocked.any():
        groups.attrs.update(block_hours=float(block_hours), reestimated=0)
        return groups
    sub = pairs.loc[blocked].copy()
    sub[C.CLUSTER] = key[blocked].to_numpy()
    counts = summarise_pairs(sub, keys, day_hours=opts.get("day_hours", 24.0), **gopts)
    label = "transmitter" if result.design == "receive" else "receiver"
    est = estimate_groups(
        counts, n_boot=int(opts.get("n_boot", 1000)), seed=int(opts.get("seed", 0)),
        confidence=float(opts.get("confidence", 0.95)),
        min_pairs=int(opts.get("min_pairs", 30)),
        cluster_label=f"{float(block_hours):g}-h blocks of a {label}",
        threshold_correction=opts.get("threshold_correction", "none"),
        missed_reports=opts.get("missed_reports", "fit"), model="pooled")
    # the blocks are resampling units, not receivers: the cell keeps the receiver shift of
    # its receivers (NaN with one receiver), the blocks' pooled fit and interval move by it
    gcols = group_columns(keys)
    g_idx = pd.MultiIndex.from_frame(groups[gcols].astype(object))
    e_idx = pd.MultiIndex.from_frame(est[gcols].astype(object))
    pos = e_idx.get_indexer(g_idx)
    rows = np.flatnonzero(pos >= 0)
    if C.RECEIVER_SHIFT in groups:
        shift = groups[C.RECEIVER_SHIFT].to_numpy(dtype=float)[rows]
        shift = np.where(np.isfinite(shift), shift, 0.0)
        est = est.copy()
        for c in (C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.CI_STAT_LOW, C.CI_STAT_HIGH):
            v = est[c].to_numpy(dtype=float).copy()
            v[pos[rows]] += shift
            est[c] = v
    cols = [c for c in RESULT_COLUMNS if c in est.columns and c != C.RECEIVER_SHIFT]
    for c in cols:
        vals = groups[c].to_numpy().copy()
        new = est[c].to_numpy()[pos[rows]]
        if vals.dtype != new.dtype and vals.dtype != object:
            vals = vals.astype(np.result_type(vals.dtype, new.dtype))
        vals[rows] = new
        groups[c] = vals
    groups[C.P_ADJUSTED] = benjamini_hochberg(groups[C.P_VALUE].to_numpy(dtype=float))
    groups.attrs.update(block_hours=float(block_hours), reestimated=int(rows.size))
    return groups


__all__ = ["DEFAULT_BLOCK_HOURS", "block_clusters", "estimate_cells"]
