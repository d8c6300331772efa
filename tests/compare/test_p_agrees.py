"""The p-value beside each comparison agrees with its interval.

A reader who sees "95 % CI -0.1 to 0.9 dB, p 0.03" is told two different things. The
interval is the cluster bootstrap's widened on each side by the systematic part, so p must
be computed from the same replicates with the same widening: ``p < 1 - confidence``
exactly when the interval leaves out 0 (the test inversion of Efron & Tibshirani, An
Introduction to the Bootstrap, 1993, s. 16.4, from memory).
"""
from __future__ import annotations

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.compare import compare_antennas
from spotkit.sim.simulate import simulate_spots
from spotkit.stats import bootstrap_interval, percentile_p_value


@pytest.mark.parametrize("margin", [0.0, 0.05, 0.3])
def test_percentile_p_with_a_margin_inverts_the_widened_interval(rng, margin):
    # for every level on a grid: the widened percentile interval leaves out 0 if and only
    # if p < alpha (replicates centred near 0 so that both sides are exercised)
    for centre in (-0.4, -0.1, 0.05, 0.2, 0.5):
        reps = rng.normal(centre, 0.2, 400)
        p = percentile_p_value(reps, margin=margin)
        for alpha in np.linspace(0.01, 0.99, 197):
            lo, hi = bootstrap_interval(reps, centre, 1 - alpha)
            out = (lo - margin > 0) or (hi + margin < 0)
            if abs(p - alpha) > 1e-9:  # at the boundary both readings are right
                assert out == (p < alpha), (centre, margin, alpha, p, lo, hi)


def test_a_margin_never_lowers_p(rng):
    reps = rng.normal(0.3, 0.2, (500, 6)) * np.linspace(0.5, 3, 6)
    last = percentile_p_value(reps)
    for m in (0.05, 0.1, 0.5, 2.0):
        now = percentile_p_value(reps, margin=m)
        assert (now >= last - 1e-12).all()
        last = now
    assert (last == 1.0).all()  # a margin wider than every replicate: nothing is shown


@pytest.fixture(scope="module")
def small_difference():
    """A 0.3 dB difference on 20 m and 10 m, broken down by distance and bearing: groups
    from clear to inconclusive."""
    sim = simulate_spots("simultaneous", days=0.5, n_receivers=120, bands=("20m", "10m"),
                         difference_db=0.3, power_b_dbm=30.0, seed=11)
    return sim


@pytest.mark.parametrize("interval", ["percentile", "normal"])
def test_every_group_p_agrees_with_its_interval(small_difference, interval):
    sim = small_difference
    a, b = sim.params["calls"][:2]
    # 25 groups at each of three levels; the earlier p (normal approximation beside a
    # percentile interval) disagreed with 2, 1 and 5 of them
    for confidence in (0.6, 0.8, 0.95):
        res = compare_antennas(sim.spots, "simultaneous", a, b,
                               by=("band", "distance", "bearing"),
                               n_boot=200, seed=1, confidence=confidence,
                               interval=interval)
        g = res.groups[res.groups[C.P_VALUE].notna()]
        assert len(g) >= 6
        out = (g[C.CI_LOW] > 0) | (g[C.CI_HIGH] < 0)
        alpha = 1 - confidence
        clear = (g[C.P_VALUE] - alpha).abs() > 1e-9
        assert (out[clear] == (g.loc[clear, C.P_VALUE] < alpha)).all(), g[
            [C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.SYSTEMATIC, C.P_VALUE]]
        # both outcomes occur, so the check is not empty on one side
        assert out.any() and (~out).any(), g[[C.CI_LOW, C.CI_HIGH, C.P_VALUE]]
