"""``spotkit watch``: a simulated multi-day experiment replayed export by export stops at a
sensible time with the right verdict; usage errors and a corrupt export."""
from __future__ import annotations

import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.cli.app import main
from spotkit.monitor.follow import read_state

A, B = "Q1ABC", "Q1ABD"
FIELDS = [C.TIME, C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.FREQ, C.SNR, C.POWER]


def _exports(sim, hours_each: float):
    out = sim.spots[FIELDS].copy()
    out[C.TIME] = out[C.TIME].dt.strftime("%Y-%m-%d %H:%M:%S")
    h = ((sim.spots[C.SLOT] - sim.spots[C.SLOT].min()) / pd.Timedelta(hours=1)).to_numpy()
    k = (h // hours_each).astype(int)
    return [out[k == i] for i in range(k.max() + 1)]


def _watch(src, folder, *extra):
    return main(["watch", str(src), "-o", str(folder), "--design", "simultaneous", "--a", A,
                 "--b", B, "--boot", "50", "--once", "--brief", *extra])


@pytest.mark.slow
def test_a_replayed_multi_day_run_stops_in_time_with_the_right_verdict(tmp_path, capsys):
    """Two days on 20 m and 10 m, B 1.5 dB better on 20 m and equal on 10 m; a new export
    every 4 hours, one watch update after each. The watch must say B is better on 20 m well
    before the end, and never that a side is better on 10 m."""
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots(days=2, n_receivers=120, bands=("20m", "10m"), seed=21,
                         difference_db={"20m": 1.5, "10m": 0.0})
    src = tmp_path / "exports"
    src.mkdir()
    stop_20m = None
    for i, part in enumerate(_exports(sim, 4.0)):
        part.to_csv(src / f"export_{i:02d}.csv", index=False)
        assert _watch(src, tmp_path / "w") == 0
        out = capsys.readouterr().out
        assert "better on 10 m" not in out, out
        if stop_20m is None and "B is better on 20 m - you can stop" in out:
            stop_20m = (i + 1) * 4
    print(f"20 m: B is better, stop after {stop_20m} h of 48; 10 m at the end: "
          f"{[x for x in out.splitlines() if '10 m' in x and '=>' in x]}")
    assert stop_20m is not None and stop_20m <= 24, stop_20m
    looks = pd.DataFrame(read_state(tmp_path / "w")["looks"])
    assert len(looks[looks[C.BAND] == "20m"]) == len(_exports(sim, 4.0))


def test_usage_errors(tmp_path, capsys):
    (tmp_path / "x.csv").write_text("a,b\n")
    assert _watch(tmp_path / "x.csv", tmp_path / "w", "--margin", "-1") == 2
    assert "--margin" in capsys.readouterr().err
    assert _watch(tmp_path / "nothing-here", tmp_path / "w") == 1
    assert _watch(tmp_path / "x.csv", tmp_path / "w", "--every", "0") == 2


def test_a_corrupt_export_is_set_aside_with_exit_1_and_a_reason(tmp_path, capsys):
    src = tmp_path / "in"
    src.mkdir()
    (src / "blob.csv").write_bytes(bytes(range(256)) * 20)
    assert _watch(src, tmp_path / "w") == 1
    err = capsys.readouterr().err
    assert err.startswith("spotkit: set aside") and "blob.csv" in err and err.count("\n") == 1
    state = read_state(tmp_path / "w")
    assert list(state["set_aside"].values())[0]["reason"]


def test_without_once_it_follows_until_every_band_may_stop(tmp_path, capsys):
    """The loop (``--every``, here a fraction of a second) ends with ``--until-stop`` once
    every band's verdict says stop."""
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots(days=0.5, n_receivers=60, bands=("20m",), seed=5, difference_db=3.0)
    src = tmp_path / "exports"
    src.mkdir()
    _exports(sim, 12.0)[0].to_csv(src / "export.csv", index=False)
    code = main(["watch", str(src), "-o", str(tmp_path / "w"), "--design", "simultaneous",
                 "--a", A, "--b", B, "--boot", "30", "--every", "0.001", "--until-stop"])
    assert code == 0
    out = capsys.readouterr().out
    assert "B is better on 20 m - you can stop" in out
    assert "20 m, B-A [dB]" in out  # the chart of the terminal view
