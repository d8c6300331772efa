"""Outputs written as one transaction: all files of a run appear together, or none does.

Model
-----
Each output of a run is written under a temporary name in its own target folder
(:func:`staging_path`: the target's name, the process id, a short tag of the host name and
a random part, ending in ``.spotkit-tmp``), so two runs never share a temporary name. When
the run has succeeded, :func:`commit` flushes every temporary file to disk (``fsync``),
writes a small commit record (``.spotkit-commit``, JSON: which temporary becomes which
target) into every folder involved, renames each temporary onto its target
(:func:`os.replace`, atomic on one file system), flushes the folders and removes the
record. While it commits it holds an exclusive lock on each folder (``fcntl.flock`` on the
folder itself, so no lock file is left behind) and holds back SIGINT and SIGTERM, so two
runs that commit to the same targets at once follow each other: the last commit wins
for all its files together, never a mix of the two.

A run that fails or is interrupted before its commit removes its temporary files
(:func:`staged`); earlier files are left byte for byte as they were. A run killed outright
(SIGKILL, power loss) cannot clean up; the next run that writes into the same folder
(:func:`recover_folder`) finishes a commit whose record is complete in every folder (every
temporary was on disk before the first rename, so the commit is completed, never half
undone; a commit whose record copies were not all written is rolled back), then
removes temporary files whose writer is provably dead: written on this host (the host tag
in the name) by a process id that no longer exists, or that now belongs to a process
started after the file was last written (Linux ``/proc``). A temporary file of another host
or of a live process is left alone.

:func:`check_outputs` refuses, before anything is touched, an output that is also an input
(same resolved path, or the same file under another name: :func:`os.path.samefile`), two
outputs with the same path and an output that is a folder.

Hand-written on the standard library (``os.replace``, ``os.fsync``, ``fcntl.flock``): the
packages for atomic writes handle one file at a time, not several files committed together.

Known limits: on systems without ``fcntl`` (Windows) the folders are not locked, so two
runs committing at the same instant may mix their files, and leftovers of a killed run are
never proven dead there (they stay until removed by hand). Between two renames of a commit
a reader may briefly see the new file beside the old one (the commit record makes the
next writer complete the commit after a crash). A network file system without working
``flock`` gives the same weaker guarantee as Windows.
"""
from __future__ import annotations

import contextlib
import errno
import json
import os
import re
import secrets
import signal
import socket
import threading
import zlib
from collections.abc import Iterator, Sequence
from pathlib import Path

from spotkit.errors import OutputError, UsageError

#: Ending of temporary output files.
TEMP_SUFFIX = ".spotkit-tmp"
#: Ending of commit records.
RECORD_SUFFIX = ".spotkit-commit"

_NAME = re.compile(r"^\.(?P<target>.+)\.(?P<pid>\d+)-(?P<host>[0-9a-f]{8})-(?P<rand>[0-9a-f]{8})"
                   r"(?P<kind>" + re.escape(TEMP_SUFFIX) + "|" + re.escape(RECORD_SUFFIX)
                   + r")$")
_HELD_BACK = (signal.SIGINT, signal.SIGTERM)


