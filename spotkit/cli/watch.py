"""``spotkit watch``: follow a running experiment's exports and say when to stop.

A thin layer over :mod:`spotkit.monitor` (:func:`spotkit.monitor.watch.watch_once`).
"""
from __future__ import annotations

import sys
from pathlib import Path

from spotkit.cli._common import (
    EXIT_INPUT,
    EXIT_OK,
    add_ab_options,
    compare_kwargs,
    finite_float,
    int_at_least,
    positive_float,
)
from spotkit.errors import UsageError


def add_watch(sub) -> None:
    p = sub.add_parser(
        "watch", help="follow a running experiment and say when the answer is good enough",
        description="Follow spot exports as they arrive (new files and files that grow), "
        "append what is new to an archive in the watch folder, and after each update print "
        "B-A per band with its fixed-time interval and its anytime-valid confidence "
        "sequence (right however often you look), how the width has shrunk and a verdict: "
        "stop, or about how many more hours. Also writes a page that reloads itself "
        "(DIR/watch.html). Stop and start it again at any time: it carries on from the "
        "archive without counting anything twice.",
        epilog="example: spotkit watch exports/ --design simultaneous --a Q1ABC --b Q1ABD "
        "--target-width 0.5 --every 15 -o my-watch")
    p.add_argument("sources", nargs="+", metavar="SOURCE",
                   help="spot export files or folders to follow")
    p.add_argument("-o", "--output", metavar="DIR", default="spotkit-watch",
                   help="watch folder: archive, state and page (default spotkit-watch)")
    g = p.add_argument_group("stop rules")
    g.add_argument("--target-width", type=positive_float, metavar="DB",
                   help="stop when the sequence is this narrow [dB]; also the width the "
                   "sequence is tuned for (default 1)")
    g.add_argument("--margin", type=finite_float, default=0.5, metavar="DB",
                   help="differences smaller than this do not matter: stop when the "
                   "sequence lies within -DB..+DB (default 0.5; 0 turns the rule off)")
    g.add_argument("--max-hours", type=positive_float, metavar="HOURS",
                   help="the longest run planned [h]: stop there without a clear answer")
    g.add_argument("--min-receivers", type=int_at_least(2), default=10, metavar="N",
                   help="effective receivers before a band gets a sequence (default 10)")
    w = p.add_argument_group("following")
    w.add_argument("--every", type=positive_float, default=10.0, metavar="MIN",
                   help="minutes between updates (default 10); the page reloads as often")
    w.add_argument("--once", action="store_true",
                   help="one update, then exit (1 if an export was set aside or there is no "
                   "estimate yet)")
    w.add_argument("--until-stop", action="store_true",
                   help="exit once every band may stop")
    w.add_argument("--brief", action="store_true",
                   help="print the verdicts without the chart of the estimate over time")
    w.add_argument("--memory-mb", type=positive_float, metavar="MIB",
                   help="memory cap of each append [MiB]")
    add_ab_options(p)
    p.set_defaults(func=cmd_watch, boot=200)


def cmd_watch(args) -> int:
    from spotkit.monitor.watch import watch, watch_once

    if args.margin < 0:
        raise UsageError(f"--margin must be 0 or more dB, got {args.margin:g}")
    folder = Path(args.output)
    for s in args.sources:
        if not Path(s).exists():
            raise FileNotFoundError(2, "No such file or folder", str(s))
        if Path(s).resolve() == folder.resolve():
            raise UsageError(f"-o {folder}: the watch folder cannot be a source")
    ckw = compare_kwargs(args)
    ckw.pop("interval", None)  # every look uses the normal interval: the sequence needs its SE
    kw = dict(ckw, target_width_db=args.target_width,
              margin_db=args.margin, max_hours=args.max_hours,
              min_clusters=args.min_receivers, memory_mb=args.memory_mb)

    def show(up):
        print(up.text(chart=not args.brief), flush=True)
        print(f"page: {up.page}", flush=True)
        if not args.once:
            for src, why in up.set_aside:
                print(f"spotkit: note: set aside {src}: {why}", file=sys.stderr)

    if args.once:
        up = watch_once(args.sources, folder, args.design, args.a, args.b,
                        refresh_s=int(args.every * 60), **kw)
        show(up)
        problems = [f"set aside {s}: {w}" for s, w in up.set_aside]
        if up.problem and not len(up.history):
            problems.append(f"no estimate yet: {up.problem}")
        if problems:
            print("spotkit: " + "; ".join(problems), file=sys.stderr)
            return EXIT_INPUT
        return EXIT_OK
    watch(args.sources, folder, args.design, args.a, args.b, every_min=args.every,
          until_stop=args.until_stop, on_update=show, **kw)
    return EXIT_OK
