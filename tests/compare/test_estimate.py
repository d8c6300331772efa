"""Tests of spotkit.compare.estimate: recovery of a known B-minus-A, coverage, contract, CLI.

The estimator (censored-normal MLE, Tobin 1958) has no trusted published number, so it is
checked by simulation: the project's simulator (:mod:`spotkit.sim.simulate`) and an
independent held-out generator (``tests/heldout.py``) with known truth.
"""
from __future__ import annotations

import json

import heldout
import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.cli import main
from spotkit.compare.estimate import RESULT_COLUMNS, compare_antennas, estimate_groups
from spotkit.compare.grouping import merge_summaries, summarise_pairs
from spotkit.compare.pairing import pair_spots
from spotkit.errors import InputError, NoPairsError
from spotkit.sim.simulate import simulate_spots

EDGES = (0.0, 3000.0, 6000.0, 20000.0)
CELL_TRUTH = {"20m": (0.5, 1.5, -1.0), "10m": (-0.5, 1.0, 2.0)}  # invented, dB


def _cells(sim, result):
    truth = sim.truth.cells(distance_edges=EDGES)
    return result.groups.merge(truth, on=[C.BAND, C.DISTANCE_MIN, C.DISTANCE_MAX],
                               suffixes=("", "_true"))


# --- recovery by simulation ---------------------------------------------------------------
@pytest.mark.slow
@pytest.mark.parametrize("design, kw", [
    ("simultaneous", {"power_b_dbm": 30.0}),   # A at 5 W, B at 1 W
    ("alternating", {}),
    ("receive", {}),
    ("receive", {"threshold_db": -18.0}),      # many reports near threshold
    ("simultaneous", {"power_b_dbm": 30.0, "threshold_db": -18.0}),  # both at once
])
def test_recovers_known_difference_per_cell(design, kw):
    sim = simulate_spots(design, days=2, seed=5, difference_db=CELL_TRUTH,
                         difference_edges=EDGES, **kw)
    res = compare_antennas(sim.spots, **sim.compare_kwargs(), by="band,distance",
                           distance_edges=EDGES, n_boot=100)
    g = _cells(sim, res)
    big = g[g[C.PAIRS] >= 2000]
    assert len(big) >= 3
    # tolerance 0.3 dB in cells with thousands of pairs (the target)
    np.testing.assert_allclose(big[C.B_MINUS_A], big["b_minus_a_db_true"], atol=0.3)
    # the same pairs as the simulator's, less those set aside (receive: slots where the
    # other receiver reported nothing count as off the air; alternating: pairs without
    # reports in the slots around them)
    assert (g[C.PAIRS] <= 1.01 * g["pairs_true"]).all()
    assert (g[C.PAIRS] >= (0.7 if design == "alternating" else 0.95) * g["pairs_true"]).all()


@pytest.mark.slow
def test_alternating_with_unequal_powers():
    """A 5 W, B 1 W, alternating slots: pairs where the path closed (or the receiver
    stopped) between the A and the B slot are one-sided for a reason that is not the
    antenna, and their bounds depend on each antenna's power. The missed-report mixture
    absorbs them; without it the fit was off by 0.20 dB in the 10 m short cell (the plain
    difference-Tobit, both-heard pairs counted once, by 0.37 dB)."""
    sim = simulate_spots("alternating", days=2, seed=7, difference_db=CELL_TRUTH,
                         difference_edges=EDGES, power_b_dbm=30.0)
    kw = dict(by="band,distance", distance_edges=EDGES, n_boot=50)
    res = compare_antennas(sim.spots, **sim.compare_kwargs(), **kw)
    big = _cells(sim, res).query(f"{C.PAIRS} >= 2000")
    assert len(big) >= 3
    # the target: 0.3 dB in cells with thousands of pairs (measured: 0.02 dB)
    np.testing.assert_allclose(big[C.B_MINUS_A], big["b_minus_a_db_true"], atol=0.3)
    # the earlier model (lowest-report thresholds, points) without the mixture; the new
    # default needs the mixture less (measured without it: within 0.04 dB)
    plain = compare_antennas(sim.spots, **sim.compare_kwargs(), missed_reports="none",
                             model="tobit", **kw)
    old = _cells(sim, plain).query(f"{C.PAIRS} >= 2000")
    err_new = (big[C.B_MINUS_A] - big["b_minus_a_db_true"]).abs()
    err_old = (old[C.B_MINUS_A] - old["b_minus_a_db_true"]).abs()
    assert err_old.max() > 0.15 and err_new.max() < 0.5 * err_old.max()


def _coverage_of_200_runs(design, **kw):
    """Share of 200 small experiments (disjoint receiver sets of one simulated day on
    20 m, true difference 1.0 dB) whose 95 % CI covers the truth."""
    sim = simulate_spots(design, days=1, seed=11, bands=("20m",), n_receivers=3000,
                         difference_db=1.0, **kw)
    p = pair_spots(sim.spots, **sim.compare_kwargs())
    rx = np.sort(p[C.CLUSTER].astype(str).unique())
    run_of = dict(zip(rx, np.random.default_rng(0).permutation(rx.size) % 200, strict=True))
    counts = summarise_pairs(p, ())
    counts.insert(0, "run", counts[C.CLUSTER].map(run_of))
    res = estimate_groups(counts, n_boot=200, seed=1, min_pairs=10)
    assert len(res) == 200 and res[C.CI_LOW].notna().all()
    return ((res[C.CI_LOW] <= 1.0) & (res[C.CI_HIGH] >= 1.0)).mean()


