"""The ``spotkit plan`` subcommand (schedule, duration, audit): parser and runner.

A thin layer over :mod:`spotkit.plan.schedule`, :mod:`spotkit.plan.duration` and
:mod:`spotkit.plan.audit`.
"""
from __future__ import annotations

import math
import sys
from pathlib import Path

from spotkit.cli._common import (
    EXIT_OK,
    Parser,
    check_output,
    finite_float,
    int_at_least,
    positive_float,
)
from spotkit.errors import UsageError

#: what each design means, as the planner states it
PLAN_DESIGN_TEXT = {
    "simultaneous": "A and B on the air in the same slots under two calls",
    "alternating": "one call, A and B switched slot by slot by a balanced schedule",
    "receive": "two receivers side by side (A and B) hear the same transmitters",
    "before-after": "one call, A replaced by B in the middle of the run, control stations "
                    "near home for the propagation",
}


def parse_hours(text: str) -> list[float]:
    """``--hours`` as a non-empty list of positive, finite run lengths [h]."""
    try:
        hours = [float(h) for h in str(text).split(",") if h.strip()]
    except ValueError:
        raise UsageError(f"--hours must be numbers separated by commas, got "
                         f"{text!r}") from None
    if not hours:
        raise UsageError(f"--hours needs at least one run length, got {text!r}")
    bad = [h for h in hours if not 0 < h < math.inf]
    if bad:
        raise UsageError(f"--hours must be positive, finite hours, got {bad[0]:g}")
    return hours


def _check_duration_args(args) -> None:
    """Reject bad values and options that cannot go together, before any work."""
    if not math.isfinite(args.effect) or args.effect == 0:
        raise UsageError(f"--effect must be a non-zero number of dB, got {args.effect:g}")
    for name in ("alpha", "power"):
        v = getattr(args, name)
        if not 0 < v < 1:
            raise UsageError(f"--{name} must lie strictly between 0 and 1, got {v:g}")
    for name, low in (("runs", 2), ("boot", 1), ("sim_receivers", 1)):
        v = getattr(args, name)
        if v < low:
            raise UsageError(f"--{name.replace('_', '-')} must be at least {low}, got {v}")
    manual = args.sigma is not None or args.pairs_per_hour is not None
    if manual and (args.sigma is None or args.pairs_per_hour is None):
        raise UsageError("--sigma and --pairs-per-hour go together (the closed form from your "
                         "own numbers)")
    if manual and args.pilot:
        raise UsageError("give either a pilot (--pilot) or your own numbers (--sigma, "
                         "--pairs-per-hour), not both")
    if manual and args.design == "before-after":
        raise UsageError("the closed form describes paired designs; the before-after design "
                         "needs a pilot (or the simulated default)")
    if not manual:
        given = [f"--{n}" for n in ("icc", "receivers", "censored")
                 if getattr(args, n) is not None]
        if given:
            raise UsageError(f"{', '.join(given)} only go with --sigma/--pairs-per-hour; a "
                             "pilot measures them")
    if args.pilot and not args.a:
        raise UsageError("--pilot needs --a (and --b / --schedule / --change-at as the "
                         "design needs)")
    for name, low, high in (("icc", 0.0, 1.0), ("censored", 0.0, 1.0)):
        v = getattr(args, name)
        if v is not None and not low <= v < high:
            raise UsageError(f"--{name} must lie in [{low:g}, {high:g}), got {v:g}")
    if args.receivers is not None and not 0 < args.receivers < math.inf:
        raise UsageError(f"--receivers must be positive, got {args.receivers:g}")
    if args.plot and Path(args.plot).suffix.lower() not in (".png", ".svg"):
        raise UsageError(f"--plot must end in .png or .svg, got {args.plot!r}")


