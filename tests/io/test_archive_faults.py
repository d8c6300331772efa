"""Fault injection and concurrency for the archive's commit protocol (spotkit.io.manifest).

Real ``spotkit ingest ... --dataset`` processes (children forked from a server with spotkit
imported, see :class:`Child`) are killed with SIGKILL at each
named point of the protocol (the test hook ``SPOTKIT_TEST_FAULT``), or run two at a time
against one archive. Afterwards every reader must see exactly what the manifest (and
``spotkit archive info``) says: ``read_dataset``, ``archive_files`` + ``read_archive_file``,
the Dask path and the Parquet footers of the committed files; a re-run must give the right
answer with no duplicates; ``archive repair`` must leave nothing behind.

The oracle for the row counts is :func:`spotkit.io.ingest.read_spots` of the same CSV in
memory (accepted rows), which shares no code with the archive's writer or readers.
"""
from __future__ import annotations

import gzip
import json
import os
import signal
import sys
from pathlib import Path

import pandas as pd
import pytest
from factories import make_spots

from spotkit import columns as C
from spotkit.cli import main
from spotkit.errors import InputError, UsageError
from spotkit.io import archive, manifest, store


def write_csv(path: Path, n: int, seed: int, start: str) -> Path:
    """An invented spot CSV (generic headings) of ``n`` reports."""
    df = make_spots(n, seed=seed, start=start)
    pd.DataFrame({
        "time": df[C.TIME].dt.strftime("%Y-%m-%d %H:%M:%S"), "tx call": df[C.TX_CALL],
        "tx locator": df[C.TX_LOCATOR], "rx call": df[C.RX_CALL],
        "rx locator": df[C.RX_LOCATOR], "frequency hz": df[C.FREQ], "snr": df[C.SNR],
        "power dbm": df[C.POWER]}).to_csv(path, index=False)
    return path


def accepted(path: Path) -> int:
    from spotkit.io.ingest import read_spots

    return read_spots(path).summary.accepted


def _cli_child(argv, env, err_path):
    """Body of a child process: ``spotkit ARGV`` with ``env`` set, stderr to a file."""
    os.environ.update(env)
    with open(err_path, "w") as err, open(os.devnull, "w") as out:
        sys.stderr, sys.stdout = err, out
        code = main([str(a) for a in argv])
        err.flush()
    os._exit(code)


class Child:
    """``spotkit ARGS`` in a child process forked from a server that has spotkit, pandas and
    pyarrow imported already (a fresh interpreter per run takes seconds on a busy machine).
    The archive code runs in its own process as from the command line: locks, kills and
    exit codes are real."""

    _n = 0

    def __init__(self, args, *, fault: str | None = None, env_extra=None, tmp: Path):
        import multiprocessing

        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(["pandas", "pyarrow.parquet", "spotkit.cli",
                                    "spotkit.io.archive", "test_archive_faults"])
        env = {"SPOTKIT_TEST_FAULT": fault or "", **(env_extra or {})}
        Child._n += 1
        self.err_path = tmp / f"child-{os.getpid()}-{Child._n}.err"
        self.proc = ctx.Process(target=_cli_child, args=(list(args), env, self.err_path))
        self.proc.start()

    def wait(self, timeout=120) -> int:
        self.proc.join(timeout)
        code = self.proc.exitcode
        self.proc.close()
        self.stderr = self.err_path.read_text() if self.err_path.exists() else ""
        return code


def run_child(args, *, tmp: Path, **kw) -> tuple[int, str]:
    child = Child(args, tmp=tmp, **kw)
    code = child.wait()
    return code, child.stderr


