"""Maidenhead locators against Tyson (QST 1989) and the IARU Region 1 definition."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from spotkit.errors import LocatorError
from spotkit.geo.locator import (
    is_valid_locator,
    latlon_to_locator,
    locator_cell_size,
    locator_to_latlon,
    normalize_locator,
)

# E. Tyson, "Conversion between geodetic and grid locator systems", QST, Jan. 1989,
# pp. 29-30, 43: worked encoding examples (6 characters).
TYSON = [
    (48.14666, 11.60833, "JN58td"),
    (-34.91, -56.21166, "GF15vc"),
    (38.92, -77.065, "FM18lw"),
    (-41.28333, 174.745, "RE78ir"),
    (41.714775, -72.727260, "FN31pr"),
]


@pytest.mark.parametrize("lat, lon, loc", TYSON)
def test_tyson_encode_examples(lat, lon, loc):
    assert latlon_to_locator(lat, lon) == loc
    assert latlon_to_locator(lat, lon, precision=4) == loc[:4]
    assert latlon_to_locator(lat, lon, precision=2) == loc[:2]


def test_tyson_examples_vectorised_and_inside_their_cell():
    lat, lon, locs = (np.array(x) for x in zip(*TYSON, strict=True))
    assert list(latlon_to_locator(lat, lon)) == list(locs)
    clat, clon = locator_to_latlon(locs)
    # a 6-character cell is 5' x 2.5' (IARU Region 1 definition): the point lies within
    # half a cell of the centre
    assert np.all(np.abs(clon - lon) <= 2.5 / 60) and np.all(np.abs(clat - lat) <= 1.25 / 60)


@pytest.mark.parametrize("loc, lat, lon", [
    # cell centres from the IARU Region 1 definition (field 20 x 10 deg, square 2 x 1 deg,
    # subsquare 5' x 2.5', extended square 30" x 15"), recomputed by hand; 1e-9 deg
    ("JN58td", 48.145833333, 11.625),
    ("IO91lk", 51.4375, -1.041666667),
    ("IO91lk45", 51.439583333, -1.045833333),
    ("JN58", 48.5, 11.0),
    ("JN", 45.0, 10.0),
    ("AA00aa00", -90 + 7.5 / 3600, -180 + 15 / 3600),
    ("RR99xx99", 90 - 7.5 / 3600, 180 - 15 / 3600),
])
def test_cell_centres(loc, lat, lon):
    got = locator_to_latlon(loc)
    assert got[0] == pytest.approx(lat, abs=1e-9)
    assert got[1] == pytest.approx(lon, abs=1e-9)


def test_case_and_blanks_are_ignored():
    ref = locator_to_latlon("JN58td")
    for spelling in ["jn58td", "JN58TD", "jN58Td", "  JN58td "]:
        assert locator_to_latlon(spelling) == ref
    assert list(normalize_locator(["jn58TD", "io91LK45", "fn31", "bad!"])) == [
        "JN58td", "IO91lk45", "FN31", None]


def test_eight_characters():
    assert latlon_to_locator(51.4396, -1.0458, precision=8) == "IO91lk45"
    dlon, dlat = locator_cell_size(["IO91lk45", "IO91lk", "IO91", "IO"])
    np.testing.assert_allclose(dlon, [0.5 / 60, 5 / 60, 2, 20])
    np.testing.assert_allclose(dlat, [0.25 / 60, 2.5 / 60, 1, 10])


@pytest.mark.parametrize("bad", [
    "", "J", "JN5", "JN58t", "SN58",  # S is beyond field letter R
    "JNA8", "JN58yx",  # y is beyond subsquare letter x
    "JN58tdA1", "JN58td2", "JN58td255", "JN58 td", "12AB", None, np.nan,
    "JN58td25k", "JN58td25ky",  # y is beyond the fifth-pair letter x
    "JN58td25kx1", "JN58td2512",  # 11 characters; digits where letters belong
])
def test_invalid_locators(bad):
    assert not is_valid_locator([bad])[0]
    with pytest.raises(LocatorError):
        locator_to_latlon(bad)
    lat, lon = locator_to_latlon([bad, "JN58"], errors="coerce")
    assert np.isnan(lat[0]) and np.isnan(lon[0]) and lat[1] == 48.5


@pytest.mark.parametrize("loc, lat, lon", [
    # 10-character cells: the fifth pair (a-x) divides the 30" x 15" cell 24 x 24 (the usual
    # extension, English Wikipedia "Maidenhead Locator System"); worked by hand from the
    # module table: JN58td25 starts at lon 10 + 95' + 1' = 11.6 deg, lat 48 + 7.5' + 1.25'
    # = 48.1458333 deg; k (10) and x (23) add 12.5" and 14.375"; the centre is half a cell
    # (0.625", 0.3125") further. 1e-9 deg.
    ("JN58td25kx", 48.125 + 1.25 / 60 + 14.375 / 3600 + 0.3125 / 3600,
     11.6 + 12.5 / 3600 + 0.625 / 3600),
    ("AA00aa00aa", -90 + 0.3125 / 3600, -180 + 0.625 / 3600),
    ("RR99xx99xx", 90 - 0.3125 / 3600, 180 - 0.625 / 3600),
])
def test_ten_character_cell_centres(loc, lat, lon):
    assert is_valid_locator(loc)[0]
    got = locator_to_latlon(loc)
    assert got[0] == pytest.approx(lat, abs=1e-9)
    assert got[1] == pytest.approx(lon, abs=1e-9)
    assert latlon_to_locator(lat, lon, precision=10) == loc
    dlon, dlat = locator_cell_size(loc)
    assert dlon[0] * 3600 == pytest.approx(1.25) and dlat[0] * 3600 == pytest.approx(0.625)


def test_ten_characters_normalised_and_inside_their_eight_character_cell():
    assert list(normalize_locator(["jn58TD25KX", "IO91LK45AA"])) == ["JN58td25kx", "IO91lk45aa"]
    # the 10-character cell lies inside its 8-character cell
    lat8, lon8 = locator_to_latlon("JN58td25")
    lat10, lon10 = locator_to_latlon("JN58td25kx")
    assert abs(lat10 - lat8) < 7.5 / 3600 and abs(lon10 - lon8) < 15 / 3600


def test_error_names_first_bad_value():
    with pytest.raises(LocatorError, match="'ZZ99'"):
        locator_to_latlon(["JN58", "ZZ99", "XX"])
    with pytest.raises(ValueError, match="coerce"):
        locator_to_latlon("JN58", errors="ignore")
    with pytest.raises(ValueError, match="precision"):
        latlon_to_locator(0, 0, precision=5)
    with pytest.raises(LocatorError):
        latlon_to_locator(91.0, 0.0)
    with pytest.raises(LocatorError):
        latlon_to_locator(np.nan, 0.0)


def test_input_kinds_agree():
    locs = ["JN58td", "io91lk", None, "FN31", "JN58td"]
    want = locator_to_latlon(locs, errors="coerce")
    for kind in (np.array(locs, dtype=object), pd.Series(locs),
                 pd.Series(locs, dtype="category"), pd.Categorical(locs)):
        got = locator_to_latlon(kind, errors="coerce")
        np.testing.assert_array_equal(got[0], want[0])
        np.testing.assert_array_equal(got[1], want[1])
    assert locator_to_latlon([])[0].size == 0
    assert isinstance(locator_to_latlon("JN58")[0], float)


def test_edges_of_the_world():
    # lon 180 is lon -180 (wrap); lat 90 belongs to the top row (IARU definition)
    assert latlon_to_locator(90.0, 180.0, precision=8) == "AR09ax09"
    assert latlon_to_locator(-90.0, -180.0, precision=8) == "AA00aa00"
    assert latlon_to_locator(0.0, 0.0, precision=4) == "JJ00"
    assert latlon_to_locator(-0.0001, -0.0001, precision=4) == "II99"


lats = st.floats(-90, 90, allow_nan=False)
lons = st.floats(-180, 180, allow_nan=False, exclude_max=True)


@settings(max_examples=150, deadline=None)
@given(lats, lons, st.sampled_from([2, 4, 6, 8, 10]))
def test_property_round_trip_and_centre_inside_cell(lat, lon, precision):
    loc = latlon_to_locator(lat, lon, precision=precision)
    assert len(loc) == precision and is_valid_locator(loc)[0]
    clat, clon = locator_to_latlon(loc)
    assert latlon_to_locator(clat, clon, precision=precision) == loc
    dlon, dlat = locator_cell_size(loc)
    # the point lies in the cell whose centre is returned (1e-7 deg allows for the
    # encoder's guard against floating-point drift at cell edges, ~1 cm)
    assert abs(clat - lat) <= dlat[0] / 2 + 1e-7
    assert abs((clon - lon + 180) % 360 - 180) <= dlon[0] / 2 + 1e-7


# --- locator_problem: what is wrong with a locator typed by a person ------------------------
# Allowed characters per pair from the module docstring's table (IARU Region 1 VHF Managers
# Handbook): field A-R, square 0-9, subsquare a-x.
@pytest.mark.parametrize("text, expected", [
    ("JO62qz", "6th character 'z' is past 'x' (the subsquare is letters a-x)"),
    ("J062qm", "2nd character '0' is the digit 0 where the letter O belongs "
               "(the field is letters A-R)"),
    ("0O62", "1st character '0' is the digit 0 where the letter O belongs"),
    ("JO6Oqm", "4th character 'O' is the letter O where the digit 0 belongs "
               "(the square is digits 0-9)"),
    ("JS62", "2nd character 'S' is past 'R' (the field is letters A-R)"),
    ("JOx2", "3rd character 'x' is a letter (the square is digits 0-9)"),
    ("JO62q", "it has 5 characters"),
    ("JO62qm2", "it has 7 characters"),
    ("  ", "it is empty"),
    ("JO62qm2a", "8th character 'a' is a letter (the extended square is digits 0-9)"),
])
def test_locator_problem_names_the_character(text, expected):
    from spotkit.geo.locator import locator_problem

    assert expected in locator_problem(text)


@pytest.mark.parametrize("text", ["JO62qm", "jo62QM", "JN58", "RR99xx99xx", "AA00aa00aa", "JO"])
def test_locator_problem_none_for_valid(text):
    from spotkit.geo.locator import is_valid_locator, locator_problem

    assert locator_problem(text) is None
    assert is_valid_locator(text).all()


def test_locator_problem_agrees_with_validity():
    """Every string of allowed length from a small alphabet: a problem exactly when invalid."""
    import itertools

    from spotkit.geo.locator import is_valid_locator, locator_problem

    chars = "AOR0S9xz"
    texts = ["".join(t) for n in (2, 4) for t in itertools.product(chars, repeat=n)]
    texts += ["JO62" + a + b for a in "axyOz0" for b in "amx"]
    valid = is_valid_locator(texts)
    problems = [locator_problem(t) for t in texts]
    assert [p is None for p in problems] == valid.tolist()


def test_locator_error_message_names_the_problem():
    from spotkit.errors import LocatorError
    from spotkit.geo.locator import locator_to_latlon

    with pytest.raises(LocatorError, match=r"'J062qm': 2nd character '0' is the digit 0"):
        locator_to_latlon("J062qm")
    with pytest.raises(LocatorError, match=r"'JO62qz': 6th character 'z' is past 'x'"):
        locator_to_latlon(["JO62qm", "JO62qz"])
