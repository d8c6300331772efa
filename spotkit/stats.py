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
* The censored-normal maximum-likelihood fit (Tobin 1958): the headline estimator. It uses
  the pairs where only one antenna was heard as bounds on ``d`` and returns a continuous
  estimate. Its known error is the normal model itself: heavy tails or a mixture of paths
  with different differences bias ``sigma`` and, when censoring is one-sided, ``mu``.
  Whole-dB exact values are taken as exact; near the censoring limits this biases ``mu``
  slightly (-0.006 dB with sigma 3 dB and limits at -+2.5 dB, by simulation of 2e6 pairs).
  The fit floors ``sigma`` (default 0.3 dB, a choice well below the 1 dB resolution of
  reports) because a normal fitted to identical whole-dB values would otherwise collapse to
  zero width.
* The cluster bootstrap (resampling whole clusters, e.g. receivers or days) for intervals
  that respect correlation within clusters, Benjamini-Hochberg adjustment across groups and
  Wilson intervals for proportions.

Everything is plain numpy/scipy on arrays.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Literal

import numpy as np
from scipy import special, stats

from .errors import UsageError

Alternative = Literal["two-sided", "greater", "less"]
WilcoxonMethod = Literal["auto", "exact", "normal"]
McNemarMethod = Literal["exact", "chi2", "chi2-corrected"]
IntervalMethod = Literal["percentile", "basic", "normal"]

ALTERNATIVES = ("two-sided", "greater", "less")
WILCOXON_METHODS = ("auto", "exact", "normal")
MCNEMAR_METHODS = ("exact", "chi2", "chi2-corrected")
INTERVAL_METHODS = ("percentile", "basic", "normal")

#: Default floor of the censored-normal sigma, dB (see the module docstring).
SIGMA_FLOOR_DB = 0.3

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


@dataclass(frozen=True)
class CensoredFit:
    """Result of :func:`censored_normal_mle`.

    Attributes
    ----------
    mu : float
        Fitted mean [dB]; NaN when the likelihood has no maximum.
    sigma : float
        Fitted standard deviation [dB], at least the sigma floor; NaN as ``mu``.
    converged : bool
        Whether the Newton iteration met its tolerance.
    n_exact, n_upper, n_lower : float
        Total weight of exact values, upper bounds and lower bounds.
    loglik : float
        Maximised log-likelihood (including the ``-log(2 pi)/2`` constants of exact values).
    n_iter : int
        Newton iterations used.
    se_mu, se_sigma : float
        Standard errors [dB] from the observed information (inverse Hessian, delta method).
        They assume independent observations and an interior maximum: with ``sigma`` on its
        floor ``se_sigma`` is not meaningful, and with clustered data use the cluster
        bootstrap instead.
    """

    mu: float
    sigma: float
    converged: bool
    n_exact: float
    n_upper: float
    n_lower: float
    loglik: float = float("nan")
    n_iter: int = 0
    se_mu: float = float("nan")
    se_sigma: float = float("nan")

    def to_dict(self) -> dict:
        """The fields as a plain dict."""
        return asdict(self)


