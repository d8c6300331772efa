"""Reading spot CSV files: layouts, mapping, units, rejects, duplicates, chunking, CLI.

Fixtures in tests/data/ingest_*.csv are invented (Q-prefix calls, real grid squares).
"""
from __future__ import annotations

import gzip

import numpy as np
import pandas as pd
import pandas.testing as pdt
import pytest
from geographiclib.geodesic import Geodesic
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from spotkit import columns as C
from spotkit.cli import main
from spotkit.errors import (
    InputError,
    MappingError,
    MostlyRejectedError,
    NotASpotTableError,
    UsageError,
)
from spotkit.io.ingest import (
    IngestSummary,
    check_reject_share,
    ingest_to_parquet,
    load_spots,
    read_spots,
    reject_hint,
)

HEAD = "time,tx call,tx locator,rx call,rx locator,frequency mhz,snr,power dbm,drift\n"
ROWS = [
    "2026-03-01 10:00,Q1ABC,JN58td,Q7XYZ,IO91lk,14.097100,-12,23,0",
    "2026-03-01 10:01,Q1ABC,JN58td,Q9DEF,FN31pr,14.097105,-21,23,1",
    "2026-03-01 10:02,Q2BCD,JO62,Q7XYZ,IO91lk,7.038650,-5,37,-1",
    "2026-03-01 10:04,Q2BCD,JO62,Q9DEF,FN31pr,10.140200,3,30,0",
]


def _write(tmp_path, name, text, encoding="utf-8"):
    p = tmp_path / name
    p.write_bytes(text.encode(encoding) if isinstance(text, str) else text)
    return p


def _balanced(res):
    s = res.summary
    assert s.accepted + s.rejected + s.duplicates == s.rows_read
    assert s.accepted == len(res.spots) and s.rejected == len(res.rejects)


def _many_rows(n):
    """``n`` good data rows (invented Q calls) for the reader tests."""
    return [f"2026-03-01 10:{2 * (i % 30):02d},Q{i % 7}AB,JN58td,Q{i % 5}XY,IO91lk,14.0971,"
            f"{-20 + i % 31},23,{i % 3 - 1}" for i in range(n)]


def _same_from_pandas_reader(res, path, monkeypatch, **kw):
    """The result ``res`` of the pyarrow reader equals the pandas reader's on ``path``."""
    from spotkit.io import csvread

    monkeypatch.setattr(csvread, "arrow_chunks", csvread.pandas_chunks)
    ref = read_spots(path, **kw)
    pdt.assert_frame_equal(res.spots, ref.spots)
    pdt.assert_frame_equal(res.rejects, ref.rejects)
    assert res.summary == ref.summary


# --- layouts --------------------------------------------------------------------------------------
def test_basic_file_gives_canonical_table(data_dir):
    res = read_spots(data_dir / "ingest_basic.csv")
    df = res.spots
    assert list(df.columns) == C.CANONICAL
    for name in C.CANONICAL:
        assert str(df[name].dtype) == str(C.GLOSSARY[name].dtype), name
    assert res.summary.rows_read == 4 and res.summary.accepted == 4
    # calls upper case, locators normalised (field letters upper, subsquare lower)
    assert df[C.TX_CALL].tolist() == ["Q1ABC", "Q1ABC", "Q2BCD", "Q2BCD"]
    assert df[C.TX_LOCATOR].tolist() == ["JN58td", "JN58td", "JO62", "JO62"]
    # IARU Region 1 HF band plan: 20 m is 14000-14350 kHz, 40 m 7000-7200, 30 m 10100-10150
    assert df[C.BAND].tolist() == ["20m", "20m", "40m", "30m"]
    # 14.097100 MHz = 14 097 100 Hz exactly (SI prefixes), tolerance 1e-3 Hz
    assert df[C.FREQ].iloc[0] == pytest.approx(14_097_100.0, abs=1e-3)
    assert df[C.SOURCE_ROW].tolist() == [1, 2, 3, 4]
    assert res.summary.spots_per_band == {"40m": 1, "30m": 1, "20m": 2}


def test_path_columns_match_geographiclib(data_dir):
    df = read_spots(data_dir / "ingest_basic.csv").spots
    row = df.iloc[0]
    # cell centres (Tyson, QST Jan 1989; recomputed): JN58td -> 48.145833 N, 11.625 E;
    # IO91lk -> 51.4375 N, 1.041667 W; tolerance 1e-6 deg
    assert row[C.TX_LAT] == pytest.approx(48.145833, abs=1e-6)
    assert row[C.TX_LON] == pytest.approx(11.625, abs=1e-6)
    assert row[C.RX_LAT] == pytest.approx(51.4375, abs=1e-6)
    assert row[C.RX_LON] == pytest.approx(-1.041667, abs=1e-6)
    # Karney's WGS-84 geodesic (geographiclib as oracle): distance within 1 m, azimuths 1e-6 deg
    g = Geodesic.WGS84.Inverse(48.145833333333, 11.625, 51.4375, -1.0416666667)
    assert row[C.DISTANCE] == pytest.approx(g["s12"] / 1000.0, abs=1e-3)
    assert row[C.BEARING] == pytest.approx(g["azi1"] % 360, abs=1e-6)
    assert row[C.REVERSE_BEARING] == pytest.approx((g["azi2"] + 180) % 360, abs=1e-6)


