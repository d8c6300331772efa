"""Tests of spotkit.stats.detection: the 50 % point and width of a decoder's detection curve."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats as sps

from spotkit.errors import UsageError
from spotkit.stats import detection as D


def _receivers(rng, n_rx, tau, level_sd=8.0, rounding="after"):
    """Report histograms of receivers with known 50 % points (flat-ish level density:
    normal, ``level_sd`` dB, centred 0-6 dB above the point); soft decoding on the raw
    (``after``) or the rounded SNR (``before``), reports in whole dB."""
    t50 = rng.normal(-27.0, 1.5, n_rx)
    hist, low = [], []
    for r in range(n_rx):
        s = rng.normal(t50[r] + rng.uniform(0, 6), level_sd, 4000)
        x = s if rounding == "after" else np.round(s)
        v = np.round(s[rng.random(s.size) < sps.norm.cdf((x - t50[r]) / tau)])
        v = v[:rng.integers(300, 1500)]
        lo = v.min()
        hist.append(np.bincount((v - lo + 3).astype(int), minlength=11)[:11])
        low.append(lo)
    return t50, np.array(hist, float), np.array(low)


@pytest.mark.parametrize("tau", [0.5, 1.0])
def test_t50_recovers_the_half_point(rng, tau):
    # simulation: 60 receivers; the fitted 50 % points are within 0.2 dB of the truth on
    # average (the lowest report is 1-2 dB below it), each within 1.2 dB
    t50, hist, low = _receivers(rng, 60, tau)
    est, _ = D.fit_thresholds(hist, low, tau_db=tau)
    assert abs(np.mean(est - t50)) < 0.2
    assert np.max(np.abs(est - t50)) < 1.2
    assert np.mean(low - t50) < -0.8 * tau  # the old threshold: well below the 50 % point


def test_tau_is_recovered_by_profile_likelihood(rng):
    # simulation: the pooled width is recovered within 20 % for 0.5 and 1.5 dB
    for tau in (0.5, 1.5):
        _t50, hist, low = _receivers(rng, 80, tau)
        assert D.fit_tau(hist, low) == pytest.approx(tau, rel=0.2)


def test_rounding_before_threshold_model(rng):
    # decisions on the rounded SNR: the "before" model recovers the point (0.2 dB), and
    # the two models differ (which is why both enter the systematic part)
    t50, hist, low = _receivers(rng, 60, 0.7, rounding="before")
    before, _ = D.fit_thresholds(hist, low, tau_db=0.7, rounding="before")
    after, _ = D.fit_thresholds(hist, low, tau_db=0.7, rounding="after")
    assert abs(np.mean(before - t50)) < 0.2
    assert np.mean(np.abs(before - after)) > 0.01


def test_thresholds_bad_input():
    with pytest.raises(UsageError, match="shape"):
        D.fit_thresholds(np.ones((2, 5)), [0.0, 1.0])
    with pytest.raises(UsageError, match="after, before"):
        D.fit_thresholds(np.ones((1, 11)), [0.0], rounding="sideways")
