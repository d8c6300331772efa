"""``spotkit compare --antennas ... --markdown`` and ``--periods ... --markdown``: the
paste-ready summary of several antennas and of a series of changes (headline, table of
comparisons with simultaneous intervals, sentences), printed or written; the numbers in
it are those of the JSON output of the same run."""
from __future__ import annotations

import json
import re

import pytest

from spotkit.cli import main
from spotkit.sim.simulate import simulate_spots


@pytest.fixture(scope="module")
def three(tmp_path_factory):
    # B 2 dB and C 6 dB above A: wide gaps, so the ranking separates all three
    sim = simulate_spots(days=0.25, n_receivers=40, bands=("20m",), difference_db=2.0,
                         more_antennas=[6.0], seed=3)
    path = tmp_path_factory.mktemp("md") / "three.parquet"
    sim.spots.to_parquet(path)
    return path


def _rows(text):
    """The Markdown table's body rows as lists of cells."""
    rows = [ln for ln in text.splitlines() if ln.startswith("| ")]
    return [[c.strip() for c in ln.strip("|").split("|")] for ln in rows[1:]]


def test_antennas_markdown_file_matches_json(three, tmp_path, capsys):
    md, js = tmp_path / "three.md", tmp_path / "three.json"
    rc = main(["compare", str(three), "--design", "simultaneous", "--antennas",
               "Q1ABC,Q1ABD,Q1ABE", "--all-pairs", "--boot", "60", "--json", str(js),
               "--markdown", str(md)])
    assert rc == 0
    assert f"wrote {md}" in capsys.readouterr().out
    text = md.read_text(encoding="utf-8")
    d = json.loads(js.read_text())
    assert text.splitlines()[0].startswith("**3 antennas (Q1ABC, Q1ABD, Q1ABE)")
    assert "Ranking: Q1ABE > Q1ABD > Q1ABC with 95 % simultaneous confidence." in text
    rows = _rows(text)
    assert len(rows) == len(d["contrasts"]) == 3
    for row, c in zip(rows, d["contrasts"], strict=True):
        assert row[0] == f"{c['second']} minus {c['first']}"
        assert row[1] == f"{c['b_minus_a_db']:+.1f}"
        assert row[2] == f"{c['ci_sim_low_db']:+.1f} to {c['ci_sim_high_db']:+.1f}"
        assert row[3] == f"{c['ci_low_db']:+.1f} to {c['ci_high_db']:+.1f}"
    # the simultaneous interval is never narrower than the one-at-a-time one
    for c in d["contrasts"]:
        assert c["ci_sim_high_db"] - c["ci_sim_low_db"] >= c["ci_high_db"] - c["ci_low_db"]
    assert "Q1ABE is 4.0 dB better than Q1ABD" in re.sub(r"\s+", " ", text) or \
        "Q1ABE is 3.9 dB better than Q1ABD" in re.sub(r"\s+", " ", text)
    assert "The 3 intervals hold together with 95 % confidence" in re.sub(r"\s+", " ", text)


def test_antennas_markdown_printed_and_not_separated(tmp_path, capsys):
    # B 0.0 dB above A: the two are not separated, and the text says so
    sim = simulate_spots(days=0.25, n_receivers=40, bands=("20m",), difference_db=0.0,
                         more_antennas=[6.0], seed=5)
    spots = tmp_path / "close.parquet"
    sim.spots.to_parquet(spots)
    rc = main(["compare", str(spots), "--design", "simultaneous", "--antennas",
               "Q1ABC,Q1ABD,Q1ABE", "--boot", "60", "--markdown"])
    assert rc == 0
    out = re.sub(r"\s+", " ", capsys.readouterr().out)
    assert "Ranking: Q1ABE > " in out and "not separated" in out
    assert "Q1ABD and Q1ABC are not separated" in out


def test_markdown_output_that_is_an_input_is_refused(three, capsys):
    rc = main(["compare", str(three), "--design", "simultaneous", "--antennas",
               "Q1ABC,Q1ABD", "--boot", "30", "--markdown", str(three)])
    assert rc == 2
    err = capsys.readouterr().err
    assert "--markdown" in err and "Traceback" not in err


@pytest.mark.slow
def test_periods_markdown(tmp_path, capsys):
    # two days per period, steps +2 and +3 dB (truth from the simulator's parameters)
    sim = simulate_spots("before-after", days=6, n_receivers=50, bands=("20m",),
                         difference_db=2.0, more_antennas=[5.0],
                         change_at=["2026-03-04", "2026-03-06"], seed=2)
    spots = tmp_path / "series.parquet"
    sim.spots.to_parquet(spots)
    md = tmp_path / "series.md"
    rc = main(["compare", str(spots), "--a", "Q1ABC", "--periods",
               "old:2026-03-02,new:2026-03-04,newer:2026-03-06", "--boot", "60",
               "--markdown", str(md)])
    assert rc == 0
    text = md.read_text(encoding="utf-8")
    flat = re.sub(r"\s+", " ", text)
    assert flat.startswith("**Series of changes of Q1ABC**: old from 2026-03-02 00:00")
    assert flat.count("Steps: ") == 1 and "Against the first period: newer" in flat
    rows = _rows(text)
    assert [r[0] for r in rows] == ["new minus old", "newer minus old", "newer minus new"]
    assert [r[1] for r in rows] == ["step, against the first", "against the first", "step"]
    truth = {"new minus old": 2.0, "newer minus old": 5.0, "newer minus new": 3.0}
    for r in rows:
        lo, hi = (float(x) for x in r[3].split(" to "))
        assert lo <= truth[r[0]] <= hi, r
        assert abs(float(r[2]) - truth[r[0]]) < 0.6, r
