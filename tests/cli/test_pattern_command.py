"""``spotkit pattern`` and ``spotkit compare --pattern-a/--pattern-b``: files, exit codes."""
from __future__ import annotations

import json

import pandas as pd
import pytest

from spotkit.cli import main
from spotkit.io.pattern import read_pattern
from spotkit.sim.simulate import simulate_spots


@pytest.fixture(scope="module")
def setup(tmp_path_factory):
    d = tmp_path_factory.mktemp("patterns")
    sim = simulate_spots(days=1, n_receivers=150, bands=("20m",), seed=5)
    sim.spots.to_parquet(d / "spots.parquet")
    assert main(["pattern", "--antenna", "vertical", "-o", str(d / "v.csv")]) == 0
    assert main(["pattern", "--antenna", "dipole", "-o", str(d / "d.csv")]) == 0
    assert main(["pattern", "--antenna", "dipole", "--shift", "3", "--shift-below", "15",
                 "-o", str(d / "d3.csv")]) == 0
    return d


def _compare(d, b_file, *extra):
    return ["compare", str(d / "spots.parquet"), "--design", "simultaneous", "--a", "Q1ABC",
            "--b", "Q1ABD", "--pattern-a", str(d / "v.csv"), "--pattern-b", str(d / b_file),
            "--bearing-width", "90", "--boot", "60", *extra]


def test_pattern_files_are_readable_and_shifted_where_asked(setup):
    d = read_pattern(setup / "d.csv")
    d3 = read_pattern(setup / "d3.csv")
    low = d["elevation_deg"] < 15
    assert ((d3["gain_dbi"] - d["gain_dbi"])[low] - 3.0).abs().max() < 1e-3  # 6 digits
    assert (d3["gain_dbi"] - d["gain_dbi"])[~low].abs().max() < 1e-3
    assert read_pattern(setup / "v.csv")["azimuth_deg"].nunique() == 1  # omnidirectional
    assert "+3 dB below 15 deg" in (setup / "d3.csv").read_text().splitlines()[1]


def test_compare_with_patterns_text_json_csv(setup, tmp_path, capsys):
    js, cs = tmp_path / "chk.json", tmp_path / "chk.csv"
    assert main(_compare(setup, "d.csv", "--json", str(js), "--csv", str(cs))) == 0
    out = capsys.readouterr().out
    assert "is consistent with the patterns' prediction" in out
    d = json.loads(js.read_text())
    assert d["rejected"] is False and d["df"] == len(d["cells"]) >= 4
    assert d["options"]["layer_heights_km"] == [250.0, 400.0]
    table = pd.read_csv(cs)
    assert {"predicted_low_db", "predicted_high_db", "misfit_z", "disagrees"} <= set(table)
    assert main(_compare(setup, "d3.csv", "--json", str(js))) == 0
    d = json.loads(js.read_text())
    assert d["rejected"] is True
    assert any(c["disagrees"] and c["elevation_max_deg"] <= 20 for c in d["cells"])
    assert "does not agree" in capsys.readouterr().out


def test_bad_pattern_file_exit_1_names_file_line_field(setup, tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("band,elevation_deg,azimuth_deg,gain_dbi\n20m,0,0,1\n20m,abc,0,2\n")
    args = _compare(setup, "d.csv")
    args[args.index("--pattern-b") + 1] = str(bad)
    assert main(args) == 1
    err = capsys.readouterr().err
    assert "bad.csv, line 3, field 'elevation_deg': 'abc' is not a number" in err


def test_usage_errors_exit_2(setup, tmp_path, capsys):
    args = _compare(setup, "d.csv")
    i = args.index("--pattern-b")
    assert main(args[:i] + args[i + 2:]) == 2
    assert "give both --pattern-a and --pattern-b" in capsys.readouterr().err
    assert main(_compare(setup, "d.csv", "--layer-heights", "400,250")) == 2
    # an output that is an input is refused before any work
    assert main(_compare(setup, "d.csv", "--csv", str(setup / "v.csv"))) == 2
    assert main(["pattern", "--antenna", "yagi", "-o", str(tmp_path / "y.csv")]) == 2


def test_plot_pattern_check(setup, tmp_path):
    out = tmp_path / "pc.svg"
    args = ["plot", str(setup / "spots.parquet"), "--kind", "pattern-check", "--design",
            "simultaneous", "--a", "Q1ABC", "--b", "Q1ABD", "--pattern-a", str(setup / "v.csv"),
            "--pattern-b", str(setup / "d3.csv"), "--bearing-width", "90", "--boot", "40",
            "-o", str(out)]
    assert main(args) == 0
    svg = out.read_text()
    assert 'id="measured-0"' in svg and 'id="predicted-0"' in svg
    assert "disagrees-" in svg  # the shifted pattern's low-angle cells are ringed
    i = args.index("--pattern-b")
    assert main(args[:i] + args[i + 2:]) == 2  # needs both patterns
