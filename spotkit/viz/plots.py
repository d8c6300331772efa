"""Comparison and coverage plots (matplotlib, imported lazily).

B-minus-A by bearing (polar), by distance, by elevation angle and by hour of day, each with
its confidence interval from :func:`spotkit.compare.estimate.compare_antennas`; the probability of
being heard against distance for A and B (Wilson score intervals); SNR against distance with
a running median; spots per hour by band.

These functions draw what the analysis modules computed; the only statistics done here are
simple summaries for display (binned medians, counts, the Wilson interval of a binomial
proportion). Known limits: the running median is a binned median (bins of
``bin_km``), so it is a step function with the resolution of the bins; P(heard) is taken
among pairs (slots in which at least one antenna reached that far station), as in
:mod:`spotkit.compare.pairing`, not among all slots.

Every function takes ``ax=None`` and returns the Axes it drew on. Bands are coloured from
the perceptually uniform "plasma" colour map in band-plan order (:func:`band_colors`), so a
band keeps its colour in every plot.

References
----------
E. B. Wilson, "Probable inference, the law of succession, and statistical inference",
J. Am. Stat. Assoc. 22:209-212 (1927), doi:10.1080/01621459.1927.10502953.
"""
from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_columns
from spotkit.bands import BAND_ORDER, sort_bands
from spotkit.errors import InputError, UsageError
from spotkit.units import snr_per_watt

PlotKind = Literal["bearing", "distance", "elevation", "hour", "grid", "heard",
                   "snr-distance", "spots-per-hour"]
PLOT_KINDS = ("bearing", "distance", "elevation", "hour", "grid", "heard", "snr-distance",
              "spots-per-hour", "elevation-curve", "bearing-curve", "bearing-rings",
              "pattern-check")
#: colour map the band palette is sampled from, and the part of it used
BAND_CMAP = "plasma"
_BAND_SPAN = (0.0, 0.88)
COLOR_A = "#3b528b"  # viridis(0.3)
COLOR_B = "#5ec962"  # viridis(0.75)


def band_colors(bands=None) -> dict:
    """Colour of each band: ``plasma`` sampled evenly along :data:`spotkit.bands.BAND_ORDER`.

    Parameters
    ----------
    bands : iterable of str, optional
        Default every band of the band plan. Unknown names get grey.

    Returns
    -------
    dict
        band name -> RGBA tuple.
    """
    import matplotlib

    cmap = matplotlib.colormaps[BAND_CMAP]
    pos = np.linspace(*_BAND_SPAN, len(BAND_ORDER))
    table = {b: cmap(p) for b, p in zip(BAND_ORDER, pos, strict=True)}
    names = BAND_ORDER if bands is None else list(bands)
    return {b: table.get(b, (0.5, 0.5, 0.5, 1.0)) for b in names}


def _new_ax(ax, *, polar=False, figsize=(6.4, 4.2)):
    if ax is not None:
        return ax
    import matplotlib.pyplot as plt

    fig = plt.figure(figsize=figsize)
    return fig.add_subplot(1, 1, 1, projection="polar" if polar else None)


def _names(result) -> tuple[str, str]:
    """Names of A and B for titles and legends: the result's labels (the calls unless the
    user named the antennas), ``("A", "B")`` for a bare table."""
    return tuple(getattr(result, "labels", ("A", "B")))


def _diff_words(result) -> str:
    """``"dipole minus vertical"``: what B minus A is, in the antennas' names."""
    la, lb = _names(result)
    return f"{lb} minus {la}"


def _hour_words(result) -> str:
    """How the hour of a comparison is counted, for the axis label."""
    basis = getattr(result, "options", {}).get("hour", "utc")
    return "UTC" if basis == "utc" else "local solar time at the path midpoint"


def _groups(result) -> pd.DataFrame:
    g = getattr(result, "groups", result)
    if not isinstance(g, pd.DataFrame):
        raise UsageError("expected a ComparisonResult or its groups DataFrame")
    return g


def _by_band(df: pd.DataFrame, band):
    if C.BAND not in df.columns:
        return [(None, df)]
    present = sort_bands(df[C.BAND].astype(str).unique())
    wanted = present if band is None else ([band] if isinstance(band, str) else list(band))
    missing = [b for b in wanted if b not in present]
    if missing:
        raise UsageError(f"band(s) {', '.join(missing)} not in the data; present: "
                         f"{', '.join(present) or 'none'}")
    return [(b, df[df[C.BAND].astype(str) == b]) for b in sort_bands(wanted)]


def _spots_to_draw(spots: pd.DataFrame, cols, what: str) -> None:
    """A spot table with the columns ``what`` draws, and at least one row; an
    :class:`~spotkit.errors.InputError` otherwise (a bad table, not a bad argument)."""
    if not isinstance(spots, pd.DataFrame):
        raise UsageError(f"{what} takes a spot table (a pandas DataFrame)")
    check_columns(spots, cols, what)
    if spots.empty:
        raise InputError(f"no spots to draw: the table for {what} has no rows")


def _need(df: pd.DataFrame, cols, key: str):
    missing = [c for c in cols if c not in df.columns]
    if missing:
        raise UsageError(f"the comparison has no {key!r} groups (missing {', '.join(missing)}); "
                         f"run compare with by including {key!r}")


