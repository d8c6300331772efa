"""What the maps show, computed without drawing: far stations, comparison cells, reach.

The data preparation behind :mod:`spotkit.viz.maps`, on DataFrames and arrays, importing neither
matplotlib nor cartopy: the home station (from a locator, the spots or the pairs), one row per
band and far station with its median SNR per watt (:func:`far_station_summary`), the groups of
a comparison placed on the map and flagged (:func:`difference_cells`), what each antenna
reached (:func:`reach_stations`), a symmetric colour limit and the radius of an azimuthal map
(:func:`symmetric_limit`, :func:`auto_extent_km`). Geodesic sample points come from PROJ
(pyproj, imported lazily).

Known error: station positions are locator cell centres (see :mod:`spotkit.geo.locator`): a
4-character locator puts a station up to about 111 km east-west from where it is. A far
station's position and distance are the medians over its reports.
"""
from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_choice, check_columns
from spotkit.bands import sort_bands
from spotkit.compare.cells import DEFAULT_BLOCK_HOURS, estimate_cells
from spotkit.compare.estimate import too_little_data
from spotkit.errors import SpotkitError, UsageError
from spotkit.geo.locator import locator_cell_size, locator_to_latlon
from spotkit.units import snr_per_watt

Side = Literal["auto", "transmit", "receive"]
SIDES = ("auto", "transmit", "receive")
Level = Literal["auto", "receiver", "square", "field"]
LEVELS = ("auto", "receiver", "square", "field")

#: Half the circumference of the Earth along the equator [km]: the edge of a full
#: azimuthal-equidistant map.
FULL_EXTENT_KM = 20037.5


# --- home ------------------------------------------------------------------------------
def home_latlon(home) -> tuple[float, float]:
    """Latitude and longitude [deg] of the home station.

    Parameters
    ----------
    home : str or (float, float)
        A Maidenhead locator (its cell centre is used) or ``(lat, lon)`` [deg].

    Examples
    --------
    >>> lat, lon = home_latlon("JO62qm")
    >>> round(lat, 4), round(lon, 4)
    (52.5208, 13.375)
    >>> home_latlon((52.5, 13.4))
    (52.5, 13.4)
    """
    if home is None:
        raise UsageError("no home station given: pass a locator such as 'JN58td' or (lat, lon)")
    if isinstance(home, str):
        lat, lon = locator_to_latlon(home)
        return float(lat), float(lon)
    lat, lon = home
    return float(lat), float(lon)


def _geodesic_samples(lat1, lon1, lat2, lon2, n: int):
    """n points along each WGS-84 geodesic from (lat1, lon1) to (lat2, lon2); arrays (k, n).

    Uses PROJ's geodesic routines (Karney's algorithm, via pyproj) directly, as
    :mod:`spotkit.geo.geodesic` does, without its checks of the input and short-line azimuths,
    which a drawing does not need.
    """
    from pyproj import Geod

    lat2 = np.atleast_1d(np.asarray(lat2, dtype=float))
    lon2 = np.atleast_1d(np.asarray(lon2, dtype=float))
    lat1 = np.broadcast_to(np.asarray(lat1, dtype=float), lat2.shape)
    lon1 = np.broadcast_to(np.asarray(lon1, dtype=float), lat2.shape)
    geod = Geod(ellps="WGS84")
    azi, _, dist = geod.inv(lon1, lat1, lon2, lat2)
    s = np.asarray(dist)[:, None] * np.linspace(0.0, 1.0, n)[None, :]
    lo, la, _ = geod.fwd(np.repeat(lon1, n), np.repeat(lat1, n), np.repeat(azi, n), s.ravel())
    return np.asarray(la).reshape(-1, n), np.asarray(lo).reshape(-1, n)


# --- map extent --------------------------------------------------------------------------
def _ring_step(extent_km: float) -> float:
    return 1000.0 if extent_km <= 6000 else 2500.0


