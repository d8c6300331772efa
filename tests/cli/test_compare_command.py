"""``spotkit compare``/``report``/``plot``: the antenna names (--label-a/--label-b), the
paste-ready summary (--markdown) and the "where" grid (plot --kind grid)."""
from __future__ import annotations

import pytest

from spotkit.cli import main

AB = ["--design", "simultaneous", "--a", "Q1ABC", "--b", "Q1ABD"]


@pytest.fixture(scope="module")
def demo_parquet(sim, tmp_path_factory):
    path = tmp_path_factory.mktemp("cmp") / "spots.parquet"
    sim.spots.to_parquet(path)
    return str(path)


@pytest.mark.parametrize("command", [
    ["compare", "missing.parquet"],
    ["report", "missing.parquet", "-o", "r.html"],
    ["plot", "missing.parquet", "--kind", "grid", "-o", "g.png"],
])
@pytest.mark.parametrize(("labels", "message"), [
    (["--label-a", "dipole", "--label-b", "DIPOLE"], "must differ"),
    (["--label-a", " "], "label of A must not be empty"),
    (["--label-b", "x" * 40], "at most 32 characters"),
])
def test_bad_labels_are_usage_errors_before_any_file_is_read(command, labels, message,
                                                              capsys):
    assert main([*command, *AB, *labels]) == 2
    err = capsys.readouterr().err
    assert "--label-a/--label-b" in err and message in err
    assert "missing.parquet" not in err  # refused before the input was looked at


def test_compare_markdown_prints_a_summary_with_the_names(demo_parquet, capsys):
    assert main(["compare", demo_parquet, *AB, "--boot", "20", "--label-a", "vertical",
                 "--label-b", "dipole", "--markdown"]) == 0
    out = capsys.readouterr().out
    md = out[out.index("**dipole (B, Q1ABD) against vertical (A, Q1ABC)**"):]
    lines = md.splitlines()
    assert lines[2].startswith("dipole (B) is ") and "better than vertical (A)" in lines[2]
    assert any(x.startswith("Data: ") and "receivers" in x and "pairs" in x for x in lines)
    table = [x for x in lines if x.startswith("|")]
    # header, rule and one row per band of the demo (10 m and 20 m)
    assert len(table) == 4 and table[0].startswith("| band |") and "km" in table[0]
    assert set(x.split("|")[1].strip() for x in table[2:]) == {"10m", "20m"}
    assert "dipole is better" in md
    assert "<" not in md.replace("< 1,000 km", "").replace("< 1e-16", "")  # no HTML


def test_compare_markdown_to_a_file(demo_parquet, tmp_path, capsys):
    out = tmp_path / "summary.md"
    assert main(["compare", demo_parquet, *AB, "--boot", "20", "--by", "band,distance",
                 "--markdown", str(out)]) == 0
    text = out.read_text(encoding="utf-8")
    # unnamed antennas: the calls, once each; the sentences name B by its call
    assert text.startswith("**B = Q1ABD against A = Q1ABC**, simultaneous design")
    assert "Q1ABD is better on " in text
    assert "| band |" in text and f"wrote {out}" in capsys.readouterr().out


def test_markdown_may_not_overwrite_the_input(demo_parquet, capsys):
    assert main(["compare", demo_parquet, *AB, "--markdown", demo_parquet]) == 2
    assert "--markdown" in capsys.readouterr().err


def test_plot_grid_writes_a_picture(demo_parquet, tmp_path):
    from matplotlib.image import imread

    out = tmp_path / "grid.png"
    assert main(["plot", demo_parquet, "--kind", "grid", "-o", str(out), *AB, "--boot",
                 "20", "--label-a", "vertical", "--label-b", "dipole"]) == 0
    img = imread(out)
    assert img.shape[0] > 300 and img[..., :3].std() > 0.05


def test_compare_reads_a_plain_folder_of_parquet_files(sim, demo_parquet, tmp_path, capsys):
    """A folder of Parquet files written by pandas (no archive manifest) gives the result of
    the same spots in one file; a folder without Parquet files is bad input (exit 1) saying
    what was expected and what was found."""
    import json

    folder = tmp_path / "plain"
    folder.mkdir()
    half = len(sim.spots) // 2
    sim.spots.iloc[:half].to_parquet(folder / "day1.parquet")
    sim.spots.iloc[half:].to_parquet(folder / "day2.parquet")
    one, many = tmp_path / "one.json", tmp_path / "many.json"
    assert main(["compare", demo_parquet, *AB, "--boot", "20", "--json", str(one)]) == 0
    assert main(["compare", str(folder), *AB, "--boot", "20", "--json", str(many)]) == 0
    want, got = json.loads(one.read_text()), json.loads(many.read_text())
    assert got["overall"] == want["overall"]
    capsys.readouterr()
    other = tmp_path / "csvs"
    other.mkdir()
    (other / "spots.csv").write_text("time,snr\n")
    assert main(["compare", str(other), *AB]) == 1
    err = capsys.readouterr().err
    assert err.startswith("spotkit: error: ") and len(err.splitlines()) == 1
    assert "csvs: expected a spotkit archive" in err and "found 1 other file(s): spots.csv" in err
