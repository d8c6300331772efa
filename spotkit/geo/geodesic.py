"""Geodesy on the WGS-84 ellipsoid and ionospheric hop geometry of a path.

Distances and azimuths are geodesics on the WGS-84 ellipsoid (a = 6 378 137 m,
f = 1/298.257223563). Two interchangeable engines compute the inverse problem:

``"numpy"``
    A vectorised form of Vincenty's (1975) iteration. Pairs for which it is unreliable -
    nearly antipodal ones (within about 0.5 deg of arc of the antipode, where the iteration
    converges slowly or not at all), lines shorter than about 60 m (where round-off spoils
    the azimuth) including coincident points, points at a pole, and any pair that has not
    converged after 40 iterations - are handed one by one to geographiclib's
    implementation of Karney's (2013) algorithm, which is exact to round-off. There are few
    of them in real data. Away from them, Vincenty's series errs by about 0.1 mm (Karney
    2013, sec. 1); measured against geographiclib on random and near-antipodal lines, at
    most 0.08 mm in distance and 4e-8 deg in azimuth - inside the 1 mm and 1e-6 deg to
    which this module promises to agree with Karney's method.
``"pyproj"``
    ``pyproj.Geod.inv`` (PROJ's C implementation of Karney's algorithm), used by ``"auto"``
    when pyproj is installed (it is an optional dependency). Lines under 100 m also go to
    geographiclib: PROJ's azimuth on sub-metre lines is off by up to ~1e-3 deg.

The direct problem uses Vincenty's direct series (error about 0.1 mm up to half the globe).

Hop geometry (:func:`hop_count`, :func:`elevation_angle`) uses the textbook mirror model: a
spherical Earth of radius R0 = 6371 km, reflection at one virtual height h, n equal hops.
Its error is the model's, not the arithmetic's: real paths have tilted layers, different
heights per hop and refraction below the reflection point, so an elevation from this model
is an indication within a few degrees, not a measurement.

Everything is vectorised; geodesics for a spot table are computed once per distinct
(tx_locator, rx_locator) pair and taken back to rows by integer indexing.
"""
from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd
from geographiclib.geodesic import Geodesic

from spotkit import columns as C
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

GeodesicMethod = Literal["auto", "numpy", "pyproj"]
GEODESIC_METHODS = ("auto", "numpy", "pyproj")

_EXACT = Geodesic.WGS84
_MAX_ITER = 40
_TOL = 1e-13  # relative change of lambda at convergence (absolute for lambda > 1 rad)
# pairs within this many radians of arc from the antipode go to the exact algorithm
_ANTIPODAL_MARGIN = np.deg2rad(0.5)


def _check_method(method: str) -> str:
    if method not in GEODESIC_METHODS:
        raise ValueError(
            f"unknown geodesic method {method!r}; valid: {', '.join(GEODESIC_METHODS)}"
        )
    if method == "auto":
        try:
            import pyproj  # noqa: F401
        except ImportError:  # pragma: no cover - pyproj is installed in the test environment
            return "numpy"
        return "pyproj"
    return method


def _prepare(*args):
    scalar = all(np.ndim(a) == 0 for a in args)
    arrs = np.broadcast_arrays(*[np.atleast_1d(np.asarray(a, dtype=float)) for a in args])
    return scalar, [np.ascontiguousarray(a, dtype=float) for a in arrs]


def _wrap180(x):
    """Wrap angles [deg] into [-180, 180)."""
    return np.mod(x + 180.0, 360.0) - 180.0


def _wrap360(x):
    """Wrap angles [deg] into [0, 360)."""
    y = np.mod(x, 360.0)
    # np.mod(-1e-17, 360) == 360.0 in floating point
    return np.where(y >= 360.0, 0.0, y)


