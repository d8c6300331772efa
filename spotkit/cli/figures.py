"""``spotkit map`` and ``spotkit plot``: pictures of coverage and of B minus A.

A thin layer over :mod:`spotkit.viz.maps` and :mod:`spotkit.viz.plots`. The two commands
share their input, output and band options and the A/B options (needed only by the kinds
that compare two antennas); matplotlib is imported only when a figure is drawn.
"""
from __future__ import annotations

from spotkit.cli._common import (
    ab_labels,
    add_ab_options,
    add_pattern_options,
    add_progress_option,
    check_output,
    compare_kwargs,
    figure_dpi,
    finite_float,
    locators_from_data,
    pattern_check,
    progress,
    save_figure,
)
from spotkit.errors import UsageError


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
    p.add_argument("--dpi", type=figure_dpi, default=150,
                   help="resolution of a PNG [dots per inch] (default 150)")
    add_ab_options(p, required=False,
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
                            progress=progress(args), **compare_kwargs(args))


def add_map(sub) -> None:
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
    p.add_argument("--level", choices=["receiver", "square", "field"], default="square",
                   help="difference: one estimate per receiver, locator square or field "
                   "(default square)")
    p.add_argument("--layout", choices=["side", "overlay"], default="side",
                   help="reach: A and B side by side (default) or overlaid")
    p.add_argument("--radius-km", type=finite_float, metavar="KM",
                   help="coverage, difference: radius of the zoomed panel beside each whole "
                   "map [km] (default: the distance that holds half the pairs; 0: none)")
    p.add_argument("--antenna", choices=["A", "B", "both"],
                   help="coverage: map the spots of antenna A, of B, or both side by side on "
                   "one SNR scale (needs --design and --a; default both when --a is given)")
    p.add_argument("--resolution", choices=["110m", "50m", "10m"], default="110m",
                   help="land layer: 110m is shipped; 50m/10m are downloaded by cartopy once "
                   "(without a network the shipped layer is drawn, with a note)")
    add_progress_option(p)
    p.set_defaults(func=cmd_map)


def _labels(args) -> tuple[str, str]:
    """Names of A and B for titles and legends: --label-a / --label-b where the command has
    them, else the calls."""
    a = getattr(args, "label_a", None) or args.a or "A"
    b = getattr(args, "label_b", None) or args.b or (args.a if args.design in (
        "alternating", "before-after") else None) or "B"
    return a, b


def _coverage_sets(args, spots):
    """The spots of the antennas ``--antenna`` asks for (None: every spot, pooled)."""
    from spotkit.viz.mapdata import antenna_spots

    which = args.antenna or ("both" if args.a else None)
    if which is None:
        return None
    if not args.design or not args.a:
        raise UsageError("map --kind coverage --antenna tells A from B by the design: give "
                         "--design and --a (and --b, --schedule or --change-at as the design "
                         "needs)")
    sets = antenna_spots(spots, args.design, args.a, args.b, schedule=args.schedule,
                         change_at=args.change_at)
    for key, part in sets.items():
        if part.empty:
            call = args.a if key == "A" else (args.b or args.a)
            raise UsageError(f"map --kind coverage --antenna: no spots of {key} ({call}) in "
                             f"{args.spots}; check --a / --b and --design")
    return sets if which == "both" else {which: sets[which]}


def cmd_map(args) -> int:
    from spotkit.io.ingest import load_spots
    from spotkit.viz import maps
    from spotkit.viz.mapdata import check_home, home_from_spots

    check_output(args.output, "-o", (".png", ".svg"), inputs=(args.spots,))  # before work
    if args.radius_km is not None and args.radius_km < 0:
        raise UsageError(f"--radius-km must be 0 (no zoomed panel) or more, got "
                         f"{args.radius_km:g}")
    if args.antenna and args.kind != "coverage":
        raise UsageError(f"--antenna applies to map --kind coverage, not --kind {args.kind}")
    spots = load_spots(args.spots)
    bands = _figure_bands(args)
    common = dict(home=args.home, projection=args.projection, resolution=args.resolution,
                  progress=progress(args))
    labels = _labels(args)
    # without --home the map centre is a locator from the data
    with locators_from_data(applies=args.home is None):
        if args.home is not None and len(spots):
            check_home(args.home, home_from_spots(spots), option="--home")
        if args.kind == "coverage":
            fig = maps.coverage_map(spots, bands=bands, paths=args.paths,
                                    radius_km=args.radius_km,
                                    antennas=_coverage_sets(args, spots), labels=labels,
                                    **common)
        elif args.kind == "difference":
            result = _figure_compare(args, spots, ("band", args.level))
            if bands and len(bands) == 1:
                bands = bands[0]
            fig = maps.difference_map(result, band=bands, radius_km=args.radius_km,
                                      labels=labels, **common)
        else:
            from spotkit.compare.pairing import pair_spots

            if not args.design or not args.a:
                raise UsageError("--kind reach compares two antennas: give --design and --a")
            pairs = pair_spots(spots, args.design, args.a, args.b, schedule=args.schedule,
                               change_at=args.change_at)
            fig = maps.reach_map(pairs, band=bands, layout=args.layout, labels=labels,
                                 **common)
    return save_figure(fig, args.output, args.dpi)


