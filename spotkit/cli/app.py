"""The ``spotkit`` command line: a thin layer over the public functions.

Each subcommand parses its arguments and calls library functions; nothing here that a
notebook user cannot call. ``main(argv)`` returns the exit code: 0 ok, 1 bad input (with a
message naming the file, row and field where it can), 2 usage.

Layout: one ``_add_<name>(sub)`` function builds each subcommand's parser and one
``_cmd_<name>(args)`` runs it. The two largest live in their own modules:
:mod:`spotkit.cli_plan` (``plan``) and :mod:`spotkit.cli_archive` (``archive`` and the
archive branch of ``ingest``).
"""
from __future__ import annotations

import argparse
import sys
from typing import Sequence

from spotkit import __version__
from spotkit.errors import InputError, SpotkitError, UsageError

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


def _add_progress_option(p):
    p.add_argument("--progress", action=argparse.BooleanOptionalAction, default=None,
                   help="show progress bars on stderr (default: when it is a terminal)")


def _progress(args) -> bool:
    """Whether to show progress bars: as asked, else when stderr is a terminal."""
    asked = getattr(args, "progress", None)
    return sys.stderr.isatty() if asked is None else bool(asked)


DESIGNS = ("simultaneous", "alternating", "receive", "before-after")


def _add_ab_options(p, *, required: bool = True, title: str = "A/B comparison"):
    """The A/B comparison options: the same names and meaning in compare, map, plot and
    report. ``required=False`` where only some kinds of output compare two antennas."""
    g = p.add_argument_group(title)
    g.add_argument("--design", required=required, choices=DESIGNS,
                   help="how reports are assigned to A and B")
    g.add_argument("--a", required=required, metavar="CALL",
                   help="call of A (transmitter; receiver in the receive design)")
    g.add_argument("--b", metavar="CALL", help="call of B (alternating and before-after: "
                   "the same call as --a, may be left out)")
    g.add_argument("--schedule", metavar="even-odd|odd-even|every-N|FILE",
                   help="alternating design: antenna schedule (CSV: start,end,antenna[,band])")
    g.add_argument("--change-at", metavar="TIME", help="before-after design: when the "
                   "antenna changed (UTC, e.g. 2026-03-04T00:00Z)")
    g.add_argument("--distance-edges", metavar="KM,KM,...",
                   help="distance bin edges [km] (default 0,1000,3000,6000,20100)")
    g.add_argument("--elevation-edges", metavar="DEG,DEG,...",
                   help="elevation bin edges [deg] (default 0,5,10,20,40,90)")
    g.add_argument("--bearing-width", type=float, default=45.0,
                   help="bearing sector width [deg] (default 45)")
    g.add_argument("--hour-basis", choices=["utc", "local"], default="utc",
                   help="hour of day in UTC or local solar time at the path midpoint")
    g.add_argument("--layer-height", type=float, default=300.0,
                   help="reflection height for elevation angles [km] (default 300)")
    g.add_argument("--window", type=int, default=1, metavar="SLOTS",
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
    g.add_argument("--day-hours", type=float, default=24.0, metavar="HOURS",
                   help="before-after design: length of the blocks of time resampled as "
                   "days for the interval (default 24: UTC dates)")
    g.add_argument("--boot", type=int, default=1000, help="bootstrap resamples (default 1000)")
    g.add_argument("--seed", type=int, default=0, help="bootstrap seed (default 0)")
    g.add_argument("--min-pairs", type=int, default=30,
                   help="fewest pairs for a group estimate (default 30)")
    g.add_argument("--confidence", type=float, default=0.95,
                   help="confidence level of the intervals (default 0.95)")


def _float_list(text, option):
    try:
        return [float(x) for x in text.split(",") if x.strip()]
    except ValueError:
        raise UsageError(f"{option} must be numbers separated by commas, got {text!r}") from None


def _by_keys(text: str) -> list[str]:
    from spotkit.compare.grouping import parse_by

    by = [k for k in (text or "").replace(" ", "").split(",") if k]
    try:
        parse_by(by)
    except ValueError as exc:
        raise UsageError(f"--by: {exc}") from None
    return by


def _compare_kwargs(args) -> dict:
    """Keyword arguments of :func:`spotkit.compare.estimate.compare_antennas` from the A/B options."""
    kw = dict(schedule=args.schedule, change_at=args.change_at,
              bearing_width_deg=args.bearing_width, hour=args.hour_basis,
              layer_height_km=args.layer_height, window_slots=args.window,
              n_boot=args.boot, seed=args.seed, min_pairs=args.min_pairs,
              confidence=args.confidence, threshold_correction=args.threshold_correction,
              missed_reports=args.missed_reports, day_hours=args.day_hours,
              require_open_path=not args.no_open_path_check)
    if args.distance_edges:
        kw["distance_edges"] = _float_list(args.distance_edges, "--distance-edges")
    if args.elevation_edges:
        kw["elevation_edges"] = _float_list(args.elevation_edges, "--elevation-edges")
    return kw


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
    p.add_argument("-o", "--output", metavar="OUT.parquet",
                   help="Parquet file to write (or give --dataset)")
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
    # archive options (spotkit.io.store)
    p.add_argument("--dataset", metavar="DIR", help="append to a partitioned Parquet archive "
                   "instead of writing one file; a file already in it is refused")
    p.add_argument("--partition", default="band,day", metavar="KEYS",
                   help="archive partition keys, from band and day (default band,day)")
    p.add_argument("--chunk-rows", type=int, metavar="N", help="read N rows at a time")
    p.add_argument("--memory-mb", type=float, metavar="M",
                   help="keep memory under about M MiB (sets the chunk size)")
    _add_progress_option(p)
    p.set_defaults(func=_cmd_ingest)


def _cmd_ingest(args) -> int:
    # --- archive branch: --dataset / --memory-mb (spotkit.cli_archive) ---
    from spotkit.cli.archive import _archive_ingest

    done = _archive_ingest(args)
    if done is not None:
        return done
    # --- end of archive branch ---
    from spotkit.io.ingest import ingest_to_parquet

    if not args.output:
        raise UsageError("ingest: give -o OUT.parquet (or --dataset DIR)")
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
        region=args.region, progress=_progress(args), **kw)
    print(summary.text())
    print(f"wrote {summary.accepted:,} spots to {args.output}"
          + (f" and {summary.rejected:,} rejects to {args.rejects}" if args.rejects else ""))
    return EXIT_OK


