"""Amateur bands from RF frequency, after the IARU band plans.

Band edges (kHz) are those of the IARU Region 1 HF band plan (effective 16 Oct 2020), the
IARU Region 2 and Region 3 band plans, and ITU Radio Regulations Article 5. The plans state
their frequencies as transmitted (RF) frequencies, not dial settings, so a spot's band is
assigned from the RF frequency it carries.

Region ``"all"`` (the default) is the widest union of the three regions; for 60 m it spans
the national allocations (5250-5450 kHz, from memory) because the common beacon frequency
5287.2 kHz lies outside the Region 1 secondary allocation of 5351.5-5366.5 kHz. Values
marked [M] below are from memory.
"""
from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

from spotkit._validate import check_choice

Region = Literal["1", "2", "3", "all"]
REGIONS = ("1", "2", "3", "all")

#: Band names in order of increasing frequency.
BAND_ORDER = ["2200m", "630m", "160m", "80m", "60m", "40m", "30m", "20m", "17m", "15m",
              "12m", "10m", "6m", "4m", "2m", "70cm"]

# band -> {region: (low_khz, high_khz)}; None where the region has no allocation
_PLANS: dict[str, dict[str, tuple[float, float] | None]] = {
    "2200m": {"1": (135.7, 137.8), "2": (135.7, 137.8), "3": (135.7, 137.8)},
    "630m": {"1": (472.0, 479.0), "2": (472.0, 479.0), "3": (472.0, 479.0)},
    "160m": {"1": (1810.0, 2000.0), "2": (1800.0, 2000.0), "3": (1800.0, 2000.0)},
    "80m": {"1": (3500.0, 3800.0), "2": (3500.0, 4000.0), "3": (3500.0, 3900.0)},
    "60m": {"1": (5351.5, 5366.5), "2": (5351.5, 5366.5), "3": (5351.5, 5366.5),
            "all": (5250.0, 5450.0)},  # national allocations [M]
    "40m": {"1": (7000.0, 7200.0), "2": (7000.0, 7300.0), "3": (7000.0, 7200.0)},
    "30m": {"1": (10100.0, 10150.0), "2": (10100.0, 10150.0), "3": (10100.0, 10150.0)},
    "20m": {"1": (14000.0, 14350.0), "2": (14000.0, 14350.0), "3": (14000.0, 14350.0)},
    "17m": {"1": (18068.0, 18168.0), "2": (18068.0, 18168.0), "3": (18068.0, 18168.0)},
    "15m": {"1": (21000.0, 21450.0), "2": (21000.0, 21450.0), "3": (21000.0, 21450.0)},
    "12m": {"1": (24890.0, 24990.0), "2": (24890.0, 24990.0), "3": (24890.0, 24990.0)},
    "10m": {"1": (28000.0, 29700.0), "2": (28000.0, 29700.0), "3": (28000.0, 29700.0)},
    "6m": {"1": (50000.0, 52000.0), "2": (50000.0, 54000.0), "3": (50000.0, 54000.0)},  # [M]
    "4m": {"1": (70000.0, 70500.0), "2": None, "3": None},  # [M], some Region 1 countries
    "2m": {"1": (144000.0, 146000.0), "2": (144000.0, 148000.0), "3": (144000.0, 148000.0)},  # [M]
    "70cm": {"1": (430000.0, 440000.0), "2": (420000.0, 450000.0),
             "3": (430000.0, 440000.0)},  # [M]
}

#: Customary beacon dial frequencies [kHz] (USB; the signal sits 1400-1600 Hz above the
#: dial) - common practice. Used by the simulator and the planner.
BEACON_DIAL_KHZ = {
    "2200m": 136.0, "630m": 474.2, "160m": 1836.6, "80m": 3568.6, "60m": 5287.2,
    "40m": 7038.6, "30m": 10138.7, "20m": 14095.6, "17m": 18104.6, "15m": 21094.6,
    "12m": 24924.6, "10m": 28124.6, "6m": 50293.0,
}