def add_plot(sub) -> None:
    p = sub.add_parser(
        "plot", help="draw comparison and coverage plots",
        description="Draw a plot: B minus A by bearing (polar), distance, elevation or hour "
        "with 95 % CIs, or all at a glance as band x distance, band x bearing and band x "
        "hour grids (--kind grid) (need the A/B options); P(heard) against distance for A "
        "and B (needs the A/B options); SNR per watt against distance; spots per hour by band.")
    _add_figure_options(p, ["bearing", "distance", "elevation", "hour", "grid", "heard",
                            "snr-distance", "spots-per-hour", "elevation-curve",
                            "bearing-curve", "bearing-rings", "pattern-check"],
                        "which plot (elevation-curve, bearing-curve: B minus A smoothed "
                        "against the elevation angle or round the compass, with a pointwise "
                        "bootstrap band; bearing-rings: the same round the compass as one "
                        "coloured ring per band; pattern-check: measured against two "
                        "modelled patterns, needs --pattern-a and --pattern-b)")
    add_pattern_options(p)
    p.set_defaults(func=cmd_plot)


def cmd_plot(args) -> int:
    from spotkit.io.ingest import load_spots
    from spotkit.viz import plots

    check_output(args.output, "-o", (".png", ".svg"), inputs=(args.spots,))  # before work
    ab_labels(args)
    spots = load_spots(args.spots)
    bands = _figure_bands(args)
    if args.kind in ("bearing", "distance", "elevation", "hour"):
        result = _figure_compare(args, spots, ("band", args.kind))
        draw = {"bearing": plots.bearing_plot, "distance": plots.distance_plot,
                "elevation": plots.elevation_plot, "hour": plots.hour_plot}[args.kind]
        ax = draw(result, band=bands)
    elif args.kind == "grid":
        results = [_figure_compare(args, spots, ("band", key))
                   for key in ("distance", "bearing", "hour")]
        fig = plots.grid_plot(results, band=bands)
        return save_figure(fig, args.output, args.dpi)
    elif args.kind == "heard":
        from spotkit.compare.pairing import pair_spots

        if not args.design or not args.a:
            raise UsageError("--kind heard compares two antennas: give --design and --a")
        pairs = pair_spots(spots, args.design, args.a, args.b, schedule=args.schedule,
                           change_at=args.change_at)
        if bands and len(bands) > 1:
            raise UsageError("--kind heard draws one band at a time")
        ax = plots.heard_plot(pairs, band=bands[0] if bands else None,
                              labels=ab_labels(args) or (args.a.upper(),
                                                         (args.b or args.a).upper()))
    elif args.kind in ("elevation-curve", "bearing-curve", "bearing-rings"):
        from spotkit.compare.elevation import bearing_curve, elevation_curve
        from spotkit.compare.pairing import pair_spots

        if not args.design or not args.a:
            raise UsageError(f"--kind {args.kind} compares two antennas: give --design "
                             "and --a")
        if args.design == "before-after":
            raise UsageError(f"--kind {args.kind} needs a paired design (simultaneous, "
                             "alternating or receive)")
        pairs = pair_spots(spots, args.design, args.a, args.b, schedule=args.schedule,
                           window_slots=args.window,
                           require_open_path=not args.no_open_path_check,
                           threshold_method="lowest" if args.model == "tobit" else "t50",
                           tau_db=args.tau)
        if args.model != "tobit" and args.tau is None and args.tau_from == "pairs":
            from spotkit.compare.width import width_from_pairs

            # the detection width as the comparison chooses it (compare_antennas)
            pairs, _ = width_from_pairs(spots, pairs, args.design, args.a, args.b)
        opts = dict(n_boot=min(args.boot, 200), seed=args.seed, confidence=args.confidence)
        if args.kind == "elevation-curve":
            curve = elevation_curve(pairs, layer_height_km=args.layer_height, **opts)
            ax = plots.elevation_curve_plot(curve, band=bands)
        elif args.kind == "bearing-curve":
            ax = plots.bearing_curve_plot(bearing_curve(pairs, **opts), band=bands)
        else:
            ax = plots.bearing_rings_plot(bearing_curve(pairs, **opts), band=bands)
    elif args.kind == "pattern-check":
        if not (args.pattern_a and args.pattern_b):
            raise UsageError("--kind pattern-check needs --pattern-a and --pattern-b")
        ax = plots.pattern_check_plot(pattern_check(args, spots), band=bands)
    elif args.kind == "snr-distance":
        ax = plots.snr_distance_plot(spots, band=bands)
    else:
        ax = plots.spots_per_hour_plot(spots, band=bands)
    ax.figure.tight_layout()
    return save_figure(ax.figure, args.output, args.dpi)