def auto_extent_km(distances_km, step_km: float | None = None) -> float:
    """Radius [km] of an azimuthal map that shows all ``distances_km``: the next ring
    beyond the farthest station (whole globe past 15 000 km).

    Examples
    --------
    Rings every 1,000 km up to 6,000 km, every 2,500 km beyond; 5 % margin:

    >>> auto_extent_km([502.3]), auto_extent_km([502.3, 996.2, 6244.0])
    (1000.0, 7500.0)
    >>> auto_extent_km([16000.0]) == FULL_EXTENT_KM
    True
    """
    d = np.asarray(distances_km, dtype=float)
    d = d[np.isfinite(d)]
    far = float(d.max()) if d.size else FULL_EXTENT_KM
    if far > 15000:
        return FULL_EXTENT_KM
    step = step_km or _ring_step(far * 1.05)
    return float(min(FULL_EXTENT_KM, step * np.ceil((far * 1.05 + 1e-9) / step)))


#: Radii [km] a zoomed panel may have: round numbers for the rings.
NEAR_RADII_KM = (250.0, 500.0, 750.0, 1000.0, 1500.0, 2000.0, 2500.0, 3000.0, 4000.0, 5000.0)


def near_radius_km(distances_km, weights=None, *, share: float = 0.5,
                   whole_km: float | None = None) -> float | None:
    """Radius [km] of a zoomed panel that holds ``share`` of the pairs, or ``None`` when a
    zoom would show little more than the whole map.

    The ``share`` quantile of the distances (weighted, e.g. by pairs per cell) rounded up to
    the next of :data:`NEAR_RADII_KM`; ``None`` when that radius is more than 40 % of
    ``whole_km`` (the radius of the whole map, default the farthest distance) or beyond
    5000 km.

    Parameters
    ----------
    distances_km : array-like
        Distance of each far station, cell or pair from home [km].
    weights : array-like, optional
        Pairs behind each distance (default one each).
    share : float
        Share of the pairs (0-1] the zoomed panel should hold.
    whole_km : float, optional
        Radius of the whole map [km].

    Examples
    --------
    Most pairs within 800 km of home, a few at 9000 km:

    >>> near_radius_km([300, 500, 700, 800, 9000])
    750.0
    >>> near_radius_km([300, 500, 700, 800, 9000], share=0.8)
    1000.0
    >>> near_radius_km([300, 500, 700, 800, 9000], weights=[1, 1, 1, 1, 20]) is None
    True
    """
    d = np.asarray(distances_km, dtype=float)
    w = np.ones_like(d) if weights is None else np.asarray(weights, dtype=float)
    ok = np.isfinite(d) & np.isfinite(w) & (w > 0)
    d, w = d[ok], w[ok]
    if not d.size:
        return None
    order = np.argsort(d)
    cum = np.cumsum(w[order]) / w.sum()
    q = float(d[order][np.searchsorted(cum, share - 1e-12)])
    whole = float(whole_km) if whole_km else float(d.max())
    for r in NEAR_RADII_KM:
        if q <= r:
            return r if r <= 0.4 * whole else None
    return None


# --- coverage ----------------------------------------------------------------------------
def _mode(series: pd.Series):
    s = series.dropna().astype(str)
    if s.empty:
        return None
    return s.value_counts().index[0]


def resolve_side(spots: pd.DataFrame, side: Side = "auto") -> str:
    """Which end of the spots is the home station: ``"transmit"`` (home transmits; far
    stations are receivers) or ``"receive"``. ``"auto"`` picks the end with fewer distinct
    locators.

    Examples
    --------
    >>> spots = pd.DataFrame({"tx_locator": ["JO62qm"] * 3,
    ...                       "rx_locator": ["JN58td", "IO91lk", "FN31pr"]})
    >>> resolve_side(spots), resolve_side(spots, "receive")
    ('transmit', 'receive')
    """
    check_choice(side, SIDES, "side")
    if side != "auto":
        return side
    n_tx = spots[C.TX_LOCATOR].nunique()
    n_rx = spots[C.RX_LOCATOR].nunique()
    return "transmit" if n_tx <= n_rx else "receive"


def home_from_spots(spots: pd.DataFrame, side: Side = "auto") -> str:
    """The home station's locator: the most common locator at the home end of the spots.

    Examples
    --------
    >>> spots = pd.DataFrame({"tx_locator": ["JO62qm", "JO62qm", "JO62qn"],
    ...                       "rx_locator": ["JN58td", "IO91lk", "FN31pr"]})
    >>> home_from_spots(spots)
    'JO62qm'
    """
    side = resolve_side(spots, side)
    loc = _mode(spots[C.TX_LOCATOR if side == "transmit" else C.RX_LOCATOR])
    if loc is None:
        raise UsageError("cannot tell the home station from an empty spot table; give --home")
    return loc


