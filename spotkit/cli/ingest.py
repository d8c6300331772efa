"""``spotkit ingest``: spot CSV files in, one Parquet file (``-o``) or a partitioned archive
(``--dataset``) out.

A thin layer over :func:`spotkit.io.ingest.ingest_to_parquet` and
:func:`spotkit.io.archive.ingest_to_dataset`. Both branches live here, beside the parser
that defines their options: writing an archive is one way of ingesting, while
:mod:`spotkit.cli.archive` reads archives that are already written.

``-o``: the Parquet file and the rejects file appear together when the run succeeds, or
not at all (:mod:`spotkit.io.atomic`). A run refused for its rejects
(:func:`spotkit.io.ingest.check_reject_share`) prints its summary and exits 1; Ctrl-C
(SIGINT) exits 130 and SIGTERM 143 (128 + the signal number, the shells' convention), each
with one line and the earlier files unchanged.
"""
from __future__ import annotations

import signal
import sys

from spotkit.cli._common import EXIT_OK, add_progress_option, key_value, positive_float, progress
from spotkit.errors import MostlyRejectedError, UsageError


def add_ingest(sub) -> None:
    p = sub.add_parser(
        "ingest",
        help="read spot CSV files, validate and enrich them, write Parquet",
        description="Read one or more spot-report CSV files (any delimiter, with or without "
        "a header, plain or gzip), set aside unusable rows with a reason, add distance, "
        "bearings and band, and write the canonical table as Parquet.",
    )
    p.add_argument("files", nargs="+", metavar="FILE", help="spot CSV files (.csv, .csv.gz) "
                   "or spreadsheets (.xlsx, .ods: the first sheet; extra sheets)")
    p.add_argument("-o", "--output", metavar="OUT.parquet",
                   help="Parquet file to write (or give --dataset)")
    p.add_argument("--rejects", metavar="REJECTS.csv", help="write set-aside rows here "
                   "(and the removed exact duplicates, each with the file and row of the "
                   "report it repeats)")
    p.add_argument("--max-reject-share", type=_share, metavar="SHARE",
                   help="-o: refuse the run (exit 1, nothing written) when one reason sets "
                   "aside more than this share of a file's rows, as 0.5 or 50%% (default "
                   "50%%; 100%% still refuses a run that accepts no row)")
    p.add_argument("--map", action="append", type=key_value, default=[],
                   metavar="FIELD=COLUMN", help="say which column holds FIELD (heading or "
                   "1-based position); a date and a clock in two columns: time=DATE+TIME, "
                   "or date=COLUMN with time=COLUMN")
    p.add_argument("--unit", action="append", type=key_value, default=[],
                   metavar="FIELD=UNIT", help="say the unit of FIELD (iso, epoch, Hz, kHz, "
                   "MHz, dBm, W, mW)")
    p.add_argument("--set", action="append", type=key_value, default=[], dest="constants",
                   metavar="[FILE:]FIELD=VALUE", help="one value of FIELD for every row, "
                   "for a field the file does not carry (e.g. --set rx_call=Q1ABC --set "
                   "rx_locator=JO62qm for a receiver's own decode log); checked like a cell. "
                   "With FILE: for that input file's rows only (two receivers' logs: --set "
                   "rx1.log:rx_call=Q1ABC --set rx2.log:rx_call=Q1ABD)")
    p.add_argument("--date-order", choices=["dmy", "mdy", "ymd"], default=None,
                   help="order of day, month and year in dates that are not ISO 8601 "
                   "(default: from the data where a day above 12 shows it)")
    p.add_argument("--delimiter", default="auto", help="auto, ',', ';', tab or space")
    p.add_argument("--region", default="all", choices=["1", "2", "3", "all"],
                   help="IARU region whose band plan applies (default: union of all)")
    p.add_argument("--slot-minutes", type=int, default=2, help="slot length (default 2)")
    p.add_argument("--header", default="auto", choices=["auto", "yes", "no"],
                   help="whether the first line holds headings (default: auto-detect)")
    # archive options (spotkit.io.archive)
    p.add_argument("--dataset", metavar="DIR", help="append to a partitioned Parquet archive "
                   "instead of writing one file; a file already in it is refused")
    p.add_argument("--partition", default="band,day", metavar="KEYS",
                   help="archive partition keys, from band and day (default band,day)")
    p.add_argument("--chunk-rows", type=int, metavar="N", help="read N rows at a time")
    p.add_argument("--memory-mb", type=positive_float, metavar="M",
                   help="keep memory under about M MiB (sets the chunk size)")
    add_progress_option(p)
    p.set_defaults(func=cmd_ingest)


def _share(text: str) -> float:
    """``0.5`` or ``50%`` as a share from 0 to 1: an argparse ``type``."""
    import argparse

    t = text.strip()
    try:
        value = float(t[:-1]) / 100 if t.endswith("%") else float(t)
    except ValueError:
        value = float("nan")
    if not 0 <= value <= 1:
        raise argparse.ArgumentTypeError(f"expected a share from 0 to 1 or 0% to 100%, "
                                         f"got {text!r}")
    return value


def cmd_ingest(args) -> int:
    if args.chunk_rows is not None and args.chunk_rows < 1:
        raise UsageError(f"--chunk-rows must be 1 or more, not {args.chunk_rows}")
    if args.dataset and args.max_reject_share is not None:
        raise UsageError("--max-reject-share applies to -o, not to --dataset")
    if args.dataset and args.output:
        raise UsageError("give either -o OUT.parquet or --dataset DIR, not both")
    if not args.dataset and not args.output:
        raise UsageError("give -o OUT.parquet or --dataset DIR")
    if args.dataset:
        return _ingest_to_archive(args)
    return _ingest_to_file(args)


