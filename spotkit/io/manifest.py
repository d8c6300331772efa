"""An archive's manifest and its commit protocol: the manifest is the single point of truth.

A partitioned archive (:mod:`spotkit.io.store`) holds exactly the data files its manifest
(:data:`MANIFEST_NAME`, JSON) lists; every reader builds its dataset from that list, never
from a walk of the folders, so a file the manifest does not name is invisible. An append
goes through these steps:

1. **stage**: the new data files are written under ``<root>/_staging-<token>/`` (a random
   token per append) while the appender holds ``<root>/_staging-<token>.lock``, so that a
   live appender's staging folder can be told from one left by a killed process; each file
   is fsynced;
2. **lock**: the appender takes the archive's exclusive lock (:data:`LOCK_NAME`, an OS file
   lock through the ``filelock`` package: the kernel releases it when the process dies, so a
   kill never leaves the archive locked); a second writer waits up to ``timeout`` seconds
   (:data:`LOCK_TIMEOUT_S`) and then stops with :class:`~spotkit.errors.UsageError`;
3. **roll back** what a dead append left (:func:`roll_back_leftovers`);
4. **check** the manifest, read again under the lock: a file whose content is already in
   it is refused (content = SHA-256 of the decompressed bytes, so a gzip copy or a renamed
   copy of a taken file is recognised);
5. **move** the staged files to their final names inside the partition folders (still
   invisible: the manifest does not name them) and fsync their folders;
6. **commit**: the new manifest is written to a unique temporary name, fsynced, and put in
   place with one :func:`os.replace` (atomic on POSIX file systems), then the root folder is
   fsynced. This one rename is the commit point;
7. the staging folder and its lock are removed; the lock is released.

A kill before step 6 leaves the archive as it was plus files no reader sees; the next
append (step 3) or :func:`repair_archive` removes them. A kill after step 6 leaves the
append complete plus an empty staging folder, removed the same way. Readers take no lock:
a manifest is replaced whole and committed files are never rewritten or removed, so a
reader sees either the old or the new set of files.

For tests only, the environment variable ``SPOTKIT_TEST_FAULT`` names a point of the
protocol (:data:`FAULT_POINTS`) where the process kills itself with SIGKILL
(``SPOTKIT_TEST_FAULT=moved``) or sleeps (``SPOTKIT_TEST_FAULT=staged:sleep=1.5``).

Known limits: the guarantees need a local POSIX file system (atomic rename, ``fsync`` of a
folder, working ``flock``); on a network file system that ignores ``flock`` two writers can
still meet. Files of the archive that spotkit did not write (names not ``part-<token>``)
are reported by :func:`check_archive` but never removed.
"""
from __future__ import annotations

import contextlib
import gzip
import hashlib
import json
import os
import re
import shutil
import signal
import time
import uuid
import zlib
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from spotkit.errors import InputError, UsageError
from spotkit.io.atomic import fsync_dir

#: The manifest file in an archive's root.
MANIFEST_NAME = "_spotkit_manifest.json"
#: The archive's lock file (an OS lock on it is held while an append commits).
LOCK_NAME = "_spotkit.lock"
#: Folder (inside the root) where rejects of appended files are kept as CSV.
REJECTS_DIR = "_rejects"
#: Prefix of an append's staging folder (and its lock file) in the root.
STAGING_PREFIX = "_staging-"
#: How long a writer waits for another writer's commit before giving up [s].
LOCK_TIMEOUT_S = 120.0
#: Points of the commit protocol where ``SPOTKIT_TEST_FAULT`` can stop the process.
FAULT_POINTS = ("read", "write", "staged", "locked", "moved", "manifest", "committed")
FORMAT_VERSION = 1
#: Partition keys of a new archive when none are given.
DEFAULT_PARTITION_BY = ("band", "day")

_PART_FILE = re.compile(r"part-([0-9a-f]{12})(-\d+)?\.parquet")
_REJECT_FILE = re.compile(r"([0-9a-f]{12})\.csv")
_TMP_MANIFEST = re.compile(re.escape(MANIFEST_NAME) + r"\.[0-9a-f]+\.tmp")


