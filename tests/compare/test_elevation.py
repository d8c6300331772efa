"""Tests of spotkit.compare.elevation: the smoothed B-A against elevation angle recovers the
simulator's true B-A(elevation) (vertical against dipole: the truth varies with the angle)."""
from __future__ import annotations

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.compare.elevation import elevation_curve
from spotkit.compare.pairing import pair_spots
from spotkit.errors import UsageError
from spotkit.sim.simulate import simulate_spots


@pytest.fixture(scope="module")
def vertical_dipole():
    sim = simulate_spots(days=0.5, n_receivers=120, bands=("20m",), seed=4)
    return sim, pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")


@pytest.mark.slow
def test_curve_recovers_true_difference(vertical_dipole):
    sim, pairs = vertical_dipole
    grid = np.array([3.0, 8.0, 15.0, 25.0, 35.0])
    curve = elevation_curve(pairs, grid_deg=grid, n_boot=80)
    # the target: the truth's B-A averaged with the same kernel over the true pairs (the
    # simulator's own hop geometry, 300 km layer; spotkit.sim.truth)
    tr = sim.truth.pairs
    e, d = tr[C.ELEVATION].to_numpy(), tr[C.B_MINUS_A].to_numpy()
    k = np.exp(-0.5 * ((e[None, :] - grid[:, None]) / 3.0) ** 2)
    truth = (k * d).sum(1) / k.sum(1)
    est = curve[C.B_MINUS_A].to_numpy()
    # the true curve rises by about 7 dB from 3 to 35 degrees; the fit follows it within
    # 0.5 dB and the pointwise band covers it at 4 or more of the 5 angles
    assert truth[-1] - truth[0] > 4.0
    assert np.abs(est - truth) == pytest.approx(0, abs=0.5)
    inside = (curve[C.CI_LOW] <= truth) & (truth <= curve[C.CI_HIGH])
    assert inside.sum() >= 4


def test_curve_options_checked(vertical_dipole):
    _, pairs = vertical_dipole
    with pytest.raises(UsageError, match="bandwidth"):
        elevation_curve(pairs, bandwidth_deg=0.0)
    with pytest.raises(UsageError, match="n_boot"):
        elevation_curve(pairs, n_boot=1)
    thin = elevation_curve(pairs, grid_deg=[10.0], n_boot=20, min_pairs=10**9)
    assert np.isnan(thin[C.B_MINUS_A].iloc[0]) and thin[C.PAIRS].iloc[0] > 0
    assert thin[C.NOTE].iloc[0] == "too few pairs"
    # a point carried by fewer than MIN_CLUSTERS receivers gets no band (verdict rules)
    one = pairs[pairs[C.CLUSTER] == pairs[C.CLUSTER].iloc[0]]
    lone = elevation_curve(one, n_boot=20, min_pairs=1)
    assert lone[C.CI_LOW].isna().all() and lone[C.B_MINUS_A].notna().any()
    assert lone[C.NOTE].str.contains("no band").all()


@pytest.mark.slow
def test_plot_elevation_curve_cli(tmp_path, vertical_dipole):
    # spotkit plot --kind elevation-curve writes a picture; without --design it is a usage
    # error (exit 2)
    from spotkit.cli import main

    sim, _ = vertical_dipole
    spots = tmp_path / "vd.parquet"
    sim.spots.to_parquet(spots)
    out = tmp_path / "curve.png"
    assert main(["plot", str(spots), "--kind", "elevation-curve", "--design", "simultaneous",
                 "--a", "Q1ABC", "--b", "Q1ABD", "--boot", "20", "-o", str(out)]) == 0
    assert out.stat().st_size > 1000
    assert main(["plot", str(spots), "--kind", "elevation-curve", "-o",
                 str(tmp_path / "x.png")]) == 2
    polar = tmp_path / "bearing.svg"
    assert main(["plot", str(spots), "--kind", "bearing-curve", "--design", "simultaneous",
                 "--a", "Q1ABC", "--b", "Q1ABD", "--boot", "20", "-o", str(polar)]) == 0
    assert "curve-20m" in polar.read_text()


@pytest.mark.slow
def test_bearing_curve_recovers_true_difference(vertical_dipole):
    # the dipole's pattern makes the true B-A depend on the bearing; the circular kernel
    # (15 deg) averaged over the true pairs is the target
    from spotkit.compare.elevation import bearing_curve

    sim, pairs = vertical_dipole
    grid = np.arange(0.0, 360.0, 45.0)
    curve = bearing_curve(pairs, grid_deg=grid, n_boot=60)
    tr = sim.truth.pairs
    b, d = tr[C.BEARING].to_numpy(), tr[C.B_MINUS_A].to_numpy()
    dist = (b[None, :] - grid[:, None] + 180.0) % 360.0 - 180.0
    k = np.exp(-0.5 * (dist / 15.0) ** 2)
    have = k.sum(1) > 50
    truth = (k * d).sum(1) / np.maximum(k.sum(1), 1e-12)
    est = curve[C.B_MINUS_A].to_numpy()
    ok = have & np.isfinite(est)
    assert ok.sum() >= 4
    assert np.abs(est[ok] - truth[ok]) == pytest.approx(0, abs=0.7)
    banded = ok & curve[C.CI_LOW].notna().to_numpy()
    inside = (curve[C.CI_LOW].to_numpy() <= truth) & (truth <= curve[C.CI_HIGH].to_numpy())
    assert inside[banded].mean() >= 0.75