def far_station_summary(spots: pd.DataFrame, side: Side = "auto") -> pd.DataFrame:
    """One row per band and far station: where it is and how well it heard (or was heard).

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table (needs band, calls, locators, lat/lon, distance, SNR, power).
    side : {"auto", "transmit", "receive"}
        ``"transmit"``: the home station transmits, far stations are the receivers;
        ``"receive"``: far stations are the transmitters; ``"auto"``: see :func:`resolve_side`.

    Returns
    -------
    pandas.DataFrame
        Columns band, far_call, far_locator, far_lat, far_lon [deg], distance_km [km],
        bearing_deg [deg, from home], snr_per_w_db (median SNR normalised to 1 W [dB]),
        count (spots).

    Examples
    --------
    The receivers of one transmitter of a short simulated run:

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.1, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> spots = sim.spots[sim.spots["tx_call"] == "Q1ABC"]
    >>> summary = far_station_summary(spots)
    >>> len(summary)
    10
    >>> cols = ["far_call", "far_locator", "distance_km", "bearing_deg", "snr_per_w_db", "count"]
    >>> print(summary[cols].head(3).round(1).to_string(index=False))
    far_call far_locator  distance_km  bearing_deg  snr_per_w_db  count
       Q2DJT      JN77vt        313.2         95.2         -10.0      3
       Q3FTZ      EM74sr       7637.1        298.6         -21.0      3
       Q8NRE      KO54ce       1457.2         55.6         -16.5     10
    """
    side = resolve_side(spots, side)
    if side == "transmit":
        call, loc, lat, lon, brg = C.RX_CALL, C.RX_LOCATOR, C.RX_LAT, C.RX_LON, C.BEARING
    else:
        call, loc, lat, lon, brg = C.TX_CALL, C.TX_LOCATOR, C.TX_LAT, C.TX_LON, C.REVERSE_BEARING
    check_columns(spots, [C.BAND, call, loc, lat, lon, C.DISTANCE, brg, C.SNR, C.POWER],
                  "the far stations of a map")
    df = pd.DataFrame({
        C.BAND: spots[C.BAND].astype(str).to_numpy(),
        C.FAR_CALL: spots[call].astype(str).to_numpy(),
        C.FAR_LOCATOR: spots[loc].astype(str).to_numpy(),
        C.FAR_LAT: spots[lat].to_numpy(dtype=float),
        C.FAR_LON: spots[lon].to_numpy(dtype=float),
        C.DISTANCE: spots[C.DISTANCE].to_numpy(dtype=float),
        C.BEARING: spots[brg].to_numpy(dtype=float),
        C.SNR_PER_W: snr_per_watt(spots[C.SNR].to_numpy(), spots[C.POWER].to_numpy()),
    })
    g = df.groupby([C.BAND, C.FAR_CALL], sort=False, observed=True)
    out = g.agg(**{
        C.FAR_LOCATOR: (C.FAR_LOCATOR, "first"),
        C.FAR_LAT: (C.FAR_LAT, "median"),
        C.FAR_LON: (C.FAR_LON, "median"),
        C.DISTANCE: (C.DISTANCE, "median"),
        C.BEARING: (C.BEARING, "median"),
        C.SNR_PER_W: (C.SNR_PER_W, "median"),
        C.COUNT: (C.SNR_PER_W, "size"),
    }).reset_index()
    return out


def _select_bands(df: pd.DataFrame, bands) -> list[str]:
    present = sort_bands(df[C.BAND].astype(str).unique()) if C.BAND in df else []
    if bands is None:
        return present
    wanted = [bands] if isinstance(bands, str) else list(bands)
    missing = [b for b in wanted if b not in present]
    if missing:
        raise UsageError(f"band(s) {', '.join(missing)} not in the data; present: "
                         f"{', '.join(present) or 'none'}")
    return sort_bands(wanted)


# --- A/B difference ----------------------------------------------------------------------
_LEVEL_KEY = {"receiver": C.FAR_CALL, "square": C.SQUARE, "field": C.FIELD}


