"""Fault injection and concurrency for ``spotkit ingest FILE -o OUT --rejects R``.

A real ``python -m spotkit ingest`` is stopped at a named point (the test hook
``SPOTKIT_TEST_PAUSE``: ``chunk`` after the first chunk is read and handed to the writer,
``staged`` when every output is written under its temporary name, ``commit`` when the commit
record is on disk and no file is renamed yet) or at a random moment, then killed
(SIGKILL), interrupted (SIGINT) or terminated (SIGTERM). Afterwards the earlier outputs
must be byte for byte what they were (or, for a commit already recorded, exactly the new
run's), and no temporary file may remain once the next run has been in the folder.

The spot files are invented (Q-prefix calls, real grid squares).
"""
from __future__ import annotations

import os
import random
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pandas.testing as pdt
import pytest

import spotkit
from spotkit.io.ingest import ingest_to_parquet

pytestmark = pytest.mark.skipif(not os.path.exists("/proc/self/stat"),
                                reason="needs Linux /proc and POSIX signals")

ROOT = Path(spotkit.__file__).resolve().parents[1]  # the spotkit under test
HEAD = "time,tx call,tx locator,rx call,rx locator,frequency mhz,snr,power dbm\n"
SQUARES = np.array(["JN58td", "IO91lk", "FN31pr", "JO62qm", "PM95ut", "QF56od"])


