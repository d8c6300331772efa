"""Tests of spotkit.stats against published worked examples and scipy/statsmodels oracles."""
from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats as sps
from statsmodels.stats.contingency_tables import mcnemar as sm_mcnemar
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.proportion import proportion_confint

from spotkit import stats as S
from spotkit.errors import UsageError

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


# ----------------------------------------------------------------------------- censored MLE
def censor(x, lower_limit, upper_limit):
    """Below ``lower_limit``: upper bounds there; above ``upper_limit``: lower bounds there."""
    kinds = np.where(x < lower_limit, 1, np.where(x > upper_limit, -1, 0))
    vals = np.where(kinds == 1, lower_limit, np.where(kinds == -1, upper_limit, x))
    return vals, kinds


def test_censored_mle_without_censoring_is_mean_and_sd(rng):
    # Tobin (1958): with no censoring the model is ordinary least squares: mean and the
    # ddof=0 SD, to rounding (1e-12 dB)
    x = tied_sample(rng, 500)
    u, c = compress(x)
    fit = S.censored_normal_mle(u, np.zeros(u.size, int), c)
    assert fit.converged
    assert fit.mu == pytest.approx(np.mean(x), abs=1e-12)
    assert fit.sigma == pytest.approx(np.std(x), abs=1e-12)
    assert fit.n_exact == 500 and fit.n_upper == 0 and fit.n_lower == 0
    # the log-likelihood is that of the normal at those values
    assert fit.loglik == pytest.approx(sps.norm.logpdf(x, fit.mu, fit.sigma).sum(), rel=1e-10)


def test_censored_mle_equal_values_floor():
    fit = S.censored_normal_mle([2.0], [0], [40])
    assert fit.mu == 2.0 and fit.sigma == S.SIGMA_FLOOR_DB


@pytest.mark.parametrize("true_mu,true_sigma", [(0.3, 3.0), (-1.7, 5.0)])
def test_censored_mle_recovers_parameters_heavy_censoring(rng, true_mu, true_sigma):
    # simulation: about 40 % censored on each side (limits at mu -+ 0.253 sigma);
    # estimates within 4 standard errors of the truth
    x = rng.normal(true_mu, true_sigma, 4000)
    lim = 0.2533 * true_sigma
    vals, kinds = censor(x, true_mu - lim, true_mu + lim)
    assert 0.37 < np.mean(kinds == 1) < 0.43 and 0.37 < np.mean(kinds == -1) < 0.43
    fit = S.censored_normal_mle(vals, kinds)
    assert fit.converged
    assert abs(fit.mu - true_mu) < 4 * fit.se_mu
    assert abs(fit.sigma - true_sigma) < 4 * fit.se_sigma
    # the naive mean of the exact values alone is pulled to the window, not the truth
    assert fit.se_mu < 0.2 * true_sigma


def test_censored_mle_standard_error_matches_monte_carlo(rng):
    # the information-based SE of mu agrees with the spread over 60 simulated data sets
    # to within 25 % (Monte-Carlo error of an SD from 60 draws is about 9 %)
    mus, ses = [], []
    for _ in range(60):
        vals, kinds = censor(rng.normal(0.0, 2.0, 400), -1.0, 1.5)
        fit = S.censored_normal_mle(vals, kinds)
        mus.append(fit.mu)
        ses.append(fit.se_mu)
    assert np.std(mus, ddof=1) == pytest.approx(np.mean(ses), rel=0.25)


