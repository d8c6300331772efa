"""Switching schedules: balance, blocks, seeds, bad arguments, the CSV file."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.compare.pairing import read_schedule, schedule_antennas
from spotkit.errors import UsageError
from spotkit.plan.schedule import make_schedule, schedule_balance, write_schedule

START = "2026-12-01T00:00Z"


# --- schedules ---------------------------------------------------------------------------
@pytest.mark.parametrize("band_hop", [False, True])
@pytest.mark.parametrize("block_slots", [2, 4, 6])
@pytest.mark.parametrize("bands", [["20m"], ["20m", "10m"], ["40m", "20m", "10m"]])
def test_schedule_is_balanced_per_hour_band_antenna(bands, block_slots, band_hop):
    s = make_schedule(START, 2, bands, block_slots=block_slots, band_hop=band_hop, seed=3)
    bal = schedule_balance(s)
    # exact: every antenna has the same number of slots in every clock hour and band
    assert (bal["A"] == bal["B"]).all()
    assert (bal["A"] > 0).all()
    hours = pd.to_datetime(s[C.SCHEDULE_START]).dt.floor("h")
    assert hours.nunique() == 48
    assert set(s[C.BAND]) == set(bands)
    # every band appears in every clock hour
    assert len(bal) == 48 * len(bands)
    if band_hop:  # one transmitter: one row per slot, slots back to back
        assert len(s) == 48 * 30
        assert not s[C.SCHEDULE_START].duplicated().any()
    else:  # every band in every slot, same antenna on all bands
        assert len(s) == 48 * 30 * len(bands)
        assert (s.groupby(C.SCHEDULE_START)[C.ANTENNA].nunique() == 1).all()
    step = (s[C.SCHEDULE_END] - s[C.SCHEDULE_START]).unique()
    assert list(step) == [pd.Timedelta(minutes=2)]
    # slots start on even UTC minutes (common practice for the 2-minute beacon modes)
    assert (s[C.SCHEDULE_START].dt.minute % 2 == 0).all()


def test_blocks_of_two_keep_a_and_b_next_to_each_other():
    s = make_schedule(START, 1, ["20m", "10m"], block_slots=2, band_hop=True, seed=5)
    # in band-hop mode each block is one band: slots 2k and 2k+1 share a band and differ
    # in antenna
    ant = s[C.ANTENNA].to_numpy().reshape(-1, 2)
    band = s[C.BAND].to_numpy().reshape(-1, 2)
    assert (band[:, 0] == band[:, 1]).all()
    assert (ant[:, 0] != ant[:, 1]).all()
    # and the order inside the blocks is random: both orders occur often
    first_a = (ant[:, 0] == "A").mean()
    assert 0.35 < first_a < 0.65


def test_schedule_reproducible_from_seed_and_seed_matters():
    a = make_schedule(START, 1, "20m,10m", band_hop=True, seed=11)
    b = make_schedule(START, 1, "20m,10m", band_hop=True, seed=11)
    c = make_schedule(START, 1, "20m,10m", band_hop=True, seed=12)
    pd.testing.assert_frame_equal(a, b)
    assert not a[C.ANTENNA].equals(c[C.ANTENNA])
    assert not a[C.BAND].equals(c[C.BAND])
    # a different seed changes the order, not the balance
    assert (schedule_balance(c)["A"] == schedule_balance(c)["B"]).all()


@pytest.mark.parametrize("kwargs", [
    dict(start="2026-12-01T00:10Z"),        # not on the hour
    dict(block_slots=3),                     # odd block
    dict(block_slots=0),
    dict(slot_minutes=4),                    # 15 slots per hour: cannot balance an hour
    dict(days=0),
    dict(days=0.01),                          # not whole hours
    dict(bands="20m,11m"),                    # unknown band
    dict(bands="20m,20m"),
])
def test_schedule_bad_arguments(kwargs):
    args = dict(start=START, days=1, bands="20m")
    args.update(kwargs)
    with pytest.raises(UsageError):
        make_schedule(args.pop("start"), args.pop("days"), args.pop("bands"), **args)


def test_schedule_csv_is_read_back_by_compare(tmp_path):
    s = make_schedule(START, 1, "20m,10m", band_hop=True, seed=2)
    path = write_schedule(s, tmp_path / "schedule.csv")
    back = read_schedule(path)  # the reader `spotkit compare --schedule FILE` uses
    assert len(back) == len(s)
    assert (back[C.SCHEDULE_START].to_numpy() == s[C.SCHEDULE_START].to_numpy()).all()
    assert (back[C.SCHEDULE_END].to_numpy() == s[C.SCHEDULE_END].to_numpy()).all()
    assert (back[C.ANTENNA].to_numpy() == s[C.ANTENNA].to_numpy()).all()
    assert (back[C.BAND].to_numpy() == s[C.BAND].to_numpy()).all()
    # and compare assigns every scheduled slot the planned antenna (mid-slot times too)
    mid = s[C.SCHEDULE_START] + pd.Timedelta(seconds=30)
    code = schedule_antennas(mid, s[C.BAND], str(path))
    assert (code == (s[C.ANTENNA] == "B").to_numpy().astype(int)).all()
    # a band the schedule does not have in that slot is not covered
    other = np.where(s[C.BAND] == "20m", "10m", "20m")
    assert (schedule_antennas(s[C.SCHEDULE_START], other, str(path)) == -1).all()


# --- several antennas -------------------------------------------------------------------------
def test_schedule_three_antennas_balanced_and_read_back(tmp_path):
    from spotkit.compare.pairing import read_schedule, schedule_antennas
    from spotkit.plan.schedule import make_schedule, schedule_balance, write_schedule

    # 30 slots per hour, blocks of 3: each antenna exactly 10 per hour (3 divides 30)
    sched = make_schedule("2026-03-02", days=2 / 24, bands="20m", antennas="A,B,C", seed=4)
    bal = schedule_balance(sched)
    assert list(bal.columns) == ["A", "B", "C"]
    assert (bal.to_numpy() == 10).all()
    # every block of three consecutive slots holds each antenna once
    blocks = sched["antenna"].to_numpy().reshape(-1, 3)
    assert all(sorted(b) == ["A", "B", "C"] for b in blocks)
    path = write_schedule(sched, tmp_path / "abc.csv")
    back = read_schedule(path, antennas="ABC")
    assert back["antenna"].tolist() == sched["antenna"].tolist()
    codes = schedule_antennas(sched["start"], sched["band"], path, antennas=["A", "B", "C"])
    assert codes.tolist() == sched["antenna"].map({"A": 0, "B": 1, "C": 2}).tolist()


def test_schedule_labels_checked():
    import pytest

    from spotkit.compare.pairing import read_schedule
    from spotkit.errors import InputError, UsageError
    from spotkit.plan.schedule import make_schedule

    with pytest.raises(UsageError, match="multiple of the 3"):
        make_schedule("2026-03-02", days=1 / 24, bands="20m", antennas="A,B,C", block_slots=4)
    table = make_schedule("2026-03-02", days=1 / 24, bands="20m", antennas="A,B,C")
    with pytest.raises(InputError, match="expected A or B"):
        read_schedule(table)  # a two-antenna reader refuses label C, naming row and field
