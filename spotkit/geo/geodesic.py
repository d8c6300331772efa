"""Geodesy on the WGS-84 ellipsoid and ionospheric hop geometry of a path.

Distances and azimuths are geodesics on the WGS-84 ellipsoid (a = 6 378 137 m,
f = 1/298.257223563), solved with Karney's (2013) algorithms from two libraries:

pyproj (``pyproj.Geod(ellps="WGS84")``, PROJ's C implementation)
    Everything vectorised: :func:`geodesic_inverse`, :func:`geodesic_direct`,
    :func:`path_midpoint`, :func:`add_path_columns` and :func:`add_path_geometry` (one call
    per batch of distinct locator pairs), and through them the ingest's pair cache. PROJ
    releases the GIL while it computes, so big batches can be split over threads.
geopy (``geopy.distance.geodesic``) and geographiclib (the library geopy calls)
    One path at a time: :func:`geodesic_path` takes geopy points, (lat, lon) pairs or
    locators; geopy gives its distance, geographiclib its azimuths (geopy gives none).
    geographiclib also re-solves the few lines shorter than 1 m in a batch (see below).

Known error
-----------
Karney's algorithm is accurate to round-off, about 15 nm in distance (Karney 2013, from
memory). PROJ and geographiclib agree to 1e-8 m in distance on random, near-antipodal,
polar and +-180-crossing lines (measured with pyproj 3.7.2 / PROJ 9.5.1 against
geographiclib 2.1). PROJ's azimuth on very short lines is spoilt by round-off: off the
equator and the poles it errs by about 4e-8 deg m / s, measured at mid-latitudes as
4e-4 deg at s = 0.1 mm, 4e-6 deg at 1 cm, 9e-8 deg at 1 m, 1e-8 deg at 10 m and 1.4e-9 deg
at 50 m. Lines with 0 < s < 1 m therefore get their azimuths from geographiclib, one by
one; with that, azimuths agree with Karney's to 1e-7 deg. Distinct locator cell centres are
never that close except within about 1.5 deg of a pole (10-character locators), so in spot
tables this set is empty or tiny. Coincident points (s = 0) need no correction: PROJ
gives geographiclib's azimuths for them (180 deg north of the equator, 0 deg south of it).

Hop geometry (:func:`hop_count`, :func:`elevation_angle`) uses the textbook mirror model: a
spherical Earth of radius R0 = 6371 km, reflection at one virtual height h, n equal hops.
Its error is the model's, not the arithmetic's: real paths have tilted layers, different
heights per hop and refraction below the reflection point, so an elevation from this model
is an indication within a few degrees, not a measurement.

Everything on arrays is vectorised; geodesics for a spot table are computed once per
distinct (tx_locator, rx_locator) pair and taken back to rows by integer indexing.

References
----------
C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87:43-55, 2013,
doi:10.1007/s00190-012-0578-z.
"""
from __future__ import annotations

import functools
from typing import NamedTuple

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.errors import UsageError
from spotkit.geo.locator import locator_to_latlon

#: WGS-84 semi-major axis [m].
WGS84_A = 6378137.0
#: WGS-84 flattening.
WGS84_F = 1.0 / 298.257223563
#: WGS-84 semi-minor axis [m].
WGS84_B = WGS84_A * (1.0 - WGS84_F)
#: Mean Earth radius of the hop model [km].
EARTH_RADIUS_KM = 6371.0
#: Default virtual reflection height [km] (an F2-layer value; common practice).
DEFAULT_LAYER_HEIGHT_KM = 300.0

# lines shorter than this [m] (and not of zero length) get their azimuths from
# geographiclib instead of PROJ (see the module docstring)
_SHORT_LINE_M = 1.0


@functools.cache
def _geod():
    """The WGS-84 ``pyproj.Geod``, made on first use and shared by threads (PROJ's geodesic
    routines only read it, and pyproj runs them with the GIL released)."""
    from pyproj import Geod

    return Geod(ellps="WGS84")


def _prepare(*args):
    scalar = all(np.ndim(a) == 0 for a in args)
    arrs = np.broadcast_arrays(*[np.atleast_1d(np.asarray(a, dtype=float)) for a in args])
    return scalar, [np.ascontiguousarray(a, dtype=float).ravel() for a in arrs], arrs[0].shape