def test_censored_mle_whole_db_is_not_stuck_on_grid(rng):
    # the headline estimator on whole-dB data: true shift 0.3 dB, sigma 3 dB, exact values
    # reported in whole dB, bounds at -2.5 / +2.5 dB. The MLE is continuous: it returns
    # about 0.3 dB (tolerance 0.1 dB = 4 SE; the rounding of exact values biases it by
    # under 0.01 dB here), clearly neither 0 nor 0.5 as the HL estimate must be.
    z = rng.normal(0.3, 3.0, 20000)
    vals, kinds = censor(z, -2.5, 2.5)
    vals = np.where(kinds == 0, np.round(vals), vals)
    u, inv = np.unique(np.c_[vals, kinds], axis=0, return_inverse=True)
    c = np.bincount(inv.ravel())
    assert u.shape[0] == 7  # seven distinct (value, kind) rows carry 20 000 pairs
    fit = S.censored_normal_mle(u[:, 0], u[:, 1].astype(int), c)
    assert abs(fit.mu - 0.3) < 0.1
    assert abs(fit.mu - 0.0) > 0.15 and abs(fit.mu - 0.5) > 0.1
    assert fit.sigma == pytest.approx(3.0, abs=0.15)


def test_censored_mle_compressed_equals_expanded(rng):
    x = tied_sample(rng, 3000)
    vals, kinds = censor(x, -2.0, 3.0)
    u, inv = np.unique(np.c_[vals, kinds], axis=0, return_inverse=True)
    c = np.bincount(inv.ravel())
    a = S.censored_normal_mle(vals, kinds)
    b = S.censored_normal_mle(u[:, 0], u[:, 1].astype(int), c)
    assert a.mu == pytest.approx(b.mu, abs=1e-9)
    assert a.sigma == pytest.approx(b.sigma, abs=1e-9)
    assert a.loglik == pytest.approx(b.loglik, rel=1e-10)


def test_censored_mle_is_the_maximum(rng):
    # oracle: scipy.optimize.minimize (Nelder-Mead) on the same log-likelihood written out
    # independently with scipy.stats.norm; the fitted log-likelihood is at least as high
    from scipy.optimize import minimize
    vals, kinds = censor(rng.normal(1.0, 2.5, 300), -0.5, 2.0)

    def negll(p):
        mu, s = p[0], np.exp(p[1])
        return -(sps.norm.logpdf(vals[kinds == 0], mu, s).sum()
                 + sps.norm.logcdf(vals[kinds == 1], mu, s).sum()
                 + sps.norm.logsf(vals[kinds == -1], mu, s).sum())

    ref = minimize(negll, [0.0, 0.0], method="Nelder-Mead",
                   options=dict(xatol=1e-8, fatol=1e-10, maxiter=4000))
    fit = S.censored_normal_mle(vals, kinds)
    assert fit.mu == pytest.approx(ref.x[0], abs=1e-4)
    assert fit.sigma == pytest.approx(np.exp(ref.x[1]), abs=1e-4)
    assert -fit.loglik <= ref.fun + 1e-8


def test_censored_mle_no_exact_values():
    # bounds of both kinds that a narrow normal can satisfy: sigma goes to its floor
    fit = S.censored_normal_mle([1.0, -1.0], [1, -1], [5, 5])
    assert fit.converged and fit.sigma == pytest.approx(S.SIGMA_FLOOR_DB)
    assert fit.mu == pytest.approx(0.0, abs=1e-8)
    # only upper bounds: no maximum (mu runs to -inf) -> NaN, not converged
    fit = S.censored_normal_mle([1.0, 3.0], [1, 1], [5, 2])
    assert np.isnan(fit.mu) and not fit.converged
    # contradictory bounds only (true <= -4 and true >= +4): sigma diverges -> NaN
    fit = S.censored_normal_mle([-4.0, 4.0], [1, -1], [3, 3])
    assert np.isnan(fit.mu) and not fit.converged


