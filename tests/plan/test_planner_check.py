"""The planner checked by simulation: run the simulator for the hours it predicts and compare
the CI width the comparison then reports with the width it promised.

The pilot is the planner's own default (:func:`simulate_default_pilot`: a vertical against a
dipole, so B-A depends on the path and receivers disagree; unequal powers; the simulator's
heterogeneous receivers). Each check run uses the pilot's seed: the simulator draws the
station population before anything that depends on the run length, so the run has the
pilot's receivers (as a real station's run has its pilot's) while its propagation, fading
and on-air slots are drawn afresh (a run of another length consumes the random stream
differently). The width compared is ``ci_high_db - ci_low_db`` of
:func:`spotkit.compare.estimate.compare_antennas`' overall row - the interval it reports,
whatever parts it holds - against :attr:`DurationEstimate.ci_width_db`.

Tolerance: the issue's 25 % on the mean ratio achieved / predicted over the seeds. Measured
when this was written (20 m, 60 far stations, seeds 1-4, 200 resamples): ratios of the mean
0.92 (simultaneous, 48 h), 1.03 (alternating, 48 h), 0.97 (receive, 48 h), 1.14
(before-after, 8 days), with a run-to-run spread of 0.09-0.19.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from spotkit.compare.estimate import compare_antennas
from spotkit.plan.duration import (
    DEFAULT_PILOT,
    duration_from_pilot,
    simulate_default_pilot,
)
from spotkit.plan.schedule import make_schedule
from spotkit.sim.simulate import simulate_spots

BAND, N_FAR, N_BOOT = "20m", 60, 200
SEEDS = (1, 2, 3, 4)
START = "2026-03-02"  # the default pilot's first day


def _achieved_width(design: str, hours: float, seed: int) -> float:
    kw = dict(DEFAULT_PILOT)
    if design == "alternating":
        kw["schedule"] = make_schedule(START, hours / 24.0, [BAND], seed=seed)
    sim = simulate_spots(design, days=hours / 24.0, seed=seed, start=START, bands=(BAND,),
                         n_receivers=N_FAR, n_transmitters=N_FAR, **kw)
    o = compare_antennas(sim.spots, **sim.compare_kwargs(), n_boot=N_BOOT, seed=seed + 1000,
                         min_pairs=2).overall
    return float(o["ci_high_db"] - o["ci_low_db"])


@pytest.mark.slow
@pytest.mark.parametrize("design, target_hours", [
    ("simultaneous", 48.0), ("alternating", 48.0), ("receive", 48.0), ("before-after", 192.0),
])
def test_predicted_ci_width_holds_in_simulation(design, target_hours):
    z = stats.norm.ppf(0.975) + stats.norm.ppf(0.8)
    ratios = []
    for seed in SEEDS:
        pilot = simulate_default_pilot(design, BAND, n_receivers=N_FAR, seed=seed,
                                       n_boot=N_BOOT)
        # the effect whose predicted run length is about target_hours (2 days; before-after
        # 8 days, 4 on each side), so the runs below are the hours the planner asks for
        effect = z * float(pilot.se_at(target_hours)) * 1.001
        est = duration_from_pilot(effect, pilot)
        assert est.feasible and est.design == design
        hours = float(np.ceil(est.hours))  # whole hours (the schedule's unit)
        assert 0.5 * target_hours <= hours <= target_hours
        ratios.append(_achieved_width(design, hours, seed) / est.ci_width_db)
    ratios = np.array(ratios)
    assert abs(ratios.mean() - 1.0) <= 0.25, ratios.round(2)


def test_default_pilot_has_receivers_that_disagree():
    # the default is not the optimistic constant difference: most of the pilot's variance is
    # between receivers, and more hours beyond the pilot barely narrow the interval
    pilot = simulate_default_pilot("simultaneous", BAND, n_receivers=40, seed=3, n_boot=100)
    assert pilot.between_share > 0.5 and pilot.between_sd_db > 1.0
    w24, w168 = pilot.se_at([24.0, 168.0])
    assert w168 > 0.9 * w24
    # the pilot scaled to its own length is its own interval
    assert float(pilot.se_at(pilot.hours)) == pytest.approx(pilot.se_db, rel=1e-9)
