"""Statistics for paired A/B comparisons of SNR differences, on compressed data.

The data are paired SNR differences ``d = B - A`` [dB]. Reports come in whole dB, so the
differences take few distinct values; every function therefore takes the distinct
``values`` and optional integer ``counts`` (frequency weights, one each by default) and
works in time proportional to the number of distinct values, not the number of pairs.

What is here, and its known error:

* Rank and sign tests on the pairs where both antennas were heard: Wilcoxon's signed-rank
  test (exact null distribution for small samples, normal approximation with tie and
  continuity corrections otherwise - the approximation's error in the p-value is of order
  ``1/n``), the exact sign test, the Hodges-Lehmann shift and its distribution-free interval.
  On whole-dB data the Hodges-Lehmann estimate is always a multiple of 0.5 dB (Walsh
  averages of integers are half-integers), so it is a check beside the headline, not the
  headline itself.
* McNemar's test on the discordant counts (only A heard / only B heard).
* Benjamini-Hochberg adjustment across groups and Wilson intervals for proportions.
* Cluster-level versions of the rank and sign tests: reports of one receiver are not
  independent (they share its noise floor, antenna and paths), so a test that counts every
  pair as an observation overstates the evidence (p of 1e-29 where a cluster bootstrap
  gives 0.45). :func:`cluster_medians` reduces each cluster to the (weighted) median of its
  differences; the signed-rank and sign tests on those medians treat clusters, not pairs,
  as the independent units. Under the null hypothesis that each cluster's differences are
  symmetric about 0 its median is too, so the tests keep their level; their known error is
  the loss of power with few clusters (a sign test on 5 clusters cannot go below
  p = 0.0625).

The censored-normal maximum-likelihood fit (Tobin 1958), the headline estimator, lives in
:mod:`spotkit.stats.censored` and the cluster bootstrap (resampling whole clusters, e.g.
receivers or days, for intervals that respect correlation within clusters) in
:mod:`spotkit.stats.bootstrap`, each with its known error; their public names are re-exported
here (``stats.censored_normal_mle``, ``stats.bootstrap_interval``, ...).

Everything is plain numpy/scipy on arrays.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Literal

import numpy as np
from scipy import stats

from spotkit._validate import check_choice, check_confidence
from spotkit.errors import UsageError

Alternative = Literal["two-sided", "greater", "less"]
WilcoxonMethod = Literal["auto", "exact", "normal"]
McNemarMethod = Literal["exact", "chi2", "chi2-corrected"]

ALTERNATIVES = ("two-sided", "greater", "less")
WILCOXON_METHODS = ("auto", "exact", "normal")
MCNEMAR_METHODS = ("exact", "chi2", "chi2-corrected")

#: Largest sample for which ``method="auto"`` uses the exact signed-rank distribution.
EXACT_MAX_N = 50

#: Largest sample that ``method="exact"`` accepts (its cost grows as n**3).
EXACT_LIMIT_N = 1000


@dataclass(frozen=True)
class TestResult:
    """Result of a hypothesis test.

    Attributes
    ----------
    statistic : float or numpy.ndarray
        The test statistic (defined by each test).
    p_value : float or numpy.ndarray
        The p-value; NaN when there is nothing to test (no informative observations).
    n : int or numpy.ndarray, optional
        Number of informative observations (zeros and ties with the null value excluded).
    method : str
        How the p-value was computed.
    alternative : str
        The alternative hypothesis.
    z : float, optional
        The standardised statistic, when a normal approximation was used.

    Examples
    --------
    >>> r = sign_test([2, 1, -1])
    >>> r.statistic, r.p_value, r.n, r.method
    (2.0, 1.0, 3, 'exact')
    >>> sorted(r.to_dict())
    ['alternative', 'method', 'n', 'p_value', 'statistic', 'z']
    """

    __test__ = False  # not a pytest test class

    statistic: float
    p_value: float
    n: int | None = None
    method: str = ""
    alternative: str = "two-sided"
    z: float | None = None

    def to_dict(self) -> dict:
        """The fields as a plain dict."""
        return asdict(self)


# --------------------------------------------------------------------------- helpers
def _values_counts(values, counts=None, *, integer=True):
    """Validate and return float values and counts (frequency weights) as 1-D arrays."""
    v = np.asarray(values, dtype=float).ravel()
    if counts is None:
        c = np.ones(v.shape, dtype=float)
    else:
        c = np.asarray(counts, dtype=float).ravel()
        if c.shape != v.shape:
            raise UsageError(f"counts has {c.size} entries but values has {v.size}")
    if not np.all(np.isfinite(v)):
        raise UsageError("values must be finite (no NaN or inf)")
    if np.any(~np.isfinite(c)) or np.any(c < 0):
        raise UsageError("counts must be finite and non-negative")
    if integer and np.any(c != np.round(c)):
        raise UsageError("counts must be whole numbers (frequency weights)")
    keep = c > 0
    return v[keep], c[keep]


def _collapse(v, c):
    """Sum counts of equal values; returns sorted distinct values and their counts."""
    u, inv = np.unique(v, return_inverse=True)
    return u, np.bincount(inv, weights=c, minlength=u.size)


def _signed_rank_parts(values, counts):
    """Non-zero distinct |d|, mid-ranks, and the counts of positive and negative d."""
    v, c = _values_counts(values, counts)
    nz = v != 0
    v, c = v[nz], c[nz]
    a, inv = np.unique(np.abs(v), return_inverse=True)
    pos = np.bincount(inv, weights=c * (v > 0), minlength=a.size)
    neg = np.bincount(inv, weights=c * (v < 0), minlength=a.size)
    t = pos + neg
    before = np.cumsum(t) - t
    midrank = before + (t + 1.0) / 2.0
    return a, midrank, pos, neg, t


def _signed_rank_null_counts(n: int) -> np.ndarray:
    """Exact null probabilities of T+ = 0..n(n+1)/2 without ties.

    The number of subsets of {1..n} with each sum, divided by 2**n as it is built up
    (so that large n cannot overflow).
    """
    top = n * (n + 1) // 2
    f = np.zeros(top + 1)
    f[0] = 1.0
    for k in range(1, n + 1):
        f[k:] = f[k:] + f[:-k].copy()
        f *= 0.5
    return f


def _signed_rank_null_ties(midrank2: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Exact conditional null distribution of 2*T+ given tie groups (probabilities).

    Each tie group of size ``t`` with doubled mid-rank ``r2`` contributes ``j * r2`` with
    probability ``C(t, j) / 2**t``, independently across groups.
    """
    top = int(np.sum(midrank2 * t))
    f = np.zeros(top + 1)
    f[0] = 1.0
    for r2, tk in zip(midrank2.astype(int), t.astype(int), strict=True):
        g = np.zeros_like(f)
        pj = stats.binom.pmf(np.arange(tk + 1), tk, 0.5)
        for j in range(tk + 1):
            s = j * r2
            g[s:] += pj[j] * f[: f.size - s]
        f = g
    return f


