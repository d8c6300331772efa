"""The ``spotkit`` command line: a thin layer over the public functions.

Each subcommand parses its arguments and calls library functions; nothing here that a
notebook user cannot call. ``main(argv)`` returns the exit code: 0 ok, 1 bad input (with a
message naming the file, row and field where it can), 2 usage.

Layout: one ``_add_<name>(sub)`` function builds each subcommand's parser and one
``_cmd_<name>(args)`` runs it.
"""
from __future__ import annotations

import argparse
import sys
from typing import Sequence

from . import __version__
from .errors import InputError, SpotkitError, UsageError

EXIT_OK, EXIT_INPUT, EXIT_USAGE = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    """ArgumentParser that raises instead of exiting, so ``main`` controls exit codes."""

    def error(self, message):  # pragma: no cover - exercised through main()
        raise UsageError(f"{self.prog}: {message}")


def _key_value(text: str) -> tuple[str, str]:
    if "=" not in text:
        raise argparse.ArgumentTypeError(f"expected FIELD=VALUE, got {text!r}")
    k, v = text.split("=", 1)
    return k.strip(), v.strip()


# --- ingest ------------------------------------------------------------------------------
def _add_ingest(sub):
    p = sub.add_parser(
        "ingest",
        help="read spot CSV files, validate and enrich them, write Parquet",
        description="Read one or more spot-report CSV files (any delimiter, with or without "
        "a header, plain or gzip), set aside unusable rows with a reason, add distance, "
        "bearings and band, and write the canonical table as Parquet.",
    )
    p.add_argument("files", nargs="+", metavar="FILE", help="spot CSV files (.csv, .csv.gz)")
    p.add_argument("-o", "--output", required=True, metavar="OUT.parquet")
    p.add_argument("--rejects", metavar="REJECTS.csv", help="write set-aside rows here")
    p.add_argument("--map", action="append", type=_key_value, default=[],
                   metavar="FIELD=COLUMN", help="say which column holds FIELD")
    p.add_argument("--unit", action="append", type=_key_value, default=[],
                   metavar="FIELD=UNIT", help="say the unit of FIELD (iso, epoch, Hz, kHz, "
                   "MHz, dBm, W, mW)")
    p.add_argument("--delimiter", default="auto", help="auto, ',', ';', tab or space")
    p.add_argument("--region", default="all", choices=["1", "2", "3", "all"],
                   help="IARU region whose band plan applies (default: union of all)")
    p.add_argument("--slot-minutes", type=int, default=2, help="slot length (default 2)")
    p.add_argument("--header", default="auto", choices=["auto", "yes", "no"],
                   help="whether the first line holds headings (default: auto-detect)")
    p.set_defaults(func=_cmd_ingest)


def _cmd_ingest(args) -> int:
    from .ingest import ingest_to_parquet

    mapping, units = dict(args.map), dict(args.unit)
    if len(mapping) != len(args.map) or len(units) != len(args.unit):
        raise UsageError("each FIELD may be given only once in --map / --unit")
    header = {"auto": "auto", "yes": True, "no": False}[getattr(args, "header", "auto")]
    kw = {}
    if getattr(args, "chunk_rows", None):
        kw["chunk_rows"] = args.chunk_rows
    summary = ingest_to_parquet(
        args.files, args.output, rejects_path=args.rejects, mapping=mapping, units=units,
        delimiter=args.delimiter, header=header, slot_minutes=args.slot_minutes,
        region=args.region, **kw)
    print(summary.text())
    print(f"wrote {summary.accepted:,} spots to {args.output}"
          + (f" and {summary.rejected:,} rejects to {args.rejects}" if args.rejects else ""))
    return EXIT_OK


# --- simulate ----------------------------------------------------------------------------
def _add_simulate(sub):
    p = sub.add_parser("simulate", help="simulate spot reports with a known antenna difference")
    p.set_defaults(func=_cmd_simulate)


def _cmd_simulate(args) -> int:
    raise UsageError("spotkit simulate is not available yet")


# --- compare -----------------------------------------------------------------------------
def _add_compare(sub):
    p = sub.add_parser("compare", help="compare two antennas (B minus A, dB, with CIs)")
    p.set_defaults(func=_cmd_compare)


def _cmd_compare(args) -> int:
    raise UsageError("spotkit compare is not available yet")


# --- map / plot --------------------------------------------------------------------------
def _add_map(sub):
    p = sub.add_parser("map", help="draw coverage, difference or reach maps")
    p.set_defaults(func=_cmd_map)


def _cmd_map(args) -> int:
    raise UsageError("spotkit map is not available yet")


def _add_plot(sub):
    p = sub.add_parser("plot", help="draw comparison and coverage plots")
    p.set_defaults(func=_cmd_plot)


def _cmd_plot(args) -> int:
    raise UsageError("spotkit plot is not available yet")


# --- plan --------------------------------------------------------------------------------
def _add_plan(sub):
    p = sub.add_parser("plan", help="plan an experiment: schedule, duration, audit")
    p.set_defaults(func=_cmd_plan)


def _cmd_plan(args) -> int:
    raise UsageError("spotkit plan is not available yet")


# --- report / demo -----------------------------------------------------------------------
def _add_report(sub):
    p = sub.add_parser("report", help="write a self-contained HTML report")
    p.set_defaults(func=_cmd_report)


def _cmd_report(args) -> int:
    raise UsageError("spotkit report is not available yet")


def _add_demo(sub):
    p = sub.add_parser("demo", help="run the whole job on the bundled demo data")
    p.add_argument("-o", "--output", default="out", metavar="DIR")
    p.set_defaults(func=_cmd_demo)


def _cmd_demo(args) -> int:
    raise UsageError("spotkit demo is not available yet")


# --- main --------------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="spotkit",
        description="Compare antennas with numbers from weak-signal beacon spot reports.",
    )
    parser.add_argument("--version", action="version", version=f"spotkit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for add in (_add_ingest, _add_simulate, _add_compare, _add_map, _add_plot, _add_plan,
                _add_report, _add_demo):
        add(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code (0 ok, 1 bad input, 2 usage)."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if not getattr(args, "func", None):
            parser.print_help()
            return EXIT_USAGE
        return int(args.func(args) or EXIT_OK)
    except SystemExit as exc:  # --help / --version
        return int(exc.code or 0)
    except UsageError as exc:
        print(f"spotkit: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except (InputError, FileNotFoundError, IsADirectoryError) as exc:
        print(f"spotkit: error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except SpotkitError as exc:
        print(f"spotkit: error: {exc}", file=sys.stderr)
        return EXIT_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
