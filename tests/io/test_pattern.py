"""spotkit's gain-pattern CSV layout: round trip, evaluation, hostile files."""
import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.errors import InputError
from spotkit.io.pattern import PATTERN_COLUMNS, GainPattern, read_pattern, write_pattern
from spotkit.sim.antenna import (
    band_frequency_hz,
    dipole_antenna,
    horizontal_dipole_gain,
    pattern_table,
    quarter_wave_vertical_gain,
    vertical_antenna,
)

GOOD = "band,elevation_deg,azimuth_deg,gain_dbi\n20m,0,0,-3\n20m,10,0,1\n20m,0,90,-2\n20m,10,90,2\n"


def _write(tmp_path, text, name="p.csv", mode="w"):
    p = tmp_path / name
    if mode == "wb":
        p.write_bytes(text)
    else:
        p.write_text(text, encoding="utf-8")
    return p


def test_round_trip_of_the_shipped_models(tmp_path):
    table = pd.concat([pattern_table(vertical_antenna(["20m", "40m"]), ["20m", "40m"]),
                       pattern_table(dipole_antenna(["20m"], height_m=20), ["20m"])])
    table = table[table[C.BAND] == "20m"].iloc[:91]  # the vertical's 20 m column
    p = write_pattern(table, tmp_path / "v.csv", comment="vertical\naverage ground")
    back = read_pattern(p)
    assert list(back.columns) == PATTERN_COLUMNS
    assert np.allclose(back[C.GAIN], table[C.GAIN], atol=1e-4)  # 6 significant digits
    assert p.read_text().startswith("# spotkit gain pattern 1\n# vertical\n# average ground\n")


def test_pattern_evaluates_like_the_antenna_functions(tmp_path):
    # oracle: the closed-form gain functions, evaluated off the 1 deg / 5 deg grid
    f = band_frequency_hz("20m")
    vert = GainPattern(read_pattern(write_pattern(
        pattern_table(vertical_antenna(["20m"]), ["20m"]), tmp_path / "v.csv")))
    dip = GainPattern(read_pattern(write_pattern(
        pattern_table(dipole_antenna(["20m"], height_m=20.0), ["20m"]), tmp_path / "d.csv")))
    el = np.array([10.3, 22.7, 35.5, 48.1])
    az = np.array([12.5, 93.0, 181.0, 359.0])
    assert np.allclose(vert.gain_db("20m", el, az), quarter_wave_vertical_gain(el, f),
                       atol=0.05)
    assert np.allclose(dip.gain_db("20m", el, az),
                       horizontal_dipole_gain(el, az, f, 20.0), atol=0.3)
    with pytest.raises(InputError, match="no gain table for band 40m"):
        vert.gain_db("40m", 10.0, 0.0)


def test_frequency_column_maps_to_band(tmp_path):
    text = GOOD.replace("band,", "frequency_mhz,").replace("20m,", "14.0971,")
    assert set(read_pattern(_write(tmp_path, text))[C.BAND]) == {"20m"}