def _p_from_null(f: np.ndarray, t_obs: int, alternative: str) -> float:
    """p-value of an integer statistic ``t_obs`` from null weights ``f`` (any scale)."""
    f = f / f.sum()
    lower = f[: t_obs + 1].sum()  # P(T <= t)
    upper = f[t_obs:].sum()  # P(T >= t)
    if alternative == "greater":
        return float(min(upper, 1.0))
    if alternative == "less":
        return float(min(lower, 1.0))
    return float(min(1.0, 2.0 * min(lower, upper)))


# --------------------------------------------------------------------------- rank tests
def wilcoxon_signed_rank(values, counts=None, alternative: Alternative = "two-sided",
                         method: WilcoxonMethod = "auto", correction: bool = True) -> TestResult:
    """Wilcoxon signed-rank test that the differences are centred on zero.

    Zero differences are dropped before ranking (Wilcoxon's own treatment of zeros);
    tied absolute values get mid-ranks. The statistic is ``T+``, the sum of the ranks of
    the positive differences.

    Parameters
    ----------
    values : array_like
        Distinct (or all) paired differences [dB].
    counts : array_like of int, optional
        Frequency weight of each value; default one each.
    alternative : {"two-sided", "greater", "less"}
        "greater": B - A tends to be positive.
    method : {"auto", "exact", "normal"}
        "exact" enumerates the null distribution of ``T+`` (with ties, the exact
        conditional distribution given the tie pattern); "normal" uses the normal
        approximation with the tie-corrected variance
        ``n(n+1)(2n+1)/24 - sum(t^3 - t)/48`` and, if ``correction``, a continuity
        correction of 0.5 towards the mean. "auto" is exact when ``n <= 50`` and there
        are no ties, normal otherwise.
    correction : bool
        Continuity correction in the normal approximation (default True).

    Returns
    -------
    TestResult
        ``statistic`` = ``T+``, ``n`` = number of non-zero differences, ``z`` for the
        normal approximation. With ``n = 0`` the p-value is NaN.

    References
    ----------
    .. [1] F. Wilcoxon, "Individual comparisons by ranking methods", Biometrics Bulletin
       1(6):80-83, 1945. doi:10.2307/3001968
    .. [2] M. Hollander and D. A. Wolfe, Nonparametric Statistical Methods, Wiley, 1973,
       ch. 3.

    Examples
    --------
    Six differences without ties: ``T+ = 2 + 3 + 4 + 5 + 6 = 20``. Of the 64 equally likely
    sign patterns, two give ``T+ >= 20`` and two ``T+ <= 1``, so the exact two-sided p-value
    is 4/64 (worked by hand; ``scipy.stats.wilcoxon`` gives the same):

    >>> r = wilcoxon_signed_rank([-1, 2, 3, 4, 5, 7])
    >>> r.statistic, r.p_value, r.n, r.method
    (20.0, 0.0625, 6, 'exact')

    Compressed whole-dB data (value, how many pairs): ties, so the normal approximation;
    the 8 zeros are dropped. ``scipy.stats.wilcoxon`` on the 55 expanded differences gives
    the same p-value:

    >>> r = wilcoxon_signed_rank([-2, -1, 0, 1, 2, 3, 4], counts=[3, 10, 8, 14, 12, 6, 2])
    >>> r.n, r.method, round(r.z, 3), f"{r.p_value:.2e}"
    (47, 'normal', 3.7, '2.15e-04')
    """
    check_choice(alternative, ALTERNATIVES, "alternative")
    check_choice(method, WILCOXON_METHODS, "method")
    a, midrank, pos, neg, t = _signed_rank_parts(values, counts)
    n = int(t.sum())
    t_plus = float(np.sum(pos * midrank))
    if n == 0:
        return TestResult(0.0, float("nan"), 0, method, alternative)
    has_ties = bool(np.any(t > 1))
    if method == "auto":
        method = "exact" if (n <= EXACT_MAX_N and not has_ties) else "normal"
    if method == "exact":
        if n > EXACT_LIMIT_N:
            raise UsageError(f"exact signed-rank distribution for n = {n} > {EXACT_LIMIT_N}"
                             " is too costly; use method='normal'")
        if has_ties:
            f = _signed_rank_null_ties(np.round(2 * midrank), t)
            p = _p_from_null(f, int(round(2 * t_plus)), alternative)
        else:
            p = _p_from_null(_signed_rank_null_counts(n), int(round(t_plus)), alternative)
        return TestResult(t_plus, p, n, "exact", alternative)
    mean = n * (n + 1) / 4.0
    var = n * (n + 1) * (2 * n + 1) / 24.0 - np.sum(t**3 - t) / 48.0
    se = np.sqrt(var)
    d = t_plus - mean
    if correction:
        sign = {"greater": 1.0, "less": -1.0}.get(alternative, np.sign(d))
        d = d - sign * 0.5
    z = d / se
    if alternative == "greater":
        p = stats.norm.sf(z)
    elif alternative == "less":
        p = stats.norm.cdf(z)
    else:
        p = min(1.0, 2.0 * stats.norm.sf(abs(z)))
    return TestResult(t_plus, float(p), n, "normal", alternative, float(z))


