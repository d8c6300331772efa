"""load_spots on Parquet tables not written by spotkit (issue 14): times without a time zone
are read as UTC with a note; a table of other columns or of mistyped spot columns is bad
input naming the file and the column, never a traceback."""
import re
import warnings

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from factories import make_spots

from spotkit import columns as C
from spotkit.errors import InputError, NotASpotTableError, SpotkitWarning
from spotkit.io.ingest import load_spots


def test_times_without_a_zone_are_read_as_utc(tmp_path):
    spots = make_spots(40, seed=2)
    naive = spots.copy()
    for col in (C.TIME, C.SLOT):
        naive[col] = naive[col].dt.tz_localize(None)
    path = tmp_path / "naive.parquet"
    naive.to_parquet(path)
    with pytest.warns(SpotkitWarning, match=r"the times in time_utc, slot_utc carry no time "
                                            r"zone; read as UTC$"):
        got = load_spots(path)
    # the same instants as the table written with UTC times, in the glossary's order
    pd.testing.assert_frame_equal(got, load_spots(_written(spots, tmp_path)))


def _written(spots, tmp_path):
    path = tmp_path / "aware.parquet"
    spots.to_parquet(path)
    return path


def test_times_with_a_zone_need_no_note(tmp_path):
    path = _written(make_spots(10), tmp_path)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert str(load_spots(path)[C.TIME].dtype) == "datetime64[ns, UTC]"


def test_parquet_of_other_columns_is_not_a_spot_table(tmp_path):
    path = tmp_path / "other.parquet"
    pd.DataFrame({"station": ["Q1ABC"], "watts": [5.0]}).to_parquet(path)
    with pytest.raises(NotASpotTableError, match=r"other.parquet: not a spot table: none of "
                                                 r"its columns \(station, watts\)"):
        load_spots(path)


@pytest.mark.parametrize(("column", "values", "message"), [
    (C.SNR, ["-12", "strong"], "snr_db holds string, not numbers"),
    (C.TIME, ["2026-11-30 20:00", "x"], "time_utc holds string, not times"),
    (C.POWER, [True, False], "power_dbm holds bool, not numbers"),
])
def test_spot_column_of_the_wrong_type_is_bad_input(column, values, message, tmp_path):
    path = tmp_path / "typed.parquet"
    pq.write_table(pa.table({C.TX_CALL: ["Q1ABC", "Q7XYZ"], column: values}), path)
    with pytest.raises(InputError, match=rf"typed.parquet: {message}$"):
        load_spots(path)


def test_zero_row_table_is_read_as_it_is(tmp_path):
    # emptiness is for the caller to judge (a plot refuses it, see tests/viz)
    path = _written(make_spots(5).iloc[:0], tmp_path)
    assert len(load_spots(path)) == 0


# --- a plain folder of Parquet files (not a spotkit archive) ------------------------------
def test_folder_of_parquet_files_is_read_whole(tmp_path):
    """Files written with pandas into one folder (and a subfolder), no manifest: all rows,
    in file-name order, with the glossary dtypes - the table of the files stacked."""
    spots = make_spots(300, seed=4)
    folder = tmp_path / "exports"
    (folder / "later").mkdir(parents=True)
    spots.iloc[:100].to_parquet(folder / "a.parquet")
    spots.iloc[100:250].to_parquet(folder / "b.pq")
    spots.iloc[250:].to_parquet(folder / "later" / "c.parquet")
    (folder / "notes.txt").write_text("not data\n")
    got = load_spots(folder)
    want = load_spots(_written(spots, tmp_path))
    pd.testing.assert_frame_equal(got, want)


@pytest.mark.parametrize("files, found", [
    ({}, "found no files at all"),
    ({"a.csv": "x\n", "sub/b.txt": "y\n"}, "found 2 other file(s): a.csv, sub/b.txt"),
])
def test_folder_without_parquet_files_says_what_it_holds(tmp_path, files, found):
    folder = tmp_path / "exports"
    folder.mkdir()
    for name, text in files.items():
        (folder / name).parent.mkdir(exist_ok=True)
        (folder / name).write_text(text)
    with pytest.raises(InputError, match=r"exports: expected a spotkit archive \(a folder "
                                         r"with _spotkit_manifest.json\) or a folder of "
                                         r"Parquet spot files .*; " + re.escape(found)):
        load_spots(folder)


def test_bad_file_in_a_folder_is_named(tmp_path):
    folder = tmp_path / "exports"
    folder.mkdir()
    make_spots(20).to_parquet(folder / "a.parquet")
    pd.DataFrame({"colour": ["red"]}).to_parquet(folder / "b.parquet")
    with pytest.raises(NotASpotTableError, match=r"b\.parquet: not a spot table"):
        load_spots(folder)