@pytest.mark.slow
def test_alternating_unequal_powers_interval_coverage():
    """200 independent small alternating experiments at unequal powers (disjoint receiver
    sets of one simulation, about 15 receivers and 1,200 pairs each): the 95 % CI covers
    the truth in about 95 % of them. Measured 0.92 (the plain difference-Tobit: 0.865);
    the intervals are about 6 % narrower than the spread of the estimates (binomial SD
    1.5 %: accept 0.88-0.99)."""
    covered = _coverage_of_200_runs("alternating", power_b_dbm=30.0)
    assert 0.88 <= covered <= 0.99


def _plain_difference_tobit(counts, keys):
    """The difference-Tobit with both-heard pairs counted once, per group (for comparison)."""
    from spotkit import stats
    code = {"both": 0, "only_a": 1, "only_b": -1}
    rows = []
    c = counts[counts[C.KIND].astype(str).isin(code)]
    for key, g in c.groupby(keys, observed=True):
        agg = g.groupby([C.KIND, C.VALUE], observed=True)[C.COUNT].sum().reset_index()
        fit = stats.censored_normal_mle(agg[C.VALUE], agg[C.KIND].astype(str).map(code),
                                        agg[C.COUNT])
        rows.append(dict(zip(keys, key, strict=True), plain=fit.mu))
    return pd.DataFrame(rows)


@pytest.mark.slow
def test_paired_likelihood_needs_no_threshold_correction():
    """Held-out data, A 7 dB louder, skewed level distribution (many pairs near threshold):
    the difference-Tobit that counts a both-heard pair once is off by 0.1-0.2 dB in every
    cell; the composite likelihood (both-heard pairs in both conditional likelihoods) by
    at most 0.06 dB (measured 0.003-0.054), and the first-order threshold correction made
    for the old fit now over-corrects."""
    spots, truth = heldout.generate(n_far=800, n_slots=500, seed=2)
    keys = [C.BAND, C.DISTANCE_MIN, C.DISTANCE_MAX]
    err = {}
    for corr in ("none", "edge"):
        res = compare_antennas(spots, "simultaneous", heldout.CALL_A, heldout.CALL_B,
                               by="band,distance", distance_edges=heldout.DISTANCE_EDGES,
                               n_boot=20, threshold_correction=corr)
        g = res.groups.merge(truth, on=keys, suffixes=("", "_true"))
        err[corr] = (g[C.B_MINUS_A] - g["b_minus_a_db_true"]).abs()
        if corr == "none":
            g = g.merge(_plain_difference_tobit(res.counts, keys), on=keys)
            err["plain"] = (g["plain"] - g["b_minus_a_db_true"]).abs()
    assert len(err["none"]) == 6
    assert err["plain"].min() > 0.08            # the old estimator: biased in every cell
    assert err["none"].max() < 0.08             # tolerance 0.08 dB
    assert err["edge"].mean() > err["none"].mean()


@pytest.mark.slow
def test_before_after_is_weaker_and_says_so():
    sim = simulate_spots("before-after", days=2, seed=5, difference_db=1.5)
    res = compare_antennas(sim.spots, **sim.compare_kwargs(), n_boot=200)
    # weaker design: 0.5 dB tolerance on the overall difference (simulated truth 1.5 dB)
    assert res.overall[C.B_MINUS_A] == pytest.approx(1.5, abs=0.5)
    method = res.overall[C.METHOD]
    assert "weaker" in method and "upper bound where it was on the air but not heard" \
        in method
    assert "weaker" in res.verdicts()[0]
    # the censored observations are in the compressed table as bounds
    kinds = set(res.counts[C.KIND].astype(str))
    assert set(C.PERIOD_KINDS + C.PERIOD_BOUND_KINDS) <= kinds
    # one day per period: the day-to-day change cannot be measured - no interval, said so
    assert np.isnan(res.overall[C.CI_LOW]) and np.isnan(res.overall[C.P_VALUE])
    assert res.overall[C.NOTE].startswith("one day per period")
    assert "without an interval (one day per period: the interval would leave out " \
        "day-to-day propagation changes" in res.verdicts()[0]


BA_TRUTH = {"20m": (0.5, 1.5, -1.0), "10m": (-0.5, 1.0, 2.0)}  # invented, dB


