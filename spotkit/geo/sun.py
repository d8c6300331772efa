"""Solar position, and day / night / grey line at the ends and middle of a radio path.

Model: the low-precision solar coordinates of Meeus (1991, ch. 25; the same series as the
NOAA solar calculator) - mean longitude and anomaly, equation of centre, the largest
nutation and aberration terms and the mean obliquity - with Greenwich apparent sidereal time
from Meeus (ch. 12). Known error: about 0.01 deg in right ascension and declination for
years 1950-2050, and so about 0.01-0.02 deg in elevation and azimuth (azimuth worse within a
degree of the zenith, where it is ill-defined). Time is taken as UT throughout (the ~70 s
difference between UT and dynamical time moves the sun by under 0.001 deg).

The elevation returned is **geometric** (airless, geocentric): no atmospheric refraction and
no parallax (at most 0.0024 deg). The customary day threshold of -0.833 deg already holds
the standard refraction at the horizon (34') and the solar semidiameter (16').

Light classes (:func:`classify_light`): "day" above -0.833 deg, "night" below the twilight
depth (civil twilight, -6 deg, by default), "greyline" in between - the band around the
terminator in which low-band paths are customarily enhanced (common practice; its width is a
parameter).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.errors import UsageError

#: Solar elevation [deg] above which it is day: refraction 34' + semidiameter 16'
#: (common practice).
DAY_ELEVATION_DEG = -0.833
#: Default twilight depth [deg] below which it is night (civil twilight).
CIVIL_TWILIGHT_DEG = -6.0
#: Light classes of one place.
LIGHT_CLASSES = ("day", "greyline", "night")
#: Light classes of a path.
PATH_LIGHT_CLASSES = ("day", "greyline", "mixed", "night")

_UNIX_EPOCH_JD = 2440587.5
_J2000 = 2451545.0


def _julian_day(time_utc) -> np.ndarray:
    """Julian day (UT) of each time; NaN for NaT. Naive times are taken as UTC."""
    if isinstance(time_utc, (pd.Series, pd.Index)):
        values = time_utc
    elif np.ndim(time_utc) == 0:
        values = [time_utc]
    else:
        values = np.asarray(time_utc)
    t = pd.to_datetime(pd.Series(values), utc=True)
    days = (t - pd.Timestamp("1970-01-01", tz="UTC")) / pd.Timedelta(1, "D")
    return days.to_numpy(dtype=float) + _UNIX_EPOCH_JD


def _equatorial(jd):
    """Apparent right ascension, declination, obliquity and nutation in longitude [deg]."""
    T = (jd - _J2000) / 36525.0
    L0 = 280.46646 + T * (36000.76983 + 0.0003032 * T)
    M = np.deg2rad(357.52911 + T * (35999.05029 - 0.0001537 * T))
    centre = (np.sin(M) * (1.914602 - T * (0.004817 + 0.000014 * T))
              + np.sin(2 * M) * (0.019993 - 0.000101 * T)
              + np.sin(3 * M) * 0.000289)
    true_long = L0 + centre
    omega = np.deg2rad(125.04 - 1934.136 * T)
    app_long = np.deg2rad(true_long - 0.00569 - 0.00478 * np.sin(omega))
    eps0 = 23.0 + (26.0 + (21.448 - T * (46.815 + T * (0.00059 - T * 0.001813))) / 60.0) / 60.0
    eps = np.deg2rad(eps0 + 0.00256 * np.cos(omega))
    ra = np.rad2deg(np.arctan2(np.cos(eps) * np.sin(app_long), np.cos(app_long)))
    dec = np.rad2deg(np.arcsin(np.sin(eps) * np.sin(app_long)))
    dpsi = -0.00478 * np.sin(omega)  # nutation in longitude, largest term [deg]
    return np.mod(ra, 360.0), dec, np.rad2deg(eps), dpsi


def solar_equatorial(time_utc):
    """Apparent right ascension and declination of the sun.

    Parameters
    ----------
    time_utc : datetime-like or array-like of datetime-like
        Times [UTC]; naive times are taken as UTC.

    Returns
    -------
    ra_deg, dec_deg : numpy.ndarray
        Apparent right ascension [deg, 0-360) and declination [deg].

    References
    ----------
    J. Meeus, Astronomical Algorithms, Willmann-Bell, 1991, ch. 25 (low accuracy).
    """
    ra, dec, _, _ = _equatorial(_julian_day(time_utc))
    return ra, dec


def greenwich_sidereal_time(time_utc, apparent: bool = True) -> np.ndarray:
    """Greenwich sidereal time [deg, 0-360).

    Mean sidereal time from Meeus eq. 12.4; ``apparent=True`` adds the equation of the
    equinoxes (nutation in longitude times cos obliquity, largest term only).

    References
    ----------
    J. Meeus, Astronomical Algorithms, Willmann-Bell, 1991, ch. 12.
    """
    jd = _julian_day(time_utc)
    return _sidereal(jd, apparent)


def _sidereal(jd, apparent=True):
    T = (jd - _J2000) / 36525.0
    gmst = (280.46061837 + 360.98564736629 * (jd - _J2000)
            + T * T * (0.000387933 - T / 38710000.0))
    if apparent:
        _, _, eps, dpsi = _equatorial(jd)
        gmst = gmst + dpsi * np.cos(np.deg2rad(eps))
    return np.mod(gmst, 360.0)


def _horizontal(ra, dec, gast, lat, lon):
    H = np.deg2rad(gast + lon - ra)
    d = np.deg2rad(dec)
    p = np.deg2rad(lat)
    sin_el = np.sin(p) * np.sin(d) + np.cos(p) * np.cos(d) * np.cos(H)
    el = np.rad2deg(np.arcsin(np.clip(sin_el, -1.0, 1.0)))
    az = np.rad2deg(np.arctan2(-np.cos(d) * np.sin(H),
                               np.sin(d) * np.cos(p) - np.cos(d) * np.cos(H) * np.sin(p)))
    return el, np.mod(az, 360.0)


def solar_position(time_utc, lat, lon):
    """Geometric solar elevation and azimuth seen from points on the Earth.

    Parameters
    ----------
    time_utc : datetime-like or array-like
        Times [UTC]; naive times are taken as UTC. Broadcast against ``lat`` and ``lon``.
    lat, lon : float or array-like
        Observer latitude and longitude [deg].

    Returns
    -------
    elevation_deg : float or numpy.ndarray
        Geometric elevation of the sun's centre [deg], without refraction.
    azimuth_deg : float or numpy.ndarray
        Azimuth [deg clockwise from true north, 0-360).

    Floats for scalar input, arrays otherwise. Error about 0.01-0.02 deg (see the module
    docstring).

    References
    ----------
    J. Meeus, Astronomical Algorithms, Willmann-Bell, 1991, ch. 12, 13 and 25.
    NOAA Global Monitoring Laboratory, solar calculator (same series).
    """
    scalar = np.ndim(time_utc) == 0 and np.ndim(lat) == 0 and np.ndim(lon) == 0
    jd = _julian_day(time_utc)
    la = np.asarray(lat, dtype=float)
    lo = np.asarray(lon, dtype=float)
    jd, la, lo = np.broadcast_arrays(jd if np.ndim(time_utc) else jd.reshape(()), la, lo)
    ra, dec, eps, dpsi = _equatorial(jd)
    gast = _sidereal(jd)
    el, az = _horizontal(ra, dec, gast, la, lo)
    if scalar:
        return float(el), float(az)
    return np.atleast_1d(el), np.atleast_1d(az)


def solar_elevation(time_utc, lat, lon):
    """Geometric solar elevation [deg]; see :func:`solar_position`."""
    return solar_position(time_utc, lat, lon)[0]


def _check_twilight(twilight_deg):
    if not np.isfinite(twilight_deg) or twilight_deg >= DAY_ELEVATION_DEG:
        raise UsageError(
            f"twilight_deg must be a finite number below {DAY_ELEVATION_DEG} deg, "
            f"not {twilight_deg!r}"
        )


def _light_codes(el, twilight_deg):
    """0 day, 1 greyline, 2 night, -1 unknown."""
    el = np.asarray(el, dtype=float)
    code = np.full(el.shape, -1, dtype=np.int8)
    with np.errstate(invalid="ignore"):
        code[el > DAY_ELEVATION_DEG] = 0
        code[(el <= DAY_ELEVATION_DEG) & (el >= twilight_deg)] = 1
        code[el < twilight_deg] = 2
    return code


def classify_light(elevation_deg, twilight_deg: float = CIVIL_TWILIGHT_DEG):
    """Day, grey line or night from the solar elevation.

    Parameters
    ----------
    elevation_deg : float or array-like
        Geometric solar elevation [deg].
    twilight_deg : float
        Depth [deg] below which it is night; default civil twilight, -6 deg.

    Returns
    -------
    numpy.ndarray of object (str for scalar input)
        ``"day"`` where elevation > -0.833 deg; ``"greyline"`` where
        ``twilight_deg <= elevation <= -0.833``; ``"night"`` below ``twilight_deg``;
        ``None`` for NaN.
    """
    _check_twilight(twilight_deg)
    code = _light_codes(np.atleast_1d(elevation_deg), twilight_deg)
    names = np.array(list(LIGHT_CLASSES) + [None], dtype=object)
    out = names[np.where(code < 0, 3, code)]
    return out if np.ndim(elevation_deg) else out[0]


def path_light(tx_elev, rx_elev, mid_elev=None, twilight_deg: float = CIVIL_TWILIGHT_DEG):
    """Light class of a radio path from the solar elevation at its ends and middle.

    Rules, in order:

    1. ``"greyline"`` - either end is in the grey band (``twilight_deg`` to -0.833 deg);
    2. ``"mixed"`` - one end is in day and the other in night, or both ends agree but the
       path midpoint is on the other side (a night path across a daylit middle, or a
       day path across a dark middle); the midpoint counts only when it is day or night,
       a grey midpoint does not change the class;
    3. ``"day"`` - both ends (and the midpoint, if given) in day;
    4. ``"night"`` - both ends (and the midpoint, if given) in night.

    Parameters
    ----------
    tx_elev, rx_elev : array-like
        Solar elevation at the transmitter and the receiver [deg].
    mid_elev : array-like, optional
        Solar elevation at the path midpoint [deg]; ``None`` to judge by the ends only.
    twilight_deg : float
        Night threshold [deg]; default civil twilight, -6 deg.

    Returns
    -------
    numpy.ndarray of object (str for scalar input)
        One of ``"day"``, ``"night"``, ``"greyline"``, ``"mixed"``; ``None`` where an end
        elevation is NaN.
    """
    _check_twilight(twilight_deg)
    scalar = np.ndim(tx_elev) == 0 and np.ndim(rx_elev) == 0 and np.ndim(mid_elev) == 0
    res = _path_light_codes(tx_elev, rx_elev, mid_elev, twilight_deg)
    names = np.array(list(PATH_LIGHT_CLASSES) + [None], dtype=object)
    out = names[np.where(res < 0, 4, res)]
    return out[0] if scalar else out


def _path_light_codes(tx_elev, rx_elev, mid_elev, twilight_deg):
    """Codes into PATH_LIGHT_CLASSES (-1 unknown); the rules of :func:`path_light`."""
    t = _light_codes(np.atleast_1d(tx_elev), twilight_deg)
    r = _light_codes(np.atleast_1d(rx_elev), twilight_deg)
    t, r = np.broadcast_arrays(t, r)
    if mid_elev is None:
        m = np.full(t.shape, -1, dtype=np.int8)
    else:
        m = np.broadcast_to(_light_codes(np.atleast_1d(mid_elev), twilight_deg), t.shape)
    # result codes index PATH_LIGHT_CLASSES: 0 day, 1 greyline, 2 mixed, 3 night, -1 None
    res = np.full(t.shape, -1, dtype=np.int8)
    both_day = (t == 0) & (r == 0)
    both_night = (t == 2) & (r == 2)
    res[both_day] = 0
    res[both_night] = 3
    res[(both_day & (m == 2)) | (both_night & (m == 0))] = 2
    res[((t == 0) & (r == 2)) | ((t == 2) & (r == 0))] = 2
    res[((t == 1) | (r == 1)) & (t >= 0) & (r >= 0)] = 1
    return res


def _slot_terms(jd):
    """Per time: sin/cos of the declination and of (apparent sidereal time - RA)."""
    ra, dec, _, _ = _equatorial(jd)
    t = np.deg2rad(_sidereal(jd) - ra)
    d = np.deg2rad(dec)
    return np.sin(d), np.cos(d), np.cos(t), np.sin(t)


def _row_elevation(row_terms, lat, lon):
    """Elevation [deg] per row from per-row time terms (see :func:`_slot_terms`).

    sin(el) = sin(lat) sin(dec) + cos(lat) cos(dec) cos(t + lon), t = GAST - RA;
    cos(lat) = sqrt(1 - sin^2(lat)) (>= 0 for |lat| <= 90) saves a cosine per row.
    """
    sd, cd, ct, st = row_terms
    sp = np.sin(np.deg2rad(lat))
    cp = np.sqrt(1.0 - sp * sp)
    q = np.deg2rad(lon)
    cos_h = ct * np.cos(q) - st * np.sin(q)
    sin_el = sp * sd + cp * cd * cos_h
    return np.rad2deg(np.arcsin(np.clip(sin_el, -1.0, 1.0)))


def add_sun_columns(df: pd.DataFrame, twilight_deg: float = CIVIL_TWILIGHT_DEG) -> pd.DataFrame:
    """Add the solar elevation at both ends and the middle of each path, and its light class.

    Uses the slot start ``C.SLOT`` (``C.TIME`` if there is no slot column). The solar
    coordinates are computed once per distinct slot; each row then needs only the sines of
    its own places and one arcsine (hashing (slot, place) keys would cost more than that
    arithmetic). The path midpoint comes from
    :func:`spotkit.geo.geodesic.add_path_geometry`, which is run first if a position column is
    missing.

    Parameters
    ----------
    df : pandas.DataFrame
        Spot table with ``C.SLOT`` and either the path columns or the locators.
    twilight_deg : float
        Night threshold [deg] for :func:`path_light`.

    Returns
    -------
    pandas.DataFrame
        A new frame: ``df``'s columns and float64 ``C.TX_SUN``, ``C.RX_SUN``, ``C.MID_SUN``
        [deg, geometric elevation] and categorical ``C.PATH_LIGHT`` (day / greyline / mixed /
        night; NaN where a position or time is missing).

    References
    ----------
    J. Meeus, Astronomical Algorithms, 1991, ch. 25 (solar coordinates).
    """
    _check_twilight(twilight_deg)
    time_col = C.SLOT if C.SLOT in df.columns else C.TIME
    if time_col not in df.columns:
        raise UsageError(f"add_sun_columns needs a {C.SLOT!r} or {C.TIME!r} column")
    out = df
    places = [C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.MID_LAT, C.MID_LON]
    if not all(c in out.columns for c in places):
        # geo sits above sun in the layering; imported here only for this convenience
        from spotkit.geo.geodesic import add_path_geometry

        out = add_path_geometry(out)
    # the solar coordinates (the costly part) once per distinct slot; per row only the
    # place's own sines and one arcsine - cheaper than hashing (slot, place) keys
    t_code, t_u = pd.factorize(out[time_col], use_na_sentinel=True)
    jd_u = np.append(_julian_day(pd.Series(t_u)) if len(t_u) else np.zeros(0), np.nan)
    t_code = np.where(t_code < 0, len(t_u), t_code).astype(np.int64)
    row_terms = [x[t_code] for x in _slot_terms(jd_u)]
    elev = {}
    with np.errstate(invalid="ignore"):
        for col, (la, lo) in {C.TX_SUN: (C.TX_LAT, C.TX_LON),
                              C.RX_SUN: (C.RX_LAT, C.RX_LON),
                              C.MID_SUN: (C.MID_LAT, C.MID_LON)}.items():
            elev[col] = _row_elevation(row_terms, out[la].to_numpy(dtype=float),
                                       out[lo].to_numpy(dtype=float))
    light = _path_light_codes(elev[C.TX_SUN], elev[C.RX_SUN], elev[C.MID_SUN], twilight_deg)
    new = pd.DataFrame(elev, index=out.index, copy=False)
    new[C.PATH_LIGHT] = pd.Categorical.from_codes(light, categories=list(PATH_LIGHT_CLASSES))
    return pd.concat([out.drop(columns=[c for c in new.columns if c in out.columns]), new],
                     axis=1)


__all__ = [
    "DAY_ELEVATION_DEG", "CIVIL_TWILIGHT_DEG", "LIGHT_CLASSES", "PATH_LIGHT_CLASSES",
    "solar_equatorial", "greenwich_sidereal_time", "solar_position", "solar_elevation",
    "classify_light", "path_light", "add_sun_columns",
]
