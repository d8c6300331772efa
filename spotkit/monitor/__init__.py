"""Following a running experiment: anytime-valid confidence sequences for B - A, stop rules
with plain verdicts, the files of a run followed as they grow (the watch), its page and its
terminal view, and a finished run replayed look by look.
"""

from spotkit.monitor.follow import (
    ARCHIVE_NAME,
    EXPORT_SUFFIXES,
    PIECES_NAME,
    STATE_NAME,
    empty_state,
    find_exports,
    ingest_new,
    read_state,
    settle_pending,
    write_state,
)
from spotkit.monitor.page import (
    CHART_WIDTH,
    latest,
    page_html,
    sequence_plot,
    summary_lines,
    terminal_chart,
    terminal_view,
    write_page,
)
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
from spotkit.monitor.watch import (
    LOOK_COLUMNS,
    PAGE_NAME,
    WATCH_LOCK_NAME,
    WATCH_LOCK_TIMEOUT_S,
    WatchUpdate,
    watch,
    watch_once,
)

__all__ = [
    "ARCHIVE_NAME", "EXPORT_SUFFIXES", "PIECES_NAME", "STATE_NAME", "empty_state",
    "find_exports", "ingest_new", "read_state", "settle_pending", "write_state",
    "CHART_WIDTH", "latest", "page_html", "sequence_plot", "summary_lines", "terminal_chart",
    "terminal_view", "write_page",
    "LOOK_COLUMNS", "PAGE_NAME", "WATCH_LOCK_NAME", "WATCH_LOCK_TIMEOUT_S", "WatchUpdate",
    "watch", "watch_once",
    "confidence_sequence", "fixed_interval", "normal_mixture_radius", "se_for_width",
    "sequence_multiplier", "tuning_constant",
    "HORIZON_HOURS", "band_text", "hours_to_halfwidth", "needed_halfwidth", "stop_verdict",
    "DEFAULT_TUNING_WIDTH_DB", "HISTORY_COLUMNS", "MIN_CLUSTERS", "add_sequence", "data_hours",
    "effective_clusters", "small_sample_factor",
    "estimate_now", "replay_run",
]
