"""B minus A as a smooth curve of the hop-geometry elevation angle, per band.

Besides the elevation bins of :mod:`spotkit.compare.grouping`, a curve: at each angle
``e0`` of a grid, the censored fit of :mod:`spotkit.compare.estimate` (detection model with
whole-dB intervals, both-heard pairs in both conditional likelihoods, missed-report
shares; normal tails) with every pair weighted by a Gaussian kernel ``exp(-(e -
e0)^2 / (2 h^2))`` of its elevation angle ``e`` - a local-likelihood smoother (local
constant) [1]_. The pairs are first compressed into 1-degree elevation bins
(:func:`spotkit.compare.grouping.summarise_pairs`), so the curve costs one batch fit per
grid point whatever the number of pairs. The band around it is the percentile cluster
bootstrap (receivers resampled, transmitters in the receive design), pointwise: it holds
at each angle, not along the whole curve at once. Every grid point is refitted on the same
resamples, so the replicates are joint and a second band, simultaneous along each band's
curve (over the grid points that have a band), comes from the max-statistic method
(:func:`spotkit.stats.simultaneous.max_t`): ``C.CI_SIM_LOW`` / ``C.CI_SIM_HIGH``. Its
width depends on the grid (more, closer points: a little wider; neighbouring points
within the bandwidth are strongly correlated, so far less than Bonferroni).

Known error: a local-constant smoother flattens peaks and troughs narrower than about
the bandwidth ``h`` (default 3 degrees) and is biased at the ends of the data's range
(the kernel sees one side only); where the kernel-weighted number of pairs is below
``min_pairs`` no point is given. The elevation angle itself is a model (one reflection
height, mirror hops), so the curve is B - A against *that* angle.

References
----------
.. [1] R. Tibshirani and T. Hastie, "Local likelihood estimation", JASA 82(398):559-567,
   1987 (citation from memory).
.. [2] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
   s. 3.8 (cluster bootstrap).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit import stats
from spotkit._validate import check_confidence
from spotkit.compare.estimate import MIN_CLUSTERS, PAIRED_EXACT_WEIGHT, default_detection
from spotkit.compare.grouping import summarise_pairs
from spotkit.errors import NoPairsError, UsageError

_CODE = {"both": 0, "only_a": 1, "only_b": -1}

#: columns of :func:`elevation_curve`
CURVE_COLUMNS = [C.BAND, C.ELEVATION, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.CI_SIM_LOW,
                 C.CI_SIM_HIGH, C.PAIRS, C.CLUSTERS, C.NOTE]


def elevation_curve(pairs: pd.DataFrame, *, grid_deg=None, bandwidth_deg: float = 3.0,
                    by_band: bool = True, layer_height_km: float = 300.0,
                    n_boot: int = 200, seed: int = 0, confidence: float = 0.95,
                    min_pairs: int = 50) -> pd.DataFrame:
    """B minus A [dB] against elevation angle [deg], smoothed, with a bootstrap band.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (a paired design).
    grid_deg : sequence of float, optional
        Angles of the curve [deg]; default every degree over the data's range.
    bandwidth_deg : float
        Kernel standard deviation ``h`` [deg].
    by_band : bool
        One curve per band (default) or one over all bands.
    layer_height_km : float
        Reflection height of the hop geometry [km].
    n_boot : int
        Cluster bootstrap resamples.
    seed : int
        Seed of the resampling.
    confidence : float
        Pointwise coverage of the band.
    min_pairs : int
        Fewest kernel-weighted pairs for a point of the curve.

    Returns
    -------
    pandas.DataFrame
        :data:`CURVE_COLUMNS`: ``C.BAND`` ("all" with ``by_band=False``), ``C.ELEVATION``
        [deg], ``C.B_MINUS_A``, ``C.CI_LOW``, ``C.CI_HIGH`` [dB] (pointwise percentile
        band), ``C.CI_SIM_LOW``, ``C.CI_SIM_HIGH`` [dB] (band simultaneous over the band's
        grid points, max-T), ``C.PAIRS`` (kernel-weighted
        pairs), ``C.CLUSTERS`` (clusters with pairs within 2 h), ``C.NOTE``. A point
        carried by fewer than :data:`spotkit.compare.estimate.MIN_CLUSTERS` clusters gets
        its estimate but no band (too few units to resample), and a note.

    Examples
    --------
    A vertical (A) against a dipole (B) on 20 m: the dipole's advantage grows with the
    elevation angle:

    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.pairing import pair_spots
    >>> sim = simulate_spots(days=0.5, n_receivers=120, bands=("20m",), seed=4)
    >>> pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
    >>> curve = elevation_curve(pairs, grid_deg=[5, 20], n_boot=50)
    >>> bool(curve["b_minus_a_db"].iloc[1] > curve["b_minus_a_db"].iloc[0])
    True
    """
    edges = np.arange(0.0, 91.0, 1.0)
    return _kernel_curve(pairs, "elevation", dict(elevation_edges=edges,
                                                  layer_height_km=layer_height_km),
                         C.ELEVATION_MIN, C.ELEVATION_MAX, C.ELEVATION, False, grid_deg,
                         bandwidth_deg, by_band, n_boot, seed, confidence, min_pairs)


def _kernel_curve(pairs, key, group_opts, lo_col, hi_col, out_col, circular, grid_deg,
                  bandwidth_deg, by_band, n_boot, seed, confidence, min_pairs):
    """The kernel-weighted censored fit over the 1-degree (or 5-degree) bins of ``key``."""
    check_confidence(confidence)
    if not (np.isfinite(bandwidth_deg) and bandwidth_deg > 0):
        raise UsageError(f"bandwidth_deg must be a positive number of degrees, got "
                         f"{bandwidth_deg!r}")
    if int(n_boot) < 2:
        raise UsageError(f"n_boot must be at least 2, got {n_boot}")
    keys = ("band", key) if by_band else (key,)
    counts = summarise_pairs(pairs, keys, **group_opts)
    counts = counts[counts[C.KIND].astype(str).isin(list(_CODE))]
    if not len(counts):
        raise NoPairsError(f"no pairs to draw a {key} curve from")
    det = dict(default_detection())
    if pairs.attrs.get("detection"):
        det.update(pairs.attrs["detection"])
    kind = counts[C.KIND].astype(str).map(_CODE).to_numpy(dtype=np.int64)
    value = counts[C.VALUE].to_numpy(dtype=float)
    cnt = counts[C.COUNT].to_numpy(dtype=float)
    whole = det.get("whole_db")
    if whole is None:
        both = kind == 0
        whole = bool(np.all(np.abs(value[both] - np.round(value[both])) < 1e-6))
    kw = dict(half_width_db=0.5 if whole else 0.0, tau_db=float(det["tau_db"]), missed=True,
              exact_weight=PAIRED_EXACT_WEIGHT)
    centre = ((counts[lo_col].to_numpy(dtype=float)
               + counts[hi_col].to_numpy(dtype=float)) / 2)
    cl_names = np.asarray(sorted(counts[C.CLUSTER].astype(str).unique()))
    cl = pd.Index(cl_names).get_indexer(counts[C.CLUSTER].astype(str))
    W = stats.cluster_bootstrap_weights(cl_names.size, int(n_boot),
                                        np.random.default_rng(seed)).astype(float)
    band = counts[C.BAND].astype(str).to_numpy() if by_band else np.full(len(counts), "all")
    rows = []
    for b in pd.unique(band):
        joint = {}  # row index -> that grid point's replicates
        sel = band == b
        v, k, t, e, c = value[sel], kind[sel], cnt[sel], centre[sel], cl[sel]
        if grid_deg is not None:
            grid = np.asarray(grid_deg, dtype=float)
        elif circular:
            grid = np.arange(0.0, 360.0, 5.0)
        else:
            grid = np.arange(np.floor(e.min()), np.ceil(e.max()) + 1.0)
        dist = e[None, :] - grid[:, None]
        if circular:  # shortest way round [deg]
            dist = (dist + 180.0) % 360.0 - 180.0
        K = np.exp(-0.5 * (dist / bandwidth_deg) ** 2)
        wt = K * t[None, :]
        n_eff = wt.sum(axis=1)
        fit = stats.interval_censored_mle_batch(v, k, wt, **kw)
        for g, e0 in enumerate(grid):
            near = np.abs(dist[g]) <= 2 * bandwidth_deg
            row = {C.BAND: b, out_col: float(e0), C.B_MINUS_A: np.nan, C.CI_LOW: np.nan,
                   C.CI_HIGH: np.nan, C.CI_SIM_LOW: np.nan, C.CI_SIM_HIGH: np.nan,
                   C.PAIRS: float(n_eff[g]),
                   C.CLUSTERS: int(np.unique(c[near]).size), C.NOTE: ""}
            if n_eff[g] < min_pairs or not np.isfinite(fit["mu"][g]):
                row[C.NOTE] = "too few pairs" if n_eff[g] < min_pairs else "no estimate"
            elif row[C.CLUSTERS] < MIN_CLUSTERS:
                row[C.B_MINUS_A] = float(fit["mu"][g])
                row[C.NOTE] = f"only {row[C.CLUSTERS]} clusters near this angle: no band"
            else:
                mu_b = stats.interval_censored_mle_batch(v, k, W[:, c] * wt[g][None, :],
                                                         **kw)["mu"]
                lo, hi = stats.bootstrap_interval(mu_b, fit["mu"][g], confidence)
                row.update({C.B_MINUS_A: float(fit["mu"][g]), C.CI_LOW: lo, C.CI_HIGH: hi})
                joint[len(rows)] = mu_b
            rows.append(row)
        if joint:  # the band simultaneous along this band's curve (max-T, joint resamples)
            at = list(joint)
            mt = stats.max_t([rows[i][C.B_MINUS_A] for i in at],
                             np.column_stack([joint[i] for i in at]), confidence)
            for j, i in enumerate(at):
                rows[i][C.CI_SIM_LOW] = float(mt["low"][j])
                rows[i][C.CI_SIM_HIGH] = float(mt["high"][j])
    cols = [out_col if x == C.ELEVATION else x for x in CURVE_COLUMNS]
    return pd.DataFrame(rows, columns=cols)


def bearing_curve(pairs: pd.DataFrame, *, grid_deg=None, bandwidth_deg: float = 15.0,
                  by_band: bool = True, n_boot: int = 200, seed: int = 0,
                  confidence: float = 0.95, min_pairs: int = 50) -> pd.DataFrame:
    """B minus A [dB] against the bearing [deg] towards the far station, smoothed round the
    circle, with a pointwise bootstrap band: the band x bearing polar surface.

    The same fit as :func:`elevation_curve` with the kernel on the shortest angular
    distance (pairs first compressed into 5-degree bearing sectors).

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (a paired design).
    grid_deg : sequence of float, optional
        Bearings of the curve [deg clockwise from true north]; default every 5 degrees.
    bandwidth_deg : float
        Kernel standard deviation [deg].
    by_band, n_boot, seed, confidence, min_pairs
        As in :func:`elevation_curve`.

    Returns
    -------
    pandas.DataFrame
        As :func:`elevation_curve` with ``C.BEARING`` [deg] in place of ``C.ELEVATION``.

    Examples
    --------
    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.pairing import pair_spots
    >>> sim = simulate_spots(days=0.5, n_receivers=120, bands=("20m",), seed=4)
    >>> pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
    >>> curve = bearing_curve(pairs, grid_deg=[0, 90, 180, 270], n_boot=30)
    >>> curve["bearing_deg"].tolist()
    [0.0, 90.0, 180.0, 270.0]
    """
    return _kernel_curve(pairs, "bearing", dict(bearing_width_deg=5.0), C.BEARING_MIN,
                         C.BEARING_MAX, C.BEARING, True, grid_deg, bandwidth_deg, by_band,
                         n_boot, seed, confidence, min_pairs)


__all__ = ["CURVE_COLUMNS", "elevation_curve", "bearing_curve"]
