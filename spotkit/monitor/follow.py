"""Spot exports followed as they arrive: new files and files that grow, appended to an archive
once each, with a state file that survives kills.

Each export is known by its path. For a plain text export the state keeps how many bytes of
it are in the archive (whole lines only) and a hash of its first line; when the file grows,
the new lines, with the first line (the headings) in front, are written to a *piece* in
``<folder>/_pieces/`` and appended to the archive through
:func:`spotkit.io.archive.ingest_to_dataset` (its crash-safe commit). A compressed export is
appended whole, once. An export that cannot be read (the ingest refuses it) is set aside
with the reason and is not tried again until it changes; the others go on.

Restarts: before an append the state records the piece as *pending* (its content hash and
the byte range); after the archive's commit it records the new offset. The state is written
through :func:`spotkit.io.atomic.staged`. A kill between the commit and the state write
leaves a pending piece whose hash the archive's manifest holds: the next run finds it there
and moves the offset on instead of appending again, so nothing is counted twice. A kill
before the commit leaves nothing in the archive (its protocol) and the piece is made again.

Known limits: a header-less export that grows gets its first line put in front of each piece
(read as a report, then removed as a duplicate when the archive is read with ``dedupe``);
an export rewritten in place (its first line changed) or one that shrank is set aside rather
than guessed at; only whole lines are read, so a line still being written waits.
"""
from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

from spotkit.errors import InputError, SpotkitError
from spotkit.io.archive import ingest_to_dataset
from spotkit.io.atomic import staged
from spotkit.io.manifest import dataset_manifest, file_hashes

#: the state file in the watch folder
STATE_NAME = "watch_state.json"
#: the archive in the watch folder
ARCHIVE_NAME = "archive"
#: pieces of grown exports, kept only until appended
PIECES_NAME = "_pieces"
#: endings of the files taken from a watched folder
EXPORT_SUFFIXES = (".csv", ".txt", ".tsv", ".gz")
STATE_FORMAT = 1


def empty_state() -> dict:
    """A state with nothing read yet."""
    return {"format": STATE_FORMAT, "files": {}, "set_aside": {}, "pending": None,
            "looks": []}


def read_state(folder) -> dict:
    """The watch state of ``folder`` (an empty one when there is none yet).

    Raises
    ------
    InputError
        The state file is not valid JSON or not a watch state (names the file).
    """
    path = Path(folder) / STATE_NAME
    try:
        state = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        return empty_state()
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: watch state is not valid JSON ({exc})") from None
    if not isinstance(state, dict) or state.get("format") != STATE_FORMAT:
        raise InputError(f"{path}: not a spotkit watch state (format {STATE_FORMAT})")
    for key, value in empty_state().items():
        state.setdefault(key, value)
    return state


def write_state(folder, state: dict) -> None:
    """Write the state atomically (all of it or nothing, :func:`spotkit.io.atomic.staged`)."""
    target = Path(folder) / STATE_NAME
    with staged([target]) as (tmp,):
        tmp.write_text(json.dumps(state, indent=1, sort_keys=True), encoding="utf-8")


def find_exports(sources) -> list[Path]:
    """The export files of ``sources``: files as given, folders searched (not hidden files,
    endings in :data:`EXPORT_SUFFIXES`), sorted by name.

    Raises
    ------
    InputError
        A source that is neither a file nor a folder.
    """
    out: list[Path] = []
    for s in sources:
        p = Path(s)
        if p.is_file():
            out.append(p)
        elif p.is_dir():
            out += sorted(q for q in p.rglob("*") if q.is_file() and q.suffix.lower()
                          in EXPORT_SUFFIXES and not any(part.startswith((".", "_"))
                                                         for part in q.relative_to(p).parts))
        else:
            raise InputError(f"{p}: no such file or folder")
    seen: set[Path] = set()
    unique = []
    for p in out:
        r = p.resolve()
        if r not in seen:
            seen.add(r)
            unique.append(p)
    return unique


def _first_line(path: Path) -> bytes:
    with open(path, "rb") as fh:
        return fh.readline(1 << 16)


def _is_gzip(path: Path) -> bool:
    with open(path, "rb") as fh:
        return fh.read(2) == b"\x1f\x8b"


def _sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _in_manifest(root: Path, content_sha: str) -> bool:
    return any(content_sha in (b.get("sha256"), b.get("content_sha256"))
               for b in dataset_manifest(root)["batches"])


def settle_pending(folder, state: dict) -> dict:
    """Finish what a killed run left: a pending piece whose hash the archive holds moves its
    export's offset on; one it does not hold is forgotten (it will be made again)."""
    pending = state.get("pending")
    if pending:
        if _in_manifest(Path(folder) / ARCHIVE_NAME, pending["content_sha256"]):
            state["files"][pending["path"]] = pending["entry"]
        state["pending"] = None
        piece = pending.get("piece")
        if piece:
            Path(piece).unlink(missing_ok=True)
        write_state(folder, state)
    return state


