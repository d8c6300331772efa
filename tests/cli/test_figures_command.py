"""``spotkit map`` and ``spotkit plot`` (spotkit.cli.figures): a malformed locator is a bad
argument when it is --home (exit 2) and bad input when the map centre comes from the data
(exit 1). The figures themselves are tested in tests/viz."""
import os

import pandas as pd
import pytest
from factories import make_spots

from spotkit import columns as C
from spotkit.cli import main

pytest.importorskip("cartopy")

LOCATOR_MESSAGE = ("not a Maidenhead locator: {!r}: 1st character {!r} is past 'R' (the field is "
                   "letters A-R); a locator is like 'JN58', 'JN58td' or 'JN58td25'")


def _table(tmp_path, home_locator=None):
    spots = make_spots(60, seed=3)
    if home_locator:
        # a table not written by 'spotkit ingest' (which sets such rows aside)
        spots[C.TX_LOCATOR] = home_locator
        spots[C.RX_LOCATOR] = home_locator
    path = tmp_path / "spots.parquet"
    spots.to_parquet(path)
    return str(path)


def test_bad_home_option_is_usage_error(tmp_path, capsys):
    out = tmp_path / "m.png"
    assert main(["map", _table(tmp_path), "--kind", "coverage", "-o", str(out),
                 "--home", "XX"]) == 2
    assert capsys.readouterr().err == "spotkit: error: " + LOCATOR_MESSAGE.format("XX", "X") + "\n"
    assert not out.exists()


def test_bad_home_locator_in_the_data_is_bad_input(tmp_path, capsys):
    out = tmp_path / "m.png"
    assert main(["map", _table(tmp_path, "ZZ99"), "--kind", "coverage", "-o", str(out)]) == 1
    expected = "spotkit: error: " + LOCATOR_MESSAGE.format("ZZ99", "Z") + "\n"
    assert capsys.readouterr().err == expected
    assert not out.exists()


# --- issue 14: one clear message instead of a traceback --------------------------------------
def _one_error_line(capsys, code_expected, code):
    err = capsys.readouterr().err
    assert code == code_expected, err
    assert err.startswith("spotkit: ") and err.count("\n") == 1 and "Traceback" not in err
    return err


FIGURES = [["map", "--kind", "coverage"], ["plot", "--kind", "spots-per-hour"],
           ["plot", "--kind", "snr-distance"]]


@pytest.mark.parametrize("command", FIGURES)
def test_parquet_of_other_columns_is_bad_input(command, tmp_path, capsys):
    path = tmp_path / "other.parquet"
    pd.DataFrame({"a": [1, 2], "b": ["x", "y"]}).to_parquet(path)
    out = tmp_path / "f.png"
    err = _one_error_line(capsys, 1, main([*command, str(path), "-o", str(out)]))
    assert f"{path}: not a spot table: none of its columns (a, b) is a spot column" in err
    assert not out.exists()


@pytest.mark.parametrize(("command", "missing"), [
    (FIGURES[0], "band, rx_call, rx_lat, rx_lon, distance_km, bearing_deg, snr_db, power_dbm"),
    (FIGURES[1], "band"), (FIGURES[2], "distance_km, snr_db, power_dbm")])
def test_spot_table_without_the_columns_a_figure_needs(command, missing, tmp_path, capsys):
    # a Parquet table of a few spot columns, not written by 'spotkit ingest'
    path = tmp_path / "some.parquet"
    make_spots(30)[[C.TIME, C.SLOT, C.TX_CALL, C.TX_LOCATOR, C.RX_LOCATOR]].to_parquet(path)
    err = _one_error_line(capsys, 1, main([*command, str(path), "-o", str(tmp_path / "f.png")]))
    assert f"needs column(s) {missing}, which the table does not have" in err


@pytest.mark.parametrize("command", [*FIGURES, ["map", "--kind", "coverage", "--home", "JN58"]])
def test_zero_row_table_is_bad_input(command, tmp_path, capsys):
    path = tmp_path / "none.parquet"
    make_spots(5).iloc[:0].to_parquet(path)
    out = tmp_path / "f.png"
    err = _one_error_line(capsys, 1, main([*command, str(path), "-o", str(out)]))
    assert "no spots to" in err and "has no rows" in err
    assert not out.exists()


def _naive(tmp_path):
    spots = make_spots(60, seed=3)
    naive = spots.copy()
    for col in (C.TIME, C.SLOT):
        naive[col] = naive[col].dt.tz_localize(None)
    path = tmp_path / "naive.parquet"
    naive.to_parquet(path)
    return spots, path


def test_times_without_a_zone_are_read_as_utc_with_a_note(tmp_path, capsys):
    _, path = _naive(tmp_path)
    out = tmp_path / "hours.png"
    assert main(["plot", str(path), "--kind", "spots-per-hour", "-o", str(out)]) == 0
    captured = capsys.readouterr()
    assert captured.err == (f"spotkit: note: {path}: the times in time_utc, slot_utc carry no "
                            "time zone; read as UTC\n")
    assert out.stat().st_size > 0


@pytest.mark.parametrize("command", FIGURES)
def test_output_that_is_a_folder_is_a_usage_error(command, tmp_path, capsys):
    folder = tmp_path / "pictures.png"
    folder.mkdir()
    err = _one_error_line(capsys, 2, main([*command, _table(tmp_path), "-o", str(folder)]))
    assert err == f"spotkit: -o {folder}: is a folder; give a file name in it\n"
    assert list(folder.iterdir()) == []


def test_output_in_a_missing_folder_is_a_usage_error(tmp_path, capsys):
    out = tmp_path / "no-such-folder" / "p.png"
    err = _one_error_line(capsys, 2, main(["plot", _table(tmp_path), "--kind", "snr-distance",
                                           "-o", str(out)]))
    assert "does not exist" in err


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes in read-only folders")
def test_output_in_a_read_only_folder_is_a_usage_error(tmp_path, capsys):
    folder = tmp_path / "ro"
    folder.mkdir()
    folder.chmod(0o555)
    try:
        err = _one_error_line(capsys, 2, main(["plot", _table(tmp_path), "--kind",
                                               "snr-distance", "-o", str(folder / "p.png")]))
    finally:
        folder.chmod(0o755)
    assert "cannot write there (permission denied)" in err


@pytest.mark.parametrize(("failure", "code", "message"), [
    (PermissionError(13, "Permission denied"), 2, "cannot write there (Permission denied)"),
    (OSError(30, "Read-only file system"), 2, "cannot write there (Read-only file system)"),
    (OSError(28, "No space left on device"), 1, "No space left on device"),
    (KeyboardInterrupt(), 130, "interrupted"),
])
def test_failed_write_keeps_the_earlier_picture(failure, code, message, tmp_path, capsys,
                                                monkeypatch):
    # a write that fails (a read-only folder found only when writing, as root sees it; a
    # full disk; Ctrl-C) leaves the earlier picture byte-identical and nothing beside it
    from matplotlib.figure import Figure

    table = _table(tmp_path)
    out = tmp_path / "p.png"
    out.write_bytes(b"earlier picture")

    def fail(self, fname, **kwargs):
        with open(fname, "wb") as fh:
            fh.write(b"half a pic")
        raise failure

    monkeypatch.setattr(Figure, "savefig", fail)
    err = _one_error_line(capsys, code, main(["plot", table, "--kind", "snr-distance",
                                              "-o", str(out)]))
    assert message in err
    assert out.read_bytes() == b"earlier picture"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["p.png", "spots.parquet"]
