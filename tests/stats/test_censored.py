"""Tests of spotkit.stats.censored: the censored-normal MLE against scipy oracles and simulation."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats as sps

from spotkit.errors import UsageError
from spotkit.stats import censored as CN


def compress(x):
    """Distinct values and their counts."""
    u, c = np.unique(x, return_counts=True)
    return u, c


def tied_sample(rng, n, loc=0.4, scale=3.0):
    """Whole-dB differences: many ties and zeros, as in real reports."""
    return np.round(rng.normal(loc, scale, n))


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
    fit = CN.censored_normal_mle(u, np.zeros(u.size, int), c)
    assert fit.converged
    assert fit.mu == pytest.approx(np.mean(x), abs=1e-12)
    assert fit.sigma == pytest.approx(np.std(x), abs=1e-12)
    assert fit.n_exact == 500 and fit.n_upper == 0 and fit.n_lower == 0
    # the log-likelihood is that of the normal at those values
    assert fit.loglik == pytest.approx(sps.norm.logpdf(x, fit.mu, fit.sigma).sum(), rel=1e-10)


def test_censored_mle_equal_values_floor():
    fit = CN.censored_normal_mle([2.0], [0], [40])
    assert fit.mu == 2.0 and fit.sigma == CN.SIGMA_FLOOR_DB


@pytest.mark.parametrize("true_mu,true_sigma", [(0.3, 3.0), (-1.7, 5.0)])
def test_censored_mle_recovers_parameters_heavy_censoring(rng, true_mu, true_sigma):
    # simulation: about 40 % censored on each side (limits at mu -+ 0.253 sigma);
    # estimates within 4 standard errors of the truth
    x = rng.normal(true_mu, true_sigma, 4000)
    lim = 0.2533 * true_sigma
    vals, kinds = censor(x, true_mu - lim, true_mu + lim)
    assert 0.37 < np.mean(kinds == 1) < 0.43 and 0.37 < np.mean(kinds == -1) < 0.43
    fit = CN.censored_normal_mle(vals, kinds)
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
        fit = CN.censored_normal_mle(vals, kinds)
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
    fit = CN.censored_normal_mle(u[:, 0], u[:, 1].astype(int), c)
    assert abs(fit.mu - 0.3) < 0.1
    assert abs(fit.mu - 0.0) > 0.15 and abs(fit.mu - 0.5) > 0.1
    assert fit.sigma == pytest.approx(3.0, abs=0.15)


def test_censored_mle_compressed_equals_expanded(rng):
    x = tied_sample(rng, 3000)
    vals, kinds = censor(x, -2.0, 3.0)
    u, inv = np.unique(np.c_[vals, kinds], axis=0, return_inverse=True)
    c = np.bincount(inv.ravel())
    a = CN.censored_normal_mle(vals, kinds)
    b = CN.censored_normal_mle(u[:, 0], u[:, 1].astype(int), c)
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
    fit = CN.censored_normal_mle(vals, kinds)
    assert fit.mu == pytest.approx(ref.x[0], abs=1e-4)
    assert fit.sigma == pytest.approx(np.exp(ref.x[1]), abs=1e-4)
    assert -fit.loglik <= ref.fun + 1e-8


def test_censored_mle_no_exact_values():
    # bounds of both kinds that a narrow normal can satisfy: sigma goes to its floor
    fit = CN.censored_normal_mle([1.0, -1.0], [1, -1], [5, 5])
    assert fit.converged and fit.sigma == pytest.approx(CN.SIGMA_FLOOR_DB)
    assert fit.mu == pytest.approx(0.0, abs=1e-8)
    # only upper bounds: no maximum (mu runs to -inf) -> NaN, not converged
    fit = CN.censored_normal_mle([1.0, 3.0], [1, 1], [5, 2])
    assert np.isnan(fit.mu) and not fit.converged
    # contradictory bounds only (true <= -4 and true >= +4): sigma diverges -> NaN
    fit = CN.censored_normal_mle([-4.0, 4.0], [1, -1], [3, 3])
    assert np.isnan(fit.mu) and not fit.converged


def test_censored_mle_floor_with_censoring():
    # all exact values equal (0 dB) and bounds that agree with them (true <= 3, true >= -3):
    # the unconstrained sigma would be about 0, so the fit sits on the floor, mu = 0 by
    # symmetry; the batch fit does the same
    vals, kinds = [0.0, 3.0, -3.0], [0, 1, -1]
    fit = CN.censored_normal_mle(vals, kinds, [50, 1, 1], sigma_floor=0.5)
    assert fit.converged
    assert fit.sigma == 0.5 and fit.mu == pytest.approx(0.0, abs=1e-10)
    # lower bounds close above -1 dB pull mu off the exact value, still on the floor;
    # oracle: scipy.optimize.minimize_scalar over mu with sigma = 0.5, tolerance 1e-6 dB
    from scipy.optimize import minimize_scalar
    vals2 = [0.0, 3.0, -0.2]
    fit2 = CN.censored_normal_mle(vals2, kinds, [50, 1, 30], sigma_floor=0.5)
    ref = minimize_scalar(lambda m: -(50 * sps.norm.logpdf(0.0, m, 0.5)
                                      + sps.norm.logcdf(3.0, m, 0.5)
                                      + 30 * sps.norm.logsf(-0.2, m, 0.5)),
                          bounds=(-1, 1), method="bounded", options=dict(xatol=1e-9))
    assert fit2.sigma == 0.5 and fit2.mu > 0.01
    assert fit2.mu == pytest.approx(ref.x, abs=1e-6)
    for v, w, f in ((vals, [50, 1, 1], fit), (vals2, [50, 1, 30], fit2)):
        mu, sigma = CN.censored_normal_mle_batch(v, kinds, [w, w], sigma_floor=0.5)
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
    mu, sigma = CN.censored_normal_mle_batch(u, kinds, w)
    assert mu.shape == (40,)
    for b in range(40):
        f = CN.censored_normal_mle(u, kinds, w[b])
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
        CN.censored_normal_mle_batch([1.0, 2.0], [0, 0], np.ones((3, 3)))
    with pytest.raises(UsageError):
        CN.censored_normal_mle([1.0, 2.0], [0, 2])


def test_empty_inputs_give_nan_not_warnings():
    # pytest turns warnings into errors: these must be quiet NaNs
    assert np.isnan(CN.censored_normal_mle([], []).mu)
    mu, sigma = CN.censored_normal_mle_batch([], [], np.zeros((3, 0)))
    assert np.all(np.isnan(mu)) and np.all(np.isnan(sigma))


# --- the missed-report mixture --------------------------------------------------------------
def _mixture_loglik(v, k, c, mu, sigma, pa, pb):
    """Oracle: the mixture log-likelihood written with scipy.stats.norm."""
    z = (v - mu) / sigma
    ll = np.where(k == 0, np.log1p(-pa) + np.log1p(-pb) + sps.norm.logpdf(z) - np.log(sigma),
                  np.where(k == 1, np.log(pa + (1 - pa) * sps.norm.cdf(z)),
                           np.log(pb + (1 - pb) * sps.norm.sf(z))))
    return float(np.sum(c * ll))


def _paired(rng, n, lose_b=0.0, lose_a=0.0):
    """Paired reports ``A = L + e_A``, ``B = L + 1 + e_B`` with a flat common level ``L``
    (uniform over 200 dB, so the flat-prior model holds up to edge effects) and
    ``e ~ N(0, 1.8^2)`` (so ``d ~ N(1, 2.55^2)``), each heard at or above 0 dB; a share of
    pairs loses its B (A) report for a reason unrelated to d. Returns the values and kinds
    of the difference-Tobit (bounds from the heard side and the limit) and the true shares
    of all observed pairs that lost a report."""
    level = rng.uniform(-100.0, 100.0, n)
    a = level + rng.normal(0.0, 1.8, n)
    b = level + 1.0 + rng.normal(0.0, 1.8, n)
    thr = 0.0
    ha, hb = a >= thr, b >= thr
    lb = rng.random(n) < lose_b
    la = ~lb & (rng.random(n) < lose_a / max(1.0 - lose_b, 1e-9))
    hb, ha = hb & ~lb, ha & ~la
    keep = ha | hb
    a, b, ha, hb = a[keep], b[keep], ha[keep], hb[keep]
    kinds = np.where(ha & hb, 0, np.where(ha, 1, -1))
    vals = np.where(ha & hb, b - a, np.where(ha, thr - a, b - thr))
    share_a = (lb[keep] & ha).sum() / keep.sum()
    share_b = (la[keep] & hb).sum() / keep.sum()
    return vals, kinds, share_a, share_b


def test_mixture_without_missing_reports_is_the_plain_fit(rng):
    # nested model: with nothing missing the fitted shares stay near their floor and mu,
    # sigma equal the censored-normal fit with the same weights (to 0.02 dB); the paired
    # (composite) likelihood recovers the truth mu = 1 dB (0.1 dB, about 5 SE)
    vals, kinds, _, _ = _paired(rng, 20000)
    plain = CN.censored_normal_mle(vals, kinds, np.where(kinds == 0, 2.0, 1.0))
    mix = CN.censored_mixture_mle(vals, kinds, exact_weight=2.0)
    assert mix.missed_a < 0.005 and mix.missed_b < 0.005
    assert mix.mu == pytest.approx(plain.mu, abs=0.02)
    assert mix.sigma == pytest.approx(plain.sigma, abs=0.02)
    assert mix.loglik >= plain.loglik - 1e-6
    assert mix.mu == pytest.approx(1.0, abs=0.1)


def test_mixture_recovers_mu_when_reports_go_missing(rng):
    # simulation (_paired): 10 % of the pairs lose their B report and 4 % their A report for
    # a reason that has nothing to do with d (their bound is then taken at the other
    # side's limit). The plain fit is pulled far off; the mixture recovers mu within 0.1 dB
    # (about 5 SE) and sigma within 0.1 dB, and the missing shares within 0.02
    vals, kinds, share_a, share_b = _paired(rng, 40000, lose_b=0.10, lose_a=0.04)
    plain = CN.censored_normal_mle(vals, kinds, np.where(kinds == 0, 2.0, 1.0))
    mix = CN.censored_mixture_mle(vals, kinds, exact_weight=2.0)
    assert abs(plain.mu - 1.0) > 0.3
    assert mix.mu == pytest.approx(1.0, abs=0.1)
    assert mix.sigma == pytest.approx(1.8 * np.sqrt(2.0), abs=0.1)
    assert mix.missed_a == pytest.approx(share_a, abs=0.02)
    assert mix.missed_b == pytest.approx(share_b, abs=0.02)
    # the returned log-likelihood is the mixture's, written with scipy.stats (1e-8 relative)
    one = CN.censored_mixture_mle(vals, kinds, exact_weight=1.0)  # a single mixture
    assert one.mu == pytest.approx(1.0, abs=0.1)
    assert one.loglik == pytest.approx(_mixture_loglik(vals, kinds, np.ones(vals.size),
                                                       one.mu, one.sigma, one.missed_a,
                                                       one.missed_b), rel=1e-8)
    mix = one
    # and it is a maximum: nudging any parameter lowers it
    for dm, ds, da, db in ((0.02, 0, 0, 0), (-0.02, 0, 0, 0), (0, 0.02, 0, 0),
                           (0, 0, 0.002, 0), (0, 0, 0, -0.002)):
        assert _mixture_loglik(vals, kinds, np.ones(vals.size), mix.mu + dm,
                               mix.sigma + ds, mix.missed_a + da,
                               mix.missed_b + db) < mix.loglik


def test_mixture_batch_matches_single_fits(rng):
    vals, kinds = censor(rng.normal(-0.5, 3.0, 800), -2.0, 2.0)
    u, inv = np.unique(np.c_[vals, kinds], axis=0, return_inverse=True)
    w = np.stack([np.bincount(inv.ravel(), weights=rng.poisson(1.0, vals.size),
                              minlength=len(u)) for _ in range(5)])
    mu, sigma, pa, pb = CN.censored_mixture_mle_batch(u[:, 0], u[:, 1].astype(int), w)
    for i in range(5):
        one = CN.censored_mixture_mle(u[:, 0], u[:, 1].astype(int), w[i])
        assert mu[i] == pytest.approx(one.mu, abs=1e-9)
        assert sigma[i] == pytest.approx(one.sigma, abs=1e-9)
    # no exact values: no mixture (the shares would explain every bound); plain fit
    fit = CN.censored_mixture_mle([1.0, -2.0], [1, -1], [5, 5])
    assert fit.missed_a == 0.0 and fit.missed_b == 0.0
    share = CN.normal_share([0.0, 1.0], [0, 1], [0.0], [1.0], [0.2], [0.1])
    # exact: 1; upper bound 1 sigma above mu: (1 - pa) Phi(1) / (pa + (1 - pa) Phi(1))
    assert share[0, 0] == 1.0 and share[0, 1] == pytest.approx(0.8 * sps.norm.cdf(1.0) /
                                                               (0.2 + 0.8 * sps.norm.cdf(1.0)))


# --------------------------------------------------------------- the detection-model fit
def _whole_db_sample(rng, n, lo_lim=-1.5, hi_lim=2.5):
    x = np.round(rng.normal(0.4, 2.0, n))
    kind = np.where(x < lo_lim, 1, np.where(x > hi_lim, -1, 0))
    val = np.where(kind == 1, lo_lim, np.where(kind == -1, hi_lim, x))
    u, inv = np.unique(np.c_[val, kind], axis=0, return_inverse=True)
    return val, kind, u[:, 0], u[:, 1].astype(int), np.bincount(inv.ravel())


def _censored_data(val, kind, h):
    low = np.where(kind == 0, val - h, np.where(kind == 1, -np.inf, val))
    high = np.where(kind == 0, val + h, np.where(kind == 1, val, np.inf))
    return sps.CensoredData(interval=np.c_[low, high])


def test_interval_fit_agrees_with_scipy_censored_data(rng):
    # scipy.stats.norm.fit(CensoredData) (scipy >= 1.11) maximises the same interval- and
    # one-sided-censored likelihood: mu and sigma agree to 1e-4 dB
    val, kind, u, k, c = _whole_db_sample(rng, 3000)
    fit = CN.interval_censored_mle(u, k, c, half_width_db=0.5)
    m, s = sps.norm.fit(_censored_data(val, kind, 0.5))
    assert fit.converged
    assert fit.mu == pytest.approx(m, abs=1e-4)
    assert fit.sigma == pytest.approx(s, abs=1e-4)
    # and its log-likelihood is scipy's at the maximum (1e-9 relative)
    assert fit.loglik == pytest.approx(sps.norm.logpdf(0, 0, 1) * 0 + np.sum(
        np.log(np.where(kind == 0, sps.norm.cdf(val + 0.5, m, s) - sps.norm.cdf(
            val - 0.5, m, s), np.where(kind == 1, sps.norm.cdf(val, m, s),
                                       sps.norm.sf(val, m, s))))), rel=1e-7)
    # points (half width 0) are Tobin's model: the same as censored_normal_mle (1e-8 dB)
    pts = CN.interval_censored_mle(u, k, c)
    old = CN.censored_normal_mle(u, k, c)
    assert pts.mu == pytest.approx(old.mu, abs=1e-8)
    assert pts.sigma == pytest.approx(old.sigma, abs=1e-8)


def test_interval_fit_student_t_agrees_with_scipy(rng):
    # the heavy-tailed option: scipy.stats.t.fit(CensoredData, fix_df=5) (scipy's optimiser
    # stops at about 1e-4 relative): agreement to 2e-3 dB
    val, kind, u, k, c = _whole_db_sample(rng, 800)
    fit = CN.interval_censored_mle(u, k, c, half_width_db=0.5, df=5.0)
    _df, m, s = sps.t.fit(_censored_data(val, kind, 0.5), fix_df=5.0)
    assert fit.mu == pytest.approx(m, abs=2e-3)
    assert fit.sigma == pytest.approx(s, abs=2e-3)


def test_soft_bound_is_the_convolution_of_normal_and_detection_curve():
    # P(missed) = integral N(x; mu, sigma) (1 - Phi((x - c)/tau)) dx, by scipy quadrature,
    # equals Phi((c - mu)/sqrt(sigma^2 + tau^2)): the fit's upper-bound probability
    from scipy import integrate

    mu, sigma, tau, c = 0.7, 1.8, 1.1, -0.4
    num = integrate.quad(lambda x: sps.norm.pdf(x, mu, sigma) * sps.norm.sf((x - c) / tau),
                         -30, 30)[0]
    fit_ll = CN._detection_parts(np.array([[mu, sigma, 0.0, 0.0]]),
                                 CN._detection_items(np.array([c]), np.array([1]), 0.0, tau),
                                 np.ones((1, 1)), CN._family(np.inf), False, 1.0,
                                 need_derivs=False)
    assert np.exp(fit_ll[0]) == pytest.approx(num, rel=1e-9)


@pytest.mark.parametrize("df", [np.inf, 4.0])
@pytest.mark.parametrize("missed", [False, True])
def test_interval_fit_derivatives_match_finite_differences(rng, df, missed):
    # Newton's method needs the right gradient and Hessian: central differences agree
    # to 1e-5 relative
    v = np.array([-1, 0, 1, 2, 3, -1, 2, 4.0, -3])
    k = np.array([0, 0, 0, 0, 0, 1, -1, -1, 1])
    w = rng.integers(1, 10, size=(3, v.size)).astype(float)
    items = CN._detection_items(v, k, 0.5, 0.8)
    x = np.array([[0.7, 1.6, 0.05, 0.1], [0.2, 1.1, 0.2, 0.02], [1.5, 2.5, 0.1, 0.1]])
    fam = CN._family(df)
    n = 4 if missed else 2
    _ll, g, h = CN._detection_parts(x, items, w, fam, missed, 2.0)
    eps = 1e-6
    for j in range(n):
        xp, xm = x.copy(), x.copy()
        xp[:, j] += eps
        xm[:, j] -= eps
        gn = (CN._detection_parts(xp, items, w, fam, missed, 2.0, False)
              - CN._detection_parts(xm, items, w, fam, missed, 2.0, False)) / (2 * eps)
        hn = (CN._detection_parts(xp, items, w, fam, missed, 2.0)[1]
              - CN._detection_parts(xm, items, w, fam, missed, 2.0)[1]) / (2 * eps)
        np.testing.assert_allclose(g[:, j], gn, rtol=1e-5, atol=1e-5)
        np.testing.assert_allclose(h[:, :n, j], hn[:, :n], rtol=1e-5, atol=1e-3)


@pytest.mark.slow
def test_interval_fit_standard_error_matches_monte_carlo(rng):
    # the information-based SE of mu agrees with the spread of mu over 200 simulated data
    # sets within 12 % (the Monte-Carlo error of an SD from 200 draws is 5 %)
    mus, ses = [], []
    for _ in range(200):
        _val, _kind, u, k, c = _whole_db_sample(rng, 400)
        fit = CN.interval_censored_mle(u, k, c, half_width_db=0.5)
        mus.append(fit.mu)
        ses.append(fit.se_mu)
    assert np.mean(ses) == pytest.approx(np.std(mus, ddof=1), rel=0.12)


def test_interval_batch_matches_single_fits(rng):
    _val, _kind, u, k, c = _whole_db_sample(rng, 800)
    w = np.stack([rng.poisson(c).astype(float) for _ in range(4)])
    res = CN.interval_censored_mle_batch(u, k, w, half_width_db=0.5, tau_db=0.7,
                                         missed=True, exact_weight=2.0)
    for i in range(4):
        one = CN.interval_censored_mle(u, k, w[i], half_width_db=0.5, tau_db=0.7,
                                       missed=True, exact_weight=2.0)
        assert res["mu"][i] == pytest.approx(one.mu, abs=1e-9)
        assert res["sigma"][i] == pytest.approx(one.sigma, abs=1e-9)
    # only upper bounds: no maximum
    none = CN.interval_censored_mle([1.0, 2.0], [1, 1], half_width_db=0.5)
    assert np.isnan(none.mu) and not none.converged
    with pytest.raises(UsageError, match="half_width_db"):
        CN.interval_censored_mle([1.0], [0], half_width_db=-1)
    with pytest.raises(UsageError, match="df"):
        CN.interval_censored_mle([1.0], [0], df=1.0)


def test_mixture_default_is_the_normalised_paired_likelihood(rng):
    # issue item 7: the default exact weight is 2. Its log-likelihood is the sum of the two
    # conditional log-likelihoods of paired reports, "B's outcome given A heard" and "A's
    # outcome given B heard", written here with scipy.stats (1e-8 relative), and each
    # conditional law is normalised: heard (density (1 - p) phi over the values above the
    # limit) plus missed (p + (1 - p) Phi) integrates to 1 (scipy quadrature, 1e-9)
    from scipy import integrate

    vals, kinds, _, _ = _paired(rng, 20000, lose_b=0.05)
    fit = CN.censored_mixture_mle(vals, kinds)
    assert CN.MIXTURE_EXACT_WEIGHT == 2.0
    mu, s, pa, pb = fit.mu, fit.sigma, fit.missed_a, fit.missed_b
    ex = kinds == 0
    dens = sps.norm.logpdf(vals[ex], mu, s)
    given_a = (np.sum(np.log1p(-pa) + dens)
               + np.sum(np.log(pa + (1 - pa) * sps.norm.cdf(vals[kinds == 1], mu, s))))
    given_b = (np.sum(np.log1p(-pb) + dens)
               + np.sum(np.log(pb + (1 - pb) * sps.norm.sf(vals[kinds == -1], mu, s))))
    assert fit.loglik == pytest.approx(given_a + given_b, rel=1e-8)
    limit = 0.3  # B's bound for some A level: B - A <= limit when B is missed
    heard = integrate.quad(lambda d: (1 - pa) * sps.norm.pdf(d, mu, s), limit, np.inf)[0]
    missed = pa + (1 - pa) * sps.norm.cdf(limit, mu, s)
    assert heard + missed == pytest.approx(1.0, abs=1e-9)
    # the fit recovers the truth (mu 1 dB, 0.1 dB) and the 5 % of B reports lost
    assert mu == pytest.approx(1.0, abs=0.1)
    mu_b = CN.censored_mixture_mle_batch(vals[:2000], kinds[:2000], np.ones((1, 2000)))[0]
    assert mu_b[0] == pytest.approx(CN.censored_mixture_mle(vals[:2000], kinds[:2000]).mu,
                                    abs=1e-9)


def test_interval_fit_survives_a_far_outlier(rng):
    # a whole-dB difference some 80 sigma from the rest (a fade of the kind Student t
    # fading makes): its interval probability underflows a plain Phi difference (the
    # earlier code gave no estimate; scipy's CensoredData fit drops it). The fit stays
    # finite and, with 1-dB groups, is the sample mean (0.01 dB) and the SD with
    # Sheppard's correction sqrt(var - 1/12) (Sheppard 1898; 0.05 dB)
    x = np.r_[np.round(rng.normal(0.0, 2.0, 2000)), 250.0]
    u, c = np.unique(x, return_counts=True)
    fit = CN.interval_censored_mle(u, np.zeros(u.size, int), c, half_width_db=0.5)
    assert fit.converged and np.isfinite(fit.loglik)
    assert fit.mu == pytest.approx(x.mean(), abs=0.01)
    assert fit.sigma == pytest.approx(np.sqrt(x.var() - 1 / 12), abs=0.05)


@pytest.mark.parametrize("df", [3.0, 5.0, 10.0, 4.0])
def test_student_t_cdf_of_the_fit_agrees_with_scipy(df):
    # closed forms for 3, 5 and 10 df (Abramowitz and Stegun 26.7.3-4), scipy.special.stdtr
    # in the far tails and for other df; reference: scipy.stats.t (cdf, logcdf)
    cdf, _, _, _, logcdf = CN._family(df)
    z = np.concatenate([np.linspace(-40.0, 40.0, 40001), [-1e6, 1e6]])
    np.testing.assert_allclose(cdf(z), sps.t.cdf(z, df), rtol=1e-10, atol=1e-15)
    np.testing.assert_allclose(logcdf(z), sps.t.logcdf(z, df), rtol=1e-9, atol=1e-12)
    assert cdf(0.7) == pytest.approx(sps.t.cdf(0.7, df), rel=1e-12)
    assert np.isnan(cdf(np.array([np.nan]))[0])
    np.testing.assert_array_equal(cdf(np.array([-np.inf, np.inf])), [0.0, 1.0])


def _scipy_detection_loglik(x, v, k, w, half_width, tau, df, missed, ew):
    """The detection model's log-likelihood item by item with scipy.stats (the reference
    the fast per-kind evaluation must reproduce)."""
    mu, sigma, pa, pb = x
    law = sps.norm if np.isinf(df) else sps.t(df)
    s_b = np.hypot(sigma, tau)
    total = 0.0
    for vi, ki, wi in zip(v, k, w, strict=True):
        if ki == 0 and half_width == 0:
            li = law.logpdf((vi - mu) / sigma) - np.log(sigma)
        elif ki == 0:
            li = np.log(law.cdf((vi + half_width - mu) / sigma)
                        - law.cdf((vi - half_width - mu) / sigma))
        elif ki == 1:
            li = law.logcdf((vi - mu) / s_b)
        else:
            li = law.logsf((vi - mu) / s_b)
        if not missed:
            total += wi * (ew * li if ki == 0 else li)
        elif ki == 0:
            total += wi * (ew * li + np.log1p(-pa) + np.log1p(-pb))
        else:
            p = pa if ki == 1 else pb
            total += wi * np.log(p + (1 - p) * np.exp(li))
    return total


@pytest.mark.parametrize("df", [np.inf, 3.0, 5.0, 10.0, 7.0])
@pytest.mark.parametrize("half_width", [0.0, 0.5])
@pytest.mark.parametrize("missed", [False, True])
def test_detection_loglik_matches_scipy_item_by_item(rng, df, half_width, missed):
    # the fit evaluates each kind of item (interval, point, upper and lower bound) in its
    # own run of columns, with only the cdf/pdf it needs; scipy.stats' norm/t give the
    # same log-likelihood to 1e-9 (relative), items in any order, also far in the tails
    v = np.r_[rng.integers(-5, 6, 12), rng.integers(-3, 3, 5), rng.integers(-1, 4, 5),
              [-9.0, 9.0, 14.0, -14.0]].astype(float)
    k = np.r_[np.zeros(12), np.ones(5), -np.ones(5), [1, -1, 1, -1]].astype(int)
    order = rng.permutation(v.size)
    v, k = v[order], k[order]
    w = rng.integers(0, 5, (3, v.size)).astype(float)
    x = np.array([[0.7, 1.6, 0.05, 0.1], [-0.4, 1.1, 0.2, 0.02], [1.5, 2.5, 0.1, 0.3]])
    items = CN._detection_items(v, k, half_width, 0.8)
    ll = CN._detection_parts(x, items, w, CN._family(df), missed, 2.0, need_derivs=False)
    ll_d = CN._detection_parts(x, items, w, CN._family(df), missed, 2.0)[0]
    ref = [_scipy_detection_loglik(x[i], v, k, w[i], half_width, 0.8, df, missed, 2.0)
           for i in range(3)]
    np.testing.assert_allclose(ll, ref, rtol=1e-9)
    np.testing.assert_array_equal(ll, ll_d)


@pytest.mark.parametrize("missed", [False, True])
@pytest.mark.parametrize("df", [np.inf, 5.0])
def test_interval_batch_rows_with_own_values_match_single_fits(rng, missed, df):
    # one batch with a row of values and a detection width per fit (unused columns with
    # weight 0, as the comparison batches its groups) gives each row's own fit to 1e-9 dB
    rows, fits = [], []
    for i in range(5):
        _val, _kind, u, k, c = _whole_db_sample(rng, 200 + 150 * i)
        tau = 0.5 + 0.2 * i
        rows.append((u, k, c, tau))
        fits.append(CN.interval_censored_mle(u, k, c, half_width_db=0.5, tau_db=tau, df=df,
                                             missed=missed, exact_weight=2.0))
    n = np.array([[np.sum(r[1] == c) for c in (-1, 0, 1)] for r in rows])
    width = n.max(axis=0)
    kinds = np.repeat([-1, 0, 1], width)
    vals = np.zeros((len(rows), kinds.size))
    wts = np.zeros_like(vals)
    for i, (u, k, c, _tau) in enumerate(rows):
        for j, kd in enumerate((-1, 0, 1)):
            at = int(width[:j].sum())
            vals[i, at:at + n[i, j]] = u[k == kd]
            wts[i, at:at + n[i, j]] = c[k == kd]
            vals[i, at + n[i, j]:at + width[j]] = u[k == 0][0]
    res = CN.interval_censored_mle_batch(vals, kinds, wts, half_width_db=0.5,
                                         tau_db=[r[3] for r in rows], df=df, missed=missed,
                                         exact_weight=2.0)
    for i, one in enumerate(fits):
        assert res["mu"][i] == pytest.approx(one.mu, abs=1e-9)
        assert res["sigma"][i] == pytest.approx(one.sigma, abs=1e-9)
        assert res["missed_b"][i] == pytest.approx(one.missed_b, abs=1e-9)
        assert res["loglik"][i] == pytest.approx(one.loglik, rel=1e-12)
    with pytest.raises(UsageError, match="tau_db"):
        CN.interval_censored_mle_batch(vals, kinds, wts, tau_db=[1.0, 2.0])
    with pytest.raises(UsageError, match="values"):
        CN.interval_censored_mle_batch(vals[:2], kinds, wts)