def home_from_pairs(pairs: pd.DataFrame) -> str:
    """The locator of the station under test in a pairs table (the end that is not the far
    station).

    Examples
    --------
    >>> pairs = pd.DataFrame({"tx_locator": ["JO62qm", "JO62qm"],
    ...                       "rx_locator": ["JN58td", "IO91lk"],
    ...                       "far_locator": ["JN58td", "IO91lk"]})
    >>> home_from_pairs(pairs)
    'JO62qm'
    """
    if not len(pairs):
        raise UsageError("cannot tell the home station from an empty pairs table; give home")
    far_is_rx = (pairs[C.RX_LOCATOR].astype(str) == pairs[C.FAR_LOCATOR].astype(str)).mean()
    return _mode(pairs[C.TX_LOCATOR if far_is_rx >= 0.5 else C.RX_LOCATOR])


def _groups_and_pairs(result, pairs):
    groups = getattr(result, "groups", result)
    if pairs is None:
        pairs = getattr(result, "pairs", None)
    if not isinstance(groups, pd.DataFrame):
        raise UsageError("expected a ComparisonResult or its groups DataFrame")
    return groups, pairs


def difference_cells(result, *, level: Level = "auto", pairs: pd.DataFrame | None = None,
                     block_hours: float | None = DEFAULT_BLOCK_HOURS) -> pd.DataFrame:
    """Where each group of a comparison sits on the map and how it should be drawn.

    A cell held by one receiver (or a square with a few) is one or a few bootstrap
    clusters: resampling its pairs as if independent made every receiver of a three-day run
    "significant". Given a ComparisonResult, such cells are re-estimated with blocks of
    ``block_hours`` within each receiver as the clusters
    (:func:`spotkit.compare.cells.estimate_cells`), and a cell counts as significant only
    when its interval excludes 0 and its numbers could carry a verdict
    (:func:`spotkit.compare.estimate.too_little_data`: at least 5 clusters, at most 10 %
    failed resamples).

    Parameters
    ----------
    result : ComparisonResult or pandas.DataFrame
        From ``compare_antennas(..., by=(..., "receiver" | "square" | "field"))`` or its
        ``groups`` table (columns b_minus_a_db, ci_low_db, ci_high_db, both, only_a,
        only_b and the level's key; a bare table is taken as it is).
    level : {"auto", "receiver", "square", "field"}
        ``"auto"`` takes the finest key present.
    pairs : pandas.DataFrame, optional
        Pairs table for receiver positions (default ``result.pairs``).
    block_hours : float or None
        Length of the time blocks resampled within a receiver [h]; None keeps the
        result's intervals as they are.

    Returns
    -------
    pandas.DataFrame
        The groups with far_lat, far_lon [deg] (cell centre or receiver), cell_dlat,
        cell_dlon [deg] (0 for receivers), ``significant`` (the CI excludes 0 and the
        numbers carry a verdict), ``one_sided`` ("only_a" / "only_b" when just one antenna
        was heard there, else ""). Groups without an estimate (too few pairs) keep NaN and
        are drawn as grey rings. ``attrs["level"]``; ``attrs["block_hours"]`` (None when
        the intervals were taken as given).

    Examples
    --------
    A simulated day compared by locator field of the receiver; fields are placed at their
    centres, 10 by 20 deg. Fields with fewer than 5 receivers are re-estimated with 6-hour
    blocks of each receiver as the clusters; those with fewer than 5 clusters in all are
    not marked significant, however narrow their interval:

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=1, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> from spotkit.compare.estimate import compare_antennas
    >>> result = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=50,
    ...                           by="field", min_pairs=5)
    >>> result.groups["clusters"].head(3).tolist()
    [1, 2, 4]
    >>> cells = difference_cells(result)
    >>> cols = ["field_locator", "b_minus_a_db", "far_lat", "far_lon", "clusters",
    ...         "significant"]
    >>> print(cells[cols].head(3).round(2).to_string(index=False))
    field_locator  b_minus_a_db  far_lat  far_lon  clusters  significant
               DN          2.90     45.0   -110.0         4        False
               EM          2.92     35.0    -90.0         8         True
               JN          3.26     45.0     10.0        15         True
    >>> cells.attrs["level"]
    'field'
    """
    check_choice(level, LEVELS, "level")
    groups, pairs = _groups_and_pairs(result, pairs)
    if level == "auto":
        level = next((lv for lv in ("receiver", "square", "field")
                      if _LEVEL_KEY[lv] in groups.columns), None)
        if level is None:
            raise UsageError("the comparison has no receiver, square or field groups; run it "
                             "with by including 'receiver', 'square' or 'field'")
    key = _LEVEL_KEY[level]
    if key not in groups.columns:
        raise UsageError(f"the comparison has no {level!r} groups (no column {key!r})")
    hours = None
    if block_hours is not None and hasattr(result, "pairs") and hasattr(result, "by"):
        groups = estimate_cells(result, block_hours=block_hours)
        hours = groups.attrs.get("block_hours")
    g = groups.copy()
    if level == "receiver":
        if C.FAR_LAT in g.columns and C.FAR_LON in g.columns:
            pass
        elif pairs is not None and C.FAR_LAT in pairs.columns:
            pos = (pairs.groupby(pairs[C.FAR_CALL].astype(str), observed=True)
                   [[C.FAR_LAT, C.FAR_LON]].median())
            k = g[key].astype(str)
            g[C.FAR_LAT] = k.map(pos[C.FAR_LAT]).to_numpy(dtype=float)
            g[C.FAR_LON] = k.map(pos[C.FAR_LON]).to_numpy(dtype=float)
        else:
            raise UsageError("receiver positions unknown: pass the pairs table")
        g["cell_dlat"] = 0.0
        g["cell_dlon"] = 0.0
    else:
        lat, lon = locator_to_latlon(g[key].astype(str).to_numpy(), errors="coerce")
        dlon, dlat = locator_cell_size(g[key].astype(str).to_numpy())
        g[C.FAR_LAT], g[C.FAR_LON] = lat, lon
        g["cell_dlat"], g["cell_dlon"] = dlat, dlon
    lo = g[C.CI_LOW].to_numpy(dtype=float)
    hi = g[C.CI_HIGH].to_numpy(dtype=float)
    thin = np.array([bool(too_little_data(r)) for r in g.to_dict("records")], dtype=bool)
    g["significant"] = ((lo > 0) | (hi < 0)) & ~thin
    both = g[C.BOTH].to_numpy(dtype=float) if C.BOTH in g else np.ones(len(g))
    oa = g[C.ONLY_A].to_numpy(dtype=float)
    ob = g[C.ONLY_B].to_numpy(dtype=float)
    g["one_sided"] = np.where((both == 0) & (oa > 0) & (ob == 0), "only_a",
                              np.where((both == 0) & (ob > 0) & (oa == 0), "only_b", ""))
    g.attrs["level"] = level
    g.attrs["block_hours"] = hours
    return g


