"""Maps (spotkit.viz.maps): drawn headless (Agg) with no network, checked on their content.

Spots come from the demo data (demo_data/simultaneous.csv.gz, conftest.sim).
"""
from __future__ import annotations

import matplotlib
import matplotlib.pyplot as plt
import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.viz import maps

matplotlib.use("Agg")


@pytest.fixture(autouse=True)
def _no_network(offline):
    """Every test here runs offline (see conftest.offline)."""


@pytest.fixture(scope="module")
def result_by_field(sim):
    from spotkit.compare.estimate import compare_antennas

    return compare_antennas(sim.spots, sim.design, sim.a, sim.b, by=("band", "field"),
                            n_boot=100, seed=1)


def _by_gid(ax, gid):
    return [a for a in ax.get_children() if a.get_gid() == gid]


def test_coverage_plots_one_marker_per_distinct_receiver_per_band(sim):
    spots = sim.spots
    fig = maps.coverage_map(spots, paths=True, radius_km=0)  # no zoomed panel
    bands = sorted(spots[C.BAND].astype(str).unique(), key=lambda b: -int(b[:-1]))
    geo_axes = [ax for ax in fig.axes if hasattr(ax, "projection")]
    assert len(geo_axes) == len(bands)
    for ax, band in zip(geo_axes, bands, strict=True):
        sub = spots[spots[C.BAND].astype(str) == band]
        (stations,) = _by_gid(ax, "stations")
        n = sub[C.RX_CALL].nunique()
        assert len(stations.get_offsets()) == n
        (paths,) = _by_gid(ax, "paths")
        assert len(paths.get_segments()) == n
        assert band in ax.get_title()
    # colours: each marker's value is that receiver's median SNR per watt on that band
    ax = geo_axes[0]
    sub = spots[spots[C.BAND].astype(str) == bands[0]]
    per_w = sub[C.SNR] - (sub[C.POWER] - 30.0)
    by_rx = per_w.groupby(sub[C.RX_CALL].astype(str), observed=True)
    expected = np.sort(by_rx.median().to_numpy())
    (stations,) = _by_gid(ax, "stations")
    np.testing.assert_allclose(np.sort(stations.get_array()), expected, atol=1e-9)


def test_receiver_due_east_sits_on_the_90_degree_radial_at_its_ring():
    """A receiver 5000 km due east of home (geographiclib Direct, Karney 2013, as the oracle)
    must be drawn on the east radial of the azimuthal map, on the 5000 km ring, within one
    pixel."""
    from geographiclib.geodesic import Geodesic

    home = "JN58td"
    h_lat, h_lon = 48.145833, 11.625  # JN58td centre (recomputed, Tyson 1989 scheme)
    p = Geodesic.WGS84.Direct(h_lat, h_lon, 90.0, 5_000_000.0)
    q = Geodesic.WGS84.Direct(h_lat, h_lon, 0.0, 2_500_000.0)
    spots = pd.DataFrame({
        C.BAND: ["20m", "20m"], C.TX_CALL: ["Q1ABC"] * 2, C.TX_LOCATOR: [home] * 2,
        C.RX_CALL: ["Q7EST", "Q7NTH"], C.RX_LOCATOR: ["MN00aa", "KP00aa"],
        C.RX_LAT: [p["lat2"], q["lat2"]], C.RX_LON: [p["lon2"], q["lon2"]],
        C.DISTANCE: [5000.0, 2500.0], C.BEARING: [90.0, 0.0], C.SNR: [-10.0, -12.0],
        C.POWER: [30.0, 30.0],
    })
    fig = maps.coverage_map(spots, home=home, ring_step_km=1000, extent_km=6000)
    fig.set_size_inches(8, 8)
    fig.canvas.draw()
    ax = fig.axes[0]
    (stations,) = _by_gid(ax, "stations")
    xy = ax.transData.transform(stations.get_offsets())
    centre = ax.transData.transform([[0.0, 0.0]])[0]
    (ring,) = _by_gid(ax, "ring-5000")
    ring_xy = ax.transData.transform(np.c_[ring.get_xdata(), ring.get_ydata()])
    east_on_ring = ring_xy[np.argmax(ring_xy[:, 0])]
    order = np.argsort(stations.get_array())[::-1]  # Q7EST (-10 dB) first
    east, north = xy[order[0]], xy[order[1]]
    assert np.hypot(*(east - east_on_ring)) < 1.0  # pixels
    assert abs(east[1] - centre[1]) < 1.0  # on the horizontal radial
    (ring25,) = _by_gid(ax, "ring-2500") if _by_gid(ax, "ring-2500") else (None,)
    # the northern station: straight up, 2500 km = half the 5000 km radius
    assert abs(north[0] - centre[0]) < 1.0
    assert abs((north[1] - centre[1]) - 0.5 * (east[0] - centre[0])) < 1.0


