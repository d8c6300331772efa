"""The invented three-antenna demo in demo_data/ (a vertical and dipoles at 10 m and 20 m
beaconing together): the files are what :func:`spotkit.sim.simulate.make_three_demo`
writes, and the simulator's truth of every pair of antennas is the difference of the
antennas' own gain tables on each path."""
from __future__ import annotations

import json

import numpy as np
import pytest

from spotkit import columns as C
from spotkit.geo.geodesic import elevation_angle
from spotkit.sim import THREE_DEMO, make_antenna, truths_from_json
from spotkit.sim.simulate import make_three_demo, simulate_spots


def test_truth_file_states_the_scenario(demo_dir):
    doc = json.loads((demo_dir / "three_antennas.truth.json").read_text(encoding="utf-8"))
    calls = [c for c, *_ in THREE_DEMO]
    assert doc["calls"] == calls and doc["antennas_option"] == ",".join(calls)
    assert all(c.startswith("Q") for c in calls)
    truths = truths_from_json(demo_dir / "three_antennas.truth.json")
    assert set(truths) == {(calls[0], calls[1]), (calls[0], calls[2]), (calls[1], calls[2])}
    for (x, y), t in truths.items():
        assert doc["true_db"][f"{y} minus {x}"] == pytest.approx(
            t.overall[C.B_MINUS_A], abs=1e-3)
        assert t.a == x and t.b == y and len(t.pairs) > 10_000
    # the configurations differ in pattern: the 20 m dipole loses to the 10 m one at
    # 25-35 degrees (its first null near 30 degrees on 20 m) and wins below 10 degrees
    cb = truths[(calls[1], calls[2])].pairs
    e, d = cb[C.ELEVATION].to_numpy(), cb[C.B_MINUS_A].to_numpy()
    assert d[(e > 25) & (e < 35)].mean() < -3.0 < 3.0 < d[e < 10].mean()
    size = sum((demo_dir / n).stat().st_size for n in ("three_antennas.csv.gz",
                                                       "three_antennas.truth.json"))
    assert size < 2_000_000
    assert "three_antennas.csv.gz" in (demo_dir / "README.md").read_text(encoding="utf-8")


def test_truth_of_every_pair_is_the_gain_difference_on_the_path():
    # antennas of their own pattern as C (transmit) and as a third receiver (receive)
    ants = [make_antenna(k, ("20m",), **kw) for _, k, kw, _ in THREE_DEMO]
    for design in ("simultaneous", "receive"):
        sim = simulate_spots(design, days=0.2, n_receivers=40, n_transmitters=40,
                             bands=("20m",), seed=5, antenna_a=ants[0], antenna_b=ants[1],
                             more_antennas=ants[2:])
        assert sim.params["truth_vs_a"] is None
        assert len(sim.truths) == 3
        assert sim.truths[("Q1ABC", "Q1ABD")].pairs.equals(sim.truth.pairs)
        for (x, y), t in sim.truths.items():
            p = t.pairs
            ix, iy = sim.params["calls"].index(x), sim.params["calls"].index(y)
            # the elevation of the simulator's own geometry (300 km layer); bearings from
            # the home station
            el = elevation_angle(p[C.DISTANCE].to_numpy(), 300.0)
            np.testing.assert_allclose(p[C.ELEVATION], el, atol=1e-6)
            az, dk = p[C.BEARING].to_numpy(), p[C.DISTANCE].to_numpy()
            want = (ants[iy].gain_db("20m", el, az, dk) - ants[ix].gain_db("20m", el, az, dk))
            np.testing.assert_allclose(p[C.B_MINUS_A], want, atol=1e-9)
            # heard flags agree with the spots: every pair heard by x has a report of x
            col = C.RX_CALL if design == "receive" else C.TX_CALL
            heard_x = sim.spots[sim.spots[col].astype(str) == x]
            assert p[C.HEARD_A].sum() == len(heard_x)


@pytest.mark.slow
def test_three_demo_regenerates_byte_for_byte(demo_dir, tmp_path):
    sim = make_three_demo(tmp_path)
    for name in ("three_antennas.csv.gz", "three_antennas.truth.json"):
        assert (tmp_path / name).read_bytes() == (demo_dir / name).read_bytes(), name
    calls = set(sim.spots[C.TX_CALL].astype(str)) | set(sim.spots[C.RX_CALL].astype(str))
    assert all(c.startswith("Q") for c in calls)


def test_truths_file_round_trips_and_bad_files_are_named(tmp_path):
    from spotkit.errors import InputError
    from spotkit.sim import truths_to_json

    ants = [make_antenna(k, ("20m",), **kw) for _, k, kw, _ in THREE_DEMO]
    sim = simulate_spots(days=0.1, n_receivers=20, bands=("20m",), seed=1,
                         antenna_a=ants[0], antenna_b=ants[1], more_antennas=ants[2:])
    path = tmp_path / "t.json"
    truths_to_json(sim.truths, path, calls=sim.params["calls"])
    back = truths_from_json(path)
    assert set(back) == set(sim.truths)
    for key, t in sim.truths.items():
        np.testing.assert_allclose(back[key].pairs[C.B_MINUS_A], t.pairs[C.B_MINUS_A],
                                   atol=1e-4)  # kept to 4 decimals
    bad = tmp_path / "bad.json"
    bad.write_text("{not json", encoding="utf-8")
    with pytest.raises(InputError, match="bad.json"):
        truths_from_json(bad)
    with pytest.raises(InputError, match="contrasts"):
        truths_from_json('{"calls": []}')