def symmetric_limit(values, *, percentile: float = 95.0, step: float = 0.5) -> float:
    """Half-range [dB] of a colour scale centred on 0 that covers ``percentile`` % of
    ``|values|``, rounded up to ``step`` (at least ``step``).

    Examples
    --------
    >>> symmetric_limit([0.3, -1.2, 2.6, -0.8]), symmetric_limit([-4.2, 1.0], percentile=100)
    (2.5, 4.5)
    >>> symmetric_limit([0.1]), symmetric_limit([])
    (0.5, 0.5)
    """
    v = np.abs(np.asarray(values, dtype=float))
    v = v[np.isfinite(v)]
    if not v.size:
        return step
    return float(max(step, step * np.ceil(np.percentile(v, percentile) / step)))


# --- a home given by the user --------------------------------------------------------------
def check_home(home, data_home, *, option: str = "--home", what: str = "the station under "
               "test") -> float:
    """Warn when a home given by the user is more than one locator square away from the
    station's own locator in the data (a typo such as ``JP62qm`` for ``JO62qm`` moves the map
    by 1000 km or more).

    Parameters
    ----------
    home : str or (float, float)
        The home the user gave (locator or (lat, lon) [deg]).
    data_home : str
        The locator of the station in the data (e.g. :func:`home_from_spots`).
    option : str
        The option the user typed, named in the warning.
    what : str
        What ``data_home`` is, for the warning.

    Returns
    -------
    float
        Geodesic distance between the two [km].

    Warns
    -----
    SpotkitWarning
        When the two are more than one square apart (1 deg of latitude or 2 deg of
        longitude beyond the neighbouring square).

    Examples
    --------
    >>> round(check_home("JO62qn", "JO62qm"))
    5
    """
    import warnings

    from spotkit.errors import LocatorError, SpotkitWarning
    from spotkit.geo.geodesic import geodesic_inverse

    h_lat, h_lon = home_latlon(home)
    try:
        d_lat, d_lon = home_latlon(data_home)
    except LocatorError:  # the data's own locator is bad: reported where it is read
        return float("nan")
    dist_km = float(np.asarray(geodesic_inverse(h_lat, h_lon, d_lat, d_lon)[0]) / 1e3)
    dlon = abs((h_lon - d_lon + 180.0) % 360.0 - 180.0)
    if abs(h_lat - d_lat) > 1.5 or dlon > 3.0:  # beyond the neighbouring 2 x 1 deg square
        given = home if isinstance(home, str) else f"{h_lat:.3f}, {h_lon:.3f}"
        warnings.warn(f"{option} {given} is {dist_km:,.0f} km from {data_home}, the locator "
                      f"of {what} in the data: the map is centred on {given}; check "
                      f"{option} for a typo, or leave it out to use {data_home}",
                      SpotkitWarning, stacklevel=2)
    return dist_km


