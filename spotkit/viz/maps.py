"""Coverage, A/B difference and reach maps, drawn offline with cartopy.

Two projections:

``"azimuthal"``
    Azimuthal equidistant on the WGS-84 ellipsoid, centred on the home station (PROJ
    ``aeqd``). PROJ computes its ellipsoidal form from geodesics, so a straight line from the
    centre *is* the geodesic (great-circle) path, its direction is the azimuth at home, and the
    distance from the centre is the geodesic distance: rings of equal distance are circles.
    Far from home shapes and areas are strongly distorted; the antipode is smeared round the
    edge.
``"world"``
    Equal Earth, an equal-area world map (Savric, Patterson & Jenny 2019); paths are
    sampled geodesics.

The backdrop is the shipped Natural Earth 1:110m land layer (:mod:`spotkit.viz.basemap`), so no map
needs a network connection; cartopy's own 1:50m and 1:10m land layers are used only when asked for
(``resolution="50m"`` or ``"10m"``; cartopy downloads them once). Without a network, a layer
that is not on the computer yet falls back to the shipped one with a warning.

Station positions are locator cell centres (see :mod:`spotkit.geo.locator`): a 4-character locator
puts a station up to about 111 km east-west from where it is. Every map function takes
``fig=None`` and returns the :class:`matplotlib.figure.Figure` it drew on; matplotlib and cartopy
are imported only inside the functions. Artists that tests look for carry a ``gid``
(``"stations"``, ``"paths"``, ``"ring-<km>"``, ``"cells-solid"``, ``"cells-faint"``,
``"only-a"``, ``"only-b"``, ``"heard-a"``, ``"heard-b"``).

What the maps show is computed in :mod:`spotkit.viz.mapdata`, which imports neither matplotlib
nor cartopy; its public names are re-exported here (``maps.far_station_summary``,
``maps.difference_cells``, ``maps.reach_stations``, ...).

References
----------
J. P. Snyder, "Map Projections - A Working Manual", USGS Professional Paper 1395 (1987),
ch. 25 (azimuthal equidistant).
B. Savric, T. Patterson, B. Jenny, "The Equal Earth map projection", Int. J. Geographical
Information Science 33(3):454-465 (2019), doi:10.1080/13658816.2018.1504949.
"""
from __future__ import annotations

import contextlib
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_choice, check_columns
from spotkit.errors import InputError, SpotkitWarning, UsageError
from spotkit.viz.mapdata import (
    FULL_EXTENT_KM,
    Level,
    Side,
    _geodesic_samples,
    _groups_and_pairs,
    _ring_step,
    _select_bands,
    auto_extent_km,
    difference_cells,
    far_station_summary,
    home_from_pairs,
    home_from_spots,
    home_latlon,
    near_radius_km,
    reach_stations,
    resolve_side,
    symmetric_limit,
)

Projection = Literal["azimuthal", "world"]
PROJECTIONS = ("azimuthal", "world")
Resolution = Literal["110m", "50m", "10m"]
RESOLUTIONS = ("110m", "50m", "10m")
ReachLayout = Literal["side", "overlay"]
REACH_LAYOUTS = ("side", "overlay")

LAND_COLOR = "#e6e4dc"
COAST_COLOR = "#8d8a80"
SEA_COLOR = "#fbfbf8"
RING_COLOR = "#7a7a7a"


# --- projections -------------------------------------------------------------------------
def make_projection(projection: Projection = "azimuthal", home=None):
    """The cartopy CRS for ``projection``.

    Parameters
    ----------
    projection : {"azimuthal", "world"}
        Azimuthal equidistant centred on ``home`` (WGS-84), or the Equal Earth world map
        centred on ``home``'s longitude (0 deg when no home is given).
    home : str or (float, float), optional
        Home station locator or (lat, lon) [deg]; required for ``"azimuthal"``.
    """
    import cartopy.crs as ccrs

    check_choice(projection, PROJECTIONS, "projection")
    if projection == "azimuthal":
        lat, lon = home_latlon(home)
        return ccrs.AzimuthalEquidistant(central_longitude=lon, central_latitude=lat)
    lon = home_latlon(home)[1] if home is not None else 0.0
    return ccrs.EqualEarth(central_longitude=lon)


def project_points(crs, lat, lon) -> tuple[np.ndarray, np.ndarray]:
    """Project lat/lon [deg] into ``crs`` map coordinates [m]; vectorised."""
    import cartopy.crs as ccrs

    lat = np.asarray(lat, dtype=float)
    lon = np.asarray(lon, dtype=float)
    xy = crs.transform_points(ccrs.PlateCarree(), lon, lat)
    return xy[..., 0], xy[..., 1]


# --- base map ----------------------------------------------------------------------------
def _natural_earth_land(resolution: str):
    """Path of cartopy's Natural Earth land shapefile at ``resolution``, downloaded if it
    is not on this computer yet; ``None`` (and a :class:`SpotkitWarning`) when it cannot be
    had, e.g. without a network. Folders made for a download that failed are removed again."""
    import warnings

    import cartopy
    from cartopy.io import Downloader, DownloadWarning

    spec = ("shapefiles", "natural_earth", resolution, "physical", "land")
    fmt = {"config": cartopy.config, "category": "physical", "name": "land",
           "resolution": resolution}
    downloader = Downloader.from_config(spec)
    target = Path(downloader.target_path(fmt))
    made = [d for d in (target.parent, *target.parent.parents) if not d.exists()]
    try:
        with warnings.catch_warnings():  # its "Downloading ..." note; a failure is ours
            warnings.simplefilter("ignore", DownloadWarning)
            return Path(downloader.path(fmt))
    except Exception as exc:  # no network, a proxy, a broken download ...
        for d in made:  # innermost first: only the empty folders made for this download
            with contextlib.suppress(OSError):
                d.rmdir()
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        warnings.warn(f"the 1:{resolution[:-1]}m land layer (--resolution {resolution}) is "
                      f"not on this computer and could not be downloaded ({reason}); "
                      "drawing the shipped 1:110m layer instead", SpotkitWarning, stacklevel=3)
        return None


