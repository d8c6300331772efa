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


# --- issue 16: --home typos, one antenna's coverage, the zoomed panel -----------------------
@pytest.fixture(scope="module")
def demo_parquet(tmp_path_factory, sim):
    path = tmp_path_factory.mktemp("demo") / "simultaneous.parquet"
    spots = sim.spots[sim.spots[C.BAND].astype(str) == "10m"]
    spots.to_parquet(path)
    return str(path)


@pytest.mark.parametrize("home", ["JP62qm", "JO82qm", "IO62qm"])
def test_home_far_from_the_station_in_the_data_is_named(home, demo_parquet, tmp_path, capsys):
    """A typo in --home (JP62qm for JO62qm: 1,100 km north) draws the map, with a note naming
    --home, the locator typed and the station's own locator in the data."""
    out = tmp_path / "m.png"
    assert main(["map", demo_parquet, "--kind", "coverage", "--home", home,
                 "--radius-km", "0", "-o", str(out)]) == 0
    err = capsys.readouterr().err
    assert f"note: --home {home} is" in err and "JO62qm" in err and "typo" in err
    assert out.exists()


@pytest.mark.parametrize("home", ["JO62rn", "JO72qm", "JO61qm"])
def test_home_in_the_neighbouring_square_is_quiet(home, demo_parquet, tmp_path, capsys):
    out = tmp_path / "m.png"
    assert main(["map", demo_parquet, "--kind", "coverage", "--home", home,
                 "--radius-km", "0", "-o", str(out)]) == 0
    assert "--home" not in capsys.readouterr().err


def test_coverage_of_one_antenna_or_both(demo_parquet, tmp_path, monkeypatch, sim):
    """--antenna A and --antenna B map different spots (the coverage map no longer pools
    them silently); both puts A and B side by side on one colour scale; leaving --antenna out
    with --a given means both; without the A/B options the title says the calls are pooled."""
    import matplotlib.pyplot as plt

    from spotkit.viz import maps

    drawn = {}

    def keep(fig, path, dpi, option="-o"):
        drawn[os.path.basename(path)] = fig
        return 0

    monkeypatch.setattr("spotkit.cli.figures.save_figure", keep)
    ab = ["--design", "simultaneous", "--a", sim.a, "--b", sim.b]
    for which in ("A", "B", "both", None):
        extra = ["--antenna", which] if which else []
        assert main(["map", demo_parquet, "--kind", "coverage", "--radius-km", "0",
                     "-o", str(tmp_path / f"{which}.png"), *ab, *extra]) == 0
    assert main(["map", demo_parquet, "--kind", "coverage", "--radius-km", "0",
                 "-o", str(tmp_path / "pooled.png")]) == 0

    def stations(fig):
        axes = [ax for ax in fig.axes if hasattr(ax, "projection")]
        return [next(a for a in ax.get_children() if a.get_gid() == "stations")
                for ax in axes]

    spots = pd.read_parquet(demo_parquet)
    n_a = spots.loc[spots[C.TX_CALL] == sim.a, C.RX_CALL].nunique()
    n_b = spots.loc[spots[C.TX_CALL] == sim.b, C.RX_CALL].nunique()
    (sa,) = stations(drawn["A.png"])
    (sb,) = stations(drawn["B.png"])
    assert len(sa.get_offsets()) == n_a and len(sb.get_offsets()) == n_b
    assert sorted(sa.get_array()) != sorted(sb.get_array())  # not the same picture
    for name in ("both.png", "None.png"):
        pa, pb = stations(drawn[name])
        assert pa.norm.vmin == pb.norm.vmin and pa.norm.vmax == pb.norm.vmax  # one scale
        titles = [ax.get_title() for ax in drawn[name].axes if hasattr(ax, "projection")]
        assert titles[0].startswith(sim.a) and titles[1].startswith(sim.b)
    assert "pooled" in drawn["pooled.png"]._suptitle.get_text()
    assert "pooled" not in drawn["both.png"]._suptitle.get_text()
    plt.close("all")
    assert maps  # imported for the figures' module


@pytest.mark.parametrize("argv, message", [
    (["--antenna", "A"], "--antenna tells A from B by the design: give --design and --a"),
    (["--radius-km", "-5"], "--radius-km must be 0"),
])
def test_map_option_mistakes_are_usage_errors(argv, message, demo_parquet, tmp_path, capsys):
    code = main(["map", demo_parquet, "--kind", "coverage", "-o", str(tmp_path / "m.png"),
                 *argv])
    err = _one_error_line(capsys, 2, code)
    assert message in err


def test_radius_km_chooses_the_zoomed_panel(demo_parquet, tmp_path, monkeypatch):
    drawn = {}
    monkeypatch.setattr("spotkit.cli.figures.save_figure",
                        lambda fig, path, dpi, option="-o": drawn.setdefault("fig", fig) and 0)
    assert main(["map", demo_parquet, "--kind", "coverage", "--radius-km", "750",
                 "-o", str(tmp_path / "m.png")]) == 0
    titles = [ax.get_title() for ax in drawn["fig"].axes if hasattr(ax, "projection")]
    assert len(titles) == 2 and "within 750 km" in titles[1]