def _wrap180(x):
    """Wrap angles [deg] into [-180, 180)."""
    return np.mod(x + 180.0, 360.0) - 180.0


def _wrap360(x):
    """Wrap angles [deg] into [0, 360)."""
    y = np.mod(x, 360.0)
    # np.mod(-1e-17, 360) == 360.0 in floating point
    return np.where(y >= 360.0, 0.0, y)


def _karney_azimuths(lat1, lon1, lat2, lon2):
    """Azimuths at both ends [deg] from geographiclib, pair by pair (for the few short lines)."""
    from geographiclib.geodesic import Geodesic

    wgs84 = Geodesic.WGS84
    out = [wgs84.Inverse(*p, Geodesic.AZIMUTH)
           for p in zip(lat1, lon1, lat2, lon2, strict=True)]
    return (np.array([r["azi1"] for r in out], dtype=float),
            np.array([r["azi2"] for r in out], dtype=float))


def geodesic_inverse(lat1, lon1, lat2, lon2):
    """Distance and azimuths of the geodesic between two points on WGS-84.

    Solved by PROJ (``pyproj.Geod.inv``, Karney's algorithm) for all pairs in one call;
    lines shorter than 1 m get their azimuths from geographiclib (see the module docstring
    for why).

    Parameters
    ----------
    lat1, lon1 : float or array-like
        First point (latitude, longitude) [deg]; broadcast against the second.
    lat2, lon2 : float or array-like
        Second point [deg].

    Returns
    -------
    distance_m : float or numpy.ndarray
        Geodesic distance [m].
    azimuth_deg : float or numpy.ndarray
        Azimuth at point 1 towards point 2 [deg clockwise from true north, 0-360).
    reverse_azimuth_deg : float or numpy.ndarray
        Azimuth at point 2 towards point 1 [deg, 0-360).

    Scalars in give floats out; anything else gives 1-d or broadcast numpy arrays. NaN in,
    or a latitude beyond +-90 deg, gives NaN out. Where the azimuth is not unique
    (coincident or exactly antipodal points) it is Karney's algorithm's choice (coincident
    points: 180 deg, reverse 0 deg, north of the equator).

    References
    ----------
    C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87:43-55, 2013,
    doi:10.1007/s00190-012-0578-z.
    """
    scalar, (la1, lo1, la2, lo2), shape = _prepare(lat1, lon1, lat2, lon2)
    with np.errstate(invalid="ignore"):
        bad = ~(np.isfinite(la1) & np.isfinite(lo1) & np.isfinite(la2) & np.isfinite(lo2)
                & (np.abs(la1) <= 90.0) & (np.abs(la2) <= 90.0))
    any_bad = bool(bad.any())
    if any_bad:  # PROJ gets harmless numbers; the results are NaN-ed afterwards
        la1, lo1, la2, lo2 = (np.where(bad, 0.0, x) for x in (la1, lo1, la2, lo2))
    azi, back, s = (np.asarray(x, dtype=float) for x in _geod().inv(lo1, la1, lo2, la2))
    azi, rev = _wrap360(azi), _wrap360(back)
    short = np.flatnonzero((s > 0.0) & (s < _SHORT_LINE_M))
    if short.size:
        a1, a2 = _karney_azimuths(la1[short], lo1[short], la2[short], lo2[short])
        azi[short], rev[short] = _wrap360(a1), _wrap360(a2 + 180.0)
    if any_bad:
        s[bad] = azi[bad] = rev[bad] = np.nan
    out = [x.reshape(shape) for x in (s, azi, rev)]
    if scalar:
        return tuple(float(x[0]) for x in out)
    return tuple(out)


