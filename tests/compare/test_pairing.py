"""Tests of spotkit.compare.pairing: designs -> pairs, censoring limits, schedules, group keys."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.compare.grouping import add_group_keys, merge_summaries, parse_by, summarise_pairs
from spotkit.compare.pairing import (
    pair_spots,
    read_schedule,
    receiver_thresholds,
    schedule_antennas,
)
from spotkit.errors import InputError, NoPairsError, SpotkitWarning, UsageError
from spotkit.geo.geodesic import add_path_columns

T0 = pd.Timestamp("2026-03-02T00:00Z")


def make_spots(rows):
    """Canonical enriched table from (slot index, tx, tx_loc, rx, rx_loc, band, snr, power)."""
    df = pd.DataFrame(rows, columns=["i", C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR,
                                     C.BAND, C.SNR, C.POWER])
    df[C.SLOT] = T0 + pd.to_timedelta(df.pop("i") * 2, unit="min")
    df[C.TIME] = df[C.SLOT]
    df[C.FREQ] = np.where(df[C.BAND] == "20m", 14.0971e6, 28.1261e6)
    df[C.DRIFT] = 0.0
    df[C.SNR] = df[C.SNR].astype(float)
    df[C.POWER] = df[C.POWER].astype(float)
    df = add_path_columns(df)
    df[C.SOURCE_FILE] = "test"
    df[C.SOURCE_ROW] = np.arange(1, len(df) + 1)
    return C.apply_dtypes(df[C.CANONICAL])


@pytest.fixture
def simultaneous():
    return make_spots([
        (0, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -10, 37),
        (0, "Q1BBB", "JN58", "Q2RX", "IO91", "20m", -12, 30),
        (0, "Q1AAA", "JN58", "Q3RX", "FN31", "20m", -20, 37),   # only A, B on air (Q2RX)
        (1, "Q1BBB", "JN58", "Q3RX", "FN31", "20m", -25, 30),   # only B, A off the air
        (2, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -28, 37),
        (2, "Q1BBB", "JN58", "Q3RX", "FN31", "20m", -27, 30),   # only B, A on the air
        (2, "Q9CTL", "JN58", "Q3RX", "FN31", "20m", -29, 30),   # Q3RX's lowest report
    ])


def test_simultaneous_pairs_values_and_limits(simultaneous):
    # the limits' arithmetic with the lowest-report thresholds (a handful of reports)
    p = pair_spots(simultaneous, "simultaneous", "Q1AAA", "q1bbb", threshold_method="lowest")
    assert len(p) == 4
    assert p.attrs["set_aside"] == {"only B heard and A not on the air in that slot": 1}
    p = p.set_index([C.CLUSTER, C.SLOT]).sort_index()
    both = p.loc[("Q2RX", T0)]
    # per-W normalisation (units.snr_per_watt): -10 dB at 37 dBm -> -17 dB per W
    assert both[C.SNR_A] == -17.0 and both[C.SNR_B] == -12.0
    only_a = p.loc[("Q3RX", T0)]
    assert only_a[C.HEARD_A] and not only_a[C.HEARD_B]
    # Q3RX threshold = its lowest report (-29 dB); B ran 30 dBm -> limit -29 dB per W
    assert only_a[C.LIMIT_B] == -29.0
    only_b = p.loc[("Q3RX", T0 + pd.Timedelta(minutes=4))]
    # A ran 37 dBm in that slot -> A's limit on the per-W scale is -29 - 7 = -36 dB
    assert only_b[C.LIMIT_A] == -36.0 and only_b[C.SNR_B] == -27.0
    assert both[C.FAR_CALL] == "Q2RX" and both[C.FAR_LOCATOR] == "IO91"
    assert both[C.BEARING] == pytest.approx(simultaneous[C.BEARING].iloc[0])


def test_receive_design_clusters_are_transmitters():
    s = make_spots([
        (0, "Q5TX", "FN31", "Q1RXA", "JN58", "20m", -15, 37),
        (0, "Q5TX", "FN31", "Q1RXB", "JN58", "20m", -13, 37),
        (0, "Q6TX", "PM95", "Q1RXA", "JN58", "20m", -22, 23),   # only A; B on air (Q5TX)
        (1, "Q6TX", "PM95", "Q1RXB", "JN58", "20m", -20, 23),   # only B; A off the air
        (3, "Q6TX", "PM95", "Q1RXB", "JN58", "20m", -27, 23),
        (3, "Q5TX", "FN31", "Q1RXA", "JN58", "20m", -24, 37),
    ])
    p = pair_spots(s, "receive", "Q1RXA", "Q1RXB", threshold_method="lowest")
    assert set(p[C.CLUSTER]) == {"Q5TX", "Q6TX"}
    assert len(p) == 4
    row = p[(p[C.CLUSTER] == "Q6TX") & p[C.HEARD_A]].iloc[0]
    # B's threshold -27 dB (its lowest report), transmitter at 23 dBm -> -27 + 7 = -20 dB
    assert row[C.LIMIT_B] == -20.0
    # bearing is the azimuth at the receivers towards the transmitter
    assert row[C.BEARING] == pytest.approx(
        s.loc[s[C.TX_CALL] == "Q6TX", C.REVERSE_BEARING].iloc[0])


def test_unknown_call_lists_calls_present(simultaneous):
    with pytest.raises(InputError, match=r"Q1XYZ.*Q1AAA.*Q1BBB|Q1XYZ.*Q1BBB.*Q1AAA"):
        pair_spots(simultaneous, "simultaneous", "Q1XYZ", "Q1BBB")
    with pytest.raises(InputError, match="receiver call"):
        pair_spots(simultaneous, "receive", "Q1AAA", "Q1BBB")


def test_bad_arguments(simultaneous):
    with pytest.raises(ValueError, match="valid: simultaneous, alternating"):
        pair_spots(simultaneous, "sideways", "Q1AAA", "Q1BBB")
    with pytest.raises(UsageError, match="two different"):
        pair_spots(simultaneous, "simultaneous", "Q1AAA", "Q1AAA")
    with pytest.raises(InputError, match="lacks column"):
        pair_spots(simultaneous.drop(columns=[C.DISTANCE]), "simultaneous", "Q1AAA",
                   "Q1BBB")
    with pytest.raises(UsageError, match="needs a schedule"):
        pair_spots(simultaneous, "alternating", "Q1AAA")
    with pytest.raises(UsageError, match="change_at"):
        pair_spots(simultaneous, "before-after", "Q1AAA")
    with pytest.raises(ValueError, match="valid: band, distance"):
        parse_by("band,colour")


def test_no_pairs_is_a_clear_error():
    s = make_spots([(0, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -10, 37),
                    (1, "Q1BBB", "JN58", "Q2RX", "IO91", "20m", -12, 30)])
    with pytest.raises(NoPairsError, match="no pairs"):
        pair_spots(s, "simultaneous", "Q1AAA", "Q1BBB")


def test_thresholds_and_sparse_receivers():
    rows = [(i, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -28 + (i % 7), 37) for i in range(30)]
    rows += [(0, "Q1AAA", "JN58", "Q4RX", "KP20", "20m", -5, 37)]  # one strong report
    thr = receiver_thresholds(make_spots(rows), min_reports=20, method="lowest")
    assert thr["Q2RX"] == -28.0
    # a receiver with one report gets the typical threshold, not its single -5 dB report
    assert thr["Q4RX"] == -28.0


def test_t50_thresholds_sit_above_the_lowest_report(rng):
    # a receiver decoding with a soft curve (50 % at -26 dB, width 1 dB) over 1,500 signals
    # spread 8 dB: its lowest report is about 2 dB below -26, the fitted 50 % point within
    # 0.5 dB of it; the detection model travels in attrs with its alternatives
    from scipy import stats as sps

    s = rng.normal(-22.0, 8.0, 5000)
    v = np.round(s[rng.random(s.size) < sps.norm.cdf((s + 26.0) / 1.0)])[:1500]
    spots = pd.DataFrame({"rx_call": "Q2RX", "snr_db": v})
    thr = receiver_thresholds(spots, tau_db=1.0)
    assert v.min() <= -27.0
    assert thr["Q2RX"] == pytest.approx(-26.0, abs=0.5)
    det = thr.attrs["detection"]
    assert det["tau_db"] == 1.0 and det["whole_db"] and not det["tau_fitted"]
    labels = [a["label"] for a in det["alternatives"]]
    assert "rounding before the threshold" in labels and len(labels) == 5
    assert receiver_thresholds(spots, method="lowest")["Q2RX"] == v.min()
    with pytest.raises(UsageError, match="t50, lowest"):
        receiver_thresholds(spots, method="median")


def test_pairs_carry_the_detection_model():
    rows = [(i, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -28 + (i % 9), 37) for i in range(40)]
    rows += [(i, "Q1BBB", "JN58", "Q2RX", "IO91", "20m", -25 + (i % 9), 37) for i in range(40)]
    pairs = pair_spots(make_spots(rows), "simultaneous", "Q1AAA", "Q1BBB")
    det = pairs.attrs["detection"]
    assert det["method"] == "t50" and det["whole_db"]
    # a flat histogram from -28 dB up: a sharp edge, the 50 % point within 0.5 dB below
    # the lowest report (-28 dB, per W -35 dB) - the raw threshold lies between -28.5 and
    # -28 when a whole-dB report of -28 is the lowest
    assert (pairs["limit_a_db"] != -35.0).all()
    assert np.allclose(pairs["limit_a_db"], -35.25, atol=0.26)
    old = pair_spots(make_spots(rows), "simultaneous", "Q1AAA", "Q1BBB",
                     threshold_method="lowest")
    assert (old["limit_a_db"] == -35.0).all() and old.attrs["detection"] is None


def test_even_odd_schedule_and_every_n():
    slots = T0 + pd.to_timedelta(np.arange(8) * 2, unit="min")
    ant = schedule_antennas(slots, ["20m"] * 8, "even-odd")
    np.testing.assert_array_equal(ant, [0, 1, 0, 1, 0, 1, 0, 1])
    np.testing.assert_array_equal(schedule_antennas(slots, ["20m"] * 8, "odd-even"),
                                  1 - ant)
    np.testing.assert_array_equal(schedule_antennas(slots, ["20m"] * 8, "every-3"),
                                  [0, 0, 0, 1, 1, 1, 0, 0])
    with pytest.raises(UsageError, match="even-odd, odd-even, every-N"):
        schedule_antennas(slots, ["20m"] * 8, "sometimes")


def test_schedule_csv_round_trip_and_errors(tmp_path):
    f = tmp_path / "sched.csv"
    f.write_text("start,end,band,antenna\n"
                 "2026-03-02T00:00Z,2026-03-02T00:04Z,20m,A\n"
                 "2026-03-02T00:04Z,2026-03-02T00:08Z,20m,B\n")
    table = read_schedule(f)
    assert list(table[C.ANTENNA]) == ["A", "B"]
    slots = T0 + pd.to_timedelta(np.arange(5) * 2, unit="min")
    np.testing.assert_array_equal(schedule_antennas(slots, ["20m"] * 5, str(f)),
                                  [0, 0, 1, 1, -1])
    np.testing.assert_array_equal(schedule_antennas(slots, ["10m"] * 5, str(f)), [-1] * 5)
    bad = tmp_path / "bad.csv"
    bad.write_text("start,end,antenna\n2026-03-02T00:00Z,2026-03-02T00:04Z,C\n")
    with pytest.raises(InputError, match="row 1, field antenna"):
        read_schedule(bad)


def alternating_spots():
    rows = []
    for i in range(6):  # even slots: A (37 dBm), odd: B (30 dBm)
        snr = -10 if i % 2 == 0 else -14
        rows.append((i, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", snr, 37 if i % 2 == 0 else 30))
    rows.append((4, "Q1AAA", "JN58", "Q3RX", "FN31", "20m", -20, 37))  # B missed at 5
    rows.append((7, "Q1AAA", "JN58", "Q3RX", "FN31", "20m", -29, 30))  # B, no A at 6
    return make_spots(rows)


def test_alternating_pairs_neighbouring_slots():
    p = pair_spots(alternating_spots(), "alternating", "Q1AAA", "Q1AAA", schedule="even-odd",
                   require_open_path=False)
    q2 = p[p[C.CLUSTER] == "Q2RX"]
    assert len(q2) == 3
    np.testing.assert_array_equal((q2[C.SLOT_B] - q2[C.SLOT]).dt.total_seconds(), 120)
    np.testing.assert_allclose(q2[C.SNR_B] - q2[C.SNR_A], (-14 - 0) - (-10 - 7))
    q3 = p[p[C.CLUSTER] == "Q3RX"]
    assert len(q3) == 1 and q3[C.HEARD_A].all() and not q3[C.HEARD_B].any()
    # slot 7 (B) has no on-air A slot within one slot: set aside, not silently dropped
    assert sum(p.attrs["set_aside"].values()) == 1
    # with the open-path check only Q2RX's middle pair (slots 2, 3) has reports of the call
    # in the slots around it (1 and 4)
    p = pair_spots(alternating_spots(), "alternating", "Q1AAA", schedule="even-odd")
    assert list(p[C.SLOT].dt.minute) == [4]
    assert p.attrs["set_aside"]["alternating pair without reports in the slots around it"] \
        == 3


def test_alternating_schedule_not_covering_the_data(tmp_path):
    f = tmp_path / "late.csv"
    f.write_text("start,end,antenna\n2027-01-01T00:00Z,2027-01-01T01:00Z,A\n")
    with pytest.raises(InputError, match="does not cover the data"):
        pair_spots(alternating_spots(), "alternating", "Q1AAA", schedule=str(f))
    part = tmp_path / "part.csv"
    part.write_text("start,end,antenna\n2026-03-02T00:00Z,2026-03-02T00:02Z,A\n"
                    "2026-03-02T00:02Z,2026-03-02T00:04Z,B\n")
    with pytest.warns(SpotkitWarning, match="outside the schedule"):
        p = pair_spots(alternating_spots(), "alternating", "Q1AAA", schedule=str(part),
                       require_open_path=False)
    assert p.attrs["set_aside"]["slot not covered by the schedule"] == 6


def test_before_after_relative_to_control():
    rows = []
    for i in range(4):
        rows.append((i, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -10 + 3 * (i >= 2), 37))
        rows.append((i, "Q7CTL", "JN59", "Q2RX", "IO91", "20m", -15, 30))
        rows.append((i, "Q7CTM", "JN57", "Q2RX", "IO91", "20m", -17, 30))
    p = pair_spots(make_spots(rows), "before-after", "Q1AAA",
                   change_at="2026-03-02T00:04Z")
    assert list(p[C.KIND]) == ["before", "before", "after", "after"]
    # target -17 dB per W minus control mean -16 dB = -1 dB before; +2 dB after
    np.testing.assert_allclose(p[C.SNR_A].dropna(), [-1.0, -1.0])
    np.testing.assert_allclose(p[C.SNR_B].dropna(), [2.0, 2.0])
    with pytest.raises(NoPairsError, match="4 usable reports before and 0 after"):
        pair_spots(make_spots(rows), "before-after", "Q1AAA", change_at="2027-01-01")


def test_before_after_target_on_the_air_but_not_heard_is_a_bound():
    # Q2RX hears the target in slots 0 and 3 and the control in 0-3; in slots 1-2 the
    # target is on the air (Q3RX hears it) but Q2RX does not: upper bounds of the relative
    # SNR at threshold - (power - 30) - control. Q2RX's threshold is its lowest report,
    # -25 dB; target 37 dBm, control -16 dB per W -> -25 - 7 + 16 = -16 dB (exact)
    rows = [(0, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -10, 37),
            (3, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -7, 37),
            (1, "Q1AAA", "JN58", "Q3RX", "FN31", "20m", -20, 37),
            (2, "Q1AAA", "JN58", "Q3RX", "FN31", "20m", -21, 37)]
    for i in range(4):
        rows.append((i, "Q7CTL", "JN59", "Q2RX", "IO91", "20m", -14, 30))
        rows.append((i, "Q7CTM", "JN57", "Q2RX", "IO91", "20m", -18, 30))
    rows.append((0, "Q7CTL", "JN59", "Q2RX", "IO91", "40m", -25, 30))  # lowest report
    p = pair_spots(make_spots(rows), "before-after", "Q1AAA", threshold_method="lowest",
                   change_at="2026-03-02T00:04Z")
    p = p[p[C.CLUSTER] == "Q2RX"].sort_values(C.SLOT)
    assert list(p[C.KIND]) == ["before", "before", "after", "after"]
    assert list(p[C.HEARD_A] | p[C.HEARD_B]) == [True, False, False, True]
    assert p[C.LIMIT_A].iloc[1] == -16.0 and np.isnan(p[C.SNR_A].iloc[1])
    assert p[C.LIMIT_B].iloc[2] == -16.0 and np.isnan(p[C.SNR_B].iloc[2])
    assert p[C.DISTANCE].nunique() == 1  # geometry of the censored rows from Q2RX's path
    counts = summarise_pairs(p, ())
    got = dict(zip(counts[C.KIND].astype(str), counts[C.VALUE], strict=True))
    # heard: -17 - (-16) = -1 dB before; -14 + 16 = +2 dB after
    assert got == {"before": -1.0, "after": 2.0, "before_below": -16.0,
                   "after_below": -16.0}
    assert set(counts[C.KIND].astype(str)) == set(C.PERIOD_KINDS + C.PERIOD_BOUND_KINDS)


def test_before_after_summary_keeps_the_day_block():
    # slots 0 and 1 on 2 March, slots 720 and 1080 (2 min each: 00:00 and 12:00 UTC) on
    # 3 March; the change at 00:00 on 3 March
    rows = []
    for i in (0, 1, 720, 1080):
        rows.append((i, "Q1AAA", "JN58", "Q2RX", "IO91", "20m", -10, 37))
        rows.append((i, "Q7CTL", "JN59", "Q2RX", "IO91", "20m", -15, 30))
    p = pair_spots(make_spots(rows), "before-after", "Q1AAA",
                   change_at="2026-03-03T00:00Z")
    day = pd.Timedelta(days=1)
    counts = summarise_pairs(p, ())
    assert list(counts.columns) == [C.SLOT, C.CLUSTER, C.KIND, C.VALUE, C.COUNT]
    assert list(counts[C.SLOT]) == [T0, T0 + day]  # UTC dates (default 24 h blocks)
    assert list(counts[C.COUNT]) == [2, 2]
    half = summarise_pairs(p, (), day_hours=12)
    assert list(half[C.SLOT]) == [T0, T0 + day, T0 + 1.5 * day]
    assert list(half[C.COUNT]) == [2, 1, 1]
    # mergeable: the two halves of the pairs sum to the whole
    merged = merge_summaries([summarise_pairs(p.iloc[:2], ()), summarise_pairs(p.iloc[2:], ())])
    pd.testing.assert_frame_equal(merged, counts.reset_index(drop=True), check_dtype=False)
    with pytest.raises(UsageError, match="day_hours"):
        summarise_pairs(p, (), day_hours=0)


def test_group_keys(simultaneous):
    p = pair_spots(simultaneous, "simultaneous", "Q1AAA", "Q1BBB")
    g = add_group_keys(p, "band,distance,bearing,hour,field,square,elevation",
                       distance_edges=(0, 3000, 20100), bearing_width_deg=90)
    io91 = g[g[C.FAR_LOCATOR] == "IO91"].iloc[0]
    # JN58 -> IO91 is about 970 km towards the west-north-west (geodesic, WGS-84)
    assert (io91[C.DISTANCE_MIN], io91[C.DISTANCE_MAX]) == (0.0, 3000.0)
    assert (io91[C.BEARING_MIN], io91[C.BEARING_MAX]) == (270.0, 360.0)
    assert io91[C.FIELD] == "IO" and io91[C.SQUARE] == "IO91"
    assert io91[C.HOUR] == 0
    assert 0 <= io91[C.ELEVATION_MIN] < io91[C.ELEVATION_MAX]
    loc = add_group_keys(p, "hour", hour="local")
    # path midpoint near 6 deg E: local mean solar time = UTC + lon/15 h -> still hour 0
    assert loc.loc[p[C.FAR_LOCATOR] == "IO91", C.HOUR].iloc[0] == 0
    fn31 = loc[loc[C.FAR_LOCATOR] == "FN31"].iloc[0]
    assert fn31[C.HOUR] == int(np.floor((1 / 60 + fn31[C.MID_LON] / 15) % 24))
    with pytest.raises(UsageError, match="divide 360"):
        add_group_keys(p, "bearing", bearing_width_deg=50)


def test_summary_kinds_values_and_merge(simultaneous):
    p = pair_spots(simultaneous, "simultaneous", "Q1AAA", "Q1BBB", threshold_method="lowest")
    s = summarise_pairs(p, "band")
    assert set(s[C.KIND].astype(str)) == {"both", "only_a", "only_b", "edge_a"}
    # edge rows: Q2RX heard A at -28 dB, its own lowest report (its threshold)
    edge = s[s[C.KIND].astype(str) == "edge_a"]
    assert list(edge[C.CLUSTER].astype(str)) == ["Q2RX"] and edge[C.COUNT].sum() == 1
    s = s[s[C.KIND].astype(str).isin(C.KINDS)]
    v = s.set_index([s[C.CLUSTER], s[C.KIND].astype(str)])[C.VALUE]
    assert v[("Q2RX", "both")] == 5.0            # -12 - (-17)
    assert v[("Q3RX", "only_a")] == -29.0 + 27.0  # LIMIT_B - SNR_A (an upper bound of B - A)
    assert v[("Q3RX", "only_b")] == -27.0 + 36.0  # SNR_B - LIMIT_A (a lower bound)
    assert s[C.COUNT].sum() == len(p)
    half = merge_summaries([summarise_pairs(p.iloc[:2], "band"),
                            summarise_pairs(p.iloc[2:], "band")])
    whole = summarise_pairs(p, "band")
    pd.testing.assert_frame_equal(half.reset_index(drop=True),
                                  whole[half.columns].reset_index(drop=True),
                                  check_dtype=False, check_categorical=False)


def test_light_key_from_sun(simultaneous):
    p = pair_spots(simultaneous, "simultaneous", "Q1AAA", "Q1BBB")
    g = add_group_keys(p, "light")
    # 2 March, 00:00-00:06 UTC: Europe and the US east coast are in darkness
    # (solar elevation well below -6 deg; common knowledge of the terminator)
    assert set(g[C.PATH_LIGHT].astype(str)) == {"night"}