# --- simulate ----------------------------------------------------------------------------
def _add_simulate(sub):
    p = sub.add_parser(
        "simulate", help="simulate spot reports with a known antenna difference",
        description="Simulate the spot reports of an A/B antenna experiment with invented "
        "Q-prefix stations, write them as CSV and the true B-minus-A difference as JSON "
        "beside it (OUT.truth.json), and print the matching compare command.")
    p.add_argument("--design", default="simultaneous",
                   choices=["simultaneous", "alternating", "receive", "before-after"])
    p.add_argument("--days", type=float, default=3.0, help="length of the run (default 3)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("-o", "--output", required=True, metavar="OUT.csv",
                   help="spot CSV to write (.csv or .csv.gz)")
    p.add_argument("--receivers", type=int, default=300, help="far receivers (default 300)")
    p.add_argument("--transmitters", type=int, default=200,
                   help="far transmitters, receive design (default 200)")
    p.add_argument("--bands", default="20m,10m", help="comma-separated (default 20m,10m)")
    p.add_argument("--power-a", type=float, default=37.0, help="A's power, dBm (default 37)")
    p.add_argument("--power-b", type=float, default=37.0, help="B's power, dBm (default 37)")
    p.add_argument("--antenna-a", choices=["isotropic", "vertical", "dipole"],
                   help="A's antenna (default vertical; isotropic with --difference-db)")
    p.add_argument("--antenna-b", default="dipole", choices=["isotropic", "vertical", "dipole"],
                   help="B's antenna (default dipole at 10 m; ignored with --difference-db)")
    p.add_argument("--difference-db", metavar="DB|BAND=DB,...",
                   help="make B exactly A plus this many dB (A isotropic unless --antenna-a "
                   "is given), e.g. 1.5 or 10m=1.5,20m=0")
    p.add_argument("--threshold", type=float, help="every receiver's decode threshold, dB "
                   "(default: -28 for most, some -30)")
    p.add_argument("--tx-fraction", type=float, help="fraction of slots on the air")
    p.add_argument("--home", default="JN58td", metavar="LOCATOR", help="home locator")
    p.add_argument("--start", default="2026-03-02", help="first day (UTC)")
    p.add_argument("--schedule", default="even-odd",
                   help="alternating design: even-odd, odd-even, every-N or a CSV file")
    p.add_argument("--change-at", help="before-after design: time of the change (UTC)")
    p.add_argument("--layout", default="comma",
                   choices=["comma", "semicolon", "tab", "space", "canonical"],
                   help="CSV layout (default comma)")
    p.add_argument("--duplicates", type=float, default=0.0,
                   help="fraction of reports uploaded twice")
    p.add_argument("--corrupt", type=int, default=0, help="number of corrupted rows")
    _add_progress_option(p)
    p.set_defaults(func=_cmd_simulate)


