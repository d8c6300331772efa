"""Power and frequency conversions against the customary values of the trade."""
import numpy as np
import pytest

from spotkit import units


@pytest.mark.parametrize(
    "dbm, watts",
    [
        (30.0, 1.0),  # 1 W = 30 dBm (common practice)
        (23.0, 0.1995),  # 23 dBm = 0.1995 W (common practice)
        (37.0, 5.012),  # 37 dBm = 5.012 W (common practice)
        (0.0, 0.001),  # 0 dBm = 1 mW (definition of the dBm)
    ],
)
def test_dbm_to_watts_customary_values(dbm, watts):
    assert units.dbm_to_watts(dbm) == pytest.approx(watts, rel=5e-4)
    assert units.watts_to_dbm(watts) == pytest.approx(dbm, abs=0.01)  # 0.01 dB


def test_power_ladder_ends_in_0_3_7():
    # customary power ladder: 0..60 dBm ending in 0, 3 or 7 (common practice)
    ladder = units.POWER_LADDER_DBM
    assert ladder[0] == 0 and ladder[-1] == 60
    assert set((ladder % 10).astype(int)) == {0, 3, 7}
    # +3 dB is x1.995 and +7 dB is x5.012 (common practice)
    assert units.dbm_to_watts(33) / units.dbm_to_watts(30) == pytest.approx(1.995, rel=1e-3)
    assert units.dbm_to_watts(37) / units.dbm_to_watts(30) == pytest.approx(5.012, rel=1e-3)


def test_power_and_frequency_units():
    assert units.power_to_dbm([1.0], "W")[0] == pytest.approx(30.0)
    assert units.power_to_dbm([200.0], "mW")[0] == pytest.approx(23.0103, abs=1e-4)
    assert units.frequency_to_hz([14.0971], "MHz")[0] == pytest.approx(14_097_100.0)
    assert units.frequency_to_hz([14097.1], "kHz")[0] == pytest.approx(14_097_100.0)
    with pytest.raises(ValueError, match="valid"):
        units.power_to_dbm([1.0], "hp")
    with pytest.raises(ValueError, match="valid"):
        units.frequency_to_hz([1.0], "GHz")


def test_snr_per_watt_removes_power():
    # every 10x in power is +10 dB of SNR at the same receiver (common practice):
    # the same path heard at 37 dBm and 27 dBm normalises to the same value
    snr = np.array([-10.0, -20.0])
    power = np.array([37.0, 27.0])
    norm = units.snr_per_watt(snr, power)
    assert norm[0] == pytest.approx(norm[1])
    assert norm[0] == pytest.approx(-17.0)


# --- epoch times -------------------------------------------------------------------------------
def _epoch(*args) -> float:
    # reference: Python's datetime (POSIX time, leap seconds not counted)
    import datetime as dt

    return dt.datetime(*args, tzinfo=dt.UTC).timestamp()


def test_epoch_range_is_1990_to_2100():
    assert units.EPOCH_RANGE_S == (_epoch(1990, 1, 1), _epoch(2100, 1, 1))


@pytest.mark.parametrize("values, unit", [
    ([_epoch(2024, 3, 1, 10)], "epoch-s"),
    ([_epoch(2024, 3, 1, 10) * 1000, _epoch(2024, 3, 1, 10, 2) * 1000], "epoch-ms"),
    ([_epoch(1990, 1, 1)], "epoch-s"), ([_epoch(1990, 1, 1) * 1000], "epoch-ms"),
    ([_epoch(2099, 12, 31) * 1000, 5, np.nan], "epoch-ms"),  # the most in range wins
    ([1, 2, 3], "epoch-s"),  # neither: seconds (the rows are then rejected as out of range)
])
def test_epoch_unit_inferred_by_magnitude(values, unit):
    assert units.infer_epoch_unit(values) == unit


def test_epoch_to_seconds():
    ms = _epoch(2024, 3, 1, 10) * 1000
    assert units.epoch_to_seconds([ms], "epoch-ms")[0] == _epoch(2024, 3, 1, 10)
    assert units.epoch_to_seconds([ms], "epoch-s")[0] == ms
    assert units.epoch_to_seconds([ms], "epoch")[0] == ms  # "epoch" is seconds
    with pytest.raises(ValueError, match="epoch-ms"):
        units.epoch_to_seconds([1], "epoch-us")