class Interrupted(KeyboardInterrupt):
    """A run stopped by a signal (SIGINT or SIGTERM); ``signum`` says which."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def host_tag() -> str:
    """Eight hex digits naming this host in temporary names (CRC-32 of the host name)."""
    return f"{zlib.crc32(socket.gethostname().encode('utf-8', 'replace')):08x}"


def _token() -> str:
    return f"{os.getpid()}-{host_tag()}-{secrets.token_hex(4)}"


def staging_path(target, token: str | None = None) -> Path:
    """The temporary name under which ``target`` is written before its commit.

    Parameters
    ----------
    target : str or path-like
        The output file.
    token : str, optional
        ``PID-HOST-RANDOM`` shared by the files of one run (default: a new one).

    Returns
    -------
    pathlib.Path
        A hidden file in the target's folder: ``.NAME.PID-HOST-RANDOM.spotkit-tmp``.

    Examples
    --------
    >>> p = staging_path("out/spots.parquet", token="123-0badcafe-00c0ffee")
    >>> p.as_posix()
    'out/.spots.parquet.123-0badcafe-00c0ffee.spotkit-tmp'
    """
    target = Path(target)
    return target.with_name(f".{target.name}.{token or _token()}{TEMP_SUFFIX}")


def _same(a: Path, b: Path) -> bool:
    if a == b:
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def check_outputs(outputs: Sequence, inputs: Sequence = ()) -> list[Path]:
    """Refuse outputs that would destroy an input or each other.

    Parameters
    ----------
    outputs : sequence of str, path-like or None
        Output files (None entries are skipped).
    inputs : sequence of str or path-like
        Input files of the same run.

    Returns
    -------
    list of pathlib.Path
        The outputs (None entries dropped), resolved (symbolic links followed).

    Raises
    ------
    UsageError
        An output is an input (same path, or the same file by another name or link), two
        outputs are the same file, or an output is a folder.

    Examples
    --------
    >>> check_outputs(["spots.csv"], inputs=["./spots.csv"])
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: output spots.csv is also an input file; choose another name
    """
    given = [Path(o) for o in outputs if o is not None]
    resolved = [p.resolve() for p in given]
    ins = [(Path(i), Path(i).resolve()) for i in inputs]
    for g, r in zip(given, resolved, strict=True):
        if r.is_dir():
            raise UsageError(f"output {g} is a folder; give a file name")
        for _, ri in ins:
            if _same(r, ri):
                raise UsageError(f"output {g} is also an input file; choose another name")
    for k, (g, r) in enumerate(zip(given, resolved, strict=True)):
        for g2, r2 in zip(given[:k], resolved[:k], strict=True):
            if _same(r, r2):
                raise UsageError(f"outputs {g2} and {g} are the same file; give each output "
                                 "its own name")
    return resolved


# --- process liveness --------------------------------------------------------------------
def _started_after(pid: int, mtime: float) -> bool:
    """Whether process ``pid`` started after ``mtime`` (Linux /proc; False when unknown)."""
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii") as fh:
            ticks = int(fh.read().rsplit(")", 1)[1].split()[19])
        with open("/proc/stat", encoding="ascii") as fh:
            boot = next(int(line.split()[1]) for line in fh if line.startswith("btime "))
        started = boot + ticks / os.sysconf("SC_CLK_TCK")
    except (OSError, ValueError, IndexError, StopIteration):
        return False
    return started > mtime + 1.0  # btime has 1 s resolution


def writer_is_dead(path) -> bool:
    """Whether the process that wrote the temporary file or commit record ``path`` is
    provably gone: written on this host by a process id that no longer exists, or that now
    belongs to a process started after the file was last changed.

    Returns False for names not made by :func:`staging_path`, other hosts, live writers and
    whenever it cannot tell.

    Examples
    --------
    >>> writer_is_dead("spots.parquet"), writer_is_dead(staging_path("spots.parquet"))
    (False, False)
    """
    path = Path(path)
    m = _NAME.match(path.name)
    if m is None or m["host"] != host_tag() or os.name != "posix":
        return False  # (on Windows os.kill(pid, 0) would stop the process, not probe it)
    pid = int(m["pid"])
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:  # exists, not ours to signal
        pass
    try:
        mtime = path.lstat().st_mtime
    except OSError:
        return False
    return _started_after(pid, mtime)


# --- locking and signals -------------------------------------------------------------------
@contextlib.contextmanager
def _locked(folders: Sequence[Path]) -> Iterator[None]:
    """Exclusive ``flock`` on each folder (sorted, so two runs cannot deadlock)."""
    try:
        import fcntl
    except ImportError:  # pragma: no cover - Windows
        yield
        return
    fds = []
    try:
        for folder in sorted(set(folders)):
            fd = os.open(folder, os.O_RDONLY)
            fds.append(fd)
            fcntl.flock(fd, fcntl.LOCK_EX)
        yield
    finally:
        for fd in reversed(fds):
            os.close(fd)  # closing releases the lock


@contextlib.contextmanager
def _signals_held() -> Iterator[None]:
    """Hold back SIGINT and SIGTERM: inside the block they are only noted, and delivered
    again (to the handlers in place before) when it ends. Main thread only (elsewhere
    Python cannot change handlers, and signals are handled in the main thread anyway)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    pending: list[int] = []

    def note(signum, frame):
        pending.append(signum)

    old = {s: signal.signal(s, note) for s in _HELD_BACK}
    try:
        yield
    finally:
        for s, h in old.items():
            signal.signal(s, signal.SIG_DFL if h is None else h)
        for s in dict.fromkeys(pending):
            signal.raise_signal(s)


