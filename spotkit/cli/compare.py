"""``spotkit compare`` and ``spotkit report``: B minus A of two antennas, as tables or as a
self-contained HTML report.

A thin layer over :func:`spotkit.compare.estimate.compare_antennas` and
:mod:`spotkit.report`; both take the A/B options of :func:`spotkit.cli._common.add_ab_options`.
"""
from __future__ import annotations

from spotkit.cli._common import (
    EXIT_OK,
    ab_labels,
    add_ab_options,
    add_pattern_options,
    add_progress_option,
    by_keys,
    check_output,
    compare_kwargs,
    pattern_check,
    progress,
    write_result,
)


def add_compare(sub) -> None:
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
    add_ab_options(p, required=False)
    _add_several_options(p)
    add_pattern_options(p)
    p.add_argument("--json", metavar="OUT.json", help="write the result as JSON")
    p.add_argument("--csv", metavar="OUT.csv", help="write the result table as CSV")
    p.add_argument("--markdown", nargs="?", const="-", metavar="OUT.md",
                   help="also a plain-text summary to paste into a forum post or an e-mail "
                   "(headline, receivers and pairs, band x distance table, where B wins or "
                   "loses; with --antennas / --periods: ranking or steps, the table of "
                   "comparisons and their simultaneous intervals): printed, or written to OUT.md")
    add_progress_option(p)
    p.set_defaults(func=cmd_compare)


def _add_several_options(p) -> None:
    """--antennas / --reference / --all-pairs and --periods (several antennas, a series)."""
    g = p.add_argument_group(
        "several antennas or a series of changes",
        "--antennas compares k antennas (simultaneous: transmitter calls; receive: receiver "
        "calls; alternating: the schedule's labels, with --a the call and --schedule, "
        "pairing window k-1 slots unless --window is given) with intervals simultaneous "
        "over the comparisons and a ranking; --periods compares the periods of one "
        "call (--a) whose antenna changed several times (before/after with control "
        "stations). Both print a summary and write JSON/CSV; --by does not apply.")
    g.add_argument("--antennas", metavar="X,Y,Z", help="the antennas to compare (k >= 2)")
    g.add_argument("--reference", metavar="X", help="with --antennas: the antenna the "
                   "others are compared with (default the first)")
    g.add_argument("--all-pairs", action="store_true",
                   help="with --antennas: report every pair, not only against the reference")
    g.add_argument("--periods", metavar="'LABEL:TIME,LABEL:TIME,...'",
                   help="a series of changes, e.g. '4 radials:2026-03-01,8 radials:"
                   "2026-03-08': each period against the first and each step")



def _check_result_outputs(args):
    """Refuse --json / --csv / --markdown FILE that are inputs or the same file, before any
    work; returns ``(markdown, md_file)``: the --markdown value and the file it names (None
    for standard output)."""
    markdown = getattr(args, "markdown", None)
    md_file = markdown if markdown not in (None, "-") else None
    for option, path in (("--json", args.json), ("--csv", args.csv), ("--markdown", md_file)):
        if path:
            check_output(path, option, inputs=(args.spots, args.schedule))
    outs = [x for x in (args.json, args.csv, md_file) if x]
    if len(outs) > 1:
        from spotkit.io.atomic import check_outputs

        check_outputs(outs)
    return markdown, md_file

def _cmd_several(args) -> int:
    """``spotkit compare --antennas ...`` or ``--periods ...``."""
    from spotkit.compare.multi import compare_several, parse_antennas
    from spotkit.compare.series import compare_series
    from spotkit.errors import UsageError
    from spotkit.io.ingest import load_spots
    from spotkit.report import several_markdown

    if args.antennas and args.periods:
        raise UsageError("give --antennas or --periods, not both")
    if args.by:
        raise UsageError("--by does not apply to --antennas or --periods")
    if args.periods:
        if args.design not in (None, "before-after"):
            raise UsageError("--periods is the before-after design with several changes "
                             f"(got --design {args.design})")
        if not args.a:
            raise UsageError("--periods needs --a, the call whose antenna changed")
        if args.change_at:
            raise UsageError("give the change times in --periods, not --change-at")
    else:
        labels = parse_antennas(args.antennas)
        if args.design not in ("simultaneous", "receive", "alternating"):
            raise UsageError("--antennas needs --design simultaneous, receive or alternating"
                             + (f" (got {args.design})" if args.design else ""))
        if args.design == "alternating" and not (args.a and args.schedule):
            raise UsageError("--antennas with the alternating design needs --a (the call) "
                             "and --schedule (labels as in --antennas)")
    markdown, md_file = _check_result_outputs(args)
    spots = load_spots(args.spots)
    common = dict(n_boot=args.boot, seed=args.seed, confidence=args.confidence,
                  min_pairs=args.min_pairs, missed_reports=args.missed_reports)
    if args.periods:
        result = compare_series(spots, args.a, args.periods, day_hours=args.day_hours,
                                **common)
    else:
        result = compare_several(spots, args.design, labels, call=args.a,
                                 reference=args.reference, all_pairs=args.all_pairs,
                                 schedule=args.schedule,
                                 window_slots=None if args.window == 1 else args.window,
                                 require_open_path=not args.no_open_path_check,
                                 model=args.model, tau_db=args.tau, tau_from=args.tau_from,
                                 **common)
    write_result(result, args)
    if markdown:
        _write_text(several_markdown(result), md_file)
    return EXIT_OK


