"""Tests of the foreign CSV layouts, read back by the ingest."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.sim.layouts import LAYOUTS, write_foreign_csv
from spotkit.sim.simulate import simulate_spots

SMALL = dict(days=1, n_receivers=80, n_transmitters=60, n_controls=4)


@pytest.fixture(scope="module")
def sims():
    """Small simultaneous and receive runs (seeded as in test_simulate.py)."""
    return {d: simulate_spots(d, seed=11, **SMALL) for d in ("simultaneous", "receive")}


_COMPARE = [C.SLOT, C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.BAND, C.SNR,
            C.FREQ, C.POWER, C.DRIFT, C.DISTANCE, C.BEARING]


def _canon(df):
    out = df[_COMPARE].copy()
    for c in (C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.BAND):
        out[c] = out[c].astype(str)
    return out.sort_values([C.SLOT, C.TX_CALL, C.RX_CALL]).reset_index(drop=True)


@pytest.mark.parametrize("layout", list(LAYOUTS))
@pytest.mark.parametrize("suffix", [".csv", ".csv.gz"])
def test_foreign_layouts_read_back_to_the_same_table(sims, tmp_path, layout, suffix):
    ingest = pytest.importorskip("spotkit.io.ingest")
    sp = sims["simultaneous"].spots.iloc[::4]
    path = tmp_path / f"spots{suffix}"
    mapping, units = write_foreign_csv(sp, path, layout)
    res = ingest.read_spots(path, mapping=mapping, units=units)
    assert res.summary.accepted == len(sp) and res.summary.rejected == 0
    got, want = _canon(res.spots), _canon(sp)
    # power through W / mW text with 6 significant digits: within 1e-4 dB
    np.testing.assert_allclose(got[C.POWER], want[C.POWER], atol=1e-4)
    pd.testing.assert_frame_equal(got.drop(columns=C.POWER), want.drop(columns=C.POWER),
                                  check_dtype=False)


@pytest.mark.parametrize("layout", ["comma", "tab", "canonical"])
def test_readable_layouts_need_no_mapping(sims, tmp_path, layout):
    ingest = pytest.importorskip("spotkit.io.ingest")
    sp = sims["receive"].spots.iloc[::4]
    path = tmp_path / "spots.csv"
    write_foreign_csv(sp, path, layout)
    res = ingest.read_spots(path)
    assert res.summary.accepted == len(sp)


@pytest.mark.parametrize("layout", list(LAYOUTS))
def test_duplicates_and_corrupted_rows_are_accounted_for(sims, tmp_path, layout):
    ingest = pytest.importorskip("spotkit.io.ingest")
    sp = sims["receive"].spots.iloc[::4]
    path = tmp_path / "spots.csv"
    mapping, units = write_foreign_csv(sp, path, layout, duplicates=0.01, corrupt=25, seed=3)
    res = ingest.read_spots(path, mapping=mapping, units=units)
    n_dup = int(round(0.01 * len(sp)))
    s = res.summary
    assert s.rows_read == len(sp) + n_dup
    assert s.duplicates == n_dup
    assert s.rejected == 25 and s.accepted == len(sp) - 25
