"""The invented layouts of files users have (spotkit.sim.layouts.USER_LAYOUTS) read back to
the simulated table, every row accounted for (issue 17)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.errors import InputError, MappingError, UsageError
from spotkit.io.ingest import read_spots
from spotkit.sim.layouts import USER_LAYOUTS, write_user_file
from spotkit.sim.simulate import simulate_spots

SMALL = dict(days=1, n_receivers=40, n_transmitters=40, n_controls=4)
_COMPARE = [C.SLOT, C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.BAND, C.SNR,
            C.DRIFT, C.DISTANCE]


@pytest.fixture(scope="module")
def receive():
    return simulate_spots("receive", seed=7, **SMALL)


def _spots_for(sim, layout):
    sp = sim.spots
    if layout == "decode-log":  # one receiver's own log
        sp = sp[sp[C.RX_CALL] == sim.a]
    return sp.iloc[::5]


def _suffix(layout):
    return ".xlsx" if layout == "xlsx" else ".txt"


def _canon(df):
    out = df[_COMPARE].copy()
    for c in (C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.BAND):
        out[c] = out[c].astype(str)
    return out.sort_values([C.SLOT, C.TX_CALL, C.RX_CALL]).reset_index(drop=True)


@pytest.mark.parametrize("layout", list(USER_LAYOUTS))
def test_user_layouts_read_back_to_the_same_table(receive, tmp_path, layout):
    if layout == "xlsx":
        pytest.importorskip("openpyxl")
    sp = _spots_for(receive, layout)
    path = tmp_path / f"f{_suffix(layout)}"
    kw = write_user_file(sp, path, layout)
    res = read_spots(path, **kw)
    assert res.summary.accepted == len(sp) and res.summary.rejected == 0
    got, want = _canon(res.spots), _canon(sp)
    pd.testing.assert_frame_equal(got, want, check_dtype=False)
    # frequency through MHz / kHz text: within 1 Hz; power through W with 6 significant
    # digits: within 1e-4 dB
    order = res.spots.sort_values([C.SLOT, C.TX_CALL, C.RX_CALL]).index
    want_order = sp.sort_values([C.SLOT, C.TX_CALL, C.RX_CALL]).index
    np.testing.assert_allclose(res.spots.loc[order, C.FREQ], sp.loc[want_order, C.FREQ],
                               atol=1.0)
    np.testing.assert_allclose(res.spots.loc[order, C.POWER], sp.loc[want_order, C.POWER],
                               atol=1e-4)


@pytest.mark.parametrize("layout", list(USER_LAYOUTS))
def test_user_layouts_every_row_accounted_for(receive, tmp_path, layout):
    if layout == "xlsx":
        pytest.importorskip("openpyxl")
    sp = _spots_for(receive, layout)
    path = tmp_path / f"f{_suffix(layout)}"
    kw = write_user_file(sp, path, layout, duplicates=0.02, corrupt=7, seed=4)
    res = read_spots(path, **kw)
    n_dup = int(round(0.02 * len(sp)))
    s = res.summary
    assert s.rows_read == len(sp) + n_dup
    assert (s.accepted, s.rejected, s.duplicates) == (len(sp) - 7, 7, n_dup)
    assert sorted([*res.spots[C.SOURCE_ROW], *res.rejects[C.SOURCE_ROW],
                   *res.duplicates[C.SOURCE_ROW]]) == list(range(1, s.rows_read + 1))


def test_decode_log_needs_its_receiver(receive, tmp_path):
    sp = _spots_for(receive, "decode-log")
    kw = write_user_file(sp, tmp_path / "log.txt", "decode-log")
    assert kw["constants"] == {"rx_call": receive.a, "rx_locator": "JN58td"}
    with pytest.raises(MappingError, match="rx_call"):
        read_spots(tmp_path / "log.txt", mapping=kw["mapping"])


def test_decode_log_of_two_receivers_is_refused(receive, tmp_path):
    with pytest.raises(UsageError, match="one receiver"):
        write_user_file(receive.spots, tmp_path / "log.txt", "decode-log")


def test_day_first_export_of_one_day_is_ambiguous_without_the_order(receive, tmp_path):
    # the whole run is on 2 March: 02.03.2026 could be 3 February
    sp = _spots_for(receive, "day-first")
    write_user_file(sp, tmp_path / "d.csv", "day-first")
    with pytest.raises(InputError, match="--date-order"):
        read_spots(tmp_path / "d.csv")
    res = read_spots(tmp_path / "d.csv", date_order="dmy")
    assert res.summary.accepted == len(sp)
    assert res.spots[C.TIME].dt.strftime("%Y-%m-%d").unique().tolist() == ["2026-03-02"]