def geodesic_direct(lat1, lon1, azimuth_deg, distance_m):
    """End point of a geodesic of given start, azimuth and length on WGS-84.

    Solved by PROJ (``pyproj.Geod.fwd``, Karney's algorithm), all points in one call.

    Parameters
    ----------
    lat1, lon1 : float or array-like
        Start point [deg].
    azimuth_deg : float or array-like
        Azimuth at the start [deg clockwise from true north].
    distance_m : float or array-like
        Length of the geodesic [m], >= 0.

    Returns
    -------
    lat2, lon2 : float or numpy.ndarray
        End point [deg]; longitude wrapped into [-180, 180). NaN in, or a start latitude
        beyond +-90 deg, gives NaN out.

    References
    ----------
    C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87:43-55, 2013 (direct problem).
    """
    scalar, (la1, lo1, az, d), shape = _prepare(lat1, lon1, azimuth_deg, distance_m)
    lon2, lat2, _ = _geod().fwd(lo1, la1, az, d)
    lat2 = np.asarray(lat2, dtype=float).reshape(shape)
    lon2 = _wrap180(np.asarray(lon2, dtype=float)).reshape(shape)
    if scalar:
        return float(lat2[0]), float(lon2[0])
    return lat2, lon2


def path_midpoint(lat1, lon1, lat2, lon2):
    """The point halfway along the geodesic between two points on WGS-84.

    Parameters
    ----------
    lat1, lon1, lat2, lon2 : float or array-like
        End points [deg].

    Returns
    -------
    lat, lon : float or numpy.ndarray
        Midpoint [deg]; longitude in [-180, 180). For exactly antipodal points the geodesic
        is not unique and the midpoint is that of the one whose azimuth is returned.

    References
    ----------
    C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87:43-55, 2013 (the inverse
    problem, then the direct one for half the distance).
    """
    s, azi1, _ = geodesic_inverse(lat1, lon1, lat2, lon2)
    return geodesic_direct(lat1, lon1, azi1, np.multiply(s, 0.5))


# --- one path ------------------------------------------------------------------------------


class GeodesicPath(NamedTuple):
    """Distance and bearings of one path (see :func:`geodesic_path`)."""

    #: Geodesic distance [km].
    distance_km: float
    #: Azimuth at the start towards the end [deg clockwise from true north, 0-360).
    bearing_deg: float
    #: Azimuth at the end towards the start [deg, 0-360).
    reverse_bearing_deg: float


def _endpoint(value, name: str) -> tuple[float, float]:
    """(lat, lon) [deg] of a geopy point, a (lat, lon) pair or a Maidenhead locator."""
    from geopy.point import Point

    if isinstance(value, Point):
        lat, lon = value.latitude, value.longitude
    elif isinstance(value, str):
        lat, lon = locator_to_latlon(value)  # LocatorError if malformed
    else:
        try:
            lat, lon = (float(x) for x in value)
        except (TypeError, ValueError):
            raise UsageError(
                f"{name} must be a geopy Point, a (lat, lon) pair in degrees or a Maidenhead "
                f"locator, not {value!r}") from None
    lat, lon = float(lat), float(lon)
    if not (np.isfinite(lat) and np.isfinite(lon)):
        raise UsageError(f"{name}: latitude and longitude must be finite, got ({lat}, {lon})")
    if abs(lat) > 90.0:
        raise UsageError(f"{name}: latitude {lat} deg is outside -90..90 deg")
    return lat, lon


