"""The ``spotkit plan`` subcommand (schedule, duration, audit): parser and runner.

A thin layer over :mod:`spotkit.plan.schedule`, :mod:`spotkit.plan.duration` and
:mod:`spotkit.plan.audit`.
"""
from __future__ import annotations

import sys

from spotkit.cli._common import EXIT_OK, Parser
from spotkit.errors import UsageError


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
    s.add_argument("--days", type=float, default=1.0, help="run length [days] (default 1)")
    s.add_argument("--bands", default="20m", metavar="BAND,BAND",
                   help="bands, comma-separated (default 20m)")
    s.add_argument("--slot-minutes", type=int, default=2, help="slot length [min] (default 2)")
    s.add_argument("--block-slots", type=int, default=2,
                   help="slots per randomisation block, even (default 2: A and B neighbours;"
                   " longer blocks need 'spotkit compare --window BLOCK-1')")
    s.add_argument("--band-hop", action="store_true",
                   help="one transmitter visiting the bands block by block (default: every "
                   "band on the air in every slot)")
    s.add_argument("--seed", type=int, default=0, help="seed of the random order (default 0)")
    s.add_argument("-o", "--output", required=True, metavar="SCHEDULE.csv")

    d = psub.add_parser(
        "duration", help="hours needed to detect a B-minus-A difference",
        description="Estimate the run length needed to detect a B-minus-A difference with a "
        "given power: a closed form (paired normal approximation, inflated for clustering by "
        "receiver and for one-sided pairs) and, with --simulate, simulated experiments. The "
        "spread and report rate come from --sigma/--pairs-per-hour, or a pilot run "
        "(--pilot with --design/--a/--b), or else a simulated pilot day of the chosen "
        "design with the simulator's default station population.")
    d.add_argument("--effect", type=float, required=True, metavar="DB",
                   help="B-minus-A to detect [dB]")
    d.add_argument("--band", default="10m", help="band (default 10m)")
    d.add_argument("--alpha", type=float, default=0.05, help="two-sided level (default 0.05)")
    d.add_argument("--power", type=float, default=0.8, help="power, 1-beta (default 0.8)")
    d.add_argument("--hours", default="3,6,12,24,48,96,168", metavar="H,H,...",
                   help="run lengths for the trade-off table [h]")
    d.add_argument("--sigma", type=float, metavar="DB", help="per-pair spread of B-A [dB]")
    d.add_argument("--pairs-per-hour", type=float, metavar="N", help="pairs per hour")
    d.add_argument("--icc", type=float, default=None,
                   help="intraclass correlation of B-A within a receiver (default: from the "
                   "pilot, else 0)")
    d.add_argument("--receivers", type=float, default=None,
                   help="(effective) number of receivers, needed with --icc")
    d.add_argument("--censored", type=float, default=None, metavar="FRACTION",
                   help="fraction of one-sided pairs (default: from the pilot, else 0)")
    d.add_argument("--pilot", metavar="SPOTS", help="pilot spot table (Parquet or CSV)")
    d.add_argument("--design", default="alternating",
                   choices=["alternating", "simultaneous", "receive"],
                   help="experiment design (default alternating)")
    d.add_argument("--a", metavar="CALL", help="pilot: call of antenna A")
    d.add_argument("--b", metavar="CALL", help="pilot: call of antenna B")
    d.add_argument("--schedule", metavar="even-odd|FILE", help="pilot: alternating schedule")
    d.add_argument("--simulate", action="store_true",
                   help="also simulate experiments at each run length (slow)")
    d.add_argument("--runs", type=int, default=50, help="simulated runs per length (50)")
    d.add_argument("--boot", type=int, default=100, help="bootstrap resamples per run (100)")
    d.add_argument("--sim-receivers", type=int, default=300,
                   help="receivers in the simulations (default 300)")
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
    a.add_argument("--power-a", type=float, metavar="DBM",
                   help="power used with antenna A (default: inferred)")
    a.add_argument("--power-b", type=float, metavar="DBM",
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
                                       band_hop=args.band_hop, seed=args.seed)
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
        from spotkit.io.ingest import load_spots

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

    try:
        hours = [float(h) for h in args.hours.split(",") if h.strip()]
    except ValueError:
        raise UsageError(f"--hours must be numbers separated by commas, got "
                         f"{args.hours!r}") from None
    inputs = {}
    source = "given"
    if args.sigma is None or args.pairs_per_hour is None:
        if args.pilot:
            from spotkit.io.ingest import load_spots

            if not args.a:
                raise UsageError("--pilot needs --a (and --b / --schedule as the design needs)")
            pil = plan.pilot_parameters(load_spots(args.pilot), args.design, args.a, args.b,
                                        band=args.band, schedule=args.schedule,
                                        seed=args.seed)
            source = f"pilot {args.pilot}"
        else:
            from spotkit.sim.simulate import simulate_spots

            sched = (schedule.make_schedule("2026-03-02", 1, [args.band], seed=args.seed)
                     if args.design == "alternating" else None)
            kw = {"schedule": sched} if sched is not None else {}
            sim = simulate_spots(args.design, days=1, seed=args.seed, start="2026-03-02",
                                 bands=(args.band,), difference_db=args.effect,
                                 n_receivers=args.sim_receivers, **kw)
            pil = plan.pilot_parameters(sim.spots, sim.design, sim.a, sim.b, band=args.band,
                                        schedule=sim.schedule, seed=args.seed)
            source = "a simulated pilot day (simulator defaults; measure a real pilot!)"
        print(f"inputs from {source}:\n  {pil}")
        inputs = pil.closed_form_inputs()
    for key, val in (("sigma_db", args.sigma), ("pairs_per_hour", args.pairs_per_hour),
                     ("icc", args.icc), ("clusters", args.receivers),
                     ("censored_fraction", args.censored)):
        if val is not None:
            inputs[key] = val
            if key == "censored_fraction":
                inputs.pop("censoring_factor", None)
    sim_table = None
    if args.simulate:
        sim_table = plan.duration_by_simulation(
            args.effect, hours, n_runs=args.runs, n_boot=args.boot, alpha=args.alpha,
            seed=args.seed, design=args.design, band=args.band,
            n_receivers=args.sim_receivers, progress=sys.stderr.isatty())
    table = plan.duration_table(args.effect, hours, alpha=args.alpha, power=args.power,
                                simulation=sim_table, **inputs)
    need = plan.duration_closed_form(args.effect, alpha=args.alpha, power=args.power,
                                     **inputs)
    print(need)
    show = table.copy()
    print(show.to_string(index=False, float_format=lambda x: f"{x:.3g}"))
    if args.csv:
        table.to_csv(args.csv, index=False)
        print(f"wrote {args.csv}")
    if args.plot:
        from pathlib import Path

        if Path(args.plot).suffix.lower() not in (".png", ".svg"):
            raise UsageError(f"--plot must end in .png or .svg, got {args.plot!r}")
        import matplotlib.pyplot as plt

        from spotkit.viz.plots import duration_tradeoff_plot

        ax = duration_tradeoff_plot(table)
        ax.figure.tight_layout()
        ax.figure.savefig(args.plot, dpi=150)
        plt.close(ax.figure)
        print(f"wrote {args.plot}")
    return EXIT_OK
