"""Exact-duplicate reports across chunks and files, from 64-bit hashes of the report key.

Model
-----
Two reports are duplicates when they are equal on :data:`spotkit.columns.REPORT_KEY`
(slot, both calls and locators, frequency, SNR, power); the first one read is kept. Each
row's key is reduced to one 64-bit hash. The key fields arrive dictionary-encoded (a code
per row and a table of distinct values per chunk), so each distinct value is hashed once
(text: pandas' SipHash-based :func:`pandas.util.hash_array`; numbers: the SplitMix64
finaliser [1]_ of their bits, with -0.0 taken as 0.0) and the row hash is a
multiply-add chain of the per-field hashes, finalised by SplitMix64 again.

The hashes seen so far are kept in sorted runs (one per chunk, merged when the runs become
many, so a run is searched O(log n) times at most) behind a byte map indexed by the top
bits of the hash with load at most 1/8: a new hash whose byte is unmarked is certainly
new, so only about one hash in eight (fewer while the set is small) is looked up in the
runs. Memory: 8 bytes per distinct report plus the byte map (at most 16 bytes per distinct
report).

To trace each duplicate to the report it repeats (:meth:`SeenKeys.duplicates_of`), the set
also keeps, beside each sorted run, where each hash was first read (an int64 label per
distinct report, e.g. file number and row): 8 more bytes per distinct report, and the
sorts become argsorts (a counting sort on the top 16 bits, then a stable sort of the
nearly sorted rest, about as fast as :func:`sort_hashes`).

Known error: two different reports are taken as duplicates when their hashes collide,
with probability about ``n**2 / 2**65`` for ``n`` distinct reports (3e-6 for 10 million).

References
----------
.. [1] S. Vigna, "Further scramblings of Marsaglia's xorshift generators", J. Comput. Appl.
   Math. 315:175-181, 2017 (the SplitMix64 finaliser constants). doi:10.1016/j.cam.2016.11.006
   (citation from memory)
"""
from __future__ import annotations

from itertools import pairwise

import numpy as np
import pandas as pd

from spotkit.errors import InputError, UsageError

_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
_P = np.uint64(0x9E3779B97F4A7C15)  # odd multiplier of the chain (2**64 / golden ratio)
_S30, _S27, _S31 = np.uint64(30), np.uint64(27), np.uint64(31)


def _mix(x: np.ndarray) -> np.ndarray:
    """SplitMix64 finaliser, in place on a uint64 array (returned)."""
    with np.errstate(over="ignore"):
        x ^= x >> _S30
        x *= _M1
        x ^= x >> _S27
        x *= _M2
        x ^= x >> _S31
    return x


def hash_values(values) -> np.ndarray:
    """64-bit hash of each value: text (or other objects) by pandas' hash, numbers by their
    bits (floats as float64, -0.0 as 0.0; integers and times as int64)."""
    a = np.asarray(values)
    if a.dtype.kind == "f":
        return _mix((a.astype(np.float64) + 0.0).view(np.uint64))
    if a.dtype.kind in "iubmM":
        return _mix(a.astype(np.int64).view(np.uint64).copy())
    return pd.util.hash_array(np.asarray(a, dtype=object))


def report_hashes(parts) -> np.ndarray:
    """Row hashes from dictionary-encoded key fields.

    Parameters
    ----------
    parts : sequence of (codes, table)
        Per key field: ``codes`` (int array, one per row, indices into ``table``) and
        ``table`` (uint64 hash of each distinct value, :func:`hash_values`); ``codes``
        None: ``table`` holds one hash per row.

    Returns
    -------
    numpy.ndarray of uint64
    """
    h = None
    with np.errstate(over="ignore"):
        for codes, table in parts:
            table = np.asarray(table, dtype=np.uint64)
            part = table.copy() if codes is None else np.take(table, codes)
            if h is None:
                h = part
            else:
                h *= _P
                h += part
    return _mix(h)


def sort_hashes(h: np.ndarray) -> np.ndarray:
    """The hashes ``h`` sorted: a counting sort on the top 16 bits first (hashes are
    uniform, so the buckets are small), then a merge sort finishes the nearly sorted array
    (a third faster than :func:`numpy.sort` for a million hashes)."""
    if h.size < 1 << 16:
        return np.sort(h)
    out = h[np.argsort((h >> np.uint64(48)).astype(np.uint16), kind="stable")]
    out.sort(kind="stable")
    return out


