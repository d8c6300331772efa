"""The coverage study (``benchmarks/coverage_study.py``) and its held-out generator.

Fast tests check the generator (``tests/heldout.py``: independent of the package, its
regimes do what they say) and the study's arithmetic. The slow tests assert issue 15's
targets on a subset CI can afford; the benchmark prints the whole table.
"""
from __future__ import annotations

import ast
import importlib.util
from pathlib import Path

import heldout
import numpy as np
import pandas as pd
import pytest
from scipy import stats

REPO = Path(__file__).resolve().parents[2]


def _load_study():
    spec = importlib.util.spec_from_file_location(
        "coverage_study", REPO / "benchmarks" / "coverage_study.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


study = _load_study()
#: the tests that share a module fixture run on one xdist worker (``--dist loadgroup``):
#: split over two, each worker would compute the fixture's runs again
SMALL_GROUP = pytest.mark.xdist_group("coverage_study_small")
LARGE_GROUP = pytest.mark.xdist_group("coverage_study_large")


# --- the held-out generator -----------------------------------------------------------------
def test_heldout_generator_imports_nothing_from_the_package():
    tree = ast.parse((REPO / "tests" / "heldout.py").read_text(encoding="utf-8"))
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names |= {a.name.split(".")[0] for a in node.names}
        elif isinstance(node, ast.ImportFrom):
            names.add((node.module or "").split(".")[0])
    assert "spotkit" not in names
    assert names <= {"__future__", "numpy", "pandas", "pyproj", "scipy"}


@pytest.mark.parametrize("locator, lat, lon", [
    # worked by hand from the Maidenhead definition (E. Tyson, QST Jan. 1989, pp. 29-30):
    # JN58td: lon -180 + 9*20 + 5*2 + 19*5' + 2.5' = 11.625, lat -90 + 13*10 + 8 + 3*2.5'
    # + 1.25' = 48.1458 (+-0.0001 deg)
    ("JN58td", 48.1458, 11.625),
    ("FN31pr", 41.7292, -72.7083),
    ("IO91lk", 51.4375, -1.0417),
    ("JO62", 52.5, 13.0),  # a square's centre: 1 deg x 2 deg cell
])
def test_heldout_locators_worked_by_hand(locator, lat, lon):
    la, lo = heldout.locator_centre([locator])
    assert la[0] == pytest.approx(lat, abs=1e-4) and lo[0] == pytest.approx(lon, abs=1e-4)
    assert heldout.to_locator(la, lo, len(locator))[0] == locator


def test_heldout_locator_round_trip_and_distance_against_geopy():
    from geopy.distance import geodesic

    rng = np.random.default_rng(3)
    lat, lon = rng.uniform(-60, 70, 300), rng.uniform(-180, 180, 300)
    for prec, half_lat, half_lon in ((4, 0.5, 1.0), (6, 1 / 48, 1 / 24)):
        loc = heldout.to_locator(lat, lon, prec)
        clat, clon = heldout.locator_centre(loc)
        # the point lies in its cell: within half a cell of the centre
        assert np.all(np.abs(clat - lat) <= half_lat + 1e-9)
        assert np.all(np.abs(clon - lon) <= half_lon + 1e-9)
    spots, _ = heldout.generate(n_far=60, n_slots=20, seed=1)
    row = spots.iloc[:40]
    # reference: geopy's geodesic on WGS-84 (Karney); 1 m
    ref = [geodesic((a, b), (c, d)).km for a, b, c, d in
           zip(row["tx_lat"], row["tx_lon"], row["rx_lat"], row["rx_lon"], strict=True)]
    np.testing.assert_allclose(row["distance_km"], ref, atol=1e-3)


def test_heldout_spots_follow_the_glossary():
    from spotkit import columns as C

    for design in ("simultaneous", "receive"):
        spots, truth = heldout.generate(n_far=80, n_slots=40, seed=2, design=design)
        assert list(spots.columns) == C.CANONICAL
        for name in C.CANONICAL:
            assert str(spots[name].dtype) == str(C.GLOSSARY[name].dtype), name
        assert truth["pairs"].sum() > 100


def _strong_differences(spots, _cells=None, cut_db=-12.0):
    """Per-W B-A of both-heard pairs far above threshold, minus the cell's constant."""
    sp = spots.assign(w=spots["snr_db"] - (spots["power_dbm"] - 30))
    sp = sp[sp["snr_db"] >= cut_db]
    wide = sp.pivot_table(index=["rx_call", "slot_utc", "band"], columns="tx_call",
                          values="w", observed=True).dropna()
    d = (wide[heldout.CALL_B] - wide[heldout.CALL_A]).rename("d").reset_index()
    dist = sp.groupby("rx_call", observed=True)["distance_km"].first()
    edges = np.asarray(heldout.DISTANCE_EDGES)
    cell = np.searchsorted(edges, dist[d["rx_call"]].to_numpy(), side="right") - 1
    const = heldout.default_truth(("20m", "10m")).set_index([heldout.BAND, heldout.D_MIN])
    d["d"] -= const.loc[list(zip(d["band"].astype(str), edges[cell], strict=True)),
                        heldout.TRUE].to_numpy()
    return d


def test_heldout_station_spread_is_in_the_reports_and_the_truth():
    kw = dict(n_far=150, n_slots=400, power_a_dbm=37, power_b_dbm=37, seed=5)
    spread = {}
    for sd in (0.0, 1.0):
        spots, cells = heldout.generate(station_sd_db=sd, **kw)
        d = _strong_differences(spots, cut_db=-22.0)  # 6 dB above the thresholds
        per_rx = d.groupby("rx_call", observed=True)["d"].agg(["mean", "size"])
        per_rx = per_rx[per_rx["size"] >= 30]
        spread[sd] = per_rx["mean"].std()
        if sd == 0:  # the truth is exactly the cells' constants
            merged = cells.merge(heldout.default_truth(), on=[heldout.BAND, heldout.D_MIN],
                                 suffixes=("", "_c"))
            np.testing.assert_allclose(merged[heldout.TRUE], merged[heldout.TRUE + "_c"])
    # fading alone: SD of a receiver's mean about sqrt(2 * 1.5^2 / 45) = 0.32 dB (30 or
    # more pairs each, median about 45); with a 1 dB station effect about
    # sqrt(1 + 0.32^2) = 1.05 dB (over about 130 receivers: +-0.3 dB)
    assert spread[0.0] < 0.45
    assert spread[1.0] == pytest.approx(1.05, abs=0.3)


def test_heldout_heavy_tails_and_soft_curve():
    kw = dict(n_far=150, n_slots=200, power_a_dbm=37, power_b_dbm=37, seed=6,
              report_step_db=0.1)
    normal = _strong_differences(*heldout.generate(**kw))["d"]
    heavy = _strong_differences(*heldout.generate(fading_df=3.0, **kw))["d"]
    # Fisher excess kurtosis (scipy.stats.kurtosis): about 0 for the difference of two
    # normals, large for Student t with 3 df (infinite fourth moment)
    assert abs(stats.kurtosis(normal)) < 0.5 and stats.kurtosis(heavy) > 2.0
    hard, _ = heldout.generate(**kw)
    soft, _ = heldout.generate(detection_width_db=1.5, **kw)
    # thresholds are -28 or -30: a hard threshold delivers nothing below -30 dB, a soft
    # curve delivers some, and loses some above its 50 % points
    assert hard["snr_db"].min() >= -30.0
    assert (soft["snr_db"] < -30.0).sum() > 20
    assert (soft["snr_db"] >= -27.0).sum() < (hard["snr_db"] >= -27.0).sum()


def test_heldout_raw_decision_drops_only_reports_at_the_threshold():
    kw = dict(n_far=150, n_slots=100, seed=7)
    rounded, _ = heldout.generate(**kw)
    raw, _ = heldout.generate(threshold_on="raw", **kw)
    key = ["slot_utc", "tx_call", "rx_call"]
    m = rounded.merge(raw[key].assign(_raw=True), on=key, how="left")
    lost = m[m["_raw"].isna()]
    assert len(raw) == m["_raw"].notna().sum() and len(lost) > 50
    assert set(lost["snr_db"]) <= {-28.0, -30.0}  # the two thresholds
    with pytest.raises(ValueError, match="raw"):
        heldout.generate(threshold_on="floor", **kw)
    with pytest.raises(ValueError, match="above 2"):
        heldout.generate(fading_df=1.5, **kw)


def test_overall_truth_is_the_pair_weighted_mean():
    cells = pd.DataFrame({heldout.TRUE: [1.0, -1.0, 0.5], "pairs": [10, 30, 60]})
    assert heldout.overall_truth(cells) == pytest.approx((10 - 30 + 30) / 100)


# --- the study's arithmetic -------------------------------------------------------------------
def test_summary_and_targets_by_hand():
    runs = pd.DataFrame({
        "regime": ["hard threshold"] * 4 + [study.LARGE] * 2,
        "pairs": [100, 200, 300, 400, 10, 30],
        "truth_db": [0.0, 0.0, 1.0, 1.0, 0.0, 0.0],
        "estimate_db": [0.1, -0.1, 1.2, 1.0, 0.05, np.nan],
        "ci_low_db": [-0.1, 0.05, 1.05, 0.8, 0.0, np.nan],
        "ci_high_db": [0.3, 0.2, 1.3, 1.2, 0.1, np.nan],
    })
    runs["covered"] = (runs["ci_low_db"] <= runs["truth_db"]) & (
        runs["truth_db"] <= runs["ci_high_db"])
    runs["population_db"] = runs["truth_db"]
    runs["covered_run"] = [True, True, True, True, False, False]
    s = study.summarise(runs).set_index("regime")
    h = s.loc["hard threshold"]
    err = np.array([0.1, -0.1, 0.2, 0.0])
    assert h["runs"] == 4 and h["pairs"] == 250
    assert h["bias_db"] == pytest.approx(0.05)
    assert h["sd_db"] == pytest.approx(err.std(ddof=1))
    assert h["width_db"] == pytest.approx(0.3)
    # ideal width 2 z SD with z = 1.95996 (scipy.stats.norm.ppf(0.975))
    assert h["width_ratio"] == pytest.approx(0.3 / (2 * 1.959964 * err.std(ddof=1)))
    assert h["coverage"] == pytest.approx(0.5)  # runs 2 and 3 miss
    assert h["coverage_run"] == 1.0
    assert s.loc[study.LARGE, "failed"] == 1 and s.loc[study.LARGE, "coverage"] == 0.5
    target = study.check_targets(s.reset_index())
    assert "bias +0.050" in target["hard threshold"]
    assert "coverage 50.0 % < 93 %" in target["hard threshold"]
    assert "coverage 50.0 % < 90 %" in target[study.LARGE]
    # here the population truth is the run truth: the same bias, SE = SD / sqrt(4)
    assert h["bias_run_db"] == pytest.approx(0.05)
    assert h["bias_run_se_db"] == pytest.approx(err.std(ddof=1) / 2)
    assert "| hard threshold |  | 4 | 250 | +0.050 |" in study.format_table(s.reset_index())


def test_summary_keeps_the_models_of_one_run_apart():
    runs = pd.DataFrame({"regime": ["hard threshold"] * 4, "model": ["a", "b"] * 2,
                         "pairs": [100] * 4, "truth_db": [0.0] * 4,
                         "estimate_db": [0.1, 0.0, 0.3, 0.02], "ci_low_db": [-1.0] * 4,
                         "ci_high_db": [1.0] * 4, "covered": [True] * 4,
                         "population_db": [0.0] * 4, "covered_run": [True] * 4})
    s = study.summarise(runs).set_index("model")
    assert s.loc["a", "bias_db"] == pytest.approx(0.2)
    assert s.loc["b", "bias_db"] == pytest.approx(0.01)
    target = study.check_targets(s.reset_index())
    assert "bias +0.200" in target["hard threshold [a]"]
    assert "bias" not in target["hard threshold [b]"]


@pytest.mark.slow
def test_population_truth_is_stable():
    # two populations of 30,000 far stations each (other seeds): within 0.01 dB (their
    # Monte Carlo SE is about 0.002 dB)
    name = "receiver heterogeneity, A 7 dB below B"
    one = study.population_truth(name)
    two = study.population_truth(name, seeds=(17, 18))
    assert one == pytest.approx(two, abs=0.01)


def test_study_regimes_cover_the_issue():
    names = set(study.REGIMES)
    for base in ("hard threshold", "whole dB", "whole dB, raw decision", "soft threshold",
                 "heavy tails t3", "receiver heterogeneity"):
        assert {base, base + ", A 7 dB below B"} <= names
    large = study.REGIMES[study.LARGE]
    assert large["n_far"] == 150 and large["power_b_dbm"] - large["power_a_dbm"] == 7.0


# --- the targets (slow) -------------------------------------------------------------------------
SMALL_REGIMES = [n for n in study.REGIMES if n != study.LARGE]
RUNS_PER_REGIME = 17  # 12 regimes x 17 = 204 runs
#: Bootstrap resamples per run in the slow tests, with the normal-approximation interval
#: (``compare_antennas(..., interval="normal")``: estimate -+ 1.96 bootstrap SE, widened by
#: the systematic part); the benchmark keeps the default percentile interval with 200.
#: Why: cost is linear in the resamples (0.01-0.03 s each per run) and the file must stay
#: near 3 min, while the run counts (204 and 60) set the power against a 5-point
#: shortfall and must stay. A percentile endpoint from 50 resamples is an extreme order
#: statistic: measured on 61 runs of the small regimes (seeds 5000-5005) it covered 82 %
#: where the same runs' 200-resample percentile interval covered 90 %. The SE from 50
#: resamples is within about 10 % (chi-square with 49 df): a correct normal interval
#: covers P(|t_49| < 1.96) = 94.4 % instead of 95 %, and on those runs it covered 92 %,
#: as the 200-resample intervals (percentile 90 %, normal 92 %). So the tests check the
#: bootstrap's spread and the systematic part, which both intervals are made of; the
#: percentile shape is checked by the benchmark. The point estimates, and so every bias
#: check, do not depend on the resamples.
SLOW_BOOT = 50
#: Measured on the detection-model estimator (issue 15; helper notes "stat2" and "stat").
#: With A 7 dB below B the bias target (0.03 dB) was missed in several regimes. Two causes
#: were found and removed: the detection width fitted to the receivers' report histograms
#: came out too narrow (0.25-0.66 dB for a 1 dB curve: a common parameter profiled over a
#: 50 % point and a level slope per receiver, the Neyman-Scott problem), and is now fitted
#: to the paired outcomes (``compare_antennas(tau_from="pairs")``,
#: :mod:`spotkit.compare.width`): "soft threshold, A 7 dB below B" went from +0.055 dB
#: (60 runs) to +0.008 +- 0.008 dB (40 runs, seeds 20000+); the detection probability of a
#: whole-dB report is averaged over its 1-dB interval there, "whole dB, A 7 dB below B"
#: -0.029 -> -0.016 +- 0.012 dB (20 runs, seeds 20000+, same runs). On this file's 17-run
#: subset (seeds 5000+, error against each run's own truth, as the test computes it)
#: every regime is within its tolerance except "receiver heterogeneity, A 7 dB below B":
#: -0.056 dB (SD 0.029, tolerance 0.047; with the earlier width -0.053 dB). Its cause is
#: the estimand: the study's truth is the mean true B-A over the pairs with either
#: antenna heard, while the composite likelihood ("B given A heard" times "A given B
#: heard", flat level prior) targets a blend of the means over A-heard and over B-heard
#: pairs; where B-A varies between receivers and A is much weaker these differ (that
#: regime: -0.031 dB over A-heard pairs, +0.161 dB over B-heard or any-heard pairs, -0.060
#: dB over all open paths; with the receivers' B-A spread alone its bias is -0.048 +-
#: 0.021 dB, with their threshold spread alone -0.010 +- 0.015 dB, 20 runs each). The
#: study's truth is kept: it is the set of pairs the result describes and the bootstrap
#: resamples. Modelling the level distribution (normal per receiver, Tweedie's
#: correction of each conditional factor) was tried and moved every regime by about
#: -0.03 dB, the soft one no nearer (its cause was the width), so it was not adopted.
#: The large cell combines every regime, heterogeneity included, and missed the same way
#: (-0.057 +- 0.002 dB against the runs' truths, 60 runs, seeds 7000+).
#: The default now targets the study's truth: ``model="detection"`` moves the pooled fit
#: by the receiver shift (one receiver-effects fit per group, :mod:`spotkit.stats.
#: receivers`: a normal random effect per receiver integrated out, the mean B-A over the
#: pairs; ``model="pooled"`` is the fit without it). Measured on this file's runs
#: (``benchmarks/coverage_study.py --runs 17 --large-runs 60 --boot 50 --interval normal
#: --model pooled,detection``, seeds 5000+ and 7000+, error against each run's truth):
#: receiver heterogeneity with A 7 dB below B -0.056 +- 0.007 -> -0.022 +- 0.005 dB, the
#: large cell -0.057 +- 0.002 -> -0.021 +- 0.001 dB (against the population truth -0.062
#: -> -0.025 dB), every other regime moved by at most 0.003 dB; the interval is the pooled
#: bootstrap moved by the shift (coverage as before). The xfails of this regime and of the
#: large cell were removed with it.
HETERO_APART = "receiver heterogeneity, A 7 dB below B"


@pytest.fixture(scope="module")
def small_runs():
    """204 runs of about 7,000 pairs: 17 of each of the 12 small regimes."""
    return pd.concat([study.run_regime(n, RUNS_PER_REGIME, n_boot=SLOW_BOOT, first_seed=5000,
                                       interval="normal") for n in SMALL_REGIMES],
                     ignore_index=True)


@pytest.mark.slow
@SMALL_GROUP
def test_every_regime_runs_end_to_end(small_runs):
    # every run of every small regime (the coverage fixture's, so no extra cost) went
    # through the public API with a finite estimate and a proper interval (a percentile
    # interval need not hold the estimate itself); not a coverage check
    assert sorted(small_runs["regime"].unique()) == sorted(SMALL_REGIMES)
    width = small_runs["ci_high_db"] - small_runs["ci_low_db"]
    assert np.isfinite(small_runs["estimate_db"]).all()
    assert ((width > 0) & (width < 1.0)).all(), small_runs.loc[~(width < 1.0), "regime"]
    assert ((small_runs["estimate_db"] - small_runs["truth_db"]).abs() < 0.5).all()
    assert small_runs["pairs"].between(5000, 9000).all()


@pytest.mark.slow
@SMALL_GROUP
def test_coverage_at_7000_pairs_over_every_regime(small_runs):
    """Pooled over the 12 regimes (204 runs): coverage >= 0.925, which detects a 5-point
    shortfall of the average (binomial SE 1.5 % at 95 %; a single regime covering 40 %
    instead of 95 % pulls the pool down by 4.6 points; a correct interval from
    :data:`SLOW_BOOT` resamples is expected at 94.4 %), and
    the baseline interval no wider than 1.5 x the spread of its estimates."""
    covered = small_runs["covered"].mean()
    assert covered >= 0.925, f"pooled coverage {covered:.3f}"
    summary = study.summarise(small_runs).set_index("regime")
    assert summary.loc[study.BASELINE, "width_ratio"] <= study.MAX_WIDTH_RATIO


@pytest.mark.slow
@pytest.mark.parametrize("regime", SMALL_REGIMES)
@SMALL_GROUP
def test_bias_at_7000_pairs_in_every_regime(small_runs, regime):
    """Per regime the bias must be within 0.03 dB plus 2.5 of its standard errors over 17
    runs (about 0.02 dB: this subset resolves a bias of about 0.05-0.08 dB; the benchmark's
    200 runs per regime resolve 0.01 dB)."""
    runs = small_runs[small_runs["regime"] == regime]
    err = runs["estimate_db"] - runs["truth_db"]
    tol = study.MAX_BIAS_DB + 2.5 * err.std() / np.sqrt(err.size)
    assert err.size == RUNS_PER_REGIME
    assert abs(err.mean()) <= tol, study.summarise(runs).to_string()


@pytest.fixture(scope="module")
def large_runs():
    """60 runs of about 70,000 pairs from 150 receivers, every regime at once."""
    return study.run_regime(study.LARGE, 60, n_boot=SLOW_BOOT, first_seed=7000,
                            interval="normal")


@pytest.mark.slow
@LARGE_GROUP
def test_coverage_in_the_large_cell(large_runs):
    """60 runs (issue 15's count): coverage >= 0.90 (issue 15's target, binomial SE 2.8 %
    at 95 %; a correct interval from :data:`SLOW_BOOT` resamples is expected at 94.4 %)."""
    s = study.summarise(large_runs).iloc[0]
    assert s["coverage"] >= study.MIN_COVERAGE_LARGE, s.to_dict()


@pytest.mark.slow
@LARGE_GROUP
def test_bias_in_the_large_cell(large_runs):
    """|bias| <= 0.03 dB over the 60 runs (the estimates spread by about 0.07-0.09 dB,
    mostly which 150 receivers a run draws, so the mean error has an SE of about 0.01 dB)."""
    s = study.summarise(large_runs).iloc[0]
    assert abs(s["bias_db"]) <= study.MAX_BIAS_DB, s.to_dict()


#: Runs of the receiver-effects check (the heterogeneity regime's own seeds, 5000+).
EFFECTS_RUNS = RUNS_PER_REGIME


@pytest.mark.slow
def test_receiver_effects_bias_where_receivers_differ():
    """The full receiver-effects model (``compare_antennas(model="receiver-effects")``,
    :mod:`spotkit.stats.receivers`: a normal random effect per receiver, the estimate the
    mean B-A over the pairs, refitted in every resample) meets the bias target in the
    regime the pooled fit misses, on the same 17 runs and with the same tolerance. Point
    estimates only (2 resamples: the bias does not depend on them); its point estimate is
    the default's here (no missed reports), the default's bias is checked above. Measured
    (seeds 5000+, 50 resamples): -0.019 +- 0.007 dB over 12 runs where the pooled fit gave
    -0.051 +- 0.008 dB on the same runs."""
    runs = study.run_regime(HETERO_APART, EFFECTS_RUNS, n_boot=2, first_seed=5000,
                            interval="normal", model="receiver-effects")
    err = runs["estimate_db"] - runs["truth_db"]
    tol = study.MAX_BIAS_DB + 2.5 * err.std() / np.sqrt(err.size)
    assert err.notna().all() and err.size == EFFECTS_RUNS
    assert abs(err.mean()) <= tol, (err.mean(), tol)
