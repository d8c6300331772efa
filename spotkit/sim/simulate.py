"""Spot simulator with known truth: invented stations, propagation and two antennas A and B.

Model (each part a parameter; defaults in :class:`Propagation`):

* Stations. Far stations are placed at random in a small built-in table of weighted lat/lon
  boxes where amateur stations plausibly are (:data:`spotkit.sim.stations.STATION_REGIONS`);
  each gets an invented Q-prefix call, a 6-character locator (some 4-character), a
  noise-floor offset (normal, ``noise_sd_db``), a decode threshold near -28 dB (some -30),
  the bands it listens to and an uptime (each hour on the air with that probability).
* Links. For every (transmitter site, receiver site) link on a band, per 2-minute slot:
  the path is *open* when ``logit(band, distance, midpoint local hour) + daily condition +
  latent`` is above zero, the latent being a slowly varying AR(1) process (so openings
  last tens of minutes); the mean SNR at 1 W with isotropic antennas falls with distance
  (``level_1000km - slope log10(d / 1000 km) - hop_loss * (hops - 1)``); a daily condition
  factor per band shifts level and openness; *slow fading* (AR(1) per link, plus a
  per-receiver component) is shared by everything on that link in the slot, *fast fading*
  is independent per antenna and report.
* Antennas. Gain tables over elevation and bearing (:mod:`spotkit.sim.antenna`); the elevation
  of a path comes from the mirror hop geometry (:func:`spotkit.geo.geodesic.elevation_angle`).
  ``SNR = P - 30 + G_tx + G_rx + level - noise + fading``; the report is the SNR rounded to
  whole dB, kept only if at or above the receiver's threshold.
* Decoder and station regimes (all off by default, which keeps the behaviour above):
  a *soft detection curve* - a report exists with probability ``Phi((s - t50) / w)``
  (``detection_width_db`` w; the receiver's threshold is its 50 % point t50); the decision
  taken on the *raw* SNR before rounding to whole dB (``threshold_on="raw"``) instead of on
  the rounded report; *heavy-tailed fast fading*, Student t with
  ``Propagation.fast_fading_df`` degrees of freedom scaled to the same standard deviation;
  receiver thresholds that differ (``threshold_sd_db``, normal, added to each far
  receiver's threshold); and a *receiver-level spread of B-A* (``difference_sd_db``: a
  normal random effect per far station, added to B's gain towards it on every band).
  B-A also depends on the path through the two antennas' patterns (elevation and bearing),
  so with the default antennas no two receivers share the same true difference.
* Designs: ``"simultaneous"`` (two calls, same slot), ``"alternating"`` (one call, antenna
  by schedule), ``"receive"`` (two co-located receivers hearing a population of
  transmitters), ``"before-after"`` (one call whose antenna changes at ``change_at``, with
  control stations near home on the air).

Truth. The true B-minus-A difference of a pair is the gain difference of the two antennas
towards that far station (transmit designs: transmit gain; receive design: receive gain),
in dB - i.e. the difference of the SNRs normalised to 1 W with the fading averaged out.
:class:`spotkit.sim.truth.Truth` keeps one row per pair in which at least one antenna was
heard. Pairs are: simultaneous, receiver x slot; receive, transmitter x slot; alternating,
receiver x (A slot, neighbouring B slot), on-air A and B slots being matched one to one in
time order, either order, at most one slot apart; before-after, every report of the target
(A before the change, B after).

Output. :func:`simulate_spots` returns the canonical spot table (as the ingest would make
it: glossary dtypes, enriched with :func:`spotkit.geo.geodesic.add_path_columns`, no duplicates);
:func:`spotkit.sim.layouts.write_foreign_csv` writes it in invented CSV layouts (other
headings, delimiters, units and time formats, optional duplicate uploads and corrupted rows)
and returns what the reader needs; :func:`make_demo_data` writes the demo scenario of
``demo_data/``. The truth, the station populations and the CSV layouts live in
:mod:`spotkit.sim.truth`, :mod:`spotkit.sim.stations` and :mod:`spotkit.sim.layouts`; their public
names are re-exported here (``simulate.Truth``, ``simulate.write_foreign_csv``, ...).

Known error: this is a plausibility model for testing estimators, not a propagation
prediction. The day/night term uses local mean solar time at the path midpoint (no season),
there is one reflection height, no multipath beyond the fading terms, and the far
stations' antennas are isotropic with a random gain folded into the noise offset.
"""
from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd
from scipy.signal import lfilter
from scipy.special import ndtr
from tqdm.auto import tqdm

from spotkit import columns as C
from spotkit._validate import check_choice, check_time
from spotkit.bands import BEACON_DIAL_KHZ
from spotkit.errors import LocatorError, UsageError
from spotkit.geo.geodesic import (
    add_path_columns,
    elevation_angle,
    geodesic_inverse,
    hop_count,
    path_midpoint,
)
from spotkit.geo.locator import latlon_to_locator, locator_to_latlon, normalize_locator
from spotkit.sim.antenna import Antenna, constant_difference, isotropic_antenna, make_antenna
from spotkit.sim.layouts import write_foreign_csv
from spotkit.sim.stations import invent_calls, place_stations
from spotkit.sim.truth import Truth
from spotkit.units import POWER_LADDER_DBM

Design = Literal["simultaneous", "alternating", "receive", "before-after"]
DESIGNS = ("simultaneous", "alternating", "receive", "before-after")
ThresholdOn = Literal["rounded", "raw"]
#: What the decode decision is taken on: the whole-dB report or the raw SNR.
THRESHOLD_ON = ("rounded", "raw")

# band -> (SNR at 1 W, 1000 km, isotropic [dB]; open logit at night; open logit by day;
#          skip distance [km]) - invented, loosely after common practice on each band
_BAND_MODEL = {
    "2200m": (-28.0, -0.5, -3.0, 0.0), "630m": (-22.0, 0.0, -3.0, 0.0),
    "160m": (-10.0, 0.5, -3.0, 0.0), "80m": (-8.0, 1.0, -1.5, 0.0),
    "60m": (-8.0, 1.0, -0.5, 0.0), "40m": (-7.0, 1.5, 0.5, 200.0),
    "30m": (-7.0, 1.0, 0.8, 400.0), "20m": (-8.0, -0.3, 1.8, 700.0),
    "17m": (-9.0, -1.5, 1.5, 900.0), "15m": (-10.0, -2.5, 1.2, 1000.0),
    "12m": (-11.0, -3.0, 1.0, 1100.0), "10m": (-12.0, -3.5, 0.9, 1200.0),
    "6m": (-15.0, -5.0, -1.5, 1500.0),
}