@contextlib.contextmanager
def signals_raise() -> Iterator[None]:
    """Inside the block SIGTERM raises :class:`Interrupted` (as Ctrl-C raises
    :class:`KeyboardInterrupt`), so ``finally`` clauses clean up; the old handler comes back
    afterwards. Does nothing outside the main thread.

    Examples
    --------
    >>> import signal
    >>> before = signal.getsignal(signal.SIGTERM)
    >>> with signals_raise():
    ...     inside = signal.getsignal(signal.SIGTERM)
    >>> inside is not before, signal.getsignal(signal.SIGTERM) is before
    (True, True)
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def handler(signum, frame):
        raise Interrupted(signum)

    old = signal.signal(signal.SIGTERM, handler)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, old)


# --- recovery ------------------------------------------------------------------------------
def fsync_dir(folder) -> None:
    """Flush a folder's entries (new names, renames) to the disk; a no-op where folders
    cannot be opened (Windows) or a file system refuses."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # pragma: no cover - e.g. Windows
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover - some file systems refuse
        pass
    finally:
        os.close(fd)


def _finish_record(record: Path) -> list[Path]:
    """Complete the commit described by ``record`` (renames whose temporary still exists)
    when every copy of the record was written, else roll it back; remove every copy of the
    record. Returns the targets renamed."""
    try:
        data = json.loads(record.read_text(encoding="utf-8"))
        pairs = [(Path(t), Path(d)) for t, d in data["pairs"]]
        copies = [Path(c) for c in data["records"]]
    except (OSError, ValueError, KeyError, TypeError):
        # an unreadable record was never complete: its writer died while writing it,
        # before any rename, so the commit never started
        with contextlib.suppress(OSError):
            record.unlink()
        return []
    done = []
    if not all(c.exists() for c in copies):
        # the writer died while writing the copies, before any rename (copies are removed
        # only after the last rename): the commit was not decided, so it is rolled back
        for tmp, _ in pairs:
            with contextlib.suppress(FileNotFoundError):
                tmp.unlink()
    for tmp, target in pairs:
        if tmp.exists():
            os.replace(tmp, target)
            done.append(target)
    for folder in {t.parent for _, t in pairs}:
        fsync_dir(folder)
    for c in copies:
        with contextlib.suppress(FileNotFoundError):
            c.unlink()
    return done


def recover_folder(folder) -> list[Path]:
    """Finish or clear what dead runs left in ``folder``.

    First every commit record of a dead writer is completed (its temporaries renamed onto
    their targets, in every folder it names), then the temporary files of dead writers are
    removed. Files of live writers and of other hosts are left alone. Call it while holding
    the folder's lock (:func:`commit` and :func:`staged` do).

    Parameters
    ----------
    folder : str or path-like

    Returns
    -------
    list of pathlib.Path
        The files removed or renamed into place.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     print(recover_folder(d))
    []
    """
    folder = Path(folder)
    try:
        names = [e for e in os.scandir(folder) if e.name.startswith(".")]
    except OSError:
        return []
    out: list[Path] = []
    records = [Path(e.path) for e in names if e.name.endswith(RECORD_SUFFIX)]
    for rec in records:
        if writer_is_dead(rec):
            out += _finish_record(rec)
    for e in names:
        p = Path(e.path)
        if e.name.endswith(TEMP_SUFFIX) and writer_is_dead(p):
            with contextlib.suppress(FileNotFoundError):
                p.unlink()
                out.append(p)
    return out


# --- the transaction -------------------------------------------------------------------------
def fsync_file(path) -> None:
    """Flush a written file's data to the disk."""
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def commit(pairs: Sequence[tuple]) -> None:
    """Rename each temporary onto its target, all under one commit record.

    Parameters
    ----------
    pairs : sequence of (temporary, target)
        Paths; each temporary in its target's folder.

    Notes
    -----
    Every temporary is flushed to disk first; the record goes into each folder involved;
    the renames run with the folders locked and SIGINT / SIGTERM held back, so a signal
    arrives after the commit, never in the middle.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     target = pathlib.Path(d) / "a.txt"
    ...     tmp = staging_path(target)
    ...     _ = tmp.write_text("new")
    ...     commit([(tmp, target)])
    ...     print(sorted(p.name for p in pathlib.Path(d).iterdir()), target.read_text())
    ['a.txt'] new
    """
    pairs = [(Path(t), Path(d)) for t, d in pairs]
    if not pairs:
        return
    for tmp, _ in pairs:
        fsync_file(tmp)
    folders = sorted({d.parent for _, d in pairs})
    m = _NAME.match(pairs[0][0].name)
    token = f"{m['pid']}-{m['host']}-{m['rand']}" if m else _token()
    records = [f / f".{pairs[0][1].name}.{token}{RECORD_SUFFIX}" for f in folders]
    body = json.dumps({"pairs": [[str(t), str(d)] for t, d in pairs],
                       "records": [str(r) for r in records]})
    with _signals_held(), _locked(folders):
        for f in folders:
            recover_folder(f)
        for rec in records:
            part = staging_path(rec, token)
            with open(part, "w", encoding="utf-8") as fh:
                fh.write(body)
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(part, rec)
        for f in folders:
            fsync_dir(f)
        _before_rename_hook()
        for tmp, target in pairs:
            os.replace(tmp, target)
        for f in folders:
            fsync_dir(f)
        for rec in records:
            rec.unlink()


