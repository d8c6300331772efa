"""From a spot table to B minus A: the designs' pairs, groups of pairs, the estimate per
group, the before/after design's estimate and what each antenna reached.
"""

from spotkit.compare.beforeafter import (
    DAY_SHARE,
    FEW_DAYS,
    WEAKER_DESIGN,
    estimate_before_after,
)
from spotkit.compare.cells import DEFAULT_BLOCK_HOURS, block_clusters, estimate_cells
from spotkit.compare.elevation import CURVE_COLUMNS, bearing_curve, elevation_curve
from spotkit.compare.estimate import (
    DETECTION_MODELS,
    INTERVALS,
    MAX_FAILED_SHARE,
    MIN_CLUSTERS,
    MISSED_REPORTS,
    MODELS,
    P_FLOOR,
    RESULT_COLUMNS,
    TAIL_DFS,
    TAILS,
    THRESHOLD_CORRECTIONS,
    ComparisonResult,
    compare_antennas,
    default_detection,
    edge_correction,
    estimate_groups,
    format_p_value,
    group_label,
    too_little_data,
    verdict,
)
from spotkit.compare.grid import GRID_KEYS, difference_grid, grid_key, grid_table
from spotkit.compare.grouping import (
    DEFAULT_DAY_HOURS,
    DEFAULT_DISTANCE_EDGES,
    DEFAULT_ELEVATION_EDGES,
    GROUP_KEYS,
    add_group_keys,
    group_columns,
    group_index,
    merge_summaries,
    parse_by,
    summarise_pairs,
)
from spotkit.compare.heard import heard_probability
from spotkit.compare.multi import (
    MULTI_COLUMNS,
    MULTI_DESIGNS,
    MultiResult,
    compare_several,
    parse_antennas,
)
from spotkit.compare.pairing import (
    DESIGNS,
    PAIR_COLUMNS,
    PERIOD_BOUND_KINDS,
    T50_ERROR_DB,
    TAU_FACTORS,
    TAU_FACTORS_SET,
    THRESHOLD_METHODS,
    WHOLE_DB_SHARE,
    is_whole_db,
    pair_spots,
    read_schedule,
    receiver_thresholds,
    schedule_antennas,
    whole_db_counts,
)
from spotkit.compare.reach import (
    ReachResult,
    compare_reach,
    heard_by_distance,
    reach_by_bearing,
    reach_summary,
)
from spotkit.compare.series import (
    SERIES_COLUMNS,
    SeriesResult,
    compare_series,
    parse_periods,
)
from spotkit.compare.width import (
    OUTCOME_COLUMNS,
    PAIRED_DESIGNS,
    WIDTH_FROM,
    WIDTH_GRID_DB,
    empty_pair_outcomes,
    merge_pair_outcomes,
    pair_outcomes,
    profile_loglik,
    width_from_outcomes,
    width_from_pairs,
)

__all__ = [
    "GROUP_KEYS", "DEFAULT_DISTANCE_EDGES", "DEFAULT_ELEVATION_EDGES", "DEFAULT_DAY_HOURS",
    "parse_by", "group_columns", "add_group_keys", "summarise_pairs", "merge_summaries",
    "group_index", "DESIGNS", "PAIR_COLUMNS", "PERIOD_BOUND_KINDS", "pair_spots",
    "receiver_thresholds", "read_schedule", "schedule_antennas", "DAY_SHARE", "FEW_DAYS",
    "WEAKER_DESIGN", "estimate_before_after", "RESULT_COLUMNS", "THRESHOLD_CORRECTIONS",
    "MISSED_REPORTS", "ComparisonResult", "compare_antennas", "edge_correction",
    "estimate_groups", "group_label", "verdict", "ReachResult", "compare_reach",
    "reach_summary", "reach_by_bearing", "heard_by_distance", "MIN_CLUSTERS",
    "MAX_FAILED_SHARE", "P_FLOOR", "format_p_value", "too_little_data",
    "DEFAULT_BLOCK_HOURS", "block_clusters", "estimate_cells", "heard_probability",
    "MODELS", "DETECTION_MODELS", "TAIL_DFS", "TAILS", "INTERVALS",
    "default_detection", "T50_ERROR_DB", "TAU_FACTORS", "TAU_FACTORS_SET",
    "THRESHOLD_METHODS", "MULTI_DESIGNS", "MULTI_COLUMNS", "MultiResult", "compare_several",
    "parse_antennas", "CURVE_COLUMNS", "elevation_curve", "bearing_curve", "SERIES_COLUMNS",
    "SeriesResult",
    "compare_series", "parse_periods",
    "GRID_KEYS", "difference_grid", "grid_key", "grid_table",
        "PAIRED_DESIGNS", "WIDTH_FROM", "WIDTH_GRID_DB", "profile_loglik",
    "width_from_pairs", "OUTCOME_COLUMNS", "pair_outcomes", "merge_pair_outcomes",
    "empty_pair_outcomes", "width_from_outcomes", "WHOLE_DB_SHARE", "whole_db_counts",
    "is_whole_db",
]
# measured against modelled gain patterns
from spotkit.compare.modelcheck import (
    CHECK_COLUMNS,
    DEFAULT_LAYER_HEIGHTS_KM,
    N_HEIGHTS,
    PatternCheck,
    check_patterns,
    predict_pairs,
)

__all__ += ["DEFAULT_LAYER_HEIGHTS_KM", "N_HEIGHTS", "CHECK_COLUMNS", "predict_pairs",
            "PatternCheck", "check_patterns"]
