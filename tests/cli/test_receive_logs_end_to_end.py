"""Issue 17, done when: two decode logs of two co-located receivers, in a layout the reader
has never seen (blank-delimited, date and HHMM clock apart, no receiver columns, headings
it cannot map), go through ``spotkit ingest`` (with ``--set`` and ``--map``) and
``spotkit compare --design receive`` to the simulated truth, every row accounted for.

The truth is the simulator's known B-A (receive gain of B over an isotropic A, a
constant -1.5 dB); the estimate must lie within 3 standard errors of it, the standard error
taken from the run's own statistical interval (its width / (2 x 1.96), normal
approximation)."""
from __future__ import annotations

import json
import re

import pytest

from spotkit import columns as C
from spotkit.cli import main
from spotkit.sim.layouts import write_user_file
from spotkit.sim.simulate import simulate_spots

TRUE_DB = -1.5


@pytest.fixture(scope="module")
def sim():
    return simulate_spots("receive", days=1, seed=23, n_transmitters=60, n_receivers=10,
                          difference_db=TRUE_DB, antenna_a="isotropic")


def _rows(path) -> int:
    return len(path.read_text(encoding="utf-8").splitlines()) - 1  # heading line


def test_two_decode_logs_to_the_true_difference(sim, tmp_path, capsys):
    assert sim.truth.overall["b_minus_a_db"] == pytest.approx(TRUE_DB)
    arch = tmp_path / "arch"
    for call, name in ((sim.a, "a.log"), (sim.b, "b.log")):
        log = tmp_path / name
        mine = sim.spots[sim.spots[C.RX_CALL] == call]
        kw = write_user_file(mine, log, "decode-log", duplicates=0.01, corrupt=4, seed=2)
        # the reader has never seen this layout: without the receiver and the time
        # columns it stops, naming them (exit 1)
        assert main(["ingest", str(log), "--dataset", str(arch), "--no-progress"]) == 1
        err = capsys.readouterr().err
        assert "rx_call" in err and "time" in err
        rx_loc = kw["constants"]["rx_locator"]
        assert main(["ingest", str(log), "--dataset", str(arch), "--set", f"rx_call={call}",
                     "--set", f"rx_locator={rx_loc}", "--map", "time=day+hhmm",
                     "--no-progress"]) == 0
        out = capsys.readouterr().out
        n = _rows(log)
        dup = int(round(0.01 * len(mine)))
        assert n == len(mine) + dup
        assert f"rows read:          {n:,}" in out
        assert re.search(r"accepted \+ rejected \+ duplicates = rows read: yes "
                         rf"\({len(mine) - 4:,} \+ 4 \+ {dup} = {n:,}\)", out), out
    result = tmp_path / "r.json"
    assert main(["compare", str(arch), "--design", "receive", "--a", sim.a, "--b", sim.b,
                 "--boot", "200", "--json", str(result), "--no-progress"]) == 0
    overall = json.loads(result.read_text())["overall"]
    est = overall["b_minus_a_db"]
    se = (overall["ci_stat_high_db"] - overall["ci_stat_low_db"]) / (2 * 1.96)
    assert 0 < se < 0.5
    assert abs(est - TRUE_DB) <= 3 * se, (est, se)
    # the pairs are the transmitters heard in a slot by either receiver: none lost
    assert overall["pairs"] >= 0.95 * sim.truth.overall["pairs"]


def test_two_decode_logs_in_one_run_with_per_file_set(sim, tmp_path, capsys):
    """``--set FILE:FIELD=VALUE`` gives each log its own receiver call in one ``ingest -o``
    run: the same spots as ingesting each log with its own plain ``--set`` (the locator,
    common to both, given once for all files)."""
    from spotkit.io.ingest import load_spots

    logs, rx_loc = {}, None
    for call, name in ((sim.a, "a.log"), (sim.b, "b.log")):
        log = tmp_path / name
        kw = write_user_file(sim.spots[sim.spots[C.RX_CALL] == call], log, "decode-log",
                             seed=2)
        logs[call], rx_loc = log, kw["constants"]["rx_locator"]
    one = tmp_path / "one.parquet"
    assert main(["ingest", str(logs[sim.a]), str(logs[sim.b]), "-o", str(one),
                 "--set", f"{logs[sim.a]}:rx_call={sim.a}",
                 "--set", f"{logs[sim.b]}:rx_call={sim.b}",
                 "--set", f"rx_locator={rx_loc}", "--map", "time=day+hhmm",
                 "--no-progress"]) == 0
    got = load_spots(one)
    for call, log in logs.items():
        alone = tmp_path / f"{call}.parquet"
        assert main(["ingest", str(log), "-o", str(alone), "--set", f"rx_call={call}",
                     "--set", f"rx_locator={rx_loc}", "--map", "time=day+hhmm",
                     "--no-progress"]) == 0
        want = load_spots(alone)
        mine = got[got[C.RX_CALL] == call]
        assert len(mine) == len(want) > 0
        assert (mine[C.SNR].to_numpy() == want[C.SNR].to_numpy()).all()
        assert set(mine[C.RX_LOCATOR].astype(str)) == {rx_loc}
    capsys.readouterr()


@pytest.mark.parametrize("sets, message", [
    (["--set", "c.log:rx_call=Q1ABC"], r"--set c\.log:FIELD=VALUE: c\.log is not one of the "
                                       r"input files \(.*a\.log, .*b\.log\)"),
    (["--set", "rx_call=Q1ABC", "--set", "{a}:rx_call=Q1ABD"],
     r"rx_call given both for every file and for .*a\.log: give one"),
    (["--set", "{a}:rx_call=Q1ABC", "--set", "{a}:rx_call=Q1ABD"],
     r"only once in --set for .*a\.log \(rx_call twice\)"),
    (["--set", "{a}:colour=red"], r"colour"),
])
def test_per_file_set_errors_are_usage_errors(tmp_path, capsys, sets, message):
    a, b = tmp_path / "a.log", tmp_path / "b.log"
    for p in (a, b):
        p.write_text("x\n")
    sets = [s.replace("{a}", str(a)) for s in sets]
    assert main(["ingest", str(a), str(b), "-o", str(tmp_path / "o.parquet"), *sets,
                 "--no-progress"]) == 2
    err = capsys.readouterr().err
    assert re.search(message, err), err
    assert len(err.splitlines()) == 1