@pytest.mark.slow
def test_difference_map_symmetric_scale_solid_only_where_ci_excludes_zero(result_by_field):
    fig = maps.difference_map(result_by_field)
    # the cells as drawn: few-receiver cells re-estimated over time blocks (mapdata)
    g = maps.difference_cells(result_by_field)
    geo_axes = [ax for ax in fig.axes if hasattr(ax, "projection")
                and "whole map" in ax.get_title()]
    assert len(geo_axes) == g[C.BAND].nunique()
    n_solid = n_faint = 0
    for ax in geo_axes:
        for artist in _by_gid(ax, "cells-solid") + _by_gid(ax, "cells-faint"):
            vmin, vmax = artist.get_clim()
            assert vmin == pytest.approx(-vmax) and vmax > 0
        n_solid += sum(len(a.get_paths()) for a in _by_gid(ax, "cells-solid"))
        n_faint += sum(len(a.get_paths()) for a in _by_gid(ax, "cells-faint"))
    est = g[C.B_MINUS_A].to_numpy(dtype=float)
    sig = g["significant"]
    one = (g[C.BOTH] == 0)
    assert n_solid == int((np.isfinite(est) & sig & ~one).sum())
    assert n_faint == int((np.isfinite(est) & ~sig & ~one).sum())
    assert n_solid > 0


def test_difference_map_marks_one_sided_cells(square_groups):
    # the cells themselves (significance, one-sidedness, positions): test_mapdata.py
    groups = square_groups
    fig = maps.difference_map(groups, home="JN58td")
    ax = fig.axes[0]
    assert len(_by_gid(ax, "only-a")[0].get_offsets()) == 1
    assert len(_by_gid(ax, "only-b")[0].get_offsets()) == 1


@pytest.mark.slow
def test_reach_map_marks_what_each_antenna_reached(result_by_field):
    pairs = result_by_field.pairs
    fig = maps.reach_map(pairs, band="10m")
    ax_a, ax_b = [ax for ax in fig.axes if hasattr(ax, "projection")]
    st = maps.reach_stations(pairs, "10m")
    n_a = sum(len(a.get_offsets())
              for a in _by_gid(ax_a, "heard-both-a") + _by_gid(ax_a, "only-a-a"))
    n_b = sum(len(a.get_offsets())
              for a in _by_gid(ax_b, "heard-both-b") + _by_gid(ax_b, "only-b-b"))
    sub = pairs[pairs[C.BAND].astype(str) == "10m"]
    assert n_a == sub.loc[sub[C.HEARD_A], C.FAR_CALL].nunique() == int(st[C.HEARD_A].sum())
    assert n_b == sub.loc[sub[C.HEARD_B], C.FAR_CALL].nunique()
    assert _by_gid(ax_a, "ring-2500") or _by_gid(ax_a, "ring-1000")
    fig = maps.reach_map(pairs, layout="overlay", projection="world")
    (ax,) = [ax for ax in fig.axes if hasattr(ax, "projection")]
    total = sum(len(a.get_offsets()) for g in ("heard-both", "only-a", "only-b")
                for a in _by_gid(ax, g))
    assert total == len(maps.reach_stations(pairs))