def draw_land(ax, *, resolution: Resolution = "110m", land_color: str = LAND_COLOR,
              coast_color: str = COAST_COLOR, linewidth: float = 0.4):
    """Draw land and coastlines on a cartopy GeoAxes.

    ``"110m"`` uses the shipped layer and never touches the network; ``"50m"`` and ``"10m"``
    use cartopy's Natural Earth land layer, which cartopy downloads on first use. When that
    layer is not on this computer and cannot be downloaded (no network), the shipped layer is
    drawn instead, with a :class:`~spotkit.errors.SpotkitWarning`.
    """
    import cartopy.crs as ccrs

    check_choice(resolution, RESOLUTIONS, "resolution")
    style = dict(facecolor=land_color, edgecolor=coast_color, linewidth=linewidth, zorder=0.5)
    if resolution != "110m":
        # a layer that could not be had is tried (and reported) once per figure, not per panel
        missing = ax.figure.__dict__.setdefault("_spotkit_missing_land", set())
        path = None if resolution in missing else _natural_earth_land(resolution)
        if path is None:
            missing.add(resolution)
        else:
            from cartopy.io.shapereader import Reader

            return ax.add_geometries(list(Reader(str(path)).geometries()),
                                     crs=ccrs.PlateCarree(), gid=f"land-{resolution}",
                                     **style)
    from spotkit.viz.basemap import land_geometry

    return ax.add_geometries(list(land_geometry().geoms), crs=ccrs.PlateCarree(),
                             gid="land-110m", **style)


def draw_rings(ax, crs, extent_km: float, step_km: float | None = None, *,
               bearings: bool = True, label_bearing_deg: float = 22.5):
    """Distance rings, bearing spokes and bearing labels on an azimuthal map.

    Rings are circles of the given geodesic radius in map coordinates (exact for the
    ellipsoidal azimuthal-equidistant projection). Each ring is a Line2D with
    ``gid="ring-<km>"``.
    """
    step = step_km or (250.0 if extent_km <= 1000 else 500.0 if extent_km <= 2500
                       else _ring_step(extent_km))
    theta = np.linspace(0.0, 2 * np.pi, 361)
    radii = np.arange(step, extent_km + 1e-6, step)
    lines = []
    for r_km in radii:
        r = r_km * 1e3
        (ln,) = ax.plot(r * np.sin(theta), r * np.cos(theta), transform=crs, color=RING_COLOR,
                        lw=0.5, ls=(0, (4, 3)), zorder=1.5, gid=f"ring-{r_km:.0f}")
        lines.append(ln)
        if len(radii) > 5 and (int(round(r_km / step)) % 2):
            continue  # label every other ring when there are many
        if r_km > 0.93 * extent_km:
            continue  # the edge carries the bearing labels
        a = np.radians(label_bearing_deg)
        ax.text(r * np.sin(a), r * np.cos(a), f"{r_km:,.0f} km", transform=crs, fontsize=6,
                color="#555555", ha="center", va="center", zorder=4,
                bbox=dict(boxstyle="round,pad=0.1", fc="white", ec="none", alpha=0.6))
    if bearings:
        edge = extent_km * 1e3
        names = {0: "N", 90: "E", 180: "S", 270: "W"}
        for b in range(0, 360, 30):
            a = np.radians(b)
            ax.plot([0, edge * np.sin(a)], [0, edge * np.cos(a)], transform=crs,
                    color=RING_COLOR, lw=0.3, alpha=0.6, zorder=1.4)
            ax.text(1.07 * edge * np.sin(a), 1.07 * edge * np.cos(a), names.get(b, f"{b}°"),
                    transform=crs, fontsize=7, ha="center", va="center", clip_on=False,
                    color="#333333")
    return lines


def draw_geodesic_rings(ax, home, step_km: float = 5000.0, max_km: float = 20000.0):
    """Rings of equal geodesic distance from home on any projection (sampled with
    :func:`spotkit.geo.geodesic.geodesic_direct`, drawn as geodesic lines)."""
    import cartopy.crs as ccrs

    from spotkit.geo.geodesic import geodesic_direct

    h_lat, h_lon = home_latlon(home)
    az = np.linspace(0.0, 360.0, 181)
    lines = []
    for r_km in np.arange(step_km, max_km - 1e-6, step_km):
        la, lo = geodesic_direct(np.full(az.size, h_lat), np.full(az.size, h_lon), az,
                                 np.full(az.size, r_km * 1e3))
        (ln,) = ax.plot(np.asarray(lo), np.asarray(la), transform=ccrs.Geodetic(),
                        color=RING_COLOR, lw=0.5, ls=(0, (4, 3)), zorder=1.5,
                        gid=f"ring-{r_km:.0f}")
        lines.append(ln)
    return lines


