"""Geometry of each distinct (transmitter, receiver) locator pair, solved once and kept.

Model
-----
Each distinct locator gets a number the first time it is seen (one numbering for
transmitter locators, one for receiver locators) and its cell centre is decoded once
(:mod:`spotkit.geo.locator`). Each distinct pair of numbers is solved once by
:func:`spotkit.geo.geodesic.geodesic_inverse` (WGS-84) and its distance and both bearings are kept
in a dense table indexed by ``tx_number * width + rx_number``, so a pair seen in an earlier
chunk is not solved again and looking a row up costs a few array gathers. When the dense
table would exceed :attr:`PathCache.MAX_CELLS` cells, pairs are kept under a 64-bit hash
of the two locator texts instead (sorted arrays; slower). Results equal
:func:`spotkit.geo.geodesic.add_path_columns`.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit.geo.locator import locator_to_latlon

#: Pairs solved in one call; more are split over two threads (PROJ releases the GIL).
SPLIT_PAIRS = 200_000


def _solve(tlat, tlon, rlat, rlon) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Distance [km], bearing and reverse bearing [deg] of each pair."""
    from spotkit.geo.geodesic import geodesic_inverse

    def one(sl):
        dist_m, azi, rev = geodesic_inverse(tlat[sl], tlon[sl], rlat[sl], rlon[sl])
        return (np.asarray(dist_m, dtype=float) / 1000.0, np.asarray(azi, dtype=float),
                np.asarray(rev, dtype=float))

    n = len(tlat)
    if n <= SPLIT_PAIRS:
        return one(slice(None))
    from concurrent.futures import ThreadPoolExecutor

    half = n // 2
    with ThreadPoolExecutor(max_workers=1) as pool:
        first = pool.submit(one, slice(None, half))
        second = one(slice(half, None))
        first = first.result()
    return tuple(np.concatenate([a, b]) for a, b in zip(first, second, strict=True))


def _grown(a: np.ndarray, size: int) -> np.ndarray:
    if size <= a.size:
        return a
    out = np.zeros(max(size, 2 * a.size), dtype=a.dtype)
    out[:a.size] = a
    return out