def new_token() -> str:
    """A random 12-hex-digit token naming one append's files."""
    return uuid.uuid4().hex[:12]


def fault_point(name: str) -> None:
    """Test hook: kill (or pause) this process here if ``SPOTKIT_TEST_FAULT`` names ``name``."""
    spec = os.environ.get("SPOTKIT_TEST_FAULT")
    if not spec:
        return
    point, _, action = spec.partition(":")
    if point != name:
        return
    if action.startswith("sleep="):
        time.sleep(float(action.split("=", 1)[1]))
    else:
        os.kill(os.getpid(), signal.SIGKILL)


# --- manifest --------------------------------------------------------------------------------
def empty_manifest(partition_by: Sequence[str] = DEFAULT_PARTITION_BY) -> dict:
    """A manifest with no batches."""
    return {"format": FORMAT_VERSION, "partition_by": list(partition_by), "batches": []}


def dataset_manifest(root) -> dict:
    """The manifest of an archive: partition keys and one entry per appended batch.

    Parameters
    ----------
    root : str or path-like
        Archive directory.

    Returns
    -------
    dict
        ``{"format": 1, "partition_by": [...], "batches": [{"token", "sha256",
        "content_sha256", "source", "rows", "rejected", "rejects", "written_utc", "files"},
        ...]}``; an empty skeleton when the directory has no manifest yet.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> import pandas as pd
    >>> from spotkit.io.store import append_to_dataset
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-01 23:58", "2024-03-02 00:00",
    ...                                 "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 3, "rx_call": ["Q2XY", "Q2XY", "Q3DEF"],
    ...     "band": ["20m", "20m", "40m"], "snr_db": [-12.0, -15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     empty = dataset_manifest(d)
    ...     _ = append_to_dataset(spots, pathlib.Path(d) / "archive", source="march.csv")
    ...     manifest = dataset_manifest(pathlib.Path(d) / "archive")
    >>> empty
    {'format': 1, 'partition_by': ['band', 'day'], 'batches': []}
    >>> [(b["source"], b["rows"]) for b in manifest["batches"]]
    [('march.csv', 3)]
    """
    mpath = Path(root) / MANIFEST_NAME
    try:
        text = mpath.read_text(encoding="utf-8")
    except FileNotFoundError:
        return empty_manifest()
    try:
        manifest = json.loads(text)
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"{mpath}: archive manifest is not valid JSON ({exc})") from None
    if (not isinstance(manifest, dict) or not isinstance(manifest.get("batches"), list)
            or not isinstance(manifest.get("partition_by", []), list)):
        raise InputError(f"{mpath}: not a spotkit archive manifest (no list of batches)")
    manifest.setdefault("partition_by", list(DEFAULT_PARTITION_BY))
    return manifest


def committed_files(manifest: dict) -> list[str]:
    """Data files (relative POSIX paths) the manifest lists, in batch order."""
    return [f for b in manifest["batches"] for f in b.get("files") or []]


def write_manifest(root: Path, manifest: dict) -> None:
    """Replace the manifest atomically: unique temporary file, fsync, rename, fsync folder.

    The caller holds the archive lock (:func:`archive_lock`).
    """
    root = Path(root)
    tmp = root / f"{MANIFEST_NAME}.{uuid.uuid4().hex}.tmp"
    try:
        with open(tmp, "w", encoding="utf-8") as fh:
            json.dump(manifest, fh, indent=1, sort_keys=True)
            fh.flush()
            os.fsync(fh.fileno())
        fault_point("manifest")
        os.replace(tmp, root / MANIFEST_NAME)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    fsync_dir(root)