def test_censored_mle_floor_with_censoring():
    # all exact values equal (0 dB) and bounds that agree with them (true <= 3, true >= -3):
    # the unconstrained sigma would be about 0, so the fit sits on the floor, mu = 0 by
    # symmetry; the batch fit does the same
    vals, kinds = [0.0, 3.0, -3.0], [0, 1, -1]
    fit = S.censored_normal_mle(vals, kinds, [50, 1, 1], sigma_floor=0.5)
    assert fit.converged
    assert fit.sigma == 0.5 and fit.mu == pytest.approx(0.0, abs=1e-10)
    # lower bounds close above -1 dB pull mu off the exact value, still on the floor;
    # oracle: scipy.optimize.minimize_scalar over mu with sigma = 0.5, tolerance 1e-6 dB
    from scipy.optimize import minimize_scalar
    vals2 = [0.0, 3.0, -0.2]
    fit2 = S.censored_normal_mle(vals2, kinds, [50, 1, 30], sigma_floor=0.5)
    ref = minimize_scalar(lambda m: -(50 * sps.norm.logpdf(0.0, m, 0.5)
                                      + sps.norm.logcdf(3.0, m, 0.5)
                                      + 30 * sps.norm.logsf(-0.2, m, 0.5)),
                          bounds=(-1, 1), method="bounded", options=dict(xatol=1e-9))
    assert fit2.sigma == 0.5 and fit2.mu > 0.01
    assert fit2.mu == pytest.approx(ref.x, abs=1e-6)
    for v, w, f in ((vals, [50, 1, 1], fit), (vals2, [50, 1, 30], fit2)):
        mu, sigma = S.censored_normal_mle_batch(v, kinds, [w, w], sigma_floor=0.5)
        np.testing.assert_allclose(mu, f.mu, atol=1e-10)
        np.testing.assert_allclose(sigma, 0.5)


def test_batch_equals_single_fits(rng):
    u = np.array([-6.0, -4, -3, -2, -1, 0, 1, 2, 3, 4, 6])
    kinds = np.array([1, 1, 0, 0, 0, 0, 0, 0, 0, -1, -1])
    base = np.array([30, 20, 25, 40, 60, 70, 65, 45, 30, 25, 35], float)
    w = rng.multinomial(int(base.sum()), base / base.sum(), size=40).astype(float)
    w[3] = 0.0  # no data -> NaN
    w[5] = np.where(kinds == 0, w[5], 0.0)  # no censoring -> closed form
    w[7] = np.where(kinds == 1, w[7], 0.0)  # only upper bounds -> NaN
    w[9, kinds == 0] = 0.0  # only bounds, contradictory (<= -4 and >= +4) -> NaN
    w[11] = 0.0
    w[11, [0, 5, 10]] = [1, 50, 1]  # one exact value, bounds contradicting it
    mu, sigma = S.censored_normal_mle_batch(u, kinds, w)
    assert mu.shape == (40,)
    for b in range(40):
        f = S.censored_normal_mle(u, kinds, w[b])
        if np.isnan(f.mu):
            assert np.isnan(mu[b]) and np.isnan(sigma[b])
        else:
            assert mu[b] == pytest.approx(f.mu, abs=1e-8)
            assert sigma[b] == pytest.approx(f.sigma, abs=1e-8)
    assert np.isnan(mu[3]) and np.isnan(mu[7]) and np.isnan(mu[9])
    assert mu[5] == pytest.approx(np.sum(w[5] * u) / w[5].sum(), abs=1e-12)
    assert sigma[11] > 1.0  # the bounds widen the fit well above the floor
    assert np.all(np.isfinite(np.delete(mu, [3, 7, 9])))


def test_batch_rejects_bad_shapes():
    with pytest.raises(UsageError):
        S.censored_normal_mle_batch([1.0, 2.0], [0, 0], np.ones((3, 3)))
    with pytest.raises(UsageError):
        S.censored_normal_mle([1.0, 2.0], [0, 2])


# ----------------------------------------------------------------------------- bootstrap
def test_cluster_bootstrap_weights_shape_and_sums():
    w = S.cluster_bootstrap_weights(12, 500, np.random.default_rng(3))
    assert w.shape == (500, 12) and w.dtype.kind == "i"
    assert np.all(w.sum(axis=1) == 12)
    # each cluster is drawn 1 time per sample on average (Davison & Hinkley 1997, s. 3.8)
    assert w.mean() == pytest.approx(1.0, abs=0.05)
    again = S.cluster_bootstrap_weights(12, 500, 3)
    assert np.array_equal(again, S.cluster_bootstrap_weights(12, 500, 3))