def add_plan(sub) -> None:
    p = sub.add_parser(
        "plan", help="plan an experiment: schedule, duration, audit",
        description="Plan an antenna comparison before it runs and check it afterwards: "
        "'schedule' writes a balanced, randomised switching schedule for the alternating "
        "design; 'duration' estimates the hours needed to detect a difference; 'audit' "
        "checks that a finished run followed its schedule.")
    psub = p.add_subparsers(dest="plan_action", metavar="ACTION", parser_class=Parser)

    s = psub.add_parser(
        "schedule", help="write a balanced, randomised antenna-switching schedule (CSV)",
        description="Write a switching schedule for the alternating design: each antenna gets "
        "the same number of slots in every clock hour and band, in random order within "
        "blocks. The CSV (start,end,band,antenna) is what 'spotkit compare --schedule FILE' "
        "reads.")
    s.add_argument("--start", required=True, metavar="TIME",
                   help="first slot, on a whole UTC hour, e.g. 2026-12-01T00:00Z")
    s.add_argument("--days", type=positive_float, default=1.0, help="run length [days] (default 1)")
    s.add_argument("--bands", default="20m", metavar="BAND,BAND",
                   help="bands, comma-separated (default 20m)")
    s.add_argument("--slot-minutes", type=int_at_least(1), default=2,
                   help="slot length [min] (default 2)")
    s.add_argument("--block-slots", type=int_at_least(1), default=None,
                   help="slots per randomisation block, a multiple of the antennas (default "
                   "the number of antennas: 2, A and B neighbours; longer blocks need "
                   "'spotkit compare --window BLOCK-1')")
    s.add_argument("--antennas", default="A,B", metavar="A,B,C",
                   help="antenna labels (default A,B); 'spotkit compare --antennas' with "
                   "the same labels compares them")
    s.add_argument("--band-hop", action="store_true",
                   help="one transmitter visiting the bands block by block (default: every "
                   "band on the air in every slot)")
    s.add_argument("--seed", type=int_at_least(0), default=0,
                   help="seed of the random order (default 0)")
    s.add_argument("-o", "--output", required=True, metavar="SCHEDULE.csv")

    d = psub.add_parser(
        "duration", help="hours needed to detect a B-minus-A difference",
        description="Estimate the run length needed to detect a B-minus-A difference with a "
        "given power, and the CI width after other run lengths. Best from a pilot run of "
        "your own set-up (--pilot with --a/--b: a day of reports; before-after: two days "
        "on each side of the change), whose interval is scaled to other run lengths. "
        "Without one, a simulated default pilot stands in: a vertical against a dipole "
        "(so B-A differs from receiver to receiver), unequal powers and receivers that "
        "differ - deliberately not optimistic, and not your station. --sigma with "
        "--pairs-per-hour gives the textbook closed form from your own numbers instead.")
    d.add_argument("--effect", type=float, required=True, metavar="DB",
                   help="B-minus-A to detect [dB]")
    d.add_argument("--band", default="10m", help="band (default 10m)")
    d.add_argument("--design", default="alternating", choices=list(PLAN_DESIGN_TEXT),
                   help="experiment design assumed (default alternating; the answer "
                   "states it)")
    d.add_argument("--alpha", type=float, default=0.05, help="two-sided level (default 0.05)")
    d.add_argument("--power", type=float, default=0.8, help="power, 1-beta (default 0.8)")
    d.add_argument("--hours", default="3,6,12,24,48,96,168", metavar="H,H,...",
                   help="run lengths for the trade-off table [h]")
    g = d.add_argument_group("a pilot run of your own set-up")
    g.add_argument("--pilot", metavar="SPOTS", help="pilot spot table (Parquet or CSV)")
    g.add_argument("--a", metavar="CALL", help="pilot: call of antenna A")
    g.add_argument("--b", metavar="CALL", help="pilot: call of antenna B")
    g.add_argument("--schedule", metavar="even-odd|FILE", help="pilot: alternating schedule")
    g.add_argument("--change-at", metavar="TIME", help="pilot: before-after change (UTC)")
    c = d.add_argument_group("the closed form from your own numbers (paired designs)")
    c.add_argument("--sigma", type=float, metavar="DB", help="per-pair spread of B-A [dB]")
    c.add_argument("--pairs-per-hour", type=float, metavar="N", help="pairs per hour")
    c.add_argument("--icc", type=float, default=None,
                   help="intraclass correlation of B-A within a receiver (default 0)")
    c.add_argument("--receivers", type=float, default=None,
                   help="(effective) number of receivers, needed with --icc")
    c.add_argument("--censored", type=float, default=None, metavar="FRACTION",
                   help="fraction of one-sided pairs (default 0)")
    m = d.add_argument_group("simulation")
    m.add_argument("--sim-receivers", type=int, default=300,
                   help="far stations in the default pilot and the simulations (300)")
    m.add_argument("--simulate", action="store_true",
                   help="also simulate runs of the default set-up at each run length (slow)")
    m.add_argument("--runs", type=int, default=50, help="simulated runs per length (50)")
    m.add_argument("--boot", type=int, default=100, help="bootstrap resamples per run (100)")
    d.add_argument("--seed", type=int, default=0, help="seed (default 0)")
    d.add_argument("--csv", metavar="OUT.csv", help="write the trade-off table")
    d.add_argument("--plot", metavar="OUT.png", help="draw CI width and power against hours")

    a = psub.add_parser(
        "audit", help="check that a finished run followed its schedule",
        description="Compare the reports of a finished alternating run with its schedule: "
        "reports off the schedule, scheduled slots with no report, slots whose reported "
        "power says the other antenna was connected, hours with one antenna only, and the "
        "effective pairs this costs.")
    a.add_argument("spots", metavar="SPOTS", help="spot table (Parquet or CSV)")
    a.add_argument("--schedule", required=True, metavar="FILE", help="the schedule CSV")
    a.add_argument("--call", required=True, help="the transmitting station's call")
    a.add_argument("--power-a", type=finite_float, metavar="DBM",
                   help="power used with antenna A (default: inferred)")
    a.add_argument("--power-b", type=finite_float, metavar="DBM",
                   help="power used with antenna B (default: inferred)")
    a.add_argument("--no-markers", action="store_true",
                   help="do not use the reported power to tell the antennas apart")
    a.add_argument("--csv", metavar="OUT.csv", help="write every finding")
    a.add_argument("--corrected", metavar="OUT.csv",
                   help="write the schedule as the power markers say it ran")
    p.set_defaults(func=cmd_plan)


