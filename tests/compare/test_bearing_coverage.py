"""Coverage of the bearing curve's bands over repeated simulated runs (issue 18, item 3).

The truth: a vertical (A) against a half-wave dipole at 10 m with its wire north-south (B)
on 20 m, so the true B-A depends on the bearing (the dipole is strong broadside, east and
west, and weak off its ends, north and south) as well as on the elevation angle. The
target at each bearing of the grid is the simulator's true B-A (:mod:`spotkit.sim.truth`)
averaged with the curve's circular kernel (15 degrees) over the true pairs of all runs
together: the curve of the population of receivers the runs are drawn from (as in
``test_elevation_coverage.py``). The runs break the fit's assumptions: soft decoders
(detection width 1 dB) and heavy-tailed fast fading (t, 5 df), while the curve fits normal
tails.
"""
from __future__ import annotations

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.compare.elevation import bearing_curve
from spotkit.compare.pairing import pair_spots
from spotkit.sim.simulate import Propagation, simulate_spots

GRID = np.arange(0.0, 360.0, 45.0)  # [deg]
H = 15.0  # bearing_curve's default kernel width [deg]
RUNS = 16


@pytest.fixture(scope="module")
def runs():
    """Bands of every run and the population curve (the kernel average over all runs)."""
    bands, kd, kk = [], 0.0, 0.0
    for seed in range(RUNS):
        sim = simulate_spots(days=0.5, n_receivers=150, bands=("20m",), seed=300 + seed,
                             detection_width_db=1.0,
                             propagation=Propagation(fast_fading_df=5.0))
        pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
        curve = bearing_curve(pairs, grid_deg=GRID, n_boot=100, seed=seed)
        bands.append(curve[[C.CI_LOW, C.CI_HIGH, C.CI_SIM_LOW, C.CI_SIM_HIGH]].to_numpy())
        tr = sim.truth.pairs
        b, d = tr[C.BEARING].to_numpy(), tr[C.B_MINUS_A].to_numpy()
        dist = (b[None, :] - GRID[:, None] + 180.0) % 360.0 - 180.0
        k = np.exp(-0.5 * (dist / H) ** 2)
        kd, kk = kd + (k * d).sum(1), kk + k.sum(1)
    return np.array(bands), kd / np.maximum(kk, 1e-12)


@pytest.mark.slow
def test_bearing_bands_cover_the_true_curve_at_about_the_nominal_rate(runs):
    b, truth = runs  # b: runs x bearings x (low, high, sim low, sim high)
    lo, hi, slo, shi = b[..., 0], b[..., 1], b[..., 2], b[..., 3]
    ok = np.isfinite(lo)
    # bearings with receivers in most runs (the invented stations sit where amateurs are:
    # some directions from the home square have almost none)
    assert ok.sum() >= 0.5 * ok.size, ok.sum(0)
    # the truth really varies round the circle (broadside against the ends of the wire)
    seen = ok.mean(0) > 0.5
    assert np.ptp(truth[seen]) > 3.0, truth
    assert np.all((shi - slo)[ok] >= (hi - lo)[ok])
    rate = ((lo <= truth) & (truth <= hi))[ok].mean()
    mid, q = (lo + hi) / 2, (hi - lo) / 4  # the same band, half as wide
    rate_half = ((mid - q <= truth) & (truth <= mid + q))[ok].mean()
    # measured (seeds 300-315, 92 banded bearings): pointwise 0.88, the half-wide band
    # 0.58 (seeds 300-331: 0.87; without the soft decoders and t tails, 0.88). Nominal
    # 95 %; the bound 0.85 fails a band half as wide (about 0.67 for a normal estimate).
    # The shortfall is the estimate's bias of +0.1 to +0.4 dB at every well-heard bearing,
    # present without the two regimes too: within a bearing the true B-A still varies with
    # the elevation angle (about -1 to +7 dB), which the one-normal censored fit does not
    # model.
    assert rate >= 0.85, f"pointwise coverage {rate:.2f} of {ok.sum()}"
    assert rate_half < 0.85, f"a half-wide band still covered {rate_half:.2f}"


@pytest.mark.slow
@pytest.mark.xfail(strict=True, reason="the band round the whole circle holds in 0.75 of "
                   "runs (seeds 300-315; 0.66 over seeds 300-331), not 0.95: the pointwise "
                   "bias above adds up over the bearings")
def test_bearing_band_round_the_circle_holds_in_nominal_share_of_runs(runs):
    b, truth = runs
    lo, slo, shi = b[..., 0], b[..., 2], b[..., 3]
    ok = np.isfinite(lo)
    whole = np.mean([((slo[i] <= truth) & (truth <= shi[i]))[ok[i]].all()
                     for i in range(RUNS)])
    # nominal 95 %: 0.85 is about 2 binomial SDs below it with 16 runs
    assert whole >= 0.85, f"simultaneous coverage {whole:.2f} of {RUNS} runs"
