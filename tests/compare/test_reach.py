"""Tests of spotkit.compare.reach: stations reached, distance quantiles, bearing sectors,
P(heard)."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.proportion import proportion_confint

from spotkit import columns as C
from spotkit.compare.reach import (
    compare_reach,
    heard_by_distance,
    reach_by_bearing,
    reach_summary,
)
from spotkit.errors import UsageError
from spotkit.sim.simulate import simulate_spots


def make_pairs():
    """Hand-made pairs: far station, distance [km], bearing [deg], heard A, heard B."""
    rows = [
        ("Q2AA", 500.0, 10.0, True, True), ("Q2AA", 500.0, 10.0, True, False),
        ("Q2BB", 2500.0, 100.0, True, True), ("Q2BB", 2500.0, 100.0, False, True),
        ("Q2CC", 7000.0, 190.0, False, True), ("Q2CC", 7000.0, 190.0, False, True),
        ("Q2DD", 9000.0, 350.0, True, False),
    ]
    df = pd.DataFrame(rows, columns=[C.FAR_CALL, C.DISTANCE, C.BEARING, C.HEARD_A,
                                     C.HEARD_B])
    df[C.BAND] = "20m"
    return df


def test_summary_counts_and_distances():
    s = reach_summary(make_pairs()).set_index(C.ANTENNA)
    # A reached Q2AA, Q2BB, Q2DD; B reached Q2AA, Q2BB, Q2CC
    assert s.loc["A", C.STATIONS] == 3 and s.loc["B", C.STATIONS] == 3
    assert s.loc["A", C.STATIONS_ONLY] == 1 and s.loc["B", C.STATIONS_ONLY] == 1
    # quantiles over distinct stations reached (numpy's linear interpolation)
    assert s.loc["A", C.DISTANCE_MEDIAN] == 2500.0
    assert s.loc["A", C.DISTANCE_FARTHEST] == 9000.0
    assert s.loc["B", C.DISTANCE_P90] == pytest.approx(np.quantile([500, 2500, 7000], 0.9))
    assert s.loc["A", C.HEARD] == 4 and s.loc["B", C.HEARD] == 5
    assert (s[C.PAIRS] == 7).all()


def test_p_heard_wilson_against_statsmodels():
    t = heard_by_distance(make_pairs(), distance_edges=(0, 3000, 20000))
    row = t[(t[C.DISTANCE_MIN] == 0) & (t[C.ANTENNA] == "B")].iloc[0]
    assert (row[C.PAIRS], row[C.HEARD]) == (4, 3)
    # oracle: statsmodels proportion_confint(method="wilson"), tolerance 1e-9
    lo, hi = proportion_confint(3, 4, alpha=0.05, method="wilson")
    assert row[C.P_HEARD] == 0.75
    assert row[C.P_HEARD_LOW] == pytest.approx(lo, abs=1e-9)
    assert row[C.P_HEARD_HIGH] == pytest.approx(hi, abs=1e-9)


def test_by_bearing_sectors():
    t = reach_by_bearing(make_pairs(), bearing_width_deg=90)
    a = t[t[C.ANTENNA] == "A"].set_index(C.BEARING_MIN)[C.STATIONS]
    b = t[t[C.ANTENNA] == "B"].set_index(C.BEARING_MIN)[C.STATIONS]
    assert a.to_dict() == {0.0: 1, 90.0: 1, 180.0: 0, 270.0: 1}
    assert b.to_dict() == {0.0: 1, 90.0: 1, 180.0: 1, 270.0: 0}


def test_compare_reach_from_simulation_and_json(tmp_path):
    sim = simulate_spots("simultaneous", days=0.25, seed=3, bands=("20m",), n_receivers=80,
                         difference_db=6.0, power_a_dbm=23.0, power_b_dbm=23.0)
    r = compare_reach(sim.spots, sim.design, sim.a, sim.b, distance_edges=(0, 3000, 20000))
    s = r.summary.set_index(C.ANTENNA)
    # B is 6 dB better: it is heard in at least as many pairs and reaches at least as many
    assert s.loc["B", C.HEARD] > s.loc["A", C.HEARD]
    assert s.loc["B", C.STATIONS] >= s.loc["A", C.STATIONS]
    doc = json.loads(r.to_json(tmp_path / "reach.json"))
    assert {"summary", "by_bearing", "by_distance"} <= set(doc)
    assert "P(heard)" in str(r)


def test_before_after_has_no_reach():
    with pytest.raises(UsageError, match="same slots"):
        compare_reach(pd.DataFrame(), "before-after", "Q1ABC")