#: above this many distinct Walsh averages (``K (K + 1) / 2`` from ``K`` distinct values,
#: about 630 of them) their order statistics are found by bisection instead of forming
#: them all (60,000 distinct differences would need 1.8e9 of them, about 100 GB;
#: ``benchmarks/bench_paired.py``)
WALSH_DIRECT_MAX = 200_000


def _walsh(values, counts):
    """Distinct Walsh averages and their weights from compressed data (O(K^2))."""
    v, c = _values_counts(values, counts)
    v, c = _collapse(v, c)
    i, j = np.triu_indices(v.size)
    avg = (v[i] + v[j]) / 2.0
    w = np.where(i == j, c[i] * (c[i] + 1) / 2.0, c[i] * c[j])
    order = np.argsort(avg, kind="stable")
    return avg[order], w[order], float(c.sum())


def _weighted_order_stat(sorted_vals, weights, k):
    """The k-th smallest (1-based, may be an array) of a weighted sorted sample."""
    cw = np.cumsum(weights)
    idx = np.searchsorted(cw, np.asarray(k, dtype=float), side="left")
    return sorted_vals[np.minimum(idx, sorted_vals.size - 1)]


def _walsh_below(v, c, cumc, x):
    """Per row ``i`` of the Walsh averages ``(v_i + v_j) / 2`` (``j >= i``, ``v`` sorted):
    the end ``P_i`` of the run of ``j`` with an average ``<= x`` (as computed in floating
    point, so consistent with :func:`_walsh`), and the total weight of those averages."""
    k = v.size
    p = np.searchsorted(v, 2.0 * x - v, side="right")
    # 2x - v_i is rounded; step P_i until the averages themselves decide (fl is monotone)
    rows = np.arange(k)
    for _ in range(64):
        last = np.clip(p - 1, 0, k - 1)
        down = (p > 0) & ((v + v[last]) / 2.0 > x)
        nxt = np.clip(p, 0, k - 1)
        up = (p < k) & ((v + v[nxt]) / 2.0 <= x)
        if not (down.any() or up.any()):
            break
        p = p - down + up
    p = np.maximum(p, rows)  # only j >= i
    has = p > rows
    weight = c * (cumc[p] - cumc[rows]) + np.where(has, (c - c * c) / 2.0, 0.0)
    return p, float(weight.sum())


