"""Tests of the truth of a simulated experiment: cells, counts and its JSON."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.sim.simulate import simulate_spots
from spotkit.sim.truth import Truth

SMALL = dict(days=1, n_receivers=80, n_transmitters=60, n_controls=4)


@pytest.fixture(scope="module")
def sims():
    """A small alternating run (seeded as in test_simulate.py)."""
    return {"alternating": simulate_spots("alternating", seed=11, **SMALL)}


def test_constant_difference_gives_exact_cells():
    edges = (0, 1000, 3000, 6000, 20000)
    sim = simulate_spots("simultaneous", seed=3, difference_db={"10m": [0.5, 1.0, 2.0, 3.0],
                                                                "20m": 0.0},
                         difference_edges=edges, **SMALL)
    cells = sim.truth.cells(distance_edges=edges)
    want = {("10m", 0.0): 0.5, ("10m", 1000.0): 1.0, ("10m", 3000.0): 2.0,
            ("10m", 6000.0): 3.0}
    for row in cells.itertuples():
        band, lo = getattr(row, C.BAND), getattr(row, C.DISTANCE_MIN)
        assert getattr(row, C.B_MINUS_A) == pytest.approx(want.get((band, lo), 0.0), abs=1e-12)
    assert cells[C.PAIRS].sum() == len(sim.truth.pairs)
    with45 = sim.truth.cells(distance_edges=edges, bearing_width_deg=45)
    assert {C.BEARING_MIN, C.BEARING_MAX} <= set(with45.columns)
    assert with45[C.PAIRS].sum() == len(sim.truth.pairs)
    assert (with45[C.BEARING_MAX] - with45[C.BEARING_MIN] == 45).all()


def test_truth_json_round_trip(sims, tmp_path):
    tr = sims["alternating"].truth
    back = Truth.from_json(tr.to_json())
    pd.testing.assert_frame_equal(back.pairs[[C.RX_CALL, C.HEARD_A, C.HEARD_B]].astype(
        {C.RX_CALL: str}), tr.pairs[[C.RX_CALL, C.HEARD_A, C.HEARD_B]].astype({C.RX_CALL: str}))
    assert (back.pairs[C.SLOT] == tr.pairs[C.SLOT]).all()
    np.testing.assert_allclose(back.pairs[C.B_MINUS_A], tr.pairs[C.B_MINUS_A], atol=1e-4)
    assert back.overall[C.PAIRS] == tr.overall[C.PAIRS]
    p = tmp_path / "t.truth.json.gz"
    tr.to_json(p)
    assert Truth.from_json(p).overall[C.PAIRS] == tr.overall[C.PAIRS]