def rows_by_every_reader(root: Path) -> dict[str, int]:
    """Rows of the archive as each reader sees it, and as the manifest and info say."""
    from spotkit import distributed

    check = manifest.check_archive(root)
    files = store.archive_files(root)
    per_file = sum(len(store.read_archive_file(root, f, columns=[C.SNR])) for f in files)
    dask_rows = len(distributed.read_archive_dask(root, columns=[C.SNR]).compute(
        scheduler="sync")) if files else 0
    return {"manifest": check.rows, "footers": check.rows_in_files,
            "read_dataset": len(store.read_dataset(root)),
            "read_spots_parquet": len(store.read_spots_parquet(root)),
            "archive_files": per_file, "dask": dask_rows}


def assert_readers_agree(root: Path, want: int, capsys=None) -> None:
    counts = rows_by_every_reader(root)
    assert set(counts.values()) == {want}, counts
    spots = store.read_dataset(root)
    assert not spots.duplicated(C.REPORT_KEY).any()
    if capsys is not None:
        capsys.readouterr()
        assert main(["archive", "info", str(root)]) == 0
        assert f"{want:,} spots in" in capsys.readouterr().out


def leftovers_on_disk(root: Path) -> list[str]:
    """Anything in the root an append may leave: staging folders and locks, temporary
    manifests, data files the manifest does not name."""
    committed = {f for b in store.dataset_manifest(root)["batches"] for f in b["files"]}
    found = [p.name for p in root.iterdir()
             if p.name.startswith("_staging-") or p.name.endswith(".tmp")]
    found += [p.relative_to(root).as_posix() for p in root.rglob("*.parquet")
              if p.relative_to(root).as_posix() not in committed]
    return sorted(found)


@pytest.fixture
def two_exports(tmp_path):
    a = write_csv(tmp_path / "a.csv", 1500, seed=41, start="2026-12-01 00:00")
    b = write_csv(tmp_path / "b.csv", 1500, seed=42, start="2026-12-03 00:00")
    return a, b, accepted(a), accepted(b)


# --- a crash between moving files into place and writing the manifest (no hook needed) --------
@pytest.mark.slow
def test_files_the_manifest_does_not_list_are_invisible_and_rolled_back(tmp_path, two_exports,
                                                                       capsys):
    """The state a kill between 'files in place' and 'manifest written' used to leave: data
    files of b on disk, the manifest without b. Readers must not see them, and appending b
    again must not double its rows."""
    a, b, na, nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root, chunk_rows=400)
    man = store.dataset_manifest(root)
    archive.ingest_to_dataset(b, root, chunk_rows=400)
    stray = manifest.committed_files(store.dataset_manifest(root))[len(
        manifest.committed_files(man)):]
    (root / store.MANIFEST_NAME).write_text(json.dumps(man))  # b's entry "not written"
    assert stray and all((root / f).exists() for f in stray)
    assert_readers_agree(root, na, capsys)
    check = manifest.check_archive(root)
    assert set(stray) <= set(check.leftovers) and not check.clean
    assert "leftover(s) of interrupted appends" in check.text()
    archive.ingest_to_dataset(b, root, chunk_rows=400)  # the re-run rolls the strays back first
    assert_readers_agree(root, na + nb, capsys)
    assert not any((root / f).exists() for f in stray)
    assert leftovers_on_disk(root) == [] and manifest.check_archive(root).clean


# --- kill -9 at each point of the protocol ------------------------------------------------------
# committed: the point after the manifest update, so the append is complete
POINTS = list(manifest.FAULT_POINTS)


