"""The command line end to end on the demo data: ingest -> compare -> map -> report.

The demo scenario is invented and simulated with a known answer (demo_data/*.truth.json), so
the verdict can be checked against the truth it was made with.
"""
from __future__ import annotations

import json

import pytest

from spotkit import columns as C
from spotkit.cli import main
from spotkit.sim.truth import Truth


@pytest.mark.slow
def test_cli_end_to_end_on_demo_data(demo_dir, tmp_path, capsys):
    src = demo_dir / "simultaneous.csv.gz"
    truth = Truth.from_json(demo_dir / "simultaneous.truth.json")
    parquet = tmp_path / "spots.parquet"
    rejects = tmp_path / "rejects.csv"

    assert main(["ingest", str(src), "-o", str(parquet), "--rejects", str(rejects)]) == 0
    out = capsys.readouterr().out
    assert "accepted + rejected + duplicates = rows read: yes" in out

    result_json = tmp_path / "compare.json"
    assert main(["compare", str(parquet), "--design", truth.design, "--a", truth.a,
                 "--b", truth.b, "--by", "band,distance", "--boot", "300",
                 "--json", str(result_json)]) == 0
    doc = json.loads(result_json.read_text())
    for key in ("b_minus_a_db", "ci_low_db", "ci_high_db", "pairs", "only_a", "only_b",
                "p_value", "method"):
        assert key in doc["overall"]
    # the overall interval covers the true overall difference
    true_overall = truth.overall[C.B_MINUS_A]
    assert doc["overall"]["ci_low_db"] <= true_overall <= doc["overall"]["ci_high_db"]
    # every band x distance cell with thousands of pairs lands near its truth
    cells = truth.cells(distance_edges=doc["options"]["distance_edges"])
    checked = 0
    for g in doc["groups"]:
        if g["pairs"] < 2000 or g["b_minus_a_db"] is None:
            continue
        row = cells[(cells[C.BAND] == g["band"])
                    & (cells[C.DISTANCE_MIN] == g["distance_min_km"])]
        assert len(row) == 1
        assert g["b_minus_a_db"] == pytest.approx(float(row[C.B_MINUS_A].iloc[0]), abs=0.5)
        checked += 1
    assert checked >= 4

    for kind in ("coverage", "difference", "reach"):
        png = tmp_path / f"{kind}.png"
        args = ["map", str(parquet), "--kind", kind, "-o", str(png)]
        if kind != "coverage":
            args += ["--design", truth.design, "--a", truth.a, "--b", truth.b]
        assert main(args) == 0, kind
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    html = tmp_path / "report.html"
    assert main(["report", str(parquet), "--design", truth.design, "--a", truth.a,
                 "--b", truth.b, "--boot", "200", "--no-progress", "-o", str(html)]) == 0
    text = html.read_text(encoding="utf-8")
    assert "Cautions" in text and text.count("data:image/png;base64,") >= 6


def test_cli_exit_codes_for_bad_input_and_usage(tmp_path, capsys):
    # bad input (not a spot table) -> 1, with the file named
    junk = tmp_path / "page.csv"
    junk.write_text("<html><body>not spots</body></html>\n")
    assert main(["ingest", str(junk), "-o", str(tmp_path / "x.parquet")]) == 1
    assert "page.csv" in capsys.readouterr().err
    # usage: a missing required option -> 2
    assert main(["compare", str(junk)]) == 2
    # usage: an unknown design -> 2
    assert main(["report", str(junk), "--design", "sideways", "--a", "Q1ABC",
                 "-o", str(tmp_path / "r.html")]) == 2
