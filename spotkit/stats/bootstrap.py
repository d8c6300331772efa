"""The cluster bootstrap: resampling weights of whole clusters, intervals and p-values.

Estimates from paired reports are correlated within a receiver (and within a day), so their
uncertainty comes from resampling whole clusters (:func:`cluster_bootstrap_weights` gives
the multinomial counts; a statistic with per-cluster count matrix ``M`` has bootstrap
weights ``W @ M``). :func:`stratified_bootstrap_weights` resamples units within strata
(days within the periods of a before/after run), ``n - 1`` of ``n`` with rescaled weights;
two crossed resamplings (receivers and days) combine by multiplying their weights per
observation (the "pigeonhole" bootstrap of Owen 2007). :func:`bootstrap_interval` turns
replicates into percentile, basic or normal intervals and :func:`bootstrap_p_value` into a
normal-approximation p-value.

Known error: the bootstrap interval's coverage is only asymptotically nominal; with few
clusters (under about 20) percentile intervals are too narrow, and the p-value assumes a
normal sampling distribution. Replicates that failed (NaN) are left out, which biases the
interval if failures depend on the data.

References
----------
A. C. Davison, D. V. Hinkley, *Bootstrap Methods and their Application*, Cambridge
University Press, 1997, sec. 3.8 (clusters) and 5.2-5.3 (intervals).
doi:10.1017/CBO9780511802843
B. Efron, R. J. Tibshirani, *An Introduction to the Bootstrap*, Chapman & Hall, 1993, ch. 16.
J. N. K. Rao, C. F. J. Wu, "Resampling inference with complex survey data", JASA
83(401):231-241, 1988 (citation from memory).
A. B. Owen, "The pigeonhole bootstrap", Annals of Applied Statistics 1(2):386-411, 2007.
doi:10.1214/07-AOAS122 (citation from memory)
"""
from __future__ import annotations

from typing import Literal

import numpy as np
from scipy import stats

from spotkit._validate import check_choice, check_confidence
from spotkit.errors import UsageError

IntervalMethod = Literal["percentile", "basic", "normal"]

INTERVAL_METHODS = ("percentile", "basic", "normal")
Draws = Literal["n-1", "n"]
DRAWS = ("n-1", "n")


# --------------------------------------------------------------------------- bootstrap
def cluster_bootstrap_weights(n_clusters: int, n_boot: int, rng=None) -> np.ndarray:
    """Resampling counts of whole clusters: each row is one multinomial draw.

    Row ``b`` says how often each cluster appears in bootstrap sample ``b``
    (``n_clusters`` clusters drawn with replacement), so a statistic with per-cluster
    count matrix ``M`` (clusters x values) has bootstrap weights ``W @ M``.

    Parameters
    ----------
    n_clusters : int
        Number of clusters (e.g. receiver x day).
    n_boot : int
        Number of bootstrap samples.
    rng : numpy.random.Generator or int or None
        Random generator or seed.

    Returns
    -------
    numpy.ndarray of int, shape (n_boot, n_clusters)

    References
    ----------
    .. [1] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application,
       Cambridge University Press, 1997, s. 3.8. doi:10.1017/CBO9780511802843

    Examples
    --------
    Every row draws all five clusters (the draws themselves depend on the generator):

    >>> w = cluster_bootstrap_weights(5, n_boot=4, rng=1)
    >>> w.shape, w.sum(axis=1).tolist()
    ((4, 5), [5, 5, 5, 5])

    With a count matrix of five clusters by two distinct values, ``w @ M`` gives each
    bootstrap sample's weight of each value:

    >>> m = np.array([[2, 0], [1, 1], [0, 3], [1, 0], [0, 1]])
    >>> (w @ m).shape
    (4, 2)
    """
    if int(n_clusters) != n_clusters or n_clusters < 1:
        raise UsageError(f"n_clusters must be a positive integer, got {n_clusters}")
    if int(n_boot) != n_boot or n_boot < 1:
        raise UsageError(f"n_boot must be a positive integer, got {n_boot}")
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    n_clusters = int(n_clusters)
    return gen.multinomial(n_clusters, np.full(n_clusters, 1.0 / n_clusters),
                           size=int(n_boot)).astype(np.int64)


