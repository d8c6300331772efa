"""The estimate over time: one row per band per look, with its fixed-time interval, its
confidence sequence, how the width has shrunk and the verdict of the stop rules.

:func:`estimate_now` turns the spots seen so far into rows (the comparison of
:func:`spotkit.compare.estimate.compare_antennas` by band, with the normal bootstrap interval
so that its SE is known); :func:`add_sequence` adds the sequence and the verdicts to a whole
history (a look depends only on the rows up to it); :func:`replay_run` replays a finished run
look by look ("when could I have stopped?").
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from scipy import stats

from spotkit import columns as C
from spotkit.compare.estimate import compare_antennas
from spotkit.errors import UsageError
from spotkit.monitor.sequence import confidence_sequence, se_for_width
from spotkit.monitor.stopping import hours_to_halfwidth, needed_halfwidth, stop_verdict

#: columns of a history, in order
HISTORY_COLUMNS = [C.HOURS, C.BAND, C.ROWS, C.PAIRS, C.CLUSTERS, C.EFFECTIVE_CLUSTERS,
                   C.B_MINUS_A, C.SE, C.SYSTEMATIC, C.CI_LOW, C.CI_HIGH, C.CS_LOW, C.CS_HIGH,
                   C.CS_WIDTH, C.WIDTH_SHRINK, C.HOURS_MORE, C.CAN_STOP, C.VERDICT]
#: fewest effective receivers (clusters, Kish) before a band gets a sequence and a verdict
MIN_CLUSTERS = 10
#: sequence tuned for this width when no target width is given [dB]
DEFAULT_TUNING_WIDTH_DB = 1.0


def data_hours(spots: pd.DataFrame) -> float:
    """Hours of data: from the first slot to the end of the last [h] (0 for no spots)."""
    if not len(spots):
        return 0.0
    slots = spots[C.SLOT]
    span = (slots.max() - slots.min()) / pd.Timedelta(hours=1)
    return float(span + C.SLOT_MINUTES / 60)


def effective_clusters(pairs: pd.DataFrame) -> pd.Series:
    """Effective number of clusters per band (Kish): ``n^2 / sum(n_c^2)`` with ``n_c`` the
    pairs of cluster (receiver) ``c``. Equal to the number of receivers when all report
    alike, far fewer when a few receivers carry most pairs.

    References
    ----------
    .. [1] L. Kish, Survey Sampling, Wiley, 1965 (the design-effect effective sample size).

    Examples
    --------
    >>> p = pd.DataFrame({"band": ["20m"] * 6 + ["10m"] * 4,
    ...                   "cluster": list("aaaabc") + list("wxyz")})
    >>> effective_clusters(p).round(2).to_dict()
    {'10m': 4.0, '20m': 2.0}
    """
    if not len(pairs):
        return pd.Series(dtype=float)
    n = pairs.groupby([pairs[C.BAND].astype(str), pairs[C.CLUSTER].astype(str)]).size()
    n = n[n > 0].astype(float)
    by = n.groupby(level=0)
    return (by.sum() ** 2 / (n**2).groupby(level=0).sum()).rename(C.EFFECTIVE_CLUSTERS)


def estimate_now(spots: pd.DataFrame, design, a: str, b: str | None = None, *,
                 hours: float | None = None, n_boot: int = 200, seed: int = 0,
                 confidence: float = 0.95, **compare_kw) -> pd.DataFrame:
    """Rows of one look: B - A per band with its SE [dB].

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table of the run so far.
    design, a, b, compare_kw
        As :func:`spotkit.compare.estimate.compare_antennas` (``by`` is ``"band"``, the
        interval ``"normal"``).
    hours : float, optional
        Hours of data [h]; from the slots when None.
    n_boot : int
        Bootstrap resamples of each look.
    seed : int
        Bootstrap seed (the same at every look, so a look is reproducible).
    confidence : float
        Coverage of the fixed-time interval.

    Returns
    -------
    pandas.DataFrame
        ``C.HOURS, C.BAND, C.ROWS, C.PAIRS, C.CLUSTERS, C.EFFECTIVE_CLUSTERS, C.B_MINUS_A,
        C.SE, C.SYSTEMATIC, C.CI_LOW, C.CI_HIGH``; SE is half the width of the statistical
        part of the normal bootstrap interval over ``z``. No row for a band without pairs.
    """
    hours = data_hours(spots) if hours is None else float(hours)
    compare_kw = dict(compare_kw)
    if compare_kw.pop("interval", "normal") != "normal":
        raise UsageError("each look uses the normal interval (the confidence sequence is "
                         "built on its SE): leave interval out")
    res = compare_antennas(spots, design, a, b, by="band", n_boot=n_boot, seed=seed,
                           confidence=confidence, interval="normal", **compare_kw)
    f = res.to_frame()
    f = f[f[C.BAND].notna()] if C.BAND in f else f.iloc[:0]
    z = stats.norm.ppf(0.5 + confidence / 2)
    bands = f[C.BAND].astype(str).to_numpy()
    out = pd.DataFrame({
        C.HOURS: hours, C.BAND: bands, C.ROWS: len(spots),
        C.PAIRS: f[C.PAIRS].to_numpy(), C.CLUSTERS: f[C.CLUSTERS].to_numpy(),
        C.EFFECTIVE_CLUSTERS: effective_clusters(res.pairs).reindex(bands).to_numpy(float),
        C.B_MINUS_A: f[C.B_MINUS_A].to_numpy(float),
        C.SE: ((f[C.CI_STAT_HIGH] - f[C.CI_STAT_LOW]) / (2 * z)).to_numpy(float),
        C.SYSTEMATIC: f[C.SYSTEMATIC].fillna(0.0).to_numpy(float),
        C.CI_LOW: f[C.CI_LOW].to_numpy(float), C.CI_HIGH: f[C.CI_HIGH].to_numpy(float)})
    return out[out[C.PAIRS] > 0].reset_index(drop=True)


def small_sample_factor(k_eff, confidence: float = 0.95):
    """``t_{k-1} / z`` quantile ratio that widens a cluster SE from few effective clusters.

    With few clusters a cluster bootstrap (or sandwich) SE is too small; using Student t
    quantiles with (clusters - 1) degrees of freedom is common practice [1]_. Here the
    effective number of clusters (:func:`effective_clusters`) stands for the clusters, which
    the coverage simulation (tests/monitor/test_coverage_sequence.py) needed when a few
    receivers carry most pairs.

    References
    ----------
    .. [1] A. C. Cameron and D. L. Miller, "A practitioner's guide to cluster-robust
       inference", J. Human Resources 50(2):317-372, 2015.

    Examples
    --------
    >>> small_sample_factor([10.0, 1000.0]).round(3).tolist()
    [1.154, 1.001]
    """
    k = np.maximum(np.asarray(k_eff, dtype=float) - 1, 1.0)
    q = 0.5 + confidence / 2
    return stats.t.ppf(q, k) / stats.norm.ppf(q)


def add_sequence(history: pd.DataFrame, *, confidence: float = 0.95, margin_db: float = 0.5,
                 target_width_db: float | None = None, max_hours: float | None = None,
                 min_clusters: int = MIN_CLUSTERS,
                 tuning_width_db: float | None = None) -> pd.DataFrame:
    """The confidence sequence, width shrink and verdict of every row of a history.

    Parameters
    ----------
    history : pandas.DataFrame
        Rows of :func:`estimate_now` (any number of looks and bands).
    confidence : float
        ``1 - alpha`` of the sequence.
    margin_db : float
        Smallest difference that matters [dB] (stop rule 2; 0 turns it off).
    target_width_db : float, optional
        Stop when the sequence is this narrow [dB]; also tunes the sequence.
    max_hours : float, optional
        The planned longest run [h]: at it, stop without a clear answer.
    min_clusters : int
        Fewest effective receivers (:func:`effective_clusters`) for a sequence; the SE is
        widened by :func:`small_sample_factor` of them.
    tuning_width_db : float, optional
        Width of the fixed-time interval at which the sequence is tightest [dB]
        (default: the target width, else :data:`DEFAULT_TUNING_WIDTH_DB`).

    Returns
    -------
    pandas.DataFrame
        ``history`` with ``C.CS_LOW, C.CS_HIGH, C.CS_WIDTH, C.WIDTH_SHRINK, C.HOURS_MORE,
        C.CAN_STOP, C.VERDICT`` (columns in :data:`HISTORY_COLUMNS` order).

    Examples
    --------
    >>> h = pd.DataFrame({"hours": [6.0, 12.0], "band": "20m", "rows": [900, 1800],
    ...                   "pairs": [300, 600], "clusters": [40, 55],
    ...                   "effective_clusters": [400.0, 550.0],
    ...                   "b_minus_a_db": [0.9, 1.0], "se_db": [0.4, 0.28],
    ...                   "systematic_db": 0.0, "ci_low_db": [0.12, 0.45],
    ...                   "ci_high_db": [1.68, 1.55]})
    >>> out = add_sequence(h)
    >>> out[["cs_low_db", "cs_high_db", "width_shrink"]].round(2).to_numpy().tolist()
    [[-0.35, 2.15, 1.0], [0.15, 1.85, 0.68]]
    >>> print(out["verdict"].iloc[-1])
    B is better on 20 m - you can stop (B-A +1.0 dB, sequence +0.1 to +1.9 dB)
    """
    width = tuning_width_db or target_width_db or DEFAULT_TUNING_WIDTH_DB
    se_tuned = se_for_width(width, confidence)
    h = history.reset_index(drop=True).copy()
    k_eff = h[C.EFFECTIVE_CLUSTERS].to_numpy(float)
    enough = (k_eff >= min_clusters) & np.isfinite(h[C.SE]) & (h[C.SE] > 0)
    se = h[C.SE] * small_sample_factor(k_eff, confidence)
    lo, hi = confidence_sequence(h[C.B_MINUS_A], se, se_tuned=se_tuned,
                                 confidence=confidence, systematic=h[C.SYSTEMATIC])
    h[C.CS_LOW] = np.where(enough, lo, np.nan)
    h[C.CS_HIGH] = np.where(enough, hi, np.nan)
    h[C.CS_WIDTH] = h[C.CS_HIGH] - h[C.CS_LOW]
    first = h.groupby(C.BAND, sort=False)[C.CS_WIDTH].transform(
        lambda w: w.dropna().iloc[0] if w.notna().any() else np.nan)
    h[C.WIDTH_SHRINK] = h[C.CS_WIDTH] / first
    need = needed_halfwidth(h[C.B_MINUS_A], margin_db=margin_db,
                            target_width_db=target_width_db)
    h[C.HOURS_MORE] = np.where(enough, hours_to_halfwidth(
        need, se, h[C.HOURS], se_tuned=se_tuned, confidence=confidence,
        systematic_db=h[C.SYSTEMATIC]), np.nan)
    stops, texts = [], []
    for row, ok in zip(h.itertuples(index=False), enough, strict=True):  # one per band+look
        r = row._asdict()
        too_few = None if ok else (f"too few receivers yet ({r[C.EFFECTIVE_CLUSTERS]:.0f} "
                                   f"effective < {min_clusters})")
        s, t = stop_verdict(r[C.BAND], r[C.B_MINUS_A], r[C.CS_LOW], r[C.CS_HIGH],
                            margin_db=margin_db, target_width_db=target_width_db,
                            hours_more=r[C.HOURS_MORE], too_few=too_few,
                            reached_cap=max_hours is not None and r[C.HOURS] >= max_hours)
        stops.append(s)
        texts.append(t)
    h[C.CAN_STOP] = np.array(stops, dtype=bool)
    h[C.VERDICT] = texts
    return h[HISTORY_COLUMNS]


def replay_run(spots: pd.DataFrame, design, a: str, b: str | None = None, *,
               step_hours: float = 1.0, start_hours: float | None = None, n_boot: int = 200,
               seed: int = 0, confidence: float = 0.95, margin_db: float = 0.5,
               target_width_db: float | None = None, max_hours: float | None = None,
               min_clusters: int = MIN_CLUSTERS, **compare_kw) -> pd.DataFrame:
    """A finished run replayed look by look: what the watch would have shown every
    ``step_hours`` ("when could I have stopped?").

    Parameters
    ----------
    spots : pandas.DataFrame
        The whole run (canonical spot table).
    design, a, b, compare_kw
        As :func:`estimate_now`.
    step_hours : float
        Hours between looks [h].
    start_hours : float, optional
        First look [h] (default ``step_hours``).
    n_boot, seed, confidence, margin_db, target_width_db, max_hours, min_clusters
        As :func:`estimate_now` and :func:`add_sequence`.

    Returns
    -------
    pandas.DataFrame
        The history (:data:`HISTORY_COLUMNS`), one row per band per look.

    Examples
    --------
    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.5, n_receivers=60, bands=("20m",), difference_db=3.0,
    ...                      seed=2)
    >>> h = replay_run(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", step_hours=4, n_boot=50)
    >>> h[["hours", "can_stop"]].round(1).to_numpy().tolist()
    [[4.0, True], [8.0, True], [11.8, True]]
    """
    if not (np.isfinite(step_hours) and step_hours > 0):
        raise UsageError(f"step_hours must be a positive number of hours, got {step_hours!r}")
    t0 = spots[C.SLOT].min()
    total = data_hours(spots)
    first = step_hours if start_hours is None else start_hours
    looks = np.arange(first, total + 1e-9, step_hours)
    if not len(looks) or looks[-1] < total - 1e-9:
        looks = np.append(looks, total)
    rows = []
    for end in looks:  # one comparison per look
        part = spots[spots[C.SLOT] < t0 + pd.Timedelta(hours=float(end))]
        if len(part):
            rows.append(estimate_now(part, design, a, b, hours=float(end), n_boot=n_boot,
                                     seed=seed, confidence=confidence, **compare_kw))
    if not rows:
        return pd.DataFrame(columns=HISTORY_COLUMNS)
    history = pd.concat(rows, ignore_index=True)
    return add_sequence(history, confidence=confidence, margin_db=margin_db,
                        target_width_db=target_width_db, max_hours=max_hours,
                        min_clusters=min_clusters)


__all__ = ["HISTORY_COLUMNS", "MIN_CLUSTERS", "DEFAULT_TUNING_WIDTH_DB", "data_hours",
           "effective_clusters", "small_sample_factor",
           "estimate_now", "add_sequence", "replay_run"]