@pytest.mark.slow
@pytest.mark.parametrize("point", POINTS)
def test_kill_at_each_point_leaves_a_consistent_archive(tmp_path, two_exports, point, capsys):
    a, b, na, nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root, chunk_rows=400)
    before = (root / store.MANIFEST_NAME).read_bytes()
    code, err = run_child(["ingest", b, "--dataset", root, "--chunk-rows", 400], fault=point,
                          tmp=tmp_path)
    assert code == -signal.SIGKILL, (code, err[-2000:])
    committed = point == "committed"
    if not committed:  # nothing of b is visible; the manifest is byte-identical
        assert (root / store.MANIFEST_NAME).read_bytes() == before
    assert_readers_agree(root, na + nb if committed else na, capsys)
    # archive info names what was left, repair removes it and nothing else
    assert manifest.check_archive(root).leftovers, point
    capsys.readouterr()
    assert main(["archive", "info", str(root)]) == 0
    assert "spotkit archive repair" in capsys.readouterr().out
    assert main(["archive", "repair", str(root)]) == 0
    assert leftovers_on_disk(root) == [] and manifest.check_archive(root).clean
    assert_readers_agree(root, na + nb if committed else na)
    # the re-run gives the right answer, with no duplicates
    capsys.readouterr()
    again = main(["ingest", str(b), "--dataset", str(root), "--chunk-rows", "400"])
    if committed:
        assert again == 1 and "already in the archive" in capsys.readouterr().err
    else:
        assert again == 0
    assert_readers_agree(root, na + nb, capsys)
    assert leftovers_on_disk(root) == []


@pytest.mark.slow
def test_rerun_after_a_kill_rolls_back_without_repair(tmp_path, two_exports):
    a, b, na, nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root)
    code, _err = run_child(["ingest", b, "--dataset", root, "--chunk-rows", 300],
                           fault="moved", tmp=tmp_path)
    assert code == -signal.SIGKILL
    assert leftovers_on_disk(root)
    assert main(["ingest", str(b), "--dataset", str(root)]) == 0
    assert leftovers_on_disk(root) == []
    assert_readers_agree(root, na + nb)


def test_failed_manifest_write_removes_the_moved_files(tmp_path, two_exports, monkeypatch):
    """An error (not a kill) during the commit: the files already moved are removed again."""
    a, b, na, _nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root)

    def disk_full(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(store, "write_manifest", disk_full)
    with pytest.raises(OSError, match="No space"):
        archive.ingest_to_dataset(b, root, chunk_rows=300)
    assert leftovers_on_disk(root) == []
    assert_readers_agree(root, na)


# --- content already taken ----------------------------------------------------------------------
def test_gzip_copy_and_renamed_copy_of_a_taken_file_are_refused(tmp_path, two_exports):
    a, b, na, nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root)
    packed = tmp_path / "a-again.csv.gz"
    packed.write_bytes(gzip.compress(a.read_bytes(), mtime=12345))
    renamed = tmp_path / "renamed.csv"
    renamed.write_bytes(a.read_bytes())
    for copy in (packed, renamed):
        with pytest.raises(InputError, match="already in the archive"):
            archive.ingest_to_dataset(copy, root)
    # a gzip copy of a file given in the same call is refused too, before anything is written
    b_packed = tmp_path / "b.csv.gz"
    b_packed.write_bytes(gzip.compress(b.read_bytes()))
    with pytest.raises(InputError, match="same content"):
        archive.ingest_to_dataset([b, b_packed], root)
    assert_readers_agree(root, na)
    # the gzip form goes in first; the plain file is then refused
    archive.ingest_to_dataset(b_packed, root)
    with pytest.raises(InputError, match="already in the archive"):
        archive.ingest_to_dataset(b, root)
    assert_readers_agree(root, na + nb)
    batch = store.dataset_manifest(root)["batches"][-1]
    assert batch["content_sha256"] == manifest.file_sha256(b) != batch["sha256"]


def test_manifest_without_content_hashes_still_refuses_a_gzip_copy(tmp_path, two_exports):
    """Batches written before content hashes existed have the raw SHA-256 only."""
    a, _b, na, _nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root)
    man = store.dataset_manifest(root)
    for batch in man["batches"]:
        del batch["content_sha256"]
    (root / store.MANIFEST_NAME).write_text(json.dumps(man))
    packed = tmp_path / "a.csv.gz"
    packed.write_bytes(gzip.compress(a.read_bytes()))
    with pytest.raises(InputError, match="already in the archive"):
        archive.ingest_to_dataset(packed, root)