def base_map(ax=None, *, projection: Projection = "azimuthal", home=None,
             extent_km: float | None = None, ring_step_km: float | None = None,
             resolution: Resolution = "110m", rings: bool = True, fig=None):
    """A map with land, coastlines and (azimuthal) distance rings, ready for stations.

    Parameters
    ----------
    ax : cartopy GeoAxes, optional
        Draw here (it must already have the wanted projection); otherwise a new axes is made
        in ``fig`` (or a new figure).
    projection : {"azimuthal", "world"}
    home : str or (float, float), optional
        Home station locator or (lat, lon) [deg]; required for ``"azimuthal"``.
    extent_km : float, optional
        Radius of the azimuthal map [km]; default the whole globe.
    ring_step_km : float, optional
        Distance between rings [km]; default 1000 km up to 6000 km radius, else 2500 km.
    resolution : {"110m", "50m", "10m"}
        Land layer; only ``"110m"`` (the default, shipped) works offline.
    rings : bool
        Draw distance rings and bearings (azimuthal only).

    Returns
    -------
    cartopy.mpl.geoaxes.GeoAxes
    """
    import matplotlib.pyplot as plt

    check_choice(projection, PROJECTIONS, "projection")
    check_choice(resolution, RESOLUTIONS, "resolution")
    if ax is None:
        crs = make_projection(projection, home)
        fig = fig if fig is not None else plt.figure(figsize=(7, 7))
        ax = fig.add_subplot(1, 1, 1, projection=crs)
    crs = ax.projection
    ax.set_facecolor(SEA_COLOR)
    draw_land(ax, resolution=resolution)
    if projection == "azimuthal":
        extent = float(extent_km or FULL_EXTENT_KM)
        if extent < FULL_EXTENT_KM:
            import matplotlib.path as mpath

            r = extent * 1e3
            ax.set_extent([-r, r, -r, r], crs=crs)
            t = np.linspace(0, 2 * np.pi, 361)
            circle = mpath.Path(np.c_[r * np.sin(t), r * np.cos(t)])
            ax.set_boundary(circle, transform=ax.transData)
        else:
            ax.set_global()
        if rings:
            draw_rings(ax, crs, min(extent, 20000.0), ring_step_km)
        ax.plot([0], [0], marker="*", ms=9, color="black", mec="white", mew=0.6,
                transform=crs, zorder=6, gid="home")
    else:
        ax.set_global()
        if home is not None:
            import cartopy.crs as ccrs

            if rings:
                draw_geodesic_rings(ax, home, ring_step_km or 5000.0)
            lat, lon = home_latlon(home)
            ax.plot([lon], [lat], marker="*", ms=9, color="black", mec="white", mew=0.6,
                    transform=ccrs.PlateCarree(), zorder=6, gid="home")
    return ax


def draw_paths(ax, home, lat, lon, *, color="#4a4a4a", alpha=None, linewidth=0.4,
               n_points: int | None = None):
    """Great-circle (geodesic) paths from home to each station, as one LineCollection.

    On an azimuthal map centred on home these are straight segments (exact); on other
    projections each geodesic is sampled at ``n_points`` (default 48; 24 beyond 10 000
    paths) and split where it crosses the map edge. The LineCollection has
    ``gid="paths"``.
    """
    from matplotlib.collections import LineCollection

    crs = ax.projection
    lat = np.asarray(lat, dtype=float)
    lon = np.asarray(lon, dtype=float)
    h_lat, h_lon = home_latlon(home)
    if crs.proj4_params.get("proj") == "aeqd":
        x, y = project_points(crs, lat, lon)
        segs = np.zeros((lat.size, 2, 2))
        segs[:, 1, 0] = x
        segs[:, 1, 1] = y
    else:
        if n_points is None:  # fewer points per path when there are very many
            n_points = 48 if lat.size <= 10_000 else 24
        la, lo = _geodesic_samples(h_lat, h_lon, lat, lon, n_points)
        x, y = project_points(crs, la, lo)
        width = crs.x_limits[1] - crs.x_limits[0]
        jump = np.abs(np.diff(x, axis=1)) > width / 3
        segs = np.stack([x, y], axis=-1)
        if jump.any():  # split the few paths that cross the map edge
            out = [s for s, j in zip(segs, jump, strict=True) if not j.any()]
            for s, j in zip(segs[jump.any(axis=1)], jump[jump.any(axis=1)], strict=True):
                out.extend(np.split(s, np.flatnonzero(j) + 1))
            segs = out
    if alpha is None:  # fainter the more paths there are
        alpha = float(np.clip(8.0 / np.sqrt(max(lat.size, 1)), 0.02, 0.6))
    lc = LineCollection(segs, colors=color, alpha=alpha, linewidths=linewidth, zorder=2,
                        gid="paths")
    ax.add_collection(lc, autolim=False)
    return lc


# --- layout ------------------------------------------------------------------------------
def _panel_grid(n: int, ncols: int | None):
    ncols = ncols or (1 if n == 1 else 2 if n <= 4 else 3)
    nrows = int(np.ceil(n / ncols))
    return nrows, ncols


def _panels(items, progress: bool):
    """Iterate over the panels to draw, with a progress bar when asked."""
    from tqdm.auto import tqdm

    return tqdm(items, desc="drawing", unit="panel", disable=not progress)


class _Layout:
    """Panels placed at fixed sizes in inches, the figure cut to fit them: a band for the
    figure's title, per row a band for the panel titles (above the bearing labels), the
    panels at the projection's aspect (so cartopy shrinks none of them and leaves no blank),
    room for the bearing labels, and a band at the bottom for a colour bar and a legend.

    matplotlib's constrained layout does not settle with cartopy's fixed-aspect panels and
    their bearing labels drawn outside the map (the figure title lands on the panel titles
    or a blank band opens), so the arithmetic is done here."""

    def __init__(self, fig, nrows: int, ncols: int, projection: str, *, aspect: float = 1.0,
                 panel_w: float | None = None, bottom: float = 0.9, below: float | None = None):
        import matplotlib.pyplot as plt

        az = projection == "azimuthal"
        self.pw = panel_w or (4.2 if az else 6.2)
        self.ph = self.pw * aspect
        self.side, self.gap = (0.34, 0.55) if az else (0.12, 0.25)
        self.top, self.title = 0.34, (0.42 if az else 0.3)
        self.below = (0.28 if az else 0.08) if below is None else below
        self.bottom = bottom
        self.nrows, self.ncols = nrows, ncols
        self.w = ncols * self.pw + (ncols - 1) * self.gap + 2 * self.side
        row = self.title + self.ph + self.below
        self.h = self.top + nrows * row + bottom
        if fig is None:
            fig = plt.figure(figsize=(self.w, self.h))
        else:
            fig.set_size_inches(self.w, self.h)
        self.fig = fig

    def rect(self, i: int) -> list[float]:
        """[left, bottom, width, height] of panel ``i`` (row by row) in figure fractions."""
        r, c = divmod(i, self.ncols)
        x = self.side + c * (self.pw + self.gap)
        y = self.h - self.top - r * (self.title + self.ph + self.below) - self.title - self.ph
        return [x / self.w, y / self.h, self.pw / self.w, self.ph / self.h]

    def add(self, i: int, crs):
        return self.fig.add_axes(self.rect(i), projection=crs)

    def suptitle(self, text: str):
        return self.fig.suptitle(text, fontsize=11, y=1 - 0.06 / self.h, va="top")

    def colorbar(self, mappable, label: str):
        """A horizontal colour bar in the bottom band, half the figure wide."""
        cw = min(7.0, 0.6 * self.w)
        y = self.bottom - 0.3
        cax = self.fig.add_axes([(self.w - cw) / 2 / self.w, y / self.h, cw / self.w,
                                 0.13 / self.h])
        cb = self.fig.colorbar(mappable, cax=cax, orientation="horizontal", extend="both")
        cb.set_label(label, fontsize=9)
        cb.ax.tick_params(labelsize=8)
        return cb

    def legend(self, handles, ncol: int):
        return self.fig.legend(handles=handles, loc="lower center", ncol=ncol, fontsize=8,
                               frameon=False, bbox_to_anchor=(0.5, 0.0))


