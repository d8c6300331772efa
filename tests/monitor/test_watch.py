"""The watch follows exports: new files, grown files, half-written lines, restarts, kills
and corrupt exports."""
from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.io.store import read_dataset
from spotkit.monitor.follow import ARCHIVE_NAME, PIECES_NAME, STATE_NAME, read_state
from spotkit.monitor.watch import PAGE_NAME, watch_once

A, B = "Q1ABC", "Q1ABD"
FIELDS = [C.TIME, C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.FREQ, C.SNR, C.POWER]
ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def run():
    """Half a day on 20 m, B 2 dB better, as export rows in time order."""
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots(days=0.5, n_receivers=60, bands=("20m",), difference_db=2.0, seed=7)
    out = sim.spots[FIELDS].copy()
    out[C.TIME] = out[C.TIME].dt.strftime("%Y-%m-%d %H:%M:%S")
    hours = ((sim.spots[C.SLOT] - sim.spots[C.SLOT].min()) / pd.Timedelta(hours=1)).to_numpy()
    return out.reset_index(drop=True), hours


def _csv(df: pd.DataFrame, header: bool = True) -> bytes:
    return df.to_csv(index=False, header=header).encode()


def _once(src, folder, **kw):
    return watch_once([src], folder, "simultaneous", A, B, n_boot=30, **kw)


def _rows(folder) -> int:
    return len(read_dataset(Path(folder) / ARCHIVE_NAME, dedupe=False))


@pytest.mark.slow
def test_new_files_then_a_grown_file_count_each_report_once(run, tmp_path):
    rows, hours = run
    src = tmp_path / "in"
    src.mkdir()
    (src / "first.csv").write_bytes(_csv(rows[hours < 4]))
    up = _once(src, tmp_path / "w")
    assert [n for _, n in up.appended] == [int((hours < 4).sum())]
    # the export grows twice (no new heading), and a new file arrives
    grow = src / "growing.csv"
    grow.write_bytes(_csv(rows[(hours >= 4) & (hours < 6)]))
    _once(src, tmp_path / "w")
    with open(grow, "ab") as fh:
        fh.write(_csv(rows[(hours >= 6) & (hours < 9)], header=False))
    (src / "last.csv").write_bytes(_csv(rows[hours >= 9]))
    up = _once(src, tmp_path / "w")
    assert len(up.appended) == 2
    assert _rows(tmp_path / "w") == len(rows)  # every report once, none twice
    assert not any((tmp_path / "w" / PIECES_NAME).iterdir())
    # nothing new: no new look, nothing appended
    again = _once(src, tmp_path / "w")
    assert again.appended == [] and not again.new_look
    assert len(again.history) == len(up.history)


def test_a_half_written_line_waits_for_its_end(run, tmp_path):
    rows, hours = run
    src = tmp_path / "export.csv"
    data = _csv(rows[hours < 3])
    cut = len(data) - 7  # the last line without its end
    src.write_bytes(data[:cut])
    _once(src, tmp_path / "w")
    assert _rows(tmp_path / "w") == int((hours < 3).sum()) - 1
    with open(src, "ab") as fh:
        fh.write(data[cut:])
    _once(src, tmp_path / "w")
    assert _rows(tmp_path / "w") == int((hours < 3).sum())


def test_a_corrupt_export_mid_stream_is_set_aside_and_the_watch_goes_on(run, tmp_path):
    rows, hours = run
    src = tmp_path / "in"
    src.mkdir()
    (src / "a.csv").write_bytes(_csv(rows[hours < 4]))
    _once(src, tmp_path / "w")
    (src / "b.csv").write_bytes(bytes(range(256)) * 20)  # corrupt
    (src / "c.csv").write_bytes(_csv(rows[hours >= 4]))
    up = _once(src, tmp_path / "w")
    assert [Path(s).name for s, _ in up.set_aside] == ["b.csv"]
    assert up.set_aside[0][1]  # a reason
    assert [Path(s).name for s, _ in up.appended] == ["c.csv"]
    assert _rows(tmp_path / "w") == len(rows)
    state = read_state(tmp_path / "w")
    assert str((src / "b.csv").resolve()) in state["set_aside"]
    assert "b.csv" in (tmp_path / "w" / PAGE_NAME).read_text()
    # unchanged: not tried again; the estimate stands
    again = _once(src, tmp_path / "w")
    assert again.set_aside == [] and len(again.history)


def test_an_export_rewritten_in_place_is_set_aside(run, tmp_path):
    rows, hours = run
    src = tmp_path / "export.csv"
    src.write_bytes(_csv(rows[hours < 3]))
    _once(src, tmp_path / "w")
    src.write_bytes(b"time;tx;other;columns\n" + _csv(rows[hours >= 3], header=False))
    up = _once(src, tmp_path / "w")
    assert up.set_aside and "first line changed" in up.set_aside[0][1]


def test_page_reloads_itself_and_shows_the_plot(run, tmp_path):
    rows, hours = run
    src = tmp_path / "export.csv"
    src.write_bytes(_csv(rows))
    up = _once(src, tmp_path / "w", refresh_s=300)
    page = up.page.read_text()
    assert '<meta http-equiv="refresh" content="300">' in page
    assert "data:image/png;base64," in page
    assert "B is better on 20 m - you can stop" in page
    state = json.loads((tmp_path / "w" / STATE_NAME).read_text())
    assert len(state["looks"]) == 1