def _interval_plot(result, lo_col, hi_col, key, xlabel, *, band=None, ax=None,
                   mid=None, offset_frac=0.06, xpos=None):
    g = _groups(result)
    _need(g, [lo_col] + ([hi_col] if hi_col else []), key)
    ax = _new_ax(ax)
    colors = band_colors()
    parts = _by_band(g, band)
    for i, (b, sub) in enumerate(parts):
        sub = sub.sort_values(lo_col)
        lo = sub[lo_col].to_numpy(dtype=float)
        hi = sub[hi_col].to_numpy(dtype=float) if hi_col else lo + 1.0
        x = (lo + hi) / 2.0 if mid is None else mid(lo, hi)
        if xpos is not None:  # e.g. the median distance of the bin's pairs
            x = np.where(np.isfinite(xpos(b, lo, hi)), xpos(b, lo, hi), x)
        width = np.nanmin(hi - lo) if len(lo) else 1.0
        x = x + (i - (len(parts) - 1) / 2) * offset_frac * width
        est = sub[C.B_MINUS_A].to_numpy(dtype=float)
        yerr = np.clip(np.vstack([est - sub[C.CI_LOW].to_numpy(dtype=float),
                                  sub[C.CI_HIGH].to_numpy(dtype=float) - est]), 0.0, None)
        ax.errorbar(x, est, yerr=yerr, fmt="o", ms=5, capsize=3, lw=1.2,
                    color=colors.get(b, "#333333") if b else "#333333",
                    label=b if b else "B - A", gid=f"estimate-{b or 'all'}")
        empty = ~np.isfinite(est)
        if C.PAIRS in sub and empty.any():  # at the foot of the axes, clear of the bars
            ax.plot(x[empty], np.zeros(int(empty.sum())), ls="none", marker="",
                    gid="no-estimate-place")  # keeps them inside the x range
            foot = ax.get_xaxis_transform()
            for xi, n in zip(x[empty], sub[C.PAIRS].to_numpy()[empty], strict=True):
                ax.annotate(f"{int(n)} pairs:\nno estimate", (xi, 0.02 + 0.09 * i),
                            xycoords=foot, fontsize=6, ha="center", va="bottom",
                            color="#777777", gid="no-estimate")
    ax.axhline(0.0, color="#444444", lw=0.8, zorder=0)
    ax.set_xlabel(xlabel)
    ax.set_ylabel(f"{_diff_words(result)} [dB]  (95 % CI)")
    ax.grid(alpha=0.3)
    if len(parts) > 1 or parts[0][0]:
        ax.legend(fontsize=8, title="band", title_fontsize=8)
    return ax


def distance_plot(result, *, band=None, ax=None):
    """B minus A with its CI per distance bin (x at the bin middle [km]).

    Parameters
    ----------
    result : ComparisonResult or pandas.DataFrame
        From ``compare_antennas(..., by=("band", "distance"))`` (band optional).
    band : str or list of str, optional
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes
    """
    pairs = getattr(result, "pairs", None)
    xpos = None
    if isinstance(pairs, pd.DataFrame) and C.DISTANCE in pairs and len(pairs):
        d_all = pairs[C.DISTANCE].to_numpy(dtype=float)
        bands_all = pairs[C.BAND].astype(str).to_numpy() if C.BAND in pairs else None

        def xpos(b, lo, hi):  # the median distance of the bin's pairs, not its middle
            d = d_all if b is None or bands_all is None else d_all[bands_all == b]
            idx = np.searchsorted(hi, d, side="right")
            ok = (idx < len(hi)) & (d >= lo[np.minimum(idx, len(lo) - 1)])
            med = pd.Series(d[ok]).groupby(idx[ok]).median()
            return med.reindex(range(len(lo))).to_numpy(dtype=float)
    ax = _interval_plot(result, C.DISTANCE_MIN, C.DISTANCE_MAX, "distance",
                        "distance [km]  (points at the median distance of their pairs)",
                        band=band, ax=ax, xpos=xpos)
    ax.set_title(f"{_diff_words(result)} by distance")
    return ax


def elevation_plot(result, *, band=None, ax=None):
    """B minus A with its CI per estimated elevation-angle bin [deg] (mirror-reflection hop
    geometry, see :func:`spotkit.geo.geodesic.elevation_angle`)."""
    ax = _interval_plot(result, C.ELEVATION_MIN, C.ELEVATION_MAX, "elevation",
                        "estimated elevation angle [deg]", band=band, ax=ax)
    ax.set_title(f"{_diff_words(result)} by elevation angle")
    return ax


def elevation_curve_plot(curve: pd.DataFrame, *, band=None, ax=None):
    """The smoothed B minus A [dB] against elevation angle [deg] with its pointwise band
    (shaded) and, when the curve has it, the band simultaneous along the curve (dashed).

    Parameters
    ----------
    curve : pandas.DataFrame
        From :func:`spotkit.compare.elevation.elevation_curve`.
    band : str or list of str, optional
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes
    """
    _need(curve, [C.ELEVATION, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH], "an elevation curve")
    ax = _new_ax(ax)
    colors = band_colors()
    for b, sub in _by_band(curve, band):
        sub = sub.sort_values(C.ELEVATION)
        x = sub[C.ELEVATION].to_numpy(dtype=float)
        col = colors.get(b, "#333333") if b else "#333333"
        ax.fill_between(x, sub[C.CI_LOW].to_numpy(dtype=float),
                        sub[C.CI_HIGH].to_numpy(dtype=float), color=col, alpha=0.2, lw=0,
                        gid=f"band-pointwise-{b or 'all'}")
        if C.CI_SIM_LOW in sub:  # the band simultaneous along the curve: dashed edges
            for edge, side in ((C.CI_SIM_LOW, "low"), (C.CI_SIM_HIGH, "high")):
                ax.plot(x, sub[edge].to_numpy(dtype=float), color=col, lw=0.9, ls="--",
                        gid=f"band-simultaneous-{side}-{b or 'all'}")
        ax.plot(x, sub[C.B_MINUS_A].to_numpy(dtype=float), color=col, lw=1.6,
                label=b if b else "B - A", gid=f"curve-{b or 'all'}")
    ax.axhline(0.0, color="#444444", lw=0.8, zorder=0)
    ax.set_xlabel("estimated elevation angle [deg]")
    ax.set_ylabel("B minus A [dB]\nshaded: pointwise 95 % band\ndashed: 95 % along the "
                  "whole curve" if C.CI_SIM_LOW in curve else
                  "B minus A [dB]  (pointwise 95 % band)", fontsize=9)
    ax.set_title("B minus A against elevation angle (smoothed)")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, title="band", title_fontsize=8)
    return ax


def hour_plot(result, *, band=None, ax=None):
    """B minus A with its CI per hour of day (x at the middle of the hour)."""
    words = _hour_words(result)
    ax = _interval_plot(result, C.HOUR, None, "hour", f"hour of day [{words}]", band=band,
                        ax=ax, offset_frac=0.12)
    ax.set_xlim(0, 24)
    ax.set_xticks(range(0, 25, 3))
    ax.set_title(f"{_diff_words(result)} by hour of day "
                 f"({'UTC' if words == 'UTC' else 'local solar time'})")
    return ax