def _cmd_simulate(args) -> int:
    import shlex
    from pathlib import Path

    from spotkit.sim.layouts import write_foreign_csv
    from spotkit.sim.simulate import simulate_spots

    diff = None
    if args.difference_db:
        text = args.difference_db.strip()
        try:
            if "=" in text:
                diff = {k.strip(): float(v) for k, v in (x.split("=", 1)
                                                         for x in text.split(","))}
            else:
                diff = float(text)
        except ValueError:
            raise UsageError(f"--difference-db: expected DB or BAND=DB,..., got {text!r}") \
                from None
    bands = [b.strip() for b in args.bands.split(",") if b.strip()]
    antenna_a = args.antenna_a or "vertical"
    if diff is not None:
        from spotkit.sim.antenna import make_antenna

        # B = A + diff; A is isotropic unless --antenna-a was given
        antenna_a = make_antenna(args.antenna_a or "isotropic", bands)
    sim = simulate_spots(
        args.design, days=args.days, seed=args.seed, start=args.start,
        bands=bands, n_receivers=args.receivers, n_transmitters=args.transmitters,
        home_locator=args.home, antenna_a=antenna_a, antenna_b=args.antenna_b,
        difference_db=diff, power_a_dbm=args.power_a, power_b_dbm=args.power_b,
        tx_fraction=args.tx_fraction, threshold_db=args.threshold, schedule=args.schedule,
        change_at=args.change_at, progress=_progress(args))
    out = Path(args.output)
    mapping, units = write_foreign_csv(sim.spots, out, args.layout,
                                       duplicates=args.duplicates, corrupt=args.corrupt,
                                       seed=args.seed)
    name = out.name
    for suffix in (".gz", ".csv", ".txt"):
        if name.endswith(suffix):
            name = name[: -len(suffix)]
    truth_path = out.with_name(name + ".truth.json")
    sim.truth.to_json(truth_path)
    o = sim.truth.overall
    q = shlex.quote
    print(f"wrote {len(sim.spots):,} spots ({sim.design}, layout {args.layout}) to {out}")
    print(f"wrote the truth to {truth_path}: true B minus A {o['b_minus_a_db']:+.2f} dB "
          f"over {o['pairs']:,} pairs")
    spots_arg = q(str(out))
    if args.layout in ("semicolon", "space") or args.corrupt:
        opts = " ".join(f"--map {k}={q(str(v))}" for k, v in mapping.items())
        opts += " " + " ".join(f"--unit {k}={v}" for k, v in units.items())
        parquet = out.with_name(name + ".parquet")
        print(f"read it with:\n  spotkit ingest {spots_arg} {opts} -o {q(str(parquet))}")
        spots_arg = q(str(parquet))
    cmd = f"spotkit compare {spots_arg} --design {sim.design} --a {q(sim.a)} --b {q(sim.b)}"
    if sim.design == "alternating":
        cmd += f" --schedule {q(str(args.schedule))}"
    if sim.change_at is not None:
        cmd += f" --change-at {sim.change_at.strftime('%Y-%m-%dT%H:%M:%SZ')}"
    print(f"compare with:\n  {cmd}")
    return 0


