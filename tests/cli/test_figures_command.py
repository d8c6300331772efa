"""``spotkit map`` and ``spotkit plot`` (spotkit.cli.figures): a malformed locator is a bad
argument when it is --home (exit 2) and bad input when the map centre comes from the data
(exit 1). The figures themselves are tested in tests/viz."""
import pytest
from factories import make_spots

from spotkit import columns as C
from spotkit.cli import main

pytest.importorskip("cartopy")

LOCATOR_MESSAGE = ("not a Maidenhead locator: {!r} (expected 2, 4, 6, 8 or 10 characters like "
                   "'JN58', 'JN58td' or 'JN58td25')")


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
    assert capsys.readouterr().err == "spotkit: error: " + LOCATOR_MESSAGE.format("XX") + "\n"
    assert not out.exists()


def test_bad_home_locator_in_the_data_is_bad_input(tmp_path, capsys):
    out = tmp_path / "m.png"
    assert main(["map", _table(tmp_path, "ZZ99"), "--kind", "coverage", "-o", str(out)]) == 1
    assert capsys.readouterr().err == "spotkit: error: " + LOCATOR_MESSAGE.format("ZZ99") + "\n"
    assert not out.exists()