def test_semicolon_decimal_comma_khz_watts_iso_offsets(data_dir):
    res = read_spots(data_dir / "ingest_semicolon.csv")
    df = res.spots
    assert res.summary.accepted == 3
    units = res.summary.units[str(data_dir / "ingest_semicolon.csv")]
    assert units["frequency"].startswith("kHz") and units["power"].startswith("W")
    # "14097,100" kHz with a decimal comma = 14 097 100 Hz (tolerance 1e-3 Hz)
    assert df[C.FREQ].iloc[0] == pytest.approx(14_097_100.0, abs=1e-3)
    # 0.2 W = 23.01 dBm, 5 W = 36.99 dBm (P[dBm] = 10 log10(P / 1 mW); tolerance 0.005 dB)
    assert df[C.POWER].tolist() == pytest.approx([23.0103, 23.0103, 36.9897], abs=0.005)
    # ISO 8601 offsets converted to UTC: 12:03:59+02:00 = 10:03:59Z
    assert df[C.TIME].iloc[2] == pd.Timestamp("2026-03-01 10:03:59", tz="UTC")


def test_tab_epoch_hz_milliwatts(data_dir):
    res = read_spots(data_dir / "ingest_tab_epoch.tsv")
    df = res.spots
    # 1772359200 s after 1970-01-01T00:00Z is 2026-03-01T10:00Z (POSIX time, 86400 s/day)
    assert df[C.TIME].iloc[0] == pd.Timestamp("2026-03-01 10:00", tz="UTC")
    # 200 mW = 23.01 dBm; 5000 mW = 36.99 dBm (tolerance 0.005 dB)
    assert df[C.POWER].tolist() == pytest.approx([23.0103, 36.9897], abs=0.005)
    assert df[C.BAND].tolist() == ["20m", "10m"]


@pytest.mark.parametrize("sep,delimiter", [(",", "auto"), (";", "auto"), ("\t", "auto"),
                                            ("\t", "tab"), ("  ", "auto"), (" ", "space")])
def test_each_delimiter(tmp_path, sep, delimiter):
    # blank-delimited rows split "date time" into two fields under the one heading
    # (so headings of a blank-delimited file cannot contain blanks)
    text = HEAD.replace(" ", "_").replace(",", sep) + "\n".join(r.replace(",", sep) for r in ROWS)
    text += "\n"
    res = read_spots(_write(tmp_path, "d.csv", text), delimiter=delimiter)
    assert res.summary.accepted == 4
    assert res.spots[C.TIME].iloc[1] == pd.Timestamp("2026-03-01 10:01", tz="UTC")


def test_utf8_bom_and_gzip_and_several_files(tmp_path):
    text = HEAD + "\n".join(ROWS[:2]) + "\n"
    bom = _write(tmp_path, "bom.csv", b"\xef\xbb\xbf" + text.encode())
    gz = tmp_path / "more.csv.gz"
    with gzip.open(gz, "wt", encoding="utf-8") as fh:
        fh.write(HEAD + "\n".join(ROWS[2:]) + "\n")
    res = read_spots([bom, gz])
    assert res.summary.files == [str(bom), str(gz)]
    assert res.summary.accepted == 4
    assert res.spots[C.SOURCE_FILE].tolist() == [str(bom)] * 2 + [str(gz)] * 2
    assert res.spots[C.SOURCE_ROW].tolist() == [1, 2, 1, 2]
    assert res.spots[C.TIME].notna().all()


def test_latin1_file_is_decoded(data_dir):
    res = read_spots(data_dir / "ingest_latin1.csv")
    assert res.summary.accepted == 1
    # the accented call is decoded (not mangled) and rejected as not a callsign
    assert res.rejects[C.REJECT_VALUE].tolist() == ["QÉ1ABC"]
    assert res.rejects[C.REJECT_REASON].tolist() == ["bad call"]


def test_headerless_needs_one_call_role_then_infers_the_rest(data_dir):
    path = data_dir / "ingest_noheader.txt"
    with pytest.raises(MappingError, match="tx_call"):
        read_spots(path)
    res = read_spots(path, mapping={"tx_call": 7})
    df = res.spots
    assert df[C.RX_CALL].tolist() == ["Q7XYZ", "Q9DEF", "Q7XYZ"]
    assert df[C.TX_LOCATOR].tolist() == ["JN58td", "JN58td", "JO62"]
    assert df[C.SNR].tolist() == [-12, -21, -5]
    assert df[C.POWER].tolist() == [23, 23, 37]
    assert df[C.DRIFT].tolist() == [0, 1, -1]