def bearing_plot(result, *, band=None, ax=None, rlim: float | None = None):
    """B minus A by bearing sector on a polar plot, with the CI as a band.

    North is up and bearings run clockwise (the compass convention); the radius is
    B minus A [dB] and the bold circle is 0 dB. In each sector the estimate is a line across
    the sector and the CI a shaded band.

    Parameters
    ----------
    result : ComparisonResult or pandas.DataFrame
        From ``compare_antennas(..., by=("band", "bearing"))`` (band optional).
    band : str or list of str, optional
    ax : matplotlib polar Axes, optional
    rlim : float, optional
        Radial half-range [dB]; default covers the intervals.

    Returns
    -------
    matplotlib.projections.polar.PolarAxes
    """
    g = _groups(result)
    _need(g, [C.BEARING_MIN, C.BEARING_MAX], "bearing")
    ax = _new_ax(ax, polar=True, figsize=(5.6, 5.6))
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    colors = band_colors()
    lo_all, hi_all = [], []
    parts = _by_band(g, band)
    for b, sub in parts:
        col = colors.get(b, "#333333") if b else "#333333"
        for _, row in sub.sort_values(C.BEARING_MIN).iterrows():  # one row per sector
            est, lo, hi = row[C.B_MINUS_A], row[C.CI_LOW], row[C.CI_HIGH]
            if not np.isfinite(est):
                continue
            th = np.radians(np.linspace(row[C.BEARING_MIN], row[C.BEARING_MAX], 16))
            ax.fill_between(th, lo, hi, color=col, alpha=0.25, lw=0, gid=f"ci-{b or 'all'}")
            ax.plot(th, np.full(th.size, est), color=col, lw=2, gid=f"estimate-{b or 'all'}")
            lo_all.append(lo)
            hi_all.append(hi)
        ax.plot([], [], color=col, lw=2, label=b if b else "B - A")
    if rlim is None:
        ext = np.nanmax(np.abs(np.r_[lo_all, hi_all, 1.0]))
        rlim = float(np.ceil(ext + 0.5))
    ax.set_ylim(-rlim, rlim)
    th = np.linspace(0, 2 * np.pi, 181)
    ax.plot(th, np.zeros_like(th), color="black", lw=1.2, gid="zero-db")
    # few radial labels, small, on a white ground, between two compass directions
    from matplotlib.ticker import MaxNLocator

    ax.yaxis.set_major_locator(MaxNLocator(nbins=4, symmetric=True))
    ax.set_rlabel_position(157.5)
    ax.tick_params(axis="y", labelsize=7)
    for label in ax.get_yticklabels():
        label.set_bbox(dict(facecolor="white", edgecolor="none", alpha=0.8, pad=0.5))
    ax.annotate("0 dB", (np.radians(22.5), 0.0), fontsize=7, fontweight="bold",
                ha="left", va="bottom", gid="zero-db-label",
                bbox=dict(facecolor="white", edgecolor="none", alpha=0.8, pad=0.5))
    ax.set_title(f"{_diff_words(result)} [dB] by bearing (95 % CI)", pad=18)
    ax.legend(fontsize=8, loc="lower left", bbox_to_anchor=(-0.12, -0.12))
    return ax


def bearing_curve_plot(curve: pd.DataFrame, *, band=None, ax=None,
                       rlim: float | None = None):
    """The smoothed B minus A [dB] against bearing on a polar plot, with its pointwise band
    (shaded) and, when the curve has it, the band simultaneous round the circle (dashed).

    North up, bearings clockwise; the radius is B minus A [dB], the bold circle 0 dB. Gaps
    are bearings with too few pairs (or too few receivers for a band).

    Parameters
    ----------
    curve : pandas.DataFrame
        From :func:`spotkit.compare.elevation.bearing_curve`.
    band : str or list of str, optional
    ax : matplotlib polar Axes, optional
    rlim : float, optional
        Radial half-range [dB]; default covers the band.

    Returns
    -------
    matplotlib.projections.polar.PolarAxes
    """
    _need(curve, [C.BEARING, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH], "a bearing curve")
    ax = _new_ax(ax, polar=True, figsize=(5.6, 5.6))
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    colors = band_colors()
    ext = [1.0]
    for b, sub in _by_band(curve, band):
        sub = sub.sort_values(C.BEARING)
        sub = pd.concat([sub, sub.iloc[:1]])  # close the circle
        th = np.radians(sub[C.BEARING].to_numpy(dtype=float))
        th[-1] += 2 * np.pi
        col = colors.get(b, "#333333") if b else "#333333"
        lo, hi = sub[C.CI_LOW].to_numpy(dtype=float), sub[C.CI_HIGH].to_numpy(dtype=float)
        est = sub[C.B_MINUS_A].to_numpy(dtype=float)
        ax.fill_between(th, lo, hi, color=col, alpha=0.2, lw=0, gid=f"band-{b or 'all'}")
        if C.CI_SIM_LOW in sub:  # simultaneous round the whole circle: dashed edges
            for edge, side in ((C.CI_SIM_LOW, "low"), (C.CI_SIM_HIGH, "high")):
                y = sub[edge].to_numpy(dtype=float)
                ax.plot(th, y, color=col, lw=0.9, ls="--",
                        gid=f"band-simultaneous-{side}-{b or 'all'}")
                ext += [x for x in y if np.isfinite(x)]
        ax.plot(th, est, color=col, lw=1.8, label=b if b else "B - A",
                gid=f"curve-{b or 'all'}")
        ext += [x for x in np.r_[lo, hi, est] if np.isfinite(x)]
    if rlim is None:
        rlim = float(np.ceil(np.max(np.abs(ext)) + 0.5))
    ax.set_ylim(-rlim, rlim)
    th = np.linspace(0, 2 * np.pi, 181)
    ax.plot(th, np.zeros_like(th), color="black", lw=1.2, gid="zero-db")
    ax.set_rlabel_position(100)
    ax.set_title("B minus A [dB] against bearing, smoothed\n(shaded: pointwise 95 % band; "
                 "dashed: 95 % round the whole circle)" if C.CI_SIM_LOW in curve else
                 "B minus A [dB] against bearing, smoothed (pointwise 95 % band)", pad=18)
    ax.legend(fontsize=8, loc="lower left", bbox_to_anchor=(-0.12, -0.12))
    return ax


