"""``spotkit plan duration`` on the command line: it says where its numbers come from, states
the design it assumed, prints one design effect (the one it applies) and refuses bad values."""
from __future__ import annotations

import math
import re

import pandas as pd
import pytest
from scipy import stats

from spotkit.cli import main

SMALL = ["--band", "20m", "--sim-receivers", "40", "--hours", "24,48"]


@pytest.mark.parametrize("design", ["simultaneous", "alternating", "receive", "before-after"])
def test_default_plan_says_pilot_first_and_states_its_design(design, capsys):
    argv = ["plan", "duration", "--effect", "1.0", "--design", design, *SMALL]
    if design == "before-after":
        argv[-1] = "96,192"
    assert main(argv) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].startswith("No pilot") and "will give a real answer" in lines[0]
    assert ("24-hour pilot" in lines[0]) == (design != "before-after")
    assert lines[1].startswith(f"design assumed: {design} - ")
    assert "vertical" in lines[2] and "dipole" in lines[2]  # the default set-up, named
    assert f"the {design} design" in "\n".join(lines)


def test_plan_without_design_says_it_assumes_alternating(capsys):
    assert main(["plan", "duration", "--effect", "2", "--sigma", "3", "--pairs-per-hour",
                 "10", "--hours", "6"]) == 0
    out = capsys.readouterr().out
    assert out.splitlines()[0].startswith("No pilot") and "24-hour pilot" in out
    assert "design assumed: alternating" in out and "the alternating design" in out


def _printed(out: str, name: str) -> float:
    return float(re.search(rf"{name} ([0-9.,]+)", out).group(1).replace(",", ""))