def test_headerless_all_positions_mapped(tmp_path):
    text = "\n".join(ROWS) + "\n"
    mapping = {"time": 1, "tx_call": 2, "tx_locator": 3, "rx_call": 4, "rx_locator": 5,
               "frequency": 6, "snr": "7", "power": 8, "drift": 9}
    res = read_spots(_write(tmp_path, "n.csv", text), mapping=mapping, header=False)
    assert res.summary.accepted == 4
    assert res.spots[C.SOURCE_ROW].tolist() == [1, 2, 3, 4]


# --- time and slots -------------------------------------------------------------------------------
def test_times_snap_to_even_minute_slots(tmp_path):
    # slots start on even UTC minutes (common practice): 10:01:30 -> 10:00, 10:03:59 -> 10:02
    times = ["2026-03-01 10:00", "2026-03-01 10:01:30", "2026-03-01T10:03:59Z",
             "2026-03-01 10:04:00"]
    rows = [t + r[r.index(","):] for t, r in zip(times, ROWS, strict=True)]
    res = read_spots(_write(tmp_path, "t.csv", HEAD + "\n".join(rows) + "\n"))
    slots = res.spots[C.SLOT].dt.strftime("%H:%M").tolist()
    assert slots == ["10:00", "10:00", "10:02", "10:04"]
    assert (res.spots[C.SLOT].dt.minute % 2 == 0).all()
    res10 = read_spots(_write(tmp_path, "t.csv", HEAD + "\n".join(rows) + "\n"),
                       slot_minutes=10)
    assert res10.spots[C.SLOT].dt.strftime("%H:%M").tolist() == ["10:00"] * 4


def test_split_date_and_time_headings_are_joined(tmp_path):
    text = ("date,utc time,tx call,tx grid,rx call,rx grid,freq mhz,snr,pwr dbm\n"
            "2026-03-01,10:03,Q1ABC,JN58td,Q7XYZ,IO91lk,14.0971,-12,23\n")
    res = read_spots(_write(tmp_path, "dt.csv", text))
    assert res.spots[C.TIME].iloc[0] == pd.Timestamp("2026-03-01 10:03", tz="UTC")
    assert res.spots[C.SLOT].iloc[0] == pd.Timestamp("2026-03-01 10:02", tz="UTC")


# --- units ----------------------------------------------------------------------------------------
def test_explicit_units_win_and_ambiguous_file_is_refused(tmp_path):
    text = HEAD.replace("frequency mhz", "frequency").replace("power dbm", "power")
    text += "2026-03-01 10:00,Q1ABC,JN58td,Q7XYZ,IO91lk,14097.1,-12,100,0\n"
    p = _write(tmp_path, "u.csv", text)
    with pytest.raises(InputError, match="power unit"):
        read_spots(p)
    res = read_spots(p, units={"power": "W"})
    # 100 W = 50 dBm (10 log10(100 000 mW)); tolerance 1e-9 dB
    assert res.spots[C.POWER].iloc[0] == pytest.approx(50.0, abs=1e-9)


@pytest.mark.parametrize("unit,cells", [
    ("iso", ["0001-01-01 00:00", "2300-01-01 00:00", "yesterday"]),
    ("epoch", ["1e12", "-5", "x"]),
])
def test_times_out_of_range_or_unparseable(tmp_path, unit, cells):
    rows = [c + ROWS[0][ROWS[0].index(","):] for c in cells]
    res = read_spots(_write(tmp_path, "o.csv", HEAD + "\n".join(rows) + "\n"),
                     units={"time": unit})
    assert res.rejects[C.REJECT_REASON].tolist() == [
        "time out of range (before 1990 or from 2100)"] * 2 + ["unparseable time"]
    assert res.rejects[C.REJECT_VALUE].tolist() == cells


def test_epoch_given_explicitly(tmp_path):
    text = HEAD + "1772359200,Q1ABC,JN58td,Q7XYZ,IO91lk,14.0971,-12,23,0\n"
    res = read_spots(_write(tmp_path, "e.csv", text), units={"time": "epoch"})
    assert res.spots[C.TIME].iloc[0] == pd.Timestamp("2026-03-01 10:00", tz="UTC")


# --- mapping --------------------------------------------------------------------------------------
def test_ambiguous_headings_raise_mapping_error_listing_them(data_dir):
    with pytest.raises(MappingError) as exc:
        read_spots(data_dir / "ingest_ambiguous.csv")
    msg = str(exc.value)
    assert "'Call'" in msg and "'Grid'" in msg and "--map FIELD=COLUMN" in msg
    assert "ingest_ambiguous.csv" in msg


