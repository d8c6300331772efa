"""Tests of spotkit.stats.bootstrap: cluster resampling, intervals and p-values."""
from __future__ import annotations

import numpy as np
import pytest

from spotkit.errors import UsageError
from spotkit.stats import bootstrap as B


def test_cluster_bootstrap_weights_shape_and_sums():
    w = B.cluster_bootstrap_weights(12, 500, np.random.default_rng(3))
    assert w.shape == (500, 12) and w.dtype.kind == "i"
    assert np.all(w.sum(axis=1) == 12)
    # each cluster is drawn 1 time per sample on average (Davison & Hinkley 1997, s. 3.8)
    assert w.mean() == pytest.approx(1.0, abs=0.05)
    again = B.cluster_bootstrap_weights(12, 500, 3)
    assert np.array_equal(again, B.cluster_bootstrap_weights(12, 500, 3))


def test_cluster_bootstrap_coverage(rng):
    # simulation (Davison & Hinkley 1997, s. 3.8): 20 clusters of 10 values with a cluster
    # random effect (ICC 0.5). The percentile interval of the cluster bootstrap covers the
    # true mean in about 95 % of 200 data sets (accept 0.90-0.99); resampling single values
    # ignores the correlation and under-covers (design effect 5.5: about 60 %).
    n_rep, g, m, n_boot, mu = 200, 20, 10, 400, 1.0
    hit_cluster = hit_iid = 0
    for _ in range(n_rep):
        y = mu + rng.normal(0, 1, (g, 1)) + rng.normal(0, 1, (g, m))
        w = B.cluster_bootstrap_weights(g, n_boot, rng)
        reps = (w @ y.sum(axis=1)) / (w.sum(axis=1) * m)
        lo, hi = B.bootstrap_interval(reps, y.mean())
        hit_cluster += lo <= mu <= hi
        flat = y.ravel()
        wi = B.cluster_bootstrap_weights(flat.size, n_boot, rng)
        lo, hi = B.bootstrap_interval(wi @ flat / flat.size, flat.mean())
        hit_iid += lo <= mu <= hi
    assert 0.90 <= hit_cluster / n_rep <= 0.99
    assert hit_iid / n_rep < 0.80


def test_bootstrap_interval_methods(rng):
    reps = rng.normal(2.0, 0.5, (5000, 3))
    reps[:10, 1] = np.nan  # failed fits are left out
    est = np.array([2.1, 2.0, 1.9])
    lo, hi = B.bootstrap_interval(reps, est)
    np.testing.assert_allclose(lo[0], np.quantile(reps[:, 0], 0.025))
    np.testing.assert_allclose(hi[1], np.quantile(reps[10:, 1], 0.975))
    blo, bhi = B.bootstrap_interval(reps, est, method="basic")
    np.testing.assert_allclose(blo, 2 * est - hi)
    nlo, nhi = B.bootstrap_interval(reps, est, method="normal")
    # normal quantile 1.96 x SD 0.5 = 0.98 dB half-width, tolerance 0.03 dB (MC error)
    np.testing.assert_allclose(nhi - est, 0.98, atol=0.03)
    with pytest.raises(ValueError, match="percentile"):
        B.bootstrap_interval(reps, est, method="bca")
    lo, hi = B.bootstrap_interval(np.full(10, np.nan), 1.0)
    assert np.isnan(lo) and np.isnan(hi)


def test_bootstrap_p_value(rng):
    # estimate 1.96 SE from zero -> p = 0.05 (normal approximation); tolerance 0.005
    reps = rng.normal(0.0, 1.0, 20000)
    assert B.bootstrap_p_value(reps, 1.96) == pytest.approx(0.05, abs=0.005)
    p = B.bootstrap_p_value(np.c_[reps, 2 * reps], [0.0, 3.92])
    assert p[0] == pytest.approx(1.0) and p[1] == pytest.approx(0.05, abs=0.005)
    assert np.isnan(B.bootstrap_p_value(np.ones(50), 1.0))


def test_degenerate_inputs_give_nan_not_warnings():
    # pytest turns warnings into errors: these must be quiet NaNs
    lo, hi = B.bootstrap_interval([[1.0, np.nan], [2.0, 3.0]], [1.5, 3.0], method="normal")
    assert np.isfinite(lo[0]) and np.isnan(lo[1]) and np.isnan(hi[1])
    assert np.isnan(B.bootstrap_p_value([1.0, np.nan], 1.0))
    with pytest.raises(UsageError):
        B.bootstrap_interval([], 1.0)


