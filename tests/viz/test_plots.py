"""Plots (spotkit.viz.plots) drawn headless and checked on what they show."""
from __future__ import annotations

import matplotlib
import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.bands import BAND_ORDER
from spotkit.viz import plots

matplotlib.use("Agg")


@pytest.fixture(autouse=True)
def _no_network(offline):
    """Every test here runs offline (see conftest.offline)."""


@pytest.fixture(scope="module")
def pairs(sim):
    from spotkit.compare.pairing import pair_spots

    return pair_spots(sim.spots, sim.design, sim.a, sim.b)


def _groups(by, est, lo, hi, **keys):
    df = pd.DataFrame(keys)
    df[C.B_MINUS_A], df[C.CI_LOW], df[C.CI_HIGH] = est, lo, hi
    df[C.PAIRS] = 100
    return df


def test_band_palette_follows_band_order_on_one_colour_map():
    colors = plots.band_colors()
    assert list(colors) == BAND_ORDER
    cmap = matplotlib.colormaps[plots.BAND_CMAP]
    samples = cmap(np.linspace(0, 1, 1001))[:, :3]
    pos = [np.argmin(((samples - np.array(colors[b][:3])) ** 2).sum(axis=1)) for b in BAND_ORDER]
    assert np.all(np.diff(pos) > 0)  # positions along the map increase with frequency
    assert len({tuple(np.round(c, 3)) for c in colors.values()}) == len(BAND_ORDER)


def test_heard_by_distance_matches_statsmodels_wilson(pairs):
    """Wilson score interval (Wilson 1927); statsmodels proportion_confint(method='wilson')
    as a test-only oracle, to 1e-9."""
    from statsmodels.stats.proportion import proportion_confint

    t = plots.heard_by_distance(pairs, distance_edges=[0, 1000, 3000, 6000, 20100])
    d = pairs[C.DISTANCE].to_numpy()
    for _, row in t.iterrows():
        m = (d >= row[C.DISTANCE_MIN]) & (d < row[C.DISTANCE_MAX])
        n = int(m.sum())
        k = int(pairs.loc[m, C.HEARD_B].sum())
        assert row[C.PAIRS] == n and row[C.HEARD_B] == k
        lo, hi = proportion_confint(k, n, alpha=0.05, method="wilson")
        assert row["p_b_low"] == pytest.approx(lo, abs=1e-9)
        assert row["p_b_high"] == pytest.approx(hi, abs=1e-9)


def test_heard_plot_draws_a_and_b(pairs):
    """The bars are the far-station bootstrap intervals of spotkit.compare.heard (at
    least as wide as the pairs' Wilson intervals)."""
    from spotkit.compare.heard import heard_probability

    ax = plots.heard_plot(pairs, band="20m")
    bars = {c.get_label(): c for c in ax.containers}
    sub = pairs[pairs[C.BAND].astype(str) == "20m"]
    t = plots.heard_by_distance(sub)
    np.testing.assert_allclose(bars["A"].lines[0].get_ydata(), t["p_a"])
    np.testing.assert_allclose(bars["B"].lines[0].get_ydata(), t["p_b"])
    edges = np.r_[t[C.DISTANCE_MIN].to_numpy(), t[C.DISTANCE_MAX].to_numpy()[-1]]
    h = heard_probability(sub, distance_edges=edges)
    hb = h[h[C.ANTENNA] == "B"]
    tops = [s[:, 1].max() for s in bars["B"].lines[2][0].get_segments()]
    want = np.where(np.isnan(hb[C.P_HEARD_HIGH]), hb[C.P_HEARD], hb[C.P_HEARD_HIGH])
    np.testing.assert_allclose(tops, want)
    ok = hb[C.P_HEARD_HIGH].notna().to_numpy()
    assert np.all(want[ok] >= t["p_b_high"].to_numpy()[ok] - 1e-12)


