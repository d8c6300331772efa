"""What the subcommands of :mod:`spotkit.cli` share: the parser class, the exit codes, option
helpers (progress, the A/B comparison options, ``--by``) and the writing of results.

This module sits below every command module and imports none of them (nor
:mod:`spotkit.cli.app`), so the command line has no import cycle.
"""
from __future__ import annotations

import argparse
import contextlib
import errno
import os
import sys
from pathlib import Path

from spotkit.errors import InputError, LocatorError, UsageError

EXIT_OK, EXIT_INPUT, EXIT_USAGE = 0, 1, 2

#: the experiment designs, as the A/B options spell them
DESIGNS = ("simultaneous", "alternating", "receive", "before-after")


class Parser(argparse.ArgumentParser):
    """ArgumentParser that raises instead of exiting, so ``main`` controls exit codes."""

    def error(self, message):  # pragma: no cover - exercised through main()
        raise UsageError(f"{self.prog}: {message}")


# --- option types: a bad value is a usage error that names the option ----------------------
def _option_type(convert, check, name: str):
    """An argparse ``type``: ``convert`` the text, then ``check`` the value with a
    :mod:`spotkit._validate` helper. argparse turns the :class:`argparse.ArgumentTypeError`
    into ``argument --option: must be ...``, which :class:`Parser` raises as a
    :class:`UsageError` (exit 2)."""
    def parse(text: str):
        try:
            value = convert(text)
        except (TypeError, ValueError, OverflowError):
            kind = "a whole number" if convert is int else "a number"
            raise argparse.ArgumentTypeError(f"expected {kind}, got {text!r}") from None
        try:
            return check(value)
        except UsageError as exc:
            message = str(exc)  # "<what> must be ...": the option's name says what
            message = message[message.find(" must ") + 1:] if " must " in message else message
            raise argparse.ArgumentTypeError(message) from None

    parse.__name__ = name
    parse.numeric = True  # a number, checked (tests/cli/test_hostile_inputs.py)
    return parse


def _check(name: str, *args):
    """The :mod:`spotkit._validate` check ``name`` with ``args`` after the value, imported
    when an option is read (``spotkit --version`` imports no numpy)."""
    def check(value):
        import spotkit._validate

        return getattr(spotkit._validate, name)(value, *args)

    return check


def _dpi(value):
    _check("check_at_least", 1, "dpi")(value)
    if value > MAX_DPI:
        raise UsageError(f"dpi must be at most {MAX_DPI}, got {value}")
    return value


#: figures at more dots per inch than this would need gigabytes of memory
MAX_DPI = 1200

#: argparse ``type`` of a finite number above 0
positive_float = _option_type(float, _check("check_positive", "value"), "positive number")
#: argparse ``type`` of a finite number (not NaN, not infinite)
finite_float = _option_type(float, _check("check_finite", "value"), "finite number")
#: argparse ``type`` of a confidence level in (0, 1)
confidence_level = _option_type(float, _check("check_confidence"), "confidence level")
#: argparse ``type`` of a bearing sector width that divides 360 [deg]
bearing_width = _option_type(float, _check("check_divides", 360.0, "value"), "bearing width")
#: argparse ``type`` of a PNG resolution, 1 to MAX_DPI dots per inch
figure_dpi = _option_type(int, _dpi, "dpi")


def int_at_least(minimum: int):
    """argparse ``type`` of a whole number of at least ``minimum``."""
    return _option_type(int, _check("check_at_least", minimum, "value"),
                        f"whole number >= {minimum}")


def bin_edges(text: str) -> list[float]:
    """argparse ``type`` of bin edges ``A,B,C``: at least two finite numbers, increasing."""
    try:
        values = [float(x) for x in text.split(",") if x.strip()]
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected numbers separated by commas, got "
                                         f"{text!r}") from None
    try:
        return _check("check_increasing", "edges")(values)
    except UsageError as exc:
        message = str(exc)
        raise argparse.ArgumentTypeError(message[message.find(" must ") + 1:]) from None


def key_value(text: str) -> tuple[str, str]:
    """``FIELD=VALUE`` as a (field, value) pair: an argparse ``type``."""
    if "=" not in text:
        raise argparse.ArgumentTypeError(f"expected FIELD=VALUE, got {text!r}")
    k, v = text.split("=", 1)
    return k.strip(), v.strip()


def add_progress_option(p) -> None:
    p.add_argument("--progress", action=argparse.BooleanOptionalAction, default=None,
                   help="show progress bars on stderr (default: when it is a terminal)")


def progress(args) -> bool:
    """Whether to show progress bars: as asked, else when stderr is a terminal."""
    asked = getattr(args, "progress", None)
    return sys.stderr.isatty() if asked is None else bool(asked)


