"""add_group_keys refuses options that would silently empty or garble a breakdown
(issue 14: a negative --layer-height emptied the elevation breakdown with exit 0)."""
import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.compare.grouping import add_group_keys
from spotkit.errors import UsageError


@pytest.fixture
def pairs():
    # invented pairs of a station in JO62qm, as in add_group_keys' example
    return pd.DataFrame({
        C.CLUSTER: ["Q2XY", "Q3DEF", "Q4GH"],
        C.BAND: ["20m", "20m", "40m"],
        C.SLOT: pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02", "2024-03-01 22:04"],
                               utc=True),
        C.TX_LOCATOR: ["JO62qm"] * 3, C.RX_LOCATOR: ["JN58td", "IO91lk", "FN31pr"],
        C.FAR_LOCATOR: ["JN58td", "IO91lk", "FN31pr"],
        C.TX_LAT: [52.5] * 3, C.TX_LON: [13.0] * 3,
        C.RX_LAT: [48.15, 52.44, 41.73], C.RX_LON: [11.6, -1.88, -72.7],
        C.FAR_LAT: [48.15, 52.44, 41.73], C.FAR_LON: [11.6, -1.88, -72.7],
        C.DISTANCE: [502.3, 996.2, 6244.0], C.BEARING: [195.0, 268.8, 296.1],
        C.SNR_A: [-20.0, np.nan, -27.0], C.SNR_B: [-17.0, -25.0, np.nan],
        C.LIMIT_A: [-28.0] * 3, C.LIMIT_B: [-28.0] * 3})


def test_elevation_breakdown_with_a_positive_layer_fills_every_bin(pairs):
    keyed = add_group_keys(pairs, "elevation", layer_height_km=300.0)
    assert keyed[C.ELEVATION_MIN].notna().all()


@pytest.mark.parametrize("height", [-5.0, 0.0, np.nan, np.inf])
def test_layer_height_must_be_positive(pairs, height):
    with pytest.raises(UsageError, match=r"^layer_height_km must be positive"):
        add_group_keys(pairs, "elevation", layer_height_km=height)


@pytest.mark.parametrize(("option", "edges"), [("distance_edges", (5.0, 1.0)),
                                               ("elevation_edges", (0.0, np.nan, 90.0)),
                                               ("distance_edges", (1000.0,))])
def test_edges_are_checked_even_when_not_grouped_by(pairs, option, edges):
    with pytest.raises(UsageError, match="edges must be at least two finite numbers"):
        add_group_keys(pairs, "band", **{option: edges})


@pytest.mark.parametrize("width", [0.0, -45.0, 50.0])
def test_bearing_width_must_divide_360(pairs, width):
    with pytest.raises(UsageError, match="must divide 360"):
        add_group_keys(pairs, "band", bearing_width_deg=width)