def _write_text(text: str, path) -> None:
    """Print ``text`` (``path`` None) or write it to ``path`` as one transaction."""
    if path is None:
        print("\n" + text, end="")
        return
    from spotkit.io.atomic import staged

    with staged([path]) as (tmp,):
        tmp.write_text(text, encoding="utf-8")
    print(f"wrote {path}")


def _cmd_patterns(args) -> int:
    """``spotkit compare ... --pattern-a FILE --pattern-b FILE``: text, --json, --csv."""
    from spotkit.io.atomic import check_outputs, staged
    from spotkit.io.ingest import load_spots

    inputs = (args.spots, args.schedule, args.pattern_a, args.pattern_b)
    outs = [(check_output(path, option, inputs=inputs), option)
            for option, path in (("--json", args.json), ("--csv", args.csv)) if path]
    if len(outs) > 1:
        check_outputs([path for path, _ in outs])
    check = pattern_check(args, load_spots(args.spots), args.by)
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


def cmd_compare(args) -> int:
    from spotkit.compare.estimate import compare_antennas
    from spotkit.errors import UsageError
    from spotkit.io.ingest import load_spots

    if args.antennas or args.periods:
        return _cmd_several(args)
    if args.pattern_a or args.pattern_b:
        return _cmd_patterns(args)
    if args.reference or args.all_pairs:
        raise UsageError("--reference and --all-pairs go with --antennas")
    missing = [o for o, v in (("--design", args.design), ("--a", args.a)) if not v]
    if missing:
        raise UsageError("the following arguments are required: " + ", ".join(missing)
                         + " (or --antennas / --periods)")
    by = by_keys(args.by)
    kw = compare_kwargs(args)
    markdown, md_file = _check_result_outputs(args)
    spots = load_spots(args.spots)
    result = compare_antennas(spots, args.design, args.a, args.b, by=by,
                              progress=progress(args), **kw)
    write_result(result, args)
    if markdown:
        _write_markdown(spots, result, by, kw, args, md_file)
    return EXIT_OK


def _write_markdown(spots, result, by, kw, args, path) -> None:
    """``--markdown``: the paste-ready summary, from the band x distance comparison (run
    here unless ``--by`` was exactly that)."""
    from spotkit.compare.estimate import compare_antennas
    from spotkit.report import markdown_summary

    by_distance = result if tuple(by) == ("band", "distance") else compare_antennas(
        spots, args.design, args.a, args.b, by=("band", "distance"), **kw)
    _write_text(markdown_summary(result, by_distance), path)


def add_report(sub) -> None:
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
    add_ab_options(p)
    g = p.add_argument_group(
        "several antennas or a series of changes",
        "adds a section 'Several antennas' or 'Series of changes' (ranking or steps, "
        "the table with simultaneous intervals); the rest of the report is the A/B one. "
        "With --antennas, the A/B part is the reference against the next antenna (--b "
        "defaults to it; alternating design: two of the schedule's labels, one call); with "
        "--periods, it is the first period against the second, on the reports before the "
        "third period's start (--change-at defaults to the second period's start)")
    g.add_argument("--antennas", metavar="X,Y,Z", help="the antennas to compare (k >= 2)")
    g.add_argument("--reference", metavar="X", help="with --antennas: the antenna the "
                   "others are compared with (default the first)")
    g.add_argument("--all-pairs", action="store_true",
                   help="with --antennas: every pair, not only against the reference")
    g.add_argument("--periods", metavar="'LABEL:TIME,LABEL:TIME,...'",
                   help="a series of changes of --a (before-after design)")
    p.add_argument("--title", help="report title")
    p.add_argument("-o", "--output", required=True, metavar="OUT.html")
    add_progress_option(p)
    p.set_defaults(func=cmd_report)