def _exact_inverse(lat1, lon1, lat2, lon2):
    """geographiclib (Karney) one pair at a time; for the few hard pairs."""
    n = lat1.size
    s = np.full(n, np.nan)
    a1 = np.full(n, np.nan)
    a2 = np.full(n, np.nan)
    for i in range(n):
        if not (np.isfinite(lat1[i]) and np.isfinite(lon1[i])
                and np.isfinite(lat2[i]) and np.isfinite(lon2[i])):
            continue
        r = _EXACT.Inverse(lat1[i], lon1[i], lat2[i], lon2[i])
        s[i], a1[i], a2[i] = r["s12"], r["azi1"], r["azi2"]
    return s, a1, a2


def _vincenty_inverse(lat1, lon1, lat2, lon2):
    """Vectorised Vincenty inverse; returns (s [m], azi1, azi2 [deg], ok)."""
    a, b, f = WGS84_A, WGS84_B, WGS84_F
    L = np.deg2rad(_wrap180(lon2 - lon1))
    tanU1 = (1.0 - f) * np.tan(np.deg2rad(lat1))
    tanU2 = (1.0 - f) * np.tan(np.deg2rad(lat2))
    cosU1 = 1.0 / np.sqrt(1.0 + tanU1 * tanU1)
    sinU1 = tanU1 * cosU1
    cosU2 = 1.0 / np.sqrt(1.0 + tanU2 * tanU2)
    sinU2 = tanU2 * cosU2
    n = L.size
    lam = L.copy()
    sin_sigma = np.zeros(n)
    cos_sigma = np.ones(n)
    sigma = np.zeros(n)
    cos2_alpha = np.ones(n)
    cos_2sm = np.zeros(n)
    sin_lam = np.zeros(n)
    cos_lam = np.ones(n)
    converged = np.zeros(n, dtype=bool)
    active = np.flatnonzero(np.isfinite(L) & np.isfinite(tanU1) & np.isfinite(tanU2))
    with np.errstate(invalid="ignore", divide="ignore"):
        for _ in range(_MAX_ITER):
            if active.size == 0:
                break
            lm = lam[active]
            sl, cl = np.sin(lm), np.cos(lm)
            cu1, su1, cu2, su2 = cosU1[active], sinU1[active], cosU2[active], sinU2[active]
            t1 = cu2 * sl
            t2 = cu1 * su2 - su1 * cu2 * cl
            ss = np.sqrt(t1 * t1 + t2 * t2)
            cs = su1 * su2 + cu1 * cu2 * cl
            sg = np.arctan2(ss, cs)
            sa = cu1 * cu2 * sl / ss
            c2a = 1.0 - sa * sa
            c2sm = np.where(c2a != 0.0, cs - 2.0 * su1 * su2 / c2a, 0.0)
            cc = f / 16.0 * c2a * (4.0 + f * (4.0 - 3.0 * c2a))
            lam_new = L[active] + (1.0 - cc) * f * sa * (
                sg + cc * ss * (c2sm + cc * cs * (-1.0 + 2.0 * c2sm * c2sm))
            )
            sin_lam[active], cos_lam[active] = sl, cl
            sin_sigma[active], cos_sigma[active], sigma[active] = ss, cs, sg
            cos2_alpha[active], cos_2sm[active] = c2a, c2sm
            lam[active] = lam_new
            # relative test: on short lines lambda itself is tiny
            done = np.abs(lam_new - lm) <= _TOL * np.minimum(1.0, np.abs(lam_new))
            converged[active[done]] = True
            active = active[~done & np.isfinite(lam_new)]
        u2 = cos2_alpha * (a * a - b * b) / (b * b)
        A = 1.0 + u2 / 16384.0 * (4096.0 + u2 * (-768.0 + u2 * (320.0 - 175.0 * u2)))
        B = u2 / 1024.0 * (256.0 + u2 * (-128.0 + u2 * (74.0 - 47.0 * u2)))
        d_sigma = B * sin_sigma * (
            cos_2sm + B / 4.0 * (
                cos_sigma * (-1.0 + 2.0 * cos_2sm * cos_2sm)
                - B / 6.0 * cos_2sm * (-3.0 + 4.0 * sin_sigma * sin_sigma)
                * (-3.0 + 4.0 * cos_2sm * cos_2sm)
            )
        )
        s = b * A * (sigma - d_sigma)
        azi1 = np.rad2deg(np.arctan2(cosU2 * sin_lam, cosU1 * sinU2 - sinU1 * cosU2 * cos_lam))
        azi2 = np.rad2deg(np.arctan2(cosU1 * sin_lam, -sinU1 * cosU2 + cosU1 * sinU2 * cos_lam))
    ok = (
        converged
        & (sigma < np.pi - _ANTIPODAL_MARGIN)
        # lines under ~60 m (and coincident points): round-off in the positions makes
        # Vincenty's azimuth err by ~1e-6 deg at 1 m; Karney's differencing does not
        & (sigma > 1e-5)
        & (np.abs(lat1) < 90.0 - 1e-9) & (np.abs(lat2) < 90.0 - 1e-9)
        & np.isfinite(s)
    )
    return s, azi1, azi2, ok


