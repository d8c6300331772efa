"""The receiver-effects model of compare_antennas (spotkit.stats.receivers), in full and
as the default's receiver shift.

Its bias and coverage are measured in the coverage study (``tests/compare/
test_coverage_study.py``, ``benchmarks/coverage_study.py --model receiver-effects``);
these checks are fast: the option is wired, refits in every resample, leaves the default
alone, and refuses what it does not model."""
from __future__ import annotations

import heldout
import numpy as np
import pytest

from spotkit import columns as C
from spotkit.compare.estimate import compare_antennas
from spotkit.errors import UsageError


@pytest.fixture(scope="module")
def spots():
    # receivers whose B-A differs by 1 dB (SD) and A 7 dB below B: the case the model is for
    return heldout.generate(n_far=60, n_slots=80, power_a_dbm=30.0, power_b_dbm=37.0,
                            station_sd_db=1.0, report_step_db=0.1, seed=11)


def test_receiver_effects_runs_and_says_so(spots):
    sp, cells = spots
    kw = dict(n_boot=20, seed=1, interval="normal")
    pooled = compare_antennas(sp, "simultaneous", heldout.CALL_A, heldout.CALL_B,
                              model="pooled", **kw)
    mixed = compare_antennas(sp, "simultaneous", heldout.CALL_A, heldout.CALL_B,
                             model="receiver-effects", **kw)
    o, p = mixed.overall, pooled.overall
    assert "receiver-effects model" in o[C.METHOD]
    assert "receiver-effects" not in p[C.METHOD]
    assert o[C.PAIRS] == p[C.PAIRS] and o[C.SYSTEMATIC] == p[C.SYSTEMATIC]
    # a different estimator, near the pooled one and the truth (2,000 pairs: SE ~0.1 dB)
    assert o[C.B_MINUS_A] != p[C.B_MINUS_A]
    truth = heldout.overall_truth(cells)
    assert abs(o[C.B_MINUS_A] - truth) < 0.4
    assert o[C.CI_LOW] < o[C.B_MINUS_A] < o[C.CI_HIGH]
    width = o[C.CI_STAT_HIGH] - o[C.CI_STAT_LOW]
    assert 0.5 < width / (p[C.CI_STAT_HIGH] - p[C.CI_STAT_LOW]) < 2.0


def test_receiver_effects_refuses_the_threshold_correction(spots):
    with pytest.raises(UsageError, match="threshold correction"):
        compare_antennas(spots[0], "simultaneous", heldout.CALL_A, heldout.CALL_B,
                         n_boot=5, model="receiver-effects", threshold_correction="edge")


def test_receiver_effects_single_receiver_group_falls_back(spots):
    sp = spots[0]
    one = sp[sp["rx_call"] == sp["rx_call"].value_counts().index[0]]
    r = compare_antennas(one, "simultaneous", heldout.CALL_A, heldout.CALL_B, n_boot=10,
                         model="receiver-effects", min_pairs=5)
    base = compare_antennas(one, "simultaneous", heldout.CALL_A, heldout.CALL_B, n_boot=10,
                            min_pairs=5)
    assert np.isclose(r.overall[C.B_MINUS_A], base.overall[C.B_MINUS_A], equal_nan=True)


def test_default_is_the_pooled_fit_moved_by_the_receiver_shift(spots):
    sp, _ = spots
    kw = dict(n_boot=20, seed=1, interval="normal")
    runs = {m: compare_antennas(sp, "simultaneous", heldout.CALL_A, heldout.CALL_B,
                                model=m, **kw).overall
            for m in ("detection", "pooled", "receiver-effects")}
    d, p, r = runs["detection"], runs["pooled"], runs["receiver-effects"]
    shift = d[C.RECEIVER_SHIFT]
    assert "receiver shift" in d[C.METHOD] and "receiver shift" not in p[C.METHOD]
    assert np.isnan(p[C.RECEIVER_SHIFT]) and abs(shift) > 0.005
    # no missed reports here (simultaneous design): the shift is the receiver-effects
    # estimate less the pooled one, and the default's estimate is the receiver-effects one
    assert p[C.B_MINUS_A] + shift == pytest.approx(d[C.B_MINUS_A], abs=1e-12)
    assert d[C.B_MINUS_A] == pytest.approx(r[C.B_MINUS_A], abs=1e-9)
    # the pooled bootstrap, moved by the shift; the systematic part is the pooled one's
    for col in (C.CI_STAT_LOW, C.CI_STAT_HIGH, C.CI_LOW, C.CI_HIGH):
        assert d[col] == pytest.approx(p[col] + shift, abs=1e-12)
    assert d[C.SYSTEMATIC] == p[C.SYSTEMATIC]


def test_no_receiver_shift_where_reports_are_missed_for_other_reasons():
    # alternating design, paths closing between slots: the pooled fit finds a share of
    # missed reports (0.9-2 % in the test suite's small alternating runs), which the
    # receiver-effects fit does not model, so the default keeps the pooled estimate
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots("alternating", days=0.5, seed=11, bands=("20m",),
                         n_receivers=400, difference_db=1.0, power_b_dbm=30.0)
    kw = dict(sim.compare_kwargs(), n_boot=10, seed=1)
    d = compare_antennas(sim.spots, **kw).overall
    p = compare_antennas(sim.spots, model="pooled", **kw).overall
    assert np.isnan(d[C.RECEIVER_SHIFT])
    assert d[C.B_MINUS_A] == p[C.B_MINUS_A] and d[C.CI_LOW] == p[C.CI_LOW]


def test_no_receiver_shift_where_both_antennas_are_heard(demo_dir):
    """The demo's 10 m short-path cell: 5,734 pairs, 8 one-sided, receivers whose B-A
    spreads over 19 dB (SD 7 dB, pattern) against 2 dB about each receiver's mean. With
    (almost) nothing censored the mean over the pairs is the pooled mean, so the shift is
    near 0; the receiver-effects fit stopped at a false maximum there and moved the
    estimate by -0.56 dB (0.10 dB against a truth of 0.70 dB)."""
    from spotkit.io import read_spots

    sp = read_spots(demo_dir / "simultaneous.csv.gz")
    sp = getattr(sp, "spots", sp)
    res = compare_antennas(sp, "simultaneous", "Q1ABC", "Q1ABD", by=["band", "distance"],
                           n_boot=20, seed=1)
    g = res.groups
    cell = g[(g[C.BAND] == "10m") & (g[C.DISTANCE_MIN] == 0)].iloc[0]
    assert cell[C.ONLY_A] + cell[C.ONLY_B] < 10 and cell[C.PAIRS] > 5000
    assert abs(cell[C.RECEIVER_SHIFT]) < 0.02