def geodesic_path(start, end) -> GeodesicPath:
    """Distance and both bearings of the geodesic between two places on WGS-84.

    For one path at a time, with the places in whatever form is at hand; for many paths use
    the vectorised :func:`geodesic_inverse`.

    Parameters
    ----------
    start, end : geopy.point.Point, (float, float) or str
        A geopy point (its altitude is ignored: the geodesic runs on the ellipsoid), a
        ``(lat, lon)`` pair [deg], or a Maidenhead locator (the centre of its cell, see
        :func:`spotkit.geo.locator.locator_to_latlon`). Longitudes may be given in any
        range.

    Returns
    -------
    GeodesicPath
        ``distance_km`` [km] from ``geopy.distance.geodesic``; ``bearing_deg``, the azimuth
        at ``start`` towards ``end``, and ``reverse_bearing_deg``, the azimuth at ``end``
        towards ``start`` [deg clockwise from true north, 0-360), from geographiclib's
        ``Geodesic.WGS84.Inverse`` (geopy gives no azimuths). For coincident places the
        distance is 0 and the bearings are Karney's algorithm's choice.

    Raises
    ------
    spotkit.errors.LocatorError
        A string is not a valid Maidenhead locator.
    spotkit.errors.UsageError
        A place is neither of the accepted forms, or its latitude is outside -90..90 deg or
        not finite. (These are bad arguments, not bad data: the CLI maps them to exit code
        2.)

    References
    ----------
    C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87:43-55, 2013,
    doi:10.1007/s00190-012-0578-z.

    Examples
    --------
    >>> from spotkit.geo import geodesic_path
    >>> path = geodesic_path("JN58td", "FN31pr")
    >>> round(path.distance_km, 1), round(path.bearing_deg, 1), round(path.reverse_bearing_deg, 1)
    (6353.1, 297.7, 52.4)
    >>> round(geodesic_path((0.0, 0.0), (0.0, 1.0)).distance_km, 4)  # a * pi / 180
    111.3195
    """
    from geographiclib.geodesic import Geodesic
    from geopy.distance import geodesic

    lat1, lon1 = _endpoint(start, "start")
    lat2, lon2 = _endpoint(end, "end")
    dist_km = geodesic((lat1, lon1), (lat2, lon2), ellipsoid="WGS-84").km
    r = Geodesic.WGS84.Inverse(lat1, lon1, lat2, lon2, Geodesic.AZIMUTH)
    return GeodesicPath(float(dist_km), float(_wrap360(r["azi1"])),
                        float(_wrap360(r["azi2"] + 180.0)))


# --- hop geometry ---------------------------------------------------------------------


def max_hop_distance(layer_height_km=DEFAULT_LAYER_HEIGHT_KM):
    """Longest one-hop ground distance for a ray leaving at zero elevation.

    ``Dmax = 2 R0 arccos(R0 / (R0 + h))`` [km] with R0 = 6371 km.
    """
    h = np.asarray(layer_height_km, dtype=float)
    out = 2.0 * EARTH_RADIUS_KM * np.arccos(EARTH_RADIUS_KM / (EARTH_RADIUS_KM + h))
    return float(out) if np.ndim(out) == 0 else out


def hop_count(distance_km, layer_height_km=DEFAULT_LAYER_HEIGHT_KM):
    """Fewest equal mirror hops that cover a ground distance.

    Parameters
    ----------
    distance_km : float or array-like
        Ground distance [km].
    layer_height_km : float or array-like
        Virtual reflection height h [km].

    Returns
    -------
    float or numpy.ndarray
        ``max(1, ceil(D / Dmax))`` as whole numbers in float64 (NaN for NaN distance).

    References
    ----------
    Mirror-reflection geometry on a spherical Earth, as used in ITU-R P.533 (from memory).
    """
    d = np.asarray(distance_km, dtype=float)
    with np.errstate(invalid="ignore"):
        n = np.maximum(1.0, np.ceil(d / max_hop_distance(layer_height_km)))
    n = np.where(np.isnan(d), np.nan, n)
    return float(n) if np.ndim(n) == 0 else n