def make_csv(path: Path, n: int, seed: int) -> Path:
    """``n`` invented rows: every 40th has a bad locator, every 97th repeats the row
    before it (an exact duplicate)."""
    rng = np.random.default_rng(seed)
    i = np.arange(n)
    t = pd.Timestamp("2026-03-01", tz="UTC") + pd.to_timedelta(2 * (i // 50), unit="min")
    df = pd.DataFrame({
        "time": t.strftime("%Y-%m-%d %H:%M:%S"),
        "tx": np.where(i % 2 == 0, "Q1ABC", "Q1ABD"),
        "txl": "JO62qm",
        "rx": pd.Series(i % 50).map(lambda k: f"Q{k % 10}R{chr(65 + k // 10)}"),
        "rxl": SQUARES[rng.integers(0, SQUARES.size, n)],
        "f": 14.0971 + rng.integers(0, 200, n) / 1e6,
        "snr": rng.integers(-30, 10, n),
        "p": 37,
    })
    df.loc[i % 40 == 39, "rxl"] = "XX99"
    dup = np.flatnonzero(i % 97 == 96)
    df.iloc[dup] = df.iloc[dup - 1].to_numpy()
    path.write_text(HEAD + df.to_csv(index=False, header=False))
    return path


def leftovers(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir()
                  if p.name.endswith((".spotkit-tmp", ".spotkit-commit", ".partial")))


def start(args, cwd, pause=None) -> subprocess.Popen:
    env = os.environ | {"PYTHONPATH": str(ROOT)}
    env.pop("SPOTKIT_TEST_PAUSE", None)
    if pause:
        env["SPOTKIT_TEST_PAUSE"] = pause
    return subprocess.Popen([sys.executable, "-m", "spotkit", "ingest", *args, "--no-progress"],
                            cwd=cwd, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)


def wait_stopped(proc: subprocess.Popen, timeout: float = 120) -> None:
    """Wait until ``proc`` has stopped itself at its pause point."""
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if proc.poll() is not None:
            pytest.fail(f"the run ended before its pause point: {proc.communicate()}")
        with open(f"/proc/{proc.pid}/stat") as fh:
            if fh.read().rsplit(")", 1)[1].split()[0] == "T":
                return
        time.sleep(0.02)
    kill(proc)
    pytest.fail("the run never reached its pause point")


def kill(proc: subprocess.Popen) -> None:
    """SIGKILL, then collect the pipes."""
    proc.kill()
    proc.communicate()


def snapshot(*paths: Path) -> list[bytes | None]:
    return [p.read_bytes() if p.exists() else None for p in paths]


@pytest.fixture
def folder(tmp_path, monkeypatch):
    """A folder with two invented exports (``old.csv``, ``new.csv``), earlier outputs made
    from ``old.csv`` (``spots.parquet``, ``rejects.csv``) and reference outputs of
    ``new.csv`` in ``ref/``; relative paths, as a user would type them."""
    monkeypatch.chdir(tmp_path)
    make_csv(tmp_path / "old.csv", 3_000, 1)
    make_csv(tmp_path / "new.csv", 5_000, 2)
    ingest_to_parquet("old.csv", "spots.parquet", rejects_path="rejects.csv", chunk_rows=500)
    (tmp_path / "ref").mkdir()
    ingest_to_parquet("new.csv", "ref/spots.parquet", rejects_path="ref/rejects.csv",
                      chunk_rows=500)
    return tmp_path


def same_as_reference(folder: Path) -> bool:
    got = pd.read_parquet(folder / "spots.parquet")
    ref = pd.read_parquet(folder / "ref" / "spots.parquet")
    if len(got) != len(ref):
        return False
    pdt.assert_frame_equal(got, ref)
    return (folder / "rejects.csv").read_bytes() == (folder / "ref" / "rejects.csv").read_bytes()


ARGS = ["new.csv", "-o", "spots.parquet", "--rejects", "rejects.csv", "--chunk-rows", "500"]


@pytest.mark.slow
@pytest.mark.parametrize("point", ["chunk", "staged"])
def test_kill_before_the_commit_leaves_earlier_outputs(folder, point):
    outputs = (folder / "spots.parquet", folder / "rejects.csv")
    before = snapshot(*outputs)
    proc = start(ARGS, folder, pause=point)
    wait_stopped(proc)
    assert len(leftovers(folder)) == 2  # the two temporaries of the stopped run
    kill(proc)
    assert snapshot(*outputs) == before
    # the next run into the folder removes what the dead run left, and succeeds
    ingest_to_parquet("new.csv", "spots.parquet", rejects_path="rejects.csv", chunk_rows=500)
    assert leftovers(folder) == []
    assert same_as_reference(folder)


@pytest.mark.slow
def test_kill_during_the_commit_is_completed_by_the_next_run(folder):
    outputs = (folder / "spots.parquet", folder / "rejects.csv")
    before = snapshot(*outputs)
    proc = start(ARGS, folder, pause="commit")
    wait_stopped(proc)
    kill(proc)
    assert snapshot(*outputs) == before  # no file renamed yet
    assert any(n.endswith(".spotkit-commit") for n in leftovers(folder))
    # a later run writing elsewhere in the folder completes the recorded commit
    ingest_to_parquet("old.csv", "other.parquet", chunk_rows=500)
    assert leftovers(folder) == []
    assert same_as_reference(folder)


@pytest.mark.slow
@pytest.mark.parametrize("sig, code, how", [(signal.SIGINT, 130, "Ctrl-C"),
                                            (signal.SIGTERM, 143, "SIGTERM")])
def test_interrupt_cleans_up_with_one_line(folder, sig, code, how):
    outputs = (folder / "spots.parquet", folder / "rejects.csv")
    before = snapshot(*outputs)
    proc = start(ARGS, folder, pause="chunk")
    wait_stopped(proc)
    proc.send_signal(sig)
    proc.send_signal(signal.SIGCONT)
    out, err = proc.communicate(timeout=120)
    assert proc.returncode == code
    assert err == (f"spotkit: interrupted ({how}); nothing written, earlier files "
                   "unchanged\n")
    assert snapshot(*outputs) == before
    assert leftovers(folder) == []


@pytest.mark.slow
def test_kill_at_random_moments(tmp_path, monkeypatch):
    """SIGKILL at random moments of runs over a larger file: after the next run's recovery
    the outputs are always either all the earlier ones or all the new ones, never a mix,
    and nothing is left behind."""
    monkeypatch.chdir(tmp_path)
    make_csv(tmp_path / "old.csv", 2_000, 3)
    make_csv(tmp_path / "new.csv", 60_000, 4)
    ingest_to_parquet("old.csv", "spots.parquet", rejects_path="rejects.csv")
    (tmp_path / "ref").mkdir()
    ingest_to_parquet("new.csv", "ref/spots.parquet", rejects_path="ref/rejects.csv",
                      chunk_rows=2_000)
    args = ["new.csv", "-o", "spots.parquet", "--rejects", "rejects.csv", "--chunk-rows",
            "2000"]
    t0 = time.monotonic()
    proc = start(args, tmp_path)
    assert proc.communicate(timeout=300) and proc.returncode == 0
    full = time.monotonic() - t0
    new = snapshot(tmp_path / "spots.parquet", tmp_path / "rejects.csv")
    assert same_as_reference(tmp_path)
    rnd = random.Random(20261204)
    for _ in range(6):
        ingest_to_parquet("old.csv", "spots.parquet", rejects_path="rejects.csv")
        earlier = snapshot(tmp_path / "spots.parquet", tmp_path / "rejects.csv")
        proc = start(args, tmp_path)
        time.sleep(rnd.uniform(0.2, 1.1) * full)
        kill(proc)
        ingest_to_parquet("old.csv", "other.parquet")  # the next run in the folder
        assert leftovers(tmp_path) == []
        now = snapshot(tmp_path / "spots.parquet", tmp_path / "rejects.csv")
        assert now in (earlier, new), "a mix of two runs' outputs"


def _wrote(stdout: str) -> int:
    m = re.search(r"wrote ([\d,]+) spots to spots.parquet and ([\d,]+) rejects", stdout)
    assert m, stdout
    return int(m[1].replace(",", ""))


@pytest.mark.slow
def test_two_ingests_to_one_output_at_once(tmp_path, monkeypatch):
    """Ten times two runs with different inputs to the same outputs at the same moment:
    both succeed, each reports what it wrote, and what is left is one run's Parquet file
    and that same run's rejects, readable and complete."""
    monkeypatch.chdir(tmp_path)
    refs = {}
    for name, n, seed in (("a.csv", 3_000, 5), ("b.csv", 5_000, 6)):
        make_csv(tmp_path / name, n, seed)
        d = tmp_path / f"ref-{name}"
        d.mkdir()
        s = ingest_to_parquet(name, d / "spots.parquet", rejects_path=d / "rejects.csv")
        refs[name] = (s.accepted, (d / "rejects.csv").read_bytes())
    for _ in range(10):
        procs = {name: start([name, "-o", "spots.parquet", "--rejects", "rejects.csv"],
                             tmp_path) for name in refs}
        for name, proc in procs.items():
            out, err = proc.communicate(timeout=300)
            assert proc.returncode == 0, err
            assert _wrote(out) == refs[name][0]  # what it says it wrote is what it wrote
        got = pd.read_parquet(tmp_path / "spots.parquet")
        winner = [name for name in refs if refs[name][0] == len(got)]
        assert len(winner) == 1
        assert set(got["source_file"]) == set(winner)
        assert (tmp_path / "rejects.csv").read_bytes() == refs[winner[0]][1]
        assert leftovers(tmp_path) == []
