"""P(heard) of A and of B per distance bin, with intervals that resample far stations.

P(heard) is the fraction of a bin's pairs (slots in which the path to a far station was
open to at least one antenna) in which that antenna was heard
(:mod:`spotkit.compare.reach`). One far station contributes many pairs, and they are not
independent: its distance, its noise floor and its antenna make it hear an antenna often
or seldom. A Wilson interval counts every pair as an independent trial and is too narrow
when a few stations dominate a bin. Here the interval is a percentile cluster bootstrap
that resamples whole far stations (the pairs' ``C.CLUSTER``: receivers, transmitters in
the receive design) - the ratio estimator ``heard / pairs`` recomputed on each resample,
all bins from one set of weights ``W @ M`` (vectorised, no loop over resamples) - widened
where needed to the Wilson interval of the pairs, so that a bin heard in every pair does
not get a zero-width interval.

Known error: the percentile cluster bootstrap is too narrow with few stations in a bin
(under about 20; see :mod:`spotkit.stats.bootstrap`); a bin with a single station gets no
interval. The pairs' P(heard) is conditional on at least one antenna being heard (see
:mod:`spotkit.compare.reach`).

References
----------
.. [1] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
   s. 3.8 (cluster bootstrap). doi:10.1017/CBO9780511802843
.. [2] E. B. Wilson, "Probable inference, the law of succession, and statistical
   inference", JASA 22(158):209-212, 1927. doi:10.1080/01621459.1927.10502953
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_confidence
from spotkit.compare.grouping import DEFAULT_DISTANCE_EDGES, add_group_keys
from spotkit.errors import UsageError
from spotkit.stats.bootstrap import bootstrap_interval, cluster_bootstrap_weights
from spotkit.stats.paired import wilson_interval


def heard_probability(pairs: pd.DataFrame, *, distance_edges=DEFAULT_DISTANCE_EDGES,
                      by_band: bool = False, confidence: float = 0.95, n_boot: int = 1000,
                      seed: int = 0) -> pd.DataFrame:
    """P(heard) of A and of B per distance bin with a cluster-bootstrap interval.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (``C.HEARD_A``, ``C.HEARD_B``,
        ``C.DISTANCE``, ``C.BAND`` and ``C.CLUSTER``, or ``C.FAR_CALL`` as the cluster).
    distance_edges : sequence of float
        Bin edges [km].
    by_band : bool
        One block of bins per band.
    confidence : float
        Coverage of the intervals.
    n_boot : int
        Bootstrap resamples of the far stations.
    seed : int
        Seed of the resampling.

    Returns
    -------
    pandas.DataFrame
        Rows per [band,] bin (``C.DISTANCE_MIN``, ``C.DISTANCE_MAX`` [km]) and
        ``C.ANTENNA`` ("A", "B"): ``C.PAIRS``, ``C.HEARD``, ``C.CLUSTERS`` (far stations),
        ``C.P_HEARD``, ``C.P_HEARD_LOW``, ``C.P_HEARD_HIGH`` (NaN with fewer than two far
        stations).

    References
    ----------
    .. [1] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
       s. 3.8.

    Examples
    --------
    Ten far stations within 1,000 km, each with 20 pairs; B is heard in every pair, A by
    half the stations in all their pairs and by the other half in none. Counted as 200
    independent pairs P(heard A) = 0.5 would be known to about +-0.07; with ten stations
    it is known far less well:

    >>> far = np.repeat([f"Q2R{i}" for i in range(10)], 20)
    >>> pairs = pd.DataFrame({"cluster": far, "far_call": far, "band": "20m",
    ...                       "distance_km": 500.0, "heard_a": np.repeat(np.arange(10) < 5, 20),
    ...                       "heard_b": True})
    >>> t = heard_probability(pairs, distance_edges=(0, 1000), n_boot=2000, seed=1)
    >>> print(t[["antenna", "pairs", "heard", "clusters", "p_heard"]].to_string(index=False))
    antenna  pairs  heard  clusters  p_heard
          A    200    100        10      0.5
          B    200    200        10      1.0
    >>> a = t.iloc[0]
    >>> bool(a["p_heard_high"] - a["p_heard_low"] > 0.4)
    True
    """
    check_confidence(confidence)
    if int(n_boot) < 2:
        raise UsageError(f"n_boot must be at least 2, got {n_boot}")
    missing = [c for c in (C.HEARD_A, C.HEARD_B, C.DISTANCE) if c not in pairs.columns]
    if by_band and C.BAND not in pairs.columns:
        missing.append(C.BAND)
    if missing:
        raise UsageError("pairs lack column(s) " + ", ".join(missing)
                         + " - make them with spotkit.compare.pairing.pair_spots")
    cl_col = C.CLUSTER if C.CLUSTER in pairs.columns else C.FAR_CALL
    if cl_col not in pairs.columns:
        raise UsageError("pairs lack a cluster column (cluster or far_call)")
    cols = [C.DISTANCE, C.HEARD_A, C.HEARD_B] + ([C.BAND] if by_band else [])
    p = add_group_keys(pairs[cols], "distance", distance_edges=distance_edges)
    p[C.CLUSTER] = pairs[cl_col].astype(str).to_numpy()
    p = p.dropna(subset=[C.DISTANCE_MIN])
    keys = ([C.BAND] if by_band else []) + [C.DISTANCE_MIN, C.DISTANCE_MAX]
    if by_band:
        p[C.BAND] = p[C.BAND].astype(str)
    bin_code, bins = pd.factorize(pd.MultiIndex.from_frame(p[keys]), sort=True)
    cl_code, cl_names = pd.factorize(p[C.CLUSTER], sort=True)
    n_bins, n_cl = len(bins), len(cl_names)
    flat = cl_code * max(n_bins, 1) + bin_code
    size = n_cl * n_bins

    def matrix(weights):
        return np.bincount(flat, weights=weights, minlength=size).reshape(n_cl, n_bins)

    m_pairs = matrix(None)
    ha = p[C.HEARD_A].to_numpy(dtype=float)
    hb = p[C.HEARD_B].to_numpy(dtype=float)
    stations = (m_pairs > 0).sum(axis=0)
    w = (cluster_bootstrap_weights(n_cl, int(n_boot), np.random.default_rng(seed))
         .astype(float) if n_cl else np.zeros((int(n_boot), 0)))
    boot_pairs = w @ m_pairs
    out = []
    table = bins.to_frame(index=False)
    table.columns = keys
    for name, heard in (("A", ha), ("B", hb)):
        m_heard = matrix(heard)
        n = m_pairs.sum(axis=0)
        k = m_heard.sum(axis=0)
        with np.errstate(invalid="ignore", divide="ignore"):
            est = k / n
            rep = (w @ m_heard) / boot_pairs
        lo, hi = bootstrap_interval(rep, est, confidence)
        wlo, whi = wilson_interval(k, n, confidence)
        few = stations < 2
        t = table.copy()
        t[C.ANTENNA] = name
        t[C.PAIRS] = n.astype(np.int64)
        t[C.HEARD] = k.astype(np.int64)
        t[C.CLUSTERS] = stations.astype(np.int64)
        t[C.P_HEARD] = est
        t[C.P_HEARD_LOW] = np.where(few, np.nan, np.fmin(np.atleast_1d(lo), wlo))
        t[C.P_HEARD_HIGH] = np.where(few, np.nan, np.fmax(np.atleast_1d(hi), whi))
        out.append(t)
    return pd.concat(out, ignore_index=True).sort_values(
        keys + [C.ANTENNA], kind="stable").reset_index(drop=True)


__all__ = ["heard_probability"]