def elevation_angle(distance_km, layer_height_km=DEFAULT_LAYER_HEIGHT_KM, hops=None):
    """Take-off (elevation) angle of an n-hop mirror path.

    ``theta = D / (2 n R0)``, ``elevation = arctan(cot(theta) - R0/(R0+h) csc(theta))``,
    computed as ``arctan2(cos(theta) - R0/(R0+h), sin(theta))`` so D = 0 gives 90 deg.

    Parameters
    ----------
    distance_km : float or array-like
        Ground distance D [km].
    layer_height_km : float or array-like
        Virtual reflection height h [km].
    hops : float or array-like, optional
        Number of hops n; default :func:`hop_count`. With too few hops for the distance the
        result is negative (the ray would have to leave below the horizon).

    Returns
    -------
    float or numpy.ndarray
        Elevation angle [deg].

    References
    ----------
    Spherical-Earth mirror model, in the form of ITU-R P.533 (from memory).
    """
    d = np.asarray(distance_km, dtype=float)
    h = np.asarray(layer_height_km, dtype=float)
    n = hop_count(d, h) if hops is None else np.asarray(hops, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        theta = d / (2.0 * n * EARTH_RADIUS_KM)
        el = np.rad2deg(np.arctan2(np.cos(theta) - EARTH_RADIUS_KM / (EARTH_RADIUS_KM + h),
                                   np.sin(theta)))
    return float(el) if np.ndim(el) == 0 else el


# --- spot tables -------------------------------------------------------------------------

#: Largest key range factorised with a dense lookup table instead of hashing.
_DENSE_KEYS = 1 << 25


def _codes_and_uniques(values):
    """Integer codes (-1 for missing) and the distinct values of a column."""
    if isinstance(values.dtype, pd.CategoricalDtype):
        return values.cat.codes.to_numpy(dtype=np.int64), np.asarray(
            values.cat.categories, dtype=object)
    codes, uniques = pd.factorize(values, use_na_sentinel=True)
    return codes.astype(np.int64), np.asarray(uniques, dtype=object)


def _decode(uniques):
    if len(uniques) == 0:
        return np.zeros(0), np.zeros(0)
    lat, lon = locator_to_latlon(uniques, errors="coerce")
    return np.asarray(lat, dtype=float), np.asarray(lon, dtype=float)


def _factorize_keys(key, n_keys):
    """Codes and distinct values of non-negative integer keys below ``n_keys``."""
    if n_keys <= max(_DENSE_KEYS, 2 * key.size):
        seen = np.zeros(n_keys, dtype=bool)
        seen[key] = True
        uniq = np.flatnonzero(seen)
        rank = np.zeros(n_keys, dtype=np.int64)
        rank[uniq] = np.arange(uniq.size)
        return rank[key], uniq
    codes, uniq = pd.factorize(key, sort=False)
    return codes.astype(np.int64), np.asarray(uniq, dtype=np.int64)


class _Pairs:
    """Rows of a spot table mapped onto their distinct (tx_locator, rx_locator) pairs."""

    def __init__(self, df):
        tx_codes, tx_uniq = _codes_and_uniques(df[C.TX_LOCATOR])
        rx_codes, rx_uniq = _codes_and_uniques(df[C.RX_LOCATOR])
        tx_lat, tx_lon = _decode(tx_uniq)
        rx_lat, rx_lon = _decode(rx_uniq)
        # a NaN slot at the end for missing locators (code -1)
        self.tx_lat, self.tx_lon = np.append(tx_lat, np.nan), np.append(tx_lon, np.nan)
        self.rx_lat, self.rx_lon = np.append(rx_lat, np.nan), np.append(rx_lon, np.nan)
        self.tx_codes = np.where(tx_codes < 0, len(tx_uniq), tx_codes)
        self.rx_codes = np.where(rx_codes < 0, len(rx_uniq), rx_codes)
        n_rx = len(rx_uniq) + 1
        key = self.tx_codes * n_rx + self.rx_codes
        self.codes, keys = _factorize_keys(key, (len(tx_uniq) + 1) * n_rx)
        ptx, prx = np.divmod(keys, n_rx)
        self.lat1, self.lon1 = self.tx_lat[ptx], self.tx_lon[ptx]
        self.lat2, self.lon2 = self.rx_lat[prx], self.rx_lon[prx]

    def first_rows(self):
        """Index of one row of each pair."""
        first = np.zeros(self.lat1.size, dtype=np.int64)
        first[self.codes[::-1]] = np.arange(self.codes.size - 1, -1, -1)
        return first


def _with_columns(df: pd.DataFrame, new: dict) -> pd.DataFrame:
    """``df`` with ``new`` columns set, without copying the existing data needlessly."""
    if any(c in df.columns for c in new):
        out = df.copy()
        for name, values in new.items():
            out[name] = values
        return out
    # copy=False: the arrays are fresh, and stacking them into one block would copy them
    return pd.concat([df, pd.DataFrame(new, index=df.index, copy=False)], axis=1)


def _path_columns(pairs: _Pairs):
    """Row columns of :func:`add_path_columns`, and the per-pair distance and azimuth."""
    s, azi, rev = geodesic_inverse(pairs.lat1, pairs.lon1, pairs.lat2, pairs.lon2)
    cols = {
        C.TX_LAT: pairs.tx_lat[pairs.tx_codes],
        C.TX_LON: pairs.tx_lon[pairs.tx_codes],
        C.RX_LAT: pairs.rx_lat[pairs.rx_codes],
        C.RX_LON: pairs.rx_lon[pairs.rx_codes],
        C.DISTANCE: (s / 1000.0)[pairs.codes],
        C.BEARING: azi[pairs.codes],
        C.REVERSE_BEARING: rev[pairs.codes],
    }
    return cols, s, azi


def add_path_columns(df: pd.DataFrame) -> pd.DataFrame:
    """Add locator positions, distance and bearings to a spot table.

    Each distinct locator is decoded once and each distinct (tx, rx) locator pair is solved
    once; results are taken back to the rows by integer indexing.

    Parameters
    ----------
    df : pandas.DataFrame
        Has ``C.TX_LOCATOR`` and ``C.RX_LOCATOR`` (categorical or string).

    Returns
    -------
    pandas.DataFrame
        A new frame: ``df``'s columns and float64 columns ``C.TX_LAT``, ``C.TX_LON``,
        ``C.RX_LAT``, ``C.RX_LON`` [deg, cell centres], ``C.DISTANCE`` [km], ``C.BEARING``
        (azimuth at the transmitter towards the receiver) and ``C.REVERSE_BEARING`` (azimuth
        at the receiver towards the transmitter) [deg, 0-360). Rows whose locator cannot be
        decoded get NaN. ``df`` itself is not changed.

    References
    ----------
    C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87:43-55, 2013.
    """
    cols, _, _ = _path_columns(_Pairs(df))
    return _with_columns(df, cols)


def add_path_geometry(df: pd.DataFrame,
                      layer_height_km=DEFAULT_LAYER_HEIGHT_KM) -> pd.DataFrame:
    """Add path midpoint, hop count and elevation angle to a spot table.

    Computed once per distinct (tx_locator, rx_locator) pair. The columns of
    :func:`add_path_columns` are added too if any of them is missing; if they are present,
    their distance and bearing are used.

    Parameters
    ----------
    df : pandas.DataFrame
        Has ``C.TX_LOCATOR`` and ``C.RX_LOCATOR``, and optionally the path columns.
    layer_height_km : float
        Virtual reflection height h [km] of the hop model.

    Returns
    -------
    pandas.DataFrame
        A new frame with float64 columns ``C.MID_LAT``, ``C.MID_LON`` [deg, the point
        halfway along the geodesic], ``C.HOPS`` (whole numbers) and ``C.ELEVATION`` [deg].

    References
    ----------
    Spherical-Earth mirror hop model (see :func:`elevation_angle`); C. F. F. Karney,
    J. Geodesy 87:43-55, 2013, direct problem for the midpoint.
    """
    pairs = _Pairs(df)
    have = [C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.DISTANCE, C.BEARING]
    if all(c in df.columns for c in have):
        cols = {}
        first = pairs.first_rows()
        s = df[C.DISTANCE].to_numpy(dtype=float)[first] * 1000.0
        azi = df[C.BEARING].to_numpy(dtype=float)[first]
    else:
        cols, s, azi = _path_columns(pairs)
    mlat, mlon = geodesic_direct(pairs.lat1, pairs.lon1, azi, s / 2.0)
    dist_km = s / 1000.0
    hops = hop_count(dist_km, layer_height_km)
    el = elevation_angle(dist_km, layer_height_km, hops)
    cols.update({
        C.MID_LAT: np.asarray(mlat)[pairs.codes],
        C.MID_LON: np.asarray(mlon)[pairs.codes],
        C.HOPS: np.asarray(hops, dtype=float)[pairs.codes],
        C.ELEVATION: np.asarray(el, dtype=float)[pairs.codes],
    })
    return _with_columns(df, cols)


__all__ = [
    "WGS84_A", "WGS84_F", "WGS84_B", "EARTH_RADIUS_KM", "DEFAULT_LAYER_HEIGHT_KM",
    "geodesic_inverse", "geodesic_direct", "path_midpoint", "GeodesicPath", "geodesic_path",
    "max_hop_distance", "hop_count", "elevation_angle", "add_path_columns",
    "add_path_geometry",
]