# --- a kill mid-update ------------------------------------------------------------------------
def _update_in_child(src, folder, point):
    """One :func:`watch_once` in a fresh process that SIGKILLs itself at ``point``."""
    code = ("import sys; from spotkit.monitor.watch import watch_once; "
            "watch_once([sys.argv[1]], sys.argv[2], 'simultaneous', "
            f"'{A}', '{B}', n_boot=30)")
    env = dict(os.environ, PYTHONPATH=str(ROOT), SPOTKIT_TEST_FAULT=point)
    return subprocess.run([sys.executable, "-c", code, str(src), str(folder)], env=env,
                          capture_output=True, text=True, timeout=300)


@pytest.fixture(scope="module")
def calm(run, tmp_path_factory):
    """The run never killed: a first export, then the same file grown."""
    rows, hours = run
    d = tmp_path_factory.mktemp("calm")
    (d / "in").mkdir()
    (d / "in" / "a.csv").write_bytes(_csv(rows[hours < 5]))
    _once(d / "in", d / "w")
    with open(d / "in" / "a.csv", "ab") as fh:
        fh.write(_csv(rows[hours >= 5], header=False))
    up = _once(d / "in", d / "w")
    return d / "w", up


@pytest.mark.slow
@pytest.mark.skipif(sys.platform != "linux", reason="SIGKILL fault points: Linux only")
@pytest.mark.parametrize("point", ["write", "manifest", "committed"])
def test_kill_mid_update_then_restart_gives_the_uninterrupted_answer(run, calm, tmp_path,
                                                                     point):
    """SIGKILL at a point of the archive's commit while the grown export is appended
    (``committed``: after the archive's commit, before the watch's state is written); a
    restart must end where the run that was never killed ends."""
    rows, hours = run
    (tmp_path / "in").mkdir()
    (tmp_path / "in" / "a.csv").write_bytes(_csv(rows[hours < 5]))
    _once(tmp_path / "in", tmp_path / "w")
    with open(tmp_path / "in" / "a.csv", "ab") as fh:
        fh.write(_csv(rows[hours >= 5], header=False))
    killed = _update_in_child(tmp_path / "in", tmp_path / "w", point)
    assert killed.returncode == -9, killed.stderr
    assert read_state(tmp_path / "w")["pending"] is not None  # killed mid-append
    again = _once(tmp_path / "in", tmp_path / "w")
    calm_folder, calm_up = calm
    assert _rows(tmp_path / "w") == _rows(calm_folder) == len(rows)
    assert read_state(tmp_path / "w")["looks"] == read_state(calm_folder)["looks"]
    assert again.text().splitlines()[-1] == calm_up.text().splitlines()[-1]
    assert read_state(tmp_path / "w")["pending"] is None


@pytest.mark.slow
def test_two_watches_on_one_folder_take_turns(run, tmp_path):
    """Two processes update the same watch folder at once, four rounds (a new export and a
    grown one each round; each process is a fresh Python, so about 10 s a round here):
    every report is in the archive once and nothing is set aside."""
    rows, hours = run
    src = tmp_path / "in"
    src.mkdir()
    code = ("import sys; from spotkit.monitor.watch import watch_once; "
            "up = watch_once([sys.argv[1]], sys.argv[2], 'simultaneous', "
            f"'{A}', '{B}', n_boot=20); print(len(up.set_aside))")
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    env.pop("SPOTKIT_TEST_FAULT", None)
    edges = np.linspace(0, hours.max() + 1, 5)
    grow = src / "growing.csv"
    for i in range(4):
        part = rows[(hours >= edges[i]) & (hours < edges[i + 1])]
        half = len(part) // 2
        (src / f"new_{i:02d}.csv").write_bytes(_csv(part.iloc[:half]))
        with open(grow, "ab") as fh:
            fh.write(_csv(part.iloc[half:], header=(i == 0)))
        procs = [subprocess.Popen([sys.executable, "-c", code, str(src), str(tmp_path / "w")],
                                  env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                  text=True) for _ in range(2)]
        outs = [p.communicate(timeout=300) for p in procs]
        assert all(p.returncode == 0 for p in procs), outs
        assert [o.strip() for o, _ in outs] == ["0", "0"], outs
    assert _rows(tmp_path / "w") == len(rows)
    assert read_state(tmp_path / "w")["set_aside"] == {}


def test_a_look_uses_the_normal_interval_and_refuses_another():
    """The sequence is built on the normal interval's SE: the shared compare options' default
    (percentile) must not reach a look (the watch command drops it), and a library call
    asking for another interval is told so."""
    from spotkit.errors import UsageError
    from spotkit.monitor.track import estimate_now
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots(days=0.1, n_receivers=30, bands=("20m",), seed=4)
    look = estimate_now(sim.spots, "simultaneous", sim.a, sim.b, n_boot=20, interval="normal")
    assert len(look) == 1
    with pytest.raises(UsageError, match="normal interval"):
        estimate_now(sim.spots, "simultaneous", sim.a, sim.b, n_boot=20,
                     interval="percentile")
