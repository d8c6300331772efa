"""``spotkit pattern`` and the measured-against-modelled options of ``compare`` and ``plot``.

``spotkit pattern --antenna vertical|dipole -o FILE`` writes a shipped antenna model as a
gain-pattern CSV (:mod:`spotkit.io.pattern`); ``spotkit compare ... --pattern-a FILE
--pattern-b FILE`` and ``spotkit plot --kind pattern-check`` check the measured B minus A
against the two patterns (:func:`spotkit.compare.modelcheck.check_patterns`). A thin layer:
the options are added here and used by :mod:`spotkit.cli.compare` and
:mod:`spotkit.cli.figures`.
"""
from __future__ import annotations

from spotkit.cli._common import EXIT_OK, check_output, finite_float, positive_float
from spotkit.errors import UsageError

#: Grouping used by the check when --by is not given.
CHECK_BY = "band,elevation,bearing"


def _heights(text: str) -> tuple[float, float]:
    import argparse

    try:
        lo, hi = (float(x) for x in str(text).split(","))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected LOW,HIGH in km (e.g. 250,400), got {text!r}") from None
    if not (0 < lo <= hi < 2000):
        raise argparse.ArgumentTypeError(f"need 0 < LOW <= HIGH < 2000 km, got {text!r}")
    return lo, hi


def add_pattern_check_options(p) -> None:
    """--pattern-a / --pattern-b / --layer-heights (``compare`` and ``plot``)."""
    g = p.add_argument_group(
        "measured against modelled",
        "check B minus A per band, elevation bin and bearing sector (or your --by) against "
        "two modelled gain patterns in spotkit's CSV layout (band or frequency_mhz, "
        "elevation_deg, azimuth_deg, gain_dbi; see 'spotkit pattern'), with a chi-square "
        "test and the cells that disagree")
    g.add_argument("--pattern-a", metavar="FILE", help="modelled gain pattern of A")
    g.add_argument("--pattern-b", metavar="FILE", help="modelled gain pattern of B")
    g.add_argument("--layer-heights", type=_heights, default=(250.0, 400.0),
                   metavar="LOW,HIGH",
                   help="range of reflection heights carried into the prediction [km] "
                   "(default 250,400)")


def wants_pattern_check(args) -> bool:
    """True when --pattern-a or --pattern-b was given (both are then required)."""
    a, b = getattr(args, "pattern_a", None), getattr(args, "pattern_b", None)
    if bool(a) != bool(b):
        raise UsageError("give both --pattern-a and --pattern-b")
    return bool(a)


def pattern_check(args, spots):
    """Run the comparison grouped by --by (default band,elevation,bearing) and the check."""
    from spotkit.cli._common import by_keys, compare_kwargs, progress
    from spotkit.compare.estimate import compare_antennas
    from spotkit.compare.modelcheck import check_patterns
    from spotkit.io.pattern import read_pattern

    pa, pb = read_pattern(args.pattern_a), read_pattern(args.pattern_b)
    if not args.design or not args.a:
        raise UsageError("the pattern check compares two antennas: give --design and --a")
    by = by_keys(getattr(args, "by", "") or CHECK_BY)
    result = compare_antennas(spots, args.design, args.a, args.b, by=by,
                              progress=progress(args), **compare_kwargs(args))
    return check_patterns(result, pa, pb, layer_heights_km=args.layer_heights)


def cmd_compare_patterns(args) -> int:
    """``spotkit compare ... --pattern-a FILE --pattern-b FILE``: text, --json, --csv."""
    from spotkit.io.atomic import check_outputs, staged
    from spotkit.io.ingest import load_spots

    inputs = (args.spots, args.schedule, args.pattern_a, args.pattern_b)
    outs = [(check_output(path, option, inputs=inputs), option)
            for option, path in (("--json", args.json), ("--csv", args.csv)) if path]
    if len(outs) > 1:
        check_outputs([path for path, _ in outs])
    check = pattern_check(args, load_spots(args.spots))
    print(check)
    if outs:
        with staged([path for path, _ in outs]) as tmps:
            for tmp, (_, option) in zip(tmps, outs, strict=True):
                if option == "--json":
                    tmp.write_text(check.to_json() + "\n", encoding="utf-8")
                else:
                    check.to_frame().to_csv(tmp, index=False)
        for path, _ in outs:
            print(f"wrote {path}")
    return EXIT_OK


def add_pattern(sub) -> None:
    p = sub.add_parser(
        "pattern", help="write a shipped antenna model as a gain-pattern CSV",
        description="Write the gain of one of spotkit's antenna models (quarter-wave "
        "vertical with radials, horizontal half-wave dipole at a height; flat ground) as a "
        "gain-pattern CSV: band, elevation_deg, azimuth_deg, gain_dbi, for 'spotkit compare "
        "--pattern-a/--pattern-b'. The models are textbook shapes, not a design tool.")
    p.add_argument("--antenna", required=True, choices=["vertical", "dipole"])
    p.add_argument("--bands", default="20m", help="comma-separated (default 20m)")
    p.add_argument("--height", type=positive_float, default=10.0, metavar="M",
                   help="dipole: height above ground [m] (default 10)")
    p.add_argument("--wire-azimuth", type=finite_float, default=0.0, metavar="DEG",
                   help="dipole: bearing along the wire [deg] (default 0, north-south)")
    p.add_argument("--ground", default="average",
                   choices=["perfect", "sea", "wet", "average", "dry"])
    p.add_argument("--radial-loss", type=finite_float, default=10.0, metavar="OHM",
                   help="vertical: ground-loss resistance of the radials [ohm] (default 10)")
    p.add_argument("--shift", type=finite_float, default=0.0, metavar="DB",
                   help="add this many dB below --shift-below (to test the check)")
    p.add_argument("--shift-below", type=finite_float, default=90.0, metavar="DEG",
                   help="elevation below which --shift applies [deg] (default 90: all)")
    p.add_argument("-o", "--output", required=True, metavar="OUT.csv")
    p.set_defaults(func=cmd_pattern)


def cmd_pattern(args) -> int:
    from spotkit import columns as C
    from spotkit.io.pattern import write_pattern
    from spotkit.sim.antenna import dipole_antenna, pattern_table, vertical_antenna

    out = check_output(args.output, "-o", (".csv",))
    bands = [b.strip() for b in args.bands.split(",") if b.strip()]
    if args.antenna == "vertical":
        ant = vertical_antenna(bands, ground=args.ground, loss_ohm=args.radial_loss)
        text = f"{ant.name}, {args.ground} ground, radial loss {args.radial_loss:g} ohm"
    else:
        ant = dipole_antenna(bands, height_m=args.height, wire_azimuth_deg=args.wire_azimuth,
                             ground=args.ground)
        text = f"{ant.name}, wire along {args.wire_azimuth:g} deg, {args.ground} ground"
    table = pattern_table(ant, bands)
    if args.shift:
        low = table[C.ELEVATION] < args.shift_below
        table.loc[low, C.GAIN] += args.shift
        text += f"; {args.shift:+g} dB below {args.shift_below:g} deg elevation"
    write_pattern(table, out, comment=f"antenna: {text}")
    print(f"wrote {out} ({len(table)} directions, {', '.join(bands)})")
    return EXIT_OK


__all__ = ["CHECK_BY", "add_pattern_check_options", "wants_pattern_check", "pattern_check",
           "cmd_compare_patterns", "add_pattern", "cmd_pattern"]
