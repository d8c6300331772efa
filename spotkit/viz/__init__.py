"""What the user sees, drawn: the offline land outline, what the maps show (computed
without drawing), the maps and the plots. matplotlib and cartopy are imported only
inside the drawing functions, so importing this package stays light.
"""

from spotkit.viz.basemap import (
    LAND_FILE,
    build_land_layer,
    is_land,
    land_geometry,
    land_rings,
    land_source,
)
from spotkit.viz.mapdata import (
    FULL_EXTENT_KM,
    LEVELS,
    NEAR_RADII_KM,
    SIDES,
    antenna_spots,
    auto_extent_km,
    check_home,
    difference_cells,
    far_station_summary,
    home_from_pairs,
    home_from_spots,
    home_latlon,
    near_radius_km,
    reach_stations,
    resolve_side,
    result_antenna_spots,
    symmetric_limit,
)
from spotkit.viz.maps import (
    PROJECTIONS,
    REACH_LAYOUTS,
    RESOLUTIONS,
    base_map,
    coverage_map,
    difference_map,
    draw_geodesic_rings,
    draw_land,
    draw_paths,
    draw_rings,
    make_projection,
    project_points,
    reach_map,
)
from spotkit.viz.plots import (
    BAND_CMAP,
    PLOT_KINDS,
    band_colors,
    bearing_curve_plot,
    bearing_plot,
    bearing_rings_plot,
    distance_plot,
    duration_tradeoff_plot,
    elevation_curve_plot,
    elevation_plot,
    grid_plot,
    heard_by_distance,
    heard_plot,
    hour_plot,
    pattern_check_plot,
    running_median,
    snr_distance_plot,
    spots_per_hour,
    spots_per_hour_plot,
)

__all__ = [
    "LAND_FILE", "land_source", "land_rings", "land_geometry", "is_land",
    "build_land_layer", "SIDES", "LEVELS", "FULL_EXTENT_KM", "home_latlon",
    "auto_extent_km", "resolve_side", "home_from_spots", "far_station_summary",
    "home_from_pairs", "difference_cells", "symmetric_limit", "reach_stations",
    "NEAR_RADII_KM", "near_radius_km", "check_home", "antenna_spots", "result_antenna_spots",
    "PROJECTIONS", "RESOLUTIONS", "REACH_LAYOUTS", "make_projection", "project_points",
    "draw_land", "draw_rings", "draw_geodesic_rings", "base_map", "draw_paths",
    "coverage_map", "difference_map", "reach_map", "PLOT_KINDS", "BAND_CMAP", "band_colors",
    "elevation_curve_plot", "bearing_curve_plot", "bearing_rings_plot", "pattern_check_plot",
    "distance_plot", "elevation_plot", "hour_plot", "bearing_plot", "heard_by_distance",
    "heard_plot", "running_median", "snr_distance_plot", "spots_per_hour",
    "spots_per_hour_plot", "duration_tradeoff_plot", "grid_plot",
]
