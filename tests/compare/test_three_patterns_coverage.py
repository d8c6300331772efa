"""Coverage of ``compare_several``'s simultaneous intervals when the antennas differ in
pattern (the three-antenna demo's antennas: a vertical, dipoles at 10 m and 20 m on 20 m).

Each pair's true difference then varies from path to path - between the two dipoles from
about +5 dB at low angles to -10 dB near 30 degrees - which the one-normal censored fit
does not model. The target of each contrast is the simulator's truth for that pair of
antennas (:attr:`spotkit.sim.Simulation.truths`: the mean true difference over the run's
pairs heard by at least one of the two).
"""
from __future__ import annotations

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.compare import compare_several
from spotkit.sim import THREE_DEMO, make_antenna
from spotkit.sim.simulate import simulate_spots

RUNS = 16


@pytest.mark.slow
def test_family_of_three_pattern_contrasts_covers_at_about_the_nominal_rate():
    ants = [make_antenna(kind, ("20m",), **kw) for _, kind, kw, _ in THREE_DEMO]
    err, low, high, ranked, wrong = [], [], [], [], 0
    for seed in range(RUNS):
        sim = simulate_spots("simultaneous", days=0.5, n_receivers=150, bands=("20m",),
                             seed=500 + seed, antenna_a=ants[0], antenna_b=ants[1],
                             more_antennas=ants[2:])
        res = compare_several(sim.spots, "simultaneous", sim.params["calls"],
                              all_pairs=True, n_boot=100, seed=seed)
        t = res.contrasts
        truth = np.array([sim.truths[(f, s)].overall[C.B_MINUS_A]
                          for f, s in zip(t[C.FIRST], t[C.SECOND], strict=True)])
        est = t[C.B_MINUS_A].to_numpy()
        err.append(est - truth)
        low.append(t[C.CI_SIM_LOW].to_numpy() - truth)
        high.append(t[C.CI_SIM_HIGH].to_numpy() - truth)
        ranked.append(res.order)
        # a pair the ranking calls separated is never the wrong way round
        sep = (t[C.CI_SIM_LOW] > 0) | (t[C.CI_SIM_HIGH] < 0)
        wrong += int((sep & (np.sign(est) != np.sign(truth))).sum())
    err, low, high = np.array(err), np.array(low), np.array(high)  # runs x contrasts
    inside = (low <= 0) & (0 <= high)
    family = inside.all(axis=1).mean()
    # measured (seeds 500-515, benchmarks/three_patterns_study.py): all three inside in 16
    # of 16 runs; bias per contrast against each run's truth +0.041 +- 0.028 (dipole 10 m -
    # vertical), +0.036 +- 0.019 (dipole 20 m - vertical), -0.011 +- 0.013 dB (dipole 20 m
    # - dipole 10 m, the pair whose difference changes sign with the angle); run-to-run SD
    # of the errors 0.11, 0.07, 0.05 dB. Before the receiver-effects fit's false maximum
    # was fixed: +0.19, +0.41, +0.60 dB; the pooled fit alone (model="pooled") +0.22, +0.38,
    # +0.79 dB. The intervals (2.1-2.8 dB wide) are for the antennas over the population of
    # receivers a run draws from - the run truths themselves differ by about 0.5 dB between
    # seeds - so against a run's own truth they are wide and coverage has little power
    # here: the bias bound below (more than 3 SE above each measured bias, and well below
    # the old +0.60 dB) is what would catch a wrong estimate.
    assert family >= 0.8, f"family coverage {family:.2f}; errors {err.mean(0).round(2)}"
    assert np.abs(err.mean(axis=0)).max() < 0.15, err.mean(axis=0)
    # no separated pair the wrong way round; the full order C > B > A in most runs (the
    # one run without it has a true gap of 0.7 dB between the dipoles and says "not
    # separated")
    assert wrong == 0
    right = np.mean([order == ["Q1ABE", "Q1ABD", "Q1ABC"] for order in ranked])
    assert right >= 0.8, ranked