class PathCache:
    """Pair geometry kept across chunks (see the module docstring)."""

    #: Pairs kept at most in the hashed form (then it starts afresh).
    MAX_PAIRS = 5_000_000
    #: Largest dense pair table [cells of 4 bytes] (128 MB).
    MAX_CELLS = 1 << 25

    def __init__(self):
        self.ids: tuple[dict, dict] = ({}, {})  # locator text -> number, tx and rx
        # the texts of the numbers 0, 1, ... while they were met in category order
        self.known = [np.zeros(0, dtype=object), np.zeros(0, dtype=object)]
        self.lat = [np.zeros(0), np.zeros(0)]
        self.lon = [np.zeros(0), np.zeros(0)]
        self.width = 0  # receiver numbers per row of the dense table
        self.table = np.full(0, -1, dtype=np.int32)  # tx * width + rx -> pair number
        # distance [km], bearing, reverse bearing [deg] per pair number
        self.vals = [np.zeros(0), np.zeros(0), np.zeros(0)]
        self.n_pairs = 0
        self.hashed: _HashedPathCache | None = None

    def _numbers(self, side: int, cats: np.ndarray) -> np.ndarray | None:
        """Number of each distinct locator text (decoding the new ones); None when the
        numbers are the positions in ``cats`` (categories that extend the ones seen so
        far, as an ingest's growing registry of locators gives: no lookup per text)."""
        ids, known = self.ids[side], self.known[side]
        m = known.size
        if cats.size >= m and len(ids) == m and np.array_equal(cats[:m], known):
            new = list(cats[m:])
            same = True
        else:
            new = [c for c in cats if c not in ids]  # cats are distinct
            same = False
        if new:
            first = len(ids)
            for k, c in enumerate(new):
                ids[c] = first + k
            lat, lon = (np.atleast_1d(a) for a in locator_to_latlon(
                np.asarray(new, dtype=object), "coerce"))
            self.lat[side] = np.concatenate([self.lat[side], lat])
            self.lon[side] = np.concatenate([self.lon[side], lon])
            if same:
                self.known[side] = np.concatenate([known, np.asarray(new, dtype=object)])
        if same:
            return None
        return np.fromiter((ids[c] for c in cats), dtype=np.int64, count=len(cats))

    def _ensure_table(self, ntx: int, nrx: int) -> bool:
        """Make room for ``ntx`` x ``nrx`` numbers; False when too big for a dense table."""
        rows = self.table.size // self.width if self.width else 0
        if ntx <= rows and nrx <= self.width:
            return True
        if ntx * nrx > self.MAX_CELLS:
            return False
        shape = (max(ntx, rows * 5 // 4), max(nrx, self.width * 5 // 4))  # room for more
        if shape[0] * shape[1] > self.MAX_CELLS:
            shape = (ntx, nrx)
        grown = np.full(shape, -1, dtype=np.int32)
        if self.width:
            grown[:rows, :self.width] = self.table.reshape(rows, self.width)
        self.table, self.width = grown.reshape(-1), shape[1]
        return True

    def lookup(self, tx: pd.Categorical, rx: pd.Categorical) -> list[np.ndarray]:
        """tx_lat, tx_lon, rx_lat, rx_lon [deg], distance [km], bearing, reverse bearing
        [deg] of each row (locators as categoricals of valid locator texts)."""
        if self.hashed is not None:
            return self.hashed.lookup(tx, rx)
        tx_cats = np.asarray(tx.categories.astype("str"), dtype=object)
        rx_cats = np.asarray(rx.categories.astype("str"), dtype=object)
        tg, rg = (np.asarray(cat.codes, dtype=np.int64) if num is None
                  else np.take(num, np.asarray(cat.codes))
                  for cat, num in ((tx, self._numbers(0, tx_cats)),
                                   (rx, self._numbers(1, rx_cats))))
        if not self._ensure_table(len(self.ids[0]), len(self.ids[1])):
            self.hashed = _HashedPathCache()
            self.table, self.width, self.vals = np.full(0, -1, dtype=np.int32), 0, []
            return self.hashed.lookup(tx, rx)
        cell = tg * self.width + rg
        idx = np.take(self.table, cell)
        miss = np.flatnonzero(idx < 0)
        if miss.size:
            new_cells = pd.unique(cell[miss])
            mt, mr = np.divmod(new_cells, self.width)
            solved = _solve(self.lat[0][mt], self.lon[0][mt], self.lat[1][mr], self.lon[1][mr])
            first, k = self.n_pairs, new_cells.size
            for j in range(3):
                self.vals[j] = _grown(self.vals[j], first + k)
                self.vals[j][first:first + k] = solved[j]
            self.table[new_cells] = np.arange(first, first + k, dtype=np.int32)
            self.n_pairs += k
            idx[miss] = np.take(self.table, cell[miss])
        return [np.take(self.lat[0], tg), np.take(self.lon[0], tg),
                np.take(self.lat[1], rg), np.take(self.lon[1], rg),
                *(np.take(v, idx) for v in self.vals)]


class _HashedPathCache:
    """Pair geometry kept under a 64-bit hash of the two locator texts (sorted arrays);
    used by :class:`PathCache` when its dense table would be too big."""

    MAX_PAIRS = PathCache.MAX_PAIRS

    def __init__(self):
        self.keys = np.zeros(0, dtype=np.uint64)
        self.vals = np.zeros((3, 0))  # distance [km], bearing, reverse bearing [deg]

    def lookup(self, tx: pd.Categorical, rx: pd.Categorical) -> list[np.ndarray]:
        tx_cats = np.asarray(tx.categories.astype("str"), dtype=object)
        rx_cats = np.asarray(rx.categories.astype("str"), dtype=object)
        tx_lat, tx_lon = (np.atleast_1d(a) for a in locator_to_latlon(tx_cats, "coerce"))
        rx_lat, rx_lon = (np.atleast_1d(a) for a in locator_to_latlon(rx_cats, "coerce"))
        tc, rc = np.asarray(tx.codes, dtype=np.int64), np.asarray(rx.codes, dtype=np.int64)
        nrx = rx_cats.size
        pair_codes, uniq = pd.factorize(tc * nrx + rc, sort=False)
        ptx, prx = np.divmod(np.asarray(uniq, dtype=np.int64), nrx)
        with np.errstate(over="ignore"):
            h = (pd.util.hash_array(tx_cats)[ptx] * np.uint64(0x100000001B3)
                 ^ pd.util.hash_array(rx_cats)[prx])
        h_order = np.argsort(h)
        pos = np.empty(h.size, dtype=np.int64)
        pos[h_order] = np.searchsorted(self.keys, h[h_order])  # sorted queries: cache-friendly
        pos[pos == self.keys.size] = 0
        found = self.keys[pos] == h if self.keys.size else np.zeros(h.size, dtype=bool)
        if found.all():
            vals = self.vals[:, pos]
        else:
            miss = ~found
            m_tx, m_rx = ptx[miss], prx[miss]
            new = np.vstack(_solve(tx_lat[m_tx], tx_lon[m_tx], rx_lat[m_rx], rx_lon[m_rx]))
            vals = np.empty((3, h.size))
            vals[:, found] = self.vals[:, pos[found]]
            vals[:, miss] = new
            if self.keys.size + new.shape[1] > self.MAX_PAIRS:
                self.keys, self.vals = self.keys[:0], self.vals[:, :0]
            keys = np.concatenate([self.keys, h[miss]])
            order = np.argsort(keys)
            self.keys = keys[order]
            self.vals = np.ascontiguousarray(np.concatenate([self.vals, new], axis=1)[:, order])
        return [tx_lat[tc], tx_lon[tc], rx_lat[rc], rx_lon[rc],
                *(v[pair_codes] for v in vals)]