def band_plan(region: Region = "all") -> pd.DataFrame:
    """The band edges used for ``region``.

    Returns
    -------
    pandas.DataFrame
        Columns ``band``, ``low_hz``, ``high_hz`` [Hz], in increasing frequency.

    Examples
    --------
    In Region 1, 160 m starts at 1810 kHz (IARU Region 1 HF band plan, 2020); the Region 2
    40 m band runs to 7300 kHz (IARU Region 2 band plan):

    >>> print(band_plan("1").head(3).to_string(index=False))
     band    low_hz   high_hz
    2200m  135700.0  137800.0
     630m  472000.0  479000.0
     160m 1810000.0 2000000.0
    >>> print(band_plan("2").query("band == '40m'").to_string(index=False))
    band    low_hz   high_hz
     40m 7000000.0 7300000.0
    """
    check_choice(region, REGIONS, "IARU region")
    rows = []
    for band in BAND_ORDER:
        plan = _PLANS[band]
        if region == "all":
            if "all" in plan:
                edges = [plan["all"]]
            else:
                edges = [e for r, e in plan.items() if e is not None]
            lo = min(e[0] for e in edges)
            hi = max(e[1] for e in edges)
        else:
            e = plan.get(region)
            if e is None:
                continue
            lo, hi = e
        rows.append((band, lo * 1e3, hi * 1e3))
    return pd.DataFrame(rows, columns=["band", "low_hz", "high_hz"])


def freq_to_band(freq_hz, region: Region = "all") -> np.ndarray:
    """Band name of each RF frequency.

    Parameters
    ----------
    freq_hz : float or array-like
        RF frequency [Hz].
    region : {"1", "2", "3", "all"}
        IARU region whose plan applies; ``"all"`` is the widest union.

    Returns
    -------
    numpy.ndarray of object
        Band names such as ``"20m"``; ``None`` where the frequency is in no amateur band.
        Band edges are inclusive.

    References
    ----------
    IARU Region 1 HF Band Plan (2020); IARU Region 2 and Region 3 band plans.

    Examples
    --------
    8 MHz is in no amateur band; 5288.7 kHz (a 60 m beacon signal) is in the widest union
    but outside the Region 1 allocation of 5351.5-5366.5 kHz:

    >>> freq_to_band([14097100, 7040100, 5288700, 8000000]).tolist()
    ['20m', '40m', '60m', None]
    >>> freq_to_band(5288700, region="1").tolist()
    [None]
    """
    plan = band_plan(region)
    f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
    lows = plan["low_hz"].to_numpy()
    highs = plan["high_hz"].to_numpy()
    names = np.array(plan["band"].tolist() + [None], dtype=object)
    idx = np.searchsorted(lows, f, side="right") - 1
    inside = (idx >= 0) & (f <= highs[np.clip(idx, 0, None)]) & np.isfinite(f)
    idx = np.where(inside, idx, len(lows))
    return names[idx]


def band_sort_key(bands) -> np.ndarray:
    """Position of each band name in :data:`BAND_ORDER` (unknown names last).

    Examples
    --------
    >>> band_sort_key(["20m", "160m", "13cm"]).tolist()
    [7, 2, 16]
    """
    order = {b: i for i, b in enumerate(BAND_ORDER)}
    return np.array([order.get(b, len(BAND_ORDER)) for b in np.atleast_1d(bands)])


def sort_bands(bands) -> list[str]:
    """Distinct band names in band-plan order.

    Examples
    --------
    >>> sort_bands(["20m", "40m", "20m", "10m", None])
    ['40m', '20m', '10m']
    """
    uniq = pd.unique(pd.Series(list(np.atleast_1d(bands))).dropna())
    return sorted(uniq, key=lambda b: band_sort_key([b])[0])


__all__ = ["REGIONS", "BAND_ORDER", "BEACON_DIAL_KHZ", "band_plan", "freq_to_band",
           "band_sort_key", "sort_bands"]