@pytest.mark.parametrize("source", ["closed form", "default pilot"])
def test_printed_design_effect_is_the_one_applied(source, capsys):
    # the answer prints "N pairs", "spread S dB", "design effect D" and "CI width W dB";
    # W must be 2 z sqrt(D S^2 / N): D is what the variance was multiplied by (before, the
    # pilot line said "design effect 0.56" and the answer "x1.00 for clustering")
    effect = "1" if source == "closed form" else "5"
    argv = ["plan", "duration", "--effect", effect, *SMALL]
    if source == "closed form":
        argv += ["--sigma", "3", "--pairs-per-hour", "10", "--icc", "0.05",
                 "--receivers", "30", "--censored", "0.3"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert out.count("design effect ") == 1  # "design effect D: ... is D times ..."
    answer = next(line for line in out.splitlines() if f"to detect {effect} dB" in line)
    d = _printed(answer, "design effect")
    n = float(re.search(r"\(([0-9,]+) pairs at", answer).group(1).replace(",", ""))
    s = _printed(answer, "spread")
    w = _printed(answer, "expected CI width")
    z = stats.norm.ppf(0.975)
    # printed to 2-3 significant figures: 2 % in the width
    assert w == pytest.approx(2 * z * math.sqrt(d * s ** 2 / n), rel=0.02)
    assert "times that of as many independent" in answer
    assert "x1.00 for clustering" not in out and "np.float64" not in out


@pytest.mark.slow
def test_default_plan_is_not_falsely_precise(tmp_path, capsys, demo_dir):
    # Reproduction: the README's command answered "0.1 h ... CI width 0.11 dB after 24 h"
    # while the demo's own three days (a vertical against a dipole, 250 receivers) give a
    # 10 m interval about 1.6-1.75 dB wide. The default pilot (also a vertical against a
    # dipole, but another invented station and population) must now predict a 72-hour
    # width of the same order: within a factor 1.5 of the demo's (the old answer was a
    # factor 15 too narrow).
    from spotkit.compare.estimate import compare_antennas
    from spotkit.io.ingest import load_spots

    csv = tmp_path / "t.csv"
    assert main(["plan", "duration", "--effect", "1.0", "--band", "10m", "--design",
                 "simultaneous", "--hours", "24,72", "--csv", str(csv)]) == 0
    out = capsys.readouterr().out
    predicted = pd.read_csv(csv).set_index("hours").loc[72.0, "ci_width_db"]
    spots = load_spots(demo_dir / "simultaneous.csv.gz")
    res = compare_antennas(spots, "simultaneous", "Q1ABC", "Q1ABD", by="band", n_boot=200)
    g = res.groups.set_index("band")
    demo = g.loc["10m", "ci_high_db"] - g.loc["10m", "ci_low_db"]
    assert demo / 1.5 <= predicted <= 1.5 * demo, (predicted, demo)
    assert "0.1 h" not in out


@pytest.mark.parametrize("extra", [
    ["--hours", ","], ["--hours", ""], ["--hours", "6,nan"], ["--hours", "-1"],
    ["--hours", "inf"], ["--hours", "0"], ["--hours", "x"],
    ["--effect", "0"], ["--effect", "nan"], ["--alpha", "1.5"], ["--power", "0"],
    ["--runs", "1"], ["--boot", "0"], ["--sim-receivers", "0"],
    ["--sigma", "3"], ["--pairs-per-hour", "10"],
    ["--sigma", "3", "--pairs-per-hour", "10", "--design", "before-after"],
    ["--sigma", "3", "--pairs-per-hour", "-1"], ["--sigma", "nan", "--pairs-per-hour", "10"],
    ["--sigma", "3", "--pairs-per-hour", "inf"],
    ["--sigma", "3", "--pairs-per-hour", "10", "--icc", "1", "--receivers", "5"],
    ["--sigma", "3", "--pairs-per-hour", "10", "--icc", "0.1", "--receivers", "0"],
    ["--sigma", "3", "--pairs-per-hour", "10", "--icc", "0.1"],
    ["--sigma", "3", "--pairs-per-hour", "10", "--censored", "1"],
    ["--icc", "0.1"], ["--censored", "0.2"],
    ["--pilot", "pilot.parquet"], ["--plot", "out.pdf"], ["--band", "11m"],
    ["--design", "side-by-side"],
])
def test_bad_values_are_usage_errors(extra, capsys):
    argv = ["plan", "duration", "--effect", "1", "--sim-receivers", "20", "--band", "20m",
            "--hours", "24"]
    assert main(argv + extra) == 2
    err = capsys.readouterr().err
    assert err.strip()


def test_before_after_plan_from_a_pilot_file(tmp_path, capsys):
    from spotkit.io.store import write_spots
    from spotkit.plan.duration import DEFAULT_PILOT
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots("before-after", days=4, seed=2, bands=("20m",), n_receivers=40,
                         **DEFAULT_PILOT)
    path = write_spots(sim.spots, tmp_path / "pilot.parquet")
    assert main(["plan", "duration", "--effect", "6", "--design", "before-after", "--pilot",
                 str(path), "--a", sim.a, "--change-at", str(sim.change_at), "--band", "20m",
                 "--hours", "48,96,192"]) == 0
    out = capsys.readouterr().out
    assert not out.startswith("No pilot") and "design assumed: before-after" in out
    assert "2 days before and 2 after" in out and "scaled from the pilot" in out
    answer = next(line for line in out.splitlines() if "to detect 6 dB" in line)
    hours = float(answer.split(" h ")[0])
    assert hours % 48 == 0 and hours >= 96  # whole days, two or more on each side
    # 48 h is one day per period: no interval, and the table says so with NaN
    assert "NaN" in out and "at least two whole days on each side" in out


@pytest.mark.parametrize("extra", [["--days", "nan"], ["--days", "inf"], ["--days", "0"],
                                   ["--bands", ","], ["--block-slots", "3"]])
def test_bad_schedule_values_are_usage_errors(extra, tmp_path, capsys):
    # --days nan / inf used to end in a bare ValueError / OverflowError (exit 1)
    argv = ["plan", "schedule", "--start", "2026-12-01T00:00Z", "-o", str(tmp_path / "s.csv")]
    assert main(argv + extra) == 2
    assert "spotkit" in capsys.readouterr().err


@pytest.mark.parametrize("power", ["nan", "inf", "36"])
def test_audit_refuses_powers_no_report_can_carry(power, tmp_path, capsys):
    # reports carry powers from the customary ladder (0-60 dBm ending in 0, 3 or 7; common
    # practice); any other value silently matched nothing (nan, inf: "same power" note;
    # 36: every slot "power matches neither")
    from spotkit.io.store import write_spots
    from spotkit.plan.schedule import make_schedule, write_schedule
    from spotkit.sim.simulate import simulate_spots

    s = make_schedule("2026-03-02", 0.125, ["20m"], seed=1)
    sched = write_schedule(s, tmp_path / "s.csv")
    sim = simulate_spots("alternating", days=0.125, bands=("20m",), n_receivers=15,
                         schedule=s, power_a_dbm=37, power_b_dbm=30, seed=1)
    spots = write_spots(sim.spots, tmp_path / "spots.parquet")
    argv = ["plan", "audit", str(spots), "--schedule", str(sched), "--call", sim.a]
    assert main(argv + ["--power-a", "37", "--power-b", "30"]) == 0
    capsys.readouterr()
    assert main(argv + ["--power-a", power, "--power-b", "30"]) == 2
    err = capsys.readouterr().err
    # nan and inf are refused as the option is read (not a finite number), 36 by the ladder
    assert ("argument --power-a: must be a finite number" if power in ("nan", "inf")
            else "not a reportable power") in err, err


def test_simulate_runs_the_default_set_up(tmp_path, capsys):
    csv = tmp_path / "t.csv"
    assert main(["plan", "duration", "--effect", "3", "--design", "simultaneous", "--band",
                 "20m", "--sim-receivers", "20", "--hours", "6", "--simulate", "--runs", "2",
                 "--boot", "20", "--csv", str(csv)]) == 0
    t = pd.read_csv(csv)
    assert t["ci_width_sim_db"].iloc[0] > 0 and t["pairs_sim"].iloc[0] > 0
    # a vertical against a dipole has no single difference to detect: no simulated power
    assert t["power_sim"].isna().all()
