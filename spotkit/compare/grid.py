"""The "where" grid: B minus A by band and by one other key (distance, bearing or hour), one
cell per group, with the cells where a verdict names a better antenna marked.

This only lays out what :func:`spotkit.compare.estimate.compare_antennas` estimated (no new
statistics): a cell is *significant* exactly when the group's verdict names a better antenna
(:func:`spotkit.compare.estimate.verdict`: the interval excludes 0 dB, enough clusters, few
failed resamples), so the grid and the sentences never disagree.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.compare.estimate import _fmt_num, too_little_data
from spotkit.errors import UsageError

#: the keys a grid can have beside the band, in the order a report shows them
GRID_KEYS = ("distance", "bearing", "hour")

_KEY_COLUMNS = {"distance": (C.DISTANCE_MIN, C.DISTANCE_MAX),
                "bearing": (C.BEARING_MIN, C.BEARING_MAX), "hour": (C.HOUR, None)}


def _cell_labels(lo: np.ndarray, hi: np.ndarray | None, key: str) -> list[str]:
    if key == "hour":
        return [f"{int(h):02d} h" for h in lo]
    if key == "bearing":
        return [f"{_fmt_num(a)}-{_fmt_num(b)} deg" for a, b in zip(lo, hi, strict=True)]
    out = []
    for a, b in zip(lo, hi, strict=True):
        if a <= 0:
            out.append(f"< {_fmt_num(b)} km")
        elif b >= 20000:
            out.append(f"> {_fmt_num(a)} km")
        else:
            out.append(f"{_fmt_num(a)}-{_fmt_num(b)} km")
    return out


def grid_key(result) -> str:
    """Which of :data:`GRID_KEYS` a comparison is grouped by beside the band.

    Raises
    ------
    UsageError
        When the comparison is not grouped by band and exactly one of the grid keys.
    """
    by = tuple(getattr(result, "by", ()))
    keys = [k for k in GRID_KEYS if k in by]
    if "band" not in by or len(keys) != 1 or len(by) != 2:
        raise UsageError(f"a grid needs a comparison by band and one of "
                         f"{', '.join(GRID_KEYS)}; got by {', '.join(by) or 'nothing'}")
    return keys[0]


def difference_grid(result) -> pd.DataFrame:
    """B minus A of a band x key comparison as grid cells.

    Parameters
    ----------
    result : ComparisonResult
        From ``compare_antennas(..., by=("band", key))`` with key distance, bearing or hour.

    Returns
    -------
    pandas.DataFrame
        One row per group: ``band``, ``grid_key``, ``cell`` (short label), ``cell_order``,
        ``b_minus_a_db``, ``ci_low_db``, ``ci_high_db`` [dB], ``pairs`` and ``significant``
        (True when the verdict names a better antenna), bands in band-plan order and cells
        in key order.

    Examples
    --------
    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.estimate import compare_antennas
    >>> sim = simulate_spots(days=0.2, n_receivers=40, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> res = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, n_boot=30,
    ...                        by=("band", "distance"), min_pairs=5)
    >>> print(difference_grid(res)[["band", "cell", "significant"]].to_string(index=False))
    band           cell  significant
     20m     < 1,000 km         True
     20m 1,000-3,000 km        False
     20m     > 6,000 km         True
    """
    from spotkit.bands import sort_bands

    key = grid_key(result)
    lo_col, hi_col = _KEY_COLUMNS[key]
    g = result.groups
    cols = [C.BAND, C.GRID_KEY, C.CELL, C.CELL_ORDER, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH,
            C.PAIRS, C.SIGNIFICANT]
    if g.empty:
        return pd.DataFrame(columns=cols)
    lo = g[lo_col].to_numpy(dtype=float)
    hi = g[hi_col].to_numpy(dtype=float) if hi_col else None
    est = g[C.B_MINUS_A].to_numpy(dtype=float)
    clo = g[C.CI_LOW].to_numpy(dtype=float)
    chi = g[C.CI_HIGH].to_numpy(dtype=float)
    label = "transmitters" if result.design == "receive" else "receivers"
    enough = np.array([too_little_data(r, label) == "" for r in g.to_dict("records")],
                      dtype=bool)
    sig = enough & np.isfinite(est) & ((clo > 0) | (chi < 0))
    order = pd.Series(lo).rank(method="dense").to_numpy(dtype=int) - 1
    out = pd.DataFrame({C.BAND: g[C.BAND].astype(str).to_numpy(), C.GRID_KEY: key,
                        C.CELL: _cell_labels(lo, hi, key), C.CELL_ORDER: order,
                        C.B_MINUS_A: est, C.CI_LOW: clo, C.CI_HIGH: chi,
                        C.PAIRS: g[C.PAIRS].to_numpy(), C.SIGNIFICANT: sig})
    band_rank = {b: i for i, b in enumerate(sort_bands(out[C.BAND].unique()))}
    out = out.assign(_b=out[C.BAND].map(band_rank)).sort_values(["_b", C.CELL_ORDER])
    return out.drop(columns="_b").reset_index(drop=True)[cols]


def grid_table(grid: pd.DataFrame) -> pd.DataFrame:
    """A grid as a band x cell table of text: ``+3.1*`` where significant, ``+0.4`` where
    not, ``.`` where there is no estimate, empty where the band has no such group.

    Examples
    --------
    >>> g = pd.DataFrame({"band": ["20m", "20m"], "cell": ["< 1,000 km", "> 1,000 km"],
    ...                   "cell_order": [0, 1], "b_minus_a_db": [3.12, 0.4],
    ...                   "significant": [True, False]})
    >>> grid_table(g).to_string()
    'cell < 1,000 km > 1,000 km\\nband                      \\n20m       +3.1*       +0.4'
    """
    if grid.empty:
        return pd.DataFrame()
    est = grid[C.B_MINUS_A].to_numpy(dtype=float)
    text = np.where(~np.isfinite(est), ".",
                    [f"{x:+.1f}" for x in np.nan_to_num(est)])
    text = np.where(grid[C.SIGNIFICANT].to_numpy(dtype=bool) & np.isfinite(est),
                    np.char.add(text.astype(str), "*"), text)
    cells = (grid[[C.CELL, C.CELL_ORDER]].drop_duplicates(C.CELL)
             .sort_values(C.CELL_ORDER)[C.CELL].tolist())
    bands = list(dict.fromkeys(grid[C.BAND]))
    tab = (pd.DataFrame({C.BAND: grid[C.BAND], C.CELL: grid[C.CELL], "t": text})
           .pivot(index=C.BAND, columns=C.CELL, values="t").reindex(index=bands, columns=cells)
           .fillna(""))
    return tab


__all__ = ["GRID_KEYS", "grid_key", "difference_grid", "grid_table"]
