"""The right answer of a simulated antenna experiment: the true B-minus-A of every pair.

:class:`Truth` holds one row per pair in which at least one antenna was heard, with the true
gain difference of the two antennas towards that far station [dB] (see
:mod:`spotkit.sim.simulate` for how each design forms its pairs). It summarises itself
(:attr:`Truth.overall`; :meth:`Truth.cells` by band x distance [x bearing sector]) and
travels as compact JSON beside the simulated spots (:meth:`Truth.to_json`,
:meth:`Truth.from_json`).

Known error: the JSON keeps distance, bearing, elevation and the difference to 4 decimals
(1e-4 km, deg, dB) and slots to the whole minute; everything else round-trips exactly.
"""
from __future__ import annotations

import gzip
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.bands import sort_bands
from spotkit.errors import InputError

#: Default distance cells of :meth:`Truth.cells` [km].
DEFAULT_DISTANCE_EDGES = (0.0, 1000.0, 3000.0, 6000.0, 20000.0)

TRUTH_COLUMNS = [C.BAND, C.SLOT, C.TX_CALL, C.RX_CALL, C.DISTANCE, C.BEARING, C.ELEVATION,
                 C.B_MINUS_A, C.HEARD_A, C.HEARD_B]


@dataclass
class Truth:
    """The true B-minus-A difference of every simulated pair.

    Attributes
    ----------
    pairs : pandas.DataFrame
        One row per pair in which at least one antenna was heard: ``C.BAND``, ``C.SLOT``
        (A's slot), ``C.TX_CALL``, ``C.RX_CALL``, ``C.DISTANCE`` [km], ``C.BEARING`` (from
        the home station towards the far station) [deg], ``C.ELEVATION`` (hop geometry)
        [deg], ``C.B_MINUS_A`` (true gain difference) [dB], ``C.HEARD_A``, ``C.HEARD_B``.
    design, a, b : str
        What was simulated.
    """

    pairs: pd.DataFrame
    design: str = ""
    a: str = ""
    b: str = ""

    @property
    def overall(self) -> dict:
        """Mean true B-minus-A [dB] over all pairs, with pair counts."""
        p = self.pairs
        ha, hb = p[C.HEARD_A].to_numpy(bool), p[C.HEARD_B].to_numpy(bool)
        return {C.B_MINUS_A: float(p[C.B_MINUS_A].mean()) if len(p) else math.nan,
                C.PAIRS: int(len(p)), C.BOTH: int((ha & hb).sum()),
                C.ONLY_A: int((ha & ~hb).sum()), C.ONLY_B: int((~ha & hb).sum())}

    def cells(self, distance_edges=DEFAULT_DISTANCE_EDGES, bearing_width_deg: float | None = None,
              by_band: bool = True) -> pd.DataFrame:
        """Mean true B-minus-A by band x distance [x bearing sector].

        Parameters
        ----------
        distance_edges : sequence of float
            Distance cell edges [km]; cells are [lo, hi).
        bearing_width_deg : float, optional
            Width of bearing sectors [deg] starting at 0 (sectors [lo, hi)); None: no split.
        by_band : bool
            Split by band.

        Returns
        -------
        pandas.DataFrame
            ``C.BAND`` (if by_band), ``C.DISTANCE_MIN``, ``C.DISTANCE_MAX`` [km],
            [``C.BEARING_MIN``, ``C.BEARING_MAX`` [deg]], ``C.B_MINUS_A`` [dB] (mean true
            difference over pairs where at least one antenna was heard) and ``C.PAIRS``;
            empty cells are left out.
        """
        p = self.pairs
        edges = np.asarray(distance_edges, dtype=float)
        di = np.searchsorted(edges, p[C.DISTANCE].to_numpy(float), side="right") - 1
        keep = (di >= 0) & (di < len(edges) - 1)
        df = pd.DataFrame({C.DISTANCE_MIN: edges[np.clip(di, 0, len(edges) - 2)],
                           C.DISTANCE_MAX: edges[np.clip(di + 1, 1, len(edges) - 1)],
                           C.B_MINUS_A: p[C.B_MINUS_A].to_numpy(float)})
        keys = [C.DISTANCE_MIN, C.DISTANCE_MAX]
        if bearing_width_deg is not None:
            w = float(bearing_width_deg)
            lo = np.floor(np.mod(p[C.BEARING].to_numpy(float), 360.0) / w) * w
            df[C.BEARING_MIN], df[C.BEARING_MAX] = lo, np.minimum(lo + w, 360.0)
            keys += [C.BEARING_MIN, C.BEARING_MAX]
        if by_band:
            df.insert(0, C.BAND, p[C.BAND].astype(str).to_numpy())
            keys = [C.BAND] + keys
        df = df[keep]
        out = df.groupby(keys, sort=True)[C.B_MINUS_A].agg(["mean", "size"]).reset_index()
        out = out.rename(columns={"mean": C.B_MINUS_A, "size": C.PAIRS})
        out[C.PAIRS] = out[C.PAIRS].astype("int64")
        if by_band:
            order = {b: i for i, b in enumerate(sort_bands(out[C.BAND]))}
            out = out.sort_values([C.BAND] + keys[1:], key=lambda s: s.map(order)
                                  if s.name == C.BAND else s, kind="stable")
        return out.reset_index(drop=True)

    def to_frame(self) -> pd.DataFrame:
        """The pairs table."""
        return self.pairs.copy()

    def __str__(self) -> str:
        o = self.overall
        return (f"Truth({self.design}, A={self.a}, B={self.b}: true B-A "
                f"{o[C.B_MINUS_A]:+.2f} dB over {o[C.PAIRS]:,} pairs)")

    def to_json(self, path=None, include_pairs: bool = True) -> str:
        """Serialise to JSON (``path`` ending in .gz is gzip-compressed); returns the text.

        The document has ``design``, ``a``, ``b``, ``overall``, ``cells`` (by band and the
        default distance cells) and, with ``include_pairs``, ``pairs`` in a compact form:
        ``paths`` (columns band, tx_call, rx_call, distance_km, bearing_deg,
        elevation_deg, b_minus_a_db - one entry per distinct far station and band, since
        the true difference depends only on the path), and per pair ``path`` (index into
        ``paths``), ``slot_min`` (minutes after ``start``, UTC) and ``heard`` (1: A only,
        2: B only, 3: both).
        """
        overall = {k: (None if isinstance(v, float) and math.isnan(v) else v)
                   for k, v in self.overall.items()}
        doc = {"design": self.design, "a": self.a, "b": self.b, "overall": overall,
               "distance_edges_km": list(DEFAULT_DISTANCE_EDGES),
               "cells": json.loads(self.cells().to_json(orient="records"))}
        if include_pairs:
            p = self.pairs
            keys = [C.BAND, C.TX_CALL, C.RX_CALL]
            cols = keys + [C.DISTANCE, C.BEARING, C.ELEVATION, C.B_MINUS_A]
            flat = p[cols].astype({k: str for k in keys})
            codes, uniq = pd.factorize(pd.MultiIndex.from_frame(flat[keys]))
            first = np.unique(codes, return_index=True)[1]
            paths = flat.iloc[first].reset_index(drop=True)
            ns = pd.DatetimeIndex(p[C.SLOT]).as_unit("ns").asi8
            t0 = int(ns.min()) if len(ns) else 0
            doc["pairs"] = {
                "start": pd.Timestamp(t0, tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ"),
                "paths": {c: (paths[c].tolist() if c in keys else
                              np.round(paths[c].to_numpy(float), 4).tolist()) for c in cols},
                "path": codes.tolist(),
                "slot_min": ((ns - t0) // (60 * 10**9)).tolist(),
                "heard": (p[C.HEARD_A].to_numpy(bool).astype(int)
                          + 2 * p[C.HEARD_B].to_numpy(bool).astype(int)).tolist(),
            }
        text = json.dumps(doc, separators=(",", ":"), allow_nan=False)
        if path is not None:
            path = Path(path)
            if path.suffix == ".gz":
                with gzip.open(path, "wt", encoding="utf-8") as fh:
                    fh.write(text)
            else:
                path.write_text(text, encoding="utf-8")
        return text

    @classmethod
    def from_json(cls, source) -> Truth:
        """Read what :meth:`to_json` wrote: JSON text, or a path (.json or .json.gz)."""
        name = "truth JSON"
        if isinstance(source, (str, Path)) and not str(source).lstrip().startswith("{"):
            path = Path(source)
            name = str(path)
            opener = gzip.open if path.suffix == ".gz" else open
            with opener(path, "rt", encoding="utf-8") as fh:
                doc = json.load(fh)
        else:
            doc = json.loads(source)
        pairs = doc.get("pairs")
        if pairs is None:
            raise InputError(f"{name}: written without its pairs (write it with "
                             "Truth.to_json(include_pairs=True))")
        paths = pd.DataFrame(pairs["paths"])
        idx = np.asarray(pairs["path"], dtype=np.int64)
        df = paths.iloc[idx].reset_index(drop=True) if len(paths) else pd.DataFrame(
            {c: pd.Series(dtype=float) for c in pairs["paths"]})
        t0 = pd.Timestamp(pairs["start"])
        df[C.SLOT] = (t0 + pd.to_timedelta(np.asarray(pairs["slot_min"], dtype=np.int64),
                                           unit="min")).astype(C.UTC_DTYPE) if len(df) else \
            pd.Series(dtype=C.UTC_DTYPE)
        heard = np.asarray(pairs["heard"], dtype=np.int64)
        df[C.HEARD_A] = (heard & 1).astype(bool)
        df[C.HEARD_B] = (heard & 2).astype(bool)
        for c in (C.DISTANCE, C.BEARING, C.ELEVATION, C.B_MINUS_A):
            df[c] = df[c].astype(float)
        for c in (C.BAND, C.TX_CALL, C.RX_CALL):
            df[c] = df[c].astype(str).astype("category")
        return cls(df[TRUTH_COLUMNS], doc.get("design", ""), doc.get("a", ""),
                   doc.get("b", ""))


def truths_to_json(truths: dict, path=None, **extra) -> str:
    """Several antennas' truths in one JSON document; returns the text.

    Parameters
    ----------
    truths : dict
        ``(x, y)`` -> :class:`Truth` of y minus x (e.g. :attr:`Simulation.truths
        <spotkit.sim.simulate.Simulation>`).
    path : str or Path, optional
        Where to write it.
    **extra
        Further JSON-friendly entries of the document (calls, antennas, parameters, ...).

    Returns
    -------
    str
        ``{"contrasts": {"y minus x": <Truth.to_json document>, ...}, **extra}``, keys
        sorted, compact, one newline at the end.
    """
    doc = dict(extra)
    doc["contrasts"] = {f"{y} minus {x}": json.loads(t.to_json())
                        for (x, y), t in truths.items()}
    text = json.dumps(doc, separators=(",", ":"), sort_keys=True, allow_nan=False) + "\n"
    if path is not None:
        Path(path).write_text(text, encoding="utf-8")
    return text


def truths_from_json(source) -> dict:
    """Read what :func:`truths_to_json` wrote: ``(x, y)`` -> :class:`Truth` of y minus x.

    Parameters
    ----------
    source : str or Path
        JSON text or a path.

    Returns
    -------
    dict
    """
    if isinstance(source, (str, Path)) and not str(source).lstrip().startswith("{"):
        path = Path(source)
        try:
            doc = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise InputError(f"{path}: not a truth file of several antennas ({exc})") from None
    else:
        doc = json.loads(source)
    if "contrasts" not in doc:
        raise InputError("truth JSON of several antennas: no 'contrasts' entry")
    out = {}
    for part in doc["contrasts"].values():
        t = Truth.from_json(json.dumps(part))
        out[(t.a, t.b)] = t
    return out


__all__ = ["DEFAULT_DISTANCE_EDGES", "TRUTH_COLUMNS", "Truth", "truths_to_json",
           "truths_from_json"]