def bearing_rings_plot(curve: pd.DataFrame, *, band=None, ax=None,
                       vmax: float | None = None):
    """The band x bearing surface on one polar plot: one ring per band, each cell of a ring
    coloured by the smoothed B minus A [dB] at that bearing.

    North up, bearings clockwise; rings from the lowest band (inside) to the highest
    (outside). A cell is solid where its pointwise band excludes 0 dB, hatched where it
    includes 0 dB (or the point has an estimate but too few receivers for a band), light
    grey where there is no estimate (too few pairs). The colour scale is symmetric round
    0 dB (blue: B better), as in :func:`grid_plot`.

    Parameters
    ----------
    curve : pandas.DataFrame
        From :func:`spotkit.compare.elevation.bearing_curve` (``by_band=True``); its grid
        should be evenly spaced (each cell spans the smallest step between bearings).
    band : str or list of str, optional
        Only these bands.
    ax : matplotlib polar Axes, optional
    vmax : float, optional
        Half-range of the colour scale [dB]; default the largest estimate of the bands
        drawn, at least 1 dB.

    Returns
    -------
    matplotlib.projections.polar.PolarAxes
        Cells are bars with ``gid`` ``ring-<band>-solid``, ``ring-<band>-hatched`` or
        ``ring-<band>-empty``.
    """
    import matplotlib.pyplot as plt
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize

    _need(curve, [C.BAND, C.BEARING, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH], "a bearing curve")
    parts = [(b, sub) for b, sub in _by_band(curve, band)]
    order = {b: i for i, b in enumerate(sort_bands([b for b, _ in parts]))}
    parts.sort(key=lambda p: order.get(p[0], len(order)))
    if not parts:
        raise InputError("no band of the bearing curve to draw")
    brg = np.unique(curve[C.BEARING].to_numpy(dtype=float) % 360.0)
    step = float(np.diff(np.r_[brg, brg[0] + 360.0]).min()) if brg.size > 1 else 360.0
    est_all = np.concatenate([sub[C.B_MINUS_A].to_numpy(dtype=float) for _, sub in parts])
    finite = est_all[np.isfinite(est_all)]  # of the bands drawn
    if vmax is None:
        vmax = float(max(1.0, np.ceil(np.abs(finite).max()))) if finite.size else 1.0
    cmap, norm = plt.get_cmap("RdBu"), Normalize(-vmax, vmax)
    ax = _new_ax(ax, polar=True, figsize=(6.4, 5.6))
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    hole = 1.0  # an empty centre, so the inner ring is not a set of slivers
    width = np.radians(step)
    for i, (b, sub) in enumerate(parts):
        th = np.radians(sub[C.BEARING].to_numpy(dtype=float))
        est = sub[C.B_MINUS_A].to_numpy(dtype=float)
        lo, hi = sub[C.CI_LOW].to_numpy(dtype=float), sub[C.CI_HIGH].to_numpy(dtype=float)
        have = np.isfinite(est)
        solid = have & ((lo > 0) | (hi < 0))
        for kind, sel, extra in (
                ("solid", solid, {"edgecolor": "white", "linewidth": 0.3}),
                ("hatched", have & ~solid, {"edgecolor": "#777777", "hatch": "///",
                                            "linewidth": 0}),
                ("empty", ~have, {"edgecolor": "none"})):
            if not sel.any():
                continue
            colors = cmap(norm(est[sel])) if kind != "empty" else "#eeeeee"
            ax.bar(th[sel], 1.0, width=width, bottom=hole + i, color=colors,
                   gid=f"ring-{b or 'all'}-{kind}", **extra)
    n = len(parts)
    ax.set_ylim(0.0, hole + n)
    ax.set_yticks(hole + np.arange(n) + 0.5, [b or "all" for b, _ in parts], fontsize=8,
                  fontweight="bold")
    for label in ax.get_yticklabels():  # readable on any cell colour
        label.set_path_effects(_halo())
    ax.set_rlabel_position(22.5)
    ax.grid(alpha=0.3)
    bar = ax.figure.colorbar(ScalarMappable(norm=norm, cmap=cmap), ax=ax, shrink=0.75,
                             pad=0.1)
    bar.set_label(f"B minus A [dB], scale +-{vmax:g} dB (blue: B better)", fontsize=8)
    ax.set_title("B minus A by band and bearing, smoothed\n(solid: 95 % band excludes 0 dB; "
                 "hatched: it does not; grey: too few pairs)", fontsize=9, pad=14)
    return ax


