"""Spreadsheets (.xlsx, .ods) read like CSV files, every sheet row accounted for (issue 17).

Invented data, Q-prefix calls; expected values written by hand beside each sheet."""
from __future__ import annotations

import datetime as dt
import sys

import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.cli import main
from spotkit.errors import InputError
from spotkit.io.ingest import read_spots
from spotkit.io.sheets import is_spreadsheet, sheet_to_text

openpyxl = pytest.importorskip("openpyxl")

HEAD = ["Date", "Time UTC", "Sender", "Sender Loc", "Receiver", "Receiver Loc", "MHz", "SNR",
        "dBm"]
ROW = ["Q1ABC", "JO62qm", "Q2XY", "JN58td", 14.0971, -12, 37]


def _xlsx(path, rows, extra_sheet=None):
    wb = openpyxl.Workbook()
    ws = wb.active
    for r in rows:
        ws.append(r)
    if extra_sheet is not None:
        wb.create_sheet("notes").append(extra_sheet)
    wb.save(path)
    return path


def test_day_first_sheet_with_a_blank_row(tmp_path):
    # row 2 blank, row 5 a bad locator: both set aside with their sheet row numbers
    rows = [HEAD, ["02.03.2026", "00:14", *ROW], [None] * 9,
            ["14.03.2026", "00:16", *ROW], ["15.03.2026", dt.time(0, 18), *ROW],
            ["15.03.2026", "00:20", "Q1ABC", "XX99", *ROW[2:]]]
    res = read_spots(_xlsx(tmp_path / "d.xlsx", rows))
    s = res.summary
    assert (s.rows_read, s.accepted, s.rejected) == (5, 3, 2)
    assert res.spots[C.TIME].tolist() == [pd.Timestamp(t, tz="UTC") for t in (
        "2026-03-02 00:14", "2026-03-14 00:16", "2026-03-15 00:18")]
    assert res.spots[C.SOURCE_ROW].tolist() == [1, 3, 4]
    rej = res.rejects
    assert rej[C.SOURCE_ROW].tolist() == [2, 5]
    assert rej[C.REJECT_REASON].tolist() == ["blank line", "bad locator"]
    assert set(rej[C.SOURCE_FILE]) == {str(tmp_path / "d.xlsx")}


def test_datetime_cells_and_numbers(tmp_path):
    rows = [["When", "Sender", "Sender Loc", "Receiver", "Receiver Loc", "MHz", "SNR", "dBm"],
            [dt.datetime(2026, 3, 2, 10, 0), *ROW], [dt.datetime(2026, 3, 2, 10, 2), *ROW]]
    res = read_spots(_xlsx(tmp_path / "t.xlsx", rows))
    assert res.spots[C.TIME].tolist() == [pd.Timestamp("2026-03-02 10:00", tz="UTC"),
                                          pd.Timestamp("2026-03-02 10:02", tz="UTC")]
    assert res.spots[C.FREQ].tolist() == [14_097_100.0] * 2
    assert res.spots[C.SNR].tolist() == [-12.0] * 2


def test_ods_reads_like_xlsx(tmp_path):
    pytest.importorskip("odf")
    frame = pd.DataFrame([["2026-03-02 10:00", *ROW], ["2026-03-02 10:02", *ROW]],
                         columns=["When", *HEAD[2:]])
    frame.to_excel(tmp_path / "t.ods", index=False, engine="odf")
    res = read_spots(tmp_path / "t.ods")
    assert res.summary.accepted == 2 and res.spots[C.RX_CALL].tolist() == ["Q2XY"] * 2


def test_a_second_sheet_with_data_is_refused(tmp_path):
    path = _xlsx(tmp_path / "two.xlsx", [HEAD, ["02.03.2026", "00:14", *ROW]],
                 extra_sheet=["a note"])
    with pytest.raises(InputError, match="'notes' hold data; spotkit reads one sheet"):
        read_spots(path)


def test_an_empty_second_sheet_is_fine(tmp_path):
    path = _xlsx(tmp_path / "e.xlsx", [HEAD, ["14.03.2026", "00:14", *ROW]], extra_sheet=[])
    assert read_spots(path).summary.accepted == 1


def test_not_a_workbook(tmp_path):
    path = tmp_path / "fake.xlsx"
    path.write_text("time,call\n")
    with pytest.raises(InputError, match="fake.xlsx: not a readable spreadsheet"):
        read_spots(path)
    assert main(["ingest", str(path), "-o", str(tmp_path / "o.parquet")]) == 1


def test_without_the_engine_one_message_says_what_to_do(tmp_path, monkeypatch, capsys):
    path = _xlsx(tmp_path / "d.xlsx", [HEAD, ["14.03.2026", "00:14", *ROW]])
    monkeypatch.setitem(sys.modules, "openpyxl", None)  # import openpyxl -> ImportError
    with pytest.raises(InputError, match=r"pip install 'spotkit\[sheets\]', or save the "
                       "sheet as CSV"):
        sheet_to_text(path, tmp_path / "d.txt")
    assert main(["ingest", str(path), "-o", str(tmp_path / "o.parquet")]) == 1
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "needs the package openpyxl" in err


def test_mapping_errors_name_the_spreadsheet(tmp_path):
    path = _xlsx(tmp_path / "m.xlsx", [["a", "b", "c", "d"], [1, 2, 3, 4]])
    with pytest.raises(Exception, match="m.xlsx") as info:
        read_spots(path)
    assert ".txt" not in str(info.value)


def test_is_spreadsheet():
    assert is_spreadsheet("a.xlsm") and not is_spreadsheet("a.xls.csv")
