"""P(heard) with far stations as the bootstrap clusters (spotkit.compare.heard; issue 15,
item 5: the heard-probability bars treated pairs as independent)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.compare.heard import heard_probability
from spotkit.errors import UsageError


def _bins_of_stations(n_bins=200, n_st=15, per_st=30, seed=8):
    """Each 100-km distance bin is one independent run: 15 far stations, 30 pairs each;
    each station hears A with its own probability drawn from Beta(2, 2) (mean 0.5,
    station-level heterogeneity), B with probability 0.8 everywhere."""
    rng = np.random.default_rng(seed)
    st = np.arange(n_bins * n_st)
    p_a = rng.beta(2.0, 2.0, st.size)
    far = np.repeat(st, per_st)
    return pd.DataFrame({
        C.CLUSTER: np.char.add("Q2S", far.astype(str)), C.BAND: "20m",
        C.DISTANCE: np.repeat(st // n_st, per_st) * 100.0 + 50.0,
        C.HEARD_A: rng.random(far.size) < p_a[far],
        C.HEARD_B: rng.random(far.size) < 0.8})


def test_station_resampling_covers_where_wilson_does_not():
    """Over 200 runs the far-station bootstrap covers the mean P(heard A) = 0.5 in most
    (nominal 95 %; percentile bootstrap with 15 stations somewhat less), the pairs' Wilson
    interval in about half (its width ignores the 0.22 spread between stations). The true
    values are from the generator; Wilson from spotkit.stats (checked against statsmodels
    in tests/stats/test_paired.py)."""
    from spotkit.stats.paired import wilson_interval

    pairs = _bins_of_stations()
    edges = np.arange(0.0, 200 * 100.0 + 1.0, 100.0)
    t = heard_probability(pairs, distance_edges=edges, n_boot=1000, seed=2)
    a = t[t[C.ANTENNA] == "A"]
    assert len(a) == 200 and (a[C.CLUSTERS] == 15).all() and (a[C.PAIRS] == 450).all()
    cover = np.mean((a[C.P_HEARD_LOW] <= 0.5) & (0.5 <= a[C.P_HEARD_HIGH]))
    wlo, whi = wilson_interval(a[C.HEARD].to_numpy(), a[C.PAIRS].to_numpy())
    cover_wilson = np.mean((wlo <= 0.5) & (0.5 <= whi))
    assert cover >= 0.88
    assert cover_wilson <= 0.70
    # never narrower than Wilson; B (no station spread) stays close to it
    assert np.all(a[C.P_HEARD_LOW].to_numpy() <= wlo + 1e-12)
    assert np.all(a[C.P_HEARD_HIGH].to_numpy() >= whi - 1e-12)


def test_point_estimate_counts_and_single_station_bins():
    far = ["Q2A"] * 4 + ["Q2B"] * 2 + ["Q2C"] * 3
    pairs = pd.DataFrame({C.CLUSTER: far, C.BAND: "40m",
                          C.DISTANCE: [100.0] * 6 + [2500.0] * 3,
                          C.HEARD_A: [1, 1, 0, 1, 0, 0, 1, 1, 0],
                          C.HEARD_B: [1, 0, 1, 1, 1, 1, 0, 1, 1]})
    pairs[[C.HEARD_A, C.HEARD_B]] = pairs[[C.HEARD_A, C.HEARD_B]].astype(bool)
    t = heard_probability(pairs, distance_edges=(0, 1000, 3000), n_boot=200)
    near = t[t[C.DISTANCE_MIN] == 0].set_index(C.ANTENNA)
    assert near.loc["A", C.PAIRS] == 6 and near.loc["A", C.HEARD] == 3
    assert near.loc["A", C.P_HEARD] == pytest.approx(0.5)
    assert near.loc["B", C.P_HEARD] == pytest.approx(5 / 6)
    assert near.loc["A", C.CLUSTERS] == 2
    far_bin = t[t[C.DISTANCE_MIN] == 1000]
    assert (far_bin[C.CLUSTERS] == 1).all()
    assert far_bin[C.P_HEARD_LOW].isna().all() and far_bin[C.P_HEARD_HIGH].isna().all()
    by_band = heard_probability(pairs, distance_edges=(0, 1000, 3000), by_band=True,
                                n_boot=200)
    assert set(by_band[C.BAND]) == {"40m"} and len(by_band) == 4
    with pytest.raises(UsageError, match="heard_a"):
        heard_probability(pairs.drop(columns=C.HEARD_A))