# --- compare -----------------------------------------------------------------------------
def _add_compare(sub):
    p = sub.add_parser(
        "compare", help="compare two antennas (B minus A, dB, with CIs)",
        description="Pair the reports of antennas A and B by the experiment design and "
        "estimate B minus A [dB per W] overall and by group, with cluster-bootstrap "
        "confidence intervals, paired tests and plain-language verdicts.")
    p.add_argument("spots", metavar="SPOTS",
                   help="spot table: Parquet from 'spotkit ingest' or a spot CSV")
    p.add_argument("--by", default="", metavar="KEY,KEY",
                   help="group by any of band, distance, bearing, hour, elevation, light, "
                   "field, square, receiver")
    _add_ab_options(p)
    p.add_argument("--json", metavar="OUT.json", help="write the result as JSON")
    p.add_argument("--csv", metavar="OUT.csv", help="write the result table as CSV")
    _add_progress_option(p)
    p.set_defaults(func=_cmd_compare)


def _write_result(result, args) -> None:
    """Print a comparison and write it as JSON / CSV when asked (--json, --csv)."""
    print(result)
    if args.json:
        result.to_json(args.json)
        print(f"wrote {args.json}")
    if args.csv:
        result.to_frame().to_csv(args.csv, index=False)
        print(f"wrote {args.csv}")


def _cmd_compare(args) -> int:
    from spotkit.compare.estimate import compare_antennas
    from spotkit.io.ingest import load_spots

    by = _by_keys(args.by)
    kw = _compare_kwargs(args)
    spots = load_spots(args.spots)
    result = compare_antennas(spots, args.design, args.a, args.b, by=by,
                              progress=_progress(args), **kw)
    _write_result(result, args)
    return 0


# --- map / plot --------------------------------------------------------------------------
def _add_figure_options(p, kinds, help_kind):
    """Options shared by ``map`` and ``plot``: input, kind, output, bands and the A/B design
    (the same meaning as in ``spotkit compare``)."""
    p.add_argument("spots", metavar="SPOTS", help="spot table: Parquet from 'spotkit ingest' "
                   "or a spot CSV")
    p.add_argument("--kind", required=True, choices=kinds, help=help_kind)
    p.add_argument("-o", "--output", required=True, metavar="OUT.png",
                   help="picture to write; PNG or SVG by the suffix")
    p.add_argument("--band", action="append", default=[], metavar="BAND",
                   help="only this band, e.g. 10m (repeat or comma-separate for several)")
    p.add_argument("--dpi", type=int, default=150, help="resolution of a PNG (default 150)")
    _add_ab_options(p, required=False,
                    title="A/B comparison (kinds that compare two antennas)")


def _figure_bands(args):
    bands = [b.strip() for text in args.band for b in text.split(",") if b.strip()]
    return bands or None


def _figure_compare(args, spots, by):
    """Run compare_antennas for a figure that needs it (the A/B options are checked here)."""
    from spotkit.compare.estimate import compare_antennas

    if not args.design or not args.a:
        raise UsageError(f"--kind {args.kind} compares two antennas: give --design and --a "
                         "(and --b, --schedule or --change-at as the design needs)")
    return compare_antennas(spots, args.design, args.a, args.b, by=by,
                            progress=_progress(args), **_compare_kwargs(args))