def add_ab_options(p, *, required: bool = True, title: str = "A/B comparison") -> None:
    """The A/B comparison options: the same names and meaning in compare, map, plot and
    report. ``required=False`` where only some kinds of output compare two antennas."""
    g = p.add_argument_group(title)
    g.add_argument("--design", required=required, choices=DESIGNS,
                   help="how reports are assigned to A and B")
    g.add_argument("--a", required=required, metavar="CALL",
                   help="call of A (transmitter; receiver in the receive design)")
    g.add_argument("--b", metavar="CALL", help="call of B (alternating and before-after: "
                   "the same call as --a, may be left out)")
    g.add_argument("--label-a", metavar="NAME", help="name of A in verdicts, tables, "
                   "titles and legends, e.g. vertical (default: the call)")
    g.add_argument("--label-b", metavar="NAME", help="name of B, e.g. dipole (default: the "
                   "call)")
    g.add_argument("--schedule", metavar="even-odd|odd-even|every-N|FILE",
                   help="alternating design: antenna schedule (CSV: start,end,antenna[,band])")
    g.add_argument("--change-at", metavar="TIME", help="before-after design: when the "
                   "antenna changed (UTC, e.g. 2026-03-04T00:00Z)")
    g.add_argument("--distance-edges", metavar="KM,KM,...", type=bin_edges,
                   help="distance bin edges [km] (default 0,1000,3000,6000,20100)")
    g.add_argument("--elevation-edges", metavar="DEG,DEG,...", type=bin_edges,
                   help="elevation bin edges [deg] (default 0,5,10,20,40,90)")
    g.add_argument("--bearing-width", type=bearing_width, default=45.0,
                   help="bearing sector width [deg] (default 45)")
    g.add_argument("--hour-basis", choices=["utc", "local"], default="utc",
                   help="hour of day in UTC or local solar time at the path midpoint")
    g.add_argument("--layer-height", type=positive_float, default=300.0,
                   help="reflection height for elevation angles [km] (default 300)")
    g.add_argument("--window", type=int_at_least(1), default=1, metavar="SLOTS",
                   help="alternating design: largest distance of paired slots (default 1)")
    g.add_argument("--no-open-path-check", action="store_true",
                   help="alternating design: keep pairs even without reports of the call in "
                   "the slots around them")
    g.add_argument("--threshold-correction", choices=["edge", "none"], default="none",
                   help="first-order correction for reports at the decode threshold "
                   "(default none: the paired likelihood no longer needs it)")
    g.add_argument("--missed-reports", choices=["fit", "none"], default="fit",
                   help="allow a fitted share of one-sided pairs to be missing for reasons "
                   "other than the antenna, e.g. a path closing between slots (default fit)")
    # the model and interval choices of compare_antennas (tests/cli/test_model_options.py
    # checks these lists against spotkit.compare's MODELS, WIDTH_FROM and INTERVALS)
    g.add_argument("--model", choices=["detection", "pooled", "tobit", "receiver-effects"],
                   default="detection",
                   help="detection: soft detection curve, whole-dB reports as intervals, "
                   "systematic part, moved by the receiver shift (the mean B-A over the "
                   "pairs when receivers differ; default); pooled: the same without the "
                   "receiver shift (one law of B-A for every pair); tobit: the earlier "
                   "hard-limit fit; receiver-effects: the random effect per receiver "
                   "refitted in every resample (slower)")
    g.add_argument("--tau", type=positive_float, metavar="DB",
                   help="width of the decoders' detection curve [dB] (default: fitted)")
    g.add_argument("--tau-from", choices=["pairs", "reports"], default="pairs",
                   help="where a fitted detection width comes from: the paired reports "
                   "(default) or each receiver's report histogram")
    g.add_argument("--interval", choices=["percentile", "normal"], default="percentile",
                   help="bootstrap interval: percentile (default) or normal (estimate -+ z "
                   "bootstrap SE; holds with fewer resamples)")
    g.add_argument("--day-hours", type=positive_float, default=24.0, metavar="HOURS",
                   help="before-after design: length of the blocks of time resampled as "
                   "days for the interval (default 24: UTC dates)")
    g.add_argument("--boot", type=int_at_least(2), default=1000,
                   help="bootstrap resamples (default 1000)")
    g.add_argument("--seed", type=int_at_least(0), default=0, help="bootstrap seed (default 0)")
    g.add_argument("--min-pairs", type=int_at_least(1), default=30,
                   help="fewest pairs for a group estimate (default 30)")
    g.add_argument("--confidence", type=confidence_level, default=0.95,
                   help="confidence level of the intervals (default 0.95)")


