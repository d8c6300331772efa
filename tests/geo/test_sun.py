"""Solar position and day / night / grey line, against Meeus, NREL SPA and pvlib."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pvlib
import pytest

from spotkit import columns as C
from spotkit.errors import UsageError
from spotkit.geo import geodesic as geo
from spotkit.geo import sun


def test_meeus_example_25a_low_precision():
    # Meeus, Astronomical Algorithms (1991), Example 25.a, 1992 Oct 13.0 TD
    # (JDE 2448908.5), low-accuracy method: RA 198.38083 deg, Dec -7.78507 deg.
    # Time passed as UT (the model ignores the UT/TD difference); 1e-4 deg tolerance
    # covers the example's rounding to 5 decimals.
    ra, dec = sun.solar_equatorial(pd.Timestamp("1992-10-13 00:00", tz="UTC"))
    assert ra[0] == pytest.approx(198.38083, abs=1e-4)
    assert dec[0] == pytest.approx(-7.78507, abs=1e-4)


def test_meeus_example_12a_sidereal_time():
    # Meeus (1991), Example 12.a: mean sidereal time at Greenwich, 1987 Apr 10, 0h UT =
    # 13h10m46.3668s = 197.693195 deg; tolerance 1e-5 deg (0.0024 s of time).
    gmst = sun.greenwich_sidereal_time("1987-04-10 00:00", apparent=False)
    assert gmst[0] == pytest.approx((13 + 10 / 60 + 46.3668 / 3600) * 15, abs=1e-5)


def test_nrel_spa_example():
    # Reda & Andreas, NREL/TP-560-34302 (2004/2008), SPA example: 2003-10-17 12:30:30
    # local (UTC-7), 39.742476 N, 105.1786 W: topocentric zenith 50.11162 deg (with
    # refraction at 820 mbar, 11 C), azimuth 194.34024 deg. Our elevation is geometric:
    # the omitted refraction is about 0.016 deg at this height, the low-precision series
    # adds up to ~0.02 deg; tolerance 0.05 deg.
    t = pd.Timestamp("2003-10-17 12:30:30", tz="Etc/GMT+7")  # POSIX sign: UTC-7
    el, az = sun.solar_position(t, 39.742476, -105.1786)
    assert isinstance(el, float) and isinstance(az, float)
    assert 90.0 - el == pytest.approx(50.11162, abs=0.05)
    assert az == pytest.approx(194.34024, abs=0.05)
    # the geometric elevation lies below the refracted one, by roughly the refraction
    assert 0.0 < (90.0 - el) - 50.11162 < 0.03


def test_pvlib_oracle_random_times_and_places(rng):
    # pvlib.solarposition (NREL SPA, Reda & Andreas 2004, error 0.0003 deg) as the oracle;
    # its "elevation" is without refraction. Our series is good to ~0.01 deg for 1990-2050
    # (Meeus ch. 25) plus up to 0.0024 deg of parallax that SPA includes: tolerance 0.02 deg
    # in elevation and 0.02 deg of arc in azimuth (|d az| * cos(elevation)).
    start = pd.Timestamp("1990-01-01", tz="UTC")
    for _ in range(12):
        lat = rng.uniform(-85, 85)
        lon = rng.uniform(-180, 180)
        times = pd.DatetimeIndex(start + pd.to_timedelta(
            rng.uniform(0, 60 * 365.25 * 86400, 60), unit="s"))
        ref = pvlib.solarposition.get_solarposition(times, lat, lon, method="nrel_numpy")
        el, az = sun.solar_position(times, lat, lon)
        ref_el = ref["elevation"].to_numpy()
        np.testing.assert_allclose(el, ref_el, atol=0.02)
        daz = (az - ref["azimuth"].to_numpy() + 180) % 360 - 180
        np.testing.assert_allclose(daz * np.cos(np.deg2rad(ref_el)), 0.0, atol=0.02)
        assert np.all((az >= 0) & (az < 360))


@pytest.mark.parametrize("kind", ["scalar", "list", "datetime64", "index", "series"])
def test_time_input_kinds(kind):
    stamps = ["2024-06-21 12:00", "2024-12-21 12:00"]
    if kind == "scalar":
        t = pd.Timestamp(stamps[0], tz="UTC")
    elif kind == "list":
        t = stamps
    elif kind == "datetime64":
        t = np.array(stamps, dtype="datetime64[ns]")
    elif kind == "index":
        t = pd.DatetimeIndex(stamps, tz="UTC")
    else:
        t = pd.Series(pd.to_datetime(stamps, utc=True), index=[10, 20])
    el = sun.solar_elevation(t, 51.5, 0.0)
    # noon at Greenwich, 51.5 N: elevation = 90 - 51.5 + declination, declination
    # +-23.44 deg at the solstices (obliquity, Meeus ch. 22); equation of time moves
    # the sun's hour angle by < 2 deg at these dates, tolerance 0.1 deg.
    expected = [90 - 51.5 + 23.44, 90 - 51.5 - 23.44]
    if kind == "scalar":
        assert el == pytest.approx(expected[0], abs=0.1)
    else:
        np.testing.assert_allclose(el, expected, atol=0.1)


def test_nat_and_nan_propagate():
    el, az = sun.solar_position(pd.to_datetime(["2024-01-01", None], utc=True),
                                [10.0, 10.0], [0.0, 0.0])
    assert np.isfinite(el[0]) and np.isnan(el[1]) and np.isnan(az[1])
    el = sun.solar_elevation("2024-01-01 12:00", [np.nan, 0.0], 0.0)
    assert np.isnan(el[0]) and np.isfinite(el[1])


# --- classification ---------------------------------------------------------------------------


def test_known_configurations():
    # At the March equinox the sun is overhead the equator near noon (declination ~0;
    # geometry): day. At local midnight there it is ~90 deg below the horizon: night.
    # Near sunrise (06:00 local) on the equator it is within about 2 deg of the horizon.
    noon = sun.solar_elevation("2024-03-20 12:00", 0.0, 0.0)
    midnight = sun.solar_elevation("2024-03-20 00:00", 0.0, 0.0)
    assert noon > 85 and midnight < -85
    assert sun.classify_light(noon) == "day"
    assert sun.classify_light(midnight) == "night"
    # polar night: 80 N at the December solstice is night all day (declination -23.44)
    el = sun.solar_elevation(pd.date_range("2024-12-21", periods=24, freq="h", tz="UTC"),
                             80.0, 15.0)
    assert set(sun.classify_light(el)) == {"night"}
    # equator, equinox: the sun crosses the horizon at roughly 1/4 deg per minute, so in
    # 4-minute steps around 06:00 local the grey band (-6 .. -0.833 deg) holds about
    # 5.2 deg / 0.25 = 21 minutes, i.e. 5 steps (geometry)
    times = pd.date_range("2024-03-20 05:00", "2024-03-20 07:00", freq="4min", tz="UTC")
    classes = sun.classify_light(sun.solar_elevation(times, 0.0, 0.0))
    assert list(pd.unique(classes)) == ["night", "greyline", "day"]
    assert 4 <= int((classes == "greyline").sum()) <= 6


def test_classify_light_edges():
    el = np.array([-0.833, -0.8329, -6.0, -6.0001, np.nan, 45.0])
    assert list(sun.classify_light(el)) == ["greyline", "day", "greyline", "night", None, "day"]
    assert list(sun.classify_light([-10.0, -13.0], twilight_deg=-12.0)) == ["greyline",
                                                                          "night"]
    with pytest.raises(UsageError):
        sun.classify_light(0.0, twilight_deg=0.0)


@pytest.mark.parametrize("tx, rx, mid, expected", [
    (10.0, 20.0, 30.0, "day"),
    (-30.0, -20.0, -40.0, "night"),
    (10.0, -20.0, 0.0, "mixed"),
    (-20.0, 10.0, None, "mixed"),
    (-3.0, 10.0, 0.0, "greyline"),
    (-30.0, -3.0, -10.0, "greyline"),
    (-3.0, -4.0, 20.0, "greyline"),
    (-30.0, -20.0, 15.0, "mixed"),  # dark ends, daylit middle (long path)
    (10.0, 20.0, -15.0, "mixed"),  # daylit ends, dark middle
    (10.0, 20.0, -3.0, "day"),  # a grey middle does not change the class
    (np.nan, 20.0, 0.0, None),
])
def test_path_light_rules(tx, rx, mid, expected):
    assert sun.path_light(tx, rx, mid) == expected


def test_path_light_vectorised():
    got = sun.path_light(np.array([10.0, -10.0, -3.0]), np.array([10.0, 10.0, -10.0]),
                         np.array([10.0, 0.0, -10.0]))
    assert list(got) == ["day", "mixed", "greyline"]


# --- spot tables ------------------------------------------------------------------------------


def _spots():
    slots = pd.to_datetime(["2024-03-20 12:00", "2024-03-20 12:00", "2024-03-20 00:00",
                            "2024-03-20 06:00", "2024-03-20 12:00", None], utc=True)
    return pd.DataFrame({
        C.SLOT: slots,
        C.TX_LOCATOR: pd.Categorical(["JJ00aa", "JN58td", "JJ00aa", "JN58td", "FN31pr",
                                      "JJ00aa"]),
        C.RX_LOCATOR: ["JJ00ab", "FN31pr", "JJ00ab", "RE78ir", "JJ00aa", "JJ00ab"],
    })


def test_add_sun_columns_matches_direct_computation():
    df = _spots()
    out = sun.add_sun_columns(df)
    assert C.MID_LAT in out.columns  # computed because it was absent
    for col, (la, lo) in {C.TX_SUN: (C.TX_LAT, C.TX_LON), C.RX_SUN: (C.RX_LAT, C.RX_LON),
                          C.MID_SUN: (C.MID_LAT, C.MID_LON)}.items():
        assert out[col].dtype == np.float64
        want = sun.solar_elevation(df[C.SLOT], out[la].to_numpy(), out[lo].to_numpy())
        np.testing.assert_allclose(out[col], want, atol=1e-9)
    want = sun.path_light(out[C.TX_SUN], out[C.RX_SUN], out[C.MID_SUN])
    assert list(out[C.PATH_LIGHT].astype(object).where(out[C.PATH_LIGHT].notna(), None)) \
        == list(want)
    assert isinstance(out[C.PATH_LIGHT].dtype, pd.CategoricalDtype)
    # JJ00aa (near 0 N 0 E) at equinox noon is day at both ends; at midnight night
    assert out[C.PATH_LIGHT].iloc[0] == "day"
    assert out[C.PATH_LIGHT].iloc[2] == "night"
    assert pd.isna(out[C.PATH_LIGHT].iloc[5])  # no slot -> unknown


def test_add_sun_columns_solar_coordinates_once_per_distinct_slot(monkeypatch):
    sizes = []
    real = sun._slot_terms

    def counting(jd):
        sizes.append(np.size(jd))
        return real(jd)

    monkeypatch.setattr(sun, "_slot_terms", counting)
    df = pd.concat([_spots()] * 50, ignore_index=True)
    out = sun.add_sun_columns(geo.add_path_geometry(df))
    # 3 distinct slots in _spots, plus one slot for the missing time
    assert sizes == [df[C.SLOT].nunique() + 1] == [4]
    assert len(out) == 300
    # rows that share slot and place share the elevation
    assert (out.groupby([C.SLOT, C.TX_LOCATOR], observed=True)[C.TX_SUN].nunique() == 1).all()


def test_add_sun_columns_needs_time():
    df = _spots().drop(columns=[C.SLOT])
    with pytest.raises(UsageError):
        sun.add_sun_columns(df)
