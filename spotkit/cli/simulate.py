"""``spotkit simulate`` and ``spotkit demo``: spot reports with a known answer.

``simulate`` writes invented spot reports of an A/B experiment (and the true difference
beside them) through :mod:`spotkit.sim`; ``demo`` runs the whole job on the bundled demo
scenario through :func:`spotkit.demo.run_demo`.
"""
from __future__ import annotations

from spotkit.cli._common import (
    DESIGNS,
    EXIT_OK,
    add_progress_option,
    finite_float,
    int_at_least,
    positive_float,
    progress,
)
from spotkit.errors import UsageError


def add_simulate(sub) -> None:
    p = sub.add_parser(
        "simulate", help="simulate spot reports with a known antenna difference",
        description="Simulate the spot reports of an A/B antenna experiment with invented "
        "Q-prefix stations, write them as CSV and the true B-minus-A difference as JSON "
        "beside it (OUT.truth.json), and print the matching compare command.")
    p.add_argument("--design", default="simultaneous", choices=DESIGNS)
    p.add_argument("--days", type=positive_float, default=3.0, help="length of the run (default 3)")
    p.add_argument("--seed", type=int_at_least(0), default=0, help="random seed (default 0)")
    p.add_argument("-o", "--output", required=True, metavar="OUT.csv",
                   help="spot CSV to write (.csv or .csv.gz)")
    p.add_argument("--receivers", type=int_at_least(1), default=300,
                   help="far receivers (default 300)")
    p.add_argument("--transmitters", type=int_at_least(1), default=200,
                   help="far transmitters, receive design (default 200)")
    p.add_argument("--bands", default="20m,10m", help="comma-separated (default 20m,10m)")
    p.add_argument("--power-a", type=finite_float, default=37.0, help="A's power, dBm (default 37)")
    p.add_argument("--power-b", type=finite_float, default=37.0, help="B's power, dBm (default 37)")
    p.add_argument("--antenna-a", choices=["isotropic", "vertical", "dipole"],
                   help="A's antenna (default vertical; isotropic with --difference-db)")
    p.add_argument("--antenna-b", default="dipole", choices=["isotropic", "vertical", "dipole"],
                   help="B's antenna (default dipole at 10 m; ignored with --difference-db)")
    p.add_argument("--difference-db", metavar="DB|BAND=DB,...",
                   help="make B exactly A plus this many dB (A isotropic unless --antenna-a "
                   "is given), e.g. 1.5 or 10m=1.5,20m=0")
    p.add_argument("--threshold", type=finite_float, help="every receiver's decode threshold, dB "
                   "(default: -28 for most, some -30)")
    p.add_argument("--tx-fraction", type=finite_float, help="fraction of slots on the air")
    g = p.add_argument_group(
        "decoder and station regimes", "all off by default (hard threshold on the whole-dB "
        "report, normal fading, one B-A per path from the antenna patterns)")
    g.add_argument("--detection-width", type=finite_float, default=0.0, metavar="DB",
                   help="soft detection curve: a report exists with probability "
                   "Phi((snr - threshold) / DB); 0 = hard threshold (default 0)")
    g.add_argument("--threshold-on", default="rounded", choices=["rounded", "raw"],
                   help="decide on the whole-dB report or on the raw SNR before rounding "
                   "(default rounded)")
    g.add_argument("--fading-df", type=positive_float, metavar="DF",
                   help="heavy-tailed fast fading: Student t with DF (> 2) degrees of "
                   "freedom, same SD (default: normal)")
    g.add_argument("--threshold-spread", type=finite_float, default=0.0, metavar="DB",
                   help="SD of a normal offset added to each far receiver's threshold "
                   "(default 0)")
    g.add_argument("--difference-spread", type=finite_float, default=0.0, metavar="DB",
                   help="SD of a random B-A offset per far station, part of the truth "
                   "(default 0)")
    p.add_argument("--home", default="JN58td", metavar="LOCATOR", help="home locator")
    p.add_argument("--start", default="2026-03-02", help="first day (UTC)")
    p.add_argument("--schedule", default="even-odd",
                   help="alternating design: even-odd, odd-even, every-N or a CSV file")
    p.add_argument("--change-at", help="before-after design: time of the change (UTC)")
    p.add_argument("--layout", default="comma",
                   choices=["comma", "semicolon", "tab", "space", "canonical"],
                   help="CSV layout (default comma)")
    p.add_argument("--duplicates", type=finite_float, default=0.0,
                   help="fraction of reports uploaded twice")
    p.add_argument("--corrupt", type=int_at_least(0), default=0, help="number of corrupted rows")
    add_progress_option(p)
    p.set_defaults(func=cmd_simulate)


def cmd_simulate(args) -> int:
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
    propagation = None
    if args.fading_df is not None:
        from spotkit.sim.simulate import Propagation

        propagation = Propagation(fast_fading_df=args.fading_df)
    sim = simulate_spots(
        args.design, days=args.days, seed=args.seed, start=args.start,
        bands=bands, n_receivers=args.receivers, n_transmitters=args.transmitters,
        home_locator=args.home, antenna_a=antenna_a, antenna_b=args.antenna_b,
        difference_db=diff, power_a_dbm=args.power_a, power_b_dbm=args.power_b,
        tx_fraction=args.tx_fraction, threshold_db=args.threshold, schedule=args.schedule,
        change_at=args.change_at, propagation=propagation,
        detection_width_db=args.detection_width, threshold_on=args.threshold_on,
        threshold_sd_db=args.threshold_spread, difference_sd_db=args.difference_spread,
        progress=progress(args))
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
    return EXIT_OK


def add_demo(sub) -> None:
    p = sub.add_parser(
        "demo", help="run the whole job on the bundled demo data",
        description="Read the bundled demo scenario (an invented station, Q1ABC, testing a "
        "vertical against a dipole on 20 m and 10 m), compare the antennas, check the answer "
        "against the scenario's known truth, and write the report, maps and tables.")
    p.add_argument("-o", "--output", default="out", metavar="DIR",
                   help="folder for the results (default out/)")
    p.add_argument("--data", metavar="DIR", help="demo data folder (default: the bundled "
                   "demo_data/)")
    p.add_argument("--boot", type=int_at_least(2), default=1000,
                   help="bootstrap resamples (default 1000)")
    add_progress_option(p)
    p.set_defaults(func=cmd_demo)


def cmd_demo(args) -> int:
    from spotkit.demo import run_demo

    run_demo(args.output, data_dir=args.data, n_boot=args.boot,
             progress=progress(args), echo=print)
    return EXIT_OK