def _views(extent_km, near_km):
    """The panels of one row: the whole map and, when it helps, a zoomed one."""
    views = [("whole", extent_km)]
    if near_km:
        views.append(("near", float(near_km)))
    return views


def _distances_from(home, lat, lon) -> np.ndarray:
    """Geodesic distance [km] from home to each point (NaN where the point is unknown)."""
    from spotkit.geo.geodesic import geodesic_inverse

    lat = np.asarray(lat, dtype=float)
    lon = np.asarray(lon, dtype=float)
    out = np.full(lat.shape, np.nan)
    ok = np.isfinite(lat) & np.isfinite(lon)
    if ok.any():
        h_lat, h_lon = home_latlon(home)
        d = geodesic_inverse(np.full(ok.sum(), h_lat), np.full(ok.sum(), h_lon), lat[ok],
                             lon[ok])[0]
        out[ok] = np.asarray(d, dtype=float) / 1e3
    return out


def _resolve_near(radius_km, distances_km, weights, extent_km):
    """The zoomed panel's radius: ``radius_km`` as given (0 or a radius beyond the whole map:
    none), else :func:`near_radius_km`."""
    if radius_km is not None:
        r = float(radius_km)
        return r if 0 < r < float(extent_km or FULL_EXTENT_KM) else None
    return near_radius_km(distances_km, weights, whole_km=extent_km or FULL_EXTENT_KM)


def _marker_size(fig, ax_radius_km: float, ncols: int, cell_km: float = 120.0,
                 lo: float = 2.5, hi: float = 11.0) -> float:
    """Marker area [pt^2] of about ``cell_km`` (a locator square) at the panel's scale,
    kept between ``lo`` and ``hi`` points across."""
    width_pt = fig.get_figwidth() * 72.0 / max(ncols, 1)
    d = cell_km / (2.0 * ax_radius_km) * width_pt
    return float(np.clip(d, lo, hi) ** 2)


#: Space between a panel and its title [pt]: room for the bearing labels of an azimuthal map.
_TITLE_PAD = {"azimuthal": 13.0, "world": 4.0}


def _world_window(crs, lat, home=None, margin_deg: float = 8.0):
    """The latitude band [deg] a world map needs for ``lat`` (and home), with a margin, and
    its height over width in ``crs`` (Equal Earth: y depends on latitude only)."""
    lat = np.asarray(lat, dtype=float)
    lat = lat[np.isfinite(lat)]
    if home is not None:
        lat = np.append(lat, home_latlon(home)[0])
    lo, hi = (-90.0, 90.0) if not lat.size else (
        max(-90.0, float(lat.min()) - margin_deg), min(90.0, float(lat.max()) + margin_deg))
    lon0 = crs.proj4_params.get("lon_0", 0.0)
    _, y = project_points(crs, [lo, hi], [lon0, lon0])
    x0, x1 = crs.x_limits
    return (lo, hi), float((y[1] - y[0]) / (x1 - x0))


def _crop_world(ax, window):
    """Show only the latitude band ``window`` [deg] of a world map: less empty sea and ice."""
    crs = ax.projection
    lon0 = crs.proj4_params.get("lon_0", 0.0)
    _, y = project_points(crs, list(window), [lon0, lon0])
    x0, x1 = crs.x_limits
    ax.set_extent([x0, x1, float(y[0]), float(y[1])], crs=crs)


def _view_title(view: str, radius_km: float) -> str:
    return "whole map" if view == "whole" else f"within {radius_km:,.0f} km"


def _home_name(home) -> str:
    return home if isinstance(home, str) else "home"