def cmd_plan(args) -> int:
    from spotkit.plan import audit, schedule
    from spotkit.plan import duration as plan

    action = getattr(args, "plan_action", None)
    if action == "schedule":
        sched = schedule.make_schedule(args.start, args.days, args.bands,
                                       slot_minutes=args.slot_minutes,
                                       block_slots=args.block_slots,
                                       band_hop=args.band_hop, seed=args.seed,
                                       antennas=args.antennas)
        schedule.write_schedule(sched, args.output)
        bal = schedule.schedule_balance(sched)
        per = bal["A"].groupby(level=schedule.C.BAND).agg(["min", "max"])
        text = ", ".join(f"{b}: {lo}" + (f"-{hi}" if hi != lo else "")
                         for b, (lo, hi) in per.iterrows())
        print(f"wrote {args.output}: {len(sched):,} slots (slot x band), "
              f"{bal.index.get_level_values(0).nunique()} hours; each antenna gets the same "
              f"number of slots in every hour and band ({text} each per hour)")
        return EXIT_OK
    if action == "audit":
        from spotkit.io.atomic import check_outputs
        from spotkit.io.ingest import load_spots

        for option, path in (("--csv", args.csv), ("--corrected", args.corrected)):
            if path:
                check_output(path, option, inputs=(args.spots, args.schedule))
        check_outputs([args.csv, args.corrected])
        spots = load_spots(args.spots)
        res = audit.audit_schedule(spots, args.schedule, args.call,
                                   marker="none" if args.no_markers else "power",
                                   power_a_dbm=args.power_a, power_b_dbm=args.power_b)
        print(res.text)
        if args.csv:
            res.to_frame().to_csv(args.csv, index=False)
            print(f"wrote {args.csv}")
        if args.corrected:
            schedule.write_schedule(res.corrected_schedule(), args.corrected)
            print(f"wrote {args.corrected}")
        return EXIT_OK
    if action != "duration":
        raise UsageError("spotkit plan needs an action: schedule, duration or audit")

    hours = parse_hours(args.hours)
    _check_duration_args(args)
    for option, path in (("--csv", args.csv), ("--plot", args.plot)):
        if path:
            check_output(path, option, inputs=(args.pilot, args.schedule))
    manual = args.sigma is not None or args.pairs_per_hour is not None
    pilot = None
    if manual:
        first = ("No pilot: the closed form from the numbers you gave. A 24-hour pilot of "
                 "your own set-up (--pilot SPOTS --a CALL) will give a real answer.")
        inputs = dict(sigma_db=args.sigma, pairs_per_hour=args.pairs_per_hour,
                      icc=args.icc or 0.0, clusters=args.receivers,
                      censored_fraction=args.censored or 0.0, design=args.design)
        source = "closed form from your numbers"
    elif args.pilot:
        from spotkit.io.ingest import load_spots

        first = None
        pilot = plan.pilot_parameters(load_spots(args.pilot), args.design, args.a, args.b,
                                      band=args.band, schedule=args.schedule,
                                      change_at=args.change_at, seed=args.seed)
        source = f"scaled from the pilot {args.pilot}"
    else:
        first = ("No pilot: these figures come from a simulated default station, not yours. "
                 + ("A 24-hour pilot" if args.design != "before-after" else
                    "A pilot (two days on each side of the change)")
                 + " of your own set-up (--pilot SPOTS --a CALL) will give a real answer.")
        pilot = plan.simulate_default_pilot(args.design, args.band,
                                            n_receivers=args.sim_receivers, seed=args.seed)
        source = "scaled from the simulated default pilot"
    if first:
        print(first)
    print(f"design assumed: {args.design} - {PLAN_DESIGN_TEXT[args.design]}")
    if pilot is not None:
        if not args.pilot:
            print("default pilot: a ground-mounted vertical (A, 37 dBm) against a horizontal "
                  f"dipole 10 m high (B, 33 dBm), {args.sim_receivers} simulated far "
                  "stations with differing noise floors, thresholds and hours on the air")
        print(f"  {pilot}")
        inputs = dict(pilot=pilot, source=source)
    sim_table = None
    if args.simulate:
        sim_table = plan.duration_by_simulation(
            None, hours, n_runs=args.runs, n_boot=args.boot, alpha=args.alpha,
            seed=args.seed, design=args.design, band=args.band,
            n_receivers=args.sim_receivers, n_transmitters=args.sim_receivers,
            progress=sys.stderr.isatty(), **plan.DEFAULT_PILOT)
    table = plan.duration_table(args.effect, hours, alpha=args.alpha, power=args.power,
                                simulation=sim_table, **inputs)
    need = plan.DurationEstimate(**{k: v for k, v in table.attrs["needed"].items()
                                    if k != "feasible"})
    print(need)
    if min(min(hours), need.hours) < 24 and args.design != "before-after":
        print("runs shorter than a day: the table averages over the time of day; which hours "
              "you run matters (a band that is open only by day gives little at night)")
    if args.design == "before-after":
        print("before-after: a run needs at least two whole days on each side of the change "
              "for an interval (NaN rows have none)")
    show = table.copy()
    fmt = {c: (lambda x: f"{x:,.0f}") for c in show.columns if c.startswith("pairs")}
    print(show.to_string(index=False, formatters=fmt, float_format=lambda x: f"{x:.3g}"))
    if args.csv:
        table.to_csv(args.csv, index=False)
        print(f"wrote {args.csv}")
    if args.plot:
        import matplotlib.pyplot as plt

        from spotkit.viz.plots import duration_tradeoff_plot

        ax = duration_tradeoff_plot(table)
        ax.figure.tight_layout()
        ax.figure.savefig(args.plot, dpi=150)
        plt.close(ax.figure)
        print(f"wrote {args.plot}")
    return EXIT_OK
