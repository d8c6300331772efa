"""Geodesics, midpoints and hop geometry against published values and Karney's algorithm.

Oracles: geographiclib 2.x (``Geodesic.WGS84``, Karney 2013), geopy's ``geodesic`` (which calls
geographiclib) and pyproj's ``Geod`` where the code under test is not itself PROJ.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from geographiclib.geodesic import Geodesic
from geopy.distance import geodesic as geopy_geodesic
from geopy.point import Point
from hypothesis import given, settings
from hypothesis import strategies as st

from spotkit import columns as C
from spotkit.errors import LocatorError, UsageError
from spotkit.geo import geodesic as geo
from spotkit.geo.locator import locator_to_latlon

KARNEY = Geodesic.WGS84


def dms(d, m, s):
    sign = -1.0 if d < 0 else 1.0
    return sign * (abs(d) + m / 60.0 + s / 3600.0)


def angle_diff(a, b):
    """Smallest signed difference a - b [deg]."""
    return (np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0


def random_pairs(rng, n):
    """Uniform points on the sphere, a third of them near-antipodal, a third across +-180."""
    lat1 = np.rad2deg(np.arcsin(rng.uniform(-1, 1, n)))
    lon1 = rng.uniform(-180, 180, n)
    lat2 = np.rad2deg(np.arcsin(rng.uniform(-1, 1, n)))
    lon2 = rng.uniform(-180, 180, n)
    k = n // 3
    # near-antipodal: within about 1 deg of the antipode
    lat2[:k] = np.clip(-lat1[:k] + rng.normal(0, 0.7, k), -90, 90)
    lon2[:k] = geo._wrap180(lon1[:k] + 180 + rng.normal(0, 0.7, k))
    # crossing the +-180 meridian
    lon1[k:2 * k] = rng.uniform(170, 180, k)
    lon2[k:2 * k] = rng.uniform(-180, -170, k)
    return lat1, lon1, lat2, lon2


# --- published values ---------------------------------------------------------------------


def test_geographiclib_documented_inverse():
    # GeographicLib documentation, inverse example JFK -> LHR:
    # s12 = 5 551 759.400319 m, azi1 = 51.198882845 deg, azi2 = 107.821776735 deg.
    s, azi, rev = geo.geodesic_inverse(40.6, -73.8, 51.6, -0.5)
    assert s == pytest.approx(5551759.400319, abs=1e-3)  # 1 mm
    assert azi == pytest.approx(51.198882845, abs=1e-7)  # 1e-7 deg ~ 1 cm at 5500 km
    assert rev == pytest.approx(107.821776735 + 180.0, abs=1e-7)


def test_gda_flinders_peak_buninyong():
    # Geoscience Australia, GDA Technical Manual, Vincenty on GRS80: s = 54 972.271 m,
    # azimuth 306 52' 05.37", reverse azimuth 127 10' 25.07". GRS80 and WGS-84 differ in
    # flattening by 1.5e-9 relative, under 0.01 mm on this 55 km line, so the manual's
    # values, rounded to 1 mm and 0.01", hold for WGS-84 within 1 mm and 0.01" (2.8e-6 deg).
    lat1, lon1 = dms(-37, 57, 3.72030), dms(144, 25, 29.52440)
    lat2, lon2 = dms(-37, 39, 10.15610), dms(143, 55, 35.38390)
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    assert s == pytest.approx(54972.271, abs=1e-3)
    assert azi == pytest.approx(dms(306, 52, 5.37), abs=0.01 / 3600)
    assert rev == pytest.approx(dms(127, 10, 25.07), abs=0.01 / 3600)


def test_geographiclib_documented_long_line():
    # GeographicLib documentation: (-41.32, 174.81) -> (40.96, -5.50), s = 19 959 679.267 m
    # (given to 1 mm).
    s, _, _ = geo.geodesic_inverse(-41.32, 174.81, 40.96, -5.50)
    assert s == pytest.approx(19959679.267, abs=1e-3)


def test_near_antipodal_line():
    # Near-antipodal line, recomputed with geographiclib 2.1 (Karney 2013):
    # s = 19 989 832.8276 m, azi1 = 161.8905247 deg, azi2 = 18.0907372 deg.
    s, azi, rev = geo.geodesic_inverse(-30.0, 0.0, 29.9, 179.8)
    assert s == pytest.approx(19989832.8276, abs=1e-3)  # 1 mm
    assert azi == pytest.approx(161.8905247, abs=1e-6)  # 1e-6 deg
    assert rev == pytest.approx(18.0907372 + 180.0, abs=1e-6)


def test_karney_table2_direct():
    # Karney (2013), J. Geodesy 87:43-55, Table 2: lat1 = 40, azi1 = 30, s = 10 000 km ->
    # lat2 = 41.79331020506 deg, lon2 - lon1 = 137.84490004377 deg (given to 1e-11 deg);
    # 1e-8 deg is about 1 mm.
    lat2, lon2 = geo.geodesic_direct(40.0, 0.0, 30.0, 10_000_000.0)
    assert lat2 == pytest.approx(41.79331020506, abs=1e-8)
    assert lon2 == pytest.approx(137.84490004377, abs=1e-8)


def test_direct_matches_karney_random(rng):
    # geographiclib (Karney 2013) as the oracle; 1e-8 deg is about 1 mm.
    n = 300
    lat1 = rng.uniform(-89, 89, n)
    lon1 = rng.uniform(-180, 180, n)
    azi = rng.uniform(0, 360, n)
    s = rng.uniform(0, 19_900_000, n)
    lat2, lon2 = geo.geodesic_direct(lat1, lon1, azi, s)
    ref = np.array([[r["lat2"], r["lon2"]] for r in
                    (KARNEY.Direct(*x) for x in zip(lat1, lon1, azi, s, strict=True))])
    np.testing.assert_allclose(lat2, ref[:, 0], atol=1e-8)
    np.testing.assert_allclose(angle_diff(lon2, ref[:, 1]), 0.0, atol=1e-8)


def test_equator_across_dateline():
    # A short equatorial geodesic runs along the equator: s = a * dlon exactly
    # (a = 6 378 137 m, WGS-84); 1 deg -> 111 319.4908 m. East-bound across +-180.
    s, azi, rev = geo.geodesic_inverse(0.0, 179.5, 0.0, -179.5)
    assert s == pytest.approx(geo.WGS84_A * np.pi / 180.0, abs=1e-3)
    assert azi == pytest.approx(90.0, abs=1e-9)
    assert rev == pytest.approx(270.0, abs=1e-9)


# --- Karney's algorithm as the oracle ------------------------------------------------------


def test_matches_geopy_random_pairs(rng):
    # geopy.distance.geodesic (Karney's algorithm) to 1 mm; azimuths against geographiclib
    # (the library geopy calls) to 1e-6 deg.
    lat1, lon1, lat2, lon2 = random_pairs(rng, 3000)
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    ref_s = np.array([geopy_geodesic((a, b), (c, d)).m
                      for a, b, c, d in zip(lat1, lon1, lat2, lon2, strict=True)])
    ref = [KARNEY.Inverse(a, b, c, d) for a, b, c, d in zip(lat1, lon1, lat2, lon2, strict=True)]
    ref_azi = np.array([r["azi1"] for r in ref])
    ref_rev = np.array([r["azi2"] + 180.0 for r in ref])
    np.testing.assert_allclose(s, ref_s, atol=1e-3, rtol=0)
    np.testing.assert_allclose(angle_diff(azi, ref_azi), 0.0, atol=1e-6)
    np.testing.assert_allclose(angle_diff(rev, ref_rev), 0.0, atol=1e-6)


def test_matches_karney_short_lines_poles_equator(rng):
    # geographiclib (Karney 2013) as the oracle, 1 mm and 1e-6 deg: lines from 0.1 mm to
    # 10 km, and a grid through the poles, the equator and the +-180 meridian.
    n = 2000
    lat1 = rng.uniform(-89.9, 89.9, n)
    lon1 = rng.uniform(-180, 180, n)
    d = 10 ** rng.uniform(-9, -1, n)  # deg
    lat2 = np.clip(lat1 + d * rng.normal(size=n), -90, 90)
    lon2 = lon1 + d * rng.normal(size=n)
    vals_lat = [-90, -89.9999999, -45, -1e-10, 0, 1e-10, 30, 89.99, 90]
    vals_lon = [-180, -179.9999, -90, -1e-10, 0, 1e-10, 0.5, 179.5, 180]
    grid = np.array([(a, 0.0, b, c) for a in vals_lat for b in vals_lat for c in vals_lon])
    lat1, lon1 = np.r_[lat1, grid[:, 0]], np.r_[lon1, grid[:, 1]]
    lat2, lon2 = np.r_[lat2, grid[:, 2]], np.r_[lon2, grid[:, 3]]
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    ref = [KARNEY.Inverse(a, b, c, d) for a, b, c, d in zip(lat1, lon1, lat2, lon2, strict=True)]
    np.testing.assert_allclose(s, [r["s12"] for r in ref], atol=1e-3, rtol=0)
    # azimuths are defined only off the antipode and off coincident points
    unique = np.array([r["a12"] < 179.9 and r["s12"] > 0 for r in ref])
    np.testing.assert_allclose(angle_diff(azi, [r["azi1"] for r in ref])[unique], 0.0,
                               atol=1e-6)
    np.testing.assert_allclose(angle_diff(rev, [r["azi2"] + 180 for r in ref])[unique], 0.0,
                               atol=1e-6)


def _mid_latitude_short_lines(rng, n, length_m):
    """n lines of the given length [m] between 30 and 60 deg latitude, end points from
    geographiclib's Direct (Karney 2013)."""
    lat1 = rng.uniform(30, 60, n) * rng.choice([-1, 1], n)
    lon1 = rng.uniform(-180, 180, n)
    ends = [KARNEY.Direct(a, b, c, length_m) for a, b, c in
            zip(lat1, lon1, rng.uniform(0, 360, n), strict=True)]
    return lat1, lon1, np.array([r["lat2"] for r in ends]), np.array([r["lon2"] for r in ends])