# --- content hashes --------------------------------------------------------------------------
def file_sha256(path, *, block_bytes: int = 1 << 22) -> str:
    """SHA-256 of a file's bytes (hex), read in blocks of ``block_bytes`` [bytes].

    Examples
    --------
    The SHA-256 of ``abc`` is the first test vector of FIPS 180-2:

    >>> import pathlib, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = pathlib.Path(d) / "abc.txt"
    ...     _ = path.write_bytes(b"abc")
    ...     print(file_sha256(path, block_bytes=2))
    ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad
    """
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        while block := fh.read(block_bytes):
            h.update(block)
    return h.hexdigest()


def content_sha256(path, *, block_bytes: int = 1 << 22) -> str:
    """SHA-256 (hex) of a file's content: its decompressed bytes when it is gzip, else its
    bytes (then equal to :func:`file_sha256`). A gzip copy of a file has the same content
    hash as the file.

    Raises
    ------
    InputError
        When a gzip file is truncated or corrupt.

    Examples
    --------
    >>> import gzip, pathlib, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     plain, packed = pathlib.Path(d) / "abc.txt", pathlib.Path(d) / "abc.txt.gz"
    ...     _ = plain.write_bytes(b"abc")
    ...     _ = packed.write_bytes(gzip.compress(b"abc"))
    ...     same = content_sha256(packed) == content_sha256(plain) == file_sha256(plain)
    ...     print(same, file_sha256(packed) == file_sha256(plain))
    True False
    """
    with open(path, "rb") as fh:
        gz = fh.read(2) == b"\x1f\x8b"
    if not gz:
        return file_sha256(path, block_bytes=block_bytes)
    h = hashlib.sha256()
    try:
        with gzip.open(path, "rb") as fh:
            while block := fh.read(block_bytes):
                h.update(block)
    except (OSError, EOFError, zlib.error) as exc:
        raise InputError(f"{path}: corrupt or truncated gzip file ({exc})") from None
    return h.hexdigest()


def file_hashes(path) -> tuple[str, str]:
    """``(sha256 of the bytes, sha256 of the content)`` of a file; a plain file is read once.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = pathlib.Path(d) / "abc.txt"
    ...     _ = path.write_bytes(b"abc")
    ...     raw, content = file_hashes(path)
    >>> raw == content, raw[:12]
    (True, 'ba7816bf8f01')
    """
    raw = file_sha256(path)
    with open(path, "rb") as fh:
        gz = fh.read(2) == b"\x1f\x8b"
    return raw, (content_sha256(path) if gz else raw)


def check_not_taken(manifest: dict, source: str, sha256: str | None,
                    content: str | None, root) -> None:
    """Refuse a file whose bytes or content the manifest already holds.

    Compares the file's raw SHA-256 and content SHA-256 with both hashes of every batch
    (batches written before content hashes existed have ``sha256`` only, which is the
    content hash of a plain file).

    Raises
    ------
    InputError
        Naming the batch that holds the same content.
    """
    mine = {h for h in (sha256, content) if h}
    if not mine:
        return
    for batch in manifest["batches"]:
        theirs = {batch.get("sha256"), batch.get("content_sha256")} - {None}
        same = mine & theirs
        if same:
            h = sorted(same)[0]
            raise InputError(
                f"{source}: already in the archive {root} (same content, SHA-256 {h[:12]}..., "
                f"appended {batch.get('written_utc')} from {batch.get('source')}); not "
                "appended again")


# --- locks -----------------------------------------------------------------------------------
@contextlib.contextmanager
def archive_lock(root, *, timeout: float | None = None) -> Iterator[None]:
    """Hold the archive's exclusive write lock (:data:`LOCK_NAME`) for the ``with`` block.

    Parameters
    ----------
    root : str or path-like
        Archive directory (must exist).
    timeout : float, optional
        Seconds to wait for another writer [s]; default: the environment variable
        ``SPOTKIT_LOCK_TIMEOUT_S`` if set, else :data:`LOCK_TIMEOUT_S`.

    Raises
    ------
    UsageError
        When another process holds the lock for longer than ``timeout``.
    """
    from filelock import FileLock, Timeout

    if timeout is None:
        timeout = float(os.environ.get("SPOTKIT_LOCK_TIMEOUT_S", LOCK_TIMEOUT_S))
    wait = float(timeout)
    lock = FileLock(str(Path(root) / LOCK_NAME), timeout=wait)
    try:
        lock.acquire()
    except Timeout:
        raise UsageError(
            f"{root}: another spotkit process is writing to this archive (waited {wait:g} s "
            f"for its lock {LOCK_NAME}); try again when it has finished") from None
    try:
        yield
    finally:
        lock.release()