def _numpy_inverse(lat1, lon1, lat2, lon2):
    s, azi1, azi2, ok = _vincenty_inverse(lat1, lon1, lat2, lon2)
    hard = np.flatnonzero(~ok)
    if hard.size:
        s[hard], azi1[hard], azi2[hard] = _exact_inverse(
            lat1[hard], lon1[hard], lat2[hard], lon2[hard]
        )
    return s, azi1, azi2


def _pyproj_inverse(lat1, lon1, lat2, lon2):
    import pyproj

    geod = pyproj.Geod(ellps="WGS84")
    bad = ~(np.isfinite(lat1) & np.isfinite(lon1) & np.isfinite(lat2) & np.isfinite(lon2))
    if bad.any():
        lat1, lon1, lat2, lon2 = (np.where(bad, 0.0, x) for x in (lat1, lon1, lat2, lon2))
    az12, az21, s = geod.inv(lon1, lat1, lon2, lat2)
    az12 = np.asarray(az12, dtype=float)
    azi2 = np.asarray(az21, dtype=float) + 180.0  # pyproj gives the back azimuth
    s = np.asarray(s, dtype=float)
    if bad.any():
        s[bad] = az12[bad] = azi2[bad] = np.nan
    # PROJ's azimuth on lines under a metre errs by up to ~1e-3 deg (round-off); such
    # lines go to geographiclib, as in the numpy path
    short = np.flatnonzero(s < 100.0)
    if short.size:
        s[short], az12[short], azi2[short] = _exact_inverse(
            lat1[short], lon1[short], lat2[short], lon2[short])
    return s, az12, azi2


def geodesic_inverse(lat1, lon1, lat2, lon2, method: GeodesicMethod = "auto"):
    """Distance and azimuths of the geodesic between two points on WGS-84.

    Parameters
    ----------
    lat1, lon1 : float or array-like
        First point (latitude, longitude) [deg]; broadcast against the second.
    lat2, lon2 : float or array-like
        Second point [deg].
    method : {"auto", "numpy", "pyproj"}
        ``"numpy"``: vectorised Vincenty with hard pairs handed to geographiclib;
        ``"pyproj"``: PROJ's geodesic; ``"auto"``: pyproj if installed, else numpy.

    Returns
    -------
    distance_m : float or numpy.ndarray
        Geodesic distance [m].
    azimuth_deg : float or numpy.ndarray
        Azimuth at point 1 towards point 2 [deg clockwise from true north, 0-360).
    reverse_azimuth_deg : float or numpy.ndarray
        Azimuth at point 2 towards point 1 [deg, 0-360).

    Scalars in give floats out; anything else gives 1-d or broadcast numpy arrays. NaN in
    gives NaN out. Where the azimuth is not unique (coincident or exactly antipodal points)
    it is geographiclib's choice (coincident points: 180 deg, reverse 0 deg).

    References
    ----------
    T. Vincenty, "Direct and inverse solutions of geodesics on the ellipsoid with application
    of nested equations", Survey Review 23(176):88-93, 1975.
    C. F. F. Karney, "Algorithms for geodesics", J. Geodesy 87:43-55, 2013,
    doi:10.1007/s00190-012-0578-z.
    """
    engine = _check_method(method)
    scalar, (la1, lo1, la2, lo2) = _prepare(lat1, lon1, lat2, lon2)
    shape = la1.shape
    args = [x.ravel() for x in (la1, lo1, la2, lo2)]
    with np.errstate(invalid="ignore"):
        off = (np.abs(args[0]) > 90.0) | (np.abs(args[2]) > 90.0)
    if off.any():  # latitudes beyond the poles give NaN, as in geographiclib
        args = [np.where(off, np.nan, x) for x in args]
    if engine == "pyproj":
        s, azi1, azi2 = _pyproj_inverse(*args)
    else:
        s, azi1, azi2 = _numpy_inverse(*args)
    azi1 = _wrap360(azi1)
    rev = _wrap360(azi2 + 180.0)
    out = [np.where(np.isnan(x), np.nan, x).reshape(shape) for x in (s, azi1, rev)]
    if scalar:
        return tuple(float(x[0]) for x in out)
    return tuple(out)