def float_list(text: str, option: str) -> list[float]:
    """Numbers separated by commas; a :class:`UsageError` naming ``option`` otherwise."""
    try:
        return [float(x) for x in text.split(",") if x.strip()]
    except ValueError:
        raise UsageError(f"{option} must be numbers separated by commas, got {text!r}") from None


def by_keys(text: str) -> list[str]:
    """The ``--by`` keys of compare and report, checked (a :class:`UsageError` if unknown)."""
    from spotkit.compare.grouping import parse_by

    by = [k for k in (text or "").replace(" ", "").split(",") if k]
    try:
        parse_by(by)
    except ValueError as exc:
        raise UsageError(f"--by: {exc}") from None
    return by


def compare_kwargs(args) -> dict:
    """Keyword arguments of :func:`spotkit.compare.estimate.compare_antennas` from the A/B
    options (see :func:`add_ab_options`)."""
    kw = dict(schedule=args.schedule, change_at=args.change_at,
              bearing_width_deg=args.bearing_width, hour=args.hour_basis,
              layer_height_km=args.layer_height, window_slots=args.window,
              n_boot=args.boot, seed=args.seed, min_pairs=args.min_pairs,
              confidence=args.confidence, threshold_correction=args.threshold_correction,
              missed_reports=args.missed_reports, day_hours=args.day_hours,
              require_open_path=not args.no_open_path_check,
              model=args.model, tau_db=args.tau, tau_from=args.tau_from,
              interval=args.interval)
    if args.distance_edges:
        kw["distance_edges"] = args.distance_edges
    if args.elevation_edges:
        kw["elevation_edges"] = args.elevation_edges
    labels = ab_labels(args)
    if labels is not None:
        kw["labels"] = labels
    return kw


def ab_labels(args) -> tuple[str, str] | None:
    """The names of A and B from ``--label-a`` / ``--label-b`` (a missing one is the call),
    checked; None when neither is given. A bad label is a :class:`UsageError` naming the
    option (exit 2)."""
    from spotkit._validate import check_labels

    la, lb = getattr(args, "label_a", None), getattr(args, "label_b", None)
    if la is None and lb is None:
        return None
    call_a = (getattr(args, "a", None) or "A").upper()
    call_b = (getattr(args, "b", None) or getattr(args, "a", None) or "B").upper()
    try:
        return check_labels(call_a if la is None else la, call_b if lb is None else lb)
    except UsageError as exc:
        raise UsageError(f"--label-a/--label-b: {exc}") from None


def write_result(result, args) -> None:
    """Print a comparison and write it as JSON / CSV when asked (--json, --csv)."""
    print(result)
    if args.json:
        result.to_json(args.json)
        print(f"wrote {args.json}")
    if args.csv:
        result.to_frame().to_csv(args.csv, index=False)
        print(f"wrote {args.csv}")


@contextlib.contextmanager
def locators_from_data(applies: bool = True):
    """Within this block a :class:`~spotkit.errors.LocatorError` comes from the spot table,
    not from an argument: re-raise it as an :class:`~spotkit.errors.InputError` (exit 1,
    the same message) instead of letting ``main`` treat it as bad usage (exit 2).

    For ``spotkit map`` without ``--home``, whose map centre is the home station's locator
    in the data: a Parquet table not written by ``spotkit ingest`` may hold a malformed
    locator there (a spot CSV cannot: its rows with bad locators are set aside).
    ``applies=False`` leaves the error as it is.
    """
    try:
        yield
    except LocatorError as exc:
        if not applies:
            raise
        raise InputError(str(exc)) from exc


def check_output(path, option: str, suffixes: tuple[str, ...] = (), inputs=()) -> Path:
    """Check an output path before any work is done; a :class:`UsageError` (exit 2) naming
    ``option`` when it cannot be written: a wrong suffix, a folder, a folder that does not
    exist or that cannot be written in, or a file that is one of the run's inputs.

    Parameters
    ----------
    path : str or path-like
    option : str
        The option that gave it (``"-o"``, ``"--json"``), for the message.
    suffixes : tuple of str
        Allowed suffixes in lower case (``(".png", ".svg")``); empty: any.
    inputs : sequence of str or path-like
        The run's input files (None entries skipped): an output that is one of them, by any
        name or link, is refused so that no run can overwrite what it reads.

    Returns
    -------
    pathlib.Path
    """
    from spotkit.io.atomic import check_outputs

    out = Path(path)
    if suffixes and out.suffix.lower() not in suffixes:
        raise UsageError(f"{option} must end in {' or '.join(suffixes)}, got {str(path)!r}")
    existing = [i for i in inputs if i is not None and Path(i).is_file()]
    try:
        check_outputs([out], existing)
    except UsageError as exc:
        if "also an input" in str(exc):
            raise UsageError(f"{option} {path}: is also an input file; choose another "
                             "name") from None
    if out.is_dir():
        raise UsageError(f"{option} {path}: is a folder; give a file name in it")
    folder = out.parent
    if not folder.is_dir():
        raise UsageError(f"{option} {path}: the folder {folder} does not exist")
    if not os.access(folder, os.W_OK | os.X_OK) or (out.exists()
                                                    and not os.access(out, os.W_OK)):
        raise UsageError(f"{option} {path}: cannot write there (permission denied)")
    return out


