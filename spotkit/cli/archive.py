"""``spotkit archive``: analyse a partitioned Parquet archive (info, coverage, compare),
locally or on a Dask cluster, and repair one after an interrupted append.

A thin layer over :mod:`spotkit.io.store`, :mod:`spotkit.io.manifest` and
:mod:`spotkit.distributed`. Archives are written by ``spotkit ingest --dataset``
(:mod:`spotkit.cli.ingest`).
"""
from __future__ import annotations

from spotkit.cli._common import (
    DESIGNS,
    EXIT_OK,
    Parser,
    confidence_level,
    int_at_least,
    positive_float,
    write_result,
)
from spotkit.errors import UsageError


def add_archive(sub) -> None:
    p = sub.add_parser(
        "archive", help="work with a partitioned spot archive (info, coverage, compare, "
        "repair)",
        description="Analyse a partitioned Parquet archive written by 'spotkit ingest "
        "--dataset DIR', partition by partition, locally or on a Dask cluster.")
    asub = p.add_subparsers(dest="archive_command", metavar="ACTION", parser_class=Parser)

    def common(q):
        q.add_argument("dataset", metavar="DIR", help="archive directory")
        q.add_argument("--band", action="append", default=None, metavar="BAND",
                       help="only this band (repeatable or comma-separated)")
        q.add_argument("--start", metavar="TIME", help="first slot (UTC, inclusive)")
        q.add_argument("--end", metavar="TIME", help="end of the period (UTC, exclusive)")
        q.add_argument("--scheduler", default=None, metavar="ADDRESS",
                       help="Dask scheduler: 'local' (a local cluster), 'threads', "
                       "'processes', 'sync' or the address of a running scheduler "
                       "(tcp://host:8786); default: threads")

    info = asub.add_parser("info", help="what the archive holds (manifest) and anything "
                           "interrupted appends left")
    info.add_argument("dataset", metavar="DIR")
    rep = asub.add_parser("repair", help="remove what interrupted appends left",
                          description="Remove the files and folders that killed or failed "
                          "appends left in the archive (never part of it: readers do not see "
                          "them). Committed data, appends still running and files spotkit "
                          "did not write are left alone.")
    rep.add_argument("dataset", metavar="DIR")
    cov = asub.add_parser("coverage", help="spots, stations and SNR per W by group")
    common(cov)
    cov.add_argument("--by", default="band,square", metavar="KEYS",
                     help="group keys from band, square, field, hour, tx_call, rx_call, day "
                     "(default band,square)")
    cov.add_argument("--side", choices=["rx", "tx"], default="rx",
                     help="rx: where the transmitters were heard (receivers); tx: what the "
                     "receivers heard (transmitters)")
    cov.add_argument("-o", "--output", metavar="OUT.csv", help="write the table as CSV")
    cmp = asub.add_parser("compare", help="compare two antennas over the archive")
    common(cmp)
    cmp.add_argument("--design", required=True, choices=DESIGNS)
    cmp.add_argument("--a", required=True, metavar="CALL")
    cmp.add_argument("--b", metavar="CALL")
    cmp.add_argument("--schedule", metavar="even-odd|odd-even|every-N|FILE")
    cmp.add_argument("--change-at", metavar="TIME")
    cmp.add_argument("--by", default="", metavar="KEY,KEY")
    cmp.add_argument("--window", type=int_at_least(1), default=1, metavar="SLOTS")
    cmp.add_argument("--boot", type=int_at_least(2), default=1000)
    cmp.add_argument("--seed", type=int_at_least(0), default=0)
    cmp.add_argument("--min-pairs", type=int_at_least(1), default=30)
    cmp.add_argument("--confidence", type=confidence_level, default=0.95)
    cmp.add_argument("--missed-reports", choices=["fit", "none"], default="fit")
    cmp.add_argument("--threshold-correction", choices=["edge", "none"], default="none")
    cmp.add_argument("--day-hours", type=positive_float, default=24.0, metavar="HOURS")
    cmp.add_argument("--tau", type=positive_float, metavar="DB",
                     help="width of the decoders' detection curve [dB] (default: fitted)")
    cmp.add_argument("--tau-from", choices=["pairs", "reports"], default="pairs",
                     help="where a fitted detection width comes from: the paired reports "
                     "(default, as 'spotkit compare') or each receiver's report histogram")
    cmp.add_argument("--json", metavar="OUT.json")
    cmp.add_argument("--csv", metavar="OUT.csv")
    p.set_defaults(func=cmd_archive)


