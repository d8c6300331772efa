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