def stratified_bootstrap_weights(strata, n_boot: int, rng=None, *,
                                 draws: Draws = "n-1") -> np.ndarray:
    """Resampling weights of units drawn with replacement within strata.

    For example days within each period of a before/after run: the days before the change
    are resampled among themselves, the days after among themselves. In a stratum of
    ``n`` units each row draws ``m`` units with replacement and weights each unit by
    ``n / m`` times the number of times it was drawn, so a stratum's weights sum to ``n``.
    With ``draws="n-1"`` (``m = n - 1``) the bootstrap variance of a stratum mean is
    ``s^2 / n`` with ``s^2`` the unbiased sample variance (the plain ``m = n`` bootstrap
    gives ``(n - 1) / n`` of it, which matters with a handful of days); this is the
    rescaling bootstrap of Rao and Wu [1]_ for ``n - 1`` draws (also McCarthy and
    Snowden [2]_). A stratum of one unit gets weight 1 in every row: its variation cannot
    be estimated from the data.

    Parameters
    ----------
    strata : array_like, shape (n_units,)
        Stratum label of each unit (any hashable values).
    n_boot : int
        Number of bootstrap samples.
    rng : numpy.random.Generator or int or None
        Random generator or seed.
    draws : {"n-1", "n"}
        Units drawn per stratum and row.

    Returns
    -------
    numpy.ndarray of float, shape (n_boot, n_units)

    References
    ----------
    .. [1] J. N. K. Rao and C. F. J. Wu, "Resampling inference with complex survey data",
       JASA 83(401):231-241, 1988. doi:10.1080/01621459.1988.10478591 (citation from
       memory)
    .. [2] P. J. McCarthy and C. B. Snowden, "The bootstrap and finite population
       sampling", Vital and Health Statistics 2(95), NCHS, 1985 (citation from memory).

    Examples
    --------
    Three days before a change, four after, and one day in a period of its own: each
    period's weights sum to its number of days, and the lone day keeps weight 1:

    >>> days = ["before"] * 3 + ["after"] * 4 + ["other"]
    >>> w = stratified_bootstrap_weights(days, n_boot=3, rng=1)
    >>> w.shape
    (3, 8)
    >>> w[:, :3].sum(axis=1).tolist(), w[:, 3:7].sum(axis=1).tolist(), w[:, 7].tolist()
    ([3.0, 3.0, 3.0], [4.0, 4.0, 4.0], [1.0, 1.0, 1.0])

    With ``n - 1`` draws in a stratum of 4, a drawn day weighs 4/3:

    >>> sorted(set(np.round(w[:, 3:7].ravel() * 3).tolist()) - {0.0})[0]
    4.0
    """
    check_choice(draws, DRAWS, "draws")
    if int(n_boot) != n_boot or n_boot < 1:
        raise UsageError(f"n_boot must be a positive integer, got {n_boot}")
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    code = np.unique(np.asarray(strata).ravel(), return_inverse=True)[1].ravel()
    out = np.ones((int(n_boot), code.size))
    for s in range(int(code.max()) + 1 if code.size else 0):
        idx = np.flatnonzero(code == s)
        n = idx.size
        if n < 2:
            continue
        m = n - 1 if draws == "n-1" else n
        out[:, idx] = gen.multinomial(m, np.full(n, 1.0 / n), size=int(n_boot)) * (n / m)
    return out


def _nan_sd(r):
    """SD (ddof=1) along axis 0 of the finite entries; NaN with fewer than two."""
    ok = np.isfinite(r)
    n = ok.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        m = np.where(ok, r, 0.0).sum(axis=0) / n
        ss = np.where(ok, (r - m) ** 2, 0.0).sum(axis=0)
        return np.where(n >= 2, np.sqrt(ss / (n - 1)), np.nan)


