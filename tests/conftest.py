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