@pytest.mark.parametrize("length_m", [1e-4, 1e-2, 0.5, 2.0, 50.0])
def test_short_lines_match_karney_to_1e_7_deg(rng, length_m):
    # geographiclib (Karney 2013) as the oracle: azimuths within 1e-7 deg at mid-latitudes,
    # where PROJ's own azimuth on sub-metre lines is off by up to 4e-4 deg (module docstring)
    lat1, lon1, lat2, lon2 = _mid_latitude_short_lines(rng, 300, length_m)
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    ref = [KARNEY.Inverse(*x) for x in zip(lat1, lon1, lat2, lon2, strict=True)]
    np.testing.assert_allclose(s, [r["s12"] for r in ref], atol=1e-8, rtol=0)  # 10 nm
    np.testing.assert_allclose(angle_diff(azi, [r["azi1"] for r in ref]), 0.0, atol=1e-7)
    np.testing.assert_allclose(angle_diff(rev, [r["azi2"] + 180 for r in ref]), 0.0,
                               atol=1e-7)


def test_proj_alone_errs_on_centimetre_lines(rng):
    # Why lines under 1 m are re-solved: with the correction switched off, PROJ's azimuth on
    # 1 cm lines at mid-latitudes is off by more than 1e-6 deg (measured 4e-6 deg with
    # pyproj 3.7.2 / PROJ 9.5.1; geographiclib as the oracle). If this starts to fail, PROJ
    # has become exact here: measure again, then drop the correction and this test.
    lat1, lon1, lat2, lon2 = _mid_latitude_short_lines(rng, 300, 0.01)
    ref = np.array([KARNEY.Inverse(*x)["azi1"]
                    for x in zip(lat1, lon1, lat2, lon2, strict=True)])
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(geo, "_SHORT_LINE_M", 0.0)
        _, raw, _ = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    assert np.abs(angle_diff(raw, ref)).max() > 1e-6
    _, fixed, _ = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    assert np.abs(angle_diff(fixed, ref)).max() < 1e-7