def test_running_median_is_the_bin_median():
    rng = np.random.default_rng(1)
    x = rng.uniform(0, 2000, 5000)
    y = -x / 100 + rng.normal(0, 3, x.size)
    m = plots.running_median(x, y, bin_km=500)
    assert m["x"].tolist() == [250.0, 750.0, 1250.0, 1750.0]
    for xm, med in zip(m["x"], m["median"], strict=True):
        sel = (x >= xm - 250) & (x < xm + 250)
        assert med == pytest.approx(np.median(y[sel]))


def test_snr_distance_plot_median_line(sim):
    ax = plots.snr_distance_plot(sim.spots, band="10m", bin_km=500)
    sub = sim.spots[sim.spots[C.BAND].astype(str) == "10m"]
    (line,) = [ln for ln in ax.lines if ln.get_gid() == "median-10m"]
    m = plots.running_median(sub[C.DISTANCE], sub[C.SNR] - (sub[C.POWER] - 30), bin_km=500)
    y = np.asarray(line.get_ydata(), dtype=float)
    np.testing.assert_allclose(y[np.isfinite(y)], m["median"])
    (dots,) = [c for c in ax.collections if c.get_gid() == "spots-10m"]
    assert len(dots.get_offsets()) == len(sub)


def test_snr_distance_median_breaks_at_gaps_and_keeps_a_apart_from_b(sim):
    """The median line never joins two bins with an empty bin between them, and with the
    calls given A and B each get their own line from their own reports (issue 16)."""
    ax = plots.snr_distance_plot(sim.spots, band="10m", bin_km=500)
    (line,) = [ln for ln in ax.lines if ln.get_gid() == "median-10m"]
    x = np.asarray(line.get_xdata(), dtype=float)
    m = plots.running_median(sim.spots.loc[sim.spots[C.BAND].astype(str) == "10m",
                                           C.DISTANCE],
                             np.ones((sim.spots[C.BAND].astype(str) == "10m").sum()),
                             bin_km=500)
    gaps = int((np.diff(m["x"]) > 500 * 1.01).sum())
    assert gaps >= 1  # the demo has distances with no 10 m receivers
    assert int(np.isnan(x).sum()) == gaps
    runs = np.split(x, np.flatnonzero(np.isnan(x)))
    assert all((np.diff(r[np.isfinite(r)]) <= 500 * 1.01).all() for r in runs)

    ax = plots.snr_distance_plot(sim.spots, band="20m", calls=(sim.a, sim.b),
                                 labels=("vertical", "dipole"))
    lines = {ln.get_gid(): ln for ln in ax.lines}
    assert {"median-20m-A", "median-20m-B"} <= set(lines)
    sub = sim.spots[(sim.spots[C.BAND].astype(str) == "20m")
                    & (sim.spots[C.TX_CALL].astype(str) == sim.b)]
    want = plots.running_median(sub[C.DISTANCE], sub[C.SNR] - (sub[C.POWER] - 30))
    y = np.asarray(lines["median-20m-B"].get_ydata(), dtype=float)
    np.testing.assert_allclose(y[np.isfinite(y)], want["median"])
    assert any("dipole (B)" in t.get_text() for t in ax.get_legend().get_texts())


def test_spots_per_hour_counts_every_spot(sim):
    tab = plots.spots_per_hour(sim.spots)
    assert int(tab.to_numpy().sum()) == len(sim.spots)
    assert list(tab.columns) == ["20m", "10m"]
    ax = plots.spots_per_hour_plot(sim.spots)
    assert {ln.get_gid() for ln in ax.lines} >= {"count-20m", "count-10m"}


def test_bearing_plot_is_a_compass_with_ci_bands():
    g = _groups("bearing", [1.0, -0.5, 2.0, 0.0], [0.5, -1.5, 1.0, -1.0], [1.5, 0.5, 3.0, 1.0],
                **{C.BEARING_MIN: [0, 90, 180, 270], C.BEARING_MAX: [90, 180, 270, 360]})
    ax = plots.bearing_plot(g)
    assert ax.get_theta_direction() == -1  # clockwise, as bearings run
    assert ax.get_theta_offset() == pytest.approx(np.pi / 2)  # 0 deg at the top (north)
    est = [ln for ln in ax.lines if ln.get_gid() == "estimate-all"]
    assert len(est) == 4
    for ln, (lo, value) in zip(est, [(0, 1.0), (90, -0.5), (180, 2.0), (270, 0.0)], strict=True):
        assert np.allclose(ln.get_ydata(), value)
        assert np.degrees(ln.get_xdata()[0]) == pytest.approx(lo)
    assert len([c for c in ax.collections if c.get_gid() == "ci-all"]) == 4
    rmin, rmax = ax.get_ylim()
    assert rmin == -rmax and rmax >= 3.0
    # the 0 dB circle is named (issue 16)
    assert [t.get_text() for t in ax.texts if t.get_gid() == "zero-db-label"] == ["0 dB"]