@dataclass(frozen=True)
class Propagation:
    """Parameters of the propagation and reporting model.

    Attributes
    ----------
    layer_height_km : float
        Virtual reflection height of the hop geometry [km].
    hop_loss_db : float
        Extra loss per hop beyond the first [dB].
    distance_slope_db : float
        Fall of the mean SNR per decade of distance [dB/decade].
    sigma_slow_db : float
        Slow fading per link, shared by both antennas in a slot [dB].
    slow_corr_minutes : float
        Correlation time of the slow fading (AR(1)) [min].
    sigma_receiver_db : float
        Per receiver and slot fluctuation shared by all its paths (noise floor) [dB].
    sigma_fast_db : float
        Fast fading, independent per antenna and report [dB].
    sigma_day_db : float
        Daily condition factor per band [dB]; also shifts the openness logit by 0.3/dB.
    open_sd : float
        Spread of the latent openness process [logit units].
    open_corr_minutes : float
        Correlation time of openness [min].
    skip_penalty : float
        Openness penalty inside the skip distance [logit units] (at zero distance).
    skip_loss_db : float
        Signal loss inside the skip distance [dB] (at zero distance).
    noise_sd_db : float
        Spread of the receivers' noise-floor offsets [dB].
    listen_fraction : float
        Probability that a far receiver listens on a given band.
    uptime_range : tuple of float
        Range of the far receivers' uptime (probability of being on in an hour).
    locator4_fraction : float
        Fraction of far stations giving a 4-character locator.
    fast_fading_df : float, optional
        Degrees of freedom (> 2) of a Student t fast fading, scaled so that its standard
        deviation is ``sigma_fast_db``; None (default): normal fast fading.
    """

    layer_height_km: float = 300.0
    hop_loss_db: float = 2.0
    distance_slope_db: float = 12.0
    sigma_slow_db: float = 4.0
    slow_corr_minutes: float = 20.0
    sigma_receiver_db: float = 1.5
    sigma_fast_db: float = 1.5
    sigma_day_db: float = 2.0
    open_sd: float = 1.8
    open_corr_minutes: float = 40.0
    skip_penalty: float = 2.5
    skip_loss_db: float = 10.0
    noise_sd_db: float = 4.0
    listen_fraction: float = 0.6
    uptime_range: tuple = (0.5, 1.0)
    locator4_fraction: float = 0.15
    fast_fading_df: float | None = None


@dataclass
class Simulation:
    """One simulated experiment.

    ``compare_antennas(sim.spots, sim.design, sim.a, sim.b, schedule=sim.schedule,
    change_at=sim.change_at)`` compares it; ``sim.truth`` holds the right answer.

    Attributes
    ----------
    spots : pandas.DataFrame
        Canonical spot table (``C.CANONICAL``, glossary dtypes, enriched).
    truth : Truth
    design : str
    a, b : str
        Calls to pass to compare as A and B (the same call twice for the alternating and
        before-after designs).
    schedule : str or pandas.DataFrame or None
        Alternating design: the switching schedule.
    change_at : pandas.Timestamp or None
        Before-after design: the moment of the change (UTC).
    params : dict
        The knobs used (JSON-friendly).
    stations : pandas.DataFrame
        Every simulated station: call, locator, lat, lon, role, threshold_db, noise_db.
    truths : dict
        More than two antennas (simultaneous and receive designs): ``(x, y)`` -> the
        :class:`Truth` of y minus x for every pair of calls, x before y in
        ``params["calls"]`` (its ``a`` is x, its ``b`` is y; ``truth`` is the pair A, B).
    """

    spots: pd.DataFrame
    truth: Truth
    design: str
    a: str
    b: str
    schedule: object = None
    change_at: pd.Timestamp | None = None
    params: dict = field(default_factory=dict)
    stations: pd.DataFrame | None = None
    truths: dict = field(default_factory=dict)

    def compare_kwargs(self) -> dict:
        """Keyword arguments for ``compare_antennas`` besides the spots."""
        return {"design": self.design, "a": self.a, "b": self.b, "schedule": self.schedule,
                "change_at": self.change_at}

    def __str__(self) -> str:
        return (f"Simulation({self.design}: {len(self.spots):,} spots, A={self.a}, "
                f"B={self.b}; {self.truth})")


# --- stations -----------------------------------------------------------------------------
def _locators(lat, lon, rng, frac4):
    loc = np.asarray(latlon_to_locator(lat, lon, precision=6), dtype=object)
    short = rng.random(loc.size) < frac4
    loc[short] = np.array([s[:4] for s in loc[short]], dtype=object)
    return loc


def _check_power(p, name):
    p = float(p)
    if not np.any(np.isclose(POWER_LADDER_DBM, p)):
        raise UsageError(f"{name} {p:g} dBm is not on the customary power ladder "
                         f"(0-60 dBm ending in 0, 3 or 7)")
    return p


def _resolve_antenna(spec, bands, name):
    if isinstance(spec, Antenna):
        return spec
    if isinstance(spec, str):
        try:
            return make_antenna(spec, bands)
        except ValueError as exc:
            raise UsageError(f"{name}: {exc}") from None
    raise UsageError(f"{name} must be an Antenna or one of isotropic, vertical, dipole")


def _ar1(shape_cols, n, rho, rng, state):
    """n steps of a unit-variance AR(1) per column, continuing from ``state``."""
    e = rng.standard_normal((n, shape_cols))
    y, zf = lfilter([math.sqrt(1.0 - rho * rho)], [1.0, -rho], e, axis=0,
                    zi=(rho * state)[None, :])
    return y, y[-1]


def _fast_fading(shape, df, rng):
    """Unit-SD fast fading: standard normal, or Student t with ``df`` (> 2) scaled to SD 1."""
    if df is None:
        return rng.standard_normal(shape)
    return rng.standard_t(df, shape) * math.sqrt((df - 2.0) / df)


def decode(snr_db, threshold_db, width_db: float = 0.0, rng=None):
    """Which reports a decoder delivers: a hard threshold or a soft detection curve.

    Parameters
    ----------
    snr_db : array-like
        SNR the decision is taken on (raw, or the whole-dB report) [dB].
    threshold_db : array-like
        Threshold, broadcast against ``snr_db``: the 50 % point t50 of the curve [dB].
    width_db : float
        Width w of the curve [dB]: P(decoded | s) = Phi((s - t50) / w); 0: hard threshold,
        decoded exactly when ``s >= t50``.
    rng : numpy.random.Generator, optional
        Generator for the soft curve's draws (needed when ``width_db > 0``).

    Returns
    -------
    numpy.ndarray of bool

    Examples
    --------
    >>> decode([-29.0, -28.0, -27.0], -28.0).tolist()
    [False, True, True]
    >>> ok = decode(np.full(100_000, -27.0), -28.0, 1.0, np.random.default_rng(0))
    >>> round(float(ok.mean()), 2)  # Phi(1) = 0.841
    0.84
    """
    s = np.asarray(snr_db, float)
    t = np.asarray(threshold_db, float)
    if width_db <= 0:
        return s >= t
    if rng is None:
        raise UsageError("a soft detection curve (width_db > 0) needs a random generator")
    p = ndtr((s - t) / float(width_db))
    return rng.random(p.shape) < p


