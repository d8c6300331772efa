"""Following a running experiment: anytime-valid confidence sequences for B - A, stop rules
with plain verdicts, the files of a run followed as they grow (the watch), its page and its
terminal view, and a finished run replayed look by look.
"""

from spotkit.monitor.sequence import (
    confidence_sequence,
    fixed_interval,
    normal_mixture_radius,
    se_for_width,
    sequence_multiplier,
    tuning_constant,
)
from spotkit.monitor.stopping import (
    HORIZON_HOURS,
    band_text,
    hours_to_halfwidth,
    needed_halfwidth,
    stop_verdict,
)
from spotkit.monitor.track import (
    DEFAULT_TUNING_WIDTH_DB,
    HISTORY_COLUMNS,
    MIN_CLUSTERS,
    add_sequence,
    data_hours,
    effective_clusters,
    estimate_now,
    replay_run,
    small_sample_factor,
)

__all__ = [
    "confidence_sequence", "fixed_interval", "normal_mixture_radius", "se_for_width",
    "sequence_multiplier", "tuning_constant",
    "HORIZON_HOURS", "band_text", "hours_to_halfwidth", "needed_halfwidth", "stop_verdict",
    "DEFAULT_TUNING_WIDTH_DB", "HISTORY_COLUMNS", "MIN_CLUSTERS", "add_sequence", "data_hours",
    "effective_clusters", "small_sample_factor",
    "estimate_now", "replay_run",
]
