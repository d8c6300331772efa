"""Tests of spotkit.io.atomic: outputs written as one transaction, refused when they would
destroy an input, recovered after a crash."""
from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import pytest

from spotkit.errors import OutputError, UsageError
from spotkit.io import atomic


def _files(folder):
    return sorted(p.name for p in folder.iterdir())


def _dead_pid() -> int:
    """The id of a process that has ended (and been reaped)."""
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


# --- refusing outputs ---------------------------------------------------------------------
def test_output_that_is_an_input_is_refused(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "export.csv").write_text("a\n")
    (tmp_path / "sub").mkdir()
    for out in ["export.csv", "./export.csv", "sub/../export.csv", str(tmp_path / "export.csv")]:
        with pytest.raises(UsageError, match="is also an input file"):
            atomic.check_outputs(["o.parquet", out], inputs=["export.csv"])
    (tmp_path / "link.csv").symlink_to(tmp_path / "export.csv")
    os.link(tmp_path / "export.csv", tmp_path / "hard.csv")
    for out in ["link.csv", "hard.csv"]:  # the same file under another name
        with pytest.raises(UsageError, match="is also an input file"):
            atomic.check_outputs([out], inputs=["export.csv"])
    assert (tmp_path / "export.csv").read_text() == "a\n"


def test_two_outputs_with_one_path_and_folders_are_refused(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(UsageError, match="are the same file"):
        atomic.check_outputs(["x", "./x"])
    (tmp_path / "real").write_text("")
    (tmp_path / "alias").symlink_to(tmp_path / "real")
    with pytest.raises(UsageError, match="are the same file"):
        atomic.check_outputs(["real", "alias"])
    (tmp_path / "d").mkdir()
    with pytest.raises(UsageError, match="is a folder"):
        atomic.check_outputs(["d"])
    assert atomic.check_outputs(["a", None, "b"]) == [tmp_path / "a", tmp_path / "b"]


def test_staging_names_are_unique_per_run_and_hidden_beside_the_target(tmp_path):
    target = tmp_path / "spots.parquet"
    names = {atomic.staging_path(target) for _ in range(50)}
    assert len(names) == 50
    for p in names:
        assert p.parent == tmp_path and p.name.startswith(".spots.parquet.")
        assert f".{os.getpid()}-{atomic.host_tag()}-" in p.name


# --- the transaction ------------------------------------------------------------------------
def test_staged_commits_all_files_together(tmp_path):
    a, b = tmp_path / "a.parquet", tmp_path / "b.csv"
    a.write_bytes(b"old a")
    with atomic.staged([a, b]) as (ta, tb):
        ta.write_bytes(b"new a")
        tb.write_bytes(b"new b")
        assert a.read_bytes() == b"old a" and not b.exists()  # nothing visible yet
    assert a.read_bytes() == b"new a" and b.read_bytes() == b"new b"
    assert _files(tmp_path) == ["a.parquet", "b.csv"]


@pytest.mark.parametrize("exc", [RuntimeError, KeyboardInterrupt])
def test_a_failed_run_leaves_earlier_files_and_no_temporaries(tmp_path, exc):
    a, b = tmp_path / "a.parquet", tmp_path / "b.csv"
    a.write_bytes(b"old a")
    b.write_bytes(b"old b")
    with pytest.raises(exc), atomic.staged([a, b]) as (ta, tb):
        ta.write_bytes(b"new a")
        tb.write_bytes(b"half")
        raise exc()
    assert a.read_bytes() == b"old a" and b.read_bytes() == b"old b"
    assert _files(tmp_path) == ["a.parquet", "b.csv"]


def test_folders_made_for_a_failed_run_are_removed(tmp_path):
    target = tmp_path / "x" / "y" / "o.parquet"
    with pytest.raises(RuntimeError), atomic.staged([target]):
        assert (tmp_path / "x" / "y").is_dir()
        raise RuntimeError
    assert _files(tmp_path) == []


def test_unwritable_folder_is_one_clear_error(tmp_path, monkeypatch):
    real_open = os.open

    def refuse(path, flags, *a):
        if str(path).endswith(".spotkit-tmp"):
            raise PermissionError(13, "Permission denied", str(path))
        return real_open(path, flags, *a)

    monkeypatch.setattr(atomic.os, "open", refuse)
    with pytest.raises(OutputError, match=f"cannot write in folder {tmp_path}: permission "
                       "denied"), atomic.staged([tmp_path / "o.parquet"]):
        pass  # pragma: no cover - never reached
    assert _files(tmp_path) == []


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0,
                    reason="root may write into a read-only folder")