def test_world_paths_split_where_they_cross_the_map_edge():
    """On a world map centred on 0 deg, the geodesic from (0, 170 E) to (0, 170 W) runs east
    across the 180 deg line, i.e. the map edge: it must be split there, not drawn across the
    whole map. (A path from home never crosses the edge of a map centred on home's
    longitude: two great circles through home meet again only at the antipode.)"""
    import cartopy.crs as ccrs

    fig = plt.figure()
    ax = fig.add_subplot(1, 1, 1, projection=ccrs.EqualEarth(central_longitude=0.0))
    lc = maps.draw_paths(ax, (0.0, 170.0), [0.0, 10.0], [-170.0, 150.0])
    segs = lc.get_segments()
    assert len(segs) == 3
    width = ax.projection.x_limits[1] - ax.projection.x_limits[0]
    assert all(np.abs(np.diff(s[:, 0])).max() < width / 3 for s in segs)
    ends = np.array([[s[0, 0], s[-1, 0]] for s in segs])
    assert np.isclose(np.abs(ends).max(), width / 2, rtol=0.01)  # reaches the edge


def test_bad_arguments():
    with pytest.raises(ValueError, match="azimuthal, world"):
        maps.make_projection("mercator", "JN58")
    with pytest.raises(ValueError, match="110m"):
        maps.base_map(projection="world", resolution="1m")
    from spotkit.errors import UsageError

    with pytest.raises(UsageError, match="home"):
        maps.make_projection("azimuthal", None)


def test_receive_side_maps_the_transmitters():
    """Receive design: the home end is the two co-located receivers; the far stations are
    the transmitters (demo_data/receive.csv.gz, or a simulator run)."""
    from pathlib import Path

    demo = Path(__file__).resolve().parents[2] / "demo_data" / "receive.csv.gz"
    if demo.exists():
        from spotkit.io.ingest import load_spots

        spots = load_spots(demo)
    else:
        from spotkit.sim.simulate import simulate_spots

        spots = simulate_spots("receive", days=1, seed=4, n_transmitters=60).spots
    assert maps.resolve_side(spots) == "receive"
    home = maps.home_from_spots(spots)
    assert home == spots[C.RX_LOCATOR].astype(str).mode()[0]
    band = spots[C.BAND].astype(str).mode()[0]
    fig = maps.coverage_map(spots, bands=band)
    (stations,) = _by_gid(fig.axes[0], "stations")
    sub = spots[spots[C.BAND].astype(str) == band]
    assert len(stations.get_offsets()) == sub[C.TX_CALL].nunique()
    assert "transmitters" in fig.axes[0].get_title()


def test_higher_resolution_only_when_asked():
    """The default land layer is the shipped one: nothing of cartopy's Natural Earth data is
    looked for (the offline fixture refuses the network and checks that no file was left)."""
    ax = maps.base_map(projection="world", home="JN58td", fig=plt.figure())
    assert _by_gid(ax, "land-110m")
    assert not _by_gid(ax, "land-50m")


@pytest.mark.parametrize("resolution", ["50m", "10m"])
def test_layer_not_shipped_falls_back_offline_with_a_warning(resolution):
    """Offline means offline (issue 16 item 7): a land layer that is not shipped and cannot be
    downloaded is replaced by the shipped one with a warning naming the option, no traceback;
    the folders cartopy made for the failed download are removed (offline fixture)."""
    from spotkit.errors import SpotkitWarning

    with pytest.warns(SpotkitWarning, match=rf"--resolution {resolution}.*shipped 1:110m"):
        ax = maps.base_map(projection="azimuthal", home="JN58td", resolution=resolution,
                           fig=plt.figure())
    assert _by_gid(ax, "land-110m")
    assert not _by_gid(ax, f"land-{resolution}")