# --- coverage ----------------------------------------------------------------------------
def coverage_map(spots: pd.DataFrame, *, bands=None, home=None, side: Side = "auto",
                 projection: Projection = "azimuthal", paths: bool = False,
                 extent_km: float | None = None, ring_step_km: float | None = None,
                 radius_km: float | None = None, antennas: dict | None = None,
                 labels=None, resolution: Resolution = "110m", cmap: str = "viridis",
                 ncols: int | None = None, fig=None, progress: bool = False):
    """Coverage by band: far stations coloured by SNR per watt, one row of panels per band.

    Each far station (receiver, or transmitter on the receive side) is one marker per band at
    its locator cell centre, coloured by its median SNR normalised to 1 W, sized to about a
    locator square at the panel's scale; all panels share one colour scale. On an azimuthal
    map a second panel per band zooms to the distance that holds most spots
    (:func:`~spotkit.viz.mapdata.near_radius_km`; ``radius_km`` chooses it, 0 turns it off).
    With ``antennas`` each antenna gets its own panels, side by side on the same scale;
    without, a table holding spots of more than one home call says so in the title (the
    spots are pooled).

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table of one home station (see :func:`far_station_summary`).
    bands : str or list of str, optional
        Bands to draw (default every band present), in band-plan order.
    home : str or (float, float), optional
        Map centre; default the most common locator at the home end.
    side : {"auto", "transmit", "receive"}
    projection : {"azimuthal", "world"}
    paths : bool
        Draw the geodesic path from home to every far station.
    extent_km, ring_step_km : float, optional
        Azimuthal map radius and ring step [km]; default: just beyond the farthest station.
    radius_km : float, optional
        Radius of the zoomed panel [km] (azimuthal only); default chosen from the spots,
        0 for none.
    antennas : dict, optional
        ``{"A": spots of A, "B": spots of B}`` (or one of them), e.g. from
        :func:`~spotkit.viz.mapdata.antenna_spots`; ``spots`` then only sets the home.
    labels : (str, str), optional
        Names of A and B for the titles (default "A" and "B").
    resolution : {"110m", "50m", "10m"}
    cmap : str
        A perceptually uniform matplotlib colour map.
    ncols : int, optional
        Panels per row when there is neither a zoomed panel nor antennas (default up to 3).
    fig : matplotlib.figure.Figure, optional
    progress : bool
        Show a progress bar over the panels.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.colors import Normalize

    check_choice(projection, PROJECTIONS, "projection")
    check_columns(spots, [C.TX_LOCATOR, C.RX_LOCATOR], "a coverage map")
    if spots.empty:
        raise InputError("no spots to map: the spot table has no rows")
    if home is None:
        home = home_from_spots(spots, side)
    side_name = resolve_side(spots, side)
    labels = tuple(labels) if labels else ("A", "B")
    if antennas:
        sets = [(labels[0 if k == "A" else 1], s) for k, s in antennas.items()]
    else:
        sets = [(None, spots)]
    fars = []
    for name, s in sets:
        if s.empty:
            raise InputError(f"no spots of {name} to map")
        fars.append((name, far_station_summary(s, side_name)))
    every = pd.concat([f for _, f in fars], ignore_index=True)
    chosen = _select_bands(every, bands)
    if not chosen:
        raise UsageError("no spots to map")
    every = every[every[C.BAND].isin(chosen)]
    v = every[C.SNR_PER_W].to_numpy()
    lo, hi = np.nanpercentile(v, [2, 98]) if v.size else (0.0, 1.0)
    norm = Normalize(vmin=np.floor(lo), vmax=max(np.ceil(hi), np.floor(lo) + 1))
    near = None
    if projection == "azimuthal":
        if extent_km is None:
            extent_km = auto_extent_km(every[C.DISTANCE], ring_step_km)
        sel = spots[spots[C.BAND].astype(str).isin(chosen)] if C.BAND in spots else spots
        d = sel[C.DISTANCE] if C.DISTANCE in sel else every[C.DISTANCE]
        near = _resolve_near(radius_km, d, None, extent_km)
    views = _views(extent_km, near)
    cols = [(name, far, view, r) for view, r in views for name, far in fars]
    if len(cols) == 1:  # one panel per band: bands in a grid
        nrows, ncols = _panel_grid(len(chosen), ncols)
        cells = [(band, cols[0]) for band in chosen]
    else:
        nrows, ncols = len(chosen), len(cols)
        cells = [(band, c) for band in chosen for c in cols]
    crs = make_projection(projection, home)
    aspect = 1.0
    if projection == "world":
        window, aspect = _world_window(crs, every[C.FAR_LAT], home)
    lay = _Layout(fig, nrows, ncols, projection, aspect=aspect, bottom=0.8)
    fig = lay.fig
    who = "receivers" if side_name == "transmit" else "transmitters"
    sc = None
    for i, (band, (name, far, view, r)) in enumerate(_panels(cells, progress)):
        ax = lay.add(i, crs)
        base_map(ax, projection=projection, home=home, extent_km=r,
                 ring_step_km=ring_step_km if view == "whole" else None,
                 resolution=resolution)
        if projection == "world":
            _crop_world(ax, window)
        sub = far[far[C.BAND] == band].sort_values(C.SNR_PER_W, na_position="first")
        if view == "near":
            sub_in = sub[sub[C.DISTANCE] <= r]
        else:
            sub_in = sub
        if paths:
            draw_paths(ax, home, sub_in[C.FAR_LAT], sub_in[C.FAR_LON])
        x, y = project_points(crs, sub_in[C.FAR_LAT], sub_in[C.FAR_LON])
        size = _marker_size(fig, r or FULL_EXTENT_KM if projection == "azimuthal"
                            else FULL_EXTENT_KM, ncols)
        sc = ax.scatter(x, y, c=sub_in[C.SNR_PER_W], cmap=cmap, norm=norm, s=size,
                        edgecolors="#202020" if size > 12 else "none", linewidths=0.3,
                        transform=crs, zorder=5, gid="stations")
        head = f"{band}" if name is None else f"{name}, {band}"
        count = (f"{len(sub):,} {who}" if view == "whole"
                 else f"{len(sub_in):,} of {len(sub):,} {who}")
        ax.set_title(f"{head}: {count}, {_view_title(view, r or 0)}", fontsize=9,
                     pad=_TITLE_PAD[projection])
    if sc is not None:
        lay.colorbar(sc, "median SNR per watt [dB in 2500 Hz], one scale for every panel: "
                     f"{norm.vmin:.0f} to {norm.vmax:.0f} dB")
    title = f"Coverage from {_home_name(home)}"
    if antennas and len(fars) > 1:
        title += f": {' and '.join(n for n, _ in fars)} side by side, one scale"
    elif antennas:
        title = f"Coverage of {fars[0][0]} from {_home_name(home)}"
    else:
        col = C.TX_CALL if side_name == "transmit" else C.RX_CALL
        calls = sorted(spots[col].astype(str).unique()) if col in spots else []
        if len(calls) > 1:
            shown = ", ".join(calls[:4]) + (", ..." if len(calls) > 4 else "")
            title += f" (spots of {len(calls)} home calls pooled: {shown})"
    lay.suptitle(title)
    return fig


# --- A/B difference ----------------------------------------------------------------------
def _cell_polygons(crs, lat, lon, dlat, dlon, n_edge: int = 6):
    """Projected outlines (k, 4 n_edge, 2) of lat/lon rectangles, edges densified."""
    t = np.linspace(-0.5, 0.5, n_edge, endpoint=False)
    fx = np.concatenate([t, np.full(n_edge, 0.5), -t, np.full(n_edge, -0.5)])
    fy = np.concatenate([np.full(n_edge, -0.5), t, np.full(n_edge, 0.5), -t])
    la = lat[:, None] + dlat[:, None] * fy[None, :]
    lo = lon[:, None] + dlon[:, None] * fx[None, :]
    x, y = project_points(crs, np.clip(la, -89.999, 89.999), lo)
    return np.stack([x, y], axis=-1)


#: How a group whose interval excludes 0 dB ("solid") and one whose does not ("faint") are
#: drawn: told apart in greyscale by the black outline and by the hatching.
CELL_STYLE = {
    "solid": dict(alpha=1.0, hatch=None, edgecolors="#111111", linewidths=0.9),
    "faint": dict(alpha=0.55, hatch="////", edgecolors="#3a3a3a", linewidths=0.0),
}


def _draw_cells(ax, crs, part, level, norm, cmap, name, size, true_cells: bool):
    """One collection of cells (``gid="cells-<name>"``): true cells as polygons, or markers
    of ``size`` [pt^2] for receivers and for cells too small to see at the panel's scale."""
    from matplotlib.collections import PolyCollection

    v = part[C.B_MINUS_A].to_numpy(dtype=float)
    style = dict(CELL_STYLE[name])
    if level == "receiver" or not true_cells:
        style["linewidths"] = 0.6 if name == "solid" else 0.0
        x, y = project_points(crs, part[C.FAR_LAT], part[C.FAR_LON])
        return ax.scatter(x, y, c=v, cmap=cmap, norm=norm, s=size,
                          marker="o" if level == "receiver" else "s",
                          transform=crs, zorder=5 + (name == "solid"), gid=f"cells-{name}",
                          **style)
    polys = _cell_polygons(crs, part[C.FAR_LAT].to_numpy(dtype=float),
                           part[C.FAR_LON].to_numpy(dtype=float),
                           part["cell_dlat"].to_numpy(dtype=float),
                           part["cell_dlon"].to_numpy(dtype=float))
    pc = PolyCollection(polys, array=v, cmap=cmap, norm=norm, zorder=4 + (name == "solid"),
                        gid=f"cells-{name}", **style)
    ax.add_collection(pc, autolim=False)
    return pc


