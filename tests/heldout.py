"""An independent, deliberately simple spot generator for held-out checks of the comparison.

It shares no code with the package: it imports nothing from ``spotkit`` (a test checks
this), writes its own Maidenhead encoding and decoding, takes distances and bearings from
pyproj's geodesic on WGS-84 (Karney's algorithm, the reference library), and spells the
canonical column names and dtypes out itself. A different model, written separately, so
that the estimator is not only checked against the simulator it was developed with.

Model (all invented; test-only):

* one transmitting site with two calls ``Q1HOA`` (antenna A) and ``Q1HOB`` (antenna B) on
  the air in the same slots (simultaneous design), or, with ``design="receive"``, two
  co-located receivers ``Q1HOA`` / ``Q1HOB`` hearing many transmitters;
* far stations at uniformly random points of the sphere between latitudes -60 and 70 deg,
  with 4- or 6-character locators, each with a decode threshold (50 % point) of -28 or
  -30 dB, plus an optional normal offset per station (``threshold_sd_db``; the two home
  receivers of the receive design: -28 dB both);
* each slot uses one band (cycling through ``bands``); a far station hears the slot's path
  open with probability ``p_open``;
* per pair a common level (per W) drawn from a right-skewed distribution that puts many
  pairs near threshold: ``level = floor_db + Gamma(shape 1.6, scale 7 dB)`` (both
  settable; or flat, ``level_dist="uniform"``) minus distance / 2000 km [dB];
* the true difference is a constant per band x distance cell (``truth``) - so it depends on
  the path - plus a per-far-station random effect (``station_sd_db``, normal);
* independent fast fading per antenna, normal with SD ``fading_db`` or Student t with
  ``fading_df`` degrees of freedom scaled to the same SD (heavy tails);
* raw SNR = per-W SNR + (power - 30); the report is the raw SNR rounded to whole dB
  (``report_step_db=1``, default), to a finer step, or the raw value itself (0);
* detection: the decision is taken on the rounded report (``threshold_on="rounded"``,
  default) or on the raw SNR (``"raw"``), against the threshold t50: a hard threshold
  (``detection_width_db=0``, default: decoded when at or above it) or a soft detection
  curve, decoded with probability ``Phi((s - t50) / width)``.

The defaults reproduce the earlier version of this generator draw for draw; the extra
regimes draw from a stream of their own (Student t fading replaces the normal draw).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from pyproj import Geod
from scipy.stats import norm

HOME = "JN47ab"
CALL_A, CALL_B = "Q1HOA", "Q1HOB"
DISTANCE_EDGES = (0.0, 3000.0, 8000.0, 20100.0)

# the canonical spot table's column names and dtypes, spelled out (a data contract)
_UTC = "datetime64[ns, UTC]"
CANONICAL_DTYPES = {
    "time_utc": _UTC, "slot_utc": _UTC, "tx_call": "category", "tx_locator": "category",
    "rx_call": "category", "rx_locator": "category", "freq_hz": "float64",
    "band": "category", "snr_db": "float64", "power_dbm": "float64", "drift_hz": "float64",
    "tx_lat": "float64", "tx_lon": "float64", "rx_lat": "float64", "rx_lon": "float64",
    "distance_km": "float64", "bearing_deg": "float64", "reverse_bearing_deg": "float64",
    "source_file": "category", "source_row": "int64",
}
BAND, D_MIN, D_MAX, TRUE = "band", "distance_min_km", "distance_max_km", "b_minus_a_db"
# audio 1500 Hz above the customary beacon dial frequencies (common practice)
_FREQ_HZ = {"40m": 7.0401e6, "30m": 10.1402e6, "20m": 14.0971e6, "10m": 28.1261e6}
_GEOD = Geod(ellps="WGS84")


# --- Maidenhead, written here -------------------------------------------------------------
def to_locator(lat, lon, precision: int):
    """Maidenhead locators (4 or 6 characters) of points [deg]; 5' x 2.5' subsquares."""
    x = np.floor((np.asarray(lon, float) + 180.0) * 12.0).astype(int)  # 5' columns
    y = np.floor((np.asarray(lat, float) + 90.0) * 24.0).astype(int)  # 2.5' rows
    up = np.array(list("ABCDEFGHIJKLMNOPQR"))
    low = np.array(list("abcdefghijklmnopqrstuvwx"))
    loc = np.char.add(np.char.add(up[x // 240], up[y // 240]),
                      np.char.add(((x % 240) // 24).astype(str), ((y % 240) // 24).astype(str)))
    if precision == 6:
        loc = np.char.add(loc, np.char.add(low[x % 24], low[y % 24]))
    return loc.astype(object)


def locator_centre(locators):
    """Centre [deg] of each 4- or 6-character locator's cell: (lat, lon)."""
    loc = pd.Series(np.asarray(locators, dtype=object)).astype(str).str.upper()
    lon = (-180.0 + 20.0 * (loc.str[0].map(ord) - 65) + 2.0 * loc.str[2].astype(int))
    lat = (-90.0 + 10.0 * (loc.str[1].map(ord) - 65) + 1.0 * loc.str[3].astype(int))
    six = loc.str.len() == 6
    sub_x = (loc.str[4].fillna("A").map(ord) - 65 + 0.5) / 12.0
    sub_y = (loc.str[5].fillna("A").map(ord) - 65 + 0.5) / 24.0
    lon = np.where(six, lon + sub_x, lon + 1.0)
    lat = np.where(six, lat + sub_y, lat + 0.5)
    return np.asarray(lat, float), np.asarray(lon, float)


