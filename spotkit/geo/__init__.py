"""Where the stations are and what lies between them: Maidenhead locators, WGS-84
geodesics and hop geometry, and the sun at each end of a path.
"""

from spotkit.geo.geodesic import (
    DEFAULT_LAYER_HEIGHT_KM,
    EARTH_RADIUS_KM,
    WGS84_A,
    WGS84_B,
    WGS84_F,
    GeodesicPath,
    add_path_columns,
    add_path_geometry,
    elevation_angle,
    geodesic_direct,
    geodesic_inverse,
    geodesic_path,
    hop_count,
    max_hop_distance,
    path_midpoint,
)
from spotkit.geo.locator import (
    LOCATOR_LENGTHS,
    is_valid_locator,
    latlon_to_locator,
    locator_cell_size,
    locator_problem,
    locator_to_latlon,
    normalize_locator,
)
from spotkit.geo.sun import (
    CIVIL_TWILIGHT_DEG,
    DAY_ELEVATION_DEG,
    LIGHT_CLASSES,
    PATH_LIGHT_CLASSES,
    add_sun_columns,
    classify_light,
    greenwich_sidereal_time,
    path_light,
    solar_elevation,
    solar_equatorial,
    solar_position,
)

__all__ = [
    "LOCATOR_LENGTHS", "is_valid_locator", "locator_problem", "locator_to_latlon",
    "latlon_to_locator",
    "normalize_locator", "locator_cell_size", "WGS84_A", "WGS84_F", "WGS84_B",
    "EARTH_RADIUS_KM", "DEFAULT_LAYER_HEIGHT_KM", "geodesic_inverse", "geodesic_direct",
    "path_midpoint", "geodesic_path", "GeodesicPath", "max_hop_distance", "hop_count",
    "elevation_angle", "add_path_columns", "add_path_geometry", "DAY_ELEVATION_DEG",
    "CIVIL_TWILIGHT_DEG",
    "LIGHT_CLASSES", "PATH_LIGHT_CLASSES", "solar_equatorial", "greenwich_sidereal_time",
    "solar_position", "solar_elevation", "classify_light", "path_light", "add_sun_columns",
]