@pytest.mark.slow
def test_before_after_recovers_band_and_cells_with_four_days_per_period():
    """Before/after with censoring modelled: four days per period, invented truth per band
    x distance cell. With seed 5 the cells with 10,000 or more heard reports land within
    the issue's 0.3 dB (measured 0.08-0.19 dB; with the earlier heard-only estimator up to
    0.35 dB). This is one seed, not a guarantee: over seeds 100-114 the 10 m cell beyond
    6,000 km (truth 2.0 dB, about 16,000 reports) was off by +0.28 dB on average and by up
    to 1.3 dB, and its interval covered the truth in 13 of 15 runs (all cells with 2,000 or
    more reports: 96 % of 71)."""
    sim = simulate_spots("before-after", days=8, seed=5, difference_db=BA_TRUTH,
                         difference_edges=EDGES)
    res = compare_antennas(sim.spots, **sim.compare_kwargs(), by="band,distance",
                           distance_edges=EDGES, n_boot=50)
    big = _cells(sim, res).query(f"{C.PAIRS} >= 10000")
    assert len(big) >= 3
    np.testing.assert_allclose(big[C.B_MINUS_A], big["b_minus_a_db_true"], atol=0.3)


@pytest.mark.slow
def test_before_after_interval_covers_the_band_truth_with_four_days_per_period():
    """Four days per period, one true difference per band (invented): the two-way interval
    (receivers x days within each period) covers the truth in at least 6 of 8 band x seed
    cases here (measured: 8 of 8). Measured over seeds 100-139 (200 resamples): 96 % of
    80 (10 m 92.5 %, 20 m 100 %); the receivers-only interval it replaces covered 75 % of
    40 (seeds 100-119), about half as wide. Seed 7 is also a recovery check: both bands within the
    issue's 0.3 dB (measured 0.05-0.23 dB over three seeds)."""
    truth = {"20m": 0.5, "10m": 2.0}
    covered = []
    for seed in (7, 1, 2, 3):
        sim = simulate_spots("before-after", days=8, seed=seed, difference_db=truth)
        res = compare_antennas(sim.spots, **sim.compare_kwargs(), by="band", n_boot=100,
                               seed=seed)
        g = res.groups
        want = g[C.BAND].astype(str).map(truth)
        if seed == 7:
            np.testing.assert_allclose(g[C.B_MINUS_A], want, atol=0.3)
        assert g[C.NOTE].str.startswith("4 days before and 4 after").all()
        covered += list((g[C.CI_LOW] <= want) & (want <= g[C.CI_HIGH]))
    assert len(covered) == 8 and sum(covered) >= 6


@pytest.mark.slow
@pytest.mark.xfail(strict=True, reason="known limitation: before/after with one day per "
                   "period - propagation (openness, daily conditions) changes between the "
                   "periods and the control stations' paths do not follow the target's; "
                   "off by about 1 dB on 10 m in this simulation although censoring is "
                   "modelled (the result now has no interval and says why)")
def test_before_after_one_day_per_period_by_band():
    truth = {"20m": 0.5, "10m": 2.0}
    sim = simulate_spots("before-after", days=2, seed=5, difference_db=truth)
    res = compare_antennas(sim.spots, **sim.compare_kwargs(), by="band", n_boot=50)
    g = res.groups
    assert (g[C.PAIRS] >= 5000).all()
    np.testing.assert_allclose(g[C.B_MINUS_A], g[C.BAND].astype(str).map(truth), atol=0.3)


@pytest.mark.slow
def test_interval_coverage_over_repeated_runs():
    """200 independent small experiments (disjoint receiver sets of one simulation, about 9
    receivers and 600 pairs each): the 95 % CI should cover the truth in about 95 % of them
    (binomial SD 1.5 %: accept 0.90-0.99)."""
    covered = _coverage_of_200_runs("simultaneous")
    assert 0.90 <= covered <= 0.99


# --- held-out generator and the reason for the censored estimator -----------------------
@pytest.mark.slow
@pytest.mark.parametrize("design, seed, n_cells", [("simultaneous", 2, 6), ("receive", 3, 4)])
def test_heldout_generator_every_cell_within_035_db(design, seed, n_cells):
    spots, truth = heldout.generate(n_far=800, n_slots=500, seed=seed, design=design)
    res = compare_antennas(spots, design, heldout.CALL_A, heldout.CALL_B,
                           by="band,distance", distance_edges=heldout.DISTANCE_EDGES,
                           n_boot=50)
    g = res.groups.merge(truth, on=[C.BAND, C.DISTANCE_MIN, C.DISTANCE_MAX],
                         suffixes=("", "_true"))
    big = g[g[C.PAIRS] >= 5000]
    assert len(big) == n_cells and len(g) == len(truth) == 6
    # the held-out target: +-0.35 dB in every cell with 5,000 or more pairs
    np.testing.assert_allclose(big[C.B_MINUS_A], big["b_minus_a_db_true"], atol=0.35)


def test_both_heard_only_is_biased_near_threshold_censored_much_less():
    """A 7 dB louder than B, many pairs near threshold (held-out generator): the pairs
    where B fell below threshold drop out of the both-heard set, so its mean is biased
    upwards; the censored MLE uses them as bounds and is much less biased (not unbiased:
    its residual bias under a skewed level distribution is the known error stated in
    spotkit.compare.estimate)."""
    truth = heldout.default_truth(("20m",)).assign(**{C.B_MINUS_A: -1.0})
    spots, _ = heldout.generate(n_far=300, n_slots=200, bands=("20m",), truth=truth,
                                p_open=0.6, seed=4)
    res = compare_antennas(spots, "simultaneous", heldout.CALL_A, heldout.CALL_B,
                           n_boot=50)
    o = res.overall
    assert o[C.ONLY_A] > 0.3 * o[C.PAIRS]  # heavy censoring
    both_err = o[C.BOTH_HEARD] - (-1.0)
    tobit_err = o[C.B_MINUS_A] - (-1.0)
    assert both_err > 0.2                    # both-heard-only: biased by more than 0.2 dB
    assert abs(tobit_err) < 0.2              # censored MLE: within 0.2 dB
    assert abs(tobit_err) < 0.7 * both_err   # and clearly less biased
    # not stuck on whole / half dB although every report is whole dB
    assert abs(o[C.B_MINUS_A] * 2 - round(o[C.B_MINUS_A] * 2)) > 1e-3