def test_only_sub_metre_lines_go_to_geographiclib(monkeypatch, rng):
    # The one-by-one hand-off sees the non-zero lines under 1 m and nothing else: not the
    # coincident points (PROJ gives Karney's azimuths for them), not NaN, not longer lines.
    seen = []
    real = geo._karney_azimuths

    def spy(lat1, lon1, lat2, lon2):
        seen.append(len(lat1))
        return real(lat1, lon1, lat2, lon2)

    monkeypatch.setattr(geo, "_karney_azimuths", spy)
    lat1, lon1, lat2, lon2 = _mid_latitude_short_lines(rng, 3, 0.3)
    lat1 = np.r_[lat1, 10.0, -10.0, np.nan, 50.0, 50.0]
    lon1 = np.r_[lon1, 20.0, 20.0, 0.0, 8.0, 8.0]
    lat2 = np.r_[lat2, 10.0, -10.0, 1.0, 50.0, 50.00001]  # 50.00001: about 1.1 m north
    lon2 = np.r_[lon2, 20.0, 20.0, 1.0, 9.0, 8.0]
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    assert seen == [3]
    # coincident points: zero length, geographiclib's azimuths (Karney 2013)
    assert s[3] == s[4] == 0.0
    for i in (3, 4):
        r = KARNEY.Inverse(lat1[i], lon1[i], lat2[i], lon2[i])
        assert angle_diff(azi[i], r["azi1"]) == 0.0
        assert angle_diff(rev[i], r["azi2"] + 180.0) == 0.0


