"""Tests of spotkit.compare.multi: k antennas in the simultaneous, receive and alternating
designs, simultaneous intervals (coverage over repeated simulated runs) and the ranking."""
from __future__ import annotations

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.compare.estimate import compare_antennas
from spotkit.compare.multi import compare_several, parse_antennas
from spotkit.errors import InputError, UsageError
from spotkit.sim.simulate import Propagation, simulate_spots


def _sim(design, more, *, seed=1, days=0.25, diff=2.0, **kw):
    return simulate_spots(design, days=days, n_receivers=40, n_transmitters=40,
                          bands=("20m",), difference_db=diff, more_antennas=more, seed=seed,
                          **kw)


def _antennas(sim):
    return sim.params["labels"] if sim.design == "alternating" else sim.params["calls"]


def _run(sim, **kw):
    return compare_several(sim.spots, sim.design, _antennas(sim), call=sim.a,
                           schedule="even-odd", **kw)


def _truth(sim, first, second):
    names = _antennas(sim)
    tv = sim.params["truth_vs_a"]
    return tv[names.index(second)] - tv[names.index(first)]


def test_reference_contrast_is_the_two_antenna_estimate():
    # the k-antenna fit of B - A is the two-antenna fit (same pairs, same censoring model):
    # the same estimate, pair counts and systematic part; only the bootstrap weights differ
    # (clusters are the union over the contrasts)
    sim = _sim("simultaneous", [5.0], seed=4)
    res = _run(sim, n_boot=50)
    two = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=50)
    row = res.contrasts.iloc[0]
    assert (row[C.FIRST], row[C.SECOND]) == ("Q1ABC", "Q1ABD")
    assert row[C.B_MINUS_A] == pytest.approx(two.overall[C.B_MINUS_A], abs=1e-9)
    assert row[C.PAIRS] == two.overall[C.PAIRS]
    assert row[C.SYSTEMATIC] == pytest.approx(two.overall[C.SYSTEMATIC], abs=1e-9)


@pytest.mark.parametrize("design", ["simultaneous", "receive", "alternating"])
def test_wide_gaps_are_ranked(design):
    # truth: A 0, B +2, C +6, D +4 dB - gaps of 2 dB are far beyond the intervals here
    sim = _sim(design, [6.0, 4.0], seed=2, days=0.3)
    res = _run(sim, n_boot=100)
    names = _antennas(sim)
    assert res.order == [names[2], names[3], names[1], names[0]]
    assert res.ranking == (f"{names[2]} > {names[3]} > {names[1]} > {names[0]} with 95 % "
                           "simultaneous confidence")
    for r in res.contrasts.to_dict("records"):
        assert r[C.CI_SIM_LOW] <= r[C.CI_LOW] and r[C.CI_SIM_HIGH] >= r[C.CI_HIGH]


def test_close_antennas_are_not_separated():
    # B and C both 3 dB above A, 0.0 dB apart: A is separated from both, B and C are not
    sim = _sim("receive", [3.0], seed=5, diff=3.0)
    res = _run(sim, n_boot=100)
    assert res.order[-1] == "Q1ABC"
    assert "not separated" in res.ranking
    assert set(res.order[:2]) == {"Q1ABD", "Q1ABE"}
    first, second = res.order[:2]
    assert f"{first} and {second} not separated" in res.ranking
    assert f"{second} ~ Q1ABC" not in res.ranking


def test_reference_and_all_pairs():
    sim = _sim("simultaneous", [6.0], seed=3)
    res = _run(sim, n_boot=60, reference="Q1ABE")
    assert res.reference == "Q1ABE"
    assert res.contrasts[C.FIRST].tolist() == ["Q1ABE", "Q1ABE"]
    # B - E = 2 - 6 = -4 dB, A - E = -6 dB
    est = dict(zip(res.contrasts[C.SECOND], res.contrasts[C.B_MINUS_A], strict=True))
    assert est["Q1ABC"] == pytest.approx(-6.0, abs=0.6)
    assert est["Q1ABD"] == pytest.approx(-4.0, abs=0.6)
    every = _run(sim, n_boot=60, all_pairs=True)
    assert len(every.contrasts) == 3
    assert set(every.contrasts[C.CONTRAST]) == {"reference", "pair"}
    # a family of three is at least as wide as a family of two from the same resamples
    assert every.options["max_t_factor"] >= _run(sim, n_boot=60).options["max_t_factor"]
    d = every.to_dict()
    assert d["ranking"] == every.ranking and len(d["all_pairs"]) == 3
    assert "simultaneous" in str(every)


