"""Shared fixtures and markers for the spotkit test suite."""
from __future__ import annotations

import os
from pathlib import Path

import matplotlib
import numpy as np
import pytest

os.environ.setdefault("MPLBACKEND", "Agg")
matplotlib.use("Agg")

REPO = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "data"
DEMO = REPO / "demo_data"


@pytest.fixture
def rng():
    """A seeded random generator."""
    return np.random.default_rng(20261201)


@pytest.fixture
def data_dir() -> Path:
    return DATA


@pytest.fixture
def demo_dir() -> Path:
    return DEMO


@pytest.fixture
def square_groups():
    """Per-square comparison results with one cell of each kind: B clearly better
    (JN58), no clear difference (FN31), heard from A only (PM95), from B only (IO91)."""
    import pandas as pd

    from spotkit import columns as C

    return pd.DataFrame({
        C.SQUARE: ["JN58", "FN31", "PM95", "IO91"],
        C.B_MINUS_A: [2.0, 0.5, np.nan, np.nan],
        C.CI_LOW: [1.0, -0.5, np.nan, np.nan], C.CI_HIGH: [3.0, 1.5, np.nan, np.nan],
        C.BOTH: [50, 40, 0, 0], C.ONLY_A: [3, 2, 5, 0], C.ONLY_B: [4, 1, 0, 6],
    })


class Experiment:
    """Spots of one A/B experiment and what to pass to compare."""

    def __init__(self, spots, design, a, b):
        self.spots, self.design, self.a, self.b = spots, design, a, b


@pytest.fixture(scope="session")
def sim():
    """The demo data's simultaneous-transmit experiment (demo_data/README.md): the invented
    station Q1ABC (antenna A) and Q1ABD (antenna B)."""
    from spotkit.io.ingest import load_spots

    spots = load_spots(DEMO / "simultaneous.csv.gz")
    return Experiment(spots, "simultaneous", "Q1ABC", "Q1ABD")


@pytest.fixture
def offline(tmp_path, monkeypatch):
    """An empty cartopy data directory and no way out: a map or plot that tried to download
    its coastlines would fail or leave files behind."""
    import urllib.request

    import cartopy
    import matplotlib.pyplot as plt

    data_dir = tmp_path / "cartopy-data"
    data_dir.mkdir()
    monkeypatch.setitem(cartopy.config, "data_dir", str(data_dir))
    monkeypatch.setitem(cartopy.config, "pre_existing_data_dir", str(data_dir))

    def refuse(*args, **kwargs):
        raise AssertionError("a map or plot tried to use the network")

    monkeypatch.setattr(urllib.request, "urlopen", refuse)
    yield
    assert list(data_dir.iterdir()) == []
    plt.close("all")


# Property tests draw their examples from a seed fixed per test, so that a CI run is
# repeatable; HYPOTHESIS_PROFILE=explore draws fresh ones (run it now and then: a failure
# it finds becomes an @example).
try:
    from hypothesis import settings as _hyp_settings
except ImportError:  # pragma: no cover - hypothesis is in the test extra
    pass
else:
    _hyp_settings.register_profile("ci", derandomize=True, database=None)
    _hyp_settings.register_profile("explore", derandomize=False)
    _hyp_settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))