def _save_figure(fig, path, dpi) -> int:
    from pathlib import Path

    suffix = Path(path).suffix.lower()
    if suffix not in (".png", ".svg"):
        raise UsageError(f"output must end in .png or .svg, got {path!r}")
    fig.savefig(path, dpi=dpi, format=suffix[1:])
    import matplotlib.pyplot as plt

    plt.close(fig)
    print(f"wrote {path}")
    return EXIT_OK


def _add_map(sub):
    p = sub.add_parser(
        "map", help="draw coverage, difference or reach maps",
        description="Draw a map, offline: coverage (far stations by band coloured by SNR per "
        "watt), difference (B minus A per receiver / locator square / field, solid where the "
        "95 % CI excludes 0) or reach (what A and B reached). Difference and reach need the "
        "A/B options.")
    _add_figure_options(p, ["coverage", "difference", "reach"], "which map")
    p.add_argument("--home", metavar="LOCATOR", help="map centre (default: the station "
                   "under test)")
    p.add_argument("--projection", choices=["azimuthal", "world"], default="azimuthal",
                   help="azimuthal equidistant on home (default) or an Equal Earth world map")
    p.add_argument("--paths", action="store_true", help="coverage: draw great-circle paths")
    p.add_argument("--level", choices=["receiver", "square", "field"], default="field",
                   help="difference: one estimate per receiver, locator square or field "
                   "(default field)")
    p.add_argument("--layout", choices=["side", "overlay"], default="side",
                   help="reach: A and B side by side (default) or overlaid")
    p.add_argument("--resolution", choices=["110m", "50m", "10m"], default="110m",
                   help="land layer: 110m is shipped; 50m/10m are downloaded by cartopy once")
    _add_progress_option(p)
    p.set_defaults(func=_cmd_map)


def _cmd_map(args) -> int:
    from spotkit.io.ingest import load_spots
    from spotkit.viz import maps

    spots = load_spots(args.spots)
    bands = _figure_bands(args)
    common = dict(home=args.home, projection=args.projection, resolution=args.resolution,
                  progress=_progress(args))
    if args.kind == "coverage":
        fig = maps.coverage_map(spots, bands=bands, paths=args.paths, **common)
    elif args.kind == "difference":
        result = _figure_compare(args, spots, ("band", args.level))
        if bands and len(bands) == 1:
            bands = bands[0]
        fig = maps.difference_map(result, band=bands, **common)
    else:
        from spotkit.compare.pairing import pair_spots

        if not args.design or not args.a:
            raise UsageError("--kind reach compares two antennas: give --design and --a")
        pairs = pair_spots(spots, args.design, args.a, args.b, schedule=args.schedule,
                           change_at=args.change_at)
        fig = maps.reach_map(pairs, band=bands, layout=args.layout, **common)
    return _save_figure(fig, args.output, args.dpi)


def _add_plot(sub):
    p = sub.add_parser(
        "plot", help="draw comparison and coverage plots",
        description="Draw a plot: B minus A by bearing (polar), distance, elevation or hour "
        "with 95 % CIs (need the A/B options); P(heard) against distance for A and B (needs "
        "the A/B options); SNR per watt against distance; spots per hour by band.")
    _add_figure_options(p, ["bearing", "distance", "elevation", "hour", "heard",
                            "snr-distance", "spots-per-hour"], "which plot")
    p.set_defaults(func=_cmd_plot)


