"""The files users have: fields set to one value (``constants``, ``--set``), the date and
the clock in two columns, day-first and month-first dates (issue 17).

The expected times are written by hand beside each file (invented data, Q-prefix calls)."""
from __future__ import annotations

import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.cli import main
from spotkit.errors import InputError, MappingError, UsageError
from spotkit.io.ingest import read_spots
from spotkit.io.sniff import infer_date_order

# a receiver's own decode log: no receiver column, date and clock apart, compact clock
LOG = """day;utc;snr;dt;freq;drift;call;grid;dbm
02.03.2026;001500;-12;0.3;14.097100;0;Q1ABC;JO62;37
14.03.2026;0017;-15;0.2;14.097120;0;Q2XYZ;IO91;30
14.03.2026;00:19:00;-21;0.2;14.097130;1;Q3DEF;FN31;23
"""
LOG_TIMES = ["2026-03-02 00:15:00", "2026-03-14 00:17:00", "2026-03-14 00:19:00"]
RX = {"rx_call": "Q9ZZ", "rx_locator": "JO62qm"}


def _write(tmp_path, text, name="log.txt"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_decode_log_with_constants_and_split_date(tmp_path):
    res = read_spots(_write(tmp_path, LOG), constants=RX)
    s = res.spots
    assert len(s) == 3 and len(res.rejects) == 0
    assert s[C.TIME].tolist() == [pd.Timestamp(t, tz="UTC") for t in LOG_TIMES]
    assert set(s[C.RX_CALL]) == {"Q9ZZ"} and set(s[C.RX_LOCATOR]) == {"JO62qm"}
    assert s[C.TX_CALL].tolist() == ["Q1ABC", "Q2XYZ", "Q3DEF"]
    assert res.summary.columns[str(tmp_path / "log.txt")][C.TIME] == "'day'+'utc'"


def test_without_constants_the_missing_receiver_is_named(tmp_path):
    with pytest.raises(MappingError, match="rx_call"):
        read_spots(_write(tmp_path, LOG))


@pytest.mark.parametrize("constants, match", [
    ({"rx_call": "Q9ZZ", "rx_locator": "XX99"}, "rx_locator=XX99: not a Maidenhead"),
    ({"rx_call": "QQQ", "rx_locator": "JO62qm"}, "rx_call=QQQ: not a callsign"),
    ({**RX, "power": "75"}, "power=75: not a power"),
    ({**RX, "time": "2026-03-02"}, "the time cannot be set"),
    ({**RX, "snr": "snr"}, "both mapped to a column"),
    ({**RX, "colour": "red"}, "unknown field 'colour'"),
])
def test_bad_constants_are_usage_errors(tmp_path, constants, match):
    mapping = {"snr": "snr"} if "snr" in constants else None
    with pytest.raises(UsageError, match=match):
        read_spots(_write(tmp_path, LOG), constants=constants, mapping=mapping,
                   units={"power": "dBm"} if "power" in constants else None)


def test_constant_frequency_and_power_take_their_units(tmp_path):
    text = "\n".join(["when,sender,loc,rx,rxloc,snr"] + [
        f"2026-03-02 00:{2 * i:02d},Q1ABC,JO62qm,Q2XY,JN58td,-1{i}" for i in range(3)])
    res = read_spots(_write(tmp_path, text + "\n", "a.csv"),
                     constants={"frequency": "7.0401", "power": "5"},
                     units={"power": "W"})
    assert res.spots[C.FREQ].tolist() == [7_040_100.0] * 3
    # 5 W = 10 log10(5000 mW) dBm = 36.99 dBm (definition of the dBm)
    assert res.spots[C.POWER].round(2).tolist() == [36.99] * 3


def test_cli_set_and_map_date_time(tmp_path, capsys):
    src = _write(tmp_path, LOG)
    out = tmp_path / "o.parquet"
    assert main(["ingest", str(src), "-o", str(out), "--set", "rx_call=Q9ZZ", "--set",
                 "rx_locator=JO62qm", "--map", "date=day", "--map", "time=utc",
                 "--no-progress"]) == 0
    assert "wrote 3 spots" in capsys.readouterr().out
    assert pd.read_parquet(out)[C.TIME].tolist() == [pd.Timestamp(t, tz="UTC")
                                                     for t in LOG_TIMES]


def test_cli_bad_set_is_exit_2(tmp_path, capsys):
    src = _write(tmp_path, LOG)
    assert main(["ingest", str(src), "-o", str(tmp_path / "o.parquet"), "--set",
                 "rx_call=Q9ZZ", "--set", "rx_locator=JO6", "--no-progress"]) == 2
    assert "--set rx_locator=JO6: not a Maidenhead locator" in capsys.readouterr().err
    assert not (tmp_path / "o.parquet").exists()


def _dated(dates, sep=","):
    rows = ["date,time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm"]
    rows += [f"{d},{10 + i % 10}:{2 * (i % 30):02d},Q1ABC,JO62qm,Q2XY,JN58td,14.0971,-12,37"
             for i, d in enumerate(dates)]
    return "\n".join(rows).replace(",", sep) + "\n"


def test_day_first_dates_are_read_when_a_day_shows_it(tmp_path):
    path = _write(tmp_path, _dated(["02.03.2026"] * 25 + ["14.03.2026"] * 5, ";"), "d.csv")
    res = read_spots(path)
    days = res.spots[C.TIME].dt.strftime("%Y-%m-%d").unique().tolist()
    assert days == ["2026-03-02", "2026-03-14"] and len(res.rejects) == 0


def test_month_first_dates_are_read_when_a_day_shows_it(tmp_path):
    path = _write(tmp_path, _dated(["3/2/2026"] * 3 + ["3/14/2026"] * 2), "m.csv")
    days = read_spots(path).spots[C.TIME].dt.strftime("%Y-%m-%d").unique().tolist()
    assert days == ["2026-03-02", "2026-03-14"]


def test_ambiguous_dates_stop_with_the_option_to_give(tmp_path):
    path = _write(tmp_path, _dated(["02.03.2026"] * 30, ";"), "amb.csv")
    with pytest.raises(InputError, match=r"cannot tell whether the dates are day-first.*"
                       r"--date-order dmy"):
        read_spots(path)
    assert main(["ingest", str(path), "-o", str(tmp_path / "o.parquet"),
                 "--no-progress"]) == 1
    for order, day in (("dmy", "2026-03-02"), ("mdy", "2026-02-03")):
        res = read_spots(path, date_order=order)
        assert res.spots[C.TIME].dt.strftime("%Y-%m-%d").unique().tolist() == [day]


def test_date_order_given_wrongly_rejects_with_a_reason(tmp_path):
    # month-first told, but 14 is no month: those rows are rejected, the rest read
    path = _write(tmp_path, _dated(["02.03.2026"] * 3 + ["14.03.2026"]), "w.csv")
    res = read_spots(path, date_order="mdy")
    assert len(res.spots) == 3
    assert res.rejects[C.REJECT_REASON].tolist() == ["unparseable time"]
    assert res.rejects[C.SOURCE_ROW].tolist() == [4]


def test_bad_date_order_is_a_usage_error(tmp_path):
    with pytest.raises(UsageError, match="valid: dmy, mdy, ymd"):
        read_spots(_write(tmp_path, LOG), constants=RX, date_order="ydm")


@pytest.mark.parametrize("texts, order", [
    (["2026/03/14 10:00"], "ymd"), (["2026-03-14T10:00Z"], None), (["20260314"], None),
    (["13.01.2026", "01.02.2026"], "dmy"), (["01/13/2026"], "mdy")])
def test_infer_date_order(texts, order):
    assert infer_date_order(texts) == order


def test_infer_date_order_refuses_mixed_orders():
    with pytest.raises(InputError, match="others a second part above 12"):
        infer_date_order(["13.01.2026", "01.13.2026"])


def test_constant_power_without_a_unit_that_shows_is_a_usage_error(tmp_path):
    # 75 is no dBm on the beacon ladder, and could be W or mW
    with pytest.raises(UsageError, match="--set power=75: cannot tell the power unit"):
        read_spots(_write(tmp_path, LOG), constants={**RX, "power": "75"},
                   mapping={"snr": "snr", "frequency": "freq", "time": "day+utc",
                            "tx_call": "call", "tx_locator": "grid", "drift": "drift"})


def test_iso_dates_are_read_whatever_the_order_given(tmp_path):
    path = _write(tmp_path, _dated(["2026-03-14"] * 3), "iso.csv")
    for order in ("dmy", "mdy", "ymd", None):
        res = read_spots(path, date_order=order)
        assert res.summary.accepted == 3, order


def test_compact_clock_after_an_iso_date(tmp_path):
    text = LOG.replace("02.03.2026", "2026-03-02").replace("14.03.2026", "2026-03-14")
    res = read_spots(_write(tmp_path, text), constants=RX)
    assert res.spots[C.TIME].tolist() == [pd.Timestamp(t, tz="UTC") for t in LOG_TIMES]


@pytest.mark.parametrize("extra, message", [
    (["--map", "date=day"], "--map date=COLUMN needs --map time=COLUMN"),
    (["--set", "rx_call=Q9ZZ", "--set", "rx_call=Q8ZZ"], "only once in --set"),
    (["--date-order", "dym"], "invalid choice"),
])
def test_cli_usage_errors_of_the_new_options(tmp_path, capsys, extra, message):
    src = _write(tmp_path, LOG)
    assert main(["ingest", str(src), "-o", str(tmp_path / "o.parquet"), *extra]) == 2
    assert message in capsys.readouterr().err


def test_day_first_dates_out_of_range_are_told_apart_from_unparseable(tmp_path):
    # 01.01.1980 parses (day-first) but is before 1990; 31.02.2026 is no date
    path = _write(tmp_path, _dated(["14.03.2026", "01.01.1980", "31.02.2026"]), "r.csv")
    res = read_spots(path)
    assert res.rejects[C.REJECT_REASON].tolist() == [
        "time out of range (before 1990 or from 2100)", "unparseable time"]