def bootstrap_interval(replicates, estimate, confidence: float = 0.95,
                       method: IntervalMethod = "percentile"):
    """Confidence interval from bootstrap replicates.

    NaN replicates (fits without a maximum) are left out.

    Parameters
    ----------
    replicates : array_like, shape (n_boot,) or (n_boot, G)
        Bootstrap replicates of the estimate (one column per group).
    estimate : float or array_like, shape (G,)
        The estimate on the original data.
    confidence : float
        Nominal coverage in (0, 1).
    method : {"percentile", "basic", "normal"}
        "percentile": the ``(1 -+ confidence)/2`` quantiles of the replicates;
        "basic": ``2 * estimate`` minus those quantiles, reversed;
        "normal": ``estimate -+ z se`` with the bootstrap SE.

    Returns
    -------
    (low, high) : float or numpy.ndarray
        Same unit as the estimate.

    References
    ----------
    .. [1] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
       s. 5.2-5.3.

    Examples
    --------
    101 evenly spread replicates from 0 to 2 dB: their 2.5 % and 97.5 % quantiles are
    0.05 and 1.95 dB; the basic interval reflects them about the estimate:

    >>> replicates = np.linspace(0.0, 2.0, 101)
    >>> low, high = bootstrap_interval(replicates, 1.2)
    >>> round(low, 3), round(high, 3)
    (0.05, 1.95)
    >>> low, high = bootstrap_interval(replicates, 1.2, method="basic")
    >>> round(low, 3), round(high, 3)
    (0.45, 2.35)
    >>> low, high = bootstrap_interval(replicates, 1.2, method="normal")
    >>> round(low, 3), round(high, 3)
    (0.051, 2.349)

    One column per group; a group whose replicates all failed gets NaN:

    >>> both = np.column_stack([replicates, np.full(101, np.nan)])
    >>> low, high = bootstrap_interval(both, [1.0, 0.5])
    >>> low.round(3).tolist(), high.round(3).tolist()
    ([0.05, nan], [1.95, nan])
    """
    check_choice(method, INTERVAL_METHODS, "method")
    check_confidence(confidence)
    r = np.asarray(replicates, dtype=float)
    est = np.asarray(estimate, dtype=float)
    if r.ndim not in (1, 2) or r.shape[0] == 0:
        raise UsageError(f"replicates must have shape (n_boot,) or (n_boot, G), n_boot >= 1;"
                         f" got {r.shape}")
    a = (1 - confidence) / 2
    with np.errstate(invalid="ignore"):
        n_fin = np.sum(np.isfinite(r), axis=0)
        all_nan = n_fin < (2 if method == "normal" else 1)
        rr = np.where(all_nan, 0.0, r)  # avoid the all-NaN warning; result masked below
        if method == "normal":
            z = stats.norm.ppf(1 - a)
            se = _nan_sd(rr)
            low, high = est - z * se, est + z * se
        else:
            q_lo, q_hi = np.nanquantile(rr, [a, 1 - a], axis=0)
            low, high = (q_lo, q_hi) if method == "percentile" else (2 * est - q_hi,
                                                                      2 * est - q_lo)
    low = np.where(all_nan | np.isnan(est), np.nan, low)
    high = np.where(all_nan | np.isnan(est), np.nan, high)
    if np.ndim(low) == 0:
        return float(low), float(high)
    return low, high


