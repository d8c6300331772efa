"""Tests of spotkit.compare.series: a series of changes recovers each step on simulated data
with known steps (before/after design with control stations)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.compare.series import compare_series, parse_periods
from spotkit.errors import UsageError
from spotkit.sim.simulate import simulate_spots

PERIODS = "4 radials:2026-03-02,8 radials:2026-03-04,16 radials:2026-03-06"


@pytest.fixture(scope="module")
def series_sim():
    # truth: 8 radials +2.0 dB over 4 radials, 16 radials +3.5 dB over 4 (a +1.5 dB step)
    return simulate_spots("before-after", days=6, n_receivers=60, bands=("20m",),
                          difference_db=2.0, more_antennas=[3.5],
                          change_at=["2026-03-04", "2026-03-06"], seed=21)


@pytest.fixture(scope="module")
def series_res(series_sim):
    return compare_series(series_sim.spots, "Q1ABC", PERIODS, n_boot=150)


@pytest.mark.slow
def test_series_recovers_each_step(series_res):
    res = series_res
    t = res.table.set_index([C.FIRST, C.SECOND])
    truth = {("4 radials", "8 radials"): 2.0, ("4 radials", "16 radials"): 3.5,
             ("8 radials", "16 radials"): 1.5}
    assert set(t.index) == set(truth)
    for key, true in truth.items():
        row = t.loc[key]
        # within 0.5 dB (the before/after design's RMS error with two days per period is
        # 0.2-0.3 dB, spotkit.compare.beforeafter) and inside its simultaneous interval
        assert row[C.B_MINUS_A] == pytest.approx(true, abs=0.5), key
        assert row[C.CI_SIM_LOW] <= true <= row[C.CI_SIM_HIGH], key
    assert t.loc[("4 radials", "8 radials"), C.CONTRAST] == "first, step"
    assert res.options["comparisons"] == 3
    assert res.options["confidence_each"] == pytest.approx(1 - 0.05 / 3)
    d = res.to_dict()
    assert [p["label"] for p in d["periods"]] == ["4 radials", "8 radials", "16 radials"]
    assert "16 radials - 8 radials (step)" in str(res)


@pytest.mark.slow
def test_bonferroni_interval_is_wider_than_one_at_a_time(series_sim, series_res):
    from spotkit.compare.estimate import compare_antennas

    sub = series_sim.spots[series_sim.spots[C.SLOT] < pd.Timestamp("2026-03-06", tz="UTC")]
    one = compare_antennas(sub, "before-after", "Q1ABC", change_at="2026-03-04", n_boot=150)
    row = series_res.table.iloc[0]
    assert row[C.B_MINUS_A] == pytest.approx(one.overall[C.B_MINUS_A], abs=1e-9)
    assert (row[C.CI_SIM_HIGH] - row[C.CI_SIM_LOW]) > (one.overall[C.CI_HIGH]
                                                       - one.overall[C.CI_LOW])


def test_parse_periods_errors():
    assert [x[0] for x in parse_periods([("a", "2026-03-01"), ("b", "2026-03-02")])] == \
        ["a", "b"]
    with pytest.raises(UsageError, match="increase"):
        parse_periods("a:2026-03-02,b:2026-03-01")
    with pytest.raises(UsageError, match="label:time"):
        parse_periods("a 2026-03-02,b:2026-03-03")
    with pytest.raises(UsageError, match="twice"):
        parse_periods("a:2026-03-01,a:2026-03-02")
    with pytest.raises(UsageError, match="period 'b'"):
        parse_periods("a:2026-03-01,b:not a time")


def test_simulator_series_truth_and_errors():
    with pytest.raises(UsageError, match="list of 2"):
        simulate_spots("before-after", days=4, n_receivers=5, bands=("20m",),
                       difference_db=1.0, more_antennas=[2.0], change_at="2026-03-03")
    with pytest.raises(UsageError, match="increase"):
        simulate_spots("before-after", days=4, n_receivers=5, bands=("20m",),
                       difference_db=1.0, more_antennas=[2.0],
                       change_at=["2026-03-04", "2026-03-03"])
    sim = simulate_spots("before-after", days=3, n_receivers=20, bands=("20m",),
                         difference_db=1.0, more_antennas=[2.0],
                         change_at=["2026-03-03", "2026-03-04"], seed=3)
    assert sim.params["truth_vs_a"] == [0.0, 1.0, 2.0]
    # the target is on the air in every period, and only with one antenna at a time
    tgt = sim.spots[sim.spots[C.TX_CALL] == "Q1ABC"]
    days = tgt[C.SLOT].dt.floor("D").unique()
    assert len(days) == 3
    assert np.isfinite(tgt[C.SNR]).all()


def _small_steps(seed):
    """Steps of 0.6 dB then 0.4 dB more: estimates near the edge of their intervals."""
    return simulate_spots("before-after", days=6, n_receivers=50, bands=("20m",),
                          difference_db=0.6, more_antennas=[1.0],
                          change_at=["2026-03-04", "2026-03-06"], seed=seed)


def _agree(res, confidence):
    """Per comparison: (interval leaves out 0, family p below 1 - confidence)."""
    t = res.table
    out = (t[C.CI_SIM_LOW] > 0) | (t[C.CI_SIM_HIGH] < 0)
    return list(zip(out, t[C.P_FAMILY] < 1 - confidence, strict=True))


def test_family_p_agrees_with_the_simultaneous_interval():
    """Seed 4 is a case where the normal-approximation p (family p 0.020) said 'below
    0.05' while the percentile interval, -0.02 to +1.97 dB, held 0: now p comes from the
    same percentile bootstrap and the two agree."""
    sim = _small_steps(4)
    res = compare_series(sim.spots, "Q1ABC", "old:2026-03-02,new:2026-03-04,"
                         "newer:2026-03-06", n_boot=200)
    for excludes, significant in _agree(res, 0.95):
        assert excludes == significant
    assert "p from the same percentile bootstrap" in next(iter(res.results.values())
                                                          ).overall[C.METHOD]


@pytest.mark.slow
@pytest.mark.parametrize("confidence", [0.9, 0.95])
def test_family_p_agrees_with_the_interval_over_runs(confidence):
    """Over 10 simulated series x 3 comparisons, the interval and the family p never
    disagree, and both kinds of outcome occur (so the check can fail either way)."""
    seen = set()
    for seed in range(10):
        res = compare_series(_small_steps(seed).spots, "Q1ABC",
                             "old:2026-03-02,new:2026-03-04,newer:2026-03-06", n_boot=200,
                             confidence=confidence)
        for excludes, significant in _agree(res, confidence):
            assert excludes == significant, seed
            seen.add(bool(excludes))
    assert seen == {True, False}


def test_too_few_resamples_for_the_family_p_say_so():
    """With 3 comparisons and 40 resamples the family p cannot go below 3/40 = 0.075 (the
    percentile p is at least 1/40), so it cannot agree with a 95 % interval that leaves out
    0: the note says so."""
    sim = _small_steps(4)
    res = compare_series(sim.spots, "Q1ABC", "old:2026-03-02,new:2026-03-04,"
                         "newer:2026-03-06", n_boot=40)
    assert (res.table[C.P_FAMILY] >= 3 / 40 - 1e-12).all()
    assert res.table[C.NOTE].str.contains("too few resamples \\(40\\) for a family p").all()
