"""Tests of spotkit.stats.simultaneous: the max-T simultaneous intervals and adjusted p-values,
checked against published many-to-one comparisons (Dunnett 1955 via scipy.stats.dunnett) and
the closed form for independent comparisons."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats as ss

from spotkit.errors import UsageError
from spotkit.stats.simultaneous import max_t

# Dunnett (1955), JASA 50:1096-1121, the blood-count example that scipy.stats.dunnett's
# documentation works through (values as printed there; scipy reports p = 0.620 and 0.0059)
CONTROL = np.array([7.40, 8.50, 7.20, 8.24, 9.84, 8.32])
DRUG_A = np.array([9.76, 8.80, 7.68, 9.36])
DRUG_B = np.array([12.80, 9.68, 12.16, 9.20, 10.55])


def _dunnett_replicates(n_draws, rng):
    """Joint draws of the two contrasts' null distribution: multivariate t with the pooled
    variance's degrees of freedom and covariance s^2 (1/n0 + delta_ij / n_i)."""
    groups = [CONTROL, DRUG_A, DRUG_B]
    n = np.array([g.size for g in groups])
    df = n.sum() - n.size
    s2 = sum(((g - g.mean()) ** 2).sum() for g in groups) / df
    cov = s2 * (1.0 / n[0] + np.diag(1.0 / n[1:]))
    z = rng.multivariate_normal(np.zeros(2), cov, size=n_draws)
    w = rng.chisquare(df, size=n_draws) / df
    est = np.array([DRUG_A.mean() - CONTROL.mean(), DRUG_B.mean() - CONTROL.mean()])
    return est, est + z / np.sqrt(w)[:, None]


def test_adjusted_p_values_match_dunnett_worked_example():
    # oracle: scipy.stats.dunnett on Dunnett's (1955) example; our max-T p from joint
    # replicates of the same null distribution must agree within Monte Carlo error
    ref = ss.dunnett(DRUG_A, DRUG_B, control=CONTROL)
    assert ref.pvalue == pytest.approx([0.620, 0.0059], abs=0.002)  # scipy docs (printed)
    est, reps = _dunnett_replicates(400_000, np.random.default_rng(1))
    out = max_t(est, reps, 0.95)
    assert out["p_adjusted"] == pytest.approx(ref.pvalue, abs=0.004)


def test_simultaneous_interval_matches_dunnett_worked_example():
    ref = ss.dunnett(DRUG_A, DRUG_B, control=CONTROL).confidence_interval(0.95)
    est, reps = _dunnett_replicates(400_000, np.random.default_rng(2))
    out = max_t(est, reps, 0.95)
    # interval ends within 1 % of the half-width (Monte Carlo quantile of 400,000 draws)
    half = (ref.high - ref.low) / 2
    assert out["low"] == pytest.approx(ref.low, abs=0.01 * half.max())
    assert out["high"] == pytest.approx(ref.high, abs=0.01 * half.max())
    # the factor in units of the t scale (the replicates' SD is the scale x sqrt(12 / 10))
    # is Dunnett's two-sided critical value for 2 comparisons and 12 df, 2.50 (Dunnett's
    # 1955 table, from memory), well above the one-at-a-time t_{0.975, 12} = 2.179
    q_scale = out["quantile"] * np.sqrt(12 / 10)
    assert q_scale == pytest.approx(2.50, abs=0.02)
    assert q_scale > ss.t.ppf(0.975, 12) * 1.1


@pytest.mark.parametrize("m", [2, 3, 5])
def test_independent_comparisons_closed_form(m):
    # independent, unit-variance comparisons: P(max |Z_j| <= q) = (2 Phi(q) - 1)^m = 0.95,
    # the Sidak factor (Sidak 1967, JASA 62:626-633; closed form)
    q_exact = ss.norm.ppf((1 + 0.95 ** (1 / m)) / 2)
    rng = np.random.default_rng(m)
    reps = rng.standard_normal((300_000, m))
    out = max_t(np.zeros(m), reps, 0.95)
    assert out["quantile"] == pytest.approx(q_exact, abs=0.02)
    assert out["low"] == pytest.approx(-q_exact * np.ones(m), abs=0.03)


def test_perfectly_correlated_comparisons_need_no_widening():
    # one comparison repeated m times: the max-T factor is the one-at-a-time 1.96
    z = np.random.default_rng(5).standard_normal((200_000, 1))
    out = max_t(np.zeros(4), np.repeat(z, 4, axis=1), 0.95)
    assert out["quantile"] == pytest.approx(1.96, abs=0.02)


def test_systematic_part_widens_and_shrinks_p():
    rng = np.random.default_rng(7)
    reps = np.array([1.0, 2.0]) + 0.5 * rng.standard_normal((50_000, 2))
    plain = max_t([1.0, 2.0], reps)
    wide = max_t([1.0, 2.0], reps, systematic=[0.2, 0.0])
    assert wide["low"][0] == pytest.approx(plain["low"][0] - 0.2)
    assert wide["high"][1] == pytest.approx(plain["high"][1])
    assert wide["p_adjusted"][0] > plain["p_adjusted"][0]


def test_failed_resamples_are_counted_and_skipped():
    rng = np.random.default_rng(8)
    reps = rng.standard_normal((1000, 3))
    reps[:100, 1] = np.nan
    out = max_t(np.zeros(3), reps)
    assert out["failed_share"] == pytest.approx(0.1)
    assert np.isfinite(out["quantile"]) and np.all(np.isfinite(out["low"]))


def test_bad_shapes_are_usage_errors():
    with pytest.raises(UsageError, match="shape"):
        max_t([0.0, 1.0], np.zeros((10, 3)))
    with pytest.raises(UsageError):
        max_t([0.0], np.zeros((10, 1)), confidence=1.5)
