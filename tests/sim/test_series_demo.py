"""The demo series of changes in demo_data/ (4, 8, 16 radials): the files are what
:func:`spotkit.sim.simulate.make_series_demo` writes, the truth file states the
scenario's true steps, and the comparison recovers them."""
from __future__ import annotations

import json

import pytest

from spotkit import columns as C
from spotkit.sim.simulate import SERIES_DEMO, make_series_demo


def test_truth_file_states_the_scenario(demo_dir):
    truth = json.loads((demo_dir / "series.truth.json").read_text(encoding="utf-8"))
    assert [p["label"] for p in truth["periods"]] == [x[0] for x in SERIES_DEMO]
    assert truth["true_vs_first_db"] == {lab: g for lab, _, g in SERIES_DEMO}
    assert truth["true_steps_db"] == {"8 radials minus 4 radials": 1.5,
                                      "16 radials minus 8 radials": 1.0}
    assert truth["call"].startswith("Q") and truth["params"]["n_receivers"] == 80
    assert (demo_dir / "series.csv.gz").stat().st_size < 2_000_000
    assert "series.csv.gz" in (demo_dir / "README.md").read_text(encoding="utf-8")


@pytest.mark.slow
def test_series_demo_regenerates_byte_for_byte(demo_dir, tmp_path):
    sim = make_series_demo(tmp_path)
    for name in ("series.csv.gz", "series.truth.json"):
        assert (tmp_path / name).read_bytes() == (demo_dir / name).read_bytes(), name
    # every call is invented (Q prefix, never issued)
    calls = set(sim.spots[C.TX_CALL].astype(str)) | set(sim.spots[C.RX_CALL].astype(str))
    assert all(c.startswith("Q") for c in calls)


@pytest.mark.slow
def test_series_demo_steps_recovered(demo_dir):
    from spotkit.compare.series import compare_series
    from spotkit.io.ingest import load_spots

    truth = json.loads((demo_dir / "series.truth.json").read_text(encoding="utf-8"))
    spots = load_spots(demo_dir / "series.csv.gz")
    res = compare_series(spots, truth["call"], truth["periods_option"], n_boot=100)
    want = {f"{b} minus {a}": truth["true_vs_first_db"][b] - truth["true_vs_first_db"][a]
            for a, b in zip(res.table[C.FIRST], res.table[C.SECOND], strict=True)}
    for r in res.table.to_dict("records"):
        w = want[f"{r[C.SECOND]} minus {r[C.FIRST]}"]
        assert r[C.CI_SIM_LOW] <= w <= r[C.CI_SIM_HIGH], r
        assert abs(r[C.B_MINUS_A] - w) < 0.6, r