@pytest.mark.parametrize("text, message", [
    ("", "has no heading line"),
    ("# only a comment\n", "has no heading line"),
    ("band,elevation_deg,azimuth_deg,gain_dbi\n", "has a heading but no rows"),
    (GOOD.replace("gain_dbi", "gain"), r"field 'gain_dbi': missing column"),
    (GOOD.replace("band,", "band,frequency_mhz,").replace("20m,", "20m,14.1,"),
     "exactly one of the columns"),
    (GOOD.replace("20m,10,0,1\n", "20m,10,0,abc\n"), r"line 3, field 'gain_dbi': 'abc' is not"),
    (GOOD.replace("20m,10,0,1\n", "20m,10,0,\n"), r"line 3, field 'gain_dbi': is empty"),
    (GOOD.replace("20m,10,0,1\n", "20m,10,0,nan\n"), r"line 3, field 'gain_dbi'"),
    (GOOD.replace("20m,10,0,1\n", "20m,10,0,99\n"), r"line 3, field 'gain_dbi': 99 is outside"),
    (GOOD.replace("20m,10,90,2", "20m,95,90,2"), r"line 5, field 'elevation_deg': 95 is out"),
    (GOOD.replace("20m,0,90,-2", "20m,0,360,-2"), r"line 4, field 'azimuth_deg': 360 is out"),
    (GOOD.replace("20m,10,90,2", "21q,10,90,2"), r"line 5, field 'band': '21q' is not a band"),
    (GOOD + "20m,10,90,5\n", "line 6: direction given twice"),
    (GOOD.replace("20m,10,90,2\n", ""), "band 20m: not a complete grid"),
    ("band,elevation_deg,azimuth_deg,gain_dbi\n20m,5,0,1\n", "at least two elevations"),
    ("<html><body>not a pattern</body></html>\n", "needs exactly one of the columns"),
])
def test_hostile_files_name_file_line_and_field(tmp_path, text, message):
    p = _write(tmp_path, text)
    with pytest.raises(InputError, match=message) as err:
        read_pattern(p)
    assert str(p) in str(err.value)


def test_comments_blank_lines_and_line_numbers(tmp_path):
    text = "# c\n\n" + GOOD.replace("20m,10,90,2", "# note\n20m,10,90,x")
    with pytest.raises(InputError, match=r"line 8, field 'gain_dbi': 'x'"):
        read_pattern(_write(tmp_path, text))


def test_frequency_outside_every_band(tmp_path):
    text = GOOD.replace("band,", "frequency_mhz,").replace("20m,", "14.1,", 3).replace(
        "20m,", "8.0,")
    with pytest.raises(InputError, match=r"line 5, field 'frequency_mhz': 8 MHz is in no"):
        read_pattern(_write(tmp_path, text))


def test_binary_non_utf8_and_missing_files(tmp_path):
    with pytest.raises(InputError, match="is binary"):
        read_pattern(_write(tmp_path, b"PK\x03\x04\x00\x00junk", mode="wb"))
    with pytest.raises(InputError, match="not UTF-8"):
        read_pattern(_write(tmp_path, GOOD.encode() + b"20m,5,0,\xff\n", mode="wb"))
    with pytest.raises(InputError, match="cannot be read"):
        read_pattern(tmp_path / "absent.csv")


def test_writer_refuses_a_table_without_the_columns(tmp_path):
    with pytest.raises(InputError, match="lacks columns gain_dbi"):
        write_pattern(pd.DataFrame({"band": ["20m"], "elevation_deg": [0.0],
                                    "azimuth_deg": [0.0]}), tmp_path / "x.csv")
    assert not (tmp_path / "x.csv").exists()


def test_kill_9_while_writing_leaves_a_whole_pattern(tmp_path):
    """A writer killed (SIGKILL) in the middle of rewriting a pattern leaves the earlier or
    the new file whole, never a torn one; the next write succeeds."""
    import os
    import signal
    import subprocess
    import sys
    import time

    target = tmp_path / "p.csv"
    small = pattern_table(vertical_antenna(["20m"]), ["20m"])
    write_pattern(small, target)
    code = ("from spotkit.io.pattern import write_pattern\n"
            "from spotkit.sim.antenna import dipole_antenna, pattern_table\n"
            "t = pattern_table(dipole_antenna(['20m', '40m', '10m']), ['20m', '40m', '10m'],"
            " elevation_step_deg=0.5, azimuth_step_deg=2)\n"
            "print('ready', flush=True)\n"
            f"while True: write_pattern(t, {str(target)!r})\n")
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    with subprocess.Popen([sys.executable, "-c", code], env=env,
                          stdout=subprocess.PIPE) as proc:
        assert proc.stdout.readline().strip() == b"ready"
        time.sleep(1.0)
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
    back = read_pattern(target)  # whole: it parses, every band a complete grid
    assert len(back) in (len(small), 3 * 181 * 180)
    write_pattern(small, target)
    assert len(read_pattern(target)) == len(small)