def test_map_command_offline_with_a_layer_not_shipped(sim, tmp_path, capsys):
    """The same through the CLI: exit 0, a one-line note, a picture."""
    from spotkit.cli.app import main

    src = tmp_path / "spots.parquet"
    sim.spots.to_parquet(src)
    out = tmp_path / "cov.png"
    code = main(["map", str(src), "--kind", "coverage", "--band", "10m",
                 "--resolution", "50m", "-o", str(out)])  # two panels: whole map and zoom
    err = capsys.readouterr().err
    assert code == 0 and out.stat().st_size > 0
    assert "Traceback" not in err
    assert err.count("note: the 1:50m land layer (--resolution 50m)") == 1  # once, not per panel


# --- issue 16: the near field, greyscale significance, one stated scale, no blank bands ---
def _squares_around_home(far=("FN31", "PM95", "QF56", "GG66")):
    """Invented per-square results: 24 squares within about 700 km of JO62 (most pairs)
    and a few far ones; estimates from -6 to +9 dB, every third one with a CI including 0."""
    near = [f"JO{x}{y}" for x in range(4, 8) for y in range(0, 6)][:24]
    far = list(far)
    sq = near + far
    k = np.arange(len(sq))
    est = np.linspace(-6.0, 9.0, len(sq))
    half = np.where(k % 3 == 0, np.abs(est) + 1.0, 0.5)  # every third: CI includes 0
    return pd.DataFrame({
        C.SQUARE: sq, C.B_MINUS_A: est, C.CI_LOW: est - half, C.CI_HIGH: est + half,
        C.BOTH: np.where(k < 24, 400, 20), C.ONLY_A: 2, C.ONLY_B: 2,
        "clusters": 12,
    })


def _geo_axes(fig):
    return [ax for ax in fig.axes if hasattr(ax, "projection")]


def test_difference_map_zooms_to_where_most_pairs_are_with_true_cells():
    groups = _squares_around_home()
    fig = maps.difference_map(groups, home="JO62qm", labels=("vertical", "dipole"))
    fig.canvas.draw()
    whole, near = _geo_axes(fig)
    assert "whole map" in whole.get_title()
    # the zoom holds at least half the pairs (geodesic distances from pyproj as the oracle)
    from pyproj import Geod

    cells = maps.difference_cells(groups)
    n = len(cells)
    d_km = Geod(ellps="WGS84").inv(np.full(n, 13.375), np.full(n, 52.5208),
                                   cells[C.FAR_LON].to_numpy(), cells[C.FAR_LAT].to_numpy())[2]
    d_km = np.asarray(d_km) / 1e3
    pairs = (cells[C.BOTH] + cells[C.ONLY_A] + cells[C.ONLY_B]).to_numpy()
    radius = float(near.get_title().split("within ")[1].split(" km")[0].replace(",", ""))
    assert pairs[d_km <= radius].sum() >= 0.5 * pairs.sum()
    assert radius < 0.4 * d_km.max()
    # squares are true cells in the zoomed panel: polygons, each several pixels across
    cells = _by_gid(near, "cells-solid") + _by_gid(near, "cells-faint")
    assert cells and all(hasattr(c, "get_paths") and not hasattr(c, "get_offsets")
                         or type(c).__name__ == "PolyCollection" for c in cells)
    widths = [np.ptp(near.transData.transform(p.vertices)[:, 0])
              for c in cells for p in c.get_paths()]
    assert min(widths) > 8  # pixels
    # a radius of one's own; 0 turns the zoom off
    fig = maps.difference_map(groups, home="JO62qm", radius_km=500)
    assert "within 500 km" in _geo_axes(fig)[1].get_title()
    assert len(_geo_axes(maps.difference_map(groups, home="JO62qm", radius_km=0))) == 1