def test_exactly_antipodal_on_the_equator():
    # Exactly antipodal on the equator: the geodesic runs over a pole and is half a meridian
    # long, 20 003 931.4586 m (geographiclib, Karney 2013).
    s, azi, _ = geo.geodesic_inverse(0.0, 0.0, 0.0, 180.0)
    assert s == pytest.approx(KARNEY.Inverse(0, 0, 0, 180)["s12"], abs=1e-6)
    assert s == pytest.approx(20003931.4586, abs=1e-3)
    assert azi in (0.0, 180.0)


# --- invariants, over input kinds -------------------------------------------------------------


def _as(kind, values):
    if kind == "scalar":
        return values[0]
    if kind == "array":
        return np.asarray(values, dtype=float)
    return pd.Series(values, dtype=float)


KINDS = ["scalar", "array", "series"]


@pytest.mark.parametrize("kind", KINDS)
def test_invariants(kind):
    lat1 = _as(kind, [51.4375, -33.9, 0.0])
    lon1 = _as(kind, [-1.041667, 151.2, 179.9])
    lat2 = _as(kind, [-50.9, 40.7, 0.5])
    lon2 = _as(kind, [178.0, -74.0, -179.9])
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    if kind == "scalar":
        assert all(isinstance(x, float) for x in (s, azi, rev))
    else:
        assert all(isinstance(x, np.ndarray) and x.shape == (3,) for x in (s, azi, rev))
    # symmetry: d(a, b) = d(b, a) and the bearings swap
    s2, azi2, rev2 = geo.geodesic_inverse(lat2, lon2, lat1, lon1)
    np.testing.assert_allclose(s, s2, atol=1e-6)
    np.testing.assert_allclose(angle_diff(azi, rev2), 0, atol=1e-9)
    np.testing.assert_allclose(angle_diff(rev, azi2), 0, atol=1e-9)
    for x in (azi, rev, azi2, rev2):
        assert np.all((np.asarray(x) >= 0) & (np.asarray(x) < 360))
    # zero distance
    z, za, zr = geo.geodesic_inverse(lat1, lon1, lat1, lon1)
    np.testing.assert_array_equal(z, 0.0 * np.asarray(z))
    assert np.all((np.asarray(za) >= 0) & (np.asarray(za) < 360))
    # antipodes: half a meridian, 20 003 931.4586 m (geographiclib) for any antipodal pair
    # off the equator; exactly antipodal equatorial points also
    alat, alon = np.negative(lat1), np.asarray(lon1) + 180.0
    a, _, _ = geo.geodesic_inverse(lat1, lon1, alat, alon)
    np.testing.assert_allclose(a, 20003931.4586, atol=1e-3)


def test_nan_and_bad_latitude_give_nan():
    s, azi, rev = geo.geodesic_inverse([np.nan, 95.0, 10.0], [0, 0, 0], [1, 1, 11.0],
                                       [1, 1, 1.0])
    assert np.isnan(s[:2]).all() and np.isnan(azi[:2]).all() and np.isnan(rev[:2]).all()
    assert np.isfinite(s[2])


lat_st = st.floats(-90, 90, allow_nan=False)
lon_st = st.floats(-540, 540, allow_nan=False)


