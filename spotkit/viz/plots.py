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

PlotKind = Literal["bearing", "distance", "elevation", "hour", "heard", "snr-distance",
                   "spots-per-hour"]
PLOT_KINDS = ("bearing", "distance", "elevation", "hour", "heard", "snr-distance",
              "spots-per-hour", "elevation-curve", "bearing-curve", "pattern-check")
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
                   mid=None, offset_frac=0.06):
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
        width = np.nanmin(hi - lo) if len(lo) else 1.0
        x = x + (i - (len(parts) - 1) / 2) * offset_frac * width
        est = sub[C.B_MINUS_A].to_numpy(dtype=float)
        yerr = np.clip(np.vstack([est - sub[C.CI_LOW].to_numpy(dtype=float),
                                  sub[C.CI_HIGH].to_numpy(dtype=float) - est]), 0.0, None)
        ax.errorbar(x, est, yerr=yerr, fmt="o", ms=5, capsize=3, lw=1.2,
                    color=colors.get(b, "#333333") if b else "#333333",
                    label=b if b else "B - A", gid=f"estimate-{b or 'all'}")
        empty = ~np.isfinite(est)
        if C.PAIRS in sub:
            for xi, n in zip(x[empty], sub[C.PAIRS].to_numpy()[empty], strict=True):
                ax.annotate(f"{int(n)} pairs:\nno estimate", (xi, 0), fontsize=6,
                            ha="center", va="bottom", color="#777777")
    ax.axhline(0.0, color="#444444", lw=0.8, zorder=0)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("B minus A [dB]  (95 % CI)")
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
    ax = _interval_plot(result, C.DISTANCE_MIN, C.DISTANCE_MAX, "distance", "distance [km]",
                        band=band, ax=ax)
    ax.set_title("B minus A by distance")
    return ax


def elevation_plot(result, *, band=None, ax=None):
    """B minus A with its CI per estimated elevation-angle bin [deg] (mirror-reflection hop
    geometry, see :func:`spotkit.geo.geodesic.elevation_angle`)."""
    ax = _interval_plot(result, C.ELEVATION_MIN, C.ELEVATION_MAX, "elevation",
                        "estimated elevation angle [deg]", band=band, ax=ax)
    ax.set_title("B minus A by elevation angle")
    return ax


def elevation_curve_plot(curve: pd.DataFrame, *, band=None, ax=None):
    """The smoothed B minus A [dB] against elevation angle [deg] with its pointwise band.

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
                        sub[C.CI_HIGH].to_numpy(dtype=float), color=col, alpha=0.2, lw=0)
        ax.plot(x, sub[C.B_MINUS_A].to_numpy(dtype=float), color=col, lw=1.6,
                label=b if b else "B - A", gid=f"curve-{b or 'all'}")
    ax.axhline(0.0, color="#444444", lw=0.8, zorder=0)
    ax.set_xlabel("estimated elevation angle [deg]")
    ax.set_ylabel("B minus A [dB]  (pointwise 95 % band)")
    ax.set_title("B minus A against elevation angle (smoothed)")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, title="band", title_fontsize=8)
    return ax


def hour_plot(result, *, band=None, ax=None):
    """B minus A with its CI per hour of day (x at the middle of the hour)."""
    ax = _interval_plot(result, C.HOUR, None, "hour", "hour of day", band=band, ax=ax,
                        offset_frac=0.12)
    ax.set_xlim(0, 24)
    ax.set_xticks(range(0, 25, 3))
    ax.set_title("B minus A by hour of day")
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
    ax.set_rlabel_position(100)
    ax.set_title("B minus A [dB] by bearing (95 % CI)", pad=18)
    ax.legend(fontsize=8, loc="lower left", bbox_to_anchor=(-0.12, -0.12))
    return ax


def bearing_curve_plot(curve: pd.DataFrame, *, band=None, ax=None,
                       rlim: float | None = None):
    """The smoothed B minus A [dB] against bearing on a polar plot, with its pointwise band.

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
        ax.plot(th, est, color=col, lw=1.8, label=b if b else "B - A",
                gid=f"curve-{b or 'all'}")
        ext += [x for x in np.r_[lo, hi, est] if np.isfinite(x)]
    if rlim is None:
        rlim = float(np.ceil(np.max(np.abs(ext)) + 0.5))
    ax.set_ylim(-rlim, rlim)
    th = np.linspace(0, 2 * np.pi, 181)
    ax.plot(th, np.zeros_like(th), color="black", lw=1.2, gid="zero-db")
    ax.set_rlabel_position(100)
    ax.set_title("B minus A [dB] against bearing, smoothed (pointwise 95 % band)", pad=18)
    ax.legend(fontsize=8, loc="lower left", bbox_to_anchor=(-0.12, -0.12))
    return ax


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
               n_boot: int = 1000, seed: int = 0):
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

    Returns
    -------
    matplotlib.axes.Axes
    """
    from spotkit.compare.heard import heard_probability

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
        ax.errorbar(mid + dx * w, p, yerr=yerr, fmt=marker + "-", ms=5, capsize=3, color=col,
                    label=who, gid=f"heard-{who.lower()}")
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


def snr_distance_plot(spots: pd.DataFrame, *, band=None, bin_km: float = 250.0,
                      max_points: int = 200_000, seed: int = 0, ax=None):
    """SNR per watt against distance, one dot per spot, with a running median per band.

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

    Returns
    -------
    matplotlib.axes.Axes
    """
    _spots_to_draw(spots, [C.DISTANCE, C.SNR, C.POWER], "an SNR-against-distance plot")
    ax = _new_ax(ax)
    colors = band_colors()
    rng = np.random.default_rng(seed)
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
        ax.plot(m["x"], m["median"], color=col, lw=2.2, label=f"{b} median",
                path_effects=_halo(), gid=f"median-{b}")
    ax.set_xlabel("distance [km]")
    ax.set_ylabel("SNR per watt [dB in 2500 Hz]")
    ax.set_title("SNR against distance")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
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
           "elevation_curve_plot", "bearing_curve_plot",
           "hour_plot", "bearing_plot", "heard_by_distance", "heard_plot", "running_median",
           "snr_distance_plot", "spots_per_hour", "spots_per_hour_plot",
           "duration_tradeoff_plot", "pattern_check_plot"]