def test_read_only_folder_is_one_clear_error(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        with pytest.raises(OutputError, match="permission denied"), \
                atomic.staged([ro / "o.parquet"]):
            pass  # pragma: no cover - never reached
    finally:
        ro.chmod(0o755)


# --- signals ------------------------------------------------------------------------------------
def test_signals_are_held_back_during_a_commit_and_delivered_after():
    seen = []
    with pytest.raises(KeyboardInterrupt):
        with atomic._signals_held():
            os.kill(os.getpid(), signal.SIGINT)
            time.sleep(0.05)
            seen.append("still running")
    assert seen == ["still running"]
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler


def test_sigterm_raises_interrupted_inside_signals_raise():
    before = signal.getsignal(signal.SIGTERM)
    with pytest.raises(atomic.Interrupted) as info, atomic.signals_raise():
        os.kill(os.getpid(), signal.SIGTERM)
        time.sleep(1)
    assert info.value.signum == signal.SIGTERM
    assert signal.getsignal(signal.SIGTERM) == before


# --- recovery after a crash --------------------------------------------------------------------
def _leftover(folder, target_name, pid, host=None, suffix=".spotkit-tmp", body=b"x"):
    p = folder / f".{target_name}.{pid}-{host or atomic.host_tag()}-0000abcd{suffix}"
    p.write_bytes(body)
    return p


def test_recover_removes_temporaries_of_dead_writers_only(tmp_path):
    dead = _leftover(tmp_path, "o.parquet", _dead_pid())
    mine = _leftover(tmp_path, "o.parquet", os.getpid())
    other_host = _leftover(tmp_path, "o.parquet", _dead_pid(), host="00000000")
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        live = _leftover(tmp_path, "o.parquet", sleeper.pid)
        assert atomic.recover_folder(tmp_path) == [dead]
        assert not dead.exists() and mine.exists() and other_host.exists() and live.exists()
    finally:
        sleeper.kill()
        sleeper.wait()
    assert atomic.writer_is_dead(live)


def test_a_reused_pid_does_not_keep_a_temporary_alive(tmp_path):
    if not os.path.exists("/proc/self/stat"):
        pytest.skip("needs Linux /proc")
    sleeper = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        p = _leftover(tmp_path, "o.parquet", sleeper.pid)
        assert not atomic.writer_is_dead(p)  # written after the process started
        old = time.time() - 3600
        os.utime(p, (old, old))  # written an hour before that process started
        assert atomic.writer_is_dead(p)
    finally:
        sleeper.kill()
        sleeper.wait()


def test_recover_completes_a_commit_whose_record_is_complete(tmp_path):
    """A writer killed between its commit record and its renames: the next run finishes the
    commit (every temporary was on disk before the record), in every folder it names."""
    other = tmp_path / "other"
    other.mkdir()
    a, b = tmp_path / "a.parquet", other / "b.csv"
    a.write_bytes(b"old a")
    b.write_bytes(b"old b")
    pid = _dead_pid()
    ta = _leftover(tmp_path, "a.parquet", pid, body=b"new a")
    tb = _leftover(other, "b.csv", pid, body=b"new b")
    records = [_leftover(f, "a.parquet", pid, suffix=".spotkit-commit") for f in
               (tmp_path, other)]
    body = json.dumps({"pairs": [[str(ta), str(a)], [str(tb), str(b)]],
                       "records": [str(r) for r in records]})
    for r in records:
        r.write_text(body)
    atomic.recover_folder(other)
    assert a.read_bytes() == b"new a" and b.read_bytes() == b"new b"
    assert _files(tmp_path) == ["a.parquet", "other"] and _files(other) == ["b.csv"]


def test_a_torn_commit_record_is_dropped(tmp_path):
    a = tmp_path / "a.parquet"
    a.write_bytes(b"old a")
    pid = _dead_pid()
    _leftover(tmp_path, "a.parquet", pid, body=b"new a")
    _leftover(tmp_path, "a.parquet", pid, suffix=".spotkit-commit", body=b'{"pairs": [[')
    atomic.recover_folder(tmp_path)
    assert a.read_bytes() == b"old a" and _files(tmp_path) == ["a.parquet"]


def test_staged_recovers_what_a_dead_run_left(tmp_path):
    stale = _leftover(tmp_path, "o.parquet", _dead_pid())
    with atomic.staged([tmp_path / "o.parquet"]) as (t,):
        assert not stale.exists()
        t.write_bytes(b"new")
    assert _files(tmp_path) == ["o.parquet"]


def test_ctrl_c_during_the_commit_arrives_after_it(tmp_path, monkeypatch):
    a, b = tmp_path / "a", tmp_path / "b"
    monkeypatch.setattr(atomic, "_before_rename_hook",
                        lambda: os.kill(os.getpid(), signal.SIGINT))
    with pytest.raises(KeyboardInterrupt) as info:
        with atomic.staged([a, b]) as (ta, tb):
            ta.write_bytes(b"new a")
            tb.write_bytes(b"new b")
    assert info.value.committed
    assert a.read_bytes() == b"new a" and b.read_bytes() == b"new b"
    assert _files(tmp_path) == ["a", "b"]


def test_a_commit_with_a_record_copy_missing_is_rolled_back(tmp_path):
    """Killed while writing the record's copies (before any rename): not decided."""
    other = tmp_path / "other"
    other.mkdir()
    a, b = tmp_path / "a.parquet", other / "b.csv"
    a.write_bytes(b"old a")
    pid = _dead_pid()
    ta = _leftover(tmp_path, "a.parquet", pid, body=b"new a")
    tb = _leftover(other, "b.csv", pid, body=b"new b")
    rec = _leftover(tmp_path, "a.parquet", pid, suffix=".spotkit-commit")
    missing = other / rec.name
    rec.write_text(json.dumps({"pairs": [[str(ta), str(a)], [str(tb), str(b)]],
                               "records": [str(rec), str(missing)]}))
    atomic.recover_folder(tmp_path)
    assert a.read_bytes() == b"old a" and not b.exists()
    assert _files(tmp_path) == ["a.parquet", "other"] and _files(other) == []