def _calls(rng, n, prefix):
    letters = np.array(list("ABCDEFGHIJKLMNOPQRSTUVWXYZ"))
    body = letters[rng.integers(0, 26, size=(n * 3, 3))]
    names = pd.unique(np.array([prefix + "".join(r) for r in body]))
    return names[:n]


def default_truth(bands=("20m", "10m")) -> pd.DataFrame:
    """A constant true B-minus-A [dB] per band x distance cell (test-only values)."""
    vals = {"20m": (0.4, -0.6, 1.1), "10m": (1.7, 0.2, -1.3), "40m": (-0.8, 0.9, 0.0)}
    rows = []
    for band in bands:
        cells = zip(DISTANCE_EDGES[:-1], DISTANCE_EDGES[1:], strict=True)
        for (lo, hi), v in zip(cells, vals[band], strict=True):
            rows.append({BAND: band, D_MIN: lo, D_MAX: hi, TRUE: v})
    return pd.DataFrame(rows)


def overall_truth(cells: pd.DataFrame) -> float:
    """Mean true B-minus-A over all pairs heard by at least one antenna [dB] (the cells'
    values weighted by their pairs)."""
    w = cells["pairs"].to_numpy(float)
    return float(np.sum(w * cells[TRUE].to_numpy(float)) / w.sum())