#: Staging folders of this process that are alive (never taken for leftovers, whatever a
#: lock library does about two locks of one process on one file).
_LIVE_STAGING: set[Path] = set()


class StagingArea:
    """One append's staging folder ``<root>/_staging-<token>/``, locked while it lives.

    The lock file sits beside the folder and is taken before the folder is made, so a
    staging folder whose lock is free belongs to a process that died.
    """

    def __init__(self, root: Path, token: str):
        from filelock import FileLock

        self.root, self.token = Path(root), token
        self.path = self.root / f"{STAGING_PREFIX}{token}"
        self._lock_path = self.root / f"{STAGING_PREFIX}{token}.lock"
        self._lock = FileLock(str(self._lock_path), timeout=0)
        self._lock.acquire()
        _LIVE_STAGING.add(self.path.resolve())
        self.path.mkdir()

    def remove(self) -> None:
        """Delete the folder (whatever is left in it), then the lock."""
        shutil.rmtree(self.path, ignore_errors=True)
        fsync_dir(self.root)
        if self._lock.is_locked:
            self._lock.release()
        with contextlib.suppress(OSError):
            self._lock_path.unlink()
        _LIVE_STAGING.discard(self.path.resolve())


def _staging_is_dead(lock_path: Path) -> bool:
    """A staging lock that is free (or gone: it is made before the folder and removed
    after it) belongs to a process that no longer runs."""
    from filelock import FileLock, Timeout

    if not lock_path.exists():
        return True
    lock = FileLock(str(lock_path), timeout=0)
    try:
        lock.acquire()
    except Timeout:
        return False
    except OSError:  # cannot even open it (read-only archive): assume it is in use
        return False
    lock.release()
    return True


# --- leftovers, check and repair -------------------------------------------------------------
@dataclass
class ArchiveCheck:
    """What an archive holds besides its committed files, from :func:`check_archive`.

    Attributes
    ----------
    root : pathlib.Path
    partition_by : list of str
    batches, rows, files : int
        Committed batches, spots [rows] and data files (from the manifest).
    rows_in_files : int or None
        Rows counted in the committed files' Parquet footers (None if not counted).
    missing : list of str
        Committed files that are not on disk.
    leftovers : list of str
        What interrupted appends left (relative paths): data and rejects files the manifest
        does not name, temporary manifests, staging folders of dead processes, empty
        partition folders. Invisible to readers; :func:`repair_archive` removes them.
    busy : list of str
        Staging folders of appends still running (left alone).
    foreign : list of str
        Files in the partition folders that spotkit did not write; readers ignore them and
        nothing removes them.
    """

    root: Path
    partition_by: list[str]
    batches: int = 0
    rows: int = 0
    files: int = 0
    rows_in_files: int | None = None
    missing: list[str] = field(default_factory=list)
    leftovers: list[str] = field(default_factory=list)
    busy: list[str] = field(default_factory=list)
    foreign: list[str] = field(default_factory=list)

    @property
    def clean(self) -> bool:
        """True when nothing is left over or missing and the counts agree."""
        return (not self.missing and not self.leftovers and not self.foreign
                and (self.rows_in_files is None or self.rows_in_files == self.rows))

    def text(self) -> str:
        """The report ``spotkit archive info`` prints after the batches."""
        lines = []
        if self.rows_in_files is not None and self.rows_in_files != self.rows:
            lines.append(f"the committed files hold {self.rows_in_files:,} spots, the manifest "
                         f"says {self.rows:,}")
        if self.missing:
            lines.append(f"{len(self.missing)} committed file(s) missing from disk (restore them "
                         f"from a backup): {', '.join(self.missing[:5])}")
        if self.leftovers:
            lines.append(f"{len(self.leftovers)} leftover(s) of interrupted appends, not part "
                         f"of the archive ('spotkit archive repair {self.root}' removes them): "
                         f"{', '.join(self.leftovers[:5])}"
                         + (" ..." if len(self.leftovers) > 5 else ""))
        if self.busy:
            lines.append(f"{len(self.busy)} append(s) in progress: {', '.join(self.busy)}")
        if self.foreign:
            lines.append(f"{len(self.foreign)} file(s) not written by spotkit, ignored by "
                         f"readers: {', '.join(self.foreign[:5])}")
        return "\n".join(lines) if lines else "no leftovers; every committed file is there"


