"""Antenna gain patterns over elevation and bearing (for the spot simulator).

Model: the far-field *space wave* of thin-wire antennas over flat, homogeneous ground. The
field is the direct ray plus the ground-reflected ray (image theory), with the plane-wave
Fresnel reflection coefficients of a lossy half-space for the vertically and horizontally
polarised components. Ground is described by its relative permittivity and conductivity
(ITU-R P.527 classes; the values in :data:`GROUNDS` are from memory).

Two reference antennas are provided:

* a ground-mounted quarter-wave vertical with radials: the half-wave dipole element pattern
  ``cos(pi/2 sin(el)) / cos(el)`` times ``(1 + Rv) / 2``; feed resistance 36.6 ohm plus a
  ground-loss resistance (parameter). Over perfect ground this is 5.16 dBi at the horizon;
  over real ground the pattern has a null at the horizon and its peak at 15-30 deg.
* a horizontal half-wave dipole at a height ``h`` above ground: each polarisation component
  of the free-space field ``cos(pi/2 cos psi) / sin^2 psi`` (projected onto the vertical and
  horizontal unit vectors) is multiplied by ``1 + R exp(-j 2 k h sin el)``; feed resistance
  73.1 ohm. Over perfect ground the broadside peak is 8.15 dBi.

Gain is ``2.15 dBi + 20 log10|E| + 10 log10(73.1 ohm / R_feed)`` with ``|E|`` normalised so
that a free-space half-wave dipole gives 1 at broadside, i.e. gain relative to an isotropic
antenna for the same delivered power, counting only the named feed-point loss.

Known error (approximations, all deliberate): the surface wave and the ground's near-field
losses of the dipole are ignored; the dipole's feed resistance is held at its free-space
value, whereas mutual coupling with its image moves it by roughly +-20 ohm below one
wavelength (so absolute gains near 0.1-0.3 wavelength are off by up to about 1 dB); the
vertical's ground loss is one lumped resistance. Patterns are smooth textbook shapes, good
for simulating plausible differences, not for designing antennas.

References
----------
C. A. Balanis, *Antenna Theory: Analysis and Design*, 3rd ed., Wiley, 2005, sec. 4.6
(half-wave dipole), 4.7 (ground effects, image theory, vertical and horizontal dipoles).
C. A. Balanis, *Advanced Engineering Electromagnetics*, Wiley, 1989, sec. 5.3 (Fresnel
reflection coefficients of a lossy half-space).
ITU-R Recommendation P.527, Electrical characteristics of the surface of the Earth.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from spotkit._validate import check_choice
from spotkit.bands import BEACON_DIAL_KHZ
from spotkit.errors import UsageError

#: Speed of light [m/s].
SPEED_OF_LIGHT = 299_792_458.0
#: Radiation resistance of a thin half-wave dipole in free space [ohm] (Balanis 4.6).
R_HALF_WAVE_OHM = 73.13
#: Radiation resistance of a thin quarter-wave monopole over perfect ground [ohm].
R_QUARTER_WAVE_OHM = R_HALF_WAVE_OHM / 2.0
#: Directivity of a half-wave dipole [dBi] (Balanis 4.6: D0 = 1.643).
HALF_WAVE_DBI = 10.0 * np.log10(1.643)

GroundName = Literal["perfect", "sea", "wet", "average", "dry"]
#: Ground classes: (relative permittivity, conductivity [S/m]); after ITU-R P.527 (from
#: memory - check against the recommendation's figures before relying on them).
GROUNDS: dict[str, tuple[float, float]] = {
    "perfect": (np.inf, np.inf),
    "sea": (70.0, 5.0),
    "wet": (30.0, 0.01),
    "average": (15.0, 0.005),
    "dry": (3.0, 0.0001),
}


def band_frequency_hz(band: str) -> float:
    """Centre of the customary beacon sub-band of ``band`` [Hz]: dial + 1500 Hz.

    Examples
    --------
    >>> band_frequency_hz("20m"), band_frequency_hz("40m")
    (14097100.0, 7040100.0)
    """
    return BEACON_DIAL_KHZ[check_choice(band, tuple(BEACON_DIAL_KHZ), "band")] * 1e3 + 1500.0


def _ground(ground) -> tuple[float, float]:
    if isinstance(ground, str):
        return GROUNDS[check_choice(ground, tuple(GROUNDS), "ground")]
    eps, sigma = ground
    return float(eps), float(sigma)


def fresnel_reflection(elevation_deg, freq_hz, ground: GroundName | tuple = "average"):
    """Plane-wave reflection coefficients of flat ground.

    Parameters
    ----------
    elevation_deg : array-like
        Grazing (elevation) angle of the ray [deg].
    freq_hz : float
        Frequency [Hz].
    ground : str or (eps_r, sigma)
        Ground class from :data:`GROUNDS` or (relative permittivity, conductivity [S/m]).

    Returns
    -------
    r_v, r_h : numpy.ndarray of complex
        Coefficients for the vertically (in the plane of incidence) and horizontally
        polarised components; perfect ground gives r_v = +1, r_h = -1.

    References
    ----------
    Balanis, Advanced Engineering Electromagnetics (1989), sec. 5.3; the complex
    permittivity ``eps_c = eps_r - j 60 lambda sigma``.

    Examples
    --------
    At grazing incidence (``sin(el) = 0``) both coefficients of real ground are -1, as the
    formulas give; at normal incidence the two polarisations cannot be told apart:

    >>> f = band_frequency_hz("20m")
    >>> r_v, r_h = fresnel_reflection([0.0, 10.0, 90.0], f, "average")
    >>> r_v.real.round(3).tolist()[0], r_h.real.round(3).tolist()[0]
    (-1.0, -1.0)
    >>> np.abs(r_v).round(3).tolist(), np.abs(r_h).round(3).tolist()
    ([1.0, 0.188, 0.61], [1.0, 0.917, 0.61])
    >>> r_v, r_h = fresnel_reflection([30.0], f, "perfect")
    >>> r_v.tolist() == [1.0], r_h.tolist() == [-1.0]
    (True, True)
    """
    el = np.deg2rad(np.asarray(elevation_deg, dtype=float))
    eps, sigma = _ground(ground)
    s = np.sin(el)
    if not np.isfinite(eps) or not np.isfinite(sigma):
        return np.ones_like(s, dtype=complex), -np.ones_like(s, dtype=complex)
    lam = SPEED_OF_LIGHT / float(freq_hz)
    eps_c = eps - 1j * 60.0 * lam * sigma
    root = np.sqrt(eps_c - np.cos(el) ** 2)
    r_v = (eps_c * s - root) / (eps_c * s + root)
    r_h = (s - root) / (s + root)
    return r_v, r_h


def _half_wave_factor(cos_psi):
    """cos(pi/2 cos psi) / sin^2 psi, with its limit pi/4 along the wire."""
    c = np.clip(np.asarray(cos_psi, dtype=float), -1.0, 1.0)
    s2 = 1.0 - c * c
    with np.errstate(invalid="ignore", divide="ignore"):
        f = np.cos(0.5 * np.pi * c) / s2
    return np.where(s2 < 1e-12, np.pi / 4.0, f)


def quarter_wave_vertical_gain(elevation_deg, freq_hz, ground: GroundName | tuple = "average",
                               loss_ohm: float = 10.0):
    """Gain of a ground-mounted quarter-wave vertical with radials [dBi].

    Parameters
    ----------
    elevation_deg : array-like
        Elevation angle above the horizon [deg], 0-90.
    freq_hz : float
        Frequency [Hz].
    ground : str or (eps_r, sigma)
        Ground beyond the radial field (it shapes the far-field pattern).
    loss_ohm : float
        Ground-loss resistance of the radial system in series with 36.6 ohm [ohm]; about
        2-15 ohm for a good to modest radial field (common practice, from memory).

    Returns
    -------
    numpy.ndarray
        Gain [dBi]; omnidirectional in azimuth. Perfect ground, no loss: 5.16 dBi at 0 deg.

    References
    ----------
    Balanis, Antenna Theory, 3rd ed. (2005), sec. 4.6 and 4.7.2 (vertical element above
    ground, image theory).

    Examples
    --------
    Over perfect ground and without loss the gain at the horizon is twice the half-wave
    dipole's directivity, ``10 log10(2 * 1.643)`` (Balanis gives 3.28 for the monopole,
    5.16 dBi; from memory). Over average ground the horizon is a null (-60 dB floor):

    >>> f = band_frequency_hz("20m")
    >>> quarter_wave_vertical_gain([0.0, 30.0], f, "perfect", loss_ohm=0).round(2).tolist()
    [5.17, 3.41]
    >>> quarter_wave_vertical_gain([0, 5, 20, 45, 90], f).round(2).tolist()
    [-60.0, -7.41, -1.26, -2.47, -60.0]
    """
    el = np.clip(np.asarray(elevation_deg, dtype=float), 0.0, 90.0)
    r_v, _ = fresnel_reflection(el, freq_hz, ground)
    # element field of the monopole's current and its image: half-wave dipole pattern,
    # vertical wire: cos(psi) = sin(el)
    f = _half_wave_factor(np.sin(np.deg2rad(el))) * np.cos(np.deg2rad(el))
    e = np.abs(f * (1.0 + r_v) / 2.0)
    with np.errstate(divide="ignore"):
        g = (HALF_WAVE_DBI + 20.0 * np.log10(e)
             + 10.0 * np.log10(R_HALF_WAVE_OHM / (R_QUARTER_WAVE_OHM + loss_ohm)))
    return np.maximum(g, -60.0)


def horizontal_dipole_gain(elevation_deg, azimuth_deg, freq_hz, height_m: float,
                           wire_azimuth_deg: float = 0.0,
                           ground: GroundName | tuple = "average"):
    """Gain of a horizontal half-wave dipole above flat ground [dBi].

    Parameters
    ----------
    elevation_deg, azimuth_deg : array-like
        Direction: elevation above the horizon [deg] and bearing [deg clockwise from north];
        broadcast against each other.
    freq_hz : float
        Frequency [Hz].
    height_m : float
        Height of the wire above ground [m].
    wire_azimuth_deg : float
        Bearing along which the wire runs [deg]; the main lobes are broadside, at
        ``wire_azimuth_deg +- 90``.
    ground : str or (eps_r, sigma)
        Ground class or (eps_r, sigma [S/m]).

    Returns
    -------
    numpy.ndarray
        Gain [dBi]. Perfect ground: 8.15 dBi at broadside where ``2 k h sin(el) = pi``.

    References
    ----------
    Balanis, Antenna Theory, 3rd ed. (2005), sec. 4.7.5 (horizontal electric dipole above
    ground: array factor ``2 j sin(k h sin el)`` over a perfect conductor).

    Examples
    --------
    At 10 m and 14.0971 MHz the broadside peak over perfect ground is where
    ``sin(el) = lambda / (4 h)``, 32.1 deg; the field doubles there, so the gain is the
    dipole's ``10 log10(1.643)`` plus ``20 log10(2)``:

    >>> f = band_frequency_hz("20m")
    >>> el = float(np.degrees(np.arcsin(SPEED_OF_LIGHT / f / 40.0)))
    >>> round(el, 1)
    32.1
    >>> round(float(horizontal_dipole_gain(el, 90.0, f, 10.0, ground="perfect")), 2)
    8.18

    Over average ground, broadside (90 deg) and off the end of a north-south wire:

    >>> horizontal_dipole_gain([el, el], [90.0, 0.0], f, 10.0).round(2).tolist()
    [7.1, -2.03]
    """
    el, az = np.broadcast_arrays(np.clip(np.asarray(elevation_deg, dtype=float), 0.0, 90.0),
                                 np.asarray(azimuth_deg, dtype=float))
    d = np.deg2rad(el)
    phi = np.deg2rad(az - wire_azimuth_deg)  # angle from the wire in the horizontal plane
    r_v, r_h = fresnel_reflection(el, freq_hz, ground)
    k = 2.0 * np.pi * freq_hz / SPEED_OF_LIGHT
    phase = np.exp(-2j * k * height_m * np.sin(d))
    cos_psi = np.cos(d) * np.cos(phi)
    f = _half_wave_factor(cos_psi)
    # projections of the wire direction on the vertical-plane (theta) and horizontal (phi)
    # unit vectors of the direct ray; the reflected ray (seen from the image, elevation -el)
    # has the opposite theta projection and the same phi projection.
    p_theta = -np.sin(d) * np.cos(phi)
    p_phi = -np.sin(phi)
    e_theta = f * p_theta * (1.0 - r_v * phase)
    e_phi = f * p_phi * (1.0 + r_h * phase)
    power = np.abs(e_theta) ** 2 + np.abs(e_phi) ** 2
    with np.errstate(divide="ignore"):
        g = HALF_WAVE_DBI + 10.0 * np.log10(power)
    return np.maximum(g, -60.0)


@dataclass(frozen=True)
class GainTable:
    """Gain over a regular (elevation, bearing) grid, interpolated bilinearly.

    Attributes
    ----------
    elevation_deg : numpy.ndarray
        Increasing elevation grid [deg].
    bearing_deg : numpy.ndarray
        Increasing bearing grid [deg] from 0 to 360 inclusive (wraps around).
    gain_db : numpy.ndarray
        Gain [dBi], shape (elevation, bearing).

    Examples
    --------
    >>> table = GainTable(np.array([0.0, 10.0]), np.array([0.0, 180.0, 360.0]),
    ...                   np.array([[0.0, 2.0, 0.0], [4.0, 6.0, 4.0]]))
    >>> float(table(5.0, 90.0))
    3.0
    >>> table([0.0, 10.0], [270.0, 180.0]).tolist()
    [1.0, 6.0]
    """

    elevation_deg: np.ndarray
    bearing_deg: np.ndarray
    gain_db: np.ndarray

    def __call__(self, elevation_deg, bearing_deg):
        e = np.clip(np.asarray(elevation_deg, dtype=float), self.elevation_deg[0],
                    self.elevation_deg[-1])
        b = np.mod(np.asarray(bearing_deg, dtype=float), 360.0)
        e, b = np.broadcast_arrays(e, b)
        g = self.gain_db
        ie = np.clip(np.searchsorted(self.elevation_deg, e, side="right") - 1, 0,
                     len(self.elevation_deg) - 2)
        te = (e - self.elevation_deg[ie]) / (self.elevation_deg[ie + 1] - self.elevation_deg[ie])
        if len(self.bearing_deg) == 1:
            col = g[:, 0]
            return col[ie] * (1 - te) + col[ie + 1] * te
        ib = np.clip(np.searchsorted(self.bearing_deg, b, side="right") - 1, 0,
                     len(self.bearing_deg) - 2)
        tb = (b - self.bearing_deg[ib]) / (self.bearing_deg[ib + 1] - self.bearing_deg[ib])
        lo = g[ie, ib] * (1 - tb) + g[ie, ib + 1] * tb
        hi = g[ie + 1, ib] * (1 - tb) + g[ie + 1, ib + 1] * tb
        return lo * (1 - te) + hi * te


def _grid(step_el=0.5, step_az=5.0):
    return np.arange(0.0, 90.0 + step_el / 2, step_el), np.arange(0.0, 360.0 + step_az / 2,
                                                                  step_az)


@dataclass(frozen=True)
class Antenna:
    """An antenna as the simulator sees it: gain by band, elevation, bearing and distance.

    ``gain_db = tables[band](elevation, bearing) + offset`` where ``offset`` is
    ``offset_db[band]`` (one value, or one per distance cell of ``distance_edges``), and
    bands without a table count as ``default_db`` [dBi].

    Attributes
    ----------
    name : str
        Short description used in reports.
    tables : mapping of band -> GainTable
        Pattern per band.
    offset_db : mapping of band -> tuple of float
        Added gain [dB] per band, one value or one per distance cell.
    distance_edges : tuple of float
        Distance cell edges [km] for per-cell offsets; cells are [lo, hi).
    default_db : float
        Gain for bands without a table [dBi].

    Examples
    --------
    >>> ant = Antenna("test", offset_db={"20m": (3.0, 1.0)}, distance_edges=(0.0, 2000.0,
    ...               40100.0), default_db=2.0)
    >>> ant.gain_db("20m", 10.0, 0.0, [500.0, 5000.0]).tolist()
    [5.0, 3.0]
    >>> ant.gain_db("40m", 10.0, 0.0, 500.0).tolist()
    2.0
    """

    name: str
    tables: Mapping[str, GainTable] = field(default_factory=dict)
    offset_db: Mapping[str, tuple] = field(default_factory=dict)
    distance_edges: tuple = (0.0, 40_100.0)
    default_db: float = 0.0

    def gain_db(self, band: str, elevation_deg, bearing_deg, distance_km):
        """Gain [dBi] towards each direction; arrays broadcast against each other."""
        e, b, d = np.broadcast_arrays(np.asarray(elevation_deg, dtype=float),
                                      np.asarray(bearing_deg, dtype=float),
                                      np.asarray(distance_km, dtype=float))
        table = self.tables.get(band)
        g = table(e, b) if table is not None else np.full(e.shape, float(self.default_db))
        off = self.offset_db.get(band)
        if off is not None:
            off = np.asarray(off, dtype=float).ravel()
            if off.size == 1:
                g = g + off[0]
            else:
                edges = np.asarray(self.distance_edges, dtype=float)
                idx = np.clip(np.searchsorted(edges, d, side="right") - 1, 0, off.size - 1)
                g = g + off[idx]
        return np.asarray(g, dtype=float)

    def table_frame(self, band: str):
        """The gain table of ``band`` as a DataFrame (rows elevation, columns bearing)."""
        import pandas as pd

        t = self.tables.get(band)
        if t is None:
            raise UsageError(f"{self.name} has no gain table for {band!r}; it has "
                             f"{', '.join(self.tables) or 'none'}")
        return pd.DataFrame(t.gain_db, index=pd.Index(t.elevation_deg, name="elevation_deg"),
                            columns=pd.Index(t.bearing_deg, name="bearing_deg"))


def isotropic_antenna(gain_db: float = 0.0, name: str | None = None) -> Antenna:
    """The same gain [dBi] in every direction on every band.

    Examples
    --------
    >>> iso = isotropic_antenna(2.15)
    >>> iso.name, iso.gain_db("20m", [5.0, 60.0], 0.0, 1000.0).tolist()
    ('isotropic +2.1 dBi', [2.15, 2.15])
    """
    return Antenna(name=name or f"isotropic {gain_db:+.1f} dBi", default_db=float(gain_db))


def vertical_antenna(bands, *, ground: GroundName | tuple = "average", loss_ohm: float = 10.0,
                     name: str | None = None) -> Antenna:
    """Ground-mounted quarter-wave verticals (one per band) with radials.

    See :func:`quarter_wave_vertical_gain`; frequencies are the beacon sub-band centres.

    Examples
    --------
    The same in every bearing; a band without a table has 0 dBi:

    >>> ant = vertical_antenna(["20m"])
    >>> ant.gain_db("20m", [5.0, 20.0, 20.0], [0.0, 0.0, 135.0], 1000.0).round(2).tolist()
    [-7.41, -1.26, -1.26]
    >>> float(ant.gain_db("10m", 20.0, 0.0, 1000.0))
    0.0
    """
    el, _ = _grid()
    tables = {}
    for band in bands:
        g = quarter_wave_vertical_gain(el, band_frequency_hz(band), ground, loss_ohm)
        tables[band] = GainTable(el, np.array([0.0]), g[:, None])
    return Antenna(name=name or "quarter-wave vertical", tables=tables)


def dipole_antenna(bands, *, height_m: float = 10.0, wire_azimuth_deg: float = 0.0,
                   ground: GroundName | tuple = "average", name: str | None = None) -> Antenna:
    """Horizontal half-wave dipoles (one per band) at ``height_m`` [m] above ground.

    See :func:`horizontal_dipole_gain`; the wire runs along ``wire_azimuth_deg`` [deg].

    Examples
    --------
    A north-south wire: off its ends (0 deg) and broadside (90 deg):

    >>> ant = dipole_antenna(["20m", "40m"])
    >>> ant.name, list(ant.tables)
    ('horizontal dipole at 10 m', ['20m', '40m'])
    >>> ant.gain_db("20m", 30.0, [0.0, 90.0], 1000.0).round(2).tolist()
    [-2.76, 7.15]
    """
    el, az = _grid()
    ee, aa = np.meshgrid(el, az, indexing="ij")
    tables = {}
    for band in bands:
        g = horizontal_dipole_gain(ee, aa, band_frequency_hz(band), height_m,
                                   wire_azimuth_deg, ground)
        tables[band] = GainTable(el, az, g)
    return Antenna(name=name or f"horizontal dipole at {height_m:g} m", tables=tables)


def constant_difference(base: Antenna, difference_db, distance_edges=None,
                        name: str | None = None) -> Antenna:
    """``base`` plus a known gain difference: for tests that need an exact truth.

    Parameters
    ----------
    base : Antenna
        The reference antenna (A).
    difference_db : float or mapping of band -> float or sequence of float
        Added gain [dB]: one value for every band; per band; or per band and distance cell.
    distance_edges : sequence of float, optional
        Distance cell edges [km] for per-cell values (cells are [lo, hi)); the number of
        values per band must be ``len(distance_edges) - 1``.

    Returns
    -------
    Antenna
        Gain = base gain + difference, so B minus A is exactly ``difference_db``.

    Examples
    --------
    >>> a = vertical_antenna(["20m"])
    >>> b = constant_difference(a, 2.0)
    >>> float(b.gain_db("20m", 20.0, 0.0, 100.0) - a.gain_db("20m", 20.0, 0.0, 100.0))
    2.0

    Per band and distance cell (3 dB within 2,000 km, 1 dB beyond; nothing on 40 m):

    >>> b = constant_difference(isotropic_antenna(), {"20m": [3.0, 1.0]},
    ...                         distance_edges=[0, 2000, 40100])
    >>> b.gain_db("20m", 10.0, 0.0, [500.0, 5000.0]).tolist(), float(b.gain_db("40m", 10, 0, 500))
    ([3.0, 1.0], 0.0)
    """
    if np.isscalar(difference_db):
        diff = {b: (float(difference_db),) for b in BEACON_DIAL_KHZ}
    else:
        diff = {str(b): tuple(np.atleast_1d(np.asarray(v, dtype=float)))
                for b, v in dict(difference_db).items()}
    edges = tuple(float(x) for x in distance_edges) if distance_edges is not None \
        else base.distance_edges
    for b, v in diff.items():
        if len(v) > 1 and len(v) != len(edges) - 1:
            raise UsageError(f"band {b}: {len(v)} differences for {len(edges) - 1} "
                             "distance cells")
        if b in base.offset_db:
            raise UsageError("constant_difference of an antenna that already has offsets")
    return Antenna(name=name or f"{base.name} + difference", tables=base.tables,
                   offset_db=diff, distance_edges=edges, default_db=base.default_db)


def pattern_table(antenna: Antenna, bands, *, elevation_step_deg: float = 1.0,
                  azimuth_step_deg: float = 5.0, distance_km: float = 1000.0):
    """An antenna's gain as a pattern table in spotkit's CSV layout (:mod:`spotkit.io.pattern`).

    Parameters
    ----------
    antenna : Antenna
        The antenna (e.g. :func:`vertical_antenna`, :func:`dipole_antenna`).
    bands : sequence of str
        Bands to tabulate.
    elevation_step_deg, azimuth_step_deg : float
        Grid steps [deg]: elevations 0 to 90, azimuths 0 to below 360. A band whose gain
        does not depend on azimuth (a vertical, an isotropic antenna) gets one azimuth, 0.
    distance_km : float
        Path length [km] for antennas with per-distance offsets.

    Returns
    -------
    pandas.DataFrame
        :data:`spotkit.io.pattern.PATTERN_COLUMNS`; write it with
        :func:`spotkit.io.pattern.write_pattern`.

    Examples
    --------
    >>> t = pattern_table(vertical_antenna(["20m"]), ["20m"], elevation_step_deg=30)
    >>> print(t.round(2).to_string(index=False))
    band  elevation_deg  azimuth_deg  gain_dbi
     20m            0.0          0.0    -60.00
     20m           30.0          0.0     -1.04
     20m           60.0          0.0     -5.61
     20m           90.0          0.0    -60.00
    >>> t = pattern_table(dipole_antenna(["20m"]), ["20m"], azimuth_step_deg=90)
    >>> len(t), sorted(t["azimuth_deg"].unique().tolist())
    (364, [0.0, 90.0, 180.0, 270.0])
    """
    import pandas as pd

    from spotkit import columns as C

    el = np.arange(0.0, 90.0 + elevation_step_deg / 2, float(elevation_step_deg))
    el = el[el <= 90.0]
    az = np.arange(0.0, 360.0 - azimuth_step_deg / 2, float(azimuth_step_deg))
    frames = []
    for band in bands:
        ee, aa = np.meshgrid(el, az, indexing="ij")
        g = antenna.gain_db(band, ee, aa, distance_km)
        if np.allclose(g, g[:, :1], atol=1e-9):  # the same in every azimuth
            ee, aa, g = ee[:, :1], np.zeros((len(el), 1)), g[:, :1]
        frames.append(pd.DataFrame({C.BAND: str(band), C.ELEVATION: ee.ravel(),
                                    C.AZIMUTH: aa.ravel(), C.GAIN: g.ravel()}))
    return pd.concat(frames, ignore_index=True)


def make_antenna(kind: Literal["isotropic", "vertical", "dipole"], bands, **kw) -> Antenna:
    """Antenna by keyword: ``"isotropic"``, ``"vertical"`` or ``"dipole"``.

    Keyword arguments go to :func:`isotropic_antenna`, :func:`vertical_antenna` or
    :func:`dipole_antenna`.

    Examples
    --------
    >>> make_antenna("dipole", ["20m"], height_m=15).name
    'horizontal dipole at 15 m'
    >>> make_antenna("isotropic", [], gain_db=3.0).name
    'isotropic +3.0 dBi'
    >>> make_antenna("yagi", ["20m"])
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: unknown antenna 'yagi'; valid: isotropic, vertical, dipole
    """
    if kind == "isotropic":
        return isotropic_antenna(**kw)
    if kind == "vertical":
        return vertical_antenna(bands, **kw)
    if kind == "dipole":
        return dipole_antenna(bands, **kw)
    check_choice(kind, ("isotropic", "vertical", "dipole"), "antenna")


__all__ = [
    "GROUNDS", "band_frequency_hz", "fresnel_reflection", "quarter_wave_vertical_gain",
    "horizontal_dipole_gain", "GainTable", "Antenna", "isotropic_antenna", "vertical_antenna",
    "dipole_antenna", "constant_difference", "make_antenna", "pattern_table",
]