def test_difference_map_significance_differs_in_greyscale_at_every_level(sim):
    """Solid (CI excludes 0) cells are outlined and not hatched; the rest are hatched and
    not outlined, for fields, squares and receivers, on the whole and the zoomed panel."""
    from matplotlib.colors import to_rgba

    groups = _squares_around_home()
    fields = groups.assign(**{C.FIELD: groups[C.SQUARE].str[:2]}).drop(columns=C.SQUARE)
    fields = fields.drop_duplicates(C.FIELD)
    receivers = groups.rename(columns={C.SQUARE: C.FAR_CALL}).assign(**{
        C.FAR_LAT: np.linspace(48, 56, len(groups)), C.FAR_LON: np.linspace(5, 25, len(groups))})
    for table in (groups, fields, receivers):
        fig = maps.difference_map(table, home="JO62qm", radius_km=1000)
        seen = {"solid": 0, "faint": 0}
        for ax in _geo_axes(fig):
            for name in seen:
                for art in _by_gid(ax, f"cells-{name}"):
                    n = (len(art.get_offsets()) if type(art).__name__ == "PathCollection"
                         else len(art.get_paths()))
                    if not n:
                        continue
                    seen[name] += n
                    if name == "solid":
                        assert not art.get_hatch()
                        assert np.max(art.get_linewidths()) > 0
                        assert np.mean(to_rgba(art.get_edgecolor()[0])[:3]) < 0.2  # dark
                    else:
                        assert art.get_hatch()
                        assert np.max(art.get_linewidths()) == 0
        assert seen["solid"] and seen["faint"], seen
        plt.close(fig)


def test_difference_map_has_one_symmetric_scale_and_says_so():
    groups = _squares_around_home()
    fig = maps.difference_map(groups, home="JO62qm")
    clims = {a.get_clim() for ax in _geo_axes(fig)
             for a in _by_gid(ax, "cells-solid") + _by_gid(ax, "cells-faint")}
    assert len(clims) == 1
    ((lo, hi),) = clims
    assert lo == -hi and hi > 0
    (cbar_ax,) = [ax for ax in fig.axes if not hasattr(ax, "projection")]
    label = cbar_ax.get_xlabel()
    assert f"-{hi:g} to +{hi:g} dB" in label and "one scale for every panel" in label


@pytest.mark.parametrize("far", [("FN31", "PM95", "QF56", "GG66"),
                                 ("KP20", "FN31", "PM95", "QF56", "GF05", "RE78", "KG30")])
@pytest.mark.parametrize("projection", ["azimuthal", "world"])
def test_maps_have_no_blank_band_under_the_title(projection, far):
    """The panels start just under the figure's title, which overlaps none of them: the gap
    between the title's bottom and the top of the highest panel title is small, and the map
    panels fill the width."""
    import io

    fig = maps.difference_map(_squares_around_home(far), home="JO62qm", projection=projection)
    for _ in range(2):  # the same after a save at another resolution
        fig.canvas.draw()
        r = fig.canvas.get_renderer()
        title = fig._suptitle.get_window_extent(r)
        top = max(ax.title.get_window_extent(r).y1 for ax in _geo_axes(fig))
        gap_in = (title.y0 - top) / fig.dpi
        assert 0.0 <= gap_in < 0.3
        fig.savefig(io.BytesIO(), format="png", dpi=150)
    boxes = [ax.get_window_extent(r) for ax in _geo_axes(fig)]
    width = (max(b.x1 for b in boxes) - min(b.x0 for b in boxes)) / fig.bbox.width
    assert width > 0.75