def _cmd_plot(args) -> int:
    from spotkit.io.ingest import load_spots
    from spotkit.viz import plots

    spots = load_spots(args.spots)
    bands = _figure_bands(args)
    if args.kind in ("bearing", "distance", "elevation", "hour"):
        result = _figure_compare(args, spots, ("band", args.kind))
        draw = {"bearing": plots.bearing_plot, "distance": plots.distance_plot,
                "elevation": plots.elevation_plot, "hour": plots.hour_plot}[args.kind]
        ax = draw(result, band=bands)
    elif args.kind == "heard":
        from spotkit.compare.pairing import pair_spots

        if not args.design or not args.a:
            raise UsageError("--kind heard compares two antennas: give --design and --a")
        pairs = pair_spots(spots, args.design, args.a, args.b, schedule=args.schedule,
                           change_at=args.change_at)
        if bands and len(bands) > 1:
            raise UsageError("--kind heard draws one band at a time")
        ax = plots.heard_plot(pairs, band=bands[0] if bands else None)
    elif args.kind == "snr-distance":
        ax = plots.snr_distance_plot(spots, band=bands)
    else:
        ax = plots.spots_per_hour_plot(spots, band=bands)
    ax.figure.tight_layout()
    return _save_figure(ax.figure, args.output, args.dpi)


# --- report / demo -----------------------------------------------------------------------
def _add_report(sub):
    p = sub.add_parser(
        "report", help="write a self-contained HTML report of an A/B comparison",
        description="Compare antennas A and B (overall, by band, band x distance, band x "
        "bearing, band x elevation, band x hour, and any --by you add) and write one HTML "
        "file with the verdict tables, maps, plots, the method in plain words and the "
        "safety cautions. Figures are embedded; the file needs no network to open.")
    p.add_argument("spots", metavar="SPOTS",
                   help="spot table: Parquet from 'spotkit ingest' or a spot CSV")
    p.add_argument("--by", default="", metavar="KEY,KEY",
                   help="an extra breakdown shown last, e.g. band,distance,bearing")
    _add_ab_options(p)
    p.add_argument("--title", help="report title")
    p.add_argument("-o", "--output", required=True, metavar="OUT.html")
    _add_progress_option(p)
    p.set_defaults(func=_cmd_report)


def _cmd_report(args) -> int:
    from spotkit.io.ingest import load_spots
    from spotkit.report import standard_comparisons, write_report

    by = _by_keys(args.by)
    spots = load_spots(args.spots)
    progress = _progress(args)
    results, map_result = standard_comparisons(
        spots, args.design, args.a, args.b, by=by or None, progress=progress,
        **_compare_kwargs(args))
    write_report(args.output, spots, results, map_result=map_result, title=args.title,
                 progress=progress)
    print(results[0].verdicts()[0])
    print(f"wrote {args.output}")
    return EXIT_OK


def _add_demo(sub):
    p = sub.add_parser(
        "demo", help="run the whole job on the bundled demo data",
        description="Read the bundled demo scenario (an invented station, Q1ABC, testing a "
        "vertical against a dipole on 20 m and 10 m), compare the antennas, check the answer "
        "against the scenario's known truth, and write the report, maps and tables.")
    p.add_argument("-o", "--output", default="out", metavar="DIR",
                   help="folder for the results (default out/)")
    p.add_argument("--data", metavar="DIR", help="demo data folder (default: the bundled "
                   "demo_data/)")
    p.add_argument("--boot", type=int, default=1000, help="bootstrap resamples (default 1000)")
    _add_progress_option(p)
    p.set_defaults(func=_cmd_demo)


def _cmd_demo(args) -> int:
    from spotkit.demo import run_demo

    run_demo(args.output, data_dir=args.data, n_boot=args.boot,
             progress=_progress(args), echo=print)
    return EXIT_OK


# --- main --------------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
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
    parser.add_argument("--version", action="version", version=f"spotkit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    from spotkit.cli.archive import _add_archive
    from spotkit.cli.plan import _add_plan

    for add in (_add_ingest, _add_simulate, _add_compare, _add_map, _add_plot, _add_plan,
                _add_report, _add_demo, _add_archive):
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
