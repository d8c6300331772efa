"""Invented station populations for the simulator: where the far stations are, and their calls.

Far stations are placed uniformly at random inside a small table of weighted lat/lon boxes
(:data:`STATION_REGIONS`, :func:`place_stations`) and get invented callsigns with the Q
prefix, which is never issued to an amateur station (:func:`invent_calls`).

Known error: the boxes are a rough, invented picture of where amateur stations are
numerous; about 3 % of placed stations fall off the coast of the Natural Earth 1:110m land
layer, and inside a box stations are spread evenly, not clustered in towns.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

#: Where the far stations are placed: (region, lat_min, lat_max, lon_min, lon_max, weight)
#: [deg]. Invented weights loosely following where amateur stations are numerous; boxes
#: drawn mostly over land (about 97 % of placed stations fall on land in the Natural
#: Earth 1:110m layer).
STATION_REGIONS = pd.DataFrame(
    [
        ("France and Benelux", 44.0, 51.5, 0.0, 6.5, 0.10),
        ("Germany, Austria, Switzerland", 46.5, 53.5, 6.5, 15.0, 0.12),
        ("Poland, Czechia, Hungary", 46.5, 53.5, 15.0, 23.0, 0.06),
        ("northern Italy", 44.0, 46.0, 7.5, 12.5, 0.03),
        ("England", 51.0, 54.0, -3.0, 0.5, 0.05),
        ("southern Sweden and Norway", 58.5, 61.0, 9.0, 17.0, 0.03),
        ("Finland", 60.5, 64.0, 22.5, 29.0, 0.01),
        ("eastern Europe", 47.0, 57.0, 24.0, 40.0, 0.06),
        ("Iberia", 37.5, 42.5, -7.5, -1.0, 0.03),
        ("eastern United States", 33.0, 42.0, -90.0, -78.0, 0.17),
        ("New England and Quebec", 42.0, 46.5, -76.0, -71.0, 0.03),
        ("central North America", 30.0, 47.0, -105.0, -90.0, 0.05),
        ("western North America", 34.0, 48.0, -121.0, -115.0, 0.06),
        ("Japan", 34.5, 36.5, 136.0, 140.0, 0.04),
        ("south-east Australia", -37.5, -28.0, 144.0, 151.0, 0.04),
        ("New Zealand", -39.0, -36.5, 174.5, 176.0, 0.01),
        ("south-east Brazil", -26.0, -19.0, -52.0, -45.0, 0.02),
        ("Argentina", -38.0, -31.0, -64.0, -58.0, 0.01),
        ("South Africa", -34.0, -26.0, 19.0, 31.0, 0.01),
        ("India", 12.0, 28.0, 74.0, 84.0, 0.01),
        ("eastern Asia", 23.0, 40.0, 105.0, 118.0, 0.02),
        ("Puerto Rico", 18.0, 18.4, -67.0, -65.8, 0.01),
        ("Middle East", 29.0, 36.0, 35.0, 50.0, 0.01),
        ("Siberia", 52.0, 57.0, 60.0, 90.0, 0.02),
    ],
    columns=["region", "lat_min", "lat_max", "lon_min", "lon_max", "weight"],
)


def place_stations(n: int, rng: np.random.Generator, regions: pd.DataFrame | None = None):
    """Random station positions from a weighted table of lat/lon boxes.

    Parameters
    ----------
    n : int
        Number of stations.
    rng : numpy.random.Generator
    regions : pandas.DataFrame, optional
        Columns lat_min, lat_max, lon_min, lon_max [deg], weight; default
        :data:`STATION_REGIONS`.

    Returns
    -------
    lat, lon : numpy.ndarray
        [deg].

    Examples
    --------
    With one box of 1 by 1 deg, every station lands in it (where exactly depends on the
    generator):

    >>> box = pd.DataFrame({"lat_min": [52.0], "lat_max": [53.0], "lon_min": [13.0],
    ...                     "lon_max": [14.0], "weight": [1.0]})
    >>> lat, lon = place_stations(200, np.random.default_rng(1), box)
    >>> lat.shape, bool((lat >= 52).all() and (lat < 53).all() and (lon >= 13).all())
    ((200,), True)
    >>> lat, lon = place_stations(1000, np.random.default_rng(1))
    >>> bool((lat >= STATION_REGIONS["lat_min"].min()).all())
    True
    """
    reg = STATION_REGIONS if regions is None else regions
    w = reg["weight"].to_numpy(float)
    k = rng.choice(len(reg), size=n, p=w / w.sum())
    lat = rng.uniform(reg["lat_min"].to_numpy()[k], reg["lat_max"].to_numpy()[k])
    lon = rng.uniform(reg["lon_min"].to_numpy()[k], reg["lon_max"].to_numpy()[k])
    return lat, lon


def invent_calls(n: int, rng: np.random.Generator, exclude=()) -> np.ndarray:
    """``n`` distinct invented callsigns with the Q prefix (never issued to amateurs).

    Examples
    --------
    >>> calls = invent_calls(500, np.random.default_rng(2), exclude=["Q1ABC"])
    >>> len(set(calls)), "Q1ABC" in set(calls)
    (500, False)
    >>> all(c.startswith("Q") and c[1].isdigit() for c in calls), sorted({len(c) for c in calls})
    (True, [4, 5])
    """
    letters = np.array(list("ABCDEFGHIJKLMNOPQRSTUVWXYZ"))
    taken = {str(c).upper() for c in exclude}
    out: list[str] = []
    while len(out) < n:
        m = 2 * (n - len(out)) + 10
        digit = rng.integers(0, 10, m).astype(str)
        k = rng.integers(2, 4, m)
        suffix = ["".join(s[:j])
                  for s, j in zip(letters[rng.integers(0, 26, (m, 3))], k, strict=True)]
        for c in np.char.add(np.char.add("Q", digit), np.array(suffix)):
            if c not in taken:
                taken.add(c)
                out.append(str(c))
                if len(out) == n:
                    break
    return np.array(out, dtype=object)


__all__ = ["STATION_REGIONS", "place_stations", "invent_calls"]