def test_cluster_bootstrap_coverage(rng):
    # simulation (Davison & Hinkley 1997, s. 3.8): 20 clusters of 10 values with a cluster
    # random effect (ICC 0.5). The percentile interval of the cluster bootstrap covers the
    # true mean in about 95 % of 200 data sets (accept 0.90-0.99); resampling single values
    # ignores the correlation and under-covers (design effect 5.5: about 60 %).
    n_rep, g, m, n_boot, mu = 200, 20, 10, 400, 1.0
    hit_cluster = hit_iid = 0
    for _ in range(n_rep):
        y = mu + rng.normal(0, 1, (g, 1)) + rng.normal(0, 1, (g, m))
        w = S.cluster_bootstrap_weights(g, n_boot, rng)
        reps = (w @ y.sum(axis=1)) / (w.sum(axis=1) * m)
        lo, hi = S.bootstrap_interval(reps, y.mean())
        hit_cluster += lo <= mu <= hi
        flat = y.ravel()
        wi = S.cluster_bootstrap_weights(flat.size, n_boot, rng)
        lo, hi = S.bootstrap_interval(wi @ flat / flat.size, flat.mean())
        hit_iid += lo <= mu <= hi
    assert 0.90 <= hit_cluster / n_rep <= 0.99
    assert hit_iid / n_rep < 0.80


def test_bootstrap_interval_methods(rng):
    reps = rng.normal(2.0, 0.5, (5000, 3))
    reps[:10, 1] = np.nan  # failed fits are left out
    est = np.array([2.1, 2.0, 1.9])
    lo, hi = S.bootstrap_interval(reps, est)
    np.testing.assert_allclose(lo[0], np.quantile(reps[:, 0], 0.025))
    np.testing.assert_allclose(hi[1], np.quantile(reps[10:, 1], 0.975))
    blo, bhi = S.bootstrap_interval(reps, est, method="basic")
    np.testing.assert_allclose(blo, 2 * est - hi)
    nlo, nhi = S.bootstrap_interval(reps, est, method="normal")
    # normal quantile 1.96 x SD 0.5 = 0.98 dB half-width, tolerance 0.03 dB (MC error)
    np.testing.assert_allclose(nhi - est, 0.98, atol=0.03)
    with pytest.raises(ValueError, match="percentile"):
        S.bootstrap_interval(reps, est, method="bca")
    lo, hi = S.bootstrap_interval(np.full(10, np.nan), 1.0)
    assert np.isnan(lo) and np.isnan(hi)


def test_bootstrap_p_value(rng):
    # estimate 1.96 SE from zero -> p = 0.05 (normal approximation); tolerance 0.005
    reps = rng.normal(0.0, 1.0, 20000)
    assert S.bootstrap_p_value(reps, 1.96) == pytest.approx(0.05, abs=0.005)
    p = S.bootstrap_p_value(np.c_[reps, 2 * reps], [0.0, 3.92])
    assert p[0] == pytest.approx(1.0) and p[1] == pytest.approx(0.05, abs=0.005)
    assert np.isnan(S.bootstrap_p_value(np.ones(50), 1.0))


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
    # pytest turns warnings into errors: these must be quiet NaNs
    assert np.isnan(S.hodges_lehmann([]))
    assert np.isnan(S.wilcoxon_signed_rank([]).p_value)
    assert np.isnan(S.sign_test([]).p_value)
    assert np.isnan(S.censored_normal_mle([], []).mu)
    mu, sigma = S.censored_normal_mle_batch([], [], np.zeros((3, 0)))
    assert np.all(np.isnan(mu)) and np.all(np.isnan(sigma))
    assert S.hodges_lehmann_ci([1.0, 2.0]) == (-np.inf, np.inf)  # 95 % unreachable at n = 2
    lo, hi = S.bootstrap_interval([[1.0, np.nan], [2.0, 3.0]], [1.5, 3.0], method="normal")
    assert np.isfinite(lo[0]) and np.isnan(lo[1]) and np.isnan(hi[1])
    assert np.isnan(S.bootstrap_p_value([1.0, np.nan], 1.0))
    with pytest.raises(UsageError):
        S.bootstrap_interval([], 1.0)
