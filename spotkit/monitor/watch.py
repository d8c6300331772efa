"""One update of a watched experiment: append what is new, estimate, add the sequence and the
verdicts, write the state and the page.

The watch folder holds ``archive/`` (the spot archive, :mod:`spotkit.io.archive`),
``watch_state.json`` (what has been read, what was set aside, the estimate of every look;
:mod:`spotkit.monitor.follow`) and ``watch.html`` (the page, :mod:`spotkit.monitor.page`).
An update estimates only when the archive holds more rows than at the last look, so running
:func:`watch_once` again after a restart (or a kill) continues the same history and gives
the same answer as a run that was never stopped: the estimate depends only on the archive
(read with duplicates removed) and the bootstrap seed. Two watches on one folder take turns:
an update holds the folder's lock (``_watch.lock``, through the ``filelock`` package; the
kernel releases it when the process dies).
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from spotkit import columns as C
from spotkit.errors import SpotkitError, UsageError
from spotkit.io.store import read_dataset
from spotkit.monitor.follow import ARCHIVE_NAME, ingest_new, read_state, write_state
from spotkit.monitor.page import summary_lines, terminal_view, write_page
from spotkit.monitor.track import (
    HISTORY_COLUMNS,
    MIN_CLUSTERS,
    add_sequence,
    estimate_now,
)

#: the page in the watch folder
PAGE_NAME = "watch.html"
#: the lock an update holds in the watch folder
WATCH_LOCK_NAME = "_watch.lock"
#: how long an update waits for another watch's update of the same folder [s]
WATCH_LOCK_TIMEOUT_S = 600.0
#: estimate columns kept in the state for each look
LOOK_COLUMNS = [C.HOURS, C.BAND, C.ROWS, C.PAIRS, C.CLUSTERS, C.EFFECTIVE_CLUSTERS,
                C.B_MINUS_A, C.SE, C.SYSTEMATIC, C.CI_LOW, C.CI_HIGH]


@dataclass
class WatchUpdate:
    """What one update did and what it shows.

    Attributes
    ----------
    appended : list of (str, int)
        Exports appended now, with their accepted rows.
    set_aside : list of (str, str)
        Exports set aside now, with the reason.
    history : pandas.DataFrame
        Every look so far (:data:`spotkit.monitor.track.HISTORY_COLUMNS`).
    new_look : bool
        This update added a look (the archive grew).
    problem : str or None
        Why there is no estimate (no data of A and B yet, ...).
    page : pathlib.Path
        The page written.
    """

    appended: list = field(default_factory=list)
    set_aside: list = field(default_factory=list)
    history: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(
        columns=HISTORY_COLUMNS))
    new_look: bool = False
    problem: str | None = None
    page: Path | None = None

    @property
    def can_stop(self) -> bool:
        """Every band's latest verdict says stop."""
        if not len(self.history):
            return False
        return bool(self.history.groupby(C.BAND, sort=False)[C.CAN_STOP].last().all())

    def to_frame(self) -> pd.DataFrame:
        """The history."""
        return self.history

    def text(self, *, chart: bool = False) -> str:
        """What ``spotkit watch`` prints after the update."""
        lines = [f"appended {src}: {n:,} spots" for src, n in self.appended]
        lines += [f"set aside {src}: {why}" for src, why in self.set_aside]
        if self.problem:
            lines.append(f"no estimate yet: {self.problem}")
        if len(self.history):
            lines.append(terminal_view(self.history) if chart else
                         "\n".join(summary_lines(self.history)))
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.text()