def test_explicit_mapping_wins_over_guess(tmp_path):
    # the guess would take 'tx call' and 'rx call'; the mapping swaps them
    p = _write(tmp_path, "m.csv", HEAD + "\n".join(ROWS) + "\n")
    res = read_spots(p, mapping={"tx_call": "rx call", C.RX_CALL: "tx call",
                                 "tx_locator": "rx locator", "rx_locator": "tx locator"})
    assert res.spots[C.TX_CALL].iloc[0] == "Q7XYZ" and res.spots[C.RX_CALL].iloc[0] == "Q1ABC"
    assert res.spots[C.TX_LOCATOR].iloc[0] == "IO91lk"


def test_mapping_to_missing_column_is_mapping_error(data_dir):
    with pytest.raises(MappingError, match="no such column"):
        read_spots(data_dir / "ingest_basic.csv", mapping={"snr": "signal report"})


def test_bad_arguments_are_usage_errors(data_dir):
    p = data_dir / "ingest_basic.csv"
    with pytest.raises(UsageError, match="valid"):
        read_spots(p, mapping={"colour": "x"})
    with pytest.raises(UsageError, match="valid"):
        read_spots(p, units={"frequency": "GHz"})
    with pytest.raises(UsageError, match="delimiter"):
        read_spots(p, delimiter="|")
    with pytest.raises(UsageError, match="region"):
        read_spots(p, region="4")


# --- rejects and duplicates -----------------------------------------------------------------------
def test_every_bad_row_is_rejected_with_a_reason(data_dir):
    res = read_spots(data_dir / "ingest_rejects.csv")
    _balanced(res)
    rej = res.rejects.set_index(C.SOURCE_ROW)
    expected = {
        2: ("tx_locator", "bad locator"), 3: ("snr", "SNR not a number"),
        4: ("snr", "SNR outside -60..+60 dB"), 5: ("frequency", "frequency not in an amateur band"),
        6: ("power", "power outside 0..+60 dBm"), 7: ("time", "unparseable time"),
        8: ("tx_call", "empty call"), 9: ("row", "blank line"),
        10: ("row", "wrong number of fields"), 12: ("time", "empty time"),
        13: ("drift", "drift not a number"), 14: ("tx_call", "bad call"),
        15: ("rx_locator", "empty locator"),
    }
    assert sorted(rej.index) == sorted(expected)
    for row, (fld, reason) in expected.items():
        assert (rej.loc[row, C.REJECT_FIELD], rej.loc[row, C.REJECT_REASON]) == (fld, reason)
    assert rej.loc[2, C.REJECT_VALUE] == "ZZ99zz" and rej.loc[3, C.REJECT_VALUE] == "loud"
    # row 11 repeats row 1 exactly: removed as a duplicate, the first kept
    assert res.summary.duplicates == 1
    assert res.spots[C.SOURCE_ROW].tolist() == [1, 16]
    assert list(res.rejects.columns) == C.REJECT_COLUMNS
    text = res.summary_text()
    assert "duplicates removed: 1" in text and "bad locator: 1" in text
    assert "accepted + rejected + duplicates = rows read: yes" in text


def test_band_plan_region_decides(tmp_path):
    # 7.250 MHz: outside Region 1's 40 m (7000-7200 kHz), inside Region 2's (7000-7300 kHz)
    text = HEAD + "2026-03-01 10:00,Q1ABC,JN58td,Q7XYZ,IO91lk,7.250000,-12,23,0\n" + ROWS[0]
    p = _write(tmp_path, "r.csv", text + "\n")
    assert read_spots(p, region="1").summary.rejected_by_reason == {
        "frequency not in an amateur band": 1}
    assert read_spots(p, region="2").spots[C.BAND].tolist() == ["40m", "20m"]


def test_duplicates_across_files_and_chunks(tmp_path):
    a = _write(tmp_path, "a.csv", HEAD + "\n".join(ROWS) + "\n")
    b = _write(tmp_path, "b.csv", HEAD + "\n".join(ROWS[1:3] + ROWS[1:2]) + "\n")
    res = read_spots([a, b], chunk_rows=1)
    assert res.summary.duplicates == 3 and res.summary.accepted == 4
    _balanced(res)


