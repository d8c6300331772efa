"""Map data (spotkit.viz.mapdata): what the maps show, computed without drawing."""
from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.viz import mapdata


def test_difference_cells_flags_one_sided_and_significance(square_groups):
    groups = square_groups
    cells = mapdata.difference_cells(groups)
    assert cells.attrs["level"] == "square"
    assert cells["significant"].tolist() == [True, False, False, False]
    assert cells["one_sided"].tolist() == ["", "", "only_a", "only_b"]
    # JN58 square centre (Tyson 1989 scheme): 48.5 N, 11 E; cell 2 x 1 deg
    assert cells[C.FAR_LAT].iloc[0] == pytest.approx(48.5)
    assert cells[C.FAR_LON].iloc[0] == pytest.approx(11.0)
    assert cells["cell_dlon"].iloc[0] == 2.0 and cells["cell_dlat"].iloc[0] == 1.0
    assert mapdata.symmetric_limit([2.0, -0.4]) == pytest.approx(2.0)


def test_world_path_samples_lie_on_the_geodesic():
    """Samples of a drawn path are equally spaced along the WGS-84 geodesic from home:
    geographiclib (Karney 2013) as a test-only oracle, 1 mm in distance, 1e-6 deg in
    azimuth."""
    from geographiclib.geodesic import Geodesic

    la, lo = mapdata._geodesic_samples(48.145833, 11.625, np.array([-33.9, 40.7]),
                                       np.array([151.2, -74.0]), 9)
    for k in range(2):
        total = Geodesic.WGS84.Inverse(48.145833, 11.625, la[k, -1], lo[k, -1])
        for i in range(1, 9):
            g = Geodesic.WGS84.Inverse(48.145833, 11.625, la[k, i], lo[k, i])
            assert g["s12"] == pytest.approx(total["s12"] * i / 8, abs=1e-3)
            assert g["azi1"] == pytest.approx(total["azi1"], abs=1e-6)


def test_imports_neither_matplotlib_nor_cartopy():
    # computation never imports plotting (DEVELOPERS.md); checked in a fresh interpreter
    code = ("import sys, spotkit.viz.mapdata; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in "
            "('matplotlib', 'cartopy')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"