def generate(*, n_far: int = 600, n_slots: int = 240, bands=("20m", "10m"),
             power_a_dbm: float = 37.0, power_b_dbm: float = 30.0, p_open: float = 0.5,
             floor_db: float = -40.0, level_shape: float = 1.6, level_scale_db: float = 7.0,
             level_dist: str = "gamma",
             fading_db: float = 1.5, station_sd_db: float = 0.0,
             design: str = "simultaneous", truth: pd.DataFrame | None = None,
             seed: int = 0, start="2026-03-01T00:00Z", report_step_db: float = 1.0,
             threshold_on: str = "rounded", detection_width_db: float = 0.0,
             fading_df: float | None = None, threshold_sd_db: float = 0.0,
             truth_only: bool = False):
    """Generate a canonical spot table and its truth.

    Parameters
    ----------
    n_far, n_slots : int
        Far stations (at most 17,000: calls Q7 plus three letters) and slots (every other
        2-minute slot, bands in turn).
    bands : sequence of str
        Bands (``default_truth`` knows 20m, 10m and 40m).
    power_a_dbm, power_b_dbm : float
        Transmit powers of A and B [dBm] (simultaneous design).
    p_open : float
        Probability that a (far station, slot) path is open.
    floor_db, level_shape, level_scale_db, level_dist :
        Level distribution per pair (module docstring) [dB].
    fading_db : float
        SD of the fast fading per antenna and report [dB].
    station_sd_db : float
        SD of the per-far-station random effect on B-A [dB] (part of the truth).
    design : {"simultaneous", "receive"}
    truth : pandas.DataFrame, optional
        band, distance_min_km, distance_max_km, b_minus_a_db (default :func:`default_truth`).
    seed : int
    start : str
        First slot (UTC).
    report_step_db : float
        Reports are the raw SNR rounded to this step [dB]: 1 (default) whole dB; 0.1 is
        practically the raw SNR (rounding error SD 0.03 dB) and keeps the number of
        distinct values, and so the comparison's work, moderate; 0: the raw SNR itself.
    threshold_on : {"rounded", "raw"}
        Decide on the rounded report or on the raw SNR.
    detection_width_db : float
        Width of the soft detection curve [dB]; 0: hard threshold.
    fading_df : float, optional
        Student t fast fading with this many (> 2) degrees of freedom, same SD.
    threshold_sd_db : float
        SD of a normal offset added to each far station's threshold [dB].
    truth_only : bool
        Skip building the spot table (returned as None): for a large population whose
        truth is all that is wanted.

    Returns
    -------
    spots : pandas.DataFrame or None
        Canonical enriched spot table.
    truth : pandas.DataFrame
        band, distance_min_km, distance_max_km, b_minus_a_db (mean true difference over
        the cell's pairs with at least one antenna heard) and ``pairs`` (their number).
    """
    if threshold_on not in ("rounded", "raw"):
        raise ValueError(f"threshold_on must be 'rounded' or 'raw', not {threshold_on!r}")
    if not 0 < n_far <= 17000:
        raise ValueError(f"n_far must be 1 to 17,000, not {n_far}")
    if fading_df is not None and not fading_df > 2:
        raise ValueError("fading_df must be above 2")
    rng = np.random.default_rng(seed)
    aux = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(7,)))
    truth = default_truth(bands) if truth is None else truth
    # far stations: uniform on the sphere between -60 and 70 deg latitude
    z = rng.uniform(np.sin(np.deg2rad(-60)), np.sin(np.deg2rad(70)), n_far)
    lat = np.rad2deg(np.arcsin(z))
    lon = rng.uniform(-180, 180, n_far)
    prec = np.where(rng.random(n_far) < 0.5, 4, 6)
    loc = np.where(prec == 4, to_locator(lat, lon, 4), to_locator(lat, lon, 6))
    far_calls = _calls(rng, n_far, "Q7")
    thr = np.where(rng.random(n_far) < 0.7, -28.0, -30.0)
    if threshold_sd_db > 0:
        thr = thr + aux.normal(0.0, threshold_sd_db, n_far)
    station_eff = rng.normal(0.0, station_sd_db, n_far) if station_sd_db > 0 else np.zeros(
        n_far)
    # path geometry between the locator centres (what a reader of the reports can know)
    home_lat, home_lon = locator_centre([HOME])
    far_lat, far_lon = locator_centre(loc)
    az, back, dist_m = _GEOD.inv(np.full(n_far, home_lon[0]), np.full(n_far, home_lat[0]),
                                 far_lon, far_lat)
    dist = np.asarray(dist_m) / 1000.0
    # slots and bands
    t0 = pd.Timestamp(start)
    slots = t0 + pd.to_timedelta(np.arange(n_slots) * 2 * 2, unit="min")  # every other slot
    band_of_slot = np.asarray(bands)[np.arange(n_slots) % len(bands)]
    # all (far, slot) combinations with the path open
    fi, si = np.meshgrid(np.arange(n_far), np.arange(n_slots), indexing="ij")
    fi, si = fi.ravel(), si.ravel()
    open_ = rng.random(fi.size) < p_open
    fi, si = fi[open_], si[open_]
    band = band_of_slot[si]
    edges = np.asarray(DISTANCE_EDGES)
    cell = np.clip(np.searchsorted(edges, dist[fi], side="right") - 1, 0, edges.size - 2)
    table = np.full((len(bands), edges.size - 1), np.nan)
    for r in truth.to_dict("records"):
        table[list(bands).index(r[BAND]), int(np.searchsorted(edges, r[D_MIN]))] = r[TRUE]
    band_idx = np.arange(n_slots) % len(bands)
    delta = table[band_idx[si], cell] + station_eff[fi]
    if level_dist == "gamma":
        spread = rng.gamma(level_shape, level_scale_db, fi.size)
    else:  # "uniform": flat between floor_db and floor_db + level_scale_db
        spread = rng.uniform(0.0, level_scale_db, fi.size)
    level = floor_db + spread - dist[fi] / 2000.0
    if design == "receive":  # the far transmitters run 1 W; A and B are receivers
        power_a_dbm = power_b_dbm = 30.0

    def fading():
        if fading_df is None:
            return rng.normal(0, fading_db, fi.size)
        return rng.standard_t(fading_df, fi.size) * fading_db * np.sqrt(
            (fading_df - 2.0) / fading_df)

    raw_a = level + fading() + (power_a_dbm - 30)
    raw_b = level + delta + fading() + (power_b_dbm - 30)
    if report_step_db > 0:
        ra = np.round(raw_a / report_step_db) * report_step_db
        rb = np.round(raw_b / report_step_db) * report_step_db
    else:
        ra, rb = raw_a, raw_b
    # the deciding receiver's threshold: the far station's (simultaneous) or the home
    # receivers' own, -28 dB for both (receive)
    t_rx = thr[fi] if design == "simultaneous" else np.full(fi.size, -28.0)
    sa, sb = (raw_a, raw_b) if threshold_on == "raw" else (ra, rb)
    if detection_width_db > 0:
        ha = aux.random(fi.size) < norm.cdf((sa - t_rx) / detection_width_db)
        hb = aux.random(fi.size) < norm.cdf((sb - t_rx) / detection_width_db)
    else:
        ha, hb = sa >= t_rx, sb >= t_rx
    any_ = ha | hb
    pairs_truth = pd.DataFrame({BAND: band[any_], "_cell": cell[any_], "_delta": delta[any_]})
    cells = pairs_truth.groupby([BAND, "_cell"]).agg(
        **{TRUE: ("_delta", "mean"), "pairs": ("_delta", "size")}).reset_index()
    cells[D_MIN] = edges[cells["_cell"].to_numpy()]
    cells[D_MAX] = edges[cells["_cell"].to_numpy() + 1]
    cells = cells.drop(columns="_cell")
    if truth_only:
        return None, cells
    # reports
    rows = []
    for heard, rep, call, pw in ((ha, ra, CALL_A, power_a_dbm),
                                 (hb, rb, CALL_B, power_b_dbm)):
        n = int(heard.sum())
        f = fi[heard]
        home = (np.full(n, call), np.full(n, HOME), np.full(n, home_lat[0]),
                np.full(n, home_lon[0]))
        away = (far_calls[f], loc[f], far_lat[f], far_lon[f])
        # bearing: at the transmitter towards the receiver; reverse: the other way
        fwd, rev = np.mod(az[f], 360.0), np.mod(back[f], 360.0)
        if design == "simultaneous":
            tx, rx, bearing, reverse = home, away, fwd, rev
        else:  # receive: the far stations transmit, A and B are the home receivers
            tx, rx, bearing, reverse = away, home, rev, fwd
        rows.append(pd.DataFrame({
            "slot_utc": slots[si[heard]], "tx_call": tx[0], "tx_locator": tx[1],
            "rx_call": rx[0], "rx_locator": rx[1], "band": band[heard],
            "snr_db": rep[heard], "power_dbm": np.full(n, pw),
            "tx_lat": tx[2], "tx_lon": tx[3], "rx_lat": rx[2], "rx_lon": rx[3],
            "distance_km": dist[f], "bearing_deg": bearing, "reverse_bearing_deg": reverse}))
    spots = pd.concat(rows, ignore_index=True)
    spots["time_utc"] = spots["slot_utc"]
    spots["freq_hz"] = spots["band"].map(_FREQ_HZ).astype(float)
    spots["drift_hz"] = 0.0
    spots["source_file"] = "heldout"
    spots["source_row"] = np.arange(1, len(spots) + 1)
    spots = spots[list(CANONICAL_DTYPES)].astype(CANONICAL_DTYPES)
    return spots, cells
