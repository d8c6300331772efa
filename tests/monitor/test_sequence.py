"""The confidence sequence against the published formulas on a worked case, and its shape.

Worked case (computed by hand, below): alpha = 0.05, t = 100 terms of standard deviation
sigma = 2, tuning rho = 0.1 (so t rho^2 = 1). The formula of Waudby-Smith et al. (2024),
asymptotic confidence sequence, Theorem 2.2, *as recalled from memory* (the paper was not
at hand):

    half = sigma * sqrt(2 (t rho^2 + 1) / (t^2 rho^2) * log(sqrt(t rho^2 + 1) / alpha))
         = 2 * sqrt(2 * 2 / 100 * log(sqrt(2) / 0.05))
         = 2 * sqrt(0.04 * log(28.2843))
         = 2 * sqrt(0.04 * 3.34234) = 2 * sqrt(0.133694) = 2 * 0.365642 = 0.731285 dB

and Howard et al. (2021), two-sided normal mixture, eq. (14) (also from memory): on the sum,
sqrt((v + rho') log((v + rho') / (rho' alpha^2))) with v = t sigma^2 = 400 and
rho' = sigma^2 / rho^2 = 400: sqrt(800 log(800 / (400 * 0.0025))) = sqrt(800 * 6.68461)
= 73.1285, divided by t = 100: 0.731285 dB. The two recollections agree with each other,
which is the check that the recalled forms are the same boundary.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from spotkit.errors import UsageError
from spotkit.monitor.sequence import (
    confidence_sequence,
    fixed_interval,
    normal_mixture_radius,
    se_for_width,
    sequence_multiplier,
    tuning_constant,
)

HAND_HALF_WIDTH_DB = 0.731285  # worked by hand above


def test_worked_case_of_the_asymptotic_sequence():
    t, sigma, rho = 100, 2.0, 0.1
    se = sigma / np.sqrt(t)
    half = se * float(sequence_multiplier(t * rho**2, 0.95))
    assert half == pytest.approx(HAND_HALF_WIDTH_DB, abs=1e-5)


def test_worked_case_of_the_normal_mixture_boundary():
    t, sigma, rho = 100, 2.0, 0.1
    radius = float(normal_mixture_radius(t * sigma**2, sigma**2 / rho**2, 0.95))
    assert radius / t == pytest.approx(HAND_HALF_WIDTH_DB, abs=1e-5)


@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.99])
@pytest.mark.parametrize("t", [5, 50, 500, 50_000])
def test_the_two_forms_are_one_boundary(t, confidence):
    sigma, rho = 3.0, 0.05
    ws = sigma / np.sqrt(t) * sequence_multiplier(t * rho**2, confidence)
    howard = normal_mixture_radius(t * sigma**2, sigma**2 / rho**2, confidence) / t
    assert float(ws) == pytest.approx(float(howard), rel=1e-12)


def test_tuning_constant_by_hand():
    # -2 log 0.05 = 5.99146; log(6.99146) = 1.94470; sum 7.93616 (worked by hand)
    assert tuning_constant(0.95) == pytest.approx(7.93616, abs=1e-4)


def test_sequence_is_wider_than_the_fixed_interval_everywhere():
    eta = np.geomspace(1e-3, 1e6, 200)
    z = stats.norm.ppf(0.975)  # scipy.stats as the oracle of the normal quantile
    assert np.all(sequence_multiplier(eta) > z)


def test_sequence_is_tightest_near_the_tuning_point():
    """rho chosen for t* minimises the width at t* (the paper's reason for the constant)."""
    se_now = 0.2
    tuned = [float(np.diff(confidence_sequence(0.0, se_now, se_tuned=s))[0])
             for s in (0.05, 0.1, 0.2, 0.4, 0.8)]
    assert int(np.argmin(tuned)) == 2


def test_shrinks_as_the_se_shrinks_and_adds_the_systematic_part():
    se = np.array([0.8, 0.4, 0.2, 0.1, 0.05])
    lo, hi = confidence_sequence(np.zeros(5), se, se_tuned=0.2)
    assert np.all(np.diff(hi - lo) < 0)
    lo2, hi2 = confidence_sequence(np.zeros(5), se, se_tuned=0.2, systematic=0.1)
    np.testing.assert_allclose(hi2 - hi, 0.1)
    flo, fhi = fixed_interval(0.0, 0.2)
    assert fhi == pytest.approx(stats.norm.ppf(0.975) * 0.2)


def test_no_sequence_without_a_standard_error():
    lo, hi = confidence_sequence([1.0, 1.0], [np.nan, 0.0], se_tuned=0.2)
    assert np.isnan(lo).all() and np.isnan(hi).all()


@pytest.mark.parametrize("bad", [0.0, -1.0, np.nan])
def test_bad_tuning_is_a_usage_error(bad):
    with pytest.raises(UsageError):
        confidence_sequence(0.0, 0.1, se_tuned=bad)
    with pytest.raises(UsageError):
        se_for_width(bad)