def _walsh_order_stats(values, counts, ks):
    """The ``ks``-th smallest (1-based) weighted Walsh averages and the number of pairs.

    Equal to ``_weighted_order_stat(*_walsh(values, counts)[:2], ks)`` but in
    ``O(K log K)`` memory and time per bisection step when the ``K (K + 1) / 2`` distinct
    averages are too many to form (:data:`WALSH_DIRECT_MAX`): bisection on the value
    brackets each order statistic until few averages remain in the bracket, which are
    then formed and ranked.
    """
    v, c = _values_counts(values, counts)
    v, c = _collapse(v, c)
    keep = c > 0
    v, c = v[keep], c[keep]
    n = float(c.sum())
    ks = np.atleast_1d(np.asarray(ks, dtype=float))
    if n == 0:
        return np.full(ks.shape, np.nan), n
    size = v.size
    if size * (size + 1) // 2 <= WALSH_DIRECT_MAX:
        avg, w, _ = _walsh(v, c)
        return _weighted_order_stat(avg, w, ks), n
    cumc = np.concatenate([[0.0], np.cumsum(c)])
    rows = np.arange(size)
    cap = max(4 * size, 100_000)
    out = np.empty(ks.shape)
    for pos, k in enumerate(ks):
        lo, hi = v[0] - 1.0, v[-1]          # weight below lo is 0, up to hi is all
        p_lo, w_lo = _walsh_below(v, c, cumc, lo)
        p_hi, _ = _walsh_below(v, c, cumc, hi)
        while int((p_hi - p_lo).sum()) > cap:
            mid = lo + (hi - lo) / 2.0
            if not lo < mid < hi:
                break
            p_mid, w_mid = _walsh_below(v, c, cumc, mid)
            if w_mid >= k:
                hi, p_hi = mid, p_mid
            else:
                lo, p_lo, w_lo = mid, p_mid, w_mid
        # the averages in (lo, hi]: row i, columns p_lo[i] .. p_hi[i] - 1
        span = p_hi - p_lo
        i = np.repeat(rows, span)
        j = (np.arange(span.sum()) - np.repeat(np.cumsum(span) - span, span)
             + np.repeat(p_lo, span))
        avg = (v[i] + v[j]) / 2.0
        w = np.where(i == j, c[i] * (c[i] + 1) / 2.0, c[i] * c[j])
        order = np.argsort(avg, kind="stable")
        out[pos] = _weighted_order_stat(avg[order], w[order], k - w_lo)
    return out, n