@settings(max_examples=300, deadline=None)
@given(lat_st, lon_st, lat_st, lon_st)
def test_property_symmetry_and_wrap(lat1, lon1, lat2, lon2):
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    s2, azi2, rev2 = geo.geodesic_inverse(lat2, lon2, lat1, lon1)
    assert 0.0 <= azi < 360.0 and 0.0 <= rev < 360.0
    assert 0.0 <= s <= 20003931.4586 + 1e-3  # no geodesic is longer than half a meridian
    assert abs(s - s2) <= 1e-3
    ref = KARNEY.Inverse(lat1, lon1, lat2, lon2)
    assert abs(s - ref["s12"]) <= 1e-3  # 1 mm from Karney
    if s > 1.0 and ref["a12"] < 179.5:  # azimuths are unique away from the antipode
        assert abs(angle_diff(azi, rev2)) <= 1e-6
        assert abs(angle_diff(azi, ref["azi1"])) <= 1e-6


@settings(max_examples=100, deadline=None)
@given(lat_st, lon_st, st.floats(0, 360, allow_nan=False, exclude_max=True),
       st.floats(0, 19_000_000))
def test_property_direct_inverse_round_trip(lat, lon, azi, dist):
    lat = max(-89.9, min(89.9, lat))
    lat2, lon2 = geo.geodesic_direct(lat, lon, azi, dist)
    assert -90 <= lat2 <= 90 and -180 <= lon2 < 180
    s, _, _ = geo.geodesic_inverse(lat, lon, lat2, lon2)
    assert abs(s - dist) <= 2e-3  # a geodesic up to 19 000 km is the shortest path


# --- midpoint ------------------------------------------------------------------------------


def test_midpoint_halves_the_geodesic(rng):
    lat1, lon1, lat2, lon2 = random_pairs(rng, 200)
    far = np.array([KARNEY.Inverse(*x)["a12"]
                    for x in zip(lat1, lon1, lat2, lon2, strict=True)]) < 179
    lat1, lon1, lat2, lon2 = lat1[far], lon1[far], lat2[far], lon2[far]
    mlat, mlon = geo.path_midpoint(lat1, lon1, lat2, lon2)
    s, _, _ = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    a, _, _ = geo.geodesic_inverse(lat1, lon1, mlat, mlon)
    b, _, _ = geo.geodesic_inverse(mlat, mlon, lat2, lon2)
    np.testing.assert_allclose(a, s / 2, atol=2e-3)
    np.testing.assert_allclose(b, s / 2, atol=2e-3)


def test_midpoint_on_equator_and_meridian():
    # along the equator the midpoint of (0, 10) - (0, 30) is (0, 20); along a meridian
    # the midpoint lies on it (geometry of the ellipsoid of revolution).
    lat, lon = geo.path_midpoint(0.0, 10.0, 0.0, 30.0)
    assert lat == pytest.approx(0.0, abs=1e-9) and lon == pytest.approx(20.0, abs=1e-9)
    lat, lon = geo.path_midpoint(10.0, 5.0, 50.0, 5.0)
    assert lon == pytest.approx(5.0, abs=1e-9)
    assert 29.0 < lat < 31.0
    lat, lon = geo.path_midpoint(0.0, 179.0, 0.0, -179.0)  # across +-180
    assert lat == pytest.approx(0.0, abs=1e-9) and abs(lon) == pytest.approx(180.0, abs=1e-9)


# --- one path ------------------------------------------------------------------------------


def test_geodesic_path_published_inverse():
    # GeographicLib documentation, inverse example JFK -> LHR (as above): 5 551.759400319 km,
    # azi1 = 51.198882845 deg, azi2 = 107.821776735 deg (reverse bearing azi2 + 180).
    p = geo.geodesic_path((40.6, -73.8), (51.6, -0.5))
    assert isinstance(p, geo.GeodesicPath)
    assert p.distance_km == pytest.approx(5551.759400319, abs=1e-6)  # 1 mm
    assert p.bearing_deg == pytest.approx(51.198882845, abs=1e-7)
    assert p.reverse_bearing_deg == pytest.approx(107.821776735 + 180.0, abs=1e-7)