def grid_plot(results, *, band=None, vmax: float | None = None):
    """The "where" answer: B minus A as band x distance, band x bearing and band x hour
    grids, one panel each, on one symmetric colour scale (blue: B better).

    A cell where the verdict names a better antenna (:func:`spotkit.compare.grid.
    difference_grid`) has its value in bold with a star and a black outline; a cell whose
    interval includes 0 dB (or with too little data) is hatched and its value grey, so the
    two read apart in greyscale too. Cells without an estimate show a dot.

    Parameters
    ----------
    results : ComparisonResult or sequence of ComparisonResult
        Comparisons by band and one of distance, bearing, hour (others are skipped).
    band : str or list of str, optional
        Only these bands.
    vmax : float, optional
        Half-range of the colour scale [dB]; default the largest estimate, at least 1 dB.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.pyplot as plt
    from matplotlib.patches import Rectangle

    from spotkit.compare.grid import GRID_KEYS, difference_grid, grid_key

    results = [results] if hasattr(results, "groups") else list(results)
    panels = []
    for res in results:
        try:
            key = grid_key(res)
        except UsageError:
            continue
        g = difference_grid(res)
        if band is not None:
            keep = [band] if isinstance(band, str) else list(band)
            missing = [b for b in keep if b not in set(g[C.BAND])]
            if missing:
                raise UsageError(f"band(s) {', '.join(missing)} not in the comparison; "
                                 f"present: {', '.join(dict.fromkeys(g[C.BAND]))}")
            g = g[g[C.BAND].isin(keep)]
        if len(g):
            panels.append((GRID_KEYS.index(key), key, res, g))
    if not panels:
        raise UsageError("a grid needs comparisons by band and distance, bearing or hour "
                         "with at least one group")
    panels.sort(key=lambda p: p[0])
    est_all = np.concatenate([p[3][C.B_MINUS_A].to_numpy(dtype=float) for p in panels])
    if vmax is None:
        finite = est_all[np.isfinite(est_all)]
        vmax = float(max(1.0, np.ceil(np.abs(finite).max()))) if finite.size else 1.0
    heights = [max(1, p[3][C.BAND].nunique()) + 1.4 for p in panels]
    widths = [p[3][C.CELL].nunique() for p in panels]
    fig = plt.figure(figsize=(min(11.0, max(6.4, 0.45 * max(widths) + 2.2)),
                              0.45 * sum(heights) + 1.6), layout="constrained")
    axes = fig.subplots(len(panels), 1, squeeze=False,
                        gridspec_kw={"height_ratios": heights})[:, 0]
    cmap = plt.get_cmap("RdBu")
    image = None
    first = panels[0][2]
    for ax, (_, key, res, g) in zip(axes, panels, strict=True):
        bands = list(dict.fromkeys(g[C.BAND]))
        cells = (g[[C.CELL, C.CELL_ORDER]].drop_duplicates(C.CELL)
                 .sort_values(C.CELL_ORDER)[C.CELL].tolist())
        rows = g[C.BAND].map({b: i for i, b in enumerate(bands)}).to_numpy()
        cols = g[C.CELL].map({c: j for j, c in enumerate(cells)}).to_numpy()
        grid = np.full((len(bands), len(cells)), np.nan)
        est = g[C.B_MINUS_A].to_numpy(dtype=float)
        grid[rows, cols] = est
        image = ax.imshow(np.ma.masked_invalid(grid), cmap=cmap, vmin=-vmax, vmax=vmax,
                          aspect="auto", interpolation="nearest")
        sig = g[C.SIGNIFICANT].to_numpy(dtype=bool)
        for r, c, e, s_ in zip(rows, cols, est, sig, strict=True):
            if not np.isfinite(e):
                ax.text(c, r, ".", ha="center", va="center", color="#777777", fontsize=9)
                continue
            dark = abs(e) > 0.6 * vmax
            if s_:
                ax.add_patch(Rectangle((c - 0.5, r - 0.5), 1, 1, fill=False, lw=1.6,
                                       ec="black", gid="significant"))
                ax.text(c, r, f"{e:+.1f}*", ha="center", va="center", fontsize=8,
                        fontweight="bold", color="white" if dark else "black")
            else:
                ax.add_patch(Rectangle((c - 0.5, r - 0.5), 1, 1, fill=False, lw=0,
                                       hatch="///", ec="#999999", gid="not-significant"))
                ax.text(c, r, f"{e:+.1f}", ha="center", va="center", fontsize=7.5,
                        color="#dddddd" if dark else "#555555")
        ax.set_yticks(range(len(bands)), bands)
        if key == "hour":
            cells = [c.replace(" h", "") for c in cells]
        ax.set_xticks(range(len(cells)), cells, fontsize=7.5,
                      rotation=30 if key != "hour" and len(cells) > 4 else 0,
                      ha="right" if key != "hour" and len(cells) > 4 else "center")
        ax.tick_params(length=0)
        what = {"distance": "distance", "bearing": "bearing from home",
                "hour": f"hour of day ({_hour_words(res)})"}[key]
        ax.set_title(f"by band and {what}", fontsize=9, loc="left")
    la, lb = _names(first)
    fig.suptitle(f"Where {lb} beats {la}: {lb} minus {la} [dB]", fontsize=11)
    bar = fig.colorbar(image, ax=list(axes), shrink=0.9, pad=0.02)
    bar.set_label(f"{lb} minus {la} [dB], scale +-{vmax:g} dB\n(blue: {lb} better)",
                  fontsize=8)
    axes[-1].set_xlabel("bold* outlined: the interval excludes 0 dB with enough receivers; "
                        "hatched: no difference shown; dot: no estimate", fontsize=7,
                        color="#444444", loc="left")
    return fig


def heard_by_distance(pairs: pd.DataFrame, *, distance_edges=None, bin_km: float = 1000.0,
                      confidence: float = 0.95) -> pd.DataFrame:
    """P(heard) of A and of B per distance bin, with Wilson score intervals, side by side.

    :func:`spotkit.compare.reach.heard_by_distance` (one row per bin and antenna) laid out with A
    beside B for plotting, with bins every ``bin_km`` by default.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots`.
    distance_edges : sequence of float, optional
        Bin edges [km]; default every ``bin_km`` up to the farthest pair.
    confidence : float

    Returns
    -------
    pandas.DataFrame
        distance_min_km, distance_max_km [km], pairs, heard_a, heard_b (counts), p_a, p_b,
        p_a_low, p_a_high, p_b_low, p_b_high.

    References
    ----------
    E. B. Wilson, J. Am. Stat. Assoc. 22:209-212 (1927).
    """
    from spotkit.compare.reach import heard_by_distance as heard_long

    d = pairs[C.DISTANCE].to_numpy(dtype=float)
    if distance_edges is None:
        top = bin_km * np.ceil(np.nanmax(d) / bin_km) if len(d) else bin_km
        distance_edges = np.arange(0.0, top + bin_km / 2, bin_km)
    long = heard_long(pairs, distance_edges=distance_edges, by_band=False,
                      confidence=confidence)
    keys = [C.DISTANCE_MIN, C.DISTANCE_MAX]
    a = long[long[C.ANTENNA] == "A"].set_index(keys)
    b = long[long[C.ANTENNA] == "B"].set_index(keys)
    out = pd.DataFrame({C.PAIRS: a[C.PAIRS], C.HEARD_A: a[C.HEARD], C.HEARD_B: b[C.HEARD]})
    for who, t in (("a", a), ("b", b)):
        out[f"p_{who}"] = t[C.P_HEARD]
        out[f"p_{who}_low"], out[f"p_{who}_high"] = t[C.P_HEARD_LOW], t[C.P_HEARD_HIGH]
    return out.reset_index()


def heard_plot(pairs, *, band=None, distance_edges=None, bin_km: float = 1000.0, ax=None,
               n_boot: int = 1000, seed: int = 0, labels=None):
    """Probability of being heard against distance, A beside B, with cluster-bootstrap
    intervals.

    The bars resample whole far stations (:func:`spotkit.compare.heard.heard_probability`):
    one station's pairs are not independent trials, so a Wilson interval over pairs would
    be too narrow. Bins with a single far station get no bar.

    Parameters
    ----------
    pairs : pandas.DataFrame or ComparisonResult
        Pairs table (``result.pairs``).
    band : str, optional
        Only this band.
    distance_edges, bin_km
        Bin edges [km]; default every ``bin_km`` up to the farthest pair.
    ax : matplotlib.axes.Axes, optional
    n_boot, seed : int
        Bootstrap resamples of the far stations and their seed.
    labels : (str, str), optional
        Names of A and B for the legend; default the result's labels (the calls), or "A"
        and "B" for a bare pairs table.

    Returns
    -------
    matplotlib.axes.Axes
    """
    from spotkit.compare.heard import heard_probability

    if labels is None:
        labels = _names(pairs)
    pairs = getattr(pairs, "pairs", pairs)
    if band is not None:
        pairs = pairs[pairs[C.BAND].astype(str) == band]
        if not len(pairs):
            raise UsageError(f"no pairs on {band}")
    if distance_edges is None:
        d = pairs[C.DISTANCE].to_numpy(dtype=float)
        top = bin_km * np.ceil(np.nanmax(d) / bin_km) if len(d) else bin_km
        distance_edges = np.arange(0.0, top + bin_km / 2, bin_km)
    long = heard_probability(pairs, distance_edges=distance_edges, n_boot=n_boot, seed=seed)
    ax = _new_ax(ax)
    for who, col, dx, marker in (("A", COLOR_A, -0.08, "v"), ("B", COLOR_B, 0.08, "^")):
        t = long[long[C.ANTENNA] == who]
        mid = ((t[C.DISTANCE_MIN] + t[C.DISTANCE_MAX]) / 2.0).to_numpy()
        w = float((t[C.DISTANCE_MAX] - t[C.DISTANCE_MIN]).min()) if len(t) else 1.0
        p = t[C.P_HEARD].to_numpy(dtype=float)
        yerr = np.vstack([p - t[C.P_HEARD_LOW].to_numpy(dtype=float),
                          t[C.P_HEARD_HIGH].to_numpy(dtype=float) - p])
        yerr = np.clip(np.nan_to_num(yerr, nan=0.0), 0.0, None)
        name = labels[0] if who == "A" else labels[1]
        ax.errorbar(mid + dx * w, p, yerr=yerr, fmt=marker + "-", ms=5, capsize=3, color=col,
                    label=name if name == who else f"{name} ({who})",
                    gid=f"heard-{who.lower()}")
    ax.set_ylim(-0.02, 1.02)
    ax.set_xlabel("distance [km]")
    ax.set_ylabel("P(heard) among pairs  (95 % CI, far stations resampled)")
    ax.set_title("Probability of being heard" + (f" on {band}" if band else ""))
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    return ax


def running_median(x, y, *, bin_km: float = 250.0, min_count: int = 5) -> pd.DataFrame:
    """Binned median of ``y`` against ``x`` (bins of ``bin_km`` from 0); bins with fewer than
    ``min_count`` points are left out. Returns columns x (bin middle), median, count."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    ok = np.isfinite(x) & np.isfinite(y)
    b = np.floor(x[ok] / bin_km).astype(np.int64)
    s = pd.DataFrame({"b": b, "y": y[ok]}).groupby("b")["y"].agg(["median", "size"])
    s = s[s["size"] >= min_count]
    return pd.DataFrame({"x": (s.index.to_numpy() + 0.5) * bin_km,
                         "median": s["median"].to_numpy(), "count": s["size"].to_numpy()})


def _gapped(x: np.ndarray, y: np.ndarray, step: float):
    """``x, y`` with a NaN inserted wherever ``x`` jumps by more than one ``step``, so that a
    line is broken across bins without data instead of joining them."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.size < 2:
        return x, y
    cut = np.flatnonzero(np.diff(x) > step * 1.01) + 1
    return np.insert(x, cut, np.nan), np.insert(y, cut, np.nan)


def snr_distance_plot(spots: pd.DataFrame, *, band=None, bin_km: float = 250.0,
                      max_points: int = 200_000, seed: int = 0, ax=None, calls=None,
                      labels=None):
    """SNR per watt against distance, one dot per spot, with a running median per band.

    The median line is broken where a bin has too few spots (it never joins across a gap).
    With ``calls=(a, b)`` only the reports of the two antennas' calls are drawn and each
    gets its own median per band (A solid, B dashed), so A and B are never mixed in one
    line.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table.
    band : str or list of str, optional
    bin_km : float
        Width of the running-median bins [km].
    max_points : int
        At most this many dots are drawn (a seeded random subset); the medians use every
        spot.
    ax : matplotlib.axes.Axes, optional
    calls : (str, str), optional
        Calls of A and B: a median per antenna, from the reports sent (or, in the receive
        design, made) under that call. With the same call twice (alternating, before-after
        designs) a single median is drawn.
    labels : (str, str), optional
        Names of A and B for the legend (default the calls).

    Returns
    -------
    matplotlib.axes.Axes
    """
    _spots_to_draw(spots, [C.DISTANCE, C.SNR, C.POWER], "an SNR-against-distance plot")
    ax = _new_ax(ax)
    colors = band_colors()
    rng = np.random.default_rng(seed)
    if calls is not None and str(calls[0]).upper() != str(calls[1]).upper():
        return _snr_distance_ab(spots, ax, band, bin_km, max_points, rng, calls,
                                labels or tuple(calls), colors)
    for b, sub in _by_band(spots, band):
        d = sub[C.DISTANCE].to_numpy(dtype=float)
        v = snr_per_watt(sub[C.SNR].to_numpy(), sub[C.POWER].to_numpy())
        idx = np.arange(d.size)
        if d.size > max_points:
            idx = rng.choice(d.size, max_points, replace=False)
        col = colors.get(b, "#333333")
        ax.scatter(d[idx], v[idx], s=3, alpha=0.15, color=col, lw=0, rasterized=True,
                   gid=f"spots-{b}")
        m = running_median(d, v, bin_km=bin_km)
        ax.plot(*_gapped(m["x"], m["median"], bin_km), color=col, lw=2.2,
                label=f"{b} median", path_effects=_halo(), gid=f"median-{b}")
    ax.set_xlabel("distance [km]")
    ax.set_ylabel("SNR per watt [dB in 2500 Hz]")
    ax.set_title("SNR against distance")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    return ax


def _snr_distance_ab(spots, ax, band, bin_km, max_points, rng, calls, labels, colors):
    """:func:`snr_distance_plot` with one median per antenna and band."""
    wanted = [str(c).upper() for c in calls]
    tx = spots[C.TX_CALL].astype(str).str.upper().to_numpy()
    rx = spots[C.RX_CALL].astype(str).str.upper().to_numpy() if C.RX_CALL in spots else tx
    for b, sub in _by_band(spots, band):
        col = colors.get(b, "#333333")
        idx_all = spots.index.get_indexer(sub.index)
        for who, call, name, style in (("A", wanted[0], labels[0], "-"),
                                       ("B", wanted[1], labels[1], "--")):
            mine = (tx[idx_all] == call) | (rx[idx_all] == call)
            d = sub[C.DISTANCE].to_numpy(dtype=float)[mine]
            v = snr_per_watt(sub[C.SNR].to_numpy()[mine], sub[C.POWER].to_numpy()[mine])
            if not d.size:
                continue
            pick = np.arange(d.size)
            if d.size > max_points // 2:
                pick = rng.choice(d.size, max_points // 2, replace=False)
            ax.scatter(d[pick], v[pick], s=3, alpha=0.12, color=col, lw=0, rasterized=True,
                       marker="o" if who == "A" else "s", gid=f"spots-{b}-{who}")
            m = running_median(d, v, bin_km=bin_km)
            ax.plot(*_gapped(m["x"], m["median"], bin_km), color=col, lw=2.2, ls=style,
                    label=f"{b} {name}" + ("" if name == who else f" ({who})"),
                    path_effects=_halo(), gid=f"median-{b}-{who}")
    ax.set_xlabel("distance [km]")
    ax.set_ylabel("SNR per watt [dB in 2500 Hz]")
    ax.set_title(f"SNR against distance: {labels[0]} and {labels[1]}")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, title="median per band and antenna", title_fontsize=8)
    return ax


def _halo():
    import matplotlib.patheffects as pe

    return [pe.Stroke(linewidth=3.6, foreground="white"), pe.Normal()]


def spots_per_hour(spots: pd.DataFrame) -> pd.DataFrame:
    """Number of spots per clock hour (UTC) and band: index hour start, one column per band
    in band-plan order, hours without spots as 0."""
    t = pd.to_datetime(spots[C.SLOT] if C.SLOT in spots else spots[C.TIME], utc=True)
    h = t.dt.floor("h")
    tab = pd.crosstab(h.to_numpy(), spots[C.BAND].astype(str).to_numpy())
    if len(tab):
        full = pd.date_range(tab.index.min(), tab.index.max(), freq="h")
        tab = tab.reindex(full, fill_value=0)
    return tab[sort_bands(tab.columns)]


def spots_per_hour_plot(spots: pd.DataFrame, *, band=None, ax=None):
    """Spots per clock hour (UTC) by band, as step lines over the run.

    Returns
    -------
    matplotlib.axes.Axes
    """
    _spots_to_draw(spots, [C.SLOT if C.SLOT in spots else C.TIME, C.BAND],
                   "a spots-per-hour plot")
    ax = _new_ax(ax, figsize=(8, 3.6))
    tab = spots_per_hour(spots)
    if band is not None:
        keep = [band] if isinstance(band, str) else list(band)
        missing = [b for b in keep if b not in tab.columns]
        if missing:
            raise UsageError(f"band(s) {', '.join(missing)} not in the data")
        tab = tab[sort_bands(keep)]
    colors = band_colors()
    x = tab.index.tz_localize(None) if tab.index.tz is not None else tab.index
    for b in tab.columns:
        ax.step(x, tab[b].to_numpy(), where="post", color=colors.get(b, "#333333"), lw=1.3,
                label=b, gid=f"count-{b}")
    ax.set_xlabel("time [UTC]")
    ax.set_ylabel("spots per hour")
    ax.set_title("Spots per hour by band")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, ncol=min(4, len(tab.columns)) or 1)
    ax.figure.autofmt_xdate()
    return ax


def duration_tradeoff_plot(table: pd.DataFrame, ax=None):
    """Expected CI width (and power, on a second axis) against run length.

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`spotkit.plan.duration.duration_table` (predicted lines, closed form or
        scaled from a pilot; simulated points with their Monte-Carlo error bars when
        present).
    ax : matplotlib.axes.Axes, optional
        Axes to draw on; a new figure when None.

    Returns
    -------
    matplotlib.axes.Axes
        The CI-width axes (the power axes is ``ax.right_ax``).
    """
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(7, 4.2))
    t = table.sort_values(C.HOURS)
    need = table.attrs.get("needed")
    eff = table.attrs.get("effect_db")
    inputs = table.attrs.get("inputs")
    if inputs is not None and eff is not None:  # smooth closed-form curves
        lo = float(t[C.HOURS].min())
        if need and np.isfinite(need.get(C.HOURS, np.nan)):
            lo = min(lo, need[C.HOURS])
        from spotkit.plan.duration import PilotParameters, power_closed_form, power_from_pilot

        grid = np.geomspace(lo / 1.5, float(t[C.HOURS].max()), 200)
        if "se_db" in inputs:  # scaled from a pilot
            curve = power_from_pilot(grid, eff, PilotParameters(**inputs),
                                     alpha=(need or {}).get("alpha", 0.05))
        else:
            curve = power_closed_form(grid, eff, **inputs)
    else:
        curve = t
    ax.plot(curve[C.HOURS], curve[C.CI_WIDTH], "-", color="C0",
            label="CI width, predicted")
    if C.CI_WIDTH_SIM in t:
        ax.errorbar(t[C.HOURS], t[C.CI_WIDTH_SIM], yerr=2 * t[C.CI_WIDTH_SIM_SE],
                    fmt="o", color="C0", capsize=3, label="CI width, simulated")
    ax.set_xscale("log")
    ax.set_xticks(t[C.HOURS].to_numpy(), [f"{h:g}" for h in t[C.HOURS]])
    ax.xaxis.set_minor_locator(plt.NullLocator())
    ax.set_xlabel("run length [h]")
    ax.set_ylabel("expected confidence-interval width [dB]", color="C0")
    right = ax.twinx()
    right.plot(curve[C.HOURS], curve["power"], "--", color="C3", label="power, predicted")
    if "power_sim" in t:
        err = np.vstack([t["power_sim"] - t["power_sim_low"],
                         t["power_sim_high"] - t["power_sim"]])
        right.errorbar(t[C.HOURS], t["power_sim"], yerr=err, fmt="s", color="C3",
                       capsize=3, label="power, simulated")
    right.set_ylim(0, 1.02)
    right.set_ylabel("power (chance of detecting the effect)", color="C3")
    if need and np.isfinite(need.get(C.HOURS, np.nan)):
        ax.axvline(need[C.HOURS], color="0.5", lw=0.8)
        right.axhline(need["power"], color="0.5", lw=0.8)
    if eff is not None:
        ax.set_title(f"Run length to detect B - A = {eff:g} dB")
    h1, l1 = ax.get_legend_handles_labels()
    h2, l2 = right.get_legend_handles_labels()
    ax.legend(h1 + h2, l1 + l2, loc="upper right", fontsize="small")
    ax.right_ax = right
    return ax

def pattern_check_plot(check, *, band=None, ax=None):
    """Measured B minus A per elevation bin and bearing sector against the modelled range.

    For each elevation bin (x, in order) and bearing sector (side by side within the bin,
    one colour each): the measured estimate with its confidence interval (point and
    whiskers) and, just right of it, the patterns' predicted range over the layer heights
    (a wide translucent bar; the tick is the nominal-height prediction). Cells listed as
    disagreeing are drawn with a red ring; the title gives the chi-square test.

    Parameters
    ----------
    check : PatternCheck
        From :func:`spotkit.compare.modelcheck.check_patterns` (grouped by elevation; band
        and bearing optional).
    band : str or list of str, optional
        Only these bands.
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes
    """
    import matplotlib.pyplot as plt

    cells = getattr(check, "cells", check)
    _need(cells, [C.ELEVATION_MIN, C.ELEVATION_MAX, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH,
                  C.PREDICTED, C.PREDICTED_LOW, C.PREDICTED_HIGH, C.DISAGREES],
          "a pattern check grouped by elevation")
    if band is not None and C.BAND in cells:
        want = [band] if isinstance(band, str) else list(band)
        cells = cells[cells[C.BAND].isin(want)]
    if cells.empty:
        raise UsageError("no cells to draw (no estimate in the bands asked for)")
    ax = _new_ax(ax, figsize=(7.2, 4.4))
    bins = sorted(set(zip(cells[C.ELEVATION_MIN], cells[C.ELEVATION_MAX], strict=True)))
    if C.BEARING_MIN in cells:
        sectors = sorted(set(zip(cells[C.BEARING_MIN], cells[C.BEARING_MAX], strict=True)))
    else:
        sectors = [None]
    bands_in = sort_bands(cells[C.BAND].unique()) if C.BAND in cells else [None]
    series = [(b, s) for b in bands_in for s in sectors]
    cmap = plt.get_cmap("viridis")
    width = 0.8 / max(len(series), 1)
    for k, (b, sec) in enumerate(series):
        sub = cells
        if b is not None:
            sub = sub[sub[C.BAND] == b]
        if sec is not None:
            sub = sub[(sub[C.BEARING_MIN] == sec[0]) & (sub[C.BEARING_MAX] == sec[1])]
        if sub.empty:
            continue
        x = np.array([bins.index((lo, hi)) for lo, hi in
                      zip(sub[C.ELEVATION_MIN], sub[C.ELEVATION_MAX], strict=True)], float)
        x = x - 0.4 + width * (k + 0.3)
        col = cmap(0.9 * k / max(len(series) - 1, 1))
        label = " ".join(t for t in (
            b, None if sec is None else f"{sec[0]:g}-{sec[1]:g} deg") if t)
        m = sub[C.B_MINUS_A].to_numpy(dtype=float)
        ax.errorbar(x, m, yerr=[m - sub[C.CI_LOW].to_numpy(dtype=float),
                                sub[C.CI_HIGH].to_numpy(dtype=float) - m],
                    fmt="o", ms=4, color=col, capsize=2, lw=1, label=label or "B - A",
                    gid=f"measured-{k}")
        lo = sub[C.PREDICTED_LOW].to_numpy(dtype=float)
        hi = sub[C.PREDICTED_HIGH].to_numpy(dtype=float)
        xr = x + width * 0.4
        ax.bar(xr, hi - lo, bottom=lo, width=width * 0.35, color=col, alpha=0.35, lw=0,
               gid=f"predicted-{k}")
        ax.scatter(xr, sub[C.PREDICTED].to_numpy(dtype=float), marker="_", s=60,
                   color=col)
        bad = sub[C.DISAGREES].to_numpy(dtype=bool)
        if bad.any():
            ax.scatter(x[bad], m[bad], s=90, facecolors="none", edgecolors="#d62728",
                       linewidths=1.5, zorder=5, gid=f"disagrees-{k}")
    ax.set_xticks(range(len(bins)))
    ax.set_xticklabels([f"{lo:g}-{hi:g}" for lo, hi in bins])
    ax.set_xlim(-0.6, len(bins) - 0.4)
    ax.axhline(0.0, color="#444444", lw=0.8, zorder=0)
    ax.set_xlabel("elevation angle bin [deg]")
    ax.set_ylabel("B minus A [dB]")
    title = "measured (points, CI) against modelled (bars: layer-height range)"
    if hasattr(check, "statistic"):
        title += (f"\nchi-square {check.statistic:.1f} on {check.df} cells, "
                  f"p = {check.p_value:.3g}; red rings: cells that disagree")
    ax.set_title(title, fontsize=9)
    ax.grid(alpha=0.3, axis="y")
    ax.legend(fontsize=7, title="band, bearing sector", title_fontsize=7, ncol=2)
    return ax


__all__ = ["PLOT_KINDS", "BAND_CMAP", "band_colors", "distance_plot", "elevation_plot",
           "elevation_curve_plot", "bearing_curve_plot", "bearing_rings_plot",
           "hour_plot", "grid_plot", "bearing_plot", "heard_by_distance", "heard_plot",
           "running_median",
           "snr_distance_plot", "spots_per_hour", "spots_per_hour_plot",
           "duration_tradeoff_plot", "pattern_check_plot"]