def _archive_bands(args):
    if not args.band:
        return None
    return [b.strip() for item in args.band for b in item.split(",") if b.strip()]


def _check_outputs(args) -> None:
    """Refuse, before any work, an output inside the archive (it could replace the manifest
    or a data file) or one that is the schedule file the run reads."""
    from pathlib import Path

    from spotkit.cli._common import check_output

    root = Path(args.dataset).resolve()
    for option in ("output", "json", "csv"):
        path = getattr(args, option, None)
        if not path:
            continue
        flag = "-o" if option == "output" else f"--{option}"
        if root in Path(path).resolve().parents:
            raise UsageError(f"{flag} {path}: is inside the archive {args.dataset}; write it "
                             "elsewhere")
        check_output(path, flag, inputs=(getattr(args, "schedule", None),))


def cmd_archive(args) -> int:
    from spotkit import distributed
    from spotkit.io import store

    action = getattr(args, "archive_command", None)
    if action is None:
        raise UsageError("spotkit archive: choose an action: info, coverage, compare or repair")
    if action == "info":
        from spotkit.io import manifest

        man = store.dataset_manifest(args.dataset)
        check = manifest.check_archive(args.dataset)
        print(f"archive {args.dataset}: partitioned by {', '.join(check.partition_by)}; "
              f"{check.batches} batch(es), {check.rows:,} spots in {check.files:,} files")
        for b in man["batches"]:
            print(f"  {b.get('written_utc')}  {b.get('rows', 0):>12,} spots  "
                  f"{b.get('rejected') or 0:>9,} rejected  {b.get('source')}")
        print(check.text())
        return EXIT_OK
    if action == "repair":
        from spotkit.io import manifest

        removed = manifest.repair_archive(args.dataset)
        print(f"removed {len(removed)} leftover(s) of interrupted appends from {args.dataset}"
              + "".join(f"\n  {r}" for r in removed))
        print(manifest.check_archive(args.dataset).text())
        return EXIT_OK
    _check_outputs(args)
    selection = dict(bands=_archive_bands(args), start=args.start, end=args.end)
    if action == "coverage":
        by = [k for k in args.by.replace(" ", "").split(",") if k]
        # each library check names its own argument (coverage key, side, scheduler, start)
        table = distributed.coverage_dask(args.dataset, by, side=args.side,
                                          scheduler=args.scheduler, **selection)
        if args.output:
            table.to_csv(args.output, index=False)
            print(f"wrote {len(table):,} rows to {args.output}")
        else:
            print(table.to_string(index=False))
        return EXIT_OK
    by = [k for k in args.by.replace(" ", "").split(",") if k]
    from spotkit.compare.grouping import parse_by

    parse_by(by)  # a bad key is a UsageError naming the valid ones, before Dask starts
    result = distributed.compare_dask(
        args.dataset, args.design, args.a, args.b, by=by, schedule=args.schedule,
        change_at=args.change_at, window_slots=args.window, n_boot=args.boot, seed=args.seed,
        min_pairs=args.min_pairs, confidence=args.confidence, scheduler=args.scheduler,
        missed_reports=args.missed_reports, threshold_correction=args.threshold_correction,
        day_hours=args.day_hours, tau_db=args.tau, tau_from=args.tau_from, **selection)
    write_result(result, args)
    return EXIT_OK