def argsort_hashes(h: np.ndarray) -> np.ndarray:
    """Stable sorting order of the hashes ``h`` (equal hashes keep their order): a
    counting sort on the top 16 bits, then a stable sort finishes the nearly sorted rest."""
    if h.size < 1 << 16:
        return np.argsort(h, kind="stable")
    order = np.argsort((h >> np.uint64(48)).astype(np.uint16), kind="stable")
    return order[np.argsort(h[order], kind="stable")]


class SeenKeys:
    """Set of 64-bit report hashes: sorted runs behind a byte map of the top bits.

    Parameters
    ----------
    track_first : bool
        Also keep where each hash was first read, for :meth:`duplicates_of`.
    """

    #: Smallest byte map [log2 bytes].
    MIN_BITS = 16
    #: Runs kept before the smaller ones are merged.
    MAX_RUNS = 24

    def __init__(self, track_first: bool = False):
        self.runs: list[np.ndarray] = []
        self.firsts: list[np.ndarray] | None = [] if track_first else None
        self.size = 0
        self.bits = self.MIN_BITS
        self.marks = np.zeros(1 << self.bits, dtype=bool)

    def _byte(self, hs: np.ndarray) -> np.ndarray:
        return (hs >> np.uint64(64 - self.bits)).astype(np.intp)

    def contains_sorted(self, hs: np.ndarray) -> np.ndarray:
        """Which of the sorted hashes ``hs`` are in the set."""
        found = np.zeros(hs.size, dtype=bool)
        cand = np.flatnonzero(self.marks[self._byte(hs)])
        if cand.size:
            q = hs[cand]
            hit = np.zeros(q.size, dtype=bool)
            for run in self.runs:
                pos = np.searchsorted(run, q)
                pos[pos == run.size] = 0
                hit |= run[pos] == q
            found[cand] = hit
        return found

    def add_sorted(self, hs: np.ndarray, first: np.ndarray | None = None) -> None:
        """Add sorted, distinct hashes that are not in the set yet (``first``: where each
        was read, when the set tracks it)."""
        if not hs.size:
            return
        self.runs.append(hs)
        if self.firsts is not None:
            self.firsts.append(np.asarray(first, dtype=np.int64))
        self.size += hs.size
        if len(self.runs) > self.MAX_RUNS:  # merge the two smallest neighbours
            k = int(np.argmin([a.size + b.size for a, b in pairwise(self.runs)]))
            merged = np.concatenate(self.runs[k:k + 2])
            if self.firsts is None:
                merged.sort(kind="stable")  # two sorted runs: a merge
            else:
                order = np.argsort(merged, kind="stable")
                merged = merged[order]
                self.firsts[k:k + 2] = [np.concatenate(self.firsts[k:k + 2])[order]]
            self.runs[k:k + 2] = [merged]
        if 8 * self.size > self.marks.size:  # keep the byte map's load under 1/8
            while 8 * self.size > (1 << self.bits):
                self.bits += 1
            self.marks = np.zeros(1 << self.bits, dtype=bool)
            for run in self.runs:
                self.marks[self._byte(run)] = True
        else:
            self.marks[self._byte(hs)] = True

    def first_of(self, q: np.ndarray) -> np.ndarray:
        """Where each of the hashes ``q`` (all in the set) was first read."""
        out = np.full(q.size, -1, dtype=np.int64)
        for run, first in zip(self.runs, self.firsts, strict=True):
            pos = np.searchsorted(run, q)
            pos[pos == run.size] = 0
            hit = run[pos] == q
            out[hit] = first[pos[hit]]
        return out

    def duplicates_of(self, h: np.ndarray, where: np.ndarray
                      ) -> tuple[np.ndarray, np.ndarray]:
        """As :meth:`duplicates`, and where the report each duplicate repeats was read.

        Parameters
        ----------
        h : numpy.ndarray of uint64
            Row hashes, in row order.
        where : numpy.ndarray of int64
            A label per row saying where it was read (e.g. file number and row).

        Returns
        -------
        dup : numpy.ndarray of bool
            Rows that repeat a report read before (in this batch or an earlier one).
        first : numpy.ndarray of int64
            For each row, the label of the first row with its report (its own label when
            it is not a duplicate).

        Examples
        --------
        >>> seen = SeenKeys(track_first=True)
        >>> h = np.array([7, 8, 7], dtype=np.uint64)
        >>> seen.duplicates_of(h, np.array([1, 2, 3]))
        (array([False, False,  True]), array([1, 2, 1]))
        >>> seen.duplicates_of(np.array([8, 9], dtype=np.uint64), np.array([4, 5]))
        (array([ True, False]), array([2, 5]))
        """
        if self.firsts is None:
            raise TypeError("this SeenKeys does not track where reports were first read")
        where = np.asarray(where, dtype=np.int64)
        n = h.size
        if not n:
            return np.zeros(0, dtype=bool), np.zeros(0, dtype=np.int64)
        order = argsort_hashes(h)
        hs = h[order]
        again = np.zeros(n, dtype=bool)  # sorted position repeats the one before it
        np.equal(hs[1:], hs[:-1], out=again[1:])
        found = self.contains_sorted(hs)
        # each position's group start (the first row in row order with its hash: the sort
        # is stable)
        start = np.maximum.accumulate(np.where(again, 0, np.arange(n)))
        first_sorted = where[order][start]
        old = found & ~again  # group starts whose hash was read in an earlier batch
        if old.any():
            first_sorted[old] = self.first_of(hs[old])
            first_sorted = first_sorted[start]
        new = ~again & ~found
        self.add_sorted(hs[new], first_sorted[new])
        dup = np.empty(n, dtype=bool)
        dup[order] = again | found
        first = np.empty(n, dtype=np.int64)
        first[order] = first_sorted
        return dup, first

    def duplicates(self, h: np.ndarray) -> np.ndarray:
        """Which rows (hashes ``h``, in row order) repeat a report seen before, in this
        batch or an earlier one; the new ones are added."""
        if self.firsts is not None:
            return self.duplicates_of(h, np.zeros(h.size, dtype=np.int64))[0]
        n = h.size
        if not n:
            return np.zeros(0, dtype=bool)
        hs = sort_hashes(h)
        again = np.zeros(n, dtype=bool)  # sorted position repeats the one before it
        np.equal(hs[1:], hs[:-1], out=again[1:])
        found = self.contains_sorted(hs)
        self.add_sorted(hs[~again & ~found])
        dup = np.zeros(n, dtype=bool)
        if again.any() or found.any():
            # the few rows whose hash repeats: a repeat within the batch (the row read first
            # is kept) or a hash seen in an earlier batch
            repeated = np.unique(hs[again | found])
            cand = np.flatnonzero(pd.Index(repeated).get_indexer(h) >= 0)
            hc = h[cand]
            dup[cand] = (pd.Series(hc).duplicated().to_numpy()
                         | (pd.Index(np.unique(hs[found])).get_indexer(hc) >= 0))
        return dup


