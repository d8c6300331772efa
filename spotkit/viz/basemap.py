"""The shipped offline land layer: Natural Earth 1:110m land, no network needed.

Map libraries usually download coastlines the first time a map is drawn; spotkit instead
ships one compact layer, ``spotkit/data/ne_110m_land.geojson`` (about 0.1 MB), made by
dissolving the public-domain Natural Earth 1:110m "Admin 0 - Countries" polygons into land
masses (see ``spotkit/data/NATURAL_EARTH.md`` for source, licence and how it was made).

Model and known error: at 1:110m the coastline is generalised to a few kilometres to tens of
kilometres; small islands are missing and coordinates are stored to 0.001 deg (about 110 m),
far below that generalisation. The layer is meant as a backdrop for maps, not for deciding
whether a station is on land to better than a few tens of kilometres.

This module only reads the data (with :mod:`json` and :mod:`numpy`; :func:`land_geometry` and
:func:`is_land` also need :mod:`shapely`). Drawing it is :mod:`spotkit.viz.maps`' job.
"""
from __future__ import annotations

import json
from functools import lru_cache
from pathlib import Path

import numpy as np

#: The shipped land layer (GeoJSON Feature, lon/lat on WGS-84).
LAND_FILE = Path(__file__).resolve().parents[1] / "data" / "ne_110m_land.geojson"


@lru_cache(maxsize=1)
def _land_feature() -> dict:
    with open(LAND_FILE, encoding="utf-8") as fh:
        return json.load(fh)


def land_source() -> dict:
    """Where the shipped layer came from (the GeoJSON Feature's properties)."""
    return dict(_land_feature()["properties"])


def land_rings() -> list[np.ndarray]:
    """The boundary rings of the land layer as plain arrays.

    Returns
    -------
    list of numpy.ndarray
        One ``(n, 2)`` array of (longitude, latitude) [deg] per ring: the exterior ring of
        each land polygon, followed by its holes (e.g. the Caspian Sea). Together the rings
        are the 1:110m coastline.
    """
    geom = _land_feature()["geometry"]
    rings = []
    for polygon in geom["coordinates"]:
        for ring in polygon:
            rings.append(np.asarray(ring, dtype=float))
    return rings


@lru_cache(maxsize=1)
def land_geometry():
    """The land layer as a :class:`shapely.MultiPolygon` in lon/lat [deg] (WGS-84).

    Returns
    -------
    shapely.MultiPolygon
    """
    from shapely.geometry import shape

    return shape(_land_feature()["geometry"])


def is_land(lat, lon) -> np.ndarray:
    """Whether each point lies on land in the shipped 1:110m layer.

    Parameters
    ----------
    lat, lon : float or array-like
        Latitude and longitude [deg]; longitudes are wrapped into [-180, 180).

    Returns
    -------
    numpy.ndarray of bool
        Points on the coastline count as land. Accurate to the layer's generalisation
        (a few to tens of km).
    """
    import shapely

    la = np.atleast_1d(np.asarray(lat, dtype=float))
    lo = np.mod(np.atleast_1d(np.asarray(lon, dtype=float)) + 180.0, 360.0) - 180.0
    la, lo = np.broadcast_arrays(la, lo)
    geom = land_geometry()
    shapely.prepare(geom)
    return shapely.intersects_xy(geom, lo, la)


def build_land_layer(countries_shp: str | Path, out_path: str | Path = LAND_FILE,
                     *, grid_deg: float = 0.001, source: str = "") -> Path:
    """Rebuild the land layer from a Natural Earth 1:110m countries shapefile.

    Dissolves all country polygons into land masses, snaps them to a ``grid_deg`` grid
    (keeping the polygons valid) and writes a one-Feature GeoJSON. Needs ``pyshp`` and
    ``shapely``; used once by the maintainers, not at run time.

    Parameters
    ----------
    countries_shp : path
        ``ne_110m_admin_0_countries``-style shapefile (polygons in lon/lat).
    out_path : path
        Where to write the GeoJSON.
    grid_deg : float
        Coordinate grid [deg].
    source : str
        Provenance note stored in the Feature's properties.

    Returns
    -------
    pathlib.Path
    """
    import shapefile
    import shapely
    from shapely.geometry import mapping, shape
    from shapely.ops import unary_union

    reader = shapefile.Reader(str(countries_shp))
    land = unary_union([shape(s.__geo_interface__).buffer(0) for s in reader.shapes()])
    land = shapely.set_precision(land, grid_deg)
    if land.geom_type == "Polygon":
        land = shapely.MultiPolygon([land])
    decimals = max(0, int(round(-np.log10(grid_deg))))
    geom = mapping(land)
    coords = [[[[round(x, decimals), round(y, decimals)] for x, y in ring] for ring in poly]
              for poly in geom["coordinates"]]
    feature = {
        "type": "Feature",
        "properties": {
            "name": "land, Natural Earth 1:110m (dissolved from Admin 0 - Countries)",
            "licence": "public domain (Natural Earth terms of use)",
            "source": source,
            "grid_deg": grid_deg,
        },
        "geometry": {"type": "MultiPolygon", "coordinates": coords},
    }
    out = Path(out_path)
    out.write_text(json.dumps(feature, separators=(",", ":")), encoding="utf-8")
    _land_feature.cache_clear()
    land_geometry.cache_clear()
    return out


__all__ = ["LAND_FILE", "land_source", "land_rings", "land_geometry", "is_land",
           "build_land_layer"]
