"""Audit of a finished run against its schedule."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.errors import InputError
from spotkit.plan.audit import audit_schedule
from spotkit.plan.schedule import make_schedule, write_schedule

START = "2026-12-01T00:00Z"


# --- audit -------------------------------------------------------------------------------
P_A, P_B = 37.0, 30.0  # the two antennas run at different powers: the power is the marker


def _in(df, cols, keys) -> np.ndarray:
    """Rows of ``df`` whose (cols) tuple is in the set ``keys``."""
    idx = pd.MultiIndex.from_arrays([df[c].astype(object).to_numpy() for c in cols])
    return np.asarray(idx.isin(list(keys)), dtype=bool)


def _spots_following(schedule, rng, call="Q1ABC", per_slot=(1, 6)):
    """Reports of ``call`` in every scheduled slot, power telling the antenna."""
    n = rng.integers(per_slot[0], per_slot[1] + 1, size=len(schedule))
    rows = schedule.loc[schedule.index.repeat(n)].reset_index(drop=True)
    rx = np.array([f"Q{d}R{c}" for d in range(2, 8) for c in "ABCDEFGH"])
    return pd.DataFrame({
        C.SLOT: rows[C.SCHEDULE_START].astype(C.UTC_DTYPE),
        C.TX_CALL: pd.Categorical([call] * len(rows)),
        C.RX_CALL: rng.choice(rx, size=len(rows)),
        C.BAND: rows[C.BAND].to_numpy(),
        C.SNR: rng.integers(-28, 5, size=len(rows)).astype(float),
        C.POWER: np.where(rows[C.ANTENNA] == "A", P_A, P_B),
    })


def test_audit_of_a_clean_run_finds_nothing(rng):
    s = make_schedule(START, 1, "20m,10m", band_hop=True, seed=4)
    spots = _spots_following(s, rng)
    r = audit_schedule(spots, s, "q1abc")
    assert r.markers == {"A": P_A, "B": P_B}  # inferred from the data
    assert r.summary["slots_ok"] == len(s)
    assert r.summary["gaps"] == r.summary["wrong_antenna"] == 0
    assert r.summary["off_schedule_reports"] == 0
    assert r.summary["hours_one_antenna"] == 0
    assert r.summary["efficiency"] == pytest.approx(1.0)
    # planned effective pairs: half the slots
    assert r.summary["effective_pairs_planned"] == pytest.approx(len(s) / 2)
    assert r.to_frame().empty


def test_audit_finds_every_deliberately_broken_slot(rng, tmp_path):
    s = make_schedule(START, 1, "20m,10m", band_hop=True, seed=9)
    spots = _spots_following(s, rng)
    hour = s[C.SCHEDULE_START].dt.floor("h")
    spare = np.flatnonzero((hour != hour.iloc[0] + pd.Timedelta(hours=5)).to_numpy())
    pick = rng.choice(spare, size=24, replace=False)
    gap_i, wrong_i, ghost_i = pick[:8], pick[8:16], pick[16:]
    # 1. gaps: all reports of 8 slots removed
    SB = [C.SLOT, C.BAND]
    gap_slots = set(zip(s[C.SCHEDULE_START].iloc[gap_i], s[C.BAND].iloc[gap_i], strict=True))
    spots = spots[~_in(spots, SB, gap_slots)].reset_index(drop=True)
    # 2. wrong antenna: 8 slots run at the other antenna's power
    wrong_slots = set(zip(s[C.SCHEDULE_START].iloc[wrong_i], s[C.BAND].iloc[wrong_i], strict=True))
    hit = _in(spots, SB, wrong_slots)
    spots.loc[hit, C.POWER] = np.where(spots.loc[hit, C.POWER] == P_A, P_B, P_A)
    # 3. off schedule: the station heard on the band it was not scheduled on (band hop)
    ghost_slots = set(zip(s[C.SCHEDULE_START].iloc[ghost_i], s[C.BAND].iloc[ghost_i], strict=True))
    ghost = spots[_in(spots, SB, ghost_slots)].copy()
    ghost[C.BAND] = np.where(ghost[C.BAND] == "20m", "10m", "20m")
    #    and after the schedule ended
    late = spots.iloc[:3].copy()
    late[C.SLOT] = pd.Timestamp("2026-12-02T00:10Z")
    # 4. one clock hour x band in which every B slot is silent
    h5 = hour.iloc[0] + pd.Timedelta(hours=5)
    b5 = s[(hour == h5) & (s[C.BAND] == "10m") & (s[C.ANTENNA] == "B")]
    silent = set(zip(b5[C.SCHEDULE_START], b5[C.BAND], strict=True))
    spots = spots[~_in(spots, SB, silent)]
    spots = pd.concat([spots, ghost, late], ignore_index=True)
    spots = spots.sample(frac=1.0, random_state=1).reset_index(drop=True)
    spots[C.BAND] = spots[C.BAND].astype("category")

    path = write_schedule(s, tmp_path / "plan.csv")
    r = audit_schedule(spots, path, "Q1ABC")
    sl = r.slots
    found = lambda status: set(zip(sl.loc[sl["status"] == status, C.SLOT],  # noqa: E731
                                   sl.loc[sl["status"] == status, C.BAND], strict=True))
    assert found("gap") == gap_slots | silent
    assert found("wrong_antenna") == wrong_slots
    assert found("unknown_power") == set()
    assert r.summary["off_schedule_reports"] == len(ghost) + 3
    off = r.off_schedule
    assert set(off.loc[off[C.REJECT_REASON] == "not scheduled", C.SLOT]) == {
        pd.Timestamp("2026-12-02T00:10Z")}
    assert set(zip(off.loc[off[C.REJECT_REASON] != "not scheduled", C.SLOT],
                   off.loc[off[C.REJECT_REASON] != "not scheduled", C.BAND], strict=True)) == set(
        zip(ghost[C.SLOT], ghost[C.BAND].astype(str), strict=True))
    one = r.hours[r.hours["one_antenna"]]
    assert list(zip(one["hour_utc"], one[C.BAND], strict=True)) == [(h5, "10m")]
    # the findings table lists each problem once
    f = r.to_frame()
    assert (f[C.KIND] == "gap").sum() == len(gap_slots | silent)
    assert (f[C.KIND] == "wrong_antenna").sum() == 8
    assert (f[C.KIND] == "one_antenna_hour").sum() == 1
    # cost: effective pairs recomputed by hand from usable slot counts per hour x band
    usable = sl[sl["status"] == "ok"]
    g = usable.groupby([usable[C.SLOT].dt.floor("h"), C.BAND, C.ANTENNA]).size()
    g = g.unstack(C.ANTENNA, fill_value=0)
    want = (2 * g["A"] * g["B"] / (g["A"] + g["B"])).sum()
    assert r.summary["effective_pairs"] == pytest.approx(want)
    assert r.summary["efficiency"] < 1
    # the corrected schedule gives the wrong-antenna slots the antenna the power says
    cs = r.corrected_schedule()
    fixed = cs[_in(cs, [C.SCHEDULE_START, C.BAND], wrong_slots)]
    orig = s.set_index([C.SCHEDULE_START, C.BAND]).loc[list(
        zip(fixed[C.SCHEDULE_START], fixed[C.BAND], strict=True)), C.ANTENNA].to_numpy()
    assert (fixed[C.ANTENNA].to_numpy() != orig).all()
    assert "wrong antenna" in r.text


def test_audit_without_power_markers_says_so(rng):
    s = make_schedule(START, 0.25, "20m", seed=1)
    spots = _spots_following(s, rng).assign(**{C.POWER: 37.0})
    r = audit_schedule(spots, s, "Q1ABC")
    assert r.markers is None and r.summary["wrong_antenna"] == 0
    assert "same power" in r.text
    with pytest.raises(ValueError, match="power, none"):
        audit_schedule(spots, s, "Q1ABC", marker="snr")


def test_audit_unknown_call_lists_calls(rng):
    s = make_schedule(START, 0.25, "20m", seed=1)
    spots = _spots_following(s, rng)
    with pytest.raises(InputError, match="Q1ABC"):
        audit_schedule(spots, s, "Q9ZZZ")


# --- with the simulator and the comparison -------------------------------------------------
def _simulate(schedule, days, seed, **kw):
    from spotkit.sim.simulate import simulate_spots

    opts = dict(bands=("10m",), difference_db=1.0, n_receivers=120)
    opts.update(kw)
    return simulate_spots("alternating", days=days, seed=seed, start="2026-03-02",
                          schedule=schedule, **opts)


def test_audit_finds_mistakes_in_a_simulated_run(rng):
    # the plan says S; the operator ran S' = S with 12 slots on the wrong antenna, marked by
    # power (A 37 dBm, B 30 dBm); 6 more slots lost their reports; some reports sneak onto
    # the band the schedule did not have in that slot (band hop)
    planned = make_schedule("2026-03-02", 0.5, "20m,10m", band_hop=True, seed=21)
    ran = planned.copy()
    flip = rng.choice(len(ran), size=12, replace=False)
    ran.loc[flip, C.ANTENNA] = np.where(ran.loc[flip, C.ANTENNA] == "A", "B", "A")
    sim = _simulate(ran, 0.5, 5, bands=("20m", "10m"), power_a_dbm=37.0, power_b_dbm=30.0)
    spots = sim.spots
    SB = [C.SLOT, C.BAND]
    heard = set(zip(spots[C.SLOT], spots[C.BAND].astype(str), strict=True))
    flipped = set(zip(ran[C.SCHEDULE_START].iloc[flip], ran[C.BAND].iloc[flip], strict=True))
    all_slots = set(zip(planned[C.SCHEDULE_START], planned[C.BAND], strict=True))
    heard_ok = sorted((heard & all_slots) - flipped)
    lose = {heard_ok[i] for i in rng.choice(len(heard_ok), size=6, replace=False)}
    spots = spots[~_in(spots.assign(**{C.BAND: spots[C.BAND].astype(str)}), SB, lose)]
    heard = set(zip(spots[C.SLOT], spots[C.BAND].astype(str), strict=True))
    r = audit_schedule(spots, planned, sim.a)
    sl = r.slots
    found = {st: set(zip(sl.loc[sl["status"] == st, C.SLOT], sl.loc[sl["status"] == st, C.BAND],
                         strict=True))
             for st in ("gap", "wrong_antenna", "unknown_power")}
    assert r.markers == {"A": 37.0, "B": 30.0}
    assert found["wrong_antenna"] == flipped & heard  # every flipped slot that was heard
    assert lose <= found["gap"]
    assert found["gap"] == all_slots - heard  # and the slots nobody heard, nothing else
    assert found["unknown_power"] == set()
    assert r.summary["off_schedule_reports"] == 0
    assert r.summary["efficiency"] < 1


def test_audit_schedule_without_band_column_covers_every_band(rng):
    s = make_schedule(START, 0.25, "20m,10m", seed=2)  # same antenna on both bands
    spots = _spots_following(s, rng)
    one = s[s[C.BAND] == "20m"].drop(columns=C.BAND)  # start, end, antenna only
    r = audit_schedule(spots, one, "Q1ABC")
    assert r.summary["slots_scheduled"] == len(s)
    assert r.summary["slots_ok"] == len(s) and r.summary["off_schedule_reports"] == 0