def _vincenty_direct(lat1, lon1, azi1, dist):
    a, b, f = WGS84_A, WGS84_B, WGS84_F
    al1 = np.deg2rad(azi1)
    sa1, ca1 = np.sin(al1), np.cos(al1)
    tanU1 = (1.0 - f) * np.tan(np.deg2rad(lat1))
    cosU1 = 1.0 / np.sqrt(1.0 + tanU1 * tanU1)
    sinU1 = tanU1 * cosU1
    sigma1 = np.arctan2(tanU1, ca1)
    sin_alpha = cosU1 * sa1
    cos2_alpha = 1.0 - sin_alpha * sin_alpha
    u2 = cos2_alpha * (a * a - b * b) / (b * b)
    A = 1.0 + u2 / 16384.0 * (4096.0 + u2 * (-768.0 + u2 * (320.0 - 175.0 * u2)))
    B = u2 / 1024.0 * (256.0 + u2 * (-128.0 + u2 * (74.0 - 47.0 * u2)))
    sigma0 = dist / (b * A)
    sigma = sigma0.copy()
    for _ in range(_MAX_ITER):
        c2sm = np.cos(2.0 * sigma1 + sigma)
        ss, cs = np.sin(sigma), np.cos(sigma)
        d_sigma = B * ss * (
            c2sm + B / 4.0 * (
                cs * (-1.0 + 2.0 * c2sm * c2sm)
                - B / 6.0 * c2sm * (-3.0 + 4.0 * ss * ss) * (-3.0 + 4.0 * c2sm * c2sm)
            )
        )
        new = sigma0 + d_sigma
        delta = np.abs(new - sigma)
        sigma = new
        if not np.any(delta > 1e-13):
            break
    c2sm = np.cos(2.0 * sigma1 + sigma)
    ss, cs = np.sin(sigma), np.cos(sigma)
    t = sinU1 * ss - cosU1 * cs * ca1
    lat2 = np.arctan2(sinU1 * cs + cosU1 * ss * ca1,
                      (1.0 - f) * np.sqrt(sin_alpha * sin_alpha + t * t))
    lam = np.arctan2(ss * sa1, cosU1 * cs - sinU1 * ss * ca1)
    cc = f / 16.0 * cos2_alpha * (4.0 + f * (4.0 - 3.0 * cos2_alpha))
    L = lam - (1.0 - cc) * f * sin_alpha * (
        sigma + cc * ss * (c2sm + cc * cs * (-1.0 + 2.0 * c2sm * c2sm))
    )
    lon2 = _wrap180(lon1 + np.rad2deg(L))
    return np.rad2deg(lat2), lon2


