"""What each antenna reached, A beside B, over the same slots.

Everything here is computed from a pairs table (:func:`spotkit.compare.pairing.pair_spots`), so A
and B are counted over the same period and the same slots: a pair is one far station in
one slot (alternating: one matched pair of slots) in which at least one antenna was heard
while both were on the air.

* Far stations reached: distinct far stations (receivers in the transmit designs,
  transmitters in the receive design) that heard / were heard by each antenna at least
  once; ``stations_only``: those reached by one antenna and never by the other.
* Distance: median, 90th percentile and maximum over the *distinct far stations reached*
  (each station counted once, at its path distance), not over reports.
* Bearing: distinct far stations reached per bearing sector (at the station under test).
* Probability of being heard, P(heard): among the pairs of a distance bin - the slots in
  which the path to that far station was open to at least one antenna - the fraction in
  which each antenna was heard, with a Wilson score interval. It is a conditional
  probability: slots in which neither antenna got through are not in the data and do not
  count, so P(heard) of the two antennas sums to at least 1 and is not the probability of
  a report per slot on the air.

Known error: pairs of one far station are correlated (the Wilson interval treats them as
independent, so it is too narrow when a few stations dominate a bin); far stations with
4-character locators are placed at the cell centre (up to about 100 km off).

References
----------
.. [1] E. B. Wilson, "Probable inference, the law of succession, and statistical
   inference", JASA 22(158):209-212, 1927. doi:10.1080/01621459.1927.10502953
"""
from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.compare.grouping import DEFAULT_DISTANCE_EDGES, add_group_keys
from spotkit.compare.pairing import Design, pair_spots
from spotkit.errors import UsageError
from spotkit.stats.paired import wilson_interval

_ANTENNAS = (("A", C.HEARD_A), ("B", C.HEARD_B))


def _check_pairs(pairs: pd.DataFrame) -> None:
    if C.KIND in pairs.columns:
        raise UsageError("reach compares antennas on the air in the same slots; the "
                         "before-after design has no such pairs")
    missing = [c for c in (C.HEARD_A, C.HEARD_B, C.FAR_CALL, C.DISTANCE, C.BEARING, C.BAND)
               if c not in pairs.columns]
    if missing:
        raise UsageError("pairs lack column(s) " + ", ".join(missing)
                         + " - make them with spotkit.compare.pairing.pair_spots")


def _keys(by_band: bool) -> list[str]:
    return [C.BAND] if by_band else []


def _stations(pairs: pd.DataFrame, keys: list[str]) -> pd.DataFrame:
    """One row per (keys, far station): its distance and whether A / B ever reached it."""
    st = pairs.groupby(keys + [C.FAR_CALL], observed=True, sort=True).agg(
        **{C.DISTANCE: (C.DISTANCE, "first"), C.BEARING: (C.BEARING, "first"),
           C.HEARD_A: (C.HEARD_A, "any"), C.HEARD_B: (C.HEARD_B, "any")}).reset_index()
    return st


def reach_summary(pairs: pd.DataFrame, *, by_band: bool = True,
                  confidence: float = 0.95) -> pd.DataFrame:
    """Far stations reached, distances and P(heard) of A and of B.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (not the before-after design).
    by_band : bool
        One block of rows per band.
    confidence : float
        Coverage of the Wilson intervals.

    Returns
    -------
    pandas.DataFrame
        Rows per [band and] ``C.ANTENNA`` ("A", "B"): ``C.STATIONS``, ``C.STATIONS_ONLY``,
        ``C.PAIRS``, ``C.HEARD``, ``C.P_HEARD``, ``C.P_HEARD_LOW``, ``C.P_HEARD_HIGH``,
        ``C.DISTANCE_MEDIAN``, ``C.DISTANCE_P90``, ``C.DISTANCE_FARTHEST`` [km].

    References
    ----------
    .. [1] E. B. Wilson, JASA 22(158):209-212, 1927.
    """
    _check_pairs(pairs)
    keys = _keys(by_band)
    st = _stations(pairs, keys)
    rows = []
    groups = st.groupby(keys, observed=True, sort=True) if keys else [((), st)]
    pgroups = dict(iter(pairs.groupby(keys, observed=True, sort=True))) if keys else {(): pairs}
    for key, s in groups:
        p = pgroups[key]
        key = key if isinstance(key, tuple) else (key,)
        n = len(p)
        for name, col in _ANTENNAS:
            other = C.HEARD_B if col == C.HEARD_A else C.HEARD_A
            reached = s[s[col]]
            d = reached[C.DISTANCE].to_numpy(dtype=float)
            heard = int(p[col].sum())
            lo, hi = wilson_interval(heard, n, confidence)
            rows.append({**dict(zip(keys, key, strict=True)), C.ANTENNA: name,
                         C.STATIONS: int(len(reached)),
                         C.STATIONS_ONLY: int((s[col] & ~s[other]).sum()),
                         C.PAIRS: n, C.HEARD: heard, C.P_HEARD: heard / n if n else np.nan,
                         C.P_HEARD_LOW: lo, C.P_HEARD_HIGH: hi,
                         C.DISTANCE_MEDIAN: float(np.median(d)) if d.size else np.nan,
                         C.DISTANCE_P90: float(np.quantile(d, 0.9)) if d.size else np.nan,
                         C.DISTANCE_FARTHEST: float(d.max()) if d.size else np.nan})
    return pd.DataFrame(rows)