def test_geodesic_path_matches_geopy_and_pyproj(rng):
    # oracles: geopy.distance.geodesic for the distance (1e-9 km = 1 um), pyproj's Geod.inv
    # (PROJ's Karney) for the bearings (1e-7 deg; all these lines are over 1 m long)
    from pyproj import Geod

    wgs84 = Geod(ellps="WGS84")
    lat1, lon1, lat2, lon2 = random_pairs(rng, 200)
    for a, b, c, d in zip(lat1, lon1, lat2, lon2, strict=True):
        p = geo.geodesic_path((a, b), (c, d))
        assert p.distance_km == pytest.approx(geopy_geodesic((a, b), (c, d)).km, abs=1e-9)
        ref = KARNEY.Inverse(a, b, c, d)
        if ref["a12"] > 179.5:  # near the antipode the bearing is not unique
            continue
        az, back, _ = wgs84.inv(b, a, d, c)
        assert abs(angle_diff(p.bearing_deg, az)) < 1e-7
        assert abs(angle_diff(p.reverse_bearing_deg, back)) < 1e-7
        assert 0.0 <= p.bearing_deg < 360.0 and 0.0 <= p.reverse_bearing_deg < 360.0


def test_geodesic_path_agrees_with_geodesic_inverse(rng):
    # the one-path function (geopy + geographiclib) and the vectorised one (PROJ) solve the
    # same problem: 1 um and 1e-7 deg (geographiclib's Inverse decides the near-antipodal
    # cases, where the azimuth is not unique)
    lat1, lon1, lat2, lon2 = random_pairs(rng, 100)
    s, azi, rev = geo.geodesic_inverse(lat1, lon1, lat2, lon2)
    for i in range(lat1.size):
        p = geo.geodesic_path((lat1[i], lon1[i]), (lat2[i], lon2[i]))
        assert p.distance_km == pytest.approx(s[i] / 1000.0, abs=1e-9)
        if KARNEY.Inverse(lat1[i], lon1[i], lat2[i], lon2[i])["a12"] < 179.5:
            assert abs(angle_diff(p.bearing_deg, azi[i])) < 1e-7
            assert abs(angle_diff(p.reverse_bearing_deg, rev[i])) < 1e-7


def test_geodesic_path_input_forms():
    # a locator means its cell centre (spotkit.geo.locator); the same place as a geopy Point,
    # a tuple, a list or a numpy array gives the same path, to the last bit
    la1, lo1 = locator_to_latlon("JN58td")
    la2, lo2 = locator_to_latlon("FN31pr")
    ref = geo.geodesic_path((float(la1), float(lo1)), (float(la2), float(lo2)))
    for start, end in [
        ("JN58td", "FN31pr"),
        ("jn58TD", "fn31PR"),  # locators are read case-insensitively
        (Point(la1, lo1), Point(la2, lo2)),
        (Point(la1, lo1, 0.3), Point(la2, lo2, 1.2)),  # altitude is ignored
        ([la1, lo1], np.array([la2, lo2])),
        ("JN58td", Point(la2, lo2)),
        ((la1, lo1 + 360.0), (la2, lo2 - 360.0)),  # any longitude range
    ]:
        assert geo.geodesic_path(start, end) == pytest.approx(ref, abs=1e-9)
    # geopy.distance.geodesic between the cell centres as the distance oracle
    assert ref.distance_km == pytest.approx(geopy_geodesic((la1, lo1), (la2, lo2)).km,
                                            abs=1e-9)
    # swapping the ends swaps the bearings
    back = geo.geodesic_path("FN31pr", "JN58td")
    assert back.distance_km == pytest.approx(ref.distance_km, abs=1e-9)
    assert abs(angle_diff(back.bearing_deg, ref.reverse_bearing_deg)) < 1e-9
    assert abs(angle_diff(back.reverse_bearing_deg, ref.bearing_deg)) < 1e-9


def test_geodesic_path_zero_length_and_lazy_name():
    import spotkit

    p = spotkit.geodesic_path("JO62qm", "JO62qm")
    assert spotkit.geodesic_path is geo.geodesic_path
    assert p.distance_km == 0.0
    assert 0.0 <= p.bearing_deg < 360.0 and 0.0 <= p.reverse_bearing_deg < 360.0


@pytest.mark.parametrize("start, end", [
    ("JN58td", "ZZ99"),  # field letters go up to R
    ("JN58t", "FN31"),  # odd length
    ("", "FN31"),
])
def test_geodesic_path_malformed_locator(start, end):
    with pytest.raises(LocatorError):
        geo.geodesic_path(start, end)