# --- contract -------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def small_sim():
    return simulate_spots("simultaneous", days=0.5, seed=2, bands=("20m", "10m"),
                          n_receivers=120, difference_db={"20m": 1.0, "10m": 0.0})


@pytest.fixture(scope="module")
def small_result(small_sim):
    return compare_antennas(small_sim.spots, **small_sim.compare_kwargs(),
                            by="band,distance", n_boot=100, min_pairs=200)


def test_json_contract(small_result, tmp_path):
    doc = json.loads(small_result.to_json(tmp_path / "r.json"))
    assert json.loads((tmp_path / "r.json").read_text()) == doc
    need = {"b_minus_a_db", "ci_low_db", "ci_high_db", "pairs", "only_a", "only_b",
            "p_value", "method", "both_heard_b_minus_a_db", "hodges_lehmann_db",
            "p_wilcoxon", "p_sign", "p_mcnemar", "p_adjusted"}
    assert need <= set(doc["overall"])
    assert doc["groups"] and all(need | {"band", "distance_min_km", "distance_max_km"}
                                 <= set(g) for g in doc["groups"])
    assert {g["band"] for g in doc["groups"]} == {"20m", "10m"}
    assert len(doc["verdicts"]) == 1 + len(doc["groups"])


def test_groups_table_verdicts_and_too_few(small_result):
    g = small_result.groups
    assert list(g.columns[:4]) == [C.BAND, C.DISTANCE_MIN, C.DISTANCE_MAX, C.B_MINUS_A]
    assert set(RESULT_COLUMNS) <= set(g.columns)
    few = g[g[C.PAIRS] < 200]
    assert few[C.B_MINUS_A].isna().all()
    assert few[C.NOTE].str.contains("too few pairs").all()
    text = str(small_result)
    assert "too few pairs" in text and "B-A dB" in text
    v = small_result.verdicts()
    assert all(isinstance(s, str) and s for s in v)
    for s, (_, row) in zip(v[1:], g.iterrows(), strict=True):
        if pd.isna(row[C.B_MINUS_A]):
            assert "too few pairs" in s
        elif row[C.CI_LOW] <= 0 <= row[C.CI_HIGH]:
            assert s.startswith("no difference shown")
        else:
            assert " dB better than " in s and f"{int(row[C.PAIRS]):,} pairs" in s
    frame = small_result.to_frame()
    assert frame[C.GROUP].iloc[0] == "overall" and len(frame) == len(g) + 1
    # BH-adjusted p-values are never below the raw ones
    ok = g[C.P_VALUE].notna()
    assert (g.loc[ok, C.P_ADJUSTED] >= g.loc[ok, C.P_VALUE] - 1e-12).all()


def test_verdict_wording():
    from spotkit.compare.estimate import verdict
    row = {C.BAND: "10m", C.DISTANCE_MIN: 3000.0, C.DISTANCE_MAX: 20000.0,
           C.B_MINUS_A: 1.8, C.CI_LOW: 1.2, C.CI_HIGH: 2.4, C.PAIRS: 5412, C.NOTE: ""}
    assert verdict(row) == ("B is 1.8 dB better than A on 10 m, beyond 3,000 km "
                            "(95 % CI 1.2 to 2.4 dB, 5,412 pairs)")
    row.update({C.B_MINUS_A: 0.2, C.CI_LOW: -0.3})
    assert verdict(row).startswith("no difference shown on 10 m")


def test_merged_partial_summaries_give_the_same_estimates(small_sim):
    p = pair_spots(small_sim.spots, **small_sim.compare_kwargs())
    whole = summarise_pairs(p, "band")
    parts = [summarise_pairs(p.iloc[i::3], "band") for i in range(3)]
    merged = merge_summaries(parts)
    cl = sorted(p[C.CLUSTER].astype(str).unique())
    a = estimate_groups(whole, n_boot=50, seed=3, clusters=cl)
    b = estimate_groups(merged, n_boot=50, seed=3, clusters=cl)
    pd.testing.assert_frame_equal(a, b, check_dtype=False)


def test_bad_input_messages(small_sim):
    with pytest.raises(InputError, match="not a transmitter call.*Q1ABC"):
        compare_antennas(small_sim.spots, "simultaneous", "Q1NOPE", "Q1ABD")
    with pytest.raises(ValueError, match="valid: band, distance"):
        compare_antennas(small_sim.spots, "simultaneous", "Q1ABC", "Q1ABD", by="colour")
    with pytest.raises(NoPairsError):
        compare_antennas(small_sim.spots.iloc[:0], "simultaneous", "Q1ABC", "Q1ABD")