def watch_once(sources, folder, design, a: str, b: str | None = None, *,
               target_width_db: float | None = None, margin_db: float = 0.5,
               max_hours: float | None = None, confidence: float = 0.95, n_boot: int = 200,
               seed: int = 0, min_clusters: int = MIN_CLUSTERS, refresh_s: int = 600,
               memory_mb: float | None = None, read_kw: dict | None = None,
               **compare_kw) -> WatchUpdate:
    """Append what is new in ``sources`` and show where the comparison stands.

    Parameters
    ----------
    sources : sequence of str or path-like
        Export files and folders to follow.
    folder : str or path-like
        The watch folder (created if missing).
    design, a, b, compare_kw
        As :func:`spotkit.compare.estimate.compare_antennas`.
    target_width_db, margin_db, max_hours, confidence, min_clusters
        The stop rules (:func:`spotkit.monitor.track.add_sequence`).
    n_boot, seed
        Bootstrap of each look.
    refresh_s : int
        The page reloads itself this often [s].
    memory_mb : float, optional
        Memory cap of the appends [MiB].
    read_kw : dict, optional
        Reader keywords (mapping, units, delimiter...).

    Returns
    -------
    WatchUpdate
    """
    from filelock import FileLock, Timeout

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    try:
        with FileLock(str(folder / WATCH_LOCK_NAME), timeout=WATCH_LOCK_TIMEOUT_S):
            return _update(sources, folder, design, a, b, target_width_db=target_width_db,
                           margin_db=margin_db, max_hours=max_hours, confidence=confidence,
                           n_boot=n_boot, seed=seed, min_clusters=min_clusters,
                           refresh_s=refresh_s, memory_mb=memory_mb, read_kw=read_kw,
                           **compare_kw)
    except Timeout:
        raise UsageError(f"{folder}: another watch has been updating this folder for "
                         f"{WATCH_LOCK_TIMEOUT_S:g} s; is it stuck?") from None


def _update(sources, folder: Path, design, a, b, *, target_width_db, margin_db, max_hours,
            confidence, n_boot, seed, min_clusters, refresh_s, memory_mb, read_kw,
            **compare_kw) -> WatchUpdate:
    appended, set_aside = ingest_new(sources, folder, memory_mb=memory_mb, **(read_kw or {}))
    state = read_state(folder)
    looks = state["looks"]
    root = folder / ARCHIVE_NAME
    problem = None
    new_look = False
    spots = read_dataset(root, dedupe=True) if root.exists() else None
    n_rows = 0 if spots is None else len(spots)
    last_rows = looks[-1][C.ROWS] if looks else 0
    if n_rows == 0:
        problem = "no spots in the archive yet"
    elif n_rows != last_rows:
        try:
            rows = estimate_now(spots, design, a, b, n_boot=n_boot, seed=seed,
                                confidence=confidence, **compare_kw)
        except SpotkitError as exc:
            problem = str(exc)
        else:
            if len(rows):
                looks += rows[LOOK_COLUMNS].to_dict("records")
                new_look = True
            else:
                problem = "no pairs of A and B yet"
            state["looks"] = looks
            write_state(folder, state)
    history = (add_sequence(pd.DataFrame(looks), confidence=confidence, margin_db=margin_db,
                            target_width_db=target_width_db, max_hours=max_hours,
                            min_clusters=min_clusters)
               if looks else pd.DataFrame(columns=HISTORY_COLUMNS))
    notes = [f"{p}: {v['reason']}" for p, v in sorted(state["set_aside"].items())]
    page = folder / PAGE_NAME
    title = f"spotkit watch: {a.upper()} (A) against {(b or a).upper()} (B), {design} design"
    write_page(history, page, title=title, refresh_s=refresh_s, margin_db=margin_db,
               notes=notes + ([f"no estimate yet: {problem}"] if problem else []))
    return WatchUpdate(appended=appended, set_aside=set_aside, history=history,
                       new_look=new_look, problem=problem, page=page)


def watch(sources, folder, design, a: str, b: str | None = None, *, every_min: float = 10.0,
          updates: int | None = None, until_stop: bool = False, on_update=print,
          **kw) -> WatchUpdate:
    """Call :func:`watch_once` every ``every_min`` minutes; ``on_update`` gets each
    :class:`WatchUpdate`. Stops after ``updates`` updates, or when every band may stop and
    ``until_stop`` is set; otherwise runs until interrupted.
    """
    n = 0
    while True:
        up = watch_once(sources, folder, design, a, b, refresh_s=int(every_min * 60), **kw)
        on_update(up)
        n += 1
        if (updates is not None and n >= updates) or (until_stop and up.can_stop):
            return up
        time.sleep(every_min * 60)


__all__ = ["PAGE_NAME", "WATCH_LOCK_NAME", "WATCH_LOCK_TIMEOUT_S", "LOOK_COLUMNS",
           "WatchUpdate", "watch_once", "watch"]