@pytest.mark.parametrize("start, end, match", [
    ((95.0, 0.0), (0.0, 0.0), r"start: latitude 95\.0 deg is outside -90\.\.90"),
    ((0.0, 0.0), (-90.5, 10.0), r"end: latitude -90\.5 deg is outside"),
    ((np.nan, 0.0), (0.0, 0.0), "must be finite"),
    ((0.0, 0.0), (0.0, np.inf), "must be finite"),
    ((0.0, 0.0, 0.0), (1.0, 1.0), "geopy Point, a \\(lat, lon\\) pair"),
    (5.0, (1.0, 1.0), "start must be a geopy Point"),
    ((0.0, 0.0), ("north", 1.0), "end must be a geopy Point"),
    (None, "JN58td", "start must be"),
])
def test_geodesic_path_bad_arguments(start, end, match):
    # bad arguments, not bad data: UsageError (a ValueError too), naming which end is wrong
    with pytest.raises(UsageError, match=match) as err:
        geo.geodesic_path(start, end)
    assert isinstance(err.value, ValueError)


# --- hop geometry --------------------------------------------------------------------------


def test_max_hop_distance():
    # Dmax = 2 R0 arccos(R0 / (R0 + h)), R0 = 6371 km (spherical mirror model, ITU-R P.533
    # form, from memory); recomputed values 2351 / 3836 / 4130 km, to 0.5 km.
    np.testing.assert_allclose(geo.max_hop_distance([110.0, 300.0, 350.0]),
                               [2351, 3836, 4130], atol=0.5)


@pytest.mark.parametrize("distance, height, hops, expected", [
    # spherical mirror model (ITU-R P.533 form, from memory); recomputed values, 0.005 deg
    (1000.0, 300.0, None, 28.12),
    (2000.0, 300.0, None, 11.81),
    (3000.0, 300.0, None, 4.26),
    (1000.0, 110.0, None, 10.05),
    (10000.0, 300.0, 3, 2.42),
])
def test_elevation_angle(distance, height, hops, expected):
    assert geo.elevation_angle(distance, height, hops) == pytest.approx(expected, abs=0.005)


def test_hop_count_and_elevation_arrays():
    d = np.array([0.0, 100.0, 3835.0, 3837.0, 10000.0, np.nan])
    n = geo.hop_count(d, 300.0)
    np.testing.assert_array_equal(n[:5], [1, 1, 1, 2, 3])
    assert np.isnan(n[5])
    el = geo.elevation_angle(d, 300.0)
    assert el[0] == pytest.approx(90.0)
    assert np.all(el[1:5] > 0) and np.isnan(el[5])
    # default hops = hop_count: the same as passing them
    np.testing.assert_allclose(el[:5], geo.elevation_angle(d[:5], 300.0, n[:5]))
    # a grazing single hop at Dmax leaves at 0 deg
    assert geo.elevation_angle(geo.max_hop_distance(300.0), 300.0, 1) == pytest.approx(
        0.0, abs=1e-9)


# --- spot tables ---------------------------------------------------------------------------


def _table():
    tx = ["JN58td", "IO91lk", "JN58td", "RE78ir", "JN58td", "FN31pr", None, "JN58TD"]
    rx = ["FN31pr", "FN31pr", "FN31pr", "IO91lk45", "JN58td", "RE78ir", "FN31pr", "FN31"]
    return pd.DataFrame({C.TX_LOCATOR: pd.Categorical(tx), C.RX_LOCATOR: rx})


@pytest.mark.parametrize("dense", [True, False])
def test_add_path_columns_matches_geopy_per_row(dense, monkeypatch):
    if not dense:  # force the hashing branch of the pair factorisation
        monkeypatch.setattr(geo, "_DENSE_KEYS", -1)
    df = _table()
    out = geo.add_path_columns(df)
    for col in C.DERIVED:
        assert out[col].dtype == np.float64
    for i, (t, r) in enumerate(zip(df[C.TX_LOCATOR], df[C.RX_LOCATOR], strict=True)):
        if t is None or (isinstance(t, float) and np.isnan(t)):
            assert np.isnan(out[C.DISTANCE].iloc[i]) and np.isnan(out[C.TX_LAT].iloc[i])
            continue
        la1, lo1 = locator_to_latlon(t)
        la2, lo2 = locator_to_latlon(r)
        assert out[C.TX_LAT].iloc[i] == la1 and out[C.RX_LON].iloc[i] == lo2
        # geopy.distance.geodesic (Karney) per row, 1 mm
        assert out[C.DISTANCE].iloc[i] == pytest.approx(
            geopy_geodesic((la1, lo1), (la2, lo2)).km, abs=1e-6)
        ref = KARNEY.Inverse(la1, lo1, la2, lo2)
        if ref["s12"] > 0:
            assert abs(angle_diff(out[C.BEARING].iloc[i], ref["azi1"])) < 1e-6
            assert abs(angle_diff(out[C.REVERSE_BEARING].iloc[i], ref["azi2"] + 180)) < 1e-6
    assert out[C.DISTANCE].iloc[4] == 0.0
    assert list(out.columns[:2]) == [C.TX_LOCATOR, C.RX_LOCATOR]
    assert C.DISTANCE not in df.columns  # input untouched