# --- one antenna's spots -------------------------------------------------------------------
def antenna_spots(spots: pd.DataFrame, design: str, a: str, b: str | None = None, *,
                  schedule=None, change_at=None) -> dict[str, pd.DataFrame]:
    """The spots of antenna A and of antenna B, as the design tells them apart.

    ``simultaneous``: the transmitter call is A's or B's; ``receive``: the receiver call;
    ``alternating``: A's call, in the slots the schedule gives each antenna;
    ``before-after``: A's call before ``change_at`` (A) and from it on (B).

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table.
    design : {"simultaneous", "alternating", "receive", "before-after"}
    a, b : str
        Calls of A and B (``b`` defaults to ``a`` where the design has one call).
    schedule : str or pandas.DataFrame, optional
        Alternating design: the switching schedule
        (:func:`spotkit.compare.pairing.schedule_antennas`).
    change_at : str or pandas.Timestamp, optional
        Before-after design: when the antenna changed (UTC).

    Returns
    -------
    dict
        ``{"A": spots of A, "B": spots of B}``.

    Examples
    --------
    >>> spots = pd.DataFrame({"tx_call": ["Q1ABC", "Q1ABD", "Q1ABC"],
    ...                       "rx_call": ["Q2XY", "Q2XY", "Q3Z"]})
    >>> {k: len(v) for k, v in antenna_spots(spots, "simultaneous", "Q1ABC", "Q1ABD").items()}
    {'A': 2, 'B': 1}
    """
    from spotkit._validate import check_time
    from spotkit.compare.pairing import DESIGNS, schedule_antennas

    check_choice(design, DESIGNS, "design")
    if design in ("simultaneous", "receive"):
        if not b:
            raise UsageError(f"the {design} design has two calls: give --b as well as --a")
        col = C.TX_CALL if design == "simultaneous" else C.RX_CALL
        calls = spots[col].astype(str).str.upper()
        return {"A": spots[(calls == a.upper()).to_numpy()],
                "B": spots[(calls == b.upper()).to_numpy()]}
    own = spots[(spots[C.TX_CALL].astype(str).str.upper() == a.upper()).to_numpy()]
    if design == "alternating":
        if schedule is None:
            raise UsageError("the alternating design needs --schedule to tell A from B")
        which = schedule_antennas(own[C.SLOT], own[C.BAND].astype(str), schedule)
    else:
        if change_at is None:
            raise UsageError("the before-after design needs --change-at to tell A from B")
        t = check_time(change_at, "--change-at")
        which = np.where(pd.to_datetime(own[C.SLOT], utc=True) < t, 0, 1)
    return {"A": own[which == 0], "B": own[which == 1]}


