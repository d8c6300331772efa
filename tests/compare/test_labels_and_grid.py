"""Antenna names (labels) through the library, and the band x key "where" grid
(spotkit.compare.grid): its marks must agree with the verdict sentences."""
from __future__ import annotations

import json

import matplotlib
import numpy as np
import pytest

from spotkit import columns as C
from spotkit._validate import MAX_LABEL_CHARS, check_labels
from spotkit.compare import compare_antennas, difference_grid, grid_key, grid_table
from spotkit.errors import UsageError

matplotlib.use("Agg")


@pytest.fixture(scope="module")
def by_distance(sim):
    return compare_antennas(sim.spots, sim.design, sim.a, sim.b, by=("band", "distance"),
                            n_boot=60, labels=("vertical", "dipole"))


@pytest.mark.parametrize("la, lb, message", [
    ("", "dipole", "label of A must not be empty"),
    ("vertical", "   ", "label of B must not be empty"),
    ("x" * (MAX_LABEL_CHARS + 1), "dipole", f"at most {MAX_LABEL_CHARS} characters"),
    ("vertical", "Vertical", "must differ"),
    ("vert\nical", "dipole", "control characters"),
])
def test_bad_labels_are_refused_with_the_reason(la, lb, message):
    with pytest.raises(UsageError, match=message):
        check_labels(la, lb)


def test_labels_reach_verdicts_text_and_json(by_distance):
    res = by_distance
    assert res.labels == ("vertical", "dipole")
    words = res.verdicts()
    # the demo's B is better overall (demo_data/README.md: B-A about +3.5 dB)
    assert words[0].startswith("dipole (B) is ") and "better than vertical (A)" in words[0]
    assert not any(w.startswith(("B is", "A is")) for w in words)
    d = json.loads(res.to_json())
    assert (d["label_a"], d["label_b"]) == ("vertical", "dipole")
    assert "A = vertical (Q1ABC), B = dipole (Q1ABD)" in str(res)


def test_without_labels_the_calls_name_the_antennas_and_sentences_keep_letters(sim):
    res = compare_antennas(sim.spots, sim.design, sim.a, sim.b, n_boot=20)
    assert res.labels == ("Q1ABC", "Q1ABD")
    assert json.loads(res.to_json())["label_b"] == "Q1ABD"
    assert res.verdicts()[0].startswith("B is ")


def test_grid_marks_exactly_the_groups_whose_verdict_names_a_winner(by_distance):
    grid = difference_grid(by_distance)
    assert grid_key(by_distance) == "distance"
    assert len(grid) == len(by_distance.groups)
    # the oracle is the verdict sentence of the same group (spotkit.compare.estimate.verdict)
    named = {}
    for row, sentence in zip(by_distance.groups.to_dict("records"),
                             by_distance.verdicts()[1:], strict=True):
        named[(row[C.BAND], row[C.DISTANCE_MIN])] = ("better than" in sentence)
    assert sum(named.values()) >= 1 and not all(named.values())  # both kinds present
    ordered = grid.set_index([C.BAND, C.CELL_ORDER])[C.SIGNIFICANT]
    edges = sorted(by_distance.groups[C.DISTANCE_MIN].unique())
    for (band, dmin), want in named.items():
        assert bool(ordered[(band, edges.index(dmin))]) == want, (band, dmin)
    table = grid_table(grid)
    stars = sum(str(v).endswith("*") for v in table.to_numpy().ravel())
    assert stars == int(grid[C.SIGNIFICANT].sum())
    assert list(table.columns)[0] == "< 1,000 km" and list(table.columns)[-1] == "> 6,000 km"


def test_grid_needs_band_and_one_key(sim):
    res = compare_antennas(sim.spots, sim.design, sim.a, sim.b, by="band", n_boot=10)
    with pytest.raises(UsageError, match="a grid needs a comparison by band and one of"):
        difference_grid(res)


def test_grid_plot_outlines_the_significant_cells_and_names_the_antennas(by_distance):
    from spotkit.viz.plots import grid_plot

    fig = grid_plot(by_distance)
    ax = fig.axes[0]
    outlined = [p for p in ax.patches if p.get_gid() == "significant"]
    hatched = [p for p in ax.patches if p.get_gid() == "not-significant"]
    grid = difference_grid(by_distance)
    finite = np.isfinite(grid[C.B_MINUS_A].to_numpy(dtype=float))
    assert len(outlined) == int(grid[C.SIGNIFICANT].sum())
    assert len(hatched) == int((finite & ~grid[C.SIGNIFICANT].to_numpy(dtype=bool)).sum())
    assert "dipole" in fig._suptitle.get_text() and "vertical" in fig._suptitle.get_text()


def test_plots_name_the_antennas_and_the_hour_basis(sim):
    from spotkit.viz import plots

    res = compare_antennas(sim.spots, sim.design, sim.a, sim.b, by=("band", "hour"),
                           n_boot=20, hour="local", labels=("vertical", "dipole"))
    ax = plots.hour_plot(res)
    assert ax.get_title().startswith("dipole minus vertical")
    assert "local solar time" in ax.get_xlabel()
    utc = compare_antennas(sim.spots, sim.design, sim.a, sim.b, by=("band", "hour"),
                           n_boot=20)
    ax = plots.hour_plot(utc)
    assert "UTC" in ax.get_xlabel() and ax.get_title().startswith("Q1ABD minus Q1ABC")


def test_distance_points_sit_at_the_median_distance_of_their_pairs(by_distance):
    """The open last bin ("beyond 6,000 km", up to 20,100 km) is drawn where its pairs are,
    not at its middle near 13,000 km (issue 16)."""
    from spotkit.viz.plots import distance_plot

    ax = distance_plot(by_distance, band="20m")
    (bars,) = [c for c in ax.containers if c[0].get_gid() == "estimate-20m"] or [None]
    xs = np.asarray(bars[0].get_xdata(), dtype=float)
    pairs = by_distance.pairs[by_distance.pairs[C.BAND].astype(str) == "20m"]
    far = pairs.loc[pairs[C.DISTANCE] >= 6000, C.DISTANCE]
    assert xs.max() == pytest.approx(float(np.median(far)), abs=1.0)  # [km]
    assert xs.max() < 10000
    assert "dipole minus vertical" in ax.get_ylabel()
