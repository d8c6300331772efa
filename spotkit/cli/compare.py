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
    add_progress_option,
    by_keys,
    check_output,
    compare_kwargs,
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
    add_ab_options(p)
    p.add_argument("--json", metavar="OUT.json", help="write the result as JSON")
    p.add_argument("--csv", metavar="OUT.csv", help="write the result table as CSV")
    p.add_argument("--markdown", nargs="?", const="-", metavar="OUT.md",
                   help="also a plain-text summary to paste into a forum post or an e-mail "
                   "(headline, receivers and pairs, band x distance table, where B wins or "
                   "loses): printed, or written to OUT.md")
    add_progress_option(p)
    p.set_defaults(func=cmd_compare)


def cmd_compare(args) -> int:
    from spotkit.compare.estimate import compare_antennas
    from spotkit.io.ingest import load_spots

    by = by_keys(args.by)
    kw = compare_kwargs(args)
    inputs = (args.spots, args.schedule)
    markdown = getattr(args, "markdown", None)
    md_file = markdown if markdown not in (None, "-") else None
    for option, path in (("--json", args.json), ("--csv", args.csv), ("--markdown", md_file)):
        if path:
            check_output(path, option, inputs=inputs)
    outs = [x for x in (args.json, args.csv, md_file) if x]
    if len(outs) > 1:
        from spotkit.io.atomic import check_outputs

        check_outputs(outs)
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
    text = markdown_summary(result, by_distance)
    if path is None:
        print("\n" + text, end="")
        return
    from spotkit.io.atomic import staged

    with staged([path]) as (tmp,):
        tmp.write_text(text, encoding="utf-8")
    print(f"wrote {path}")


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
    p.add_argument("--title", help="report title")
    p.add_argument("-o", "--output", required=True, metavar="OUT.html")
    add_progress_option(p)
    p.set_defaults(func=cmd_report)


def cmd_report(args) -> int:
    from spotkit.io.ingest import load_spots
    from spotkit.report import standard_comparisons, write_report

    by = by_keys(args.by)
    ab_labels(args)  # a bad --label-a/--label-b before any work
    check_output(args.output, "-o", inputs=(args.spots, args.schedule))
    spots = load_spots(args.spots)
    show_progress = progress(args)
    results, map_result = standard_comparisons(
        spots, args.design, args.a, args.b, by=by or None, progress=show_progress,
        **compare_kwargs(args))
    write_report(args.output, spots, results, map_result=map_result, title=args.title,
                 progress=show_progress)
    print(results[0].verdicts()[0])
    print(f"wrote {args.output}")
    return EXIT_OK