def difference_map(result, *, level: Level = "auto", band=None, pairs=None, home=None,
                   projection: Projection = "azimuthal", extent_km: float | None = None,
                   ring_step_km: float | None = None, radius_km: float | None = None,
                   vmax: float | None = None, cmap: str = "RdBu", labels=None,
                   resolution: Resolution = "110m", ncols: int | None = None, fig=None,
                   progress: bool = False):
    """Map of the B-minus-A estimate per receiver or per locator square / field.

    Colours run on one diverging scale for the whole figure, centred on 0 dB with symmetric
    limits stated under the colour bar (blue: B better, red: A better with the default
    ``"RdBu"``). Receivers are dots sized to about a locator square at the panel's scale;
    locator squares and fields are drawn as their true cells (2 x 1 deg, 20 x 10 deg) in
    the projection. Groups whose confidence interval excludes 0 dB and whose numbers carry a
    verdict are drawn solid with a black outline (cells of fewer than 5 receivers get their
    interval from 6-hour blocks within each receiver, see :func:`difference_cells`); the rest
    (CI includes 0, no CI, or too few clusters) pale, hatched and without outline, so the two
    differ in greyscale too; groups with too few pairs for an estimate are grey rings. Far
    stations heard by only one antenna (no difference, only a bound) are marked apart: a
    downward triangle for "only A heard", an upward triangle for "only B heard". One row of
    panels per band when the result is split by band (unless ``band`` picks one); on an
    azimuthal map each row has a second panel zoomed to the distance that holds most pairs
    (``radius_km`` chooses it, 0 turns it off; by field there is none unless asked for, a
    field being about as large as the zoom).

    Parameters
    ----------
    result : ComparisonResult or pandas.DataFrame
        See :func:`difference_cells`.
    level : {"auto", "receiver", "square", "field"}
    band : str, optional
        Draw only this band.
    pairs : pandas.DataFrame, optional
        Pairs table (receiver positions, home); default ``result.pairs``.
    home : str or (float, float), optional
        Map centre; default the station under test in ``pairs``.
    projection : {"azimuthal", "world"}
    extent_km, ring_step_km : float, optional
    radius_km : float, optional
        Radius of the zoomed panel [km]; default :func:`~spotkit.viz.mapdata.near_radius_km`
        of the pairs' distances, 0 for none.
    vmax : float, optional
        Colour half-range [dB]; default :func:`symmetric_limit` of the estimates.
    cmap : str
        A diverging matplotlib colour map ("RdBu", "PuOr", ...).
    labels : (str, str), optional
        Names of A and B for the title and legend (default the calls of ``result``, else
        "A" and "B").
    resolution : {"110m", "50m", "10m"}
    ncols : int, optional
        Panels per row when there is no zoomed panel.
    fig : matplotlib.figure.Figure, optional
    progress : bool
        Show a progress bar over the panels.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.pyplot as plt
    from matplotlib.colors import Normalize
    from matplotlib.patches import Patch

    check_choice(projection, PROJECTIONS, "projection")
    cells = difference_cells(result, level=level, pairs=pairs)
    level = cells.attrs["level"]
    _, pairs = _groups_and_pairs(result, pairs)
    if home is None:
        if pairs is None:
            raise UsageError("no home station given and no pairs table to find it in")
        home = home_from_pairs(pairs)
    la, lb = (tuple(labels) if labels else
              (getattr(result, "a", None) or "A", getattr(result, "b", None) or "B"))
    if C.BAND in cells.columns:
        chosen = _select_bands(cells, band)
        cells = cells[cells[C.BAND].astype(str).isin(chosen)]
    else:
        chosen = [None]
    est = cells[C.B_MINUS_A].to_numpy(dtype=float)
    lim = float(vmax) if vmax else symmetric_limit(est)
    norm = Normalize(vmin=-lim, vmax=lim)
    cmap_obj = plt.get_cmap(cmap)
    crs = make_projection(projection, home)
    near = None
    if projection == "azimuthal" and level == "field" and radius_km is None:
        radius_km = 0  # a field (20 x 10 deg) is as large as the zoom: no zoomed panel
    if projection == "azimuthal":
        d_cells = _distances_from(home, cells[C.FAR_LAT], cells[C.FAR_LON])
        if extent_km is None:
            extent_km = auto_extent_km(d_cells, ring_step_km)
        if pairs is not None and C.DISTANCE in pairs.columns:
            sel = pairs
            if chosen != [None] and C.BAND in pairs.columns:
                sel = pairs[pairs[C.BAND].astype(str).isin(chosen)]
            near = _resolve_near(radius_km, sel[C.DISTANCE], None, extent_km)
        else:
            n = sum(cells[c].to_numpy(dtype=float) for c in (C.BOTH, C.ONLY_A, C.ONLY_B)
                    if c in cells.columns)
            near = _resolve_near(radius_km, d_cells, n if np.ndim(n) else None, extent_km)
    views = _views(extent_km, near)
    panels = [(bnd, view, r) for bnd in chosen for view, r in views]
    if len(views) > 1:
        nrows, ncols = len(chosen), len(views)
    else:
        nrows, ncols = _panel_grid(len(chosen), ncols)
    aspect = 1.0
    if projection == "world":
        window, aspect = _world_window(crs, cells[C.FAR_LAT], home)
    legend_rows = 1 if ncols > 1 else 3
    lay = _Layout(fig, nrows, ncols, projection, aspect=aspect,
                  bottom=0.82 + 0.2 * legend_rows)
    fig = lay.fig
    what = {"receiver": "receivers", "square": "squares", "field": "fields"}[level]
    for i, (bnd, view, r) in enumerate(_panels(panels, progress)):
        ax = lay.add(i, crs)
        base_map(ax, projection=projection, home=home, extent_km=r,
                 ring_step_km=ring_step_km if view == "whole" else None,
                 resolution=resolution)
        if projection == "world":
            _crop_world(ax, window)
        sub = cells if bnd is None else cells[cells[C.BAND].astype(str) == bnd]
        sub = sub[np.isfinite(sub[C.FAR_LAT].to_numpy(dtype=float))]
        one = sub["one_sided"].to_numpy()
        val = sub[C.B_MINUS_A].to_numpy(dtype=float)
        drawable = (one == "") & np.isfinite(val)
        sig = sub["significant"].to_numpy(dtype=bool)
        radius = r if (projection == "azimuthal" and r) else FULL_EXTENT_KM
        size = _marker_size(fig, radius, ncols, cell_km=150.0, lo=4.5, hi=12.0)
        # a square (about 150 km) under 5 points across is drawn as a marker of 4.5 points
        true_cells = level == "field" or _marker_size(fig, radius, ncols, 150.0, 0, 99) > 25
        for name, mask in (("faint", drawable & ~sig), ("solid", drawable & sig)):
            _draw_cells(ax, crs, sub[mask], level, norm, cmap_obj, name, size, true_cells)
        none = sub[(one == "") & ~np.isfinite(val)]  # too few pairs: outline only
        x, y = project_points(crs, none[C.FAR_LAT], none[C.FAR_LON])
        ax.scatter(x, y, marker="o", s=size * 0.6, facecolors="none", edgecolors="#8a8a8a",
                   linewidths=0.5, transform=crs, zorder=4.5, gid="no-estimate")
        for kind, marker in (("only_a", "v"), ("only_b", "^")):
            part = sub[one == kind]
            x, y = project_points(crs, part[C.FAR_LAT], part[C.FAR_LON])
            ax.scatter(x, y, marker=marker, s=max(size, 20.0), facecolors="white",
                       edgecolors="black", linewidths=0.8, transform=crs, zorder=6,
                       gid=kind.replace("_", "-"))
        if view == "near":
            d = _distances_from(home, sub[C.FAR_LAT], sub[C.FAR_LON])
            inside = d <= r
            drawable, sig = drawable & inside, sig & inside
        n_sig = int((drawable & sig).sum())
        n_ci = int((drawable & np.isfinite(sub[C.CI_LOW].to_numpy(dtype=float))).sum())
        head = f"{bnd}, " if bnd is not None else ""
        ci_txt = (f"{n_sig} with CI excluding 0" if n_ci or not drawable.any()
                  else "no CIs (one cluster per group)")
        ax.set_title(f"{head}{_view_title(view, r or 0)}: {int(drawable.sum())} {what}, "
                     f"{ci_txt}", fontsize=9, pad=_TITLE_PAD[projection])
    mappable = plt.cm.ScalarMappable(norm=norm, cmap=cmap_obj)
    lay.colorbar(mappable, f"{lb} minus {la} [dB], one scale for every panel: -{lim:g} to "
                 f"+{lim:g} dB (blue: {lb} better, red: {la} better)")
    handles = [
        Patch(facecolor=cmap_obj(0.85), label="CI excludes 0 dB (outlined)", **{
            k: v for k, v in CELL_STYLE["solid"].items() if k in ("alpha", "hatch")},
            edgecolor="#111111", linewidth=0.9),
        Patch(facecolor=cmap_obj(0.85), alpha=0.55, hatch="////", edgecolor="#3a3a3a",
              linewidth=0.0, label="CI includes 0 dB or no CI (hatched)"),
        plt.Line2D([], [], marker="v", ls="", mfc="white", mec="black",
                   label=f"heard by {la} only"),
        plt.Line2D([], [], marker="^", ls="", mfc="white", mec="black",
                   label=f"heard by {lb} only"),
        plt.Line2D([], [], marker="o", ls="", mfc="none", mec="#8a8a8a", label="too few pairs"),
    ]
    lay.legend(handles, ncol=5 if ncols > 1 else 2)
    lay.suptitle(f"{lb} minus {la} around {_home_name(home)}, by {level}")
    return fig


# --- reach -------------------------------------------------------------------------------
#: reach classes: label, colour position in viridis, marker
_REACH_STYLE = {"both": ("heard by both", None, "o"),
                "only_a": ("{a} only", 0.08, "v"),
                "only_b": ("{b} only", 0.62, "^")}


def reach_map(pairs: pd.DataFrame, *, band=None, layout: ReachLayout = "side", home=None,
              projection: Projection = "azimuthal", extent_km: float | None = None,
              ring_step_km: float | None = None, labels=None,
              resolution: Resolution = "110m", fig=None, progress: bool = False):
    """What A and what B reached: far stations heard by each antenna, with distance rings.

    ``layout="side"``: two panels, A's far stations on the left and B's on the right, each
    marking the stations only that antenna reached; ``"overlay"``: one panel with three
    classes (both, A only, B only). A station heard on two bands is two markers; titles and
    legends count the same things (station-bands, and distinct stations beside them when
    there is more than one band), so the legend's counts add up to the title's. The legend
    sits under its panel, off the map.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (or ``ComparisonResult.pairs``).
    band : str or list of str, optional
        Restrict to these bands (a station counts once per band).
    layout : {"side", "overlay"}
    labels : (str, str), optional
        Names of A and B (default "A" and "B").
    home, projection, extent_km, ring_step_km, resolution, fig, progress
        As in :func:`coverage_map`.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.pyplot as plt

    check_choice(layout, REACH_LAYOUTS, "layout")
    check_choice(projection, PROJECTIONS, "projection")
    pairs = getattr(pairs, "pairs", pairs)
    la, lb = tuple(labels) if labels else ("A", "B")
    st = reach_stations(pairs, band)
    if not len(st):
        raise UsageError("no far stations to map")
    if home is None:
        home = home_from_pairs(pairs)
    if extent_km is None and projection == "azimuthal":
        extent_km = auto_extent_km(st[C.DISTANCE], ring_step_km)
    crs = make_projection(projection, home)
    cls = np.where(st[C.HEARD_A] & st[C.HEARD_B], "both",
                   np.where(st[C.HEARD_A], "only_a", "only_b"))
    cmap = plt.get_cmap("viridis")
    panels = [(la, "A", ("both", "only_a")), (lb, "B", ("both", "only_b"))] \
        if layout == "side" else [(None, None, ("both", "only_a", "only_b"))]
    aspect = 1.0
    if projection == "world":
        window, aspect = _world_window(crs, st[C.FAR_LAT], home)
    lay = _Layout(fig, 1, len(panels), projection, aspect=aspect, bottom=0.05,
                  below=0.85 if projection == "azimuthal" else 0.6)
    fig = lay.fig
    several = st[C.BAND].nunique() > 1
    unit = "station-bands" if several else "far stations"
    bands_txt = "" if band is None else f" ({band if isinstance(band, str) else ', '.join(band)})"
    for i, (name, who, classes) in enumerate(_panels(panels, progress)):
        ax = lay.add(i, crs)
        base_map(ax, projection=projection, home=home, extent_km=extent_km,
                 ring_step_km=ring_step_km, resolution=resolution)
        if projection == "world":
            _crop_world(ax, window)
        for c in classes:
            label, pos, marker = _REACH_STYLE[c]
            part = st[cls == c]
            x, y = project_points(crs, part[C.FAR_LAT], part[C.FAR_LON])
            color = "#9a9a9a" if pos is None else cmap(pos)
            ax.scatter(x, y, s=16 if c == "both" else 28, marker=marker, color=color,
                       edgecolors="#202020", linewidths=0.3, transform=crs,
                       zorder=5 if c == "both" else 6,
                       gid={"both": "heard-both", "only_a": "only-a", "only_b": "only-b"}[c]
                       + ("" if who is None else f"-{who.lower()}"),
                       label=f"{label.format(a=la, b=lb)}: {len(part):,}")
        heard = (np.isin(cls, classes) if who is None
                 else (st[C.HEARD_A] if who == "A" else st[C.HEARD_B]).to_numpy())
        n_sb = int(heard.sum())
        n_far = st.loc[heard, C.FAR_CALL].nunique()
        far = st.loc[heard, C.DISTANCE].max() if heard.any() else float("nan")
        count = f"{n_sb:,} {unit}" + (f" ({n_far:,} stations)" if several else "")
        head = f"{la} and {lb}" if who is None else name
        ax.set_title(f"{head}{bands_txt}: {count}, farthest {far:,.0f} km", fontsize=9,
                     pad=_TITLE_PAD[projection])
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.075), ncol=len(classes),
                  fontsize=7, frameon=False, title=unit, title_fontsize=7)
    lay.suptitle(f"Reach of {la} and {lb} around {_home_name(home)}")
    return fig


__all__ = [
    "PROJECTIONS", "RESOLUTIONS", "REACH_LAYOUTS", "make_projection", "project_points",
    "draw_land", "draw_rings", "draw_geodesic_rings", "base_map", "draw_paths",
    "coverage_map", "difference_map", "reach_map",
]
