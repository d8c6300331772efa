"""Tests of spotkit.stats.paired against published worked examples and scipy/statsmodels oracles."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats as sps
from statsmodels.stats.contingency_tables import mcnemar as sm_mcnemar
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.proportion import proportion_confint

from spotkit.errors import UsageError
from spotkit.stats import paired as S

# Hollander & Wolfe, Nonparametric Statistical Methods (1973), p. 29: Hamilton depression
# scale before (x) and after (y) a tranquilliser, nine patients.
HW_X = np.array([1.83, 0.50, 1.62, 2.48, 1.68, 1.88, 1.55, 3.06, 1.30])
HW_Y = np.array([0.878, 0.647, 0.598, 2.05, 1.06, 1.29, 1.06, 3.14, 1.29])
HW_D = HW_X - HW_Y

# Benjamini & Hochberg, JRSS-B 57:289-300 (1995), the 15 p-values of their example.
BH_P = np.array([.0001, .0004, .0019, .0095, .0201, .0278, .0298, .0344, .0459, .3240,
                 .4262, .5719, .6528, .7590, 1.0])


def compress(x):
    """Distinct values and their counts."""
    u, c = np.unique(x, return_counts=True)
    return u, c


def tied_sample(rng, n, loc=0.4, scale=3.0):
    """Whole-dB differences: many ties and zeros, as in real reports."""
    return np.round(rng.normal(loc, scale, n))


# ----------------------------------------------------------------------------- Wilcoxon
def test_wilcoxon_hollander_wolfe_exact():
    # Hollander & Wolfe (1973) p. 29: T+ = 40; exact P(T+ >= 40) = 10/512 = 0.01953
    # one-sided, 0.03906 two-sided (tolerance 1e-5 in p).
    res = S.wilcoxon_signed_rank(HW_D, alternative="greater")
    assert res.statistic == 40
    assert res.method == "exact" and res.n == 9
    assert res.p_value == pytest.approx(0.01953, abs=1e-5)
    assert res.p_value == pytest.approx(10 / 512, rel=1e-12)
    two = S.wilcoxon_signed_rank(HW_D)
    assert two.p_value == pytest.approx(0.03906, abs=1e-5)
    less = S.wilcoxon_signed_rank(HW_D, alternative="less")
    # P(T+ <= 40) = 1 - P(T+ >= 41) = 1 - P(T+ <= 4) = 1 - 7/512 (symmetry; recomputed)
    assert less.p_value == pytest.approx(1 - 7 / 512, rel=1e-12)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_wilcoxon_exact_matches_scipy_without_ties(rng, alternative):
    # oracle: scipy.stats.wilcoxon(method="exact"); tolerance 1e-12 in p
    d = rng.normal(0.3, 1.0, 23)
    ours = S.wilcoxon_signed_rank(d, alternative=alternative, method="exact")
    ref = sps.wilcoxon(d, alternative=alternative, method="exact")
    assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-12, abs=1e-15)
    t_plus = np.sum(sps.rankdata(np.abs(d))[d > 0])
    assert ours.statistic == pytest.approx(t_plus)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
@pytest.mark.parametrize("correction", [True, False])
def test_wilcoxon_normal_with_ties_and_zeros_matches_scipy(rng, alternative, correction):
    # oracle: scipy.stats.wilcoxon, zero_method="wilcox" (zeros dropped), asymptotic with
    # tie-corrected variance; tolerance 1e-10 relative in p
    d = tied_sample(rng, 400)
    assert np.any(d == 0)
    ours = S.wilcoxon_signed_rank(d, alternative=alternative, correction=correction)
    ref = sps.wilcoxon(d, zero_method="wilcox", correction=correction,
                       alternative=alternative, method="asymptotic")
    assert ours.method == "normal"
    assert ours.n == np.count_nonzero(d)
    assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-10)
    assert ours.z == pytest.approx(ref.zstatistic if alternative != "two-sided"
                                   else np.sign(ours.z) * abs(ref.zstatistic), rel=1e-10)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_wilcoxon_exact_with_ties_matches_scipy_enumeration(rng, alternative):
    # oracle: for n <= 13 with ties scipy enumerates all 2**n sign patterns
    # (permutation test); our exact conditional null must agree to 1e-10
    d = np.array([1, -1, 2, 2, -3, 1, 4, 0, 2, -2, 5, 1])
    ours = S.wilcoxon_signed_rank(d, alternative=alternative, method="exact")
    ref = sps.wilcoxon(d, zero_method="wilcox", alternative=alternative, method="auto")
    assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-10)


def test_wilcoxon_exact_large_n(rng):
    # no ties, n = 300: oracle scipy.stats.wilcoxon(method="exact"), tolerance 1e-9 relative
    d = rng.normal(0.2, 1.0, 300)
    ours = S.wilcoxon_signed_rank(d, method="exact")
    assert ours.p_value == pytest.approx(sps.wilcoxon(d, method="exact").pvalue, rel=1e-9)
    # whole-dB ties, n about 300: the exact conditional null and the normal approximation
    # with tie and continuity corrections agree to 0.005 in p (the approximation's error)
    t = tied_sample(rng, 300, loc=0.3)
    ex = S.wilcoxon_signed_rank(t, method="exact")
    no = S.wilcoxon_signed_rank(t, method="normal")
    assert ex.p_value == pytest.approx(no.p_value, abs=5e-3)
    with pytest.raises(UsageError):
        S.wilcoxon_signed_rank(np.arange(1.0, 1500.0), method="exact")


def test_wilcoxon_compressed_equals_expanded(rng):
    d = tied_sample(rng, 3000)
    u, c = compress(d)
    for alt in ("two-sided", "greater"):
        a = S.wilcoxon_signed_rank(d, alternative=alt)
        b = S.wilcoxon_signed_rank(u, c, alternative=alt)
        assert a.statistic == pytest.approx(b.statistic, rel=1e-13)
        assert a.p_value == pytest.approx(b.p_value, rel=1e-10)
        assert a.n == b.n


def test_wilcoxon_millions_of_pairs_from_counts():
    # five million pairs in 41 distinct whole-dB values: must work from the counts alone;
    # the centred statistic equals its known mean for a symmetric table
    u = np.arange(-20.0, 21.0)
    c = np.full(u.size, 121_951)
    res = S.wilcoxon_signed_rank(u, c)
    n = int(c[u != 0].sum())
    assert res.n == n
    assert res.statistic == pytest.approx(n * (n + 1) / 4, rel=1e-12)
    assert res.p_value == pytest.approx(1.0)


def test_wilcoxon_no_informative_pairs():
    res = S.wilcoxon_signed_rank([0.0, 0.0], [3, 4])
    assert res.n == 0 and np.isnan(res.p_value)


# ----------------------------------------------------------------------------- Hodges-Lehmann
def test_hodges_lehmann_hollander_wolfe():
    # Hollander & Wolfe (1973) s. 3.2 on the Hamilton data: median of the 45 Walsh
    # averages = 0.460 (tolerance 0.0005, the book's rounding)
    assert S.hodges_lehmann(HW_D) == pytest.approx(0.460, abs=5e-4)
    # distribution-free interval with C = 6, 96.1 % coverage: [0.010, 0.786]
    # (recomputed by the book's procedure, not read from it); tolerance 0.0005
    lo, hi = S.hodges_lehmann_ci(HW_D, confidence=0.95)
    assert lo == pytest.approx(0.010, abs=5e-4)
    assert hi == pytest.approx(0.786, abs=5e-4)


def brute_hl(x):
    i, j = np.triu_indices(x.size)
    return np.median((x[i] + x[j]) / 2)


@pytest.mark.parametrize("n", [1, 2, 7, 8, 50, 51])
def test_hodges_lehmann_brute_force(rng, n):
    # oracle: the definition, all n(n+1)/2 Walsh averages and numpy's median; exact
    x = rng.normal(0, 2, n)
    assert S.hodges_lehmann(x) == pytest.approx(brute_hl(x), abs=1e-12)


def test_hodges_lehmann_compressed_equals_expanded(rng):
    for n in (200, 201):
        d = tied_sample(rng, n)
        u, c = compress(d)
        assert S.hodges_lehmann(u, c) == brute_hl(d)
        assert S.hodges_lehmann_ci(u, c) == S.hodges_lehmann_ci(d)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(-8, 8), min_size=1, max_size=60))
def test_rank_statistics_compressed_equal_expanded_property(xs):
    # any whole-dB sample: the counts form gives the definitions' answers exactly
    d = np.asarray(xs, dtype=float)
    u, c = compress(d)
    assert S.hodges_lehmann(u, c) == brute_hl(d)
    a, b = S.wilcoxon_signed_rank(d), S.wilcoxon_signed_rank(u, c)
    assert a.statistic == b.statistic and a.n == b.n
    assert (np.isnan(a.p_value) and np.isnan(b.p_value)) or a.p_value == pytest.approx(b.p_value)
    nz = d[d != 0]
    if nz.size:
        assert b.statistic == np.sum(sps.rankdata(np.abs(nz))[nz > 0])


@pytest.mark.parametrize("kind", ["continuous", "0.1 dB", "whole dB", "two values"])
def test_hodges_lehmann_by_bisection_equals_the_definition(rng, monkeypatch, kind):
    # the bisection path (forced: no direct Walsh table) against the definition (all
    # n(n+1)/2 averages and numpy's median) on the expanded data; exact
    d = {"continuous": rng.normal(0.4, 3, 301), "0.1 dB": np.round(rng.normal(0, 3, 400), 1),
         "whole dB": np.round(rng.normal(1, 4, 500)),
         "two values": np.repeat([-1.0, 2.0], [150, 51])}[kind]
    direct_point, direct_ci = S.hodges_lehmann(d), S.hodges_lehmann_ci(d)
    monkeypatch.setattr(S, "WALSH_DIRECT_MAX", 0)
    assert S.hodges_lehmann(d) == brute_hl(d) == direct_point
    u, c = compress(d)
    assert S.hodges_lehmann(u, c) == brute_hl(d)
    assert S.hodges_lehmann_ci(u, c) == S.hodges_lehmann_ci(d) == direct_ci


def test_hodges_lehmann_of_many_distinct_differences_stays_small(rng):
    # 60,000 distinct differences: 1.8e9 Walsh averages would take tens of GB; the
    # bisection keeps the memory linear. Checked by the definition: half of the Walsh
    # averages (counted here without forming them: a sorted search per row) lie at or
    # below the median
    d = rng.normal(0.7, 3, 60_000)
    hl = S.hodges_lehmann(d)
    x = np.sort(d)
    # number of pairs i <= j with x_i + x_j <= 2 hl, by a sorted search per row
    below = (np.searchsorted(x, 2 * hl - x, side="right") - np.arange(x.size)).clip(0).sum()
    m = x.size * (x.size + 1) / 2
    assert abs(below / m - 0.5) < 1e-6
    assert abs(hl - 0.7) < 0.1  # the centre of the symmetric parent (5 SE here)


def test_hodges_lehmann_on_whole_db_is_half_db_grid(rng):
    # documented limitation: Walsh averages of integers are half-integers, so HL on
    # whole-dB reports is a multiple of 0.5 dB whatever the true shift (0.3 dB here);
    # this is why the censored MLE, not HL, is the headline estimator
    d = tied_sample(rng, 5000, loc=0.3)
    hl = S.hodges_lehmann(d)
    assert (2 * hl) == np.round(2 * hl)


def test_hodges_lehmann_ci_coverage_normal_approx(rng):
    # large-sample interval (normal critical value) covers the true centre of a
    # continuous symmetric distribution in about 95 % of 300 draws (accept 0.91-0.99)
    hits = 0
    for _ in range(300):
        x = rng.standard_t(5, 60) + 1.0
        lo, hi = S.hodges_lehmann_ci(np.round(x, 3))
        hits += lo <= 1.0 <= hi
    assert 0.91 <= hits / 300 <= 0.99


# ----------------------------------------------------------------------------- sign test
def test_sign_test_hollander_wolfe():
    # Hamilton data: 7 positive, 2 negative differences; one-sided p = 46/512 = 0.08984
    # (recomputed from Binomial(9, 1/2)); tolerance 1e-5
    res = S.sign_test(HW_D, alternative="greater")
    assert res.statistic == 7 and res.n == 9
    assert res.p_value == pytest.approx(0.08984, abs=1e-5)
    assert res.p_value == pytest.approx(46 / 512, rel=1e-12)


@pytest.mark.parametrize("alternative", ["two-sided", "greater", "less"])
def test_sign_test_matches_binomtest(rng, alternative):
    # oracle: scipy.stats.binomtest on the non-zero signs; tolerance 1e-12 relative
    d = tied_sample(rng, 150, loc=0.5)
    u, c = compress(d)
    ours = S.sign_test(u, c, alternative=alternative)
    ref = sps.binomtest(int(np.sum(d > 0)), int(np.sum(d != 0)), 0.5, alternative=alternative)
    assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-12)


# ----------------------------------------------------------------------------- McNemar
def test_mcnemar_agresti():
    # Agresti, Categorical Data Analysis (1990) p. 350, table 794/150/86/570:
    # X^2 = 17.356 (p = 3.10e-5); corrected 16.818 (p = 4.11e-5); exact p = 3.7e-5.
    # Tolerances: 0.001 on X^2, 0.01e-5 on chi-square p, 0.05e-5 on exact p.
    r = S.mcnemar(150, 86, "chi2")
    assert r.statistic == pytest.approx(17.356, abs=1e-3)
    assert r.p_value == pytest.approx(3.10e-5, abs=1e-7)
    r = S.mcnemar(150, 86, "chi2-corrected")
    assert r.statistic == pytest.approx(16.818, abs=1e-3)
    assert r.p_value == pytest.approx(4.11e-5, abs=1e-7)
    r = S.mcnemar(150, 86, "exact")
    assert r.p_value == pytest.approx(3.7e-5, abs=5e-7)
    assert r.n == 236


@pytest.mark.parametrize("b,c", [(3, 9), (20, 11), (0, 5), (40, 40), (7, 8)])
def test_mcnemar_matches_statsmodels(b, c):
    # oracle: statsmodels.stats.contingency_tables.mcnemar; tolerance 1e-12 relative
    table = [[10, b], [c, 10]]
    for method, kw in (("exact", dict(exact=True)),
                       ("chi2", dict(exact=False, correction=False)),
                       ("chi2-corrected", dict(exact=False, correction=True))):
        if method == "chi2-corrected" and abs(b - c) < 1:
            continue  # statsmodels does not clamp |b - c| - 1 at zero
        ours = S.mcnemar(b, c, method)
        ref = sm_mcnemar(table, **kw)
        assert ours.p_value == pytest.approx(ref.pvalue, rel=1e-12)
        assert ours.statistic == pytest.approx(ref.statistic, rel=1e-12)


def test_mcnemar_vectorised_and_empty():
    r = S.mcnemar([150, 0, 3], [86, 0, 9], "exact")
    assert r.p_value.shape == (3,)
    assert np.isnan(r.p_value[1])
    assert r.p_value[0] == S.mcnemar(150, 86).p_value


# ----------------------------------------------------------------------------- BH
def test_benjamini_hochberg_paper_example():
    # Benjamini & Hochberg (1995): at q = 0.05 BH rejects 4 of 15; adjusted values begin
    # .0015, .0030, .0095, .0356, .0603 (tolerance 0.00005, the rounding of the listing)
    adj = S.benjamini_hochberg(BH_P)
    assert np.sum(adj <= 0.05) == 4
    np.testing.assert_allclose(adj[:5], [.0015, .0030, .0095, .0356, .0603], atol=5e-5)


def test_benjamini_hochberg_matches_statsmodels_with_nan(rng):
    # oracle: statsmodels multipletests(method="fdr_bh") on the non-NaN entries
    p = rng.uniform(0, 1, 40) ** 3
    p[[3, 17, 30]] = np.nan
    ours = S.benjamini_hochberg(p.reshape(5, 8)).ravel()
    ok = ~np.isnan(p)
    ref = multipletests(p[ok], method="fdr_bh")[1]
    np.testing.assert_allclose(ours[ok], ref, rtol=1e-12)
    assert np.all(np.isnan(ours[~ok]))
    # monotone in p, capped at 1, never below the raw p
    order = np.argsort(p[ok])
    assert np.all(np.diff(ours[ok][order]) >= 0)
    assert np.all(ours[ok] <= 1) and np.all(ours[ok] >= p[ok])


def test_benjamini_hochberg_rejects_bad_p():
    with pytest.raises(UsageError):
        S.benjamini_hochberg([0.2, 1.3])
    assert S.benjamini_hochberg([]).shape == (0,)


# ----------------------------------------------------------------------------- Wilson
def test_wilson_matches_statsmodels():
    # oracle: statsmodels proportion_confint(method="wilson"); tolerance 1e-12
    k = np.array([0, 1, 5, 17, 50, 99, 100])
    n = np.array([10, 10, 20, 40, 50, 100, 100])
    for conf in (0.9, 0.95, 0.99):
        lo, hi = S.wilson_interval(k, n, conf)
        rlo, rhi = proportion_confint(k, n, alpha=1 - conf, method="wilson")
        np.testing.assert_allclose(lo, rlo, atol=1e-12)
        np.testing.assert_allclose(hi, rhi, atol=1e-12)
    lo, hi = S.wilson_interval(0, 0)
    assert np.isnan(lo) and np.isnan(hi)
    with pytest.raises(UsageError):
        S.wilson_interval(5, 3)


# ----------------------------------------------------------------------------- arguments
@pytest.mark.parametrize("call", [
    lambda: S.wilcoxon_signed_rank([1, 2], alternative="bigger"),
    lambda: S.wilcoxon_signed_rank([1, 2], method="permutation"),
    lambda: S.sign_test([1, 2], alternative="up"),
    lambda: S.mcnemar(1, 2, method="yates"),
])
def test_unknown_keywords_list_valid_ones(call):
    with pytest.raises(ValueError, match="valid"):
        call()


def test_bad_counts_raise_usage_error():
    with pytest.raises(UsageError):
        S.wilcoxon_signed_rank([1.0, 2.0], [1, -1])
    with pytest.raises(UsageError):
        S.hodges_lehmann([1.0, 2.0], [1.5, 1])
    with pytest.raises(UsageError):
        S.sign_test([1.0, np.nan])
    with pytest.raises(UsageError):
        S.hodges_lehmann([1.0, 2.0], [1, 1, 1])


def test_empty_and_degenerate_inputs_give_nan_not_warnings():
    # pytest turns warnings into errors: these must be quiet NaNs (censored fits and the
    # bootstrap: test_censored.py, test_bootstrap.py)
    assert np.isnan(S.hodges_lehmann([]))
    assert np.isnan(S.wilcoxon_signed_rank([]).p_value)
    assert np.isnan(S.sign_test([]).p_value)
    assert S.hodges_lehmann_ci([1.0, 2.0]) == (-np.inf, np.inf)  # 95 % unreachable at n = 2
