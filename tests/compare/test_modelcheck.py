"""Measured against modelled: the pattern check on simulated vertical-vs-dipole data.

Truth: the simulator draws every path's gain from the shipped vertical (A, Q1ABC) and
dipole at 10 m (B, Q1ABD) patterns at the mirror-hop elevation angle of a 300 km layer, so
the patterns written by ``pattern_table`` are the true ones; a B pattern raised by 3 dB
below 15 deg is a wrong model at low angles.
"""
import numpy as np
import pytest
from scipy import stats as sps

from spotkit import columns as C
from spotkit.compare.estimate import compare_antennas
from spotkit.compare.modelcheck import check_patterns, predict_pairs
from spotkit.errors import UsageError
from spotkit.sim.antenna import dipole_antenna, pattern_table, vertical_antenna
from spotkit.sim.simulate import Propagation, simulate_spots

BY = "band,elevation,bearing"


def _patterns():
    pa = pattern_table(vertical_antenna(["20m"]), ["20m"])
    pb = pattern_table(dipole_antenna(["20m"]), ["20m"])
    shifted = pb.copy()
    shifted.loc[shifted[C.ELEVATION] < 15.0, C.GAIN] += 3.0
    return pa, pb, shifted


def _result(seed, n_boot=100, **sim_kw):
    sim = simulate_spots(days=1, n_receivers=150, bands=("20m",), seed=seed, **sim_kw)
    return compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", by=BY,
                            n_boot=n_boot, bearing_width_deg=90.0, seed=seed)


def test_true_pattern_accepted_shifted_one_rejected_at_low_angles():
    pa, pb, shifted = _patterns()
    res = _result(3)
    good = check_patterns(res, pa, pb)
    bad = check_patterns(res, pa, shifted)
    assert not good.rejected and good.p_value > 0.05
    assert not good.cells[C.DISAGREES].any()
    # cells carried by fewer than MIN_CLUSTERS receivers are set aside with the reason
    few = res.groups[res.groups[C.CLUSTERS] < 5]
    assert len(good.set_aside) == len(few.dropna(subset=[C.CI_LOW])) > 0
    assert all("clusters" in why for why in good.set_aside.values())
    assert len(good.cells) + len(good.set_aside) == int(res.groups[C.CI_LOW].notna().sum())
    assert bad.rejected and bad.p_value < 1e-6
    listed = bad.disagreeing
    assert len(listed) >= 1
    assert (listed[C.ELEVATION_MIN] < 15.0).all()  # only low-angle cells disagree
    # the tail is scipy's chi-square with one degree of freedom per cell (oracle)
    z = bad.cells[C.MISFIT_Z].to_numpy()
    assert bad.statistic == pytest.approx(float(np.sum(z ** 2)))
    assert bad.p_value == pytest.approx(float(sps.chi2.sf(np.sum(z ** 2), len(z))))
    assert bad.df == len(bad.cells)
    # Bonferroni critical value over the cells (scipy.stats.norm as the oracle)
    assert bad.critical_z == pytest.approx(float(sps.norm.ppf(1 - 0.05 / (2 * bad.df))))
    text = str(bad)
    assert "does not agree" in text and "yes" in text
    d = bad.to_dict()
    assert d["rejected"] is True and len(d["cells"]) == bad.df


def test_prediction_range_contains_the_nominal_prediction():
    pa, pb, _ = _patterns()
    res = _result(4, n_boot=30)
    chk = check_patterns(res, pa, pb)
    c = chk.cells
    assert (c[C.PREDICTED_LOW] <= c[C.PREDICTED] + 1e-9).all()
    assert (c[C.PREDICTED] <= c[C.PREDICTED_HIGH] + 1e-9).all()
    inside = (c[C.B_MINUS_A] >= c[C.PREDICTED_LOW]) & (c[C.B_MINUS_A] <= c[C.PREDICTED_HIGH])
    assert (c.loc[inside, C.MISFIT] == 0).all()
    # a single height gives a point prediction: the range collapses
    point = check_patterns(res, pa, pb, layer_heights_km=(300.0, 300.0))
    assert np.allclose(point.cells[C.PREDICTED_LOW], point.cells[C.PREDICTED_HIGH])


def test_prediction_is_the_pattern_difference_at_the_hop_angle():
    # oracle: the closed-form elevation angle of one hop, theta = D / (2 R0)
    import pandas as pd
    pa, pb, _ = _patterns()
    pairs = pd.DataFrame({C.BAND: ["20m"], C.DISTANCE: [1000.0], C.BEARING: [90.0]})
    r0, h = 6371.0, 300.0
    th = 1000.0 / (2 * r0)
    el = np.degrees(np.arctan2(np.cos(th) - r0 / (r0 + h), np.sin(th)))
    want = (dipole_antenna(["20m"]).gain_db("20m", el, 90.0, 1000.0)
            - vertical_antenna(["20m"]).gain_db("20m", el, 0.0, 1000.0))
    got = predict_pairs(pairs, pa, pb, layer_heights_km=[h])
    assert got[0, 0] == pytest.approx(float(want), abs=0.1)


def test_needs_groups_and_a_sane_height_range():
    pa, pb, _ = _patterns()
    sim = simulate_spots(days=0.1, n_receivers=30, bands=("20m",), seed=1)
    res = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=20)
    with pytest.raises(UsageError, match="needs groups"):
        check_patterns(res, pa, pb)
    res = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=20,
                           by="elevation", min_pairs=5)
    with pytest.raises(UsageError, match="layer heights"):
        check_patterns(res, pa, pb, layer_heights_km=(400.0, 250.0))


@pytest.mark.slow
def test_level_and_power_over_runs_with_heavy_fading_and_soft_decoders():
    """Over runs that break the model's normal-tail, hard-threshold assumptions (t with 4
    df fast fading, soft decoders 1 dB wide): the true patterns are rejected in at most
    2 of 10 runs (level 5 %, conservative by the height range) and the shifted one in
    every run."""
    pa, pb, shifted = _patterns()
    rejected_true, rejected_shifted = 0, 0
    for seed in range(10):
        res = _result(100 + seed, n_boot=60, propagation=Propagation(fast_fading_df=4),
                      detection_width_db=1.0)
        rejected_true += check_patterns(res, pa, pb).rejected
        rejected_shifted += check_patterns(res, pa, shifted).rejected
    assert rejected_true <= 2
    assert rejected_shifted == 10


def test_bands_without_a_pattern_are_set_aside():
    pa, pb, _ = _patterns()
    sim = simulate_spots(days=0.5, n_receivers=100, bands=("20m", "40m"), seed=7)
    res = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", by=BY, n_boot=30,
                           bearing_width_deg=90.0)
    chk = check_patterns(res, pa, pb)
    assert set(chk.cells[C.BAND]) == {"20m"}
    assert any("no modelled pattern for band 40m" in why for why in chk.set_aside.values())
    from spotkit.errors import InputError
    with pytest.raises(InputError, match="no band in common"):
        check_patterns(res, pa.assign(band="10m"), pb.assign(band="10m"))