def hodges_lehmann(values, counts=None) -> float:
    """Hodges-Lehmann one-sample shift: the median of the Walsh averages.

    The Walsh averages are ``(d_i + d_j) / 2`` for all ``i <= j``, zeros included. From
    ``K`` distinct values with counts ``c`` they are formed once per distinct pair, with
    weight ``c_k c_l`` (``k < l``) or ``c_k (c_k + 1) / 2`` (``k = l``), so the cost is
    ``O(K^2)`` whatever the number of pairs; above :data:`WALSH_DIRECT_MAX` of them the
    median is found by bisection on the value in ``O(K log K)`` per step without forming
    them all. Either way the result equals the estimate on the expanded data exactly. On
    whole-dB data it is a multiple of 0.5 dB.

    Parameters
    ----------
    values : array_like
        Paired differences [dB].
    counts : array_like of int, optional
        Frequency weights; default one each.

    Returns
    -------
    float
        The estimate [dB]; NaN for no data.

    References
    ----------
    .. [1] J. L. Hodges and E. L. Lehmann, "Estimates of location based on rank tests",
       Ann. Math. Statist. 34(2):598-611, 1963. doi:10.1214/aoms/1177704172
    .. [2] M. Hollander and D. A. Wolfe, Nonparametric Statistical Methods, 1973, s. 3.2.

    Examples
    --------
    The Walsh averages of -1, 2, 3 are -1, 0.5, 1, 2, 2.5, 3; their median is 1.5:

    >>> hodges_lehmann([-1, 2, 3])
    1.5
    >>> hodges_lehmann([-2, -1, 0, 1, 2, 3, 4], counts=[3, 10, 8, 14, 12, 6, 2])
    1.0
    """
    v, c = _values_counts(values, counts)
    n = float(c.sum())
    if n == 0:
        return float("nan")
    m = n * (n + 1) / 2.0
    if m % 2 == 1:
        return float(_walsh_order_stats(v, c, (m + 1) / 2)[0][0])
    lo, hi = _walsh_order_stats(v, c, [m / 2, m / 2 + 1])[0]
    return float((lo + hi) / 2.0)


def hodges_lehmann_ci(values, counts=None, confidence: float = 0.95) -> tuple[float, float]:
    """Distribution-free confidence interval for the Hodges-Lehmann shift.

    The interval is ``[W_(C), W_(M+1-C)]`` of the ``M = n(n+1)/2`` ordered Walsh averages.
    ``C - 1`` is the largest ``t`` with ``P(T+ <= t) <= (1 - confidence)/2`` under the
    exact null when ``n <= 50`` and there are no ties; otherwise
    ``C = floor(n(n+1)/4 + z_{(1-conf)/2} sd - 0.5) + 1`` with the tie-corrected sd
    (normal approximation; with heavy ties, as in whole-dB data, coverage is approximate).
    When the confidence cannot be reached (very small ``n``), returns ``(-inf, inf)``.

    Parameters
    ----------
    values : array_like
        Paired differences [dB].
    counts : array_like of int, optional
        Frequency weights.
    confidence : float
        Nominal coverage, in (0, 1).

    Returns
    -------
    (float, float)
        Lower and upper limits [dB].

    References
    ----------
    .. [1] M. Hollander and D. A. Wolfe, Nonparametric Statistical Methods, 1973, s. 3.3.

    Examples
    --------
    >>> hodges_lehmann_ci([-1, 2, 3, 4, 5, 7, 8, 10, -3, 6])
    (1.0, 7.0)
    >>> hodges_lehmann_ci([-2, -1, 0, 1, 2, 3, 4], counts=[3, 10, 8, 14, 12, 6, 2])
    (0.5, 1.5)

    Three pairs cannot reach 95 %:

    >>> hodges_lehmann_ci([1, 2, 3])
    (-inf, inf)
    """
    check_confidence(confidence)
    v, c = _values_counts(values, counts)
    n = float(c.sum())
    if n == 0:
        return (float("nan"), float("nan"))
    alpha2 = (1 - confidence) / 2
    m = n * (n + 1) / 2.0
    v, c = _collapse(*_values_counts(values, counts))
    _, inv = np.unique(np.abs(v), return_inverse=True)
    t = np.bincount(inv, weights=c)
    if n <= EXACT_MAX_N and not np.any(t > 1):
        f = _signed_rank_null_counts(int(n))
        cdf = np.cumsum(f / f.sum())
        ok = np.nonzero(cdf <= alpha2 + 1e-12)[0]
        if ok.size == 0:
            return (float("-inf"), float("inf"))
        big_c = int(ok[-1]) + 1
    else:
        sd = np.sqrt(n * (n + 1) * (2 * n + 1) / 24.0 - np.sum(t**3 - t) / 48.0)
        big_c = int(np.floor(n * (n + 1) / 4.0 + stats.norm.ppf(alpha2) * sd - 0.5)) + 1
        if big_c < 1:
            return (float("-inf"), float("inf"))
    lo, hi = _walsh_order_stats(v, c, [big_c, m + 1 - big_c])[0]
    return (float(lo), float(hi))


