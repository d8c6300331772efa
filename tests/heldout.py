"""An independent, deliberately simple spot generator for held-out checks of the comparison.

It shares no code with :mod:`spotkit.sim.simulate`: a different model, written separately, so
that the estimator is not only checked against the simulator it was developed with.

Model (all invented; test-only):

* one transmitting site with two calls ``Q1HOA`` (antenna A) and ``Q1HOB`` (antenna B) on
  the air in the same slots (simultaneous design), or, with ``design="receive"``, two
  co-located receivers ``Q1HOA`` / ``Q1HOB`` hearing many transmitters;
* far stations at uniformly random points of the sphere between latitudes -60 and 70 deg,
  with 4- or 6-character locators, each with a decode threshold of -28 or -30 dB (the
  two home receivers of the receive design: -28 dB);
* each slot uses one band (cycling through ``bands``); a far station hears the slot's path
  open with probability ``p_open``;
* per pair a common level (per W) drawn from a right-skewed distribution that puts many
  pairs near threshold: ``level = floor_db + Gamma(shape 1.6, scale 7 dB)`` (both
  settable; or flat, ``level_dist="uniform"``) minus distance / 2000 km [dB]; the true
  difference is a constant per band x distance cell (``truth``), plus an optional per-far-
  station random effect; independent Gaussian fast fading per antenna; raw SNR = per-W
  SNR + (power - 30) rounded to whole dB; a report exists only at or above threshold.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.geo.geodesic import add_path_columns
from spotkit.geo.locator import latlon_to_locator

HOME = "JN47ab"
CALL_A, CALL_B = "Q1HOA", "Q1HOB"
DISTANCE_EDGES = (0.0, 3000.0, 8000.0, 20100.0)


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
            rows.append({C.BAND: band, C.DISTANCE_MIN: lo, C.DISTANCE_MAX: hi,
                         C.B_MINUS_A: v})
    return pd.DataFrame(rows)


def generate(*, n_far: int = 600, n_slots: int = 240, bands=("20m", "10m"),
             power_a_dbm: float = 37.0, power_b_dbm: float = 30.0, p_open: float = 0.5,
             floor_db: float = -40.0, level_shape: float = 1.6, level_scale_db: float = 7.0,
             level_dist: str = "gamma",
             fading_db: float = 1.5, station_sd_db: float = 0.0,
             design: str = "simultaneous", truth: pd.DataFrame | None = None,
             seed: int = 0, start="2026-03-01T00:00Z"):
    """Generate a canonical spot table and its truth.

    Returns
    -------
    spots : pandas.DataFrame
        Canonical enriched spot table.
    truth : pandas.DataFrame
        band, distance_min_km, distance_max_km, b_minus_a_db (the cell constant) and
        ``pairs`` (pairs with at least one antenna heard, counted from the generator).
    """
    rng = np.random.default_rng(seed)
    truth = default_truth(bands) if truth is None else truth
    # far stations: uniform on the sphere between -60 and 70 deg latitude
    z = rng.uniform(np.sin(np.deg2rad(-60)), np.sin(np.deg2rad(70)), n_far)
    lat = np.rad2deg(np.arcsin(z))
    lon = rng.uniform(-180, 180, n_far)
    prec = np.where(rng.random(n_far) < 0.5, 4, 6)
    loc = np.where(prec == 4, latlon_to_locator(lat, lon, 4), latlon_to_locator(lat, lon, 6))
    far_calls = _calls(rng, n_far, "Q7")
    thr = np.where(rng.random(n_far) < 0.7, -28.0, -30.0)
    station_eff = rng.normal(0.0, station_sd_db, n_far) if station_sd_db > 0 else np.zeros(
        n_far)
    # distance of each far station from home (via the project's geodesic, one per station)
    geo = add_path_columns(pd.DataFrame({C.TX_LOCATOR: [HOME] * n_far, C.RX_LOCATOR: loc}))
    dist = geo[C.DISTANCE].to_numpy()
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
        table[list(bands).index(r[C.BAND]), int(np.searchsorted(edges, r[C.DISTANCE_MIN]))] = \
            r[C.B_MINUS_A]
    band_idx = np.arange(n_slots) % len(bands)
    delta = table[band_idx[si], cell] + station_eff[fi]
    if level_dist == "gamma":
        spread = rng.gamma(level_shape, level_scale_db, fi.size)
    else:  # "uniform": flat between floor_db and floor_db + level_scale_db
        spread = rng.uniform(0.0, level_scale_db, fi.size)
    level = floor_db + spread - dist[fi] / 2000.0
    if design == "receive":  # the far transmitters run 1 W; A and B are receivers
        power_a_dbm = power_b_dbm = 30.0
    snr_a = level + rng.normal(0, fading_db, fi.size) + (power_a_dbm - 30)
    snr_b = level + delta + rng.normal(0, fading_db, fi.size) + (power_b_dbm - 30)
    ra, rb = np.round(snr_a), np.round(snr_b)
    # the deciding receiver's threshold: the far station's (simultaneous) or the home
    # receivers' own, -28 dB for both (receive)
    t_rx = thr[fi] if design == "simultaneous" else np.full(fi.size, -28.0)
    ha, hb = ra >= t_rx, rb >= t_rx
    any_ = ha | hb
    pairs_truth = pd.DataFrame({C.BAND: band[any_], "_cell": cell[any_],
                                "_delta": delta[any_]})
    # reports
    rows = []
    for heard, raw, call, pw in ((ha, ra, CALL_A, power_a_dbm), (hb, rb, CALL_B,
                                                                  power_b_dbm)):
        n = int(heard.sum())
        if design == "simultaneous":
            tx_call, tx_loc = np.full(n, call), np.full(n, HOME)
            rx_call, rx_loc = far_calls[fi[heard]], loc[fi[heard]]
        else:  # receive: the far stations transmit, A and B are the home receivers
            tx_call, tx_loc = far_calls[fi[heard]], loc[fi[heard]]
            rx_call, rx_loc = np.full(n, call), np.full(n, HOME)
        rows.append(pd.DataFrame({
            C.SLOT: slots[si[heard]], C.TX_CALL: tx_call, C.TX_LOCATOR: tx_loc,
            C.RX_CALL: rx_call, C.RX_LOCATOR: rx_loc, C.BAND: band[heard],
            C.SNR: raw[heard], C.POWER: np.full(n, pw)}))
    spots = pd.concat(rows, ignore_index=True)
    spots[C.TIME] = spots[C.SLOT]
    spots[C.FREQ] = np.where(spots[C.BAND] == "20m", 14.0971e6, 28.1261e6)
    spots[C.DRIFT] = 0.0
    spots = add_path_columns(spots)
    spots[C.SOURCE_FILE] = "heldout"
    spots[C.SOURCE_ROW] = np.arange(1, len(spots) + 1)
    spots = C.apply_dtypes(spots[C.CANONICAL])
    cells = pairs_truth.groupby([C.BAND, "_cell"]).agg(
        **{C.B_MINUS_A: ("_delta", "mean"), "pairs": ("_delta", "size")}).reset_index()
    cells[C.DISTANCE_MIN] = edges[cells["_cell"].to_numpy()]
    cells[C.DISTANCE_MAX] = edges[cells["_cell"].to_numpy() + 1]
    return spots, cells.drop(columns="_cell")