def result_antenna_spots(spots: pd.DataFrame, result) -> dict[str, pd.DataFrame] | None:
    """The spots of A and of B for a comparison's coverage maps, or None to pool them.

    Uses the design, calls, schedule and change time the comparison ``result`` (a
    :class:`~spotkit.compare.estimate.ComparisonResult`) was made with; None where they
    cannot tell A from B again (an alternating schedule given as a table) or one antenna
    has no spots, so the caller draws the pooled map (whose title says it is pooled).

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> spots = pd.DataFrame({"tx_call": ["Q1ABC", "Q1ABD", "Q1ABC"],
    ...                       "rx_call": ["Q2XY", "Q2XY", "Q3Z"]})
    >>> res = SimpleNamespace(design="simultaneous", a="Q1ABC", b="Q1ABD", options={})
    >>> {k: len(v) for k, v in result_antenna_spots(spots, res).items()}
    {'A': 2, 'B': 1}
    """
    opts = getattr(result, "options", None) or {}
    schedule = opts.get("schedule")
    if result.design == "alternating" and (schedule is None or schedule == "table"):
        return None
    try:
        sets = antenna_spots(spots, result.design, result.a, result.b,
                             schedule=schedule if result.design == "alternating" else None,
                             change_at=opts.get("change_at"))
    except SpotkitError:
        return None
    return None if any(part.empty for part in sets.values()) else sets


# --- reach -------------------------------------------------------------------------------
def reach_stations(pairs: pd.DataFrame, band=None) -> pd.DataFrame:
    """One row per far station (and band): whether A and B reached it.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots`.
    band : str or list of str, optional

    Returns
    -------
    pandas.DataFrame
        Columns band, far_call, far_lat, far_lon [deg], distance_km [km], heard_a, heard_b
        (bool: at least one pair where that antenna was heard).

    Examples
    --------
    >>> nan = float("nan")
    >>> pairs = pd.DataFrame({
    ...     "band": ["20m", "20m", "20m", "40m"], "far_call": ["Q2XY", "Q2XY", "Q3DEF", "Q2XY"],
    ...     "far_lat": [48.15, 48.15, 51.44, 48.15], "far_lon": [11.62, 11.62, -1.04, 11.62],
    ...     "distance_km": [502.3, 502.3, 996.2, 502.3],
    ...     "snr_a_db": [-20.0, nan, nan, -22.0], "snr_b_db": [-17.0, -21.0, -25.0, nan]})
    >>> print(reach_stations(pairs).to_string(index=False))
    band far_call  far_lat  far_lon  distance_km  heard_a  heard_b
     20m     Q2XY    48.15    11.62        502.3     True     True
     20m    Q3DEF    51.44    -1.04        996.2    False     True
     40m     Q2XY    48.15    11.62        502.3     True    False
    >>> len(reach_stations(pairs, band="40m"))
    1
    """
    df = pairs
    if band is not None:
        wanted = [band] if isinstance(band, str) else list(band)
        df = df[df[C.BAND].astype(str).isin(wanted)]
    ha = df[C.HEARD_A] if C.HEARD_A in df else df[C.SNR_A].notna()
    hb = df[C.HEARD_B] if C.HEARD_B in df else df[C.SNR_B].notna()
    frame = pd.DataFrame({
        C.BAND: df[C.BAND].astype(str).to_numpy(),
        C.FAR_CALL: df[C.FAR_CALL].astype(str).to_numpy(),
        C.FAR_LAT: df[C.FAR_LAT].to_numpy(dtype=float),
        C.FAR_LON: df[C.FAR_LON].to_numpy(dtype=float),
        C.DISTANCE: df[C.DISTANCE].to_numpy(dtype=float),
        C.HEARD_A: np.asarray(ha, dtype=bool),
        C.HEARD_B: np.asarray(hb, dtype=bool),
    })
    return (frame.groupby([C.BAND, C.FAR_CALL], sort=False)
            .agg(**{C.FAR_LAT: (C.FAR_LAT, "median"), C.FAR_LON: (C.FAR_LON, "median"),
                    C.DISTANCE: (C.DISTANCE, "median"), C.HEARD_A: (C.HEARD_A, "any"),
                    C.HEARD_B: (C.HEARD_B, "any")})
            .reset_index())


__all__ = ["SIDES", "LEVELS", "FULL_EXTENT_KM", "NEAR_RADII_KM", "home_latlon", "auto_extent_km",
           "near_radius_km", "check_home", "antenna_spots", "result_antenna_spots",
           "resolve_side", "home_from_spots", "far_station_summary", "home_from_pairs",
           "difference_cells", "symmetric_limit", "reach_stations"]