def sign_test(values, counts=None, alternative: Alternative = "two-sided") -> TestResult:
    """Exact sign test: are positive and negative differences equally likely?

    Zeros are dropped. The statistic is the number of positive differences, referred to
    Binomial(n, 1/2); the two-sided p-value doubles the smaller tail (capped at 1).

    Parameters
    ----------
    values : array_like
        Paired differences [dB].
    counts : array_like of int, optional
        Frequency weights.
    alternative : {"two-sided", "greater", "less"}
        "greater": positive differences more likely.

    Returns
    -------
    TestResult
        ``statistic`` = number of positive differences, ``n`` = number of non-zero ones.

    References
    ----------
    .. [1] W. J. Dixon and A. M. Mood, "The statistical sign test", JASA 41(236):557-566,
       1946. doi:10.1080/01621459.1946.10501898

    Examples
    --------
    9 positive and 1 negative difference (the 5 zeros are dropped): the two-sided p-value is
    ``2 (1 + 10) / 2**10`` (binomial tail, worked by hand):

    >>> r = sign_test([3, 1, 2, -1, 0], counts=[2, 4, 3, 1, 5])
    >>> r.statistic, r.n, r.p_value
    (9.0, 10, 0.021484375)
    """
    check_choice(alternative, ALTERNATIVES, "alternative")
    v, c = _values_counts(values, counts)
    k = int(c[v > 0].sum())
    n = k + int(c[v < 0].sum())
    if n == 0:
        return TestResult(0.0, float("nan"), 0, "exact", alternative)
    upper = stats.binom.sf(k - 1, n, 0.5)
    lower = stats.binom.cdf(k, n, 0.5)
    p = {"greater": upper, "less": lower}.get(alternative, min(1.0, 2 * min(upper, lower)))
    return TestResult(float(k), float(min(p, 1.0)), n, "exact", alternative)


def mcnemar(only_a, only_b, method: McNemarMethod = "exact") -> TestResult:
    """McNemar's test on the discordant counts of a paired yes/no outcome.

    ``only_a`` pairs were heard on A only, ``only_b`` on B only; under the null each
    discordant pair is equally likely either way. Works element-wise on arrays.

    Parameters
    ----------
    only_a, only_b : int or array_like of int
        Discordant counts.
    method : {"exact", "chi2", "chi2-corrected"}
        "exact": two-sided binomial test, ``statistic = min(only_a, only_b)``.
        "chi2": ``(b - c)^2 / (b + c)`` on 1 degree of freedom; "chi2-corrected" uses
        ``max(|b - c| - 1, 0)^2 / (b + c)`` (Edwards' continuity correction).

    Returns
    -------
    TestResult
        p-value NaN where there are no discordant pairs.

    References
    ----------
    .. [1] Q. McNemar, "Note on the sampling error of the difference between correlated
       proportions or percentages", Psychometrika 12(2):153-157, 1947.
       doi:10.1007/BF02295996
    .. [2] A. Agresti, Categorical Data Analysis, Wiley, 1990, s. 10.1.

    Examples
    --------
    3 pairs heard on A only and 12 on B only: the exact p-value is
    ``2 (1 + 15 + 105 + 455) / 2**15`` and the chi-squared statistic ``9**2 / 15`` (worked by
    hand):

    >>> r = mcnemar(3, 12)
    >>> r.statistic, r.n, r.p_value
    (3.0, 15, 0.03515625)
    >>> r = mcnemar(3, 12, method="chi2")
    >>> round(r.statistic, 2), round(r.p_value, 4)
    (5.4, 0.0201)

    Element-wise, NaN where there is no discordant pair:

    >>> mcnemar([3, 0], [12, 0]).p_value.tolist()
    [0.03515625, nan]
    """
    check_choice(method, MCNEMAR_METHODS, "method")
    b = np.asarray(only_a, dtype=float)
    c = np.asarray(only_b, dtype=float)
    if np.any(b < 0) or np.any(c < 0) or np.any(b != np.round(b)) or np.any(c != np.round(c)):
        raise UsageError("discordant counts must be non-negative whole numbers")
    n = b + c
    with np.errstate(invalid="ignore", divide="ignore"):
        if method == "exact":
            stat = np.minimum(b, c)
            p = np.minimum(1.0, 2.0 * stats.binom.cdf(stat, n, 0.5))
        else:
            diff = np.abs(b - c)
            if method == "chi2-corrected":
                diff = np.maximum(diff - 1.0, 0.0)
            stat = diff**2 / n
            p = stats.chi2.sf(stat, 1)
    p = np.where(n > 0, p, np.nan)
    if np.ndim(p) == 0:
        return TestResult(float(stat), float(p), int(n), method, "two-sided")
    return TestResult(stat, p, n.astype(int), method, "two-sided")


