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


# --- issue 16 -----------------------------------------------------------------------------
def test_near_radius_holds_at_least_the_share_of_pairs():
    """Over random distance sets the chosen radius holds at least half the pairs (weighted),
    is one of the round radii, and is refused (None) when it would not zoom in."""
    rng = np.random.default_rng(5)
    for _ in range(200):
        d = np.concatenate([rng.gamma(2.0, 300.0, rng.integers(1, 80)),
                            rng.uniform(3000, 19000, rng.integers(0, 40))])
        w = rng.integers(1, 500, d.size).astype(float)
        r = mapdata.near_radius_km(d, w)
        if r is None:
            # refused only when the round radius holding half the pairs would not zoom in
            order = np.argsort(d)
            q = d[order][np.searchsorted(np.cumsum(w[order]) / w.sum(), 0.5)]
            fit = [x for x in mapdata.NEAR_RADII_KM if x >= q]
            assert not fit or fit[0] > 0.4 * d.max()
            continue
        assert r in mapdata.NEAR_RADII_KM
        assert w[d <= r].sum() >= 0.5 * w.sum()
        assert r <= 0.4 * d.max()
    assert mapdata.near_radius_km([]) is None
    assert mapdata.near_radius_km([np.nan, 500.0], [1.0, 1.0], whole_km=20000.0) == 500.0


@pytest.mark.parametrize("home, warns", [
    ("JP62qm", True),    # O -> P: 10 deg of latitude north, the example
    ("JO82qm", True),    # two squares east
    ("IO62qm", True),    # a field west
    ("JO62qn", False),   # the neighbouring subsquare
    ("JO72qm", False),   # the neighbouring square
    ("JO61qm", False),
    ((52.52, 13.37), False),
])
def test_check_home_warns_beyond_one_square(home, warns):
    import warnings

    from spotkit.errors import SpotkitWarning

    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        d = mapdata.check_home(home, "JO62qm")
    notes = [w for w in seen if issubclass(w.category, SpotkitWarning)]
    assert bool(notes) == warns
    if warns:
        text = str(notes[0].message)
        assert text.startswith(f"--home {home} is") and "JO62qm" in text
    # the distance against geographiclib (Karney 2013) between the two cell centres, 1 m
    from geographiclib.geodesic import Geodesic

    a = mapdata.home_latlon(home)
    b = mapdata.home_latlon("JO62qm")
    s12 = Geodesic.WGS84.Inverse(a[0], a[1], b[0], b[1])["s12"] / 1e3
    assert d == pytest.approx(s12, abs=1e-3)


def test_check_home_leaves_a_bad_data_locator_to_the_reader():
    assert np.isnan(mapdata.check_home("JO62qm", "ZZ99"))


def test_antenna_spots_by_design():
    import pandas as pd

    slots = pd.to_datetime(["2026-03-02 10:00", "2026-03-02 10:02", "2026-03-02 10:04",
                            "2026-03-03 10:00"], utc=True)
    spots = pd.DataFrame({C.SLOT: slots, C.BAND: ["20m"] * 4,
                          C.TX_CALL: ["Q1ABC", "Q1ABC", "Q1ABD", "Q1ABC"],
                          C.RX_CALL: ["Q2XY", "Q3Z", "Q2XY", "Q2XY"]})
    sim = mapdata.antenna_spots(spots, "simultaneous", "Q1ABC", "q1abd")
    assert len(sim["A"]) == 3 and len(sim["B"]) == 1
    rec = mapdata.antenna_spots(spots, "receive", "Q2XY", "Q3Z")
    assert len(rec["A"]) == 3 and len(rec["B"]) == 1
    # even-odd: 10:00 and 10:04 are even slots (A), 10:02 odd (B); Q1ABD is not A's call
    alt = mapdata.antenna_spots(spots, "alternating", "Q1ABC", schedule="even-odd")
    assert alt["A"][C.SLOT].tolist() == [slots[0], slots[3]]
    assert alt["B"][C.SLOT].tolist() == [slots[1]]
    ba = mapdata.antenna_spots(spots, "before-after", "Q1ABC", change_at="2026-03-03T00:00Z")
    assert len(ba["A"]) == 2 and len(ba["B"]) == 1
    from spotkit.errors import UsageError

    with pytest.raises(UsageError, match="--b"):
        mapdata.antenna_spots(spots, "simultaneous", "Q1ABC")
    with pytest.raises(UsageError, match="--schedule"):
        mapdata.antenna_spots(spots, "alternating", "Q1ABC")
    with pytest.raises(UsageError, match="--change-at"):
        mapdata.antenna_spots(spots, "before-after", "Q1ABC")


def test_result_antenna_spots_follows_the_comparison_or_pools():
    """The report's coverage sets come from the comparison's design, calls and change time;
    a schedule given as a table cannot be applied again, so those spots are pooled (None)."""
    from types import SimpleNamespace

    import pandas as pd

    spots = pd.DataFrame({
        C.TX_CALL: ["Q1ABC", "Q1ABD", "Q1ABC", "Q1ABC"],
        C.RX_CALL: ["Q2XY", "Q2XY", "Q3Z", "Q3Z"],
        C.SLOT: pd.to_datetime(["2026-03-01 00:00", "2026-03-01 00:00", "2026-03-01 00:02",
                                "2026-03-03 00:00"], utc=True)})
    sim = SimpleNamespace(design="simultaneous", a="Q1ABC", b="Q1ABD", options={})
    assert {k: len(v) for k, v in mapdata.result_antenna_spots(spots, sim).items()} == {
        "A": 3, "B": 1}
    ba = SimpleNamespace(design="before-after", a="Q1ABC", b=None,
                         options={"change_at": "2026-03-02 00:00"})
    assert {k: len(v) for k, v in mapdata.result_antenna_spots(spots, ba).items()} == {
        "A": 2, "B": 1}
    table = SimpleNamespace(design="alternating", a="Q1ABC", b=None,
                            options={"schedule": "table"})
    assert mapdata.result_antenna_spots(spots, table) is None
    one_sided = SimpleNamespace(design="simultaneous", a="Q1ABC", b="Q9ZZZ", options={})
    assert mapdata.result_antenna_spots(spots, one_sided) is None