def _scan_leftovers(root: Path, manifest: dict) -> tuple[list, list, list, list]:
    """(leftovers, busy, foreign, empty partition folders) of an archive, as Paths."""
    keep = set(committed_files(manifest))
    keep_rejects = {b.get("rejects") for b in manifest["batches"]} - {None}
    leftovers, busy, foreign = [], [], []
    staging_dirs = {p.name for p in root.glob(f"{STAGING_PREFIX}*") if p.is_dir()}
    for name in sorted(staging_dirs):
        lock = root / f"{name}.lock"
        live = (root / name).resolve() in _LIVE_STAGING or not _staging_is_dead(lock)
        (busy if live else leftovers).append(root / name)
    for lock in sorted(root.glob(f"{STAGING_PREFIX}*.lock")):
        name = lock.name[:-len(".lock")]
        if (name not in staging_dirs and (root / name).resolve() not in _LIVE_STAGING
                and _staging_is_dead(lock)):
            leftovers.append(lock)
    leftovers += [p for p in sorted(root.iterdir()) if _TMP_MANIFEST.fullmatch(p.name)]
    rejects = root / REJECTS_DIR
    if rejects.is_dir():
        for p in sorted(rejects.iterdir()):
            rel = f"{REJECTS_DIR}/{p.name}"
            if rel not in keep_rejects:
                (leftovers if _REJECT_FILE.fullmatch(p.name) else foreign).append(p)
    empty_dirs = []
    for dirpath, dirnames, filenames in os.walk(root, topdown=True):
        here = Path(dirpath)
        if here == root:
            dirnames[:] = [d for d in dirnames if not d.startswith(("_", "."))]
            continue
        for name in filenames:
            rel = (here / name).relative_to(root).as_posix()
            if rel in keep:
                continue
            (leftovers if _PART_FILE.fullmatch(name) else foreign).append(here / name)
    for dirpath, _dirs, _files in os.walk(root, topdown=False):
        here = Path(dirpath)
        if here == root or here.relative_to(root).parts[0].startswith(("_", ".")):
            continue
        below = [p for p in here.iterdir() if p not in empty_dirs]
        if all(p in leftovers for p in below):
            empty_dirs.append(here)
    return leftovers, busy, foreign, empty_dirs