def _reach_pairs():
    """Invented pairs: 6 far stations on two bands; one heard by A only, one by B only."""
    nan = float("nan")
    calls = ["Q2AA", "Q2BB", "Q2CC", "Q2DD", "Q2EE", "Q2FF"]
    lat = [48.1, 51.4, 40.4, 59.3, 41.9, 38.9]
    lon = [11.6, -1.0, -3.7, 18.1, 12.5, -77.0]
    dist = [500.0, 1000.0, 2300.0, 800.0, 1200.0, 6700.0]
    rows = []
    for band in ("20m", "10m"):
        for k, call in enumerate(calls):
            a = nan if (band == "10m" and k == 1) else -15.0
            b = nan if (band == "20m" and k == 2) else -12.0
            rows.append({C.BAND: band, C.FAR_CALL: call, C.FAR_LAT: lat[k], C.FAR_LON: lon[k],
                         C.DISTANCE: dist[k], C.SNR_A: a, C.SNR_B: b,
                         C.FAR_LOCATOR: "JN58td"})
    return pd.DataFrame(rows)


@pytest.mark.parametrize("layout", ["side", "overlay"])
def test_reach_map_title_and_legend_count_the_same_things(layout):
    """Issue 16: the title counted stations while the legend counted station-bands; now the
    legend's counts add up to the title's, and the legend covers no label of the map."""
    import re

    fig = maps.reach_map(_reach_pairs(), home="JO62qm", layout=layout,
                         labels=("vertical", "dipole"))
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    for ax in _geo_axes(fig):
        title = ax.get_title()
        n_title = int(re.search(r": ([\d,]+) station-bands", title).group(1))
        leg = ax.get_legend()
        n_legend = sum(int(t.get_text().rsplit(": ", 1)[1]) for t in leg.get_texts())
        assert n_title == n_legend
        assert "(6 stations)" in title
        box = leg.get_window_extent(r)
        for t in ax.texts:
            if t.get_text() and t.get_visible():
                assert not box.overlaps(t.get_window_extent(r)), t.get_text()
    titles = " ".join(ax.get_title() for ax in _geo_axes(fig))
    assert ("vertical" in titles) and ("dipole" in titles or layout == "side")


def test_world_map_shows_the_latitudes_of_the_data_not_the_empty_poles():
    """Issue 16: world maps were 30-40 % empty. The map is cut to the latitudes of the far
    stations (plus a margin): Antarctica is not drawn when nobody is south of 40 deg S."""
    fig = maps.difference_map(_squares_around_home(), home="JO62qm", projection="world")
    (ax,) = _geo_axes(fig)
    import cartopy.crs as ccrs

    y0, y1 = ax.get_ylim()
    _, y_south = maps.project_points(ax.projection, [-60.0], [13.4])
    _, y_north = maps.project_points(ax.projection, [80.0], [13.4])
    assert y0 > y_south[0] and y1 < y_north[0]
    lat_lo = ccrs.PlateCarree().transform_point(0.0, y0, ax.projection)[1]
    assert -50.0 < lat_lo < -34.0  # QF56 at about 34 deg S, 8 deg margin


def test_coverage_of_one_antenna_title_sits_above_its_panels(sim):
    """The case where the figure title landed on the panel titles (one antenna, one band,
    whole map and zoom): the title's bottom is above every panel title."""
    spots = sim.spots[sim.spots[C.BAND].astype(str) == "10m"]
    from spotkit.viz import antenna_spots

    sets = antenna_spots(spots, "simultaneous", sim.a, sim.b)
    fig = maps.coverage_map(spots, antennas={"A": sets["A"]}, labels=("vertical", "dipole"))
    fig.canvas.draw()
    r = fig.canvas.get_renderer()
    assert fig._suptitle.get_text().startswith("Coverage of vertical")
    bottom = fig._suptitle.get_window_extent(r).y0
    assert all(ax.title.get_window_extent(r).y1 < bottom for ax in _geo_axes(fig))


def test_field_map_has_no_zoom_unless_asked():
    groups = _squares_around_home()
    fields = groups.assign(**{C.FIELD: groups[C.SQUARE].str[:2]}).drop(columns=C.SQUARE)
    fields = fields.drop_duplicates(C.FIELD)
    assert len(_geo_axes(maps.difference_map(fields, home="JO62qm"))) == 1
    assert len(_geo_axes(maps.difference_map(fields, home="JO62qm", radius_km=3000))) == 2