def _day_weight(local_hour):
    """Smooth day (1) / night (0) weight of local mean solar time [h]."""
    return 0.5 * (1.0 + np.tanh(2.5 * np.cos(2.0 * np.pi * (local_hour - 12.5) / 24.0)))


# --- the simulator --------------------------------------------------------------------------
def simulate_spots(design: Design = "simultaneous", *, days: float = 3, seed: int = 0,
                   start="2026-03-02", bands=("20m", "10m"), n_receivers: int = 300,
                   n_transmitters: int = 200, n_controls: int = 6,
                   home_locator: str = "JN58td", a: str | None = None, b: str | None = None,
                   antenna_a="vertical", antenna_b="dipole", difference_db=None,
                   difference_edges=None, power_a_dbm: float = 37.0,
                   power_b_dbm: float = 37.0, tx_fraction: float | None = None,
                   control_tx_fraction: float = 0.3, threshold_db: float | None = None,
                   schedule="even-odd", change_at=None,
                   propagation: Propagation | None = None,
                   detection_width_db: float = 0.0,
                   threshold_on: ThresholdOn = "rounded",
                   threshold_sd_db: float = 0.0, difference_sd_db: float = 0.0,
                   more_antennas=(), progress: bool = False) -> Simulation:
    """Simulate the spot reports of an antenna experiment with a known answer.

    Parameters
    ----------
    design : {"simultaneous", "alternating", "receive", "before-after"}
        Experiment design (see the module docstring).
    days : float
        Length of the run [days]; rounded to whole slots.
    seed : int
        Seed of the random generator: the same seed gives the same result.
    start : str or Timestamp
        First day (UTC); the run starts at 00:00 UTC of that day.
    bands : sequence of str
        Bands, e.g. ("20m", "10m"); each band is an independent transmitter/receiver.
    n_receivers : int
        Far receivers (transmit designs).
    n_transmitters : int
        Far transmitters (receive design).
    n_controls : int
        Control stations near home (before-after design).
    home_locator : str
        Locator of the station under test (a real grid square).
    a, b : str, optional
        Calls of A and B. Defaults: Q1ABC and Q1ABD (simultaneous: two transmitters;
        receive: two receivers); Q1ABC for both in the alternating and before-after designs.
    antenna_a, antenna_b : Antenna or {"isotropic", "vertical", "dipole"}
        The two antennas (vertical: ground-mounted quarter-wave with radials; dipole: half
        wave at 10 m, wire north-south).
    difference_db : float or mapping, optional
        If given, B is A plus this exact difference [dB] (see
        :func:`spotkit.sim.antenna.constant_difference`); A is isotropic unless ``antenna_a``
        is an :class:`~spotkit.sim.antenna.Antenna`.
    difference_edges : sequence of float, optional
        Distance cell edges [km] for per-cell differences.
    power_a_dbm, power_b_dbm : float
        Transmit powers of A and B [dBm], from the customary ladder (transmit designs).
    tx_fraction : float, optional
        Fraction of slots a transmitter is on the air: default 0.25 (1.0 for the
        alternating design, where it applies to each A/B slot pair).
    control_tx_fraction : float
        Same for the control stations of the before-after design.
    threshold_db : float, optional
        Decode threshold of every receiver [dB]; default: per far receiver -28 (60 %),
        -29 (10 %), -30 (25 %) or -27 (5 %), and -28 for the home receivers.
    schedule : str or pandas.DataFrame
        Alternating design: "even-odd" (A in slots whose index since 00:00 UTC is even),
        "odd-even", "every-N", or a table of start, end, antenna [, band].
    change_at : str or Timestamp, optional
        Before-after design: moment of the change (UTC); default the middle day's 00:00.
    propagation : Propagation, optional
        Model parameters (``Propagation(fast_fading_df=3)``: heavy-tailed fast fading).
    detection_width_db : float
        Width w of the soft detection curve [dB]: a report exists with probability
        ``Phi((s - t50) / w)``, s being the SNR the decision is taken on and t50 the
        receiver's threshold (its 50 % point). 0 (default): a hard threshold, decoded
        exactly when ``s >= t50``.
    threshold_on : {"rounded", "raw"}
        Whether the decision uses the report rounded to whole dB (default) or the raw SNR
        before rounding (what a decoder does; the report is rounded afterwards).
    threshold_sd_db : float
        Spread (SD) of a normal offset added to each far receiver's threshold [dB], so that
        thresholds differ continuously (transmit designs; the home receivers of the receive
        design keep one threshold). Default 0.
    difference_sd_db : float
        Spread (SD) of a normal random effect per far station added to B's gain towards it
        (transmit designs) or from it (receive design) on every band [dB]; it is part of
        the true B-A in :attr:`Simulation.truth`. Default 0.
    more_antennas : sequence of float or Antenna
        Further antennas C, D, ... beyond A and B: a number is A's antenna plus this many
        dB on every path [dB] (its true difference from A, exactly); an
        :class:`~spotkit.sim.antenna.Antenna` is that antenna (its own pattern).
        Simultaneous design: more calls (Q1ABE, Q1ABF, ...; ``sim.params["calls"]``);
        receive design: more home receivers; alternating: the schedule's labels C, D, ...
        ("even-odd" becomes the round robin A, B, C, ...); before-after: ``change_at`` is
        then a list of the change times (A before the first, B from the first, C from the
        second, ...).
        ``sim.params["truth_vs_a"]`` holds every antenna's true difference from A where
        it is constant (A: 0, B: ``difference_db``, then these). In the simultaneous and
        receive designs, :attr:`Simulation.truths` holds the true difference of every pair
        of antennas.
    progress : bool
        Show a progress bar (per band, over the simulated days).

    Returns
    -------
    Simulation

    Raises
    ------
    ValueError
        Unknown design.
    UsageError
        Inconsistent arguments (power not on the ladder, unknown band, ...).
    """
    check_choice(design, DESIGNS, "design")
    check_choice(threshold_on, THRESHOLD_ON, "threshold_on")
    prop = propagation or Propagation()
    for value, what in ((detection_width_db, "detection_width_db"),
                        (threshold_sd_db, "threshold_sd_db"),
                        (difference_sd_db, "difference_sd_db")):
        if not (np.isfinite(value) and value >= 0):
            raise UsageError(f"{what} must be a finite number >= 0 dB, got {value!r}")
    if prop.fast_fading_df is not None and not prop.fast_fading_df > 2:
        raise UsageError("fast_fading_df must be above 2 (a finite standard deviation), "
                         f"got {prop.fast_fading_df!r}")
    rng = np.random.default_rng(seed)
    # draws of the optional regimes come from a stream of their own, so that the defaults
    # reproduce earlier runs draw for draw and switching a regime on changes only its part
    aux = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(15,)))
    bands = [str(x) for x in ([bands] if isinstance(bands, str) else bands)]
    for band in bands:
        if band not in _BAND_MODEL:
            raise UsageError(f"unknown band {band!r}; valid: {', '.join(_BAND_MODEL)}")
    if days <= 0:
        raise UsageError("days must be positive")
    t0 = check_time(start, "start").normalize()
    slot_ns = C.SLOT_MINUTES * 60 * 10**9
    n_slots = int(round(days * 24 * 60 / C.SLOT_MINUTES))
    if n_slots < 1:
        raise UsageError(f"days={days:g} is shorter than one {C.SLOT_MINUTES}-minute slot")
    slots = pd.DatetimeIndex(t0 + pd.to_timedelta(np.arange(n_slots) * slot_ns, unit="ns"))
    slot_ns_arr = slots.asi8 if slots.unit == "ns" else slots.as_unit("ns").asi8
    transmit = design != "receive"
    single = design in ("alternating", "before-after")
    a = (a or "Q1ABC").strip().upper()
    b = (b or (a if single else ("Q1ABD" if a != "Q1ABD" else "Q1ABE"))).strip().upper()
    if single and b != a:
        raise UsageError(f"the {design} design uses one call for A and B (got {a}, {b})")
    if not single and b == a:
        raise UsageError(f"the {design} design needs two different calls for A and B")
    power_a = _check_power(power_a_dbm, "power_a_dbm")
    power_b = _check_power(power_b_dbm, "power_b_dbm")
    if tx_fraction is None:
        tx_fraction = 1.0 if design == "alternating" else 0.25
    if not 0 < tx_fraction <= 1:
        raise UsageError("tx_fraction must be in (0, 1]")
    ant_a = _resolve_antenna(antenna_a, bands, "antenna_a") if (
        difference_db is None or isinstance(antenna_a, Antenna)) else isotropic_antenna()
    ant_b = (constant_difference(ant_a, difference_db, difference_edges, name="A + difference")
             if difference_db is not None else _resolve_antenna(antenna_b, bands, "antenna_b"))
    more = [x if isinstance(x, Antenna) else float(x) for x in more_antennas]
    if not all(isinstance(x, Antenna) or np.isfinite(x) for x in more):
        raise UsageError("more_antennas must be finite numbers [dB] or antennas, got "
                         f"{more_antennas!r}")
    ant_more = [x if isinstance(x, Antenna) else constant_difference(ant_a, x, name=f"A {x:+g} dB")
                for x in more]
    labels = [chr(ord("A") + i) for i in range(2 + len(more))]
    changes = None
    if design == "before-after" and more:
        if change_at is None or isinstance(change_at, (str, pd.Timestamp)) or \
                len(change_at) != 1 + len(more):
            raise UsageError(f"before-after with {len(more)} more antenna(s) needs "
                             f"change_at as a list of {1 + len(more)} change times")
        changes = np.asarray([check_time(t, "change_at").value for t in change_at])
        if np.any(np.diff(changes) <= 0):
            raise UsageError("change_at times must increase")
        change_at = change_at[0]
    if design == "before-after":
        if change_at is None:
            change_at = t0 + pd.Timedelta(days=max(1, int(days // 2))) if days >= 2 \
                else t0 + pd.Timedelta(minutes=C.SLOT_MINUTES * (n_slots // 2))
        change_at = check_time(change_at, "change_at")
    else:
        change_at = None

    # --- stations ------------------------------------------------------------------------
    try:
        home_lat, home_lon = locator_to_latlon(home_locator)
    except LocatorError as exc:
        raise UsageError(f"home_locator: {exc}") from None
    home_loc = str(normalize_locator([home_locator])[0])
    n_far = n_receivers if transmit else n_transmitters
    if n_far < 1:
        raise UsageError("the simulation needs at least one far station "
                         f"({'n_receivers' if transmit else 'n_transmitters'})")
    more_calls = ([a] * len(more) if single else
                  [c for c in (f"Q1AB{chr(x)}" for x in range(ord("E"), ord("Z") + 1))
                   if c not in (a, b)][:len(more)])
    far_calls = invent_calls(n_far + (n_controls if design == "before-after" else 0), rng,
                             exclude=(a, b, *more_calls))
    flat, flon = place_stations(n_far, rng)
    far_loc = _locators(flat, flon, rng, prop.locator4_fraction)
    if threshold_db is None:
        far_thr = rng.choice([-28.0, -29.0, -30.0, -27.0], size=n_far,
                             p=[0.60, 0.10, 0.25, 0.05])
        home_thr = -28.0
    else:
        far_thr = np.full(n_far, float(threshold_db))
        home_thr = float(threshold_db)
    if threshold_sd_db > 0 and transmit:
        far_thr = far_thr + aux.normal(0.0, threshold_sd_db, n_far)
    far_effect = (aux.normal(0.0, difference_sd_db, n_far) if difference_sd_db > 0
                  else np.zeros(n_far))
    far_noise = rng.normal(0.0, prop.noise_sd_db, n_far)
    far_listen = rng.random((n_far, len(bands))) < prop.listen_fraction
    far_uptime = rng.uniform(*prop.uptime_range, n_far)
    far_cal = rng.integers(-3, 4, n_far)
    far_calls, ctrl_calls = far_calls[:n_far], far_calls[n_far:]

    # sites (index 0 = home) and the emissions / listeners on them
    stations = []
    if transmit:
        ctrl_lat = home_lat + rng.uniform(-3.0, 3.0, len(ctrl_calls))
        ctrl_lon = home_lon + rng.uniform(-5.0, 5.0, len(ctrl_calls))
        ctrl_loc = _locators(ctrl_lat, ctrl_lon, rng, prop.locator4_fraction)
        tx_loc = np.array([home_loc, *ctrl_loc], dtype=object)
        rx_loc = far_loc
        offs = rng.integers(1400, 1601, 2 + len(ctrl_calls))
        em = {"call": [a, b], "site": [0, 0], "antenna": [ant_a, ant_b],
              "power": [power_a, power_b], "offset": [offs[0], offs[0] if single else offs[1]]}
        if more:  # drawn from the auxiliary stream: the default run stays draw for draw
            more_offs = aux.integers(1400, 1601, len(more))
            em["call"] += more_calls
            em["site"] += [0] * len(more)
            em["antenna"] += ant_more
            em["power"] += [power_a] * len(more)
            em["offset"] += [offs[0] if single else int(o) for o in more_offs]
        for i, c in enumerate(ctrl_calls):
            em["call"].append(c)
            em["site"].append(1 + i)
            em["antenna"].append(isotropic_antenna(float(rng.normal(0.0, 2.0))))
            em["power"].append(float(rng.choice([30.0, 33.0, 37.0, 40.0])))
            em["offset"].append(offs[2 + i])
        li = {"call": far_calls, "site": np.arange(n_far), "threshold": far_thr,
              "noise": far_noise, "cal": far_cal, "listen": far_listen, "uptime": far_uptime,
              "antenna": [None] * n_far}
        stations.append(pd.DataFrame({"call": [a] + ([] if single else [b, *more_calls]),
                                      "locator": home_loc, "role": "home transmitter"}))
        stations.append(pd.DataFrame({"call": ctrl_calls, "locator": ctrl_loc,
                                      "role": "control transmitter"}))
        stations.append(pd.DataFrame({"call": far_calls, "locator": far_loc,
                                      "role": "receiver", C.THRESHOLD: far_thr,
                                      C.NOISE: far_noise}))
    else:
        tx_loc = far_loc
        rx_loc = np.array([home_loc], dtype=object)
        far_power = rng.choice([23.0, 30.0, 33.0, 37.0, 40.0], size=n_far,
                               p=[0.25, 0.2, 0.2, 0.25, 0.1])
        em = {"call": list(far_calls), "site": list(range(n_far)),
              "antenna": [isotropic_antenna(float(g)) for g in rng.normal(0.0, 2.0, n_far)],
              "power": list(far_power), "offset": list(rng.integers(1400, 1601, n_far))}
        nh = 2 + len(more)
        li = {"call": np.array([a, b, *more_calls], dtype=object), "site": np.zeros(nh, int),
              "threshold": np.full(nh, home_thr), "noise": np.zeros(nh),
              "cal": np.zeros(nh, dtype=int), "listen": np.ones((nh, len(bands)), bool),
              "uptime": np.ones(nh), "antenna": [ant_a, ant_b, *ant_more]}
        stations.append(pd.DataFrame({"call": [a, b, *more_calls], "locator": home_loc,
                                      "role": "home receiver", C.THRESHOLD: home_thr,
                                      C.NOISE: 0.0}))
        stations.append(pd.DataFrame({"call": far_calls, "locator": far_loc,
                                      "role": "transmitter", "power_dbm": far_power}))
    stations = pd.concat(stations, ignore_index=True)
    slat, slon = locator_to_latlon(stations["locator"].to_numpy(dtype=object))
    stations.insert(2, "lat", slat)
    stations.insert(3, "lon", slon)

    # --- link geometry (per distinct tx site x rx site) ---------------------------------------
    tla, tlo = locator_to_latlon(tx_loc)
    rla, rlo = locator_to_latlon(rx_loc)
    la1, lo1, la2, lo2 = np.broadcast_arrays(tla[:, None], tlo[:, None], rla[None, :],
                                             rlo[None, :])
    s_m, az, rev = geodesic_inverse(la1, lo1, la2, lo2)
    dist = np.asarray(s_m, float) / 1000.0
    elev = np.asarray(elevation_angle(dist, prop.layer_height_km), float)
    hops = np.asarray(hop_count(dist, prop.layer_height_km), float)
    _, mid_lon = path_midpoint(la1.ravel(), lo1.ravel(), la2.ravel(), lo2.ravel())
    mid_lon = np.asarray(mid_lon, float).reshape(dist.shape)
    n_t, n_r = dist.shape

    e_site = np.asarray(em["site"])
    e_power = np.asarray(em["power"], float)
    l_site = np.asarray(li["site"])
    n_e, n_l = len(e_site), len(l_site)
    d_el = dist[e_site[:, None], l_site[None, :]]
    el_el = elev[e_site[:, None], l_site[None, :]]
    az_el = az[e_site[:, None], l_site[None, :]]
    rev_el = rev[e_site[:, None], l_site[None, :]]
    gains = {}
    for band in bands:
        g_tx = np.stack([em["antenna"][e].gain_db(band, el_el[e], az_el[e], d_el[e])
                         for e in range(n_e)])
        g_rx = np.zeros((n_e, n_l))
        for j, ant in enumerate(li["antenna"]):
            if ant is not None:
                g_rx[:, j] = ant.gain_db(band, el_el[:, j], rev_el[:, j], d_el[:, j])
        if transmit:  # B's gain towards each far receiver (emission 1 is B)
            g_tx[1] = g_tx[1] + far_effect
        else:  # B's gain from each far transmitter (listener 1 is B)
            g_rx[:n_far, 1] = g_rx[:n_far, 1] + far_effect
        gains[band] = (g_tx, g_rx)

    # --- who is on the air ----------------------------------------------------------------------
    on = {}
    for band in bands:
        if design == "simultaneous":
            both = rng.random(n_slots) < tx_fraction
            on_b = np.stack([both] * (2 + len(more)), axis=1)
        elif design == "alternating":
            from spotkit.compare.pairing import schedule_antennas

            ant = schedule_antennas(slots, np.full(n_slots, band, dtype=object), schedule,
                                    labels)
            pair_on = rng.random((n_slots + 1) // 2) < tx_fraction
            live = np.repeat(pair_on, 2)[:n_slots]
            on_b = np.stack([live & (ant == i) for i in range(len(labels))], axis=1)
        elif design == "before-after":
            live = rng.random(n_slots) < tx_fraction
            after = slot_ns_arr >= change_at.value
            ctrl = rng.random((n_slots, len(ctrl_calls))) < control_tx_fraction
            if changes is None:
                on_b = np.column_stack([live & ~after, live & after, ctrl])
            else:
                period = np.searchsorted(changes, slot_ns_arr, side="right")
                on_b = np.column_stack([live & (period == i) for i in range(len(labels))]
                                       + [ctrl])
        else:
            on_b = rng.random((n_slots, n_e)) < tx_fraction
        on[band] = on_b
    cond = {band: rng.normal(0.0, prop.sigma_day_db, int(math.ceil(days)) + 1)
            for band in bands}
    n_hours = int(math.ceil(n_slots * C.SLOT_MINUTES / 60)) + 1
    up_hour = rng.random((n_hours, n_l)) < np.asarray(li["uptime"])[None, :]

    # --- slots, chunk by chunk (one day at a time) ---------------------------------------------
    rho_slow = math.exp(-C.SLOT_MINUTES / prop.slow_corr_minutes)
    rho_open = math.exp(-C.SLOT_MINUTES / prop.open_corr_minutes)
    per_day = 24 * 60 // C.SLOT_MINUTES
    records = []
    for bi, band in enumerate(bands):
        lvl0, night, day, skip = _BAND_MODEL[band]
        level = (lvl0 - prop.distance_slope_db * np.log10(np.maximum(dist, 50.0) / 1000.0)
                 - prop.hop_loss_db * (hops - 1.0))
        skip_term = np.where(dist < skip, -prop.skip_penalty * (1.0 - dist / max(skip, 1.0)),
                             0.0)
        level = level + np.where(dist < skip, -prop.skip_loss_db * (1.0 - dist / max(skip, 1.0)),
                                 0.0)
        far_term = -np.maximum(dist - 12000.0, 0.0) / 3000.0
        g_tx, g_rx = gains[band]
        static = (e_power[:, None] - 30.0 + g_tx + g_rx
                  - np.asarray(li["noise"], float)[None, :])
        listen_band = np.asarray(li["listen"])[:, bi]
        st_slow = rng.standard_normal(n_t * n_r)
        st_open = rng.standard_normal(n_t * n_r)
        st_rx = rng.standard_normal(n_r)
        for c0 in tqdm(range(0, n_slots, per_day), desc=f"simulate {band}", unit="day",
                       disable=not progress):
            c1 = min(c0 + per_day, n_slots)
            ns = c1 - c0
            slow, st_slow = _ar1(n_t * n_r, ns, rho_slow, rng, st_slow)
            lat_open, st_open = _ar1(n_t * n_r, ns, rho_open, rng, st_open)
            common, st_rx = _ar1(n_r, ns, rho_slow, rng, st_rx)
            slow = slow.reshape(ns, n_t, n_r)
            lat_open = lat_open.reshape(ns, n_t, n_r)
            hour_utc = ((slot_ns_arr[c0:c1] // 10**9) % 86400) / 3600.0
            w = _day_weight(np.mod(hour_utc[:, None, None] + mid_lon[None] / 15.0, 24.0))
            cday = cond[band][c0 // per_day]
            logit = night + (day - night) * w + skip_term + far_term + 0.3 * cday
            is_open = logit + prop.open_sd * lat_open > 0.0
            lvl = (level[None] + cday + prop.sigma_slow_db * slow
                   + prop.sigma_receiver_db * common[:, None, :])
            ix_t, ix_r = e_site[:, None], l_site[None, :]
            raw = (lvl[:, ix_t, ix_r] + static[None]
                   + prop.sigma_fast_db * _fast_fading((ns, n_e, n_l), prop.fast_fading_df,
                                                       rng))
            snr = np.round(raw)
            hour_idx = (np.arange(c0, c1) * C.SLOT_MINUTES) // 60
            listening = up_hour[hour_idx] & listen_band[None, :]
            decoded = decode(raw if threshold_on == "raw" else snr,
                             np.asarray(li["threshold"], float)[None, None],
                             detection_width_db, aux)
            heard = (is_open[:, ix_t, ix_r] & on[band][c0:c1][:, :, None]
                     & listening[:, None, :] & decoded)
            s_i, e_i, l_i = np.nonzero(heard)
            records.append(pd.DataFrame({"slot": s_i + c0, "band": bi, "e": e_i, "l": l_i,
                                         "snr": snr[s_i, e_i, l_i]}))
    rec = pd.concat(records, ignore_index=True)

    spots = _build_spots(rec, em, li, tx_loc, rx_loc, bands, slots, rng)
    truth_pairs = _build_truth(design, rec, on, gains, bands, slots, em, li, dist, az, rev,
                               elev, e_site, l_site)
    params = {
        "design": design, "days": days, "seed": seed, "start": t0.isoformat(),
        "bands": bands, "n_receivers": n_receivers, "n_transmitters": n_transmitters,
        "n_controls": n_controls if design == "before-after" else 0,
        "home_locator": home_loc, "a": a, "b": b, "antenna_a": ant_a.name,
        "antenna_b": ant_b.name, "difference_db": difference_db,
        "difference_edges": None if difference_edges is None else list(difference_edges),
        "power_a_dbm": power_a, "power_b_dbm": power_b, "tx_fraction": tx_fraction,
        "threshold_db": threshold_db, "detection_width_db": float(detection_width_db),
        "threshold_on": threshold_on, "threshold_sd_db": float(threshold_sd_db),
        "difference_sd_db": float(difference_sd_db),
        "schedule": schedule if isinstance(schedule, str) else "table",
        "change_at": None if change_at is None else change_at.isoformat(),
        "propagation": asdict(prop),
        "more_antennas": [x.name if isinstance(x, Antenna) else x for x in more],
        "calls": ([a] if single else [a, b, *more_calls]),
        "labels": labels,
        "truth_vs_a": ([0.0, float(difference_db), *more]
                       if isinstance(difference_db, (int, float))
                       and not any(isinstance(x, Antenna) for x in more) else None),
        "change_times": (None if changes is None else
                         [pd.Timestamp(int(t), tz="UTC").isoformat() for t in changes]),
    }
    truth = Truth(truth_pairs, design, a, b)
    truths = {}
    if more and design in ("simultaneous", "receive"):
        calls = params["calls"]
        for i in range(len(calls)):
            for j in range(i + 1, len(calls)):
                tp = truth_pairs if (i, j) == (0, 1) else _build_truth(
                    design, rec, on, gains, bands, slots, em, li, dist, az, rev, elev,
                    e_site, l_site, ia=i, ib=j)
                truths[(calls[i], calls[j])] = Truth(tp, design, calls[i], calls[j])
    return Simulation(spots=spots, truth=truth, design=design, a=a, b=b,
                      schedule=schedule if design == "alternating" else None,
                      change_at=change_at, params=params, stations=stations, truths=truths)


def _cat(labels, idx) -> pd.Categorical:
    """Categorical of ``labels[idx]`` built from codes (no per-row strings)."""
    codes, uniq = pd.factorize(np.asarray(labels, dtype=object), sort=True)
    return pd.Categorical.from_codes(codes[np.asarray(idx)], categories=pd.Index(
        np.asarray(uniq, dtype=object).astype(str)))


def _build_spots(rec, em, li, tx_loc, rx_loc, bands, slots, rng) -> pd.DataFrame:
    n = len(rec)
    e = rec["e"].to_numpy()
    lidx = rec["l"].to_numpy()
    bidx = rec["band"].to_numpy()
    e_site = np.asarray(em["site"])
    l_site = np.asarray(li["site"])
    tx_call = _cat(em["call"], e)
    rx_call = _cat(li["call"], lidx)
    band = _cat(bands, bidx)
    order = np.lexsort((rx_call.codes, tx_call.codes, band.codes, rec["slot"].to_numpy()))
    e, lidx, bidx = e[order], lidx[order], bidx[order]
    dial = np.array([BEACON_DIAL_KHZ[bb] * 1000.0 for bb in bands])[bidx]
    freq = dial + np.asarray(em["offset"], float)[e] + np.asarray(li["cal"], float)[lidx]
    t = pd.Series(slots[rec["slot"].to_numpy()[order]])
    df = pd.DataFrame({
        C.TIME: t, C.SLOT: t,
        C.TX_CALL: tx_call[order], C.TX_LOCATOR: _cat(tx_loc, e_site[e]),
        C.RX_CALL: rx_call[order], C.RX_LOCATOR: _cat(rx_loc, l_site[lidx]),
        C.FREQ: freq, C.BAND: band[order], C.SNR: rec["snr"].to_numpy(float)[order],
        C.POWER: np.asarray(em["power"], float)[e],
        C.DRIFT: rng.choice([0.0, 1.0, -1.0], size=n, p=[0.9, 0.05, 0.05]),
    })
    df = add_path_columns(df)
    df[C.SOURCE_FILE] = pd.Categorical.from_codes(np.zeros(n, dtype=np.int8),
                                                  categories=["simulated"])
    df[C.SOURCE_ROW] = np.arange(1, n + 1, dtype=np.int64)
    return C.apply_dtypes(df[C.CANONICAL])


def _match_neighbours(on_a: np.ndarray, on_b: np.ndarray) -> np.ndarray:
    """Greedy one-to-one matching of adjacent A and B slots, in time order.

    Returns, per slot, the index of the A slot of the pair it belongs to (-1: unpaired).
    Equivalent to scanning left to right and pairing each unpaired on-air slot with the
    next slot when that one is on the air with the other antenna.
    """
    n = on_a.size
    code = np.where(on_a, 0, np.where(on_b, 1, -1))
    link = (code[:-1] >= 0) & (code[1:] >= 0) & (code[:-1] != code[1:])
    # runs of linked slots; position of each slot within its run
    start = np.ones(n, bool)
    start[1:] = ~link
    run_start = np.maximum.accumulate(np.where(start, np.arange(n), 0))
    pos = np.arange(n) - run_start
    first = np.zeros(n, bool)
    first[:-1] = link & (pos[:-1] % 2 == 0)
    out = np.full(n, -1, dtype=np.int64)
    i = np.flatnonzero(first)
    a_of_pair = np.where(code[i] == 0, i, i + 1)
    out[i] = a_of_pair
    out[i + 1] = a_of_pair
    return out


def _build_truth(design, rec, on, gains, bands, slots, em, li, dist, az, rev, elev,
                 e_site, l_site, ia: int = 0, ib: int = 1) -> pd.DataFrame:
    """One row per pair where at least one antenna was heard, with the true B-A gain.

    ``ia``, ``ib``: the emissions (listeners in the receive design) taken as A and B
    (simultaneous and receive designs; the others use 0 and 1).
    """
    if design == "receive":
        # pair = (band, slot, transmitter e); A/B are listeners ia/ib
        ka = rec[rec["l"] == ia][["band", "slot", "e"]]
        kb = rec[rec["l"] == ib][["band", "slot", "e"]]
        m = ka.assign(_a=True).merge(kb.assign(_b=True), how="outer", on=["band", "slot", "e"])
        far = m["e"].to_numpy()
        diff = np.empty(len(m))
        for bi, band in enumerate(bands):
            sel = m["band"].to_numpy() == bi
            g_rx = gains[band][1]
            diff[sel] = (g_rx[:, ib] - g_rx[:, ia])[far[sel]]
        t_site, r_site = e_site[far], np.zeros(len(m), dtype=int)
        bearing = rev[t_site, r_site]  # from home (receiver) towards the transmitter
        tx_call = _cat(em["call"], far)
        rx_call = _cat(li["call"], np.full(len(m), ia, dtype=int))
    else:
        tgt = rec[rec["e"].isin([ia, ib])][["band", "slot", "e", "l"]]
        if design == "alternating":
            # neighbouring on-air A and B slots matched one to one, first come first
            # matched (window of one slot); the pair's slot is A's
            ka = tgt[tgt["e"] == 0].drop(columns="e")
            kb = tgt[tgt["e"] == 1].drop(columns="e")
            a_slot = {}
            for bi, band in enumerate(bands):
                a_slot[bi] = _match_neighbours(on[band][:, 0], on[band][:, 1])
            for k in (ka, kb):
                bidx, sidx = k["band"].to_numpy(), k["slot"].to_numpy()
                k["slot"] = np.select([bidx == bi for bi in a_slot],
                                      [a_slot[bi][sidx] for bi in a_slot], -1)
            ka, kb = ka[ka["slot"] >= 0], kb[kb["slot"] >= 0]
            m = ka.assign(_a=True).merge(kb.assign(_b=True), how="outer",
                                         on=["band", "slot", "l"])
        elif design == "simultaneous":
            ka = tgt[tgt["e"] == ia].drop(columns="e")
            kb = tgt[tgt["e"] == ib].drop(columns="e")
            m = ka.assign(_a=True).merge(kb.assign(_b=True), how="outer",
                                         on=["band", "slot", "l"])
        else:  # before-after: every heard report of the target, A before, B after
            m = tgt.assign(_a=tgt["e"] == 0, _b=tgt["e"] == 1).drop(columns="e")
        far = m["l"].to_numpy()
        diff = np.empty(len(m))
        for bi, band in enumerate(bands):
            sel = m["band"].to_numpy() == bi
            g_tx = gains[band][0]
            diff[sel] = (g_tx[ib] - g_tx[ia])[far[sel]]
        t_site, r_site = np.zeros(len(m), dtype=int), l_site[far]
        bearing = az[t_site, r_site]
        tx_call = _cat(em["call"], np.full(len(m), ia, dtype=int))
        rx_call = _cat(li["call"], far)
    out = pd.DataFrame({
        C.BAND: _cat(bands, m["band"].to_numpy()),
        C.SLOT: pd.Series(slots[m["slot"].to_numpy()]),
        C.TX_CALL: tx_call, C.RX_CALL: rx_call,
        C.DISTANCE: dist[t_site, r_site], C.BEARING: bearing,
        C.ELEVATION: elev[t_site, r_site], C.B_MINUS_A: diff,
        C.HEARD_A: m["_a"].fillna(False).astype(bool).to_numpy(),
        C.HEARD_B: m["_b"].fillna(False).astype(bool).to_numpy(),
    })
    return out.sort_values([C.SLOT, C.BAND, C.RX_CALL, C.TX_CALL],
                           kind="stable").reset_index(drop=True)


# --- demo data --------------------------------------------------------------------------------
#: The invented demo station.
DEMO_CALL = "Q1ABC"
DEMO_LOCATOR = "JO62qm"


def make_demo_data(out_dir, *, days: float = 3, n_receivers: int = 250,
                   n_transmitters: int = 160, seed: int = 2026) -> dict:
    """Write the demo scenario (see demo_data/README.md) into ``out_dir``.

    Two antennas at an invented station (Q1ABC, locator JO62qm) on 20 m and 10 m: A, a
    ground-mounted quarter-wave vertical with radials over average ground; B, a horizontal
    half-wave dipole 10 m high, wire running north-south. Files: ``simultaneous.csv.gz``
    (A transmits as Q1ABC, B as Q1ABD in the same slots) and ``receive.csv.gz`` (two
    co-located receivers Q1ABC (A) and Q1ABD (B)), in the ``comma`` layout with 0.2 %
    duplicate uploads, each with its truth beside it (``*.truth.json``). Gzip output
    carries no time stamp, so the files are byte-for-byte reproducible.

    Returns
    -------
    dict
        Design -> :class:`Simulation`.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    bands = ("20m", "10m")
    antennas = dict(antenna_a=make_antenna("vertical", bands, loss_ohm=10.0),
                    antenna_b=make_antenna("dipole", bands, height_m=10.0,
                                           wire_azimuth_deg=0.0))
    sims = {}
    for i, design in enumerate(("simultaneous", "receive")):
        sim = simulate_spots(design, days=days, seed=seed + i, start="2026-03-02", bands=bands,
                             n_receivers=n_receivers, n_transmitters=n_transmitters,
                             home_locator=DEMO_LOCATOR, a=DEMO_CALL, b="Q1ABD",
                             power_a_dbm=37, power_b_dbm=37, **antennas)
        write_foreign_csv(sim.spots, out / f"{design}.csv.gz", "comma", duplicates=0.002,
                          seed=seed)
        sim.truth.to_json(out / f"{design}.truth.json")
        sims[design] = sim
    return sims



#: The invented series of changes of the demo (label, start UTC, true gain over the first
#: configuration [dB]); the gains are invented round numbers, not a model of radials.
SERIES_DEMO = (("4 radials", "2026-03-02", 0.0), ("8 radials", "2026-03-04", 1.5),
               ("16 radials", "2026-03-06", 2.5))


def make_series_demo(out_dir, *, days_each: float = 2, n_receivers: int = 80,
                     n_controls: int = 6, seed: int = 2027) -> Simulation:
    """Write the demo series of changes (see demo_data/README.md) into ``out_dir``.

    One invented station, Q1ABC at JO62qm on 20 m, whose ground-mounted vertical gets 4,
    then 8, then 16 radials (:data:`SERIES_DEMO`: ``days_each`` days each, true gains
    +1.5 and +2.5 dB over the 4-radial configuration, the same on every path), heard by
    ``n_receivers`` far receivers together with ``n_controls`` control stations. Files:
    ``series.csv.gz`` (the ``comma`` layout, 0.2 % duplicate uploads; gzip without a time
    stamp, so byte-for-byte reproducible) and ``series.truth.json`` (the periods, each
    period's true difference from the first and each step [dB], the simulation's
    parameters).

    Returns
    -------
    Simulation
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    (l0, t0, _), (l1, t1, g1), (l2, t2, g2) = SERIES_DEMO
    sim = simulate_spots("before-after", days=3 * days_each, seed=seed, start=t0,
                         bands=("20m",), n_receivers=n_receivers, n_controls=n_controls,
                         home_locator=DEMO_LOCATOR, a=DEMO_CALL,
                         antenna_a=make_antenna("vertical", ("20m",), loss_ohm=10.0),
                         difference_db=g1,
                         more_antennas=[g2], change_at=[t1, t2])
    write_foreign_csv(sim.spots, out / "series.csv.gz", "comma", duplicates=0.002, seed=seed)
    vs_first = dict(zip((l0, l1, l2), sim.params["truth_vs_a"], strict=True))
    truth = {"call": DEMO_CALL, "locator": DEMO_LOCATOR, "band": "20m",
             "periods": [{"label": lab, "start": pd.Timestamp(t, tz="UTC").isoformat()}
                         for lab, t, _ in SERIES_DEMO],
             "periods_option": ",".join(f"{lab}:{t}" for lab, t, _ in SERIES_DEMO),
             "true_vs_first_db": vs_first,
             "true_steps_db": {f"{l1} minus {l0}": vs_first[l1] - vs_first[l0],
                               f"{l2} minus {l1}": vs_first[l2] - vs_first[l1]},
             "params": {k: v for k, v in sim.params.items()
                        if isinstance(v, (str, int, float, list, type(None)))}}
    (out / "series.truth.json").write_text(json.dumps(truth, indent=2, sort_keys=True)
                                           + "\n", encoding="utf-8")
    return sim


#: The invented three-antenna demo: (call, kind, keyword arguments of
#: :func:`spotkit.sim.antenna.make_antenna`, description); the first is the reference.
THREE_DEMO = (
    ("Q1ABC", "vertical", {"loss_ohm": 10.0}, "quarter-wave vertical with radials"),
    ("Q1ABD", "dipole", {"height_m": 10.0, "wire_azimuth_deg": 0.0},
     "half-wave dipole at 10 m, wire north-south"),
    ("Q1ABE", "dipole", {"height_m": 20.0, "wire_azimuth_deg": 0.0},
     "half-wave dipole at 20 m, wire north-south"),
)


def make_three_demo(out_dir, *, days: float = 2, n_receivers: int = 200,
                    seed: int = 2028) -> Simulation:
    """Write the invented three-antenna demo (see demo_data/README.md) into ``out_dir``.

    One station at JO62qm with three antennas of different patterns beaconing in the same
    slots on 20 m under three calls (:data:`THREE_DEMO`: Q1ABC a quarter-wave vertical with
    radials, Q1ABD a half-wave dipole at 10 m, Q1ABE the same dipole at 20 m), heard by
    ``n_receivers`` far receivers for ``days`` days from 2026-03-02 00:00 UTC. Files:
    ``three_antennas.csv.gz`` (the ``comma`` layout, 0.2 % duplicate uploads; gzip without a
    time stamp, so byte-for-byte reproducible) and ``three_antennas.truth.json``
    (:func:`spotkit.sim.truth.truths_to_json`: the true difference of every pair of
    antennas, pair by pair, with the calls, the antennas and the simulation's parameters).

    Returns
    -------
    Simulation
        Its :attr:`Simulation.truths` holds the three contrasts.
    """
    from spotkit.sim.truth import truths_to_json

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    bands = ("20m",)
    ants = [make_antenna(kind, bands, **kw) for _, kind, kw, _ in THREE_DEMO]
    calls = [c for c, *_ in THREE_DEMO]
    sim = simulate_spots("simultaneous", days=days, seed=seed, start="2026-03-02",
                         bands=bands, n_receivers=n_receivers, home_locator=DEMO_LOCATOR,
                         a=calls[0], b=calls[1], antenna_a=ants[0], antenna_b=ants[1],
                         more_antennas=ants[2:])
    if sim.params["calls"] != calls:
        raise AssertionError(f"calls {sim.params['calls']} are not {calls}")
    write_foreign_csv(sim.spots, out / "three_antennas.csv.gz", "comma", duplicates=0.002,
                      seed=seed)
    truths_to_json(
        sim.truths, out / "three_antennas.truth.json", calls=calls, locator=DEMO_LOCATOR,
        band="20m", reference=calls[0], antennas_option=",".join(calls),
        antennas={c: {"model": kind, **kw, "description": d} for c, kind, kw, d in THREE_DEMO},
        true_db={f"{y} minus {x}": round(float(t.overall[C.B_MINUS_A]), 4)
                 for (x, y), t in sim.truths.items()},
        params={k: v for k, v in sim.params.items()
                if isinstance(v, (str, int, float, list, type(None)))})
    return sim


__all__ = [
    "DESIGNS", "THRESHOLD_ON", "decode", "Propagation", "Simulation", "simulate_spots",
    "DEMO_CALL", "DEMO_LOCATOR", "make_demo_data", "SERIES_DEMO", "make_series_demo",
    "THREE_DEMO", "make_three_demo",
]