# --- files that are not spot tables ---------------------------------------------------------------
@pytest.mark.parametrize("content,what", [
    (b"", "empty"), (b"   \n\n", "empty"), (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR" * 20, "binary"),
    (b"<!DOCTYPE html>\n<html><body><table><tr><td>x</td></tr></table></body></html>", "HTML"),
    (b"just some words\nin a text file\n", "column"),
])
def test_not_a_spot_table(tmp_path, content, what):
    p = _write(tmp_path, "x.csv", content)
    with pytest.raises(NotASpotTableError, match=what) as exc:
        read_spots(p)
    assert str(p) in str(exc.value)


def test_missing_file(tmp_path):
    with pytest.raises(FileNotFoundError):
        read_spots(tmp_path / "nope.csv")


# --- chunking and Parquet -------------------------------------------------------------------------
def test_chunked_equals_one_go_and_parquet_round_trip(data_dir, tmp_path):
    files = [data_dir / "ingest_rejects.csv", data_dir / "ingest_basic.csv"]
    one = read_spots(files)
    for n in (1, 2, 5):
        chunked = read_spots(files, chunk_rows=n)
        pdt.assert_frame_equal(one.spots, chunked.spots)
        pdt.assert_frame_equal(one.rejects, chunked.rejects)
        assert one.summary == chunked.summary
    out = tmp_path / "o.parquet"
    summary = ingest_to_parquet(files, out, chunk_rows=3, rejects_path=tmp_path / "rej.csv")
    assert summary == one.summary
    back = pd.read_parquet(out)
    pdt.assert_frame_equal(back.astype(str), one.spots.astype(str))
    rej = pd.read_csv(tmp_path / "rej.csv", keep_default_na=False)
    # the rejects file lists the removed duplicates too: rejected + duplicates rows
    assert list(rej.columns) == C.REJECT_COLUMNS
    is_dup = rej["reason"] == "exact duplicate"
    assert (~is_dup).sum() == one.summary.rejected and is_dup.sum() == one.summary.duplicates
    assert one.summary.duplicates == len(one.duplicates) > 0
    pdt.assert_frame_equal(rej[is_dup].reset_index(drop=True),
                           one.duplicates.astype({"source_row": "int64"}), check_dtype=False)


def test_load_spots_passthrough_parquet_and_csv(data_dir, tmp_path):
    res = read_spots(data_dir / "ingest_basic.csv")
    assert load_spots(res.spots) is res.spots
    out = tmp_path / "s.parquet"
    ingest_to_parquet(data_dir / "ingest_basic.csv", out)
    assert len(load_spots(out)) == 4
    assert len(load_spots(data_dir / "ingest_basic.csv")) == 4
    bad = _write(tmp_path, "bad.csv", HEAD + ROWS[0].replace("-12", "x") + "\n")
    with pytest.raises(InputError, match="no usable"):
        load_spots(bad)


# --- command line ---------------------------------------------------------------------------------
def test_cli_ingest_with_map_and_unit(data_dir, tmp_path, capsys):
    out = tmp_path / "o.parquet"
    argv = ["ingest", str(data_dir / "ingest_unknown_headings.csv"), "-o", str(out),
            "--rejects", str(tmp_path / "r.csv")]
    assert main(argv) == 1  # headings A..H say nothing
    err = capsys.readouterr().err
    assert "'A'" in err and "--map" in err
    maps = ["--map", "time=A", "--map", "tx_call=B", "--map", "tx_locator=C", "--map", "rx_call=D",
            "--map", "rx_locator=E", "--map", "frequency=F", "--map", "snr=7", "--map", "power=H",
            "--unit", "frequency=MHz", "--unit", "power=dBm"]
    assert main(argv + maps) == 0
    text = capsys.readouterr().out
    assert "rows read:          2" in text and "accepted:           2" in text
    assert "spots per band:" in text
    assert pd.read_parquet(out)[C.SNR].tolist() == [-12, 3]


def test_cli_usage_and_input_errors(data_dir, tmp_path, capsys):
    out = str(tmp_path / "o.parquet")
    assert main(["ingest", str(data_dir / "ingest_basic.csv"), "-o", out,
                 "--unit", "power=horsepower"]) == 2
    assert main(["ingest", str(data_dir / "ingest_basic.csv"), "-o", out, "--map", "snr"]) == 2
    assert main(["ingest", str(data_dir / "ingest_basic.csv")]) == 2  # no -o
    html = _write(tmp_path, "page.csv", b"<html><body>hi</body></html>")
    assert main(["ingest", str(html), "-o", out]) == 1
    assert "not a spot table" in capsys.readouterr().err


# --- property: nothing is lost --------------------------------------------------------------------
# junk without the delimiter: a stray comma moves the columns (covered by the rejects fixture)
_JUNK = st.one_of(st.just(""), st.text(alphabet="abcXYZ019 -.:/#;é", max_size=8),
                  st.integers(-1000, 100000).map(str), st.floats(allow_nan=True).map(str))


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_property_nothing_is_lost(data, tmp_path_factory):
    n = data.draw(st.integers(1, 12))
    rows = [ROWS[i % len(ROWS)].replace("10:0", f"1{i % 10}:0").split(",") for i in range(n)]
    for _ in range(data.draw(st.integers(0, 10))):
        r, c = data.draw(st.integers(0, n - 1)), data.draw(st.integers(0, 8))
        rows[r][c] = data.draw(_JUNK)
    lines = [",".join(r) for r in rows]
    for _ in range(data.draw(st.integers(0, 3))):
        lines.insert(data.draw(st.integers(0, len(lines))),
                     lines[data.draw(st.integers(0, len(lines) - 1))])
    if data.draw(st.booleans()):
        lines.insert(data.draw(st.integers(0, len(lines))), "")
    path = tmp_path_factory.mktemp("prop") / "p.csv"
    path.write_text(HEAD + "\n".join(lines) + "\n", encoding="utf-8")
    kw = dict(delimiter=",", units={"time": "iso", "frequency": "MHz", "power": "dBm"})
    res = read_spots(path, **kw)
    _balanced(res)
    assert res.summary.rows_read == len(lines)
    got = set(res.spots[C.SOURCE_ROW]) | set(res.rejects[C.SOURCE_ROW])
    assert len(got) == res.summary.accepted + res.summary.rejected  # no row in both
    assert got <= set(range(1, len(lines) + 1))
    # every row is in exactly one of spots, rejects and duplicates; each duplicate names an
    # earlier accepted row of the same file
    dup = res.duplicates
    assert len(dup) == res.summary.duplicates
    every = [*res.spots[C.SOURCE_ROW], *res.rejects[C.SOURCE_ROW], *dup[C.SOURCE_ROW]]
    assert sorted(every) == list(range(1, len(lines) + 1))
    first = dup[C.REJECT_VALUE].str.rsplit(" row ", n=1)
    assert (first.str[0] == str(path)).all()
    first_row = first.str[1].astype(int)
    assert set(first_row) <= set(res.spots[C.SOURCE_ROW])
    assert (first_row < dup[C.SOURCE_ROW]).all()
    chunked = read_spots(path, chunk_rows=data.draw(st.integers(1, 5)), **kw)
    pdt.assert_frame_equal(res.spots, chunked.spots)
    pdt.assert_frame_equal(res.duplicates, chunked.duplicates)
    assert res.summary == chunked.summary


@pytest.mark.parametrize("max_cells", [None, 1, 49])
def test_path_columns_equal_geo_add_path_columns_across_chunks(tmp_path, monkeypatch,
                                                               max_cells):
    # max_cells: the dense pair table as is, never used (hashed pairs from the start), and
    # outgrown part way through the file
    from spotkit.geo.geodesic import add_path_columns
    from spotkit.io.pathcache import PathCache

    if max_cells is not None:
        monkeypatch.setattr(PathCache, "MAX_CELLS", max_cells)

    locs = ["JN58td", "IO91lk", "FN31pr", "JO62", "RE78ir", "GF15vc", "FM18lw", "PM95"]
    rows = [f"2026-03-01 10:{2 * (i % 30):02d},Q{i % 7}AB,{locs[i % 8]},Q{i % 5}XY,"
            f"{locs[(3 * i + 1) % 8]},14.0971,{-20 + i % 9},23,0" for i in range(60)]
    res = read_spots(_write(tmp_path, "g.csv", HEAD + "\n".join(rows) + "\n"), chunk_rows=7)
    ref = add_path_columns(res.spots[[C.TX_LOCATOR, C.RX_LOCATOR]])
    for name in C.DERIVED:
        np.testing.assert_array_equal(res.spots[name].to_numpy(), ref[name].to_numpy())


def test_both_readers_agree(data_dir, monkeypatch):
    # the pyarrow reader (comma/semicolon/tab files) and the pandas reader (all others)
    # give the same table and rejects on a file with every kind of bad row
    path = data_dir / "ingest_rejects.csv"
    fast = read_spots(path, chunk_rows=4)
    _same_from_pandas_reader(fast, path, monkeypatch, chunk_rows=4)


@pytest.mark.parametrize("bad_rows", [(), (3,), (150, 151, 600), (1199,)])
def test_pieces_parsed_in_parallel_keep_row_numbers(tmp_path, monkeypatch, bad_rows):
    # small pieces (2 kB), parsed two at a time: rows with the wrong number of fields keep
    # their row numbers; same table and rejects as the pandas reader
    from spotkit.io import csvread

    rows = _many_rows(1200)
    for r in bad_rows:
        rows[r - 1] = rows[r - 1] + ",extra"
    path = _write(tmp_path, "t.csv", HEAD + "\n".join(rows) + "\n")
    monkeypatch.setattr(csvread, "PIECE_BYTES", 2048)
    fast = read_spots(path, chunk_rows=100)
    assert list(fast.rejects[C.SOURCE_ROW]) == list(bad_rows)
    _same_from_pandas_reader(fast, path, monkeypatch, chunk_rows=100)
    _balanced(fast)


@pytest.mark.parametrize("cell,row", [("nan", 2), ("inf", 700), ("1e999", 700), (" -12", 2),
                                      ("-12 ", 700), ("x", 700), ("", 700), ("1,5", 2)])
def test_odd_numeric_cells_same_from_both_readers(tmp_path, monkeypatch, cell, row):
    # every cell is read as text and each distinct text parsed once: an odd SNR cell gives
    # the same table, rejects (with the cell's own text) and summary from the pyarrow
    # reader (pieces parsed in parallel) as from the pandas reader
    from spotkit.io import csvread

    rows = _many_rows(1000)
    parts = rows[row - 1].split(",")
    parts[6] = cell
    rows[row - 1] = ",".join(parts)
    path = _write(tmp_path, "n.csv", HEAD + "\n".join(rows) + "\n")
    monkeypatch.setattr(csvread, "PIECE_BYTES", 2048)
    got = read_spots(path, chunk_rows=100)
    _same_from_pandas_reader(got, path, monkeypatch, chunk_rows=100)
    _balanced(got)
    if cell not in (" -12", "-12 ", "1,5"):  # "1,5": one field too many
        assert got.rejects[C.REJECT_VALUE].tolist() == [cell]


def test_prefetch_passes_items_errors_and_stops_early():
    from spotkit.io.csvread import prefetch as _prefetch

    assert list(_prefetch(iter(range(5)))) == [0, 1, 2, 3, 4]

    def failing():
        yield 1
        raise InputError("bad block")

    with pytest.raises(InputError, match="bad block"):
        list(_prefetch(failing()))
    closed = []

    def endless():
        try:
            i = 0
            while True:
                yield i
                i += 1
        finally:
            closed.append(True)

    it = _prefetch(endless())
    assert next(it) == 0 and next(it) == 1
    it.close()  # the reading thread stops and closes its source
    assert closed == [True]


def test_heading_line_only(tmp_path):
    res = read_spots(_write(tmp_path, "h.csv", HEAD))
    assert res.summary.rows_read == 0 and res.spots.empty and list(res.spots.columns) == C.CANONICAL


@pytest.mark.parametrize("piece_bytes", [16, 300])
@pytest.mark.parametrize("gz", [True, False])
def test_pieces_cut_at_line_ends_give_the_same_table(tmp_path, monkeypatch, piece_bytes, gz):
    # the pyarrow reader cuts the file into pieces at line ends and gathers them into
    # chunks: pieces shorter than a line (16 bytes) or a few lines long, gzip or plain, a
    # row with too many fields, an odd SNR and a blank line give the same table, rejects
    # (row numbers included) and summary as the pandas reader
    from spotkit.io import csvread

    rows = _many_rows(400)
    rows[10] += ",extra"
    rows[200] = rows[200].replace(",23,", ",loud,")
    rows[300] = ""
    path = tmp_path / ("p.csv.gz" if gz else "p.csv")
    with (gzip.open(path, "wt", encoding="utf-8") if gz else open(path, "w")) as fh:
        fh.write(HEAD + "\n".join(rows))  # no line end after the last row
    monkeypatch.setattr(csvread, "PIECE_BYTES", piece_bytes)
    got = read_spots(path, chunk_rows=50)
    assert got.summary.rows_read == 400
    _same_from_pandas_reader(got, path, monkeypatch, chunk_rows=50)
    assert got.rejects[C.SOURCE_ROW].tolist() == [11, 201, 301]
    _balanced(got)


def test_path_cache_numbers_categories_that_do_not_extend_the_ones_seen():
    # the cache numbers growing registries by position; categories in another order, or
    # with gaps, must still give each row its own locators' geometry (oracle: geo's
    # add_path_columns, which solves every row with geopy's / PROJ's geodesic)
    from spotkit.geo.geodesic import add_path_columns
    from spotkit.io.pathcache import PathCache

    cache = PathCache()
    batches = [  # (tx categories, rx categories): extend, extend, reorder, subset, extend
        (["JN58td", "IO91lk"], ["FN31pr"]),
        (["JN58td", "IO91lk", "JO62"], ["FN31pr", "RE78ir"]),
        (["JO62", "JN58td", "IO91lk"], ["RE78ir", "FN31pr"]),
        (["IO91lk"], ["RE78ir"]),
        (["JN58td", "IO91lk", "JO62", "PM95"], ["FN31pr", "RE78ir", "GF15vc"]),
    ]
    rng = np.random.default_rng(3)
    for tx_cats, rx_cats in batches:
        tx = pd.Categorical.from_codes(rng.integers(0, len(tx_cats), 40), tx_cats)
        rx = pd.Categorical.from_codes(rng.integers(0, len(rx_cats), 40), rx_cats)
        got = cache.lookup(tx, rx)
        ref = add_path_columns(pd.DataFrame({C.TX_LOCATOR: tx, C.RX_LOCATOR: rx}))
        for name, values in zip(C.DERIVED, got, strict=True):
            np.testing.assert_array_equal(values, ref[name].to_numpy(), err_msg=name)


# --- duplicates are traceable ---------------------------------------------------------------------
@pytest.mark.parametrize("chunk_rows", [None, 1, 3, 7])
def test_every_duplicate_names_the_report_it_repeats(tmp_path, chunk_rows):
    # the oracle: the first earlier line (in file order, across files) with the same text;
    # lines with a bad locator are rejected, never duplicates or originals
    good = _many_rows(12)
    bad = ROWS[0].replace("IO91lk", "XX99")
    files = {"a.csv": [good[0], good[1], good[0], bad, good[2], bad, good[1]],
             "b.csv": [good[2], good[3], good[3], good[0], good[4]]}
    paths = [_write(tmp_path, name, HEAD + "\n".join(rows) + "\n")
             for name, rows in files.items()]
    res = read_spots(paths, chunk_rows=chunk_rows)
    _balanced(res)
    seen, want = {}, []
    for path, rows in zip(paths, files.values(), strict=True):
        for i, line in enumerate(rows, start=1):
            if line == bad:
                continue
            if line in seen:
                want.append([str(path), i, "report", f"{seen[line][0]} row {seen[line][1]}",
                             "exact duplicate"])
            else:
                seen[line] = (str(path), i)
    assert res.duplicates.values.tolist() == want
    assert res.summary.duplicates == len(want) == 5
    assert res.summary.rows_read == 12 == res.summary.accepted + res.summary.rejected + 5
    # the rejects file of the streamed ingest lists them in the same way
    rej_path = tmp_path / "r.csv"
    summary = ingest_to_parquet(paths, tmp_path / "o.parquet", rejects_path=rej_path,
                                chunk_rows=chunk_rows or 1_000_000)
    rej = pd.read_csv(rej_path, keep_default_na=False)
    assert len(rej) == summary.rejected + summary.duplicates
    assert rej[rej["reason"] == "exact duplicate"].values.tolist() == want


# --- runs that are not a success ------------------------------------------------------------------
def _summary(**file_rejects):
    """A summary of files with 10 rows each and the given rejects per reason."""
    names = list(file_rejects)
    rejected = sum(sum(v.values()) for v in file_rejects.values())
    by_reason = {}
    for counts in file_rejects.values():
        for k, v in counts.items():
            by_reason[k] = by_reason.get(k, 0) + v
    return IngestSummary(rows_read=10 * len(names), accepted=10 * len(names) - rejected,
                         rejected=rejected, rejected_by_reason=by_reason, files=names,
                         file_rows=dict.fromkeys(names, 10), file_rejects=file_rejects)


def test_reject_share_is_checked_per_file_and_per_reason():
    # 6 of 10 rows of b for one reason: refused at 0.5, not at 0.6; two reasons of 4 each
    # stay under 0.5
    ok = _summary(a={"bad call": 4, "bad locator": 4}, b={})
    check_reject_share(ok)
    s = _summary(a={}, b={"unparseable time": 6, "bad call": 1})
    with pytest.raises(MostlyRejectedError, match=r"^b: 6 of 10 rows \(60 %\) set aside as "
                       r"'unparseable time', more than the 50 % allowed") as info:
        check_reject_share(s)
    assert info.value.summary is s and "epoch-ms" in str(info.value)
    check_reject_share(s, 0.6)
    check_reject_share(s, None)
    # a file whose every row is set aside is refused whatever the share, with two files
    s = _summary(a={}, b={"bad call": 5, "bad locator": 5})
    with pytest.raises(MostlyRejectedError, match="b: every row .10. set aside"):
        check_reject_share(s, 1.0)
    with pytest.raises(UsageError, match="from 0 to 1"):
        check_reject_share(s, 1.5)


def test_no_row_accepted_is_refused_and_names_the_likely_fix():
    s = _summary(x={"frequency not in an amateur band": 10})
    with pytest.raises(MostlyRejectedError, match=r"x: no row accepted \(10 read; set aside: "
                       r"frequency not in an amateur band: 10\); the values may be kHz or Hz"):
        check_reject_share(s, 1.0)
    assert reject_hint("SNR not a number").startswith("the SNR column may use another minus")
    assert reject_hint("blank line") is None


def test_read_spots_and_ingest_to_parquet_share_the_policy(tmp_path):
    rows = [r.replace("14.0971", "14097.1").replace("7.03865", "7038.65")
            for r in ROWS[:3]] + ROWS[3:]  # kHz under a MHz heading
    path = _write(tmp_path, "k.csv", HEAD + "\n".join(rows) + "\n")
    assert read_spots(path).summary.accepted == 1  # no policy by default: all returned
    with pytest.raises(MostlyRejectedError, match="'frequency not in an amateur band'") as info:
        read_spots(path, max_reject_share=0.5)
    assert info.value.result.summary.rejected == 3 and len(info.value.result.spots) == 1
    out = tmp_path / "o.parquet"
    out.write_bytes(b"earlier")
    with pytest.raises(MostlyRejectedError):
        ingest_to_parquet(path, out)
    assert out.read_bytes() == b"earlier"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["k.csv", "o.parquet"]
    assert ingest_to_parquet(path, out, max_reject_share=0.9).accepted == 1