@pytest.mark.parametrize("draw, keys", [
    (plots.distance_plot, {C.DISTANCE_MIN: [0, 1000, 3000], C.DISTANCE_MAX: [1000, 3000, 6000]}),
    (plots.elevation_plot, {C.ELEVATION_MIN: [0, 5, 10], C.ELEVATION_MAX: [5, 10, 20]}),
    (plots.hour_plot, {C.HOUR: [0, 6, 12]}),
])
def test_interval_plots_show_estimates_and_cis(draw, keys):
    g = _groups(None, [1.0, -0.5, np.nan], [0.2, -1.0, np.nan], [1.8, 0.1, np.nan], **keys)
    g[C.BAND] = "10m"
    ax = draw(g)
    (eb,) = [c for c in ax.containers if c.get_label() == "10m"]
    line, _, (bars,) = eb.lines
    np.testing.assert_allclose(line.get_ydata()[:2], [1.0, -0.5])
    segs = bars.get_segments()
    np.testing.assert_allclose([s[:, 1].min() for s in segs[:2]], [0.2, -1.0])
    np.testing.assert_allclose([s[:, 1].max() for s in segs[:2]], [1.8, 0.1])
    assert any("no estimate" in t.get_text() for t in ax.texts)


def test_plots_refuse_groups_they_cannot_draw():
    from spotkit.errors import UsageError

    g = _groups(None, [1.0], [0.0], [2.0], **{C.HOUR: [3]})
    with pytest.raises(UsageError, match="distance"):
        plots.distance_plot(g)
    g[C.BAND] = "10m"
    with pytest.raises(UsageError, match="20m"):
        plots.hour_plot(g, band="20m")


@pytest.mark.slow
def test_cli_map_and_plot_write_pictures(sim, tmp_path):
    from spotkit.cli import main

    src = tmp_path / "spots.parquet"
    sim.spots.to_parquet(src)
    png, svg = tmp_path / "cov.png", tmp_path / "hour.svg"
    assert main(["map", str(src), "--kind", "coverage", "--band", "10m", "-o", str(png)]) == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert main(["plot", str(src), "--kind", "spots-per-hour", "-o", str(svg)]) == 0
    assert b"<svg" in svg.read_bytes()[:500]
    assert main(["plot", str(src), "--kind", "bearing", "-o", str(svg)]) == 2  # needs --a
    assert main(["map", str(src), "--kind", "coverage", "-o", str(tmp_path / "x.jpg")]) == 2


# --- issue 14: a table the plot cannot draw is bad input, with the reason --------------------
@pytest.mark.parametrize("draw", [plots.snr_distance_plot, plots.spots_per_hour_plot])
def test_plot_of_no_spots_is_bad_input(draw, sim):
    from spotkit.errors import InputError

    with pytest.raises(InputError, match="no spots to draw: the table for .* has no rows"):
        draw(sim.spots.iloc[:0])


@pytest.mark.parametrize(("draw", "missing"), [
    (plots.snr_distance_plot, "distance_km, snr_db, power_dbm"),
    (plots.spots_per_hour_plot, "time_utc, band")])
def test_plot_of_a_table_without_its_columns_names_them(draw, missing):
    from spotkit.errors import InputError

    with pytest.raises(InputError, match=rf"needs column\(s\) {missing}, which the table does "
                                         r"not have \(it has rx_call\)"):
        draw(pd.DataFrame({C.RX_CALL: ["Q2AA"]}))
