"""Coverage of the elevation curve's bands over repeated simulated runs (issue 18, item 3).

The target at four fixed angles is the simulator's true B-A(elevation) (vertical against
dipole on 20 m, its own hop geometry, 300 km layer; :mod:`spotkit.sim.truth`) averaged
with the curve's kernel over the true pairs of all runs together: the curve of the
population of receivers the runs are drawn from. (Against each run's own pairs the band
is conservative - 79 of 80 angles covered, a band half as wide still 75 of 80 - because
resampling receivers also varies the mix of angles under the kernel, which a run's own
average follows; the band is built for the population curve.) The runs break the fit's
assumptions: soft decoders (detection width 1 dB) and heavy-tailed fast fading (t, 5
df), while the curve fits normal tails.
"""
from __future__ import annotations

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.compare.elevation import elevation_curve
from spotkit.compare.pairing import pair_spots
from spotkit.sim.simulate import Propagation, simulate_spots

GRID = np.array([5.0, 12.0, 20.0, 30.0])  # [deg]
RUNS = 16


@pytest.mark.slow
def test_bands_cover_the_true_curve_at_about_the_nominal_rate():
    bands, kd, kk = [], 0.0, 0.0
    for seed in range(RUNS):
        sim = simulate_spots(days=0.5, n_receivers=150, bands=("20m",), seed=100 + seed,
                             detection_width_db=1.0,
                             propagation=Propagation(fast_fading_df=5.0))
        pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
        curve = elevation_curve(pairs, grid_deg=GRID, n_boot=100, seed=seed)
        bands.append(curve[[C.CI_LOW, C.CI_HIGH, C.CI_SIM_LOW, C.CI_SIM_HIGH]].to_numpy())
        tr = sim.truth.pairs
        e, d = tr[C.ELEVATION].to_numpy(), tr[C.B_MINUS_A].to_numpy()
        k = np.exp(-0.5 * ((e[None, :] - GRID[:, None]) / 3.0) ** 2)
        kd, kk = kd + (k * d).sum(1), kk + k.sum(1)
    truth = kd / kk
    assert truth[3] - truth[0] > 4.0  # the truth really varies with the angle
    b = np.array(bands)  # runs x angles x (low, high, sim low, sim high)
    lo, hi, slo, shi = b[..., 0], b[..., 1], b[..., 2], b[..., 3]
    ok = np.isfinite(lo)
    assert ok.sum() >= 0.9 * ok.size  # nearly every angle of every run got a band
    assert np.all((shi - slo)[ok] > (hi - lo)[ok])
    rate = ((lo <= truth) & (truth <= hi))[ok].mean()
    mid, q = (lo + hi) / 2, (hi - lo) / 4  # the same band, half as wide
    rate_half = ((mid - q <= truth) & (truth <= mid + q))[ok].mean()
    whole = np.mean([((slo[i] <= truth) & (truth <= shi[i]))[ok[i]].all()
                     for i in range(RUNS)])
    # measured (these 16 runs, 64 angles): pointwise 0.92, the half-wide band 0.58, all
    # four angles at once inside the simultaneous band in 13 of 16 runs (seeds 100-119:
    # 0.94, 0.62, 17 of 20). Nominal 95 %: the bound
    # 0.85 is about 3 binomial SDs below it and fails a band half as wide (about 0.67 for a
    # normal estimate)
    assert rate >= 0.85, f"pointwise coverage {rate:.2f} of {ok.sum()}"
    assert rate_half < 0.85, f"a half-wide band still covered {rate_half:.2f}"
    assert whole >= 0.7, f"simultaneous coverage {whole:.2f} of {RUNS} runs"

def test_simultaneous_band_contains_the_pointwise_one_and_is_drawn():
    import matplotlib

    matplotlib.use("Agg")
    from spotkit.viz.plots import elevation_curve_plot

    sim = simulate_spots(days=0.5, n_receivers=120, bands=("20m",), seed=4)
    pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
    curve = elevation_curve(pairs, grid_deg=[4.0, 8.0, 12.0, 16.0], n_boot=60)
    ok = curve[C.CI_LOW].notna()
    assert ok.sum() >= 3
    # max-T over 4 correlated points: wider than each pointwise band, narrower than
    # Bonferroni's would be for independent points by far (a factor of at most about 2)
    ratio = ((curve[C.CI_SIM_HIGH] - curve[C.CI_SIM_LOW])
             / (curve[C.CI_HIGH] - curve[C.CI_LOW]))[ok]
    assert (ratio > 1.0).all() and (ratio < 2.0).all(), ratio.tolist()
    assert curve.loc[~ok, C.CI_SIM_LOW].isna().all()
    ax = elevation_curve_plot(curve)
    gids = {ln.get_gid() for ln in ax.lines}
    assert {"band-simultaneous-low-20m", "band-simultaneous-high-20m", "curve-20m"} <= gids
    low = next(ln for ln in ax.lines if ln.get_gid() == "band-simultaneous-low-20m")
    np.testing.assert_allclose(low.get_ydata(), curve[C.CI_SIM_LOW].to_numpy())
    assert "dashed" in ax.get_ylabel()
    import matplotlib.pyplot as plt

    plt.close(ax.figure)
    from spotkit.compare.elevation import bearing_curve
    from spotkit.viz.plots import bearing_curve_plot

    bc = bearing_curve(pairs, grid_deg=[0, 90, 180, 270], n_boot=40)
    ax = bearing_curve_plot(bc)
    hi = next(ln for ln in ax.lines if ln.get_gid() == "band-simultaneous-high-20m")
    np.testing.assert_allclose(hi.get_ydata()[:-1], bc[C.CI_SIM_HIGH].to_numpy())
    assert "dashed" in ax.get_title()
    plt.close(ax.figure)
