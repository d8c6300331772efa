"""Small invented tables shared by tests in several folders (import as ``factories``:
``tests/`` is on ``sys.path`` through its conftest)."""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C

CALLS_TX = ["Q1ABC", "Q7XYZ", "Q3KLM"]
CALLS_RX = ["Q2AA", "Q4BB", "Q5CC", "Q6DD"]
LOCS = ["JN58td", "IO91lk", "FN31pr", "GF15vc", "RE78ir"]  # Tyson (QST 1989) examples


def make_spots(n=400, seed=1, start="2026-11-30 20:00"):
    """Random canonical spot table (invented calls, real grid squares)."""
    rng = np.random.default_rng(seed)
    slot = pd.Timestamp(start, tz="UTC") + pd.to_timedelta(
        2 * rng.integers(0, 6 * 30, n), unit="min")  # 12 h of 2-min slots, crossing midnight
    bands = rng.choice(["40m", "20m", "10m"], n)
    freq = np.select([bands == "40m", bands == "20m"], [7.0401e6, 14.0971e6], 28.1261e6)
    df = pd.DataFrame({
        C.TIME: slot + pd.to_timedelta(rng.integers(0, 2, n), unit="s"),
        C.SLOT: slot,
        C.TX_CALL: rng.choice(CALLS_TX, n), C.TX_LOCATOR: rng.choice(LOCS, n),
        C.RX_CALL: rng.choice(CALLS_RX, n), C.RX_LOCATOR: rng.choice(LOCS, n),
        C.FREQ: freq + rng.integers(0, 200, n), C.BAND: bands,
        C.SNR: rng.integers(-30, 10, n).astype(float),
        C.POWER: rng.choice([23.0, 30.0, 37.0], n), C.DRIFT: rng.integers(-2, 3, n).astype(float),
        C.TX_LAT: rng.uniform(-60, 60, n), C.TX_LON: rng.uniform(-180, 180, n),
        C.RX_LAT: rng.uniform(-60, 60, n), C.RX_LON: rng.uniform(-180, 180, n),
        C.DISTANCE: rng.uniform(0, 20000, n), C.BEARING: rng.uniform(0, 360, n),
        C.REVERSE_BEARING: rng.uniform(0, 360, n),
        C.SOURCE_FILE: "spots.csv", C.SOURCE_ROW: np.arange(1, n + 1),
    })
    return C.apply_dtypes(df)[C.CANONICAL]
