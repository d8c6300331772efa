"""Band assignment against the IARU Region 1, 2 and 3 band plans."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit.bands import (
    BAND_ORDER,
    BEACON_DIAL_KHZ,
    band_plan,
    band_sort_key,
    freq_to_band,
    sort_bands,
)

# Band edges [kHz]: IARU Region 1 HF band plan (effective 16 Oct 2020), IARU Region 2 and
# Region 3 band plans. 60 m outside Region 1 and the 6 m edges are from memory.
EDGES = {
    "1": {"2200m": (135.7, 137.8), "630m": (472, 479), "160m": (1810, 2000),
          "80m": (3500, 3800), "60m": (5351.5, 5366.5), "40m": (7000, 7200),
          "30m": (10100, 10150), "20m": (14000, 14350), "17m": (18068, 18168),
          "15m": (21000, 21450), "12m": (24890, 24990), "10m": (28000, 29700),
          "6m": (50000, 52000)},
    "2": {"2200m": (135.7, 137.8), "630m": (472, 479), "160m": (1800, 2000),
          "80m": (3500, 4000), "60m": (5351.5, 5366.5), "40m": (7000, 7300),
          "30m": (10100, 10150), "20m": (14000, 14350), "17m": (18068, 18168),
          "15m": (21000, 21450), "12m": (24890, 24990), "10m": (28000, 29700),
          "6m": (50000, 54000)},
    "3": {"2200m": (135.7, 137.8), "630m": (472, 479), "160m": (1800, 2000),
          "80m": (3500, 3900), "60m": (5351.5, 5366.5), "40m": (7000, 7200),
          "30m": (10100, 10150), "20m": (14000, 14350), "17m": (18068, 18168),
          "15m": (21000, 21450), "12m": (24890, 24990), "10m": (28000, 29700),
          "6m": (50000, 54000)},
}
CASES = [(r, b, lo, hi) for r, plan in EDGES.items() for b, (lo, hi) in plan.items()]


@pytest.mark.parametrize("region, band, low_khz, high_khz", CASES)
def test_region_edges_inclusive(region, band, low_khz, high_khz):
    f = np.array([low_khz, high_khz, (low_khz + high_khz) / 2]) * 1e3
    assert list(freq_to_band(f, region)) == [band] * 3
    # 1 Hz outside either edge is in no band (no two bands lie within 1 Hz)
    outside = np.array([low_khz * 1e3 - 1.0, high_khz * 1e3 + 1.0])
    assert list(freq_to_band(outside, region)) == [None, None]


@pytest.mark.parametrize("region", ["1", "2", "3", "all"])
def test_band_plan_table(region):
    plan = band_plan(region)
    assert list(plan.columns) == ["band", "low_hz", "high_hz"]
    assert (plan["low_hz"] < plan["high_hz"]).all()
    assert plan["low_hz"].is_monotonic_increasing
    # bands never overlap
    assert (plan["low_hz"].to_numpy()[1:] > plan["high_hz"].to_numpy()[:-1]).all()
    if region != "all":
        for band, (lo, hi) in EDGES[region].items():
            row = plan.loc[plan["band"] == band].iloc[0]
            assert row["low_hz"] == lo * 1e3 and row["high_hz"] == hi * 1e3


def test_region_all_is_the_widest_union():
    # union of the three regional plans above; for 60 m the national allocations
    # 5250-5450 kHz (from memory)
    want = {"160m": (1800, 2000), "80m": (3500, 4000), "40m": (7000, 7300),
            "6m": (50000, 54000), "60m": (5250, 5450)}
    plan = band_plan("all").set_index("band")
    for band, (lo, hi) in want.items():
        assert plan.loc[band, "low_hz"] == lo * 1e3 and plan.loc[band, "high_hz"] == hi * 1e3
    # 1805 kHz is 160 m in Regions 2, 3 and "all" but not in Region 1
    assert freq_to_band(1_805_000, "1")[0] is None
    assert freq_to_band(1_805_000, "2")[0] == "160m"
    assert freq_to_band(1_805_000, "all")[0] == "160m"
    # 7250 kHz: only Region 2
    assert [freq_to_band(7_250_000, r)[0] for r in ("1", "2", "3", "all")] == [
        None, "40m", None, "40m"]


@pytest.mark.parametrize("band, dial_khz", sorted(BEACON_DIAL_KHZ.items()))
def test_customary_beacon_frequencies(band, dial_khz):
    # customary beacon dial frequencies, signals 1400-1600 Hz above the dial (common
    # practice); the RF frequency dial + 1500 Hz must fall in the band
    rf = np.array([dial_khz * 1e3 + 1400, dial_khz * 1e3 + 1500, dial_khz * 1e3 + 1600])
    assert list(freq_to_band(rf, "all")) == [band] * 3
    if band != "60m":
        for region in ("1", "2", "3"):
            assert freq_to_band(dial_khz * 1e3 + 1500, region)[0] == band


def test_sixty_metres_alternative_frequency():
    # 5364.7 kHz dial (common practice) + 1500 Hz lies inside the Region 1 secondary
    # allocation 5351.5-5366.5 kHz; 5287.2 kHz + 1500 Hz lies outside it
    assert freq_to_band(5_364_700 + 1500, "1")[0] == "60m"
    assert freq_to_band(5_287_200 + 1500, "1")[0] is None


def test_not_a_frequency():
    got = freq_to_band([np.nan, -1.0, 0.0, 1e12, np.inf])
    assert list(got) == [None] * 5
    assert freq_to_band(14_097_100.0)[0] == "20m"  # scalar in, 1-element array out
    assert list(freq_to_band(pd.Series([14_097_100.0, 7_040_100.0]))) == ["20m", "40m"]


def test_unknown_region():
    with pytest.raises(ValueError, match="all"):
        freq_to_band(14e6, "4")
    with pytest.raises(ValueError, match="all"):
        band_plan("R1")


def test_ordering():
    assert BAND_ORDER.index("160m") < BAND_ORDER.index("20m") < BAND_ORDER.index("6m")
    assert sort_bands(["20m", "160m", None, "40m", "20m", "6m"]) == ["160m", "40m", "20m",
                                                                      "6m"]
    assert list(band_sort_key(["80m", "nonsense"])) == [BAND_ORDER.index("80m"),
                                                       len(BAND_ORDER)]
