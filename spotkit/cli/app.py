"""The ``spotkit`` command line: a thin layer over the public functions.

Each subcommand parses its arguments and calls library functions; nothing here that a
notebook user cannot call. ``main(argv)`` returns the exit code: 0 ok, 1 bad input (with a
message naming the file, row and field where it can), 2 usage.

Layout: one module per group of commands, each with an ``add_<command>(sub)`` that builds a
subcommand's parser and a ``cmd_<command>(args)`` that runs it --
:mod:`~spotkit.cli.ingest` (ingest, to a file or an archive),
:mod:`~spotkit.cli.simulate` (simulate, demo), :mod:`~spotkit.cli.compare` (compare,
report), :mod:`~spotkit.cli.figures` (map, plot), :mod:`~spotkit.cli.plan` (plan),
:mod:`~spotkit.cli.archive` (archive) and :mod:`~spotkit.cli.watch` (watch). What they
share is in :mod:`spotkit.cli._common`, which imports none of them; this module assembles
them and imports nothing back.
"""
from __future__ import annotations

import argparse
import contextlib
import functools
import os
import sys
import warnings
from collections.abc import Sequence

from spotkit import __version__
from spotkit.cli import archive, compare, figures, ingest, patterns, plan, simulate, watch
from spotkit.cli._common import EXIT_INPUT, EXIT_OK, EXIT_USAGE, Parser
from spotkit.cli._messages import cli_message
from spotkit.errors import LocatorError, SpotkitError, SpotkitWarning, UsageError

#: distributions whose versions ``spotkit --version`` reports (the PyPI names)
VERSION_DEPENDENCIES = ("numpy", "pandas", "pyarrow", "pyproj", "geopy", "scipy", "cartopy",
                        "matplotlib", "dask")


def version_text() -> str:
    """spotkit's version, then Python's and the dependencies' ("not installed" if missing).

    The versions are read from the installed packages' metadata; nothing is imported.
    """
    import platform
    from importlib.metadata import PackageNotFoundError, version

    lines = [f"spotkit {__version__}", f"  {'Python':<11} {platform.python_version()}"]
    for name in VERSION_DEPENDENCIES:
        try:
            found = version(name)
        except PackageNotFoundError:
            found = "not installed"
        lines.append(f"  {name:<11} {found}")
    return "\n".join(lines)


class _VersionAction(argparse.Action):
    """``--version``: print :func:`version_text` and exit (computed only when asked)."""

    def __init__(self, option_strings, dest=argparse.SUPPRESS, default=argparse.SUPPRESS,
                 help="show program's version number and exit"):
        super().__init__(option_strings, dest=dest, default=default, nargs=0, help=help)

    def __call__(self, parser, namespace, values, option_string=None):
        print(version_text())
        parser.exit()


def build_parser() -> argparse.ArgumentParser:
    parser = Parser(
        prog="spotkit",
        description="Compare antennas with numbers from weak-signal beacon spot reports: "
        "how many dB antenna B beats antenna A, how sure that is, and where.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="""a typical session:
  spotkit demo -o out                    the whole job on the bundled demo data
  spotkit ingest export.csv -o spots.parquet --rejects rejects.csv
  spotkit compare spots.parquet --design simultaneous --a CALL_A --b CALL_B --by band,distance
  spotkit map spots.parquet --kind coverage -o coverage.png
  spotkit report spots.parquet --design simultaneous --a CALL_A --b CALL_B -o report.html

Each command has --help. Exit codes: 0 ok, 1 bad input (the message names the file, row
and field), 2 usage.""",
    )
    parser.add_argument("--version", action=_VersionAction)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=Parser)
    for add in (ingest.add_ingest, simulate.add_simulate, compare.add_compare,
                figures.add_map, figures.add_plot, plan.add_plan, compare.add_report,
                simulate.add_demo, archive.add_archive, watch.add_watch,
                patterns.add_pattern):
        add(sub)
    return parser


#: exit code after Ctrl-C (128 + SIGINT, as shells report it)
EXIT_INTERRUPTED = 130


def _os_error_text(exc: OSError) -> str:
    """``<file>: <reason>`` of an operating-system error, without the ``[Errno n]``."""
    if exc.strerror and exc.filename:
        return f"{exc.filename}: {exc.strerror}"
    return exc.strerror or str(exc)


def _show_note(message, category, filename, lineno, file=None, line=None, *, fallback):
    """Show a :class:`~spotkit.errors.SpotkitWarning` as one line ``spotkit: note: ...``;
    other warnings as Python shows them."""
    if issubclass(category, SpotkitWarning):
        print(f"spotkit: note: {message}", file=sys.stderr)
    else:
        fallback(message, category, filename, lineno, file, line)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code (0 ok, 1 bad input, 2 usage, 130
    interrupted).

    Every :class:`~spotkit.errors.SpotkitError` becomes one line on stderr and its exit
    code, never a traceback: :class:`~spotkit.errors.UsageError` 2;
    :class:`~spotkit.errors.LocatorError` 2 (a locator that escapes to here was given as an
    argument, e.g. ``--home``: the readers set aside rows with bad locators instead of
    raising); :class:`~spotkit.errors.InputError`, a missing file and any other spotkit
    error 1. An error of the operating system (a file that cannot be read or written, a
    full disk) is one line and exit 1; Ctrl-C is ``spotkit: interrupted`` and exit 130.
    A :class:`~spotkit.errors.SpotkitWarning` is shown as ``spotkit: note: ...``. Other
    exceptions are bugs and keep their traceback.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("default", SpotkitWarning)
        warnings.showwarning = functools.partial(_show_note, fallback=warnings.showwarning)
        try:
            return _run(build_parser(), argv)
        except KeyboardInterrupt:
            print("spotkit: interrupted", file=sys.stderr)
            return EXIT_INTERRUPTED


def _run(parser, argv) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)

    def text(exc) -> str:
        """The message in the words of the command that ran (options, not parameters)."""
        return cli_message(str(exc), parser, argv)

    try:
        args = parser.parse_args(argv)
        if not getattr(args, "func", None):
            parser.print_help()
            return EXIT_USAGE
        return int(args.func(args) or EXIT_OK)
    except SystemExit as exc:  # --help / --version
        return int(exc.code or 0)
    except UsageError as exc:
        print(f"spotkit: {text(exc)}", file=sys.stderr)
        return EXIT_USAGE
    except LocatorError as exc:
        print(f"spotkit: error: {text(exc)}", file=sys.stderr)
        return EXIT_USAGE
    except SpotkitError as exc:
        print(f"spotkit: error: {text(exc)}", file=sys.stderr)
        return EXIT_INPUT
    except BrokenPipeError:
        # the reader of our output went away (``spotkit compare ... | head``): nothing more
        # to say, and nothing more to flush at exit
        with contextlib.suppress(OSError):
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_INPUT
    except OSError as exc:  # a missing input, a full disk...: not a bug
        print(f"spotkit: error: {_os_error_text(exc)}", file=sys.stderr)
        return EXIT_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
