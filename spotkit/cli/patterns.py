"""``spotkit pattern``: a shipped antenna model written as a gain-pattern CSV.

``spotkit pattern --antenna vertical|dipole -o FILE`` writes the model's gain in spotkit's
pattern layout (:mod:`spotkit.io.pattern`), for ``spotkit compare ... --pattern-a FILE
--pattern-b FILE`` and ``spotkit plot --kind pattern-check`` (options in
:func:`spotkit.cli._common.add_pattern_options`).
"""
from __future__ import annotations

from spotkit.cli._common import EXIT_OK, check_output, finite_float, positive_float


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


__all__ = ["add_pattern", "cmd_pattern"]