def geodesic_direct(lat1, lon1, azimuth_deg, distance_m):
    """End point of a geodesic of given start, azimuth and length on WGS-84.

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
        End point [deg]; longitude wrapped into [-180, 180).

    References
    ----------
    T. Vincenty, Survey Review 23(176):88-93, 1975 (direct formulae).
    """
    scalar, (la1, lo1, az, d) = _prepare(lat1, lon1, azimuth_deg, distance_m)
    shape = la1.shape
    with np.errstate(invalid="ignore"):
        lat2, lon2 = _vincenty_direct(la1.ravel(), lo1.ravel(), az.ravel(), d.ravel())
    lat2, lon2 = lat2.reshape(shape), lon2.reshape(shape)
    if scalar:
        return float(lat2[0]), float(lon2[0])
    return lat2, lon2


def path_midpoint(lat1, lon1, lat2, lon2, method: GeodesicMethod = "auto"):
    """The point halfway along the geodesic between two points on WGS-84.

    Parameters
    ----------
    lat1, lon1, lat2, lon2 : float or array-like
        End points [deg].
    method : {"auto", "numpy", "pyproj"}
        Engine for the inverse problem (see :func:`geodesic_inverse`).

    Returns
    -------
    lat, lon : float or numpy.ndarray
        Midpoint [deg]; longitude in [-180, 180). For exactly antipodal points the geodesic
        is not unique and the midpoint is that of the one whose azimuth is returned.

    References
    ----------
    C. F. F. Karney, J. Geodesy 87:43-55, 2013; T. Vincenty, Survey Review 23(176), 1975.
    """
    s, azi1, _ = geodesic_inverse(lat1, lon1, lat2, lon2, method=method)
    return geodesic_direct(lat1, lon1, azi1, np.multiply(s, 0.5))


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


def _path_columns(pairs: _Pairs, method):
    """Row columns of :func:`add_path_columns`, and the per-pair distance and azimuth."""
    s, azi, rev = geodesic_inverse(pairs.lat1, pairs.lon1, pairs.lat2, pairs.lon2,
                                   method=method)
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


def add_path_columns(df: pd.DataFrame, method: GeodesicMethod = "auto") -> pd.DataFrame:
    """Add locator positions, distance and bearings to a spot table.

    Each distinct locator is decoded once and each distinct (tx, rx) locator pair is solved
    once; results are taken back to the rows by integer indexing.

    Parameters
    ----------
    df : pandas.DataFrame
        Has ``C.TX_LOCATOR`` and ``C.RX_LOCATOR`` (categorical or string).
    method : {"auto", "numpy", "pyproj"}
        Geodesic engine (see :func:`geodesic_inverse`).

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
    cols, _, _ = _path_columns(_Pairs(df), method)
    return _with_columns(df, cols)


def add_path_geometry(df: pd.DataFrame, layer_height_km=DEFAULT_LAYER_HEIGHT_KM,
                      method: GeodesicMethod = "auto") -> pd.DataFrame:
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
    method : {"auto", "numpy", "pyproj"}
        Geodesic engine, if the path columns must be computed.

    Returns
    -------
    pandas.DataFrame
        A new frame with float64 columns ``C.MID_LAT``, ``C.MID_LON`` [deg, the point
        halfway along the geodesic], ``C.HOPS`` (whole numbers) and ``C.ELEVATION`` [deg].

    References
    ----------
    Spherical-Earth mirror hop model (see :func:`elevation_angle`); Vincenty (1975) direct
    problem for the midpoint.
    """
    pairs = _Pairs(df)
    have = [C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.DISTANCE, C.BEARING]
    if all(c in df.columns for c in have):
        cols = {}
        first = pairs.first_rows()
        s = df[C.DISTANCE].to_numpy(dtype=float)[first] * 1000.0
        azi = df[C.BEARING].to_numpy(dtype=float)[first]
    else:
        cols, s, azi = _path_columns(pairs, method)
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
    "GEODESIC_METHODS", "geodesic_inverse", "geodesic_direct", "path_midpoint",
    "max_hop_distance", "hop_count", "elevation_angle", "add_path_columns",
    "add_path_geometry",
]
