"""The band x bearing polar surface (``bearing_rings_plot``, ``plot --kind bearing-rings``):
one ring per band in band-plan order, each cell coloured by its B-A on the symmetric
scale, solid where the band excludes 0 dB, hatched where it does not, grey without an
estimate. Tested on what it shows (the cells' data), never on pixels."""
from __future__ import annotations

import matplotlib.pyplot as plt
import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.viz.plots import bearing_rings_plot

BEARINGS = np.arange(0.0, 360.0, 45.0)


def curve() -> pd.DataFrame:
    """Two bands (10 m listed first), eight bearings; on 10 m two cells include 0 dB and
    one has no estimate, on 20 m one has an estimate without a band."""
    est10 = np.array([-3.0, 2.0, 0.5, np.nan, 4.0, -0.4, 1.5, 6.0])
    est20 = np.array([1.2, 1.5, 2.0, 2.5, 3.0, 3.5, -2.0, 5.0])
    rows = []
    for band, est in (("10m", est10), ("20m", est20)):
        lo, hi = est - 1.0, est + 1.0
        if band == "20m":
            lo[3] = hi[3] = np.nan  # too few receivers for a band
        rows.append(pd.DataFrame({C.BAND: band, C.BEARING: BEARINGS, C.B_MINUS_A: est,
                                  C.CI_LOW: lo, C.CI_HIGH: hi}))
    return pd.concat(rows, ignore_index=True)


def cells(ax, gid):
    return [p for p in ax.patches if p.get_gid() == gid]


def test_rings_show_each_cell_by_its_estimate_and_band():
    cv = curve()
    ax = bearing_rings_plot(cv, vmax=6.0)
    try:
        solid10, hatched10 = cells(ax, "ring-10m-solid"), cells(ax, "ring-10m-hatched")
        empty10 = cells(ax, "ring-10m-empty")
        # 10 m: -3, 2, 4, 1.5, 6 exclude 0 (+-1 dB); 0.5 and -0.4 do not; one without estimate
        assert (len(solid10), len(hatched10), len(empty10)) == (5, 2, 1)
        assert all(p.get_hatch() == "///" for p in hatched10)
        assert not any(p.get_hatch() for p in solid10)
        # 20 m: the cell with an estimate but no band is hatched, not solid
        assert len(cells(ax, "ring-20m-solid")) == 7 and len(cells(ax, "ring-20m-hatched")) == 1
        # band-plan order: 20 m (lower frequency) inside, 10 m outside, however listed
        assert {p.get_y() for p in cells(ax, "ring-20m-solid")} == {1.0}
        assert {p.get_y() for p in solid10} == {2.0}
        assert [t.get_text() for t in ax.get_yticklabels()] == ["20m", "10m"]
        # each cell at its bearing, 45 degrees wide, coloured on the symmetric RdBu scale
        cmap = plt.get_cmap("RdBu")
        for p in solid10:
            centre = np.degrees(p.get_x() + p.get_width() / 2) % 360.0
            j = int(np.argmin(np.abs(BEARINGS - centre)))
            assert centre == pytest.approx(BEARINGS[j], abs=1e-6)
            assert np.degrees(p.get_width()) == pytest.approx(45.0)
            want = cmap((cv[C.B_MINUS_A].iloc[j] + 6.0) / 12.0)
            np.testing.assert_allclose(p.get_facecolor(), want, atol=1e-6)
        # B better is blue, B worse red
        north = next(p for p in solid10 if abs(p.get_x() + p.get_width() / 2) < 1e-6)
        assert north.get_facecolor()[0] > north.get_facecolor()[2]  # -3 dB: red
        # north up, clockwise
        assert ax.get_theta_offset() == pytest.approx(np.pi / 2)
        assert ax.get_theta_direction() == -1
    finally:
        plt.close(ax.figure)


def test_rings_of_one_band_and_the_default_scale():
    ax = bearing_rings_plot(curve(), band="20m")
    try:
        assert not cells(ax, "ring-10m-solid")
        assert [t.get_text() for t in ax.get_yticklabels()] == ["20m"]
        bar = ax.figure.axes[-1]  # the colour bar: +-5 dB, the largest 20 m estimate
        assert bar.get_ylim() == pytest.approx((-5.0, 5.0))
    finally:
        plt.close(ax.figure)


@pytest.mark.slow
def test_plot_bearing_rings_cli(tmp_path):
    from spotkit.cli import main
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots(days=0.25, n_receivers=60, bands=("20m", "10m"), seed=4)
    spots = tmp_path / "s.parquet"
    sim.spots.to_parquet(spots)
    out = tmp_path / "rings.svg"
    assert main(["plot", str(spots), "--kind", "bearing-rings", "--design", "simultaneous",
                 "--a", "Q1ABC", "--b", "Q1ABD", "--boot", "20", "-o", str(out)]) == 0
    text = out.read_text()
    assert "ring-20m-" in text and "ring-10m-" in text
    assert main(["plot", str(spots), "--kind", "bearing-rings", "-o",
                 str(tmp_path / "x.png")]) == 2