def cmd_report(args) -> int:
    from spotkit.io.ingest import load_spots
    from spotkit.report import several_sentences, standard_comparisons, write_report

    by = by_keys(args.by)
    ab_labels(args)  # a bad --label-a/--label-b before any work
    _report_several_defaults(args)
    check_output(args.output, "-o", inputs=(args.spots, args.schedule))
    spots = load_spots(args.spots)
    show_progress = progress(args)
    ab_spots, ab_kw = _report_ab_part(args, spots)
    results, map_result = standard_comparisons(
        ab_spots, args.design, args.a, args.b, by=by or None, progress=show_progress,
        **ab_kw)
    several = _report_several(args, spots)
    write_report(args.output, spots, results, map_result=map_result, title=args.title,
                 progress=show_progress, several=several)
    print(results[0].verdicts()[0])
    if several is not None:
        print(several_sentences(several)[0])
    print(f"wrote {args.output}")
    return EXIT_OK


def _report_several_defaults(args) -> None:
    """``spotkit report --antennas / --periods``: check them against the A/B options and
    fill --b (the second antenna) or --change-at (the second period's start)."""
    from spotkit.compare.multi import parse_antennas
    from spotkit.compare.series import parse_periods
    from spotkit.errors import UsageError

    if args.antennas and args.periods:
        raise UsageError("give --antennas or --periods, not both")
    if (args.reference or args.all_pairs) and not args.antennas:
        raise UsageError("--reference and --all-pairs go with --antennas")
    if args.antennas:
        labels = parse_antennas(args.antennas)
        if args.design not in ("simultaneous", "receive", "alternating"):
            raise UsageError("report --antennas needs --design simultaneous, receive or "
                             f"alternating (got {args.design})")
        if args.design == "alternating":
            if not args.schedule:
                raise UsageError("report --antennas with the alternating design needs "
                                 "--schedule (labels as in --antennas)")
            if args.b is None:
                args.b = args.a  # one call; the A/B part compares two of the labels
        elif args.b is None:
            others = [x for x in labels if x != args.a.upper()]
            args.b = others[0]
    if args.periods:
        periods = parse_periods(args.periods)
        if args.design != "before-after":
            raise UsageError(f"--periods goes with --design before-after (got {args.design})")
        if not args.change_at:
            args.change_at = periods[1][1].isoformat()


def _report_ab_part(args, spots):
    """The spots and compare_antennas keywords of the report's A/B part.

    Several antennas, alternating design: the reference (--reference, else the first
    label) as A against the next label as B. A series of changes: the first period as A
    against the second as B, on the reports before the third period's start only, named
    by their labels unless --label-a/--label-b say otherwise."""
    import pandas as pd

    from spotkit import columns as C
    from spotkit.compare.multi import parse_antennas
    from spotkit.compare.series import parse_periods

    kw = compare_kwargs(args)
    if args.antennas and args.design == "alternating":
        labels = parse_antennas(args.antennas)
        ref = (args.reference or labels[0]).strip().upper()
        other = next(x for x in labels if x != ref)
        kw.update(schedule_labels=labels, contrast=(ref, other))
        kw.setdefault("labels", (ref, other))
    if args.periods:
        periods = parse_periods(args.periods)
        t = pd.to_datetime(spots[C.TIME], utc=True)
        keep = t >= periods[0][1]
        if len(periods) > 2:
            keep &= t < periods[2][1]
        spots = spots[keep.to_numpy()]
        kw.setdefault("labels", (periods[0][0], periods[1][0]))
    return spots, kw


def _report_several(args, spots):
    """The several-antenna or series result for the report's section, or None."""
    common = dict(n_boot=args.boot, seed=args.seed, confidence=args.confidence,
                  min_pairs=args.min_pairs, missed_reports=args.missed_reports)
    if args.antennas:
        from spotkit.compare.multi import compare_several

        alt = args.design == "alternating"
        return compare_several(spots, args.design, args.antennas,
                               reference=args.reference, all_pairs=args.all_pairs,
                               call=args.a if alt else None,
                               schedule=args.schedule if alt else None,
                               window_slots=(None if args.window == 1 else args.window)
                               if alt else None,
                               require_open_path=not args.no_open_path_check,
                               model=args.model, tau_db=args.tau, tau_from=args.tau_from,
                               **common)
    if args.periods:
        from spotkit.compare.series import compare_series

        return compare_series(spots, args.a, args.periods, day_hours=args.day_hours, **common)
    return None