# --- command line ---------------------------------------------------------------------------
def test_cli_end_to_end(small_sim, tmp_path, capsys):
    path = tmp_path / "spots.parquet"
    small_sim.spots.to_parquet(path)
    out_json, out_csv = tmp_path / "r.json", tmp_path / "r.csv"
    code = main(["compare", str(path), "--design", "simultaneous", "--a", "Q1ABC", "--b",
                 "Q1ABD", "--by", "band,bearing", "--bearing-width", "90", "--boot", "50",
                 "--json", str(out_json), "--csv", str(out_csv)])
    assert code == 0
    doc = json.loads(out_json.read_text())
    assert doc["by"] == ["band", "bearing"]
    assert all("bearing_min_deg" in g for g in doc["groups"])
    assert pd.read_csv(out_csv)[C.GROUP].iloc[0] == "overall"
    assert "B-A dB" in capsys.readouterr().out


@pytest.mark.slow
def test_cli_before_after_day_hours(tmp_path, capsys):
    # one UTC day per period: no interval; with 12-hour blocks as "days" the two-way
    # bootstrap has two blocks per period and gives one (the option reaches the estimator)
    sim = simulate_spots("before-after", days=2, seed=5, difference_db=1.5,
                         bands=("20m",), n_receivers=150)
    path = tmp_path / "spots.parquet"
    sim.spots.to_parquet(path)
    kw = sim.compare_kwargs()
    low = {}
    for hours in ("24", "12"):
        out = tmp_path / f"r{hours}.json"
        code = main(["compare", str(path), "--design", "before-after", "--a", kw["a"],
                     "--change-at", str(kw["change_at"]), "--boot", "50",
                     "--day-hours", hours, "--json", str(out)])
        assert code == 0
        low[hours] = json.loads(out.read_text())["overall"]["ci_low_db"]
    capsys.readouterr()
    assert low["24"] is None and isinstance(low["12"], float)


def test_cli_bad_call_and_bad_option(small_sim, tmp_path, capsys):
    path = tmp_path / "spots.parquet"
    small_sim.spots.to_parquet(path)
    code = main(["compare", str(path), "--design", "simultaneous", "--a", "Q1ZZZ", "--b",
                 "Q1ABD"])
    assert code == 1
    err = capsys.readouterr().err
    assert "Q1ZZZ" in err and "Q1ABC" in err
    assert main(["compare", str(path), "--design", "simultaneous", "--a", "Q1ABC", "--b",
                 "Q1ABD", "--by", "colour"]) == 2


def test_cli_alternating_reads_a_planned_schedule(tmp_path, capsys):
    """The schedule CSV written by spotkit.plan (start, end, band, antenna) is read back."""
    from spotkit.plan.schedule import make_schedule
    sched = make_schedule("2026-03-02", 1, ["20m"], seed=1)
    sched_csv = tmp_path / "schedule.csv"
    sched.to_csv(sched_csv, index=False)
    sim = simulate_spots("alternating", days=1, seed=4, bands=("20m",), n_receivers=150,
                         schedule=sched, difference_db=2.0, start="2026-03-02")
    path = tmp_path / "alt.parquet"
    sim.spots.to_parquet(path)
    out = tmp_path / "alt.json"
    assert main(["compare", str(path), "--design", "alternating", "--a", sim.a,
                 "--schedule", str(sched_csv), "--boot", "50", "--json", str(out)]) == 0
    doc = json.loads(out.read_text())
    # invented truth 2.0 dB; 0.5 dB tolerance for this small run (its CI is about +-0.3 dB)
    assert doc["overall"]["b_minus_a_db"] == pytest.approx(2.0, abs=0.5)
    assert doc["overall"]["pairs"] > 500


def test_by_receiver_for_maps(small_sim):
    res = compare_antennas(small_sim.spots, **small_sim.compare_kwargs(), by="receiver",
                           n_boot=30, min_pairs=20)
    g = res.groups
    assert {C.FAR_CALL, C.FAR_LOCATOR, C.FAR_LAT, C.FAR_LON} <= set(g.columns)
    est = g[g[C.B_MINUS_A].notna()]
    assert len(est) > 10 and (est[C.CLUSTERS] == 1).all()
    # one cluster per group: the interval comes from the pairs, and the note says so
    assert est[C.CI_LOW].notna().all()
    assert est[C.NOTE].str.contains("as if independent").all()