def _before_rename_hook() -> None:
    """Test hook: with ``SPOTKIT_TEST_PAUSE=commit`` the process stops here (SIGSTOP to
    itself) so that a test can kill it between the commit record and the renames."""
    _pause_point("commit")


def _pause_point(name: str) -> None:
    """Stop this process (SIGSTOP) when the environment variable ``SPOTKIT_TEST_PAUSE``
    names ``name``: a named point at which the fault-injection tests kill a run."""
    if os.environ.get("SPOTKIT_TEST_PAUSE") == name and hasattr(signal, "SIGSTOP"):
        os.kill(os.getpid(), signal.SIGSTOP)


def _describe(exc: OSError, folder: Path) -> str:
    reasons = {errno.EACCES: "permission denied", errno.EPERM: "permission denied",
               errno.EROFS: "read-only file system", errno.ENOSPC: "no space left",
               errno.ENOENT: "no such folder", errno.EEXIST: "it is a file, not a folder",
               errno.ENOTDIR: "a file is in the way of that folder"}
    reason = reasons.get(exc.errno, exc.strerror or str(exc))
    return f"cannot write in folder {folder}: {reason}"


@contextlib.contextmanager
def staged(targets: Sequence) -> Iterator[list[Path]]:
    """Write ``targets`` as one transaction.

    Yields one temporary path per target (created empty, in the target's folder); when the
    block ends normally they are committed together (:func:`commit`); when it raises
    (including :class:`KeyboardInterrupt`) they are removed and the targets are untouched.
    A signal that arrives during the commit raises its exception after the commit, with
    the attribute ``committed = True``.
    On entry, what dead runs left in the folders is recovered (:func:`recover_folder`);
    missing folders are created (and removed again if the block fails and they are empty).

    Parameters
    ----------
    targets : sequence of str or path-like
        Output files, distinct (see :func:`check_outputs`).

    Raises
    ------
    OutputError
        A folder cannot be created or written in (also when renaming at the end).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     a, b = pathlib.Path(d) / "a.txt", pathlib.Path(d) / "b.txt"
    ...     with staged([a, b]) as (ta, tb):
    ...         _ = ta.write_text("one"), tb.write_text("two")
    ...         before = sorted(p.name for p in pathlib.Path(d).iterdir() if p.name[0] != ".")
    ...     after = sorted(p.name for p in pathlib.Path(d).iterdir())
    >>> before, after
    ([], ['a.txt', 'b.txt'])
    """
    targets = [Path(t) for t in targets]
    token = _token()
    made: list[Path] = []
    temps: list[Path] = []
    try:
        with _signals_held():
            for t in targets:
                folder = t.parent
                missing = []
                p = folder
                while not p.exists() and p != p.parent:
                    missing.append(p)
                    p = p.parent
                try:
                    folder.mkdir(parents=True, exist_ok=True)
                except OSError as exc:
                    raise OutputError(_describe(exc, p)) from None
                made += reversed(missing)
            folders = sorted({t.parent for t in targets})
            try:
                with _locked(folders):
                    for f in folders:
                        recover_folder(f)
            except OSError as exc:
                raise OutputError(_describe(exc, Path(exc.filename or folders[0]))) from None
            for t in targets:
                tmp = staging_path(t, token)
                try:
                    os.close(os.open(tmp, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o666))
                except OSError as exc:
                    raise OutputError(_describe(exc, t.parent)) from None
                temps.append(tmp)
        yield list(temps)
        try:
            # a signal during the commit is delivered after it: the exception it raises
            # says so (``committed``), as the outputs are then in place
            with _signals_held():
                commit(list(zip(temps, targets, strict=True)))
        except OSError as exc:
            raise OutputError(f"could not put the outputs in place: {exc}") from None
        except KeyboardInterrupt as exc:
            exc.committed = True
            raise
    finally:
        with _signals_held():
            for tmp in temps:
                with contextlib.suppress(OSError):
                    tmp.unlink()
            for d in reversed(made):
                with contextlib.suppress(OSError):
                    d.rmdir()  # only when empty: after a commit the outputs are in it


__all__ = [
    "Interrupted", "staging_path", "check_outputs", "writer_is_dead", "signals_raise",
    "recover_folder", "commit", "staged", "fsync_file", "fsync_dir",
]