def bootstrap_p_value(replicates, estimate):
    """Two-sided p-value for "true value = 0" from the bootstrap standard error.

    ``p = 2 Phi(-|estimate| / se)`` with ``se`` the SD (ddof=1) of the finite replicates:
    a normal approximation to the estimator's sampling distribution, good when the
    replicates look normal; NaN when the SE is zero or undefined.

    Parameters
    ----------
    replicates : array_like, shape (n_boot,) or (n_boot, G)
        Bootstrap replicates.
    estimate : float or array_like, shape (G,)
        The estimate.

    Returns
    -------
    float or numpy.ndarray

    References
    ----------
    .. [1] B. Efron and R. J. Tibshirani, An Introduction to the Bootstrap, Chapman & Hall,
       1993, ch. 16.

    Examples
    --------
    An estimate of 1.2 dB with a bootstrap SE of 0.5025 dB: ``z = 2.39``, ``p = 2 Phi(-z)``:

    >>> replicates = np.array([0.7, 1.7] * 50)
    >>> round(float(np.std(replicates, ddof=1)), 4)
    0.5025
    >>> round(bootstrap_p_value(replicates, 1.2), 4)
    0.0169
    >>> bootstrap_p_value(np.column_stack([replicates, replicates]), [0.0, 1.2]).round(4).tolist()
    [1.0, 0.0169]
    """
    r = np.asarray(replicates, dtype=float)
    est = np.asarray(estimate, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        finite = np.sum(np.isfinite(r), axis=0)
        se = _nan_sd(r)
        p = 2 * stats.norm.sf(np.abs(est) / se)
    p = np.where((finite >= 2) & (se > 0) & np.isfinite(se) & np.isfinite(est), p, np.nan)
    return float(p) if np.ndim(p) == 0 else p


def percentile_p_value(replicates, margin=0.0):
    """Two-sided p-value for "true value = 0" that agrees with the percentile interval.

    The smallest ``1 - confidence`` at which the percentile interval
    (:func:`bootstrap_interval`, ``method="percentile"``: linearly interpolated quantiles
    of the finite replicates) leaves out 0, so that for every ``alpha``: the
    ``1 - alpha`` interval leaves out 0 if and only if ``p < alpha`` (the interval is
    inverted, [1]_). With ``n`` sorted finite replicates ``x`` and ``h`` the interpolated
    position of 0 among them (``Q(h) = 0``, ``Q`` the quantile function on positions
    ``0 .. n - 1``), ``p = 2 min(h, n - 1 - h) / (n - 1)``. When every replicate lies on
    one side of 0 every percentile interval leaves it out; ``p`` is then ``1 / n``, the
    resolution of ``n`` replicates, not 0 (so the two agree whenever ``alpha > 1 / n``).
    Unlike :func:`bootstrap_p_value` (a normal approximation with the bootstrap SE) it
    needs no symmetric, normal-looking replicates, but it cannot go below ``1 / n``.

    Parameters
    ----------
    replicates : array_like, shape (n_boot,) or (n_boot, G)
        Bootstrap replicates of the estimate (NaN: a fit that failed, left out).
    margin : float or array_like, shape (G,)
        A systematic part [same unit, >= 0] added to each end of the interval:
        the p-value agrees with ``[low - margin, high + margin]`` instead (it leaves
        out 0 when ``low > margin`` or ``high < -margin``). Default 0.

    Returns
    -------
    float or numpy.ndarray
        NaN where fewer than two replicates are finite.

    References
    ----------
    .. [1] B. Efron and R. J. Tibshirani, An Introduction to the Bootstrap, Chapman & Hall,
       1993, s. 16.4 (the achieved significance level from the percentile interval;
       citation from memory).

    Examples
    --------
    101 replicates evenly spread from -0.2 to 1.8: 0 sits at position 10 of 0..100, so
    ``p = 2 x 10 / 100 = 0.2``; the 80 % interval just reaches 0, the 79 % one does not:

    >>> replicates = np.linspace(-0.2, 1.8, 101)
    >>> round(percentile_p_value(replicates), 6)
    0.2
    >>> [round(x, 6) + 0.0 for x in bootstrap_interval(replicates, 0.8, 0.80)]
    [0.0, 1.6]
    >>> bool(bootstrap_interval(replicates, 0.8, 0.79)[0] > 0)
    True
    >>> percentile_p_value(np.column_stack([replicates + 5, -replicates])).round(4).tolist()
    [0.0099, 0.2]

    With a systematic part of 0.1 the interval leaves out 0 only where its bootstrap part
    clears 0.1: position 15 of 0..100, so ``p = 0.3``:

    >>> round(percentile_p_value(replicates, margin=0.1), 6)
    0.3
    """
    r = np.asarray(replicates, dtype=float)
    one = r.ndim == 1
    x = np.sort(r.reshape(r.shape[0], -1), axis=0)  # NaN last
    n = np.sum(np.isfinite(x), axis=0)
    cols = np.arange(x.shape[1])
    m = np.broadcast_to(np.asarray(margin, dtype=float), cols.shape)
    if np.any(~np.isfinite(m)) or np.any(m < 0):
        raise UsageError("margin must be finite and >= 0")

    def position(count, level):
        """Interpolated position between the ``count``-th and the next sorted replicate
        where the quantile function crosses ``level`` (-inf: all above, +inf: all
        below)."""
        below = np.clip(count - 1, 0, x.shape[0] - 1)
        above = np.clip(count, 0, x.shape[0] - 1)
        x0, x1 = x[below, cols], x[above, cols]
        with np.errstate(invalid="ignore", divide="ignore"):
            h = (count - 1) + np.where(x1 > x0, (level - x0) / (x1 - x0), 0.0)
        return np.where(count <= 0, -np.inf, np.where(count >= n, np.inf, h))

    with np.errstate(invalid="ignore", divide="ignore"):
        # highest position with Q(h) <= margin (the low end clears it above that), lowest
        # with Q(h) >= -margin (the high end stays below -margin under that)
        n_le, n_lt = np.sum(x <= m, axis=0), np.sum(x < -m, axis=0)
        h_hi = position(n_le, m)
        h_lo = position(n_lt, -m)
        h_lo = np.where(n_lt == 0, 0.0, h_lo)
        h_hi = np.where(n_le >= n, n - 1.0, h_hi)
        p = 2 * np.minimum(h_hi, (n - 1) - h_lo) / (n - 1)
        p = np.clip(np.nan_to_num(p, nan=0.0, posinf=1.0, neginf=0.0), 0.0, 1.0)
        p = np.maximum(p, 1.0 / n)
    p = np.where(n >= 2, p, np.nan)
    return float(p[0]) if one else p


__all__ = ["INTERVAL_METHODS", "DRAWS", "cluster_bootstrap_weights",
           "stratified_bootstrap_weights", "bootstrap_interval", "bootstrap_p_value",
           "percentile_p_value"]
