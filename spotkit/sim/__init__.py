"""A spot simulator with known truth: invented stations, antenna gain tables, foreign CSV
layouts, the true B minus A of every pair, and the demo scenario.
"""

from spotkit.sim.antenna import (
    GROUNDS,
    Antenna,
    GainTable,
    band_frequency_hz,
    constant_difference,
    dipole_antenna,
    fresnel_reflection,
    horizontal_dipole_gain,
    isotropic_antenna,
    make_antenna,
    pattern_table,
    quarter_wave_vertical_gain,
    vertical_antenna,
)
from spotkit.sim.layouts import (
    LAYOUTS,
    USER_LAYOUTS,
    write_foreign_csv,
    write_user_file,
)
from spotkit.sim.simulate import (
    DEMO_CALL,
    DEMO_LOCATOR,
    DESIGNS,
    SERIES_DEMO,
    THREE_DEMO,
    THRESHOLD_ON,
    Propagation,
    Simulation,
    decode,
    make_demo_data,
    make_series_demo,
    make_three_demo,
    simulate_spots,
)
from spotkit.sim.stations import (
    STATION_REGIONS,
    invent_calls,
    place_stations,
)
from spotkit.sim.truth import (
    DEFAULT_DISTANCE_EDGES,
    TRUTH_COLUMNS,
    Truth,
    truths_from_json,
    truths_to_json,
)

__all__ = [
    "STATION_REGIONS", "place_stations", "invent_calls", "GROUNDS", "band_frequency_hz",
    "fresnel_reflection", "quarter_wave_vertical_gain", "horizontal_dipole_gain",
    "GainTable", "Antenna", "isotropic_antenna", "vertical_antenna", "dipole_antenna",
    "constant_difference", "make_antenna", "pattern_table", "LAYOUTS", "write_foreign_csv",
    "USER_LAYOUTS", "write_user_file",
    "DEFAULT_DISTANCE_EDGES", "TRUTH_COLUMNS", "Truth", "DESIGNS", "THRESHOLD_ON", "decode",
    "Propagation",
    "Simulation", "simulate_spots", "DEMO_CALL", "DEMO_LOCATOR", "make_demo_data",
    "SERIES_DEMO", "make_series_demo", "THREE_DEMO", "make_three_demo", "truths_to_json",
    "truths_from_json",
]