def test_estimate_groups_without_censoring_is_least_squares():
    """With no one-sided pairs the Tobit reduces to least squares (Tobin 1958): the mean
    and the ddof=0 SD of the differences (to 1e-9 dB); the paired tests match scipy."""
    from scipy import stats as sps
    rng = np.random.default_rng(7)
    d = np.round(rng.normal(0.8, 2.0, 400))
    cl = np.repeat([f"Q2R{i}" for i in range(20)], 20)
    counts = (pd.DataFrame({C.CLUSTER: cl, C.KIND: "both", C.VALUE: d})
              .groupby([C.CLUSTER, C.KIND, C.VALUE]).size().rename(C.COUNT).reset_index())
    r = estimate_groups(counts, n_boot=200, seed=1, model="tobit").iloc[0]
    assert r[C.B_MINUS_A] == pytest.approx(d.mean(), abs=1e-9)
    assert r[C.SIGMA] == pytest.approx(d.std(), abs=1e-9)
    assert r[C.SYSTEMATIC] == 0.0 and r[C.CI_STAT_LOW] == r[C.CI_LOW]
    # the detection model takes the whole-dB values as 1-dB intervals: its fit is scipy's
    # interval-censored fit (scipy.stats CensoredData, normal or the t the data chose),
    # to 1e-4 dB
    new = estimate_groups(counts, n_boot=200, seed=1).iloc[0]
    cd = sps.CensoredData(interval=np.c_[d - 0.5, d + 0.5])
    if np.isinf(new[C.TAIL_DF]):
        m, sd = sps.norm.fit(cd)
    else:  # the t's scale, reported as the SD of the fitted law
        nu = new[C.TAIL_DF]
        _df, m, sd = sps.t.fit(cd, fix_df=nu)
        sd *= np.sqrt(nu / (nu - 2))
    assert new[C.B_MINUS_A] == pytest.approx(m, abs=1e-4)
    assert new[C.SIGMA] == pytest.approx(sd, abs=1e-4)
    assert new[C.CI_LOW] == pytest.approx(new[C.CI_STAT_LOW] - new[C.SYSTEMATIC])
    assert new[C.CI_HIGH] == pytest.approx(new[C.CI_STAT_HIGH] + new[C.SYSTEMATIC])
    assert r[C.CORRECTION] == 0.0 and r[C.ONLY_A] == 0 and np.isnan(r[C.P_MCNEMAR])
    assert r[C.CI_LOW] < d.mean() < r[C.CI_HIGH]
    # the side tests take receivers as the units: oracle scipy.stats.wilcoxon and
    # scipy.stats.binomtest on the per-receiver medians (numpy.median), zeros dropped,
    # normal approximation with tie and continuity corrections (the medians tie),
    # tolerance 1e-9
    med = np.median(d.reshape(20, 20), axis=1)
    w = sps.wilcoxon(med, zero_method="wilcox", correction=True, method="approx")
    assert r[C.P_WILCOXON] == pytest.approx(w.pvalue, rel=1e-9)
    nz = med[med != 0]
    assert r[C.P_SIGN] == pytest.approx(
        sps.binomtest(int((nz > 0).sum()), nz.size).pvalue, rel=1e-9)


# --- before/after: days resampled with the receivers --------------------------------------
DAY = pd.Timedelta(days=1)
T0 = pd.Timestamp("2026-03-02T00:00Z")


def _ba_counts(offsets_before, offsets_after, n_rx=30, first_after=None):
    """Compressed before/after table without censoring: receiver r on day d reports
    ``rx_r + offset_d -+ 1`` dB (one report each), rx_r in {-1, 0, 1} dB."""
    rows = []
    days = [("before", o) for o in offsets_before] + [("after", o) for o in offsets_after]
    first_after = len(offsets_before) if first_after is None else first_after
    for i, (kind, off) in enumerate(days):
        day = T0 + (i if kind == "before" else first_after + i - len(offsets_before)) * DAY
        for r in range(n_rx):
            for e in (-1.0, 1.0):
                rows.append((day, f"Q{r}RX", kind, (r % 3 - 1) + off + e, 1))
    df = pd.DataFrame(rows, columns=[C.SLOT, C.CLUSTER, C.KIND, C.VALUE, C.COUNT])
    return (df.groupby([C.SLOT, C.CLUSTER, C.KIND, C.VALUE]).sum().reset_index())


def test_before_after_interval_carries_the_day_to_day_variance():
    """Receivers identical in both periods, days different: the receivers' part cancels in
    after minus before, and the replicates vary by the days alone. Their SD must be the
    usual standard error of a difference of two means, sqrt(s_b^2 / n_b + s_a^2 / n_a)
    (s^2 with ddof=1; any statistics textbook) - the n - 1 of n day draw is what makes it
    so with four days. Read back from the bootstrap p-value (p = 2 Phi(-|est| / se));
    4,000 resamples: Monte Carlo error about 1.1 %, tolerance 5 %."""
    from scipy import stats as st

    before = np.array([0.0, 0.8, -0.5, 0.3])
    after = np.array([1.0, 2.2, 0.4, 1.6])
    res = estimate_groups(_ba_counts(before, after), n_boot=4000, seed=2)
    row = res.iloc[0]
    assert row[C.B_MINUS_A] == pytest.approx(after.mean() - before.mean(), abs=1e-6)
    se = abs(row[C.B_MINUS_A]) / st.norm.isf(row[C.P_VALUE] / 2)
    want = np.sqrt(before.var(ddof=1) / 4 + after.var(ddof=1) / 4)
    assert se == pytest.approx(want, rel=0.05)
    assert row[C.CI_LOW] < after.mean() - before.mean() < row[C.CI_HIGH]
    assert row[C.NOTE].startswith("4 days before and 4 after, resampled with the receivers")
    assert "two-way bootstrap" in row[C.METHOD]