def reach_by_bearing(pairs: pd.DataFrame, *, bearing_width_deg: float = 45.0,
                     by_band: bool = True) -> pd.DataFrame:
    """Distinct far stations reached by A and by B per bearing sector.

    Returns
    -------
    pandas.DataFrame
        Rows per [band,] sector (``C.BEARING_MIN``, ``C.BEARING_MAX`` [deg], at the station
        under test) and ``C.ANTENNA``: ``C.STATIONS``, ``C.STATIONS_ONLY``.
    """
    _check_pairs(pairs)
    keys = _keys(by_band)
    st = add_group_keys(_stations(pairs, keys), "bearing", bearing_width_deg=bearing_width_deg)
    out = []
    for name, col in _ANTENNAS:
        other = C.HEARD_B if col == C.HEARD_A else C.HEARD_A
        g = st.assign(_r=st[col], _o=st[col] & ~st[other]).groupby(
            keys + [C.BEARING_MIN, C.BEARING_MAX], observed=True, sort=True)
        t = g.agg(**{C.STATIONS: ("_r", "sum"), C.STATIONS_ONLY: ("_o", "sum")}).reset_index()
        t.insert(len(keys) + 2, C.ANTENNA, name)
        out.append(t)
    res = pd.concat(out, ignore_index=True)
    res[[C.STATIONS, C.STATIONS_ONLY]] = res[[C.STATIONS, C.STATIONS_ONLY]].astype(np.int64)
    return res.sort_values(keys + [C.BEARING_MIN, C.ANTENNA], kind="stable").reset_index(
        drop=True)


def heard_by_distance(pairs: pd.DataFrame, *, distance_edges=DEFAULT_DISTANCE_EDGES,
                      by_band: bool = True, confidence: float = 0.95) -> pd.DataFrame:
    """P(heard) of A and of B per distance bin, with Wilson intervals.

    P(heard) is the fraction of a bin's pairs (slots in which the path was open to at least
    one antenna) in which that antenna was heard.

    Returns
    -------
    pandas.DataFrame
        Rows per [band,] bin (``C.DISTANCE_MIN``, ``C.DISTANCE_MAX`` [km]) and
        ``C.ANTENNA``: ``C.PAIRS``, ``C.HEARD``, ``C.P_HEARD``, ``C.P_HEARD_LOW``,
        ``C.P_HEARD_HIGH``.

    References
    ----------
    .. [1] E. B. Wilson, JASA 22(158):209-212, 1927.
    """
    _check_pairs(pairs)
    keys = _keys(by_band) + [C.DISTANCE_MIN, C.DISTANCE_MAX]
    p = add_group_keys(pairs[[C.BAND, C.DISTANCE, C.HEARD_A, C.HEARD_B]], "distance",
                       distance_edges=distance_edges).dropna(subset=[C.DISTANCE_MIN])
    g = p.groupby(keys, observed=True, sort=True).agg(
        **{C.PAIRS: (C.HEARD_A, "size"), "_a": (C.HEARD_A, "sum"),
           "_b": (C.HEARD_B, "sum")}).reset_index()
    out = []
    for name, col in (("A", "_a"), ("B", "_b")):
        t = g[keys + [C.PAIRS]].copy()
        t.insert(len(keys), C.ANTENNA, name)
        t[C.HEARD] = g[col].astype(np.int64).to_numpy()
        t[C.P_HEARD] = t[C.HEARD] / t[C.PAIRS]
        lo, hi = wilson_interval(t[C.HEARD].to_numpy(), t[C.PAIRS].to_numpy(), confidence)
        t[C.P_HEARD_LOW], t[C.P_HEARD_HIGH] = lo, hi
        out.append(t)
    return pd.concat(out, ignore_index=True).sort_values(
        keys + [C.ANTENNA], kind="stable").reset_index(drop=True)