# --------------------------------------------------------------------------- helpers
def _check_choice(value, valid, what):
    if value not in valid:
        raise ValueError(f"unknown {what} {value!r}; valid: {', '.join(valid)}")


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
    for r2, tk in zip(midrank2.astype(int), t.astype(int)):
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
    """
    _check_choice(alternative, ALTERNATIVES, "alternative")
    _check_choice(method, WILCOXON_METHODS, "method")
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


def hodges_lehmann(values, counts=None) -> float:
    """Hodges-Lehmann one-sample shift: the median of the Walsh averages.

    The Walsh averages are ``(d_i + d_j) / 2`` for all ``i <= j``, zeros included. From
    ``K`` distinct values with counts ``c`` they are formed once per distinct pair, with
    weight ``c_k c_l`` (``k < l``) or ``c_k (c_k + 1) / 2`` (``k = l``), so the cost is
    ``O(K^2)`` whatever the number of pairs; the result equals the estimate on the
    expanded data exactly. On whole-dB data it is a multiple of 0.5 dB.

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
    """
    avg, w, n = _walsh(values, counts)
    if n == 0:
        return float("nan")
    m = n * (n + 1) / 2.0
    if m % 2 == 1:
        return float(_weighted_order_stat(avg, w, (m + 1) / 2))
    lo, hi = _weighted_order_stat(avg, w, [m / 2, m / 2 + 1])
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
    """
    if not 0 < confidence < 1:
        raise UsageError(f"confidence must be in (0, 1), got {confidence}")
    avg, w, n = _walsh(values, counts)
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
    lo, hi = _weighted_order_stat(avg, w, [big_c, m + 1 - big_c])
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
    """
    _check_choice(alternative, ALTERNATIVES, "alternative")
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
    """
    _check_choice(method, MCNEMAR_METHODS, "method")
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
    """
    if not 0 < confidence < 1:
        raise UsageError(f"confidence must be in (0, 1), got {confidence}")
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


# --------------------------------------------------------------------------- censored normal MLE
_LOG_SQRT_2PI = 0.5 * np.log(2 * np.pi)


def _check_kinds(values, kinds):
    v = np.asarray(values, dtype=float).ravel()
    k = np.asarray(kinds).ravel()
    if k.shape != v.shape:
        raise UsageError(f"kinds has {k.size} entries but values has {v.size}")
    if not np.all(np.isin(k, (-1, 0, 1))):
        raise UsageError("kinds must be 0 (exact), +1 (upper bound) or -1 (lower bound)")
    if not np.all(np.isfinite(v)):
        raise UsageError("values must be finite (no NaN or inf)")
    return v, k.astype(int)


def _tobit_parts(delta, gamma, v, sgn, exact, w):
    """Log-likelihood, gradient and Hessian in Olsen's (delta, gamma) = (mu/s, 1/s).

    ``w`` is (B, K); ``delta``, ``gamma`` are (B,). Exact values contribute
    ``log gamma - r^2/2 - log sqrt(2 pi)`` with ``r = gamma v - delta``; bounds contribute
    ``log Phi(u)`` with ``u = sgn r`` (sgn +1 for an upper bound, -1 for a lower bound).
    """
    r = gamma[:, None] * v[None, :] - delta[:, None]
    u = sgn[None, :] * r
    log_cdf = special.log_ndtr(u)
    lam = np.exp(-0.5 * u * u - _LOG_SQRT_2PI - log_cdf)  # inverse Mills ratio phi/Phi
    h = -lam * (u + lam)
    lg = np.log(gamma)[:, None]
    ll_e = lg - 0.5 * r * r - _LOG_SQRT_2PI
    ex = exact[None, :]
    ll = np.where(ex, ll_e, log_cdf)
    ll = np.sum(np.where(w > 0, w * ll, 0.0), axis=1)
    g_d = np.sum(w * np.where(ex, r, -sgn * lam), axis=1)
    g_g = np.sum(w * np.where(ex, 1.0 / gamma[:, None] - r * v, sgn * v * lam), axis=1)
    h_dd = np.sum(w * np.where(ex, -1.0, h), axis=1)
    h_dg = np.sum(w * np.where(ex, v, -h * v), axis=1)
    h_gg = np.sum(w * np.where(ex, -1.0 / gamma[:, None] ** 2 - v * v, h * v * v), axis=1)
    return ll, g_d, g_g, h_dd, h_dg, h_gg


def _tobit_batch(v, kind, w, sigma_floor, max_iter=100, tol=1e-10):
    """Batch Newton fit; returns mu, sigma, converged, loglik, n_iter (arrays over rows)."""
    b = w.shape[0]
    exact = kind == 0
    sgn = kind.astype(float)
    w_e = w[:, exact].sum(axis=1)
    w_u = w[:, kind == 1].sum(axis=1)
    w_l = w[:, kind == -1].sum(axis=1)
    mu = np.full(b, np.nan)
    sigma = np.full(b, np.nan)
    conv = np.zeros(b, dtype=bool)
    n_iter = np.zeros(b, dtype=int)
    gmax = 1.0 / sigma_floor

    # starting values (and the answer, for rows without censoring): weighted mean / SD
    with np.errstate(invalid="ignore", divide="ignore"):
        we = np.where(exact[None, :], w, 0.0)
        base_w = np.where((w_e > 0)[:, None], we, w)
        tot = base_w.sum(axis=1)
        m0 = (base_w * v).sum(axis=1) / tot
        sd0 = np.sqrt((base_w * (v - m0[:, None]) ** 2).sum(axis=1) / tot)
    closed = (w_e > 0) & (w_u + w_l == 0)
    mu[closed] = m0[closed]
    sigma[closed] = np.maximum(sd0[closed], sigma_floor)
    conv[closed] = True
    fit = (w_e > 0) & (w_u + w_l > 0) | (w_e == 0) & (w_u > 0) & (w_l > 0)
    loglik = np.full(b, np.nan)
    rows = np.nonzero(fit)[0]
    if rows.size:
        start_sd = np.where(w_e[rows] > 0, sd0[rows], np.maximum(sd0[rows], 1.0))
        gamma = 1.0 / np.maximum(start_sd, sigma_floor)
        delta = m0[rows] * gamma
        active = np.ones(rows.size, dtype=bool)
        done_ok = np.zeros(rows.size, dtype=bool)
        it = np.zeros(rows.size, dtype=int)
        for _ in range(max_iter):
            idx = np.nonzero(active)[0]
            if idx.size == 0:
                break
            wa = w[rows[idx]]
            d0, g0 = delta[idx], gamma[idx]
            ll, gd, gg, hdd, hdg, hgg = _tobit_parts(d0, g0, v, sgn, exact, wa)
            det = hdd * hgg - hdg * hdg
            with np.errstate(invalid="ignore", divide="ignore"):
                step_d = -(hgg * gd - hdg * gg) / det
                step_g = -(-hdg * gd + hdd * gg) / det
            bad = ~((hdd < 0) & (det > 0) & np.isfinite(step_d) & np.isfinite(step_g))
            if np.any(bad):  # gradient ascent scaled by the curvature
                scale = 1.0 / np.maximum(np.maximum(np.abs(hdd), np.abs(hgg)), 1.0)
                step_d = np.where(bad, gd * scale, step_d)
                step_g = np.where(bad, gg * scale, step_g)
            at_floor = (g0 >= gmax * (1 - 1e-12)) & (gg > 0)
            if np.any(at_floor):  # sigma on its floor: maximise over delta alone
                step_d = np.where(at_floor, -gd / np.where(hdd < 0, hdd, -1.0), step_d)
                step_g = np.where(at_floor, 0.0, step_g)
            t = np.ones(idx.size)
            with np.errstate(invalid="ignore", divide="ignore"):
                t = np.where(step_g > 0, np.minimum(t, (gmax - g0) / step_g), t)
                t = np.where(step_g < 0, np.minimum(t, -0.9 * g0 / step_g), t)
            accepted = np.zeros(idx.size, dtype=bool)
            new_d, new_g = d0.copy(), g0.copy()
            for _half in range(50):
                todo = np.nonzero(~accepted)[0]
                if todo.size == 0:
                    break
                cd = d0[todo] + t[todo] * step_d[todo]
                cg = np.minimum(g0[todo] + t[todo] * step_g[todo], gmax)
                ll_new = _tobit_parts(cd, cg, v, sgn, exact, wa[todo])[0]
                ok = np.isfinite(ll_new) & (ll_new >= ll[todo] - 1e-12 * np.abs(ll[todo]))
                new_d[todo[ok]] = cd[ok]
                new_g[todo[ok]] = cg[ok]
                accepted[todo[ok]] = True
                t[todo[~ok]] *= 0.5
            moved = np.maximum(np.abs(new_d - d0) / (1 + np.abs(d0)), np.abs(new_g - g0) / g0)
            delta[idx], gamma[idx] = new_d, new_g
            it[idx] += 1
            small = (moved < tol) | ~accepted
            diverged = (new_g < 1e-8) | (np.abs(new_d / new_g) > 1e8)
            finished = small | diverged
            done_ok[idx[small & ~diverged]] = True
            active[idx[finished]] = False
        ok = done_ok & (gamma >= 1e-8)
        mu[rows] = np.where(np.isfinite(delta / gamma) & (gamma >= 1e-8), delta / gamma, np.nan)
        sigma[rows] = np.where(gamma >= 1e-8, 1.0 / gamma, np.nan)
        conv[rows] = ok
        n_iter[rows] = it
    have = np.isfinite(mu)
    if np.any(have):
        loglik[have] = _tobit_parts(mu[have] / sigma[have], 1.0 / sigma[have], v, sgn, exact,
                                    w[have])[0]
    return mu, sigma, conv, loglik, n_iter


def censored_normal_mle(values, kinds, counts=None,
                        sigma_floor: float = SIGMA_FLOOR_DB) -> CensoredFit:
    """Maximum-likelihood fit of N(mu, sigma^2) to exact values and one-sided bounds.

    The log-likelihood (weights ``c``) is the Tobit / censored-normal one: an exact value
    ``v`` contributes ``log phi((v - mu)/sigma) - log sigma``; an upper bound (the true
    value is ``<= v``) ``log Phi((v - mu)/sigma)``; a lower bound (``>= v``)
    ``log Phi(-(v - mu)/sigma)`` (``scipy.special.log_ndtr`` keeps far tails finite).
    It is maximised by Newton's method with step halving in Olsen's parameters
    ``(mu/sigma, 1/sigma)``, where the log-likelihood is concave, so the iteration cannot
    stall at a saddle; it starts from the mean and SD of the exact values. ``sigma`` is
    held at or above ``sigma_floor``: when the unconstrained maximum lies below it (e.g.
    all exact values equal) the fit maximises over ``mu`` with ``sigma = sigma_floor``.
    With no bounds the answer is the weighted mean and the ``ddof=0`` SD (floored)
    exactly. With no exact values and only one kind of bound there is no maximum
    (``mu`` runs to infinity): ``mu`` and ``sigma`` are NaN and ``converged`` False; also
    when ``sigma`` diverges (bounds that contradict each other).

    Parameters
    ----------
    values : array_like
        Differences or bounds [dB].
    kinds : array_like of int
        0 = exact value, +1 = upper bound (true <= value), -1 = lower bound (true >= value).
    counts : array_like, optional
        Non-negative frequency weights; default one each.
    sigma_floor : float
        Smallest allowed sigma [dB], default 0.3 dB.

    Returns
    -------
    CensoredFit

    References
    ----------
    .. [1] J. Tobin, "Estimation of relationships for limited dependent variables",
       Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
    .. [2] R. J. Olsen, "Note on the uniqueness of the maximum likelihood estimator for the
       Tobit model", Econometrica 46(5):1211-1215, 1978. doi:10.2307/1911445
    """
    if not sigma_floor > 0:
        raise UsageError(f"sigma_floor must be positive, got {sigma_floor}")
    v, k = _check_kinds(values, kinds)
    if counts is None:
        c = np.ones(v.shape)
    else:
        c = np.asarray(counts, dtype=float).ravel()
        if c.shape != v.shape:
            raise UsageError(f"counts has {c.size} entries but values has {v.size}")
        if np.any(~np.isfinite(c)) or np.any(c < 0):
            raise UsageError("counts must be finite and non-negative")
    mu, sigma, conv, ll, it = _tobit_batch(v, k, c[None, :], sigma_floor)
    se_mu = se_sigma = float("nan")
    if np.isfinite(mu[0]):
        gamma = 1.0 / sigma
        _, _, _, hdd, hdg, hgg = _tobit_parts(mu * gamma, gamma, v, k.astype(float), k == 0,
                                              c[None, :])
        info = -np.array([[hdd[0], hdg[0]], [hdg[0], hgg[0]]])
        if np.all(np.isfinite(info)) and np.linalg.det(info) > 0:
            g = gamma[0]
            jac = np.array([[g**-1, -mu[0] * g**-1], [0.0, -(g**-2)]])  # d(mu, s)/d(delta, gamma)
            cov = jac @ np.linalg.inv(info) @ jac.T
            se_mu, se_sigma = float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))
    return CensoredFit(float(mu[0]), float(sigma[0]), bool(conv[0]), float(c[k == 0].sum()),
                       float(c[k == 1].sum()), float(c[k == -1].sum()), float(ll[0]),
                       int(it[0]), se_mu, se_sigma)


def censored_normal_mle_batch(values, kinds, weights,
                              sigma_floor: float = SIGMA_FLOOR_DB):
    """Many censored-normal fits at once, one per row of ``weights`` (for the bootstrap).

    Same model and rules as :func:`censored_normal_mle`; all rows iterate together as
    ``(B, K)`` arrays. Rows with zero total weight, or without a maximum, give NaN.

    Parameters
    ----------
    values : array_like, shape (K,)
        Differences or bounds [dB], shared by all rows.
    kinds : array_like of int, shape (K,)
        0 exact, +1 upper bound, -1 lower bound.
    weights : array_like, shape (B, K)
        Non-negative weights of each value in each fit.
    sigma_floor : float
        Smallest allowed sigma [dB].

    Returns
    -------
    mu, sigma : numpy.ndarray, shape (B,)
        Fitted mean and SD [dB].

    References
    ----------
    .. [1] J. Tobin, Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
    """
    if not sigma_floor > 0:
        raise UsageError(f"sigma_floor must be positive, got {sigma_floor}")
    v, k = _check_kinds(values, kinds)
    w = np.asarray(weights, dtype=float)
    if w.ndim != 2 or w.shape[1] != v.size:
        raise UsageError(f"weights must have shape (B, {v.size}), got {w.shape}")
    if np.any(~np.isfinite(w)) or np.any(w < 0):
        raise UsageError("weights must be finite and non-negative")
    mu, sigma, _conv, _ll, _it = _tobit_batch(v, k, w, sigma_floor)
    return mu, sigma


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
    """
    if int(n_clusters) != n_clusters or n_clusters < 1:
        raise UsageError(f"n_clusters must be a positive integer, got {n_clusters}")
    if int(n_boot) != n_boot or n_boot < 1:
        raise UsageError(f"n_boot must be a positive integer, got {n_boot}")
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    n_clusters = int(n_clusters)
    return gen.multinomial(n_clusters, np.full(n_clusters, 1.0 / n_clusters),
                           size=int(n_boot)).astype(np.int64)


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
    """
    _check_choice(method, INTERVAL_METHODS, "method")
    if not 0 < confidence < 1:
        raise UsageError(f"confidence must be in (0, 1), got {confidence}")
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
    """
    r = np.asarray(replicates, dtype=float)
    est = np.asarray(estimate, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        finite = np.sum(np.isfinite(r), axis=0)
        se = _nan_sd(r)
        p = 2 * stats.norm.sf(np.abs(est) / se)
    p = np.where((finite >= 2) & (se > 0) & np.isfinite(se) & np.isfinite(est), p, np.nan)
    return float(p) if np.ndim(p) == 0 else p


__all__ = [
    "TestResult", "CensoredFit", "wilcoxon_signed_rank", "hodges_lehmann",
    "hodges_lehmann_ci", "sign_test", "mcnemar", "benjamini_hochberg", "wilson_interval",
    "censored_normal_mle", "censored_normal_mle_batch", "cluster_bootstrap_weights",
    "bootstrap_interval", "bootstrap_p_value", "SIGMA_FLOOR_DB",
]