def _set_aside(state: dict, key: str, stat, reason: str) -> tuple[str, str]:
    state["set_aside"][key] = {"reason": reason, "size": stat.st_size,
                               "mtime_ns": stat.st_mtime_ns}
    return key, reason


def _next_piece(p: Path, key: str, entry: dict | None, stat, folder: Path, state: dict):
    """What is new in export ``p``: ``(piece path or None, new entry)``, ``None`` when
    nothing is, or ``(None, reason)`` when the export is to be set aside."""
    size = stat.st_size
    if _is_gzip(p):
        if entry is None:
            return p, {"offset": size, "size": size, "head": None, "gzip": True}
        if size != entry["size"]:
            return None, ("a compressed export changed after it was read; save the new "
                          "reports as a new file")
        return None
    head = _first_line(p)
    offset = entry["offset"] if entry else 0
    if entry is not None and _sha(head) != entry["head"]:
        return None, "its first line changed since it was read (rewritten in place?)"
    if size < offset:
        return None, f"it shrank from {offset:,} to {size:,} bytes since it was read"
    if size == offset:
        return None
    with open(p, "rb") as fh:
        fh.seek(offset)
        new = fh.read(size - offset)
    cut = new.rfind(b"\n")
    if cut < 0:
        return None  # a line still being written
    new = new[: cut + 1]
    end = offset + len(new)
    entry = {"offset": end, "size": size, "head": _sha(head), "gzip": False}
    if offset == 0 and end == size:
        return p, entry
    data = new if offset == 0 else head + new
    pieces = folder / PIECES_NAME
    pieces.mkdir(parents=True, exist_ok=True)
    piece = pieces / f"{p.stem}.{offset}-{end}{p.suffix or '.csv'}"
    with staged([piece]) as (tmp,):
        tmp.write_bytes(data)
    return piece, entry


def ingest_new(sources, folder, *, memory_mb: float | None = None,
               **read_kw) -> tuple[list[tuple[str, int]], list[tuple[str, str]]]:
    """Append what is new in ``sources`` to ``<folder>/archive``; update the state.

    Parameters
    ----------
    sources : sequence of str or path-like
        Export files and folders.
    folder : str or path-like
        The watch folder (archive, state, pieces).
    memory_mb : float, optional
        Memory cap of each append [MiB] (:func:`spotkit.io.archive.ingest_to_dataset`).
    **read_kw
        Reader keywords (mapping, units, delimiter, ...).

    Returns
    -------
    (list of (str, int), list of (str, str))
        Exports appended now with the rows each gave, and exports set aside now with the
        reason.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    root = folder / ARCHIVE_NAME
    state = settle_pending(folder, read_state(folder))
    appended: list[tuple[str, int]] = []
    set_aside: list[tuple[str, str]] = []
    for p in find_exports(sources):
        key = str(p.resolve())
        if key.startswith(str(folder.resolve()) + os.sep):
            continue  # the watch's own files
        stat = p.stat()
        old = state["set_aside"].get(key)
        if old and old["size"] == stat.st_size and old["mtime_ns"] == stat.st_mtime_ns:
            continue  # set aside and unchanged
        entry = state["files"].get(key)
        nxt = _next_piece(p, key, entry, stat, folder, state)
        if nxt is None:
            continue
        piece, new_entry = nxt
        if piece is None:
            set_aside.append(_set_aside(state, key, stat, new_entry))
            write_state(folder, state)
            continue
        content = file_hashes(piece)[1]
        state["pending"] = {"path": key, "entry": new_entry, "content_sha256": content,
                            "piece": str(piece) if piece != p else None}
        write_state(folder, state)
        try:
            summary = ingest_to_dataset([piece], root, memory_mb=memory_mb, **read_kw)
        except (SpotkitError, UnicodeError) as exc:
            state["pending"] = None
            if piece != p:
                piece.unlink(missing_ok=True)
            reason = " ".join(x.strip() for x in str(exc).splitlines() if x.strip())
            for name in (str(piece), str(p)):
                if reason.startswith(name + ": "):
                    reason = reason[len(name) + 2:]
            set_aside.append(_set_aside(state, key, stat, reason))
            write_state(folder, state)
            continue
        state["files"][key] = new_entry
        state["set_aside"].pop(key, None)
        state["pending"] = None
        write_state(folder, state)
        if piece != p:
            piece.unlink(missing_ok=True)
        appended.append((str(p), int(summary.accepted)))
    return appended, set_aside


__all__ = ["STATE_NAME", "ARCHIVE_NAME", "PIECES_NAME", "EXPORT_SUFFIXES", "empty_state",
           "read_state", "write_state", "find_exports", "settle_pending", "ingest_new"]