def _reading_options(args) -> dict:
    """The keyword arguments both branches pass on about reading the CSV files."""
    mapping, units = _time_parts(args.map), dict(args.unit)
    if len(mapping) + ("date" in dict(args.map)) != len(args.map) \
            or len(units) != len(args.unit):
        raise UsageError("each FIELD may be given only once in --map / --unit")
    constants = _constants(args.constants)
    header = {"auto": "auto", "yes": True, "no": False}[args.header]
    return dict(mapping=mapping, units=units, delimiter=args.delimiter, header=header,
                slot_minutes=args.slot_minutes, region=args.region, constants=constants,
                date_order=args.date_order)


def _constants(pairs: list) -> dict:
    """``--set`` pairs as the ``constants`` of :func:`spotkit.io.ingest.read_spots`:
    ``FIELD=VALUE`` for every file, ``FILE:FIELD=VALUE`` (split at the last ``:`` before
    the ``=``; field names hold no ``:``) for that file only."""
    out: dict = {}
    seen = set()
    for key, value in pairs:
        file, _, field = key.rpartition(":")
        if (file, field) in seen:
            raise UsageError("each FIELD may be given only once in --set"
                             + (f" for {file}" if file else "") + f" ({field} twice)")
        seen.add((file, field))
        if file:
            out.setdefault(file, {})[field] = value
        else:
            out[field] = value
    return out


def _time_parts(pairs: list) -> dict:
    """``--map`` pairs as a mapping; ``--map date=D --map time=T`` as ``time=D+T``."""
    mapping = dict(pairs)
    if "date" in mapping:
        if "time" not in mapping:
            raise UsageError("--map date=COLUMN needs --map time=COLUMN (the clock column) "
                             "too")
        mapping["time"] = f"{mapping.pop('date')}+{mapping['time']}"
    return mapping


def _ingest_to_file(args) -> int:
    """``-o OUT.parquet``: one Parquet file (chunk size from --memory-mb when given)."""
    from spotkit.io.ingest import MAX_REJECT_SHARE, ingest_to_parquet

    chunk_rows = args.chunk_rows
    if args.memory_mb is not None:
        from pathlib import Path

        from spotkit.io.archive import chunk_rows_for_memory

        size = sum(Path(f).stat().st_size for f in args.files if Path(f).is_file())
        by_mem = chunk_rows_for_memory(args.memory_mb, total_input_bytes=size)
        chunk_rows = min(chunk_rows or by_mem, by_mem)
    reading = _reading_options(args)
    kw = {"chunk_rows": chunk_rows} if chunk_rows else {}
    try:
        summary = ingest_to_parquet(args.files, args.output, rejects_path=args.rejects,
                                    max_reject_share=(MAX_REJECT_SHARE
                                                      if args.max_reject_share is None
                                                      else args.max_reject_share),
                                    progress=progress(args), **reading, **kw)
    except MostlyRejectedError as exc:
        if exc.summary is not None:
            print(exc.summary.text())
        raise
    except KeyboardInterrupt as exc:
        signum = getattr(exc, "signum", 2)
        how = "SIGTERM" if signum == signal.SIGTERM else "Ctrl-C"
        done = ("the outputs were already written in full" if getattr(exc, "committed", False)
                else "nothing written, earlier files unchanged")
        print(f"spotkit: interrupted ({how}); {done}", file=sys.stderr)
        return 128 + signum
    print(summary.text())
    dups = getattr(summary, "duplicates", 0)
    print(f"wrote {summary.accepted:,} spots to {args.output}"
          + (f" and {summary.rejected:,} rejects" + (f" and {dups:,} duplicates" if dups
                                                      else "") + f" to {args.rejects}"
             if args.rejects else ""))
    return EXIT_OK


def _ingest_to_archive(args) -> int:
    """``--dataset DIR``: append to a partitioned archive (rejects kept inside it)."""
    from spotkit.io.archive import ingest_to_dataset

    if args.rejects:
        raise UsageError("--rejects applies to -o; an archive keeps its rejects in "
                         "DIR/_rejects/")
    from spotkit._validate import check_choice
    from spotkit.io.store import PARTITION_KEYS

    reading = _reading_options(args)
    partition = [k for k in args.partition.replace(" ", "").split(",") if k]
    if not partition:
        raise UsageError(f"--partition: give at least one key from {', '.join(PARTITION_KEYS)}")
    for key in partition:  # checked here so that only a bad key is called a --partition error
        check_choice(key, PARTITION_KEYS, "--partition key")
    if args.memory_mb is not None:  # the same check ingest_to_dataset makes, named for the CLI
        from spotkit.io.archive import chunk_rows_for_memory

        try:
            chunk_rows_for_memory(args.memory_mb)
        except UsageError as exc:
            raise UsageError(f"--memory-mb: {exc}") from None
    summary = ingest_to_dataset(
        args.files, args.dataset, chunk_rows=args.chunk_rows, memory_mb=args.memory_mb,
        partition_by=partition, progress=progress(args), **reading)
    print(summary.text())
    print(f"appended {summary.accepted:,} spots to the archive {args.dataset} "
          f"({summary.rejected:,} rejects kept in {args.dataset}/_rejects/)")
    return EXIT_OK
