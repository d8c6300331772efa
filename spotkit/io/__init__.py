"""Spot files in and out: a file's layout, its cells chunk by chunk, the per-field checks,
duplicates, path geometry per locator pair, the ingest that ties them together, the
Parquet store and the partitioned archive with its manifest (the commit protocol).
"""

from spotkit.io.archive import (
    BASE_MEMORY_MB,
    CHUNK_BYTES_PER_ROW,
    CSV_BYTES_PER_ROW,
    DEDUPE_WINDOW_DAYS,
    MIN_CHUNK_ROWS,
    SEEN_BYTES_PER_ROW,
    chunk_rows_for_memory,
    ingest_to_dataset,
)
from spotkit.io.atomic import (
    Interrupted,
    check_outputs,
    commit,
    fsync_dir,
    fsync_file,
    recover_folder,
    signals_raise,
    staged,
    staging_path,
    writer_is_dead,
)
from spotkit.io.ingest import (
    DUPLICATE_REASON,
    MAX_REJECT_SHARE,
    PARQUET_SUFFIXES,
    IngestResult,
    IngestSummary,
    check_reject_share,
    constants_by_file,
    ingest_to_parquet,
    iter_spot_chunks,
    load_spots,
    read_spots,
    reject_hint,
    write_rejects,
)
from spotkit.io.manifest import (
    FAULT_POINTS,
    LOCK_NAME,
    LOCK_TIMEOUT_S,
    MANIFEST_NAME,
    REJECTS_DIR,
    ArchiveCheck,
    archive_lock,
    check_archive,
    check_not_taken,
    content_sha256,
    dataset_manifest,
    file_hashes,
    file_sha256,
    repair_archive,
)
from spotkit.io.sanity import (
    LOOKS_LIKE_SHARE,
    MIN_SHARE,
    MIN_UNIT_VALUES,
    MIN_VALUES,
    SNR_PLAUSIBLE_DB,
    check_columns,
    column_problems,
    unit_hint,
)
from spotkit.io.sheets import SHEET_ENGINES, is_spreadsheet, sheet_to_text
from spotkit.io.sniff import (
    DATE_ORDERS,
    DELIMITERS,
    MAX_WATTS,
    SAMPLE_ROWS,
    TIME_UNITS,
    UNIT_CHOICES,
    infer_columns,
    infer_date_order,
    infer_frequency_unit,
    infer_power_unit,
    match_headings,
)
from spotkit.io.store import (
    DAY,
    PARTITION_KEYS,
    ROW_GROUP_ROWS,
    append_to_dataset,
    archive_files,
    dataset_filter,
    normalise_categories,
    read_archive_file,
    read_dataset,
    read_spots_parquet,
    table_to_spots,
    write_spots,
)

__all__ = [
    "match_headings", "infer_columns", "infer_frequency_unit", "infer_power_unit",
    "SAMPLE_ROWS", "TIME_UNITS", "UNIT_CHOICES", "DELIMITERS", "MAX_WATTS", "IngestSummary",
    "IngestResult", "read_spots", "iter_spot_chunks", "ingest_to_parquet", "load_spots",
    "PARQUET_SUFFIXES", "constants_by_file",
    "write_rejects", "DAY", "PARTITION_KEYS", "MANIFEST_NAME", "REJECTS_DIR",
    "ROW_GROUP_ROWS", "write_spots", "read_spots_parquet", "append_to_dataset",
    "read_dataset", "dataset_manifest", "dataset_filter", "file_sha256", "table_to_spots",
    "archive_files", "read_archive_file", "normalise_categories", "BASE_MEMORY_MB",
    "CHUNK_BYTES_PER_ROW", "SEEN_BYTES_PER_ROW", "CSV_BYTES_PER_ROW", "MIN_CHUNK_ROWS",
    "DEDUPE_WINDOW_DAYS", "chunk_rows_for_memory", "ingest_to_dataset",
    "LOCK_NAME", "LOCK_TIMEOUT_S", "FAULT_POINTS", "ArchiveCheck", "content_sha256",
    "file_hashes", "check_not_taken", "archive_lock", "check_archive", "repair_archive",
]
# outputs as transactions (atomic) and the refusal of mostly rejected runs (ingest)
__all__ += [
    "Interrupted", "staging_path", "check_outputs", "writer_is_dead", "signals_raise",
    "recover_folder", "commit", "staged", "fsync_file", "fsync_dir", "DUPLICATE_REASON",
    "MAX_REJECT_SHARE",
    "check_reject_share", "reject_hint",
]
__all__ += ["check_columns", "column_problems", "MIN_VALUES", "MIN_SHARE", "SNR_PLAUSIBLE_DB",
            "LOOKS_LIKE_SHARE"]
# the files users have: date orders (sniff)
__all__ += ["infer_date_order", "DATE_ORDERS"]
# spreadsheets (sheets)
__all__ += ["SHEET_ENGINES", "is_spreadsheet", "sheet_to_text"]
# units that do not fit (sanity)
__all__ += ["unit_hint", "MIN_UNIT_VALUES"]
# modelled gain patterns (spotkit's own CSV layout)
from spotkit.io.pattern import (  # noqa: E402
    GAIN_RANGE_DBI,
    PATTERN_COLUMNS,
    PATTERN_VERSION,
    GainPattern,
    read_pattern,
    write_pattern,
)

__all__ += ["PATTERN_VERSION", "PATTERN_COLUMNS", "GAIN_RANGE_DBI", "read_pattern",
            "write_pattern", "GainPattern"]