# ----------------------------------------------------------------- multiplicity, proportions
def benjamini_hochberg(p_values) -> np.ndarray:
    """Benjamini-Hochberg step-up adjusted p-values (false discovery rate).

    ``p_adj_(i) = min_{j >= i} min(1, m p_(j) / j)`` over the ``m`` non-NaN p-values;
    NaN entries stay NaN and do not count in ``m``. Rejecting ``p_adj <= q`` controls the
    FDR at ``q`` for independent (or positively dependent) tests.

    Parameters
    ----------
    p_values : array_like
        p-values in [0, 1] (NaN allowed), any shape.

    Returns
    -------
    numpy.ndarray
        Adjusted p-values, same shape.

    References
    ----------
    .. [1] Y. Benjamini and Y. Hochberg, "Controlling the false discovery rate", JRSS-B
       57(1):289-300, 1995. doi:10.1111/j.2517-6161.1995.tb02031.x

    Examples
    --------
    Sorted, the four p-values scaled by ``m / j`` are 0.04, 0.06, 0.0533, 0.2; the running
    minimum from the top, in the input order, is the result (``statsmodels``
    ``multipletests(method="fdr_bh")`` agrees):

    >>> benjamini_hochberg([0.01, 0.04, 0.03, 0.20, float("nan")]).round(4).tolist()
    [0.04, 0.0533, 0.0533, 0.2, nan]
    """
    p = np.asarray(p_values, dtype=float)
    flat = p.ravel()
    ok = ~np.isnan(flat)
    if np.any((flat[ok] < 0) | (flat[ok] > 1)):
        raise UsageError("p-values must lie in [0, 1]")
    out = np.full(flat.shape, np.nan)
    q = flat[ok]
    m = q.size
    if m:
        order = np.argsort(q, kind="stable")
        scaled = q[order] * m / np.arange(1, m + 1)
        adj = np.minimum.accumulate(scaled[::-1])[::-1]
        res = np.empty(m)
        res[order] = np.minimum(adj, 1.0)
        out[ok] = res
    return out.reshape(p.shape)