def test_stratified_weights_sum_per_stratum_and_keep_singletons():
    strata = np.array(["before"] * 4 + ["after"] * 3 + ["lone"])
    w = B.stratified_bootstrap_weights(strata, 300, 5)
    assert w.shape == (300, 8) and w.dtype.kind == "f"
    np.testing.assert_allclose(w[:, :4].sum(axis=1), 4.0)
    np.testing.assert_allclose(w[:, 4:7].sum(axis=1), 3.0)
    # a stratum of one unit cannot vary: weight 1 in every sample
    np.testing.assert_array_equal(w[:, 7], 1.0)
    # n - 1 of n units drawn, each weighted n / (n - 1)
    np.testing.assert_allclose(np.unique(w[:, :4]), np.array([0, 1, 2, 3]) * 4 / 3)
    np.testing.assert_array_equal(w, B.stratified_bootstrap_weights(strata, 300, 5))
    with pytest.raises(ValueError, match="n-1"):
        B.stratified_bootstrap_weights(strata, 10, 0, draws="half")
    with pytest.raises(UsageError):
        B.stratified_bootstrap_weights(strata, 0, 0)


@pytest.mark.parametrize("draws, factor", [("n-1", 1.0), ("n", 3 / 4)])
def test_stratified_weights_variance_of_a_stratum_mean(draws, factor):
    # the usual unbiased variance of a mean of n values is s^2 / n (s^2 with ddof=1);
    # the plain bootstrap (n of n) gives (n - 1) / n of it, the n - 1 draw rescaled all of
    # it (Rao & Wu 1988, JASA 83:231-241, from memory). n = 4 "days"; 40,000 samples:
    # Monte Carlo error of a variance about 1 % (tolerance 4 %).
    x = np.array([1.0, 3.0, 2.0, 7.0])
    w = B.stratified_bootstrap_weights(np.zeros(4), 40_000, 11, draws=draws)
    means = w @ x / 4
    assert means.mean() == pytest.approx(x.mean(), abs=0.03)
    assert means.var() == pytest.approx(factor * x.var(ddof=1) / 4, rel=0.04)


# --- the p-value that agrees with the percentile interval ---------------------------------
@pytest.mark.parametrize("shape", ["normal", "skewed", "heavy", "with NaN", "ties"])
def test_percentile_p_agrees_with_the_percentile_interval(shape):
    """For every level the percentile interval leaves out 0 exactly when p < 1 - level
    (the defining property, checked on many replicate sets, including skewed ones where the
    normal-approximation p and the percentile interval disagree)."""
    from spotkit.stats.bootstrap import bootstrap_interval, percentile_p_value

    rng = np.random.default_rng(11)
    levels = np.linspace(0.5, 0.995, 100)
    checked = 0
    for _ in range(40):
        n = int(rng.integers(30, 400))
        r = {"normal": rng.normal(rng.uniform(-0.5, 3), 1, n),
             "skewed": rng.lognormal(0, 1, n) - rng.uniform(0, 3),
             "heavy": rng.standard_t(2, n) + rng.uniform(0, 4),
             "with NaN": np.where(rng.random(n) < 0.1, np.nan, rng.normal(1.5, 1, n)),
             "ties": np.round(rng.normal(1, 1, n))}[shape]
        p = percentile_p_value(r)
        n_fin = int(np.isfinite(r).sum())
        for level in levels:
            if 1 - level <= 1 / n_fin:  # below the resolution of n replicates
                continue
            lo, hi = bootstrap_interval(r, 0.0, level)
            excludes = lo > 0 or hi < 0
            if abs(p - (1 - level)) < 1e-9:
                continue  # the boundary itself
            assert excludes == (p < 1 - level), (level, p, lo, hi)
            checked += 1
    assert checked > 1000


def test_percentile_p_edge_cases():
    from spotkit.stats.bootstrap import percentile_p_value

    assert percentile_p_value(np.arange(1.0, 101.0)) == pytest.approx(1 / 100)  # all > 0
    assert percentile_p_value(-np.arange(1.0, 51.0)) == pytest.approx(1 / 50)  # all < 0
    assert percentile_p_value(np.linspace(-1, 1, 201)) == pytest.approx(1.0)  # median 0
    assert np.isnan(percentile_p_value(np.array([1.0, np.nan])))
    got = percentile_p_value(np.column_stack([np.linspace(-1, 1, 201), np.full(201, np.nan)]))
    assert got[0] == pytest.approx(1.0) and np.isnan(got[1])
