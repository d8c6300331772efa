"""The receiver random-effects fit (spotkit.stats.receivers) against statsmodels' MixedLM."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import sparse

from spotkit.stats.censored import interval_censored_mle
from spotkit.stats.receivers import receiver_effects_mle_batch


def _data(seed=4, n_rx=25, s_u=1.2, sigma=0.8):
    rng = np.random.default_rng(seed)
    n = rng.integers(4, 15, n_rx)
    rx = np.repeat(np.arange(n_rx), n)
    y = 0.7 + rng.normal(0, s_u, n_rx)[rx] + rng.normal(0, sigma, rx.size)
    return y, rx


def _items(y, rx):
    """Each value its own item (count 1 at its receiver)."""
    counts = sparse.csr_matrix((np.ones(y.size), (np.arange(y.size), rx)))
    return y, np.zeros(y.size, np.int64), counts


def test_points_match_statsmodels_mixedlm():
    """Exact points without bounds, exact_weight 1: the normal random-intercept model,
    whose maximum likelihood fit (REML off) statsmodels' MixedLM computes; the posterior
    means of the effects are its ``random_effects`` (the BLUPs)."""
    sm = pytest.importorskip("statsmodels.formula.api")
    y, rx = _data()
    df = pd.DataFrame({"y": y, "g": rx})
    ref = sm.mixedlm("y ~ 1", df, groups=df["g"]).fit(reml=False)
    v, k, cnt = _items(y, rx)
    fit = receiver_effects_mle_batch(v, k, cnt, np.ones((1, cnt.shape[1])),
                                     start_mu=y.mean(), start_sigma=y.std())
    assert fit["converged"][0]
    assert fit["mu"][0] == pytest.approx(ref.fe_params.iloc[0], abs=2e-4)
    assert fit["s_u"][0] == pytest.approx(np.sqrt(ref.cov_re.iloc[0, 0]), rel=2e-3)
    assert fit["sigma"][0] == pytest.approx(np.sqrt(ref.scale), rel=2e-3)
    blup = np.array([ref.random_effects[g].iloc[0] for g in range(cnt.shape[1])])
    n_r = np.bincount(rx)
    want = ref.fe_params.iloc[0] + np.sum(n_r * blup) / n_r.sum()
    assert fit["mu_pairs"][0] == pytest.approx(want, abs=2e-4)


def test_batch_rows_are_weighted_receivers():
    """A row of cluster weights is the fit to the data with each receiver repeated that
    often: doubling every receiver leaves the fit unchanged, a weight of 0 drops it."""
    y, rx = _data(seed=5)
    v, k, cnt = _items(y, rx)
    r = cnt.shape[1]
    w = np.ones((3, r))
    w[1] = 2.0
    w[2, :5] = 0.0
    fit = receiver_effects_mle_batch(v, k, cnt, w, start_mu=0.0, start_sigma=1.0)
    keep = rx >= 5
    v2, k2, cnt2 = _items(y[keep], rx[keep] - 5)
    sub = receiver_effects_mle_batch(v2, k2, cnt2, np.ones((1, r - 5)), start_mu=0.0,
                                     start_sigma=1.0)
    for name in ("mu", "sigma", "s_u", "mu_pairs"):
        assert fit[name][1] == pytest.approx(fit[name][0], abs=1e-6), name
        assert fit[name][2] == pytest.approx(sub[name][0], abs=1e-6), name


def test_pairs_mean_follows_the_busy_receivers():
    """Receivers with many pairs and a large difference: the mean over the pairs sits
    above the mean over the receivers, by about what the data's own pair-weighted mean
    says."""
    rng = np.random.default_rng(6)
    n = np.where(np.arange(30) < 10, 40, 5)
    u = np.where(np.arange(30) < 10, 1.5, -0.75) + rng.normal(0, 0.3, 30)
    rx = np.repeat(np.arange(30), n)
    y = u[rx] + rng.normal(0, 0.5, rx.size)
    v, k, cnt = _items(y, rx)
    fit = receiver_effects_mle_batch(v, k, cnt, np.ones((1, 30)), start_mu=0.0,
                                     start_sigma=1.0)
    assert fit["mu"][0] == pytest.approx(np.mean(u), abs=0.15)
    assert fit["mu_pairs"][0] == pytest.approx(y.mean(), abs=0.02)
    assert fit["mu_pairs"][0] - fit["mu"][0] > 0.5


def test_bounds_and_whole_db_are_used():
    """With one-sided bounds and whole-dB intervals the fit still converges, and the same
    data without receiver spread give s_u near 0 and mu_pairs near mu."""
    rng = np.random.default_rng(8)
    rx = np.repeat(np.arange(20), 30)
    x = 1.0 + rng.normal(0, 1.5, rx.size)
    limit = rng.normal(1.5, 1.0, rx.size)
    k = np.where(x > limit, 0, 1)  # B missed below its limit: upper bound
    v = np.where(k == 0, np.round(x), limit)
    cnt = sparse.csr_matrix((np.ones(v.size), (np.arange(v.size), rx)))
    fit = receiver_effects_mle_batch(v, k, cnt, np.ones((1, 20)), start_mu=0.5,
                                     start_sigma=1.5, half_width_db=0.5, tau_db=0.5)
    assert fit["converged"][0]
    assert fit["s_u"][0] < 0.4
    assert fit["mu_pairs"][0] == pytest.approx(fit["mu"][0], abs=0.05)
    assert fit["mu"][0] == pytest.approx(1.0, abs=0.25)
    # with no receiver spread the model is the pooled one: its maximum is the pooled
    # fit's (the nodes follow the mean; fixed nodes stopped 0.016 dB short of it)
    pooled = interval_censored_mle(v, k, half_width_db=0.5, tau_db=0.5)
    assert fit["mu"][0] == pytest.approx(pooled.mu, abs=1e-4)
    assert fit["loglik"][0] == pytest.approx(pooled.loglik, abs=1e-3)


def test_wide_receiver_spread_from_the_pooled_start():
    """Receivers' means spread far wider than the pairs about them (SD 7 dB against 2 dB,
    as on short paths with a strong pattern), started where the comparison starts (the
    pooled mean and SD, no receiver SD): the fit still finds statsmodels' maximum.
    Before the starting values came from the data's own receiver means, the nodes stayed
    near the pooled mean and the fit stopped at a false maximum (mean over the pairs
    0.10 dB where MixedLM says 0.66 dB on the demo's 10 m short-path cell)."""
    sm = pytest.importorskip("statsmodels.formula.api")
    rng = np.random.default_rng(11)
    n_rx = 40
    n = rng.integers(60, 200, n_rx)
    rx = np.repeat(np.arange(n_rx), n)
    y = 2.0 + rng.normal(0, 7.0, n_rx)[rx] + rng.normal(0, 2.0, rx.size)
    df = pd.DataFrame({"y": y, "g": rx})
    ref = sm.mixedlm("y ~ 1", df, groups=df["g"]).fit(reml=False)
    v, k, cnt = _items(y, rx)
    fit = receiver_effects_mle_batch(v, k, cnt, np.ones((1, n_rx)), start_mu=y.mean(),
                                     start_sigma=y.std())
    assert fit["converged"][0]
    assert fit["mu"][0] == pytest.approx(ref.fe_params.iloc[0], abs=2e-3)
    assert fit["s_u"][0] == pytest.approx(np.sqrt(ref.cov_re.iloc[0, 0]), rel=2e-3)
    assert fit["sigma"][0] == pytest.approx(np.sqrt(ref.scale), rel=2e-3)
    blup = np.array([ref.random_effects[g].iloc[0] for g in range(n_rx)])
    want = ref.fe_params.iloc[0] + np.sum(n * blup) / n.sum()
    assert fit["mu_pairs"][0] == pytest.approx(want, abs=2e-3)