def wilson_interval(successes, trials, confidence: float = 0.95):
    """Wilson score interval for a binomial proportion, element-wise.

    ``(k + z^2/2) / (n + z^2) +- z sqrt(n) / (n + z^2) sqrt(p(1-p) + z^2 / (4n))`` with
    ``p = k / n`` and ``z`` the ``(1 + confidence)/2`` normal quantile. NaN where
    ``trials == 0``.

    Parameters
    ----------
    successes, trials : array_like of int
        Counts, ``0 <= successes <= trials``.
    confidence : float
        Nominal coverage in (0, 1).

    Returns
    -------
    (low, high) : float or numpy.ndarray
        Limits, proportions in [0, 1].

    References
    ----------
    .. [1] E. B. Wilson, "Probable inference, the law of succession, and statistical
       inference", JASA 22(158):209-212, 1927. doi:10.1080/01621459.1927.10502953

    Examples
    --------
    8 of 10 at 95 % (``statsmodels`` ``proportion_confint(8, 10, method="wilson")`` agrees):

    >>> low, high = wilson_interval(8, 10)
    >>> round(low, 3), round(high, 3)
    (0.49, 0.943)
    >>> low, high = wilson_interval([8, 0], [10, 0])
    >>> low.round(3).tolist(), high.round(3).tolist()
    ([0.49, nan], [0.943, nan])
    """
    check_confidence(confidence)
    k = np.asarray(successes, dtype=float)
    n = np.asarray(trials, dtype=float)
    if np.any(k < 0) or np.any(k > n):
        raise UsageError("need 0 <= successes <= trials")
    z = stats.norm.ppf(0.5 + confidence / 2)
    with np.errstate(invalid="ignore", divide="ignore"):
        p = k / n
        denom = n + z**2
        centre = (k + z**2 / 2) / denom
        half = z * np.sqrt(n) / denom * np.sqrt(p * (1 - p) + z**2 / (4 * n))
    low = np.where(n > 0, np.clip(centre - half, 0.0, 1.0), np.nan)
    high = np.where(n > 0, np.clip(centre + half, 0.0, 1.0), np.nan)
    if low.ndim == 0:
        return float(low), float(high)
    return low, high


# ----------------------------------------------------------------- cluster-level summaries
def cluster_medians(values, clusters, counts=None):
    """Weighted median of the values of each cluster (e.g. each receiver).

    The median of a cluster with total weight ``n`` is its ``n/2``-th value when ``n`` is
    odd and the mean of the two middle values when it is even (the usual sample median of
    the expanded data). Vectorised: one sort over all rows.

    Parameters
    ----------
    values : array_like
        Values [dB], e.g. distinct paired differences.
    clusters : array_like
        Cluster label of each value (any sortable labels, e.g. receiver calls or codes).
    counts : array_like of int, optional
        Frequency weight of each value; default one each. Rows with weight 0 are ignored.

    Returns
    -------
    labels : numpy.ndarray
        The clusters with positive total weight, sorted.
    medians : numpy.ndarray of float
        Their medians, same order.

    Examples
    --------
    Receiver 1 reported differences 1, 2 and 2 (as two rows, one counted twice); receiver
    2 reported -1 and 3 (even total: the mean of the middle two); ``numpy.median`` of the
    expanded data agrees:

    >>> labels, med = cluster_medians([1, 2, -1, 3], [1, 1, 2, 2], [1, 2, 1, 1])
    >>> labels.tolist(), med.tolist()
    ([1, 2], [2.0, 1.0])
    >>> float(np.median([1, 2, 2])), float(np.median([-1, 3]))
    (2.0, 1.0)
    """
    v = np.asarray(values, dtype=float).ravel()
    cl = np.asarray(clusters).ravel()
    if cl.shape != v.shape:
        raise UsageError(f"clusters has {cl.size} entries but values has {v.size}")
    c = (np.ones(v.shape) if counts is None else np.asarray(counts, dtype=float).ravel())
    if c.shape != v.shape:
        raise UsageError(f"counts has {c.size} entries but values has {v.size}")
    v2, c2 = _values_counts(v, c)
    cl = cl[c > 0]
    labels, code = np.unique(cl, return_inverse=True)
    code = code.ravel()
    order = np.lexsort((v2, code))
    v2, c2, code = v2[order], c2[order], code[order]
    cum = np.cumsum(c2)
    total = np.bincount(code, weights=c2, minlength=labels.size)
    start = np.concatenate([[0.0], np.cumsum(total)[:-1]])
    # 1-based positions of the two middle values of each cluster in the expanded data
    lo_pos = start + np.floor((total + 1) / 2)
    hi_pos = start + np.floor(total / 2) + 1
    lo = v2[np.searchsorted(cum, lo_pos, side="left")]
    hi = v2[np.searchsorted(cum, hi_pos, side="left")]
    return labels, (lo + hi) / 2


__all__ = [
    "TestResult", "wilcoxon_signed_rank", "hodges_lehmann", "hodges_lehmann_ci",
    "sign_test", "mcnemar", "benjamini_hochberg", "wilson_interval", "cluster_medians",
]