class DayKeys:
    """Report hashes kept per slot day, forgetting the days more than ``window_days``
    before the latest day read: bounded memory for time-ordered input.

    A duplicate shares its slot with the report it repeats, so only recent days need their
    hashes. A report older than the forgotten days cannot be checked; it raises
    :class:`~spotkit.errors.InputError` instead of being let through unchecked.
    """

    _DAY_NS = 86_400 * 10**9

    def __init__(self, window_days: int):
        if window_days < 1:
            raise UsageError(f"dedupe_window_days must be 1 or more, not {window_days!r}")
        self.window = int(window_days)
        self.days: dict[int, SeenKeys] = {}
        self.cutoff: int | None = None  # days before this one are forgotten

    def duplicates(self, h: np.ndarray, slot_ns: np.ndarray, rows: np.ndarray,
                   source: str) -> np.ndarray:
        """Which rows repeat a report seen before (see :meth:`SeenKeys.duplicates`);
        ``slot_ns``: each row's slot [ns since 1970 UTC]; ``rows``: source row numbers (for
        the message)."""
        n = h.size
        if not n:
            return np.zeros(0, dtype=bool)
        day = np.asarray(slot_ns, dtype=np.int64) // self._DAY_NS
        if self.cutoff is not None and (day < self.cutoff).any():
            row = np.asarray(rows)[np.flatnonzero(day < self.cutoff)[0]]
            raise InputError(
                f"{source}, row {row}: a report more than {self.window} day(s) older than "
                "reports already read; ingest under a memory cap finds duplicates only in "
                "time-ordered input - sort the file by time or ingest it without a cap")
        days = np.unique(day)
        if days.size == 1:
            dup = self.days.setdefault(int(days[0]), SeenKeys()).duplicates(h)
        else:
            dup = np.zeros(n, dtype=bool)
            for d in days:
                idx = np.flatnonzero(day == d)
                dup[idx] = self.days.setdefault(int(d), SeenKeys()).duplicates(h[idx])
        cut = int(days[-1]) - self.window
        self.cutoff = cut if self.cutoff is None else max(self.cutoff, cut)
        for d in [d for d in self.days if d < self.cutoff]:
            del self.days[d]
        return dup
