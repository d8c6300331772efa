"""Tests of the simulator's invented station populations."""
from __future__ import annotations

import re

import numpy as np
import pytest

from spotkit.sim.stations import invent_calls


def test_far_stations_are_placed_on_land():
    # oracle: the shipped Natural Earth 1:110m land layer (public domain); coastline
    # generalised by km to tens of km, so allow 10 % of stations off its coast
    pytest.importorskip("shapely")
    from spotkit.sim.stations import STATION_REGIONS, place_stations
    from spotkit.viz.basemap import is_land

    lat, lon = place_stations(5000, np.random.default_rng(1))
    assert is_land(lat, lon).mean() > 0.9
    w = STATION_REGIONS.set_index("region")["weight"]
    assert w.sum() == pytest.approx(1.0)
    # most stations in Europe and North America (invented weights, common practice)
    eu_na = (lon > -125) & (lon < -60) | ((lon > -10) & (lon < 45) & (lat > 35))
    assert eu_na.mean() > 0.75


def test_invented_calls_are_distinct_q_prefix_and_avoid_excluded():
    # Q is never issued to an amateur station (common practice); about 182,000 possible
    # calls, so two draws of 2000 would share about 20 if the exclusion did not work
    first = invent_calls(2000, np.random.default_rng(3))
    second = invent_calls(2000, np.random.default_rng(4), exclude=first)
    for calls in (first, second):
        assert len(set(calls)) == 2000
        assert all(re.fullmatch(r"Q\d[A-Z]{2,3}", c) for c in calls)
    assert not set(first) & set(second)