#: errors of writing a file that mean "choose another path", not "the disk failed"
_CANNOT_WRITE_HERE = {errno.EACCES, errno.EPERM, errno.EROFS, errno.EISDIR, errno.ENOTDIR,
                      errno.ENOENT}


def save_figure(fig, path, dpi, option: str = "-o") -> int:
    """Save a figure as PNG or SVG (by the suffix of ``path``), close it and say so.

    The picture is written under a temporary name in the same folder and renamed into place
    when complete, so a failed or interrupted run leaves an earlier file as it was. A path
    that cannot be written is a :class:`UsageError` naming ``option``.
    """
    import secrets

    import matplotlib.pyplot as plt

    out = check_output(path, option, (".png", ".svg"))
    tmp = out.parent / f".{out.name}.{os.getpid()}-{secrets.token_hex(4)}.partial"
    try:
        # created here, so the picture gets the usual permissions (umask), not 0600
        os.close(os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666))
        fig.savefig(tmp, dpi=dpi, format=out.suffix.lower()[1:])
        os.replace(tmp, out)
    except OSError as exc:
        if exc.errno in _CANNOT_WRITE_HERE:
            raise UsageError(f"{option} {path}: cannot write there "
                             f"({exc.strerror or exc})") from None
        raise
    finally:
        plt.close(fig)
        with contextlib.suppress(OSError):
            os.unlink(tmp)
    print(f"wrote {path}")
    return EXIT_OK


# --- measured against modelled (compare --pattern-a/--pattern-b, plot --kind pattern-check) --
#: Grouping of the pattern check when --by is not given.
PATTERN_CHECK_BY = "band,elevation,bearing"


def layer_heights(text: str) -> tuple[float, float]:
    """``LOW,HIGH`` reflection heights [km] for --layer-heights."""
    try:
        lo, hi = (float(x) for x in str(text).split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected LOW,HIGH in km (e.g. 250,400), got {text!r}") from None
    if not (0 < lo <= hi < 2000):
        raise argparse.ArgumentTypeError(f"need 0 < LOW <= HIGH < 2000 km, got {text!r}")
    return lo, hi


def add_pattern_options(p) -> None:
    """--pattern-a / --pattern-b / --layer-heights (``compare`` and ``plot``)."""
    g = p.add_argument_group(
        "measured against modelled",
        "check B minus A per band, elevation bin and bearing sector (or your --by) against "
        "two modelled gain patterns in spotkit's CSV layout (band or frequency_mhz, "
        "elevation_deg, azimuth_deg, gain_dbi; 'spotkit pattern' writes the shipped "
        "models), with a chi-square test and the cells that disagree")
    g.add_argument("--pattern-a", metavar="FILE", help="modelled gain pattern of A")
    g.add_argument("--pattern-b", metavar="FILE", help="modelled gain pattern of B")
    g.add_argument("--layer-heights", type=layer_heights, default=(250.0, 400.0),
                   metavar="LOW,HIGH", help="range of reflection heights carried into the "
                   "prediction [km] (default 250,400)")


def pattern_check(args, spots, by_text: str = ""):
    """Read --pattern-a/-b, compare grouped by ``by_text`` (default
    :data:`PATTERN_CHECK_BY`) and check (:func:`spotkit.compare.modelcheck.check_patterns`)."""
    from spotkit.compare.estimate import compare_antennas
    from spotkit.compare.modelcheck import check_patterns
    from spotkit.io.pattern import read_pattern

    if bool(args.pattern_a) != bool(args.pattern_b):
        raise UsageError("give both --pattern-a and --pattern-b")
    if not args.design or not args.a:
        raise UsageError("the pattern check compares two antennas: give --design and --a")
    pa, pb = read_pattern(args.pattern_a), read_pattern(args.pattern_b)
    result = compare_antennas(spots, args.design, args.a, args.b,
                              by=by_keys(by_text or PATTERN_CHECK_BY), progress=progress(args),
                              **compare_kwargs(args))
    return check_patterns(result, pa, pb, layer_heights_km=args.layer_heights)