def test_before_after_one_day_per_period_gives_no_interval_and_says_so():
    res = estimate_groups(_ba_counts([0.0], [1.0]), n_boot=200, seed=2)
    row = res.iloc[0]
    assert row[C.B_MINUS_A] == pytest.approx(1.0, abs=1e-6)  # the estimate is kept
    assert np.isnan(row[C.CI_LOW]) and np.isnan(row[C.CI_HIGH]) and np.isnan(row[C.P_VALUE])
    assert row[C.NOTE].startswith("one day per period: the interval would leave out "
                                  "day-to-day propagation changes, which can be a dB or "
                                  "more on a band, so none is given - resampling the "
                                  "receivers alone would give")
    from spotkit.compare.estimate import verdict
    text = verdict(row, design="before-after")
    assert text.startswith("B minus A is +1.0 dB but without an interval (one day per "
                           "period: ")
    assert "weaker evidence" in text
    # three days before and one after: still no interval; a few hours on the last morning
    # (under a quarter of a busy day's reports) are no second day
    row = estimate_groups(_ba_counts([0.0, 0.5, 0.2], [1.0]), n_boot=50).iloc[0]
    assert np.isnan(row[C.CI_LOW]) and row[C.NOTE].startswith("3 days before and 1 after:")
    counts = _ba_counts([0.0, 0.5], [1.0, 1.2])
    last = counts[C.SLOT] == counts[C.SLOT].max()
    counts = counts[~last | (counts[C.CLUSTER].isin(["Q1RX", "Q2RX"]))]
    row = estimate_groups(counts, n_boot=50).iloc[0]
    assert np.isnan(row[C.CI_LOW]) and row[C.NOTE].startswith("2 days before and 1 after:")
    # a table without day blocks: no interval either
    row = estimate_groups(_ba_counts([0.0, 0.5], [1.0, 1.2]).drop(columns=C.SLOT),
                          n_boot=50).iloc[0]
    assert np.isnan(row[C.CI_LOW]) and row[C.NOTE].startswith("the table has no day blocks")


# --- the detection model: systematic part, columns, method line ---------------------------
def _soft_cell(seed=5, **kw):
    from detection_cells import cell_counts, make_cell

    from spotkit.compare.pairing import receiver_thresholds

    spots, pairs, _ = make_cell(np.random.default_rng(seed), n_pairs=3000, n_rx=30,
                                other_reports=150, **kw)
    thr = receiver_thresholds(spots)
    return cell_counts(pairs, thr), thr.attrs["detection"]


def test_systematic_part_widens_the_interval():
    # soft threshold (1 dB), whole dB, A 7 dB below B: a third of the pairs are one-sided,
    # so the estimate depends on the detection model. The interval is the statistical one
    # widened by the systematic part on each side
    counts, det = _soft_cell(tau_db=1.0, diff_db=7.0)
    r = estimate_groups(counts, n_boot=100, seed=1, detection=det).iloc[0]
    assert det["tau_fitted"] and det["tau_db"] == pytest.approx(1.0, abs=0.3)
    assert r[C.DETECTION_TAU] == det["tau_db"]
    assert 0.005 < r[C.SYSTEMATIC] < 0.2
    assert r[C.CI_LOW] == pytest.approx(r[C.CI_STAT_LOW] - r[C.SYSTEMATIC], abs=1e-12)
    assert r[C.CI_HIGH] == pytest.approx(r[C.CI_STAT_HIGH] + r[C.SYSTEMATIC], abs=1e-12)
    assert r[C.B_MINUS_A] == pytest.approx(7.0, abs=0.25)
    assert "soft detection model" in r[C.METHOD] and "systematic part" in r[C.METHOD]
    assert "whole-dB reports as 1-dB intervals" in r[C.METHOD]
    # the same fit without alternatives: no systematic part, the statistical interval
    bare = estimate_groups(counts, n_boot=100, seed=1,
                           detection=dict(det, alternatives=[])).iloc[0]
    assert bare[C.SYSTEMATIC] == 0.0 and bare[C.CI_LOW] == bare[C.CI_STAT_LOW]
    assert bare[C.B_MINUS_A] == r[C.B_MINUS_A]
    # the systematic part is the largest change over the alternatives: each one alone
    # gives at most it, one of them exactly
    parts = [estimate_groups(counts, n_boot=2, seed=1,
                             detection=dict(det, alternatives=[a])).iloc[0][C.SYSTEMATIC]
             for a in det["alternatives"]]
    assert max(parts) == pytest.approx(r[C.SYSTEMATIC], abs=1e-12)


def test_earlier_model_on_request_and_bad_model():
    counts, det = _soft_cell(tau_db=1.0, diff_db=7.0)
    old = estimate_groups(counts, n_boot=50, seed=1, model="tobit").iloc[0]
    assert old[C.SYSTEMATIC] == 0.0 and np.isnan(old[C.DETECTION_TAU])
    assert old[C.TAIL_DF] == np.inf and "Tobit" in old[C.METHOD]
    from spotkit.errors import UsageError
    with pytest.raises(UsageError, match="detection, pooled, tobit"):
        estimate_groups(counts, model="probit")


