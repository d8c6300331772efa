"""The shipped Natural Earth 1:110m land layer (spotkit.viz.basemap)."""
from __future__ import annotations

import numpy as np
import pytest

from spotkit.viz import basemap


def test_layer_is_small_valid_and_documented():
    assert basemap.LAND_FILE.stat().st_size < 1_000_000  # the issue: well under 1 MB
    land = basemap.land_geometry()
    assert land.geom_type == "MultiPolygon" and land.is_valid
    note = (basemap.LAND_FILE.parent / "NATURAL_EARTH.md").read_text()
    assert "public domain" in note and "Natural Earth" in note
    assert "public domain" in basemap.land_source()["licence"]
    lon_min, lat_min, lon_max, lat_max = land.bounds
    assert lon_min >= -180 and lon_max <= 180.001 and lat_min >= -90 and lat_max < 84


def test_land_area_matches_the_earth():
    """Total land area of the Earth: about 148.9 million km^2 (common knowledge, from memory;
    includes Antarctica and inland water). The 1:110m outline generalises shores, so allow
    2 % (3 million km^2). Geodesic polygon area from pyproj (Karney), a test-only oracle."""
    from pyproj import Geod

    geod = Geod(ellps="WGS84")
    polygons = basemap.land_geometry().geoms
    area_km2 = sum(abs(geod.geometry_area_perimeter(p)[0]) for p in polygons) / 1e6
    assert area_km2 == pytest.approx(148.9e6, rel=0.02)


@pytest.mark.parametrize(
    "lat, lon, land",
    [
        (48.146, 11.625, True),    # JN58td cell centre, Munich (Tyson 1989 locator example)
        (23.0, 13.0, True),        # central Sahara (common geography)
        (-25.0, 134.0, True),      # central Australia
        (-80.0, 0.0, True),        # Antarctic ice sheet
        (0.0, -30.0, False),       # mid Atlantic
        (42.0, 50.5, False),       # Caspian Sea: a hole in the land layer
        (-40.0, -150.0, False),    # South Pacific
        (64.0, -150.0 - 360.0, True),    # interior Alaska, longitude given off by -360 deg
    ],
)
def test_is_land_at_known_places(lat, lon, land):
    # tolerance: the points sit hundreds of km from any 1:110m shore
    assert bool(basemap.is_land(lat, lon)[0]) is land


def test_is_land_vectorised_and_rings_cover_geometry():
    lat = np.array([23.0, 0.0, -25.0])
    lon = np.array([13.0, -30.0, 134.0])
    assert basemap.is_land(lat, lon).tolist() == [True, False, True]
    rings = basemap.land_rings()
    n_rings = sum(1 + len(p.interiors) for p in basemap.land_geometry().geoms)
    assert len(rings) == n_rings
    assert all(r.shape[1] == 2 and np.allclose(r[0], r[-1]) for r in rings)