def test_corrupt_gzip_is_one_clear_error(tmp_path, two_exports):
    a, *_ = two_exports
    bad = tmp_path / "cut.csv.gz"
    bad.write_bytes(gzip.compress(a.read_bytes())[:200])
    with pytest.raises(InputError, match=r"cut\.csv\.gz: corrupt or truncated gzip"):
        archive.ingest_to_dataset(bad, tmp_path / "arch")


# --- the lock -------------------------------------------------------------------------------
def test_a_second_writer_gives_up_after_the_lock_timeout(tmp_path, two_exports):
    a, b, na, _nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root)
    with manifest.archive_lock(root):
        with pytest.raises(UsageError, match="another spotkit process is writing"):
            archive.ingest_to_dataset(b, root, lock_timeout=0.2)
        with pytest.raises(UsageError, match="another spotkit process is writing"):
            manifest.repair_archive(root, timeout=0.1)
    assert leftovers_on_disk(root) == []
    assert_readers_agree(root, na)


@pytest.mark.slow
def test_the_loser_of_the_lock_exits_2_with_a_clear_message(tmp_path, two_exports):
    a, b, na, nb = two_exports
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root)
    c = write_csv(tmp_path / "c.csv", 800, seed=43, start="2026-10-05 00:00")
    slow = Child(["ingest", b, "--dataset", root], fault="locked:sleep=4", tmp=tmp_path)
    # wait until the slow writer holds the lock (its staging lock exists by then, too)
    import time

    t0 = time.monotonic()
    while not list(root.glob("_staging-*")) and time.monotonic() - t0 < 30:
        time.sleep(0.05)
    time.sleep(1.0)
    code, err = run_child(["ingest", c, "--dataset", root], tmp=tmp_path,
                          env_extra={"SPOTKIT_LOCK_TIMEOUT_S": "0.5"})
    assert slow.wait() == 0, slow.stderr
    assert code == 2, err
    assert "another spotkit process is writing to this archive" in err
    assert "Traceback" not in err
    assert leftovers_on_disk(root) == []
    assert_readers_agree(root, na + nb)


# --- two appends at once ---------------------------------------------------------------------
@pytest.mark.slow
def test_two_appends_of_different_files_at_once_lose_and_double_nothing(tmp_path):
    root = tmp_path / "arch"
    want, sources = 0, []
    for r in range(10):
        files = [write_csv(tmp_path / f"r{r}-{k}.csv", 300, seed=100 + 2 * r + k,
                           start=f"2026-10-{1 + (2 * r + k) % 28:02d} 00:00") for k in (0, 1)]
        # the lock is held a moment longer than needed, so that the commits meet
        procs = [Child(["ingest", f, "--dataset", root], fault="locked:sleep=0.2", tmp=tmp_path)
                 for f in files]
        codes = [p.wait() for p in procs]
        assert codes == [0, 0], [p.stderr for p in procs]
        want += sum(accepted(f) for f in files)
        sources += [str(f) for f in files]
        assert sorted(b["source"] for b in store.dataset_manifest(root)["batches"]) == sorted(
            sources)
        assert len(store.read_dataset(root, columns=[C.SNR])) == want
    assert_readers_agree(root, want)
    assert leftovers_on_disk(root) == []


@pytest.mark.slow
def test_two_appends_of_the_same_file_at_once_exactly_one_succeeds(tmp_path):
    path = write_csv(tmp_path / "same.csv", 300, seed=200, start="2026-12-01 00:00")
    want = accepted(path)
    for r in range(10):
        root = tmp_path / f"arch{r}"
        procs = [Child(["ingest", path, "--dataset", root], tmp=tmp_path) for _ in range(2)]
        codes = sorted(p.wait() for p in procs)
        errs = "".join(p.stderr for p in procs)
        assert codes == [0, 1], errs
        assert "already in the archive" in errs and "Traceback" not in errs
        assert len(store.dataset_manifest(root)["batches"]) == 1
        assert len(store.read_dataset(root, columns=[C.SNR])) == want
        assert leftovers_on_disk(root) == []
    assert_readers_agree(root, want)