def test_whole_db_is_detected_from_the_values():
    # without a detection model the values decide: whole-dB differences -> intervals
    counts, _ = _soft_cell(tau_db=0.0, diff_db=0.0)
    r = estimate_groups(counts, n_boot=20, seed=1).iloc[0]
    assert "1-dB intervals" in r[C.METHOD] and "tau 1.00 dB set" in r[C.METHOD]
    frac = counts.assign(**{C.VALUE: counts[C.VALUE] + 0.37})
    r2 = estimate_groups(frac, n_boot=20, seed=1).iloc[0]
    assert "1-dB intervals" not in r2[C.METHOD]


def test_compare_antennas_default_and_earlier_model():
    sim = simulate_spots(days=0.25, n_receivers=40, bands=("20m",), difference_db=2.0,
                         seed=4)
    new = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, n_boot=50)
    old = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, n_boot=50, model="tobit")
    assert new.options["model"] == "detection" and old.options["model"] == "tobit"
    assert set(RESULT_COLUMNS) <= set(new.overall)
    assert new.pairs.attrs["detection"]["method"] == "t50"
    assert old.pairs.attrs["detection"] is None
    for r in (new, old):
        assert r.overall[C.CI_LOW] <= 2.0 <= r.overall[C.CI_HIGH]
    fixed = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, n_boot=20, tau_db=0.8)
    assert fixed.overall[C.DETECTION_TAU] == 0.8 and "tau 0.80 dB set" in fixed.overall[
        C.METHOD]


def test_tails_are_chosen_by_the_data():
    # Student t fading with 3 df: a t with 3 or 5 df is chosen; normal fading: the normal
    # or the t with 10 df
    heavy, det = _soft_cell(tau_db=0.0, diff_db=0.0, fade_df=3.0)
    r = estimate_groups(heavy, n_boot=50, seed=1, detection=det).iloc[0]
    assert r[C.TAIL_DF] <= 5.0
    light, det = _soft_cell(tau_db=0.0, diff_db=0.0)
    assert estimate_groups(light, n_boot=20, seed=1, detection=det).iloc[0][C.TAIL_DF] >= 10
    normal = estimate_groups(heavy, n_boot=20, seed=1, detection=det, tails="normal").iloc[0]
    assert normal[C.TAIL_DF] == np.inf and "normal tails" in normal[C.METHOD]


def test_normal_interval_on_request():
    # interval="normal": estimate -+ z * bootstrap SE (z = scipy.stats.norm.ppf(0.975) =
    # 1.959964), the same resamples as the percentile interval, widened by the same
    # systematic part; the estimate itself does not change
    from scipy.stats import norm

    from spotkit.errors import UsageError

    counts, det = _soft_cell(tau_db=1.0, diff_db=7.0)
    pct = estimate_groups(counts, n_boot=100, seed=1, detection=det).iloc[0]
    nrm = estimate_groups(counts, n_boot=100, seed=1, detection=det,
                          interval="normal").iloc[0]
    est = nrm[C.B_MINUS_A]
    assert est == pct[C.B_MINUS_A] and nrm[C.SYSTEMATIC] == pct[C.SYSTEMATIC]
    half = nrm[C.CI_STAT_HIGH] - est
    assert est - nrm[C.CI_STAT_LOW] == pytest.approx(half, abs=1e-12)
    assert nrm[C.CI_LOW] == pytest.approx(nrm[C.CI_STAT_LOW] - nrm[C.SYSTEMATIC], abs=1e-12)
    # the two intervals estimate the same spread: widths within 25 % at 100 resamples
    assert half / norm.ppf(0.975) == pytest.approx(
        (pct[C.CI_STAT_HIGH] - pct[C.CI_STAT_LOW]) / (2 * norm.ppf(0.975)), rel=0.25)
    assert "normal-approximation (bootstrap SE)" in nrm[C.METHOD]
    assert "percentile" in pct[C.METHOD]
    with pytest.raises(UsageError, match="percentile, normal"):
        estimate_groups(counts, interval="bca")


@pytest.mark.parametrize("model", ["detection", "receiver-effects"])
def test_batched_single_fits_match_the_per_group_fits(small_sim, model, monkeypatch):
    # the point fits (every tail) and the systematic part's refits of all groups run as
    # a few batches before the groups are estimated; the same table comes out of one fit
    # per group and per model (the batches switched off) to 1e-9 dB
    from spotkit.compare import estimate as E

    pairs = pair_spots(small_sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
    counts = summarise_pairs(pairs, ("band", "distance"))
    kw = dict(n_boot=30, min_pairs=40, model=model)
    fast = estimate_groups(counts, **kw)
    calls = []
    monkeypatch.setattr(E._Fitter, "prepare", lambda self, groups: calls.append(groups))
    slow = estimate_groups(counts, **kw)
    assert len(calls) == 1 and len(calls[0]) >= 4  # the groups were there to batch
    num = fast.select_dtypes("number").columns
    assert fast[C.TAIL_DF].notna().sum() >= 4
    np.testing.assert_allclose(fast[num].to_numpy(float), slow[num].to_numpy(float),
                               rtol=0, atol=1e-9)
    assert fast[C.NOTE].tolist() == slow[C.NOTE].tolist()