def test_alternating_schedule_table_with_labels():
    # a schedule table with labels A, B, C (as 'spotkit plan schedule --antennas' writes)
    from spotkit.plan.schedule import make_schedule

    table = make_schedule("2026-03-02", days=0.25, bands="20m", antennas="A,B,C", seed=3)
    sim = _sim("alternating", [5.0], seed=6, schedule=table)
    res = compare_several(sim.spots, "alternating", "A,B,C", call="Q1ABC", schedule=table,
                          n_boot=60, window_slots=5)
    est = dict(zip(res.contrasts[C.SECOND], res.contrasts[C.B_MINUS_A], strict=True))
    assert est["B"] == pytest.approx(2.0, abs=0.7)
    assert est["C"] == pytest.approx(5.0, abs=0.7)


def test_bad_input():
    sim = _sim("simultaneous", [5.0], seed=1, days=0.1)
    with pytest.raises(UsageError, match="at least two"):
        compare_several(sim.spots, "simultaneous", "Q1ABC")
    with pytest.raises(UsageError, match="reference"):
        compare_several(sim.spots, "simultaneous", "Q1ABC,Q1ABD", reference="Q1XYZ")
    with pytest.raises(UsageError, match="design"):
        compare_several(sim.spots, "before-after", "Q1ABC,Q1ABD")
    with pytest.raises(UsageError, match="call"):
        compare_several(sim.spots, "alternating", "A,B", schedule="even-odd")
    with pytest.raises(InputError, match="Q1ZZZ"):
        compare_several(sim.spots, "simultaneous", "Q1ABC,Q1ZZZ", n_boot=30)
    assert parse_antennas(["a", "b"]) == ["A", "B"]
    with pytest.raises(UsageError, match="twice"):
        parse_antennas("A,B,a")


# --- coverage over repeated runs (slow) ---------------------------------------------------
#: runs per (design, k) cell
RUNS = 8


@pytest.mark.slow
def test_simultaneous_coverage_k3_k4_every_design():
    # Simulated truth (exact constant differences: A 0, B +2, C +5, D +1 dB), in a regime
    # the model only approximates: soft decoders (detection width 1 dB) and heavy-tailed
    # fast fading (Student t, 5 df). A run "covers" when every contrast of the family
    # lies within its simultaneous interval. Over 48 runs a 95 % family coverage gives
    # about 46 (binomial SD 1.5); we require 41 (85 %). An interval not adjusted for
    # multiplicity is caught by the width check: the simultaneous statistical half-width
    # must exceed the one-at-a-time bootstrap half-width by 8 % on average (the max-T
    # factor for 2-3 correlated contrasts is about 2.2-2.4 against 1.96).
    prop = Propagation(fast_fading_df=5.0)
    covered, runs, widen, marginal_cov = 0, 0, [], 0
    for design in ("simultaneous", "receive", "alternating"):
        for k in (3, 4):
            more = [5.0, 1.0][:k - 2]
            for r in range(RUNS):
                sim = _sim(design, more, seed=1000 + 37 * r + k, days=0.2,
                           detection_width_db=1.0, propagation=prop)
                res = _run(sim, n_boot=80)
                c = res.contrasts
                truth = np.array([_truth(sim, a, b) for a, b in
                                  zip(c[C.FIRST], c[C.SECOND], strict=True)])
                assert np.isfinite(c[C.B_MINUS_A]).all()
                runs += 1
                covered += bool(np.all((c[C.CI_SIM_LOW] <= truth) & (truth <= c[C.CI_SIM_HIGH])))
                marginal_cov += bool(np.all((c[C.CI_LOW] <= truth) & (truth <= c[C.CI_HIGH])))
                sim_half = (c[C.CI_SIM_HIGH] - c[C.CI_SIM_LOW]) / 2 - c[C.SYSTEMATIC]
                one_half = (c[C.CI_STAT_HIGH] - c[C.CI_STAT_LOW]) / 2 if C.CI_STAT_HIGH in c \
                    else (c[C.CI_HIGH] - c[C.CI_LOW]) / 2 - c[C.SYSTEMATIC]
                widen.append(float(np.mean(sim_half / one_half)))
    print(f"family coverage {covered}/{runs} simultaneous, {marginal_cov}/{runs} "
          f"one-at-a-time; mean widening {np.mean(widen):.3f}")
    assert covered >= 0.85 * runs
    assert np.mean(widen) >= 1.08