def check_archive(root, *, count_rows: bool = True) -> ArchiveCheck:
    """Compare an archive's folders with its manifest, without changing anything.

    Parameters
    ----------
    root : str or path-like
        Archive directory.
    count_rows : bool
        Also add up the rows in the committed files' Parquet footers (one small read per
        file).

    Returns
    -------
    ArchiveCheck

    Examples
    --------
    A kill between staging and commit leaves a staging folder no reader sees:

    >>> import pathlib, tempfile
    >>> import pandas as pd
    >>> from spotkit.io.store import append_to_dataset
    >>> spots = pd.DataFrame({
    ...     "slot_utc": pd.to_datetime(["2024-03-02 00:00", "2024-03-02 00:02"], utc=True),
    ...     "tx_call": ["Q1ABC"] * 2, "rx_call": ["Q2XY", "Q3DEF"],
    ...     "band": ["20m", "40m"], "snr_db": [-15.0, -20.0]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = append_to_dataset(spots, d)
    ...     (pathlib.Path(d) / "_staging-0123456789ab" / "band=20m").mkdir(parents=True)
    ...     before = check_archive(d)
    ...     removed = repair_archive(d)
    ...     after = check_archive(d)
    >>> before.rows, before.rows_in_files, before.leftovers[0].endswith("0123456789ab")
    (2, 2, True)
    >>> len(removed), after.clean
    (1, True)
    """
    root = Path(root)
    if not root.is_dir():
        raise FileNotFoundError(f"{root}: no such archive directory")
    if not (root / MANIFEST_NAME).exists():
        raise InputError(f"{root}: not a spotkit archive (no {MANIFEST_NAME})")
    manifest = dataset_manifest(root)
    files = committed_files(manifest)
    check = ArchiveCheck(root=root, partition_by=list(manifest["partition_by"]),
                         batches=len(manifest["batches"]),
                         rows=sum(int(b.get("rows") or 0) for b in manifest["batches"]),
                         files=len(files))
    check.missing = [f for f in files if not (root / f).is_file()]
    if count_rows:
        import pyarrow.parquet as pq

        total = 0
        for f in files:
            if f in check.missing:
                continue
            try:
                total += pq.ParquetFile(root / f).metadata.num_rows
            except (OSError, ValueError) as exc:
                raise InputError(f"{root / f}: committed file cannot be read ({exc})") from None
        check.rows_in_files = total
    leftovers, busy, foreign, empty = _scan_leftovers(root, manifest)
    rel = lambda p: p.relative_to(root).as_posix()  # noqa: E731 - local shorthand
    check.leftovers = [rel(p) for p in leftovers] + [rel(p) + "/" for p in empty]
    check.busy, check.foreign = [rel(p) for p in busy], [rel(p) for p in foreign]
    return check


def roll_back_leftovers(root: Path, manifest: dict) -> list[str]:
    """Remove what interrupted appends left; the caller holds :func:`archive_lock`.

    Only spotkit's own names are removed (``part-<token>`` data files and ``<token>.csv``
    rejects that the manifest does not list, dead staging folders, temporary manifests,
    partition folders left empty); committed files and foreign files are never touched.

    Returns
    -------
    list of str
        What was removed (relative paths).
    """
    root = Path(root)
    leftovers, _busy, _foreign, empty = _scan_leftovers(root, manifest)
    removed = []
    for p in leftovers:
        if p.is_dir():
            shutil.rmtree(p, ignore_errors=True)
            with contextlib.suppress(OSError):
                (root / f"{p.name}.lock").unlink()
        else:
            with contextlib.suppress(FileNotFoundError):
                p.unlink()
        removed.append(p.relative_to(root).as_posix())
    for d in empty:  # deepest first
        with contextlib.suppress(OSError):
            d.rmdir()
            removed.append(d.relative_to(root).as_posix() + "/")
    if removed:
        fsync_dir(root)
    return removed


def repair_archive(root, *, timeout: float | None = None) -> list[str]:
    """Remove the leftovers of interrupted appends from an archive (under its lock).

    Parameters
    ----------
    root : str or path-like
        Archive directory.
    timeout : float, optional
        Seconds to wait for a running append's commit [s] (default :data:`LOCK_TIMEOUT_S`).

    Returns
    -------
    list of str
        What was removed (relative paths; folders end with ``/``). Committed data, staging
        folders of appends still running and files spotkit did not write stay.

    Examples
    --------
    See :func:`check_archive`.
    """
    root = Path(root)
    if not (root / MANIFEST_NAME).exists():
        raise InputError(f"{root}: not a spotkit archive (no {MANIFEST_NAME})")
    with archive_lock(root, timeout=timeout):
        return roll_back_leftovers(root, dataset_manifest(root))


__all__ = [
    "MANIFEST_NAME", "LOCK_NAME", "REJECTS_DIR", "LOCK_TIMEOUT_S", "FAULT_POINTS",
    "ArchiveCheck", "dataset_manifest", "file_sha256", "content_sha256", "file_hashes",
    "check_not_taken", "archive_lock",
    "check_archive", "repair_archive",
]