def test_add_path_columns_solves_each_distinct_pair_once(monkeypatch, rng):
    calls = []
    real = geo.geodesic_inverse

    def counting(lat1, lon1, lat2, lon2):
        calls.append(np.size(lat1))
        return real(lat1, lon1, lat2, lon2)

    monkeypatch.setattr(geo, "geodesic_inverse", counting)
    locs = np.array(["JN58td", "IO91lk", "FN31pr", "RE78ir", "GF15vc", "FM18lw"])
    df = pd.DataFrame({C.TX_LOCATOR: rng.choice(locs[:3], 5000),
                       C.RX_LOCATOR: pd.Categorical(rng.choice(locs, 5000))})
    out = geo.add_path_columns(df)
    n_pairs = len(df.drop_duplicates())
    assert calls == [n_pairs]
    # the same locator pair always gets the same numbers
    assert (out.groupby([C.TX_LOCATOR, C.RX_LOCATOR], observed=True)[C.DISTANCE]
            .nunique().max()) == 1


def test_add_path_columns_empty_and_undecodable():
    df = pd.DataFrame({C.TX_LOCATOR: pd.Series([], dtype="category"),
                       C.RX_LOCATOR: pd.Series([], dtype=object)})
    out = geo.add_path_columns(df)
    assert len(out) == 0 and all(c in out.columns for c in C.DERIVED)
    bad = pd.DataFrame({C.TX_LOCATOR: ["ZZ99", "JN58"], C.RX_LOCATOR: ["IO91", "IO91"]})
    out = geo.add_path_columns(bad)
    assert np.isnan(out[C.DISTANCE].iloc[0]) and np.isfinite(out[C.DISTANCE].iloc[1])


def test_add_path_geometry(monkeypatch):
    df = _table()
    out = geo.add_path_geometry(df, layer_height_km=300.0)
    for col in (C.MID_LAT, C.MID_LON, C.HOPS, C.ELEVATION):
        assert out[col].dtype == np.float64
    ok = out[C.DISTANCE].notna()
    np.testing.assert_allclose(out.loc[ok, C.HOPS], geo.hop_count(out.loc[ok, C.DISTANCE]))
    np.testing.assert_allclose(out.loc[ok, C.ELEVATION],
                               geo.elevation_angle(out.loc[ok, C.DISTANCE].to_numpy()))
    mlat, mlon = geo.path_midpoint(out.loc[ok, C.TX_LAT], out.loc[ok, C.TX_LON],
                                   out.loc[ok, C.RX_LAT], out.loc[ok, C.RX_LON])
    np.testing.assert_allclose(out.loc[ok, C.MID_LAT], mlat, atol=1e-9)
    np.testing.assert_allclose(out.loc[ok, C.MID_LON], mlon, atol=1e-9)
    assert out.loc[~ok, [C.MID_LAT, C.HOPS, C.ELEVATION]].isna().all().all()
    # with the path columns already present it gives the same, solving no geodesic again
    with_paths = geo.add_path_columns(df)

    def fail(*args, **kwargs):
        raise AssertionError("inverse problem solved again")

    monkeypatch.setattr(geo, "geodesic_inverse", fail)
    again = geo.add_path_geometry(with_paths)
    pd.testing.assert_frame_equal(again, out)
    # a lower layer: more hops, elevations as the mirror model gives them at h = 110 km
    low = geo.add_path_geometry(with_paths, layer_height_km=110.0)
    np.testing.assert_allclose(low.loc[ok, C.ELEVATION], geo.elevation_angle(
        low.loc[ok, C.DISTANCE].to_numpy(), 110.0))
    assert (low.loc[ok, C.HOPS] >= out.loc[ok, C.HOPS]).all()