@dataclass
class ReachResult:
    """What :func:`compare_reach` returns: three tables, A beside B.

    Attributes
    ----------
    summary, by_bearing, by_distance : pandas.DataFrame
        See :func:`reach_summary`, :func:`reach_by_bearing`, :func:`heard_by_distance`.
    design, a, b : str
    options : dict
    """

    summary: pd.DataFrame
    by_bearing: pd.DataFrame
    by_distance: pd.DataFrame
    design: str = ""
    a: str = ""
    b: str = ""
    options: dict = field(default_factory=dict)

    def to_frame(self) -> pd.DataFrame:
        """The summary table."""
        return self.summary.copy()

    def to_dict(self) -> dict:
        def recs(df):
            return [{k: (None if isinstance(v, float) and not math.isfinite(v) else
                         (v.item() if hasattr(v, "item") else v)) for k, v in r.items()}
                    for r in df.to_dict("records")]
        return {"design": self.design, "a": self.a, "b": self.b, "options": self.options,
                "summary": recs(self.summary), "by_bearing": recs(self.by_bearing),
                "by_distance": recs(self.by_distance)}

    def to_json(self, path=None, indent: int = 2) -> str:
        """JSON text of the three tables; also written to ``path`` when given."""
        text = json.dumps(self.to_dict(), indent=indent)
        if path is not None:
            Path(path).write_text(text + "\n", encoding="utf-8")
        return text

    def __str__(self) -> str:
        s = self.summary.copy()
        show = pd.DataFrame({c: s[c] for c in s.columns if c in (C.BAND, C.ANTENNA)})
        show["stations"] = s[C.STATIONS].map("{:,}".format)
        show["only"] = s[C.STATIONS_ONLY].map("{:,}".format)
        show["P(heard)"] = [f"{p:.2f} ({lo:.2f}-{hi:.2f})" for p, lo, hi in
                            zip(s[C.P_HEARD], s[C.P_HEARD_LOW], s[C.P_HEARD_HIGH], strict=True)]
        for col, name in ((C.DISTANCE_MEDIAN, "median km"), (C.DISTANCE_P90, "90 % km"),
                          (C.DISTANCE_FARTHEST, "farthest km")):
            show[name] = s[col].map(lambda x: "" if pd.isna(x) else f"{x:,.0f}")
        return (f"reach of A = {self.a} and B = {self.b} ({self.design}), same slots; "
                "P(heard) among pairs\n" + show.to_string(index=False))


def compare_reach(spots: pd.DataFrame, design: Design, a: str, b: str | None = None, *,
                  schedule=None, window_slots: int = 1,
                  distance_edges=DEFAULT_DISTANCE_EDGES, bearing_width_deg: float = 45.0,
                  by_band: bool = True, confidence: float = 0.95) -> ReachResult:
    """Pair the reports (same slots) and tabulate what A and B reached.

    Parameters are those of :func:`spotkit.compare.pairing.pair_spots` (``design`` must not be
    ``"before-after"``) and of the three table functions.

    Returns
    -------
    ReachResult
    """
    if design == "before-after":
        raise UsageError("reach compares antennas on the air in the same slots; the "
                         "before-after design has none")
    pairs = pair_spots(spots, design, a, b, schedule=schedule, window_slots=window_slots)
    return ReachResult(
        summary=reach_summary(pairs, by_band=by_band, confidence=confidence),
        by_bearing=reach_by_bearing(pairs, bearing_width_deg=bearing_width_deg,
                                    by_band=by_band),
        by_distance=heard_by_distance(pairs, distance_edges=distance_edges, by_band=by_band,
                                      confidence=confidence),
        design=design, a=str(a).upper(), b=str(b if b else a).upper(),
        options={"distance_edges": [float(x) for x in distance_edges],
                 "bearing_width_deg": float(bearing_width_deg), "confidence": confidence})


__all__ = ["ReachResult", "compare_reach", "reach_summary", "reach_by_bearing",
           "heard_by_distance"]
