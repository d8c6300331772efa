"""Map data (spotkit.viz.mapdata): what the maps show, computed without drawing."""
from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.viz import mapdata


def test_difference_cells_flags_one_sided_and_significance(square_groups):
    groups = square_groups
    cells = mapdata.difference_cells(groups)
    assert cells.attrs["level"] == "square"
    assert cells["significant"].tolist() == [True, False, False, False]
    assert cells["one_sided"].tolist() == ["", "", "only_a", "only_b"]
    # JN58 square centre (Tyson 1989 scheme): 48.5 N, 11 E; cell 2 x 1 deg
    assert cells[C.FAR_LAT].iloc[0] == pytest.approx(48.5)
    assert cells[C.FAR_LON].iloc[0] == pytest.approx(11.0)
    assert cells["cell_dlon"].iloc[0] == 2.0 and cells["cell_dlat"].iloc[0] == 1.0
    assert mapdata.symmetric_limit([2.0, -0.4]) == pytest.approx(2.0)


def test_world_path_samples_lie_on_the_geodesic():
    """Samples of a drawn path are equally spaced along the WGS-84 geodesic from home:
    geographiclib (Karney 2013) as a test-only oracle, 1 mm in distance, 1e-6 deg in
    azimuth."""
    from geographiclib.geodesic import Geodesic

    la, lo = mapdata._geodesic_samples(48.145833, 11.625, np.array([-33.9, 40.7]),
                                       np.array([151.2, -74.0]), 9)
    for k in range(2):
        total = Geodesic.WGS84.Inverse(48.145833, 11.625, la[k, -1], lo[k, -1])
        for i in range(1, 9):
            g = Geodesic.WGS84.Inverse(48.145833, 11.625, la[k, i], lo[k, i])
            assert g["s12"] == pytest.approx(total["s12"] * i / 8, abs=1e-3)
            assert g["azi1"] == pytest.approx(total["azi1"], abs=1e-6)


def test_imports_neither_matplotlib_nor_cartopy():
    # computation never imports plotting (DEVELOPERS.md); checked in a fresh interpreter
    code = ("import sys, spotkit.viz.mapdata; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in "
            "('matplotlib', 'cartopy')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"


# --- per-receiver cells: time blocks within the receiver as clusters (issue 15, item 5) ----
def _receivers_with_block_effects(n_rx=60, days=3, block_hours=6, per_block=40, seed=5):
    """Invented pairs: every receiver's true B - A is 1.0 dB in the long run, but it drifts
    from one 6-hour block to the next (block effect SD 1.0 dB: propagation modes, the
    receiver's conditions) on top of 2 dB of per-pair fading. Both antennas heard
    (limits far below), whole-dB reports."""
    import pandas as pd

    rng = np.random.default_rng(seed)
    n_blocks = int(days * 24 / block_hours)
    t0 = pd.Timestamp("2026-03-02T00:00Z")
    rx = np.repeat([f"Q2R{i:03d}" for i in range(n_rx)], n_blocks * per_block)
    blk = np.tile(np.repeat(np.arange(n_blocks), per_block), n_rx)
    within = np.tile(np.arange(per_block), n_rx * n_blocks)
    slot = t0 + pd.to_timedelta(blk * block_hours * 60 + within * 8, unit="min")
    effect = rng.normal(0.0, 1.0, (n_rx, n_blocks))
    d = 1.0 + effect[np.repeat(np.arange(n_rx), n_blocks * per_block), blk] \
        + rng.normal(0.0, 2.0, rx.size)
    snr_a = np.round(rng.normal(-12.0, 3.0, rx.size))
    return pd.DataFrame({C.CLUSTER: rx, C.FAR_CALL: rx, C.SLOT: slot, C.FAR_LAT: 48.5,
                         C.FAR_LON: 11.0,
                         C.SNR_A: snr_a, C.SNR_B: np.round(snr_a + d),
                         C.LIMIT_A: -60.0, C.LIMIT_B: -60.0})


@pytest.fixture(scope="module")
def drifting_receivers():
    import pandas as pd

    from spotkit.compare.estimate import ComparisonResult, estimate_groups
    from spotkit.compare.grouping import summarise_pairs

    pairs = _receivers_with_block_effects()
    opts = dict(n_boot=200, seed=3, confidence=0.95, min_pairs=30)
    groups = estimate_groups(summarise_pairs(pairs, "receiver"), **opts)
    return ComparisonResult(overall={}, groups=groups, pairs=pairs, design="simultaneous",
                            a="Q1ABC", b="Q1ABD", by=("receiver",),
                            options=dict(opts, missed_reports="fit"),
                            counts=pd.DataFrame())


def test_per_receiver_cells_resample_time_blocks_not_pairs(drifting_receivers):
    """60 receivers x 12 blocks of 6 h, true long-run B - A 1.0 dB each. Resampling a
    receiver's pairs as if independent (the old per-receiver interval) covers the truth
    for about half of them (expected about 49 %: SE 0.10 dB against a real spread of
    0.30 dB); resampling its 12 blocks covers it for most (nominal 95 %, percentile
    bootstrap with 12 clusters somewhat less) and is about three times wider."""
    res = drifting_receivers
    old = res.groups
    cells = mapdata.difference_cells(res, level="receiver")
    w_old = (old[C.CI_HIGH] - old[C.CI_LOW]).to_numpy()
    w_new = (cells[C.CI_HIGH] - cells[C.CI_LOW]).to_numpy()
    cover_old = np.mean((old[C.CI_LOW] <= 1.0) & (1.0 <= old[C.CI_HIGH]))
    cover_new = np.mean((cells[C.CI_LOW] <= 1.0) & (1.0 <= cells[C.CI_HIGH]))
    assert cover_new >= 0.82, cover_new
    assert np.median(w_new / w_old) > 2.0
    assert cover_old < 0.70
    assert (old[C.CLUSTERS] == 1).all()
    assert cells.attrs["block_hours"] == 6.0
    assert (cells[C.CLUSTERS] == 12).all()
    assert cells[C.B_MINUS_A].to_numpy() == pytest.approx(old[C.B_MINUS_A].to_numpy(),
                                                          abs=1e-9)
    # the cells' method says what was resampled
    assert "6-h blocks of a receiver" in cells[C.METHOD].iloc[0]


def test_single_block_receivers_are_never_significant(drifting_receivers):
    """One block per receiver (a 6-hour run) leaves one cluster: no cell may be marked
    significant, however narrow its pair-resampled interval."""
    res = drifting_receivers
    cells = mapdata.difference_cells(res, level="receiver", block_hours=72)
    assert (cells[C.CLUSTERS] == 1).all()
    assert not cells["significant"].any()
    # and the old behaviour, kept on request, marks nearly all of them
    kept = mapdata.difference_cells(res, level="receiver", block_hours=None)
    assert kept.attrs["block_hours"] is None
    assert kept["significant"].mean() == 0  # one cluster each: too little data
