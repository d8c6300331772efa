"""Tests of the simulator's decoder and station regimes (soft detection curve, decision on
the raw SNR, heavy-tailed fading, differing thresholds, receiver-level spread of B-A)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from spotkit import columns as C
from spotkit.errors import UsageError
from spotkit.sim.simulate import Propagation, decode, simulate_spots
from spotkit.sim.truth import Truth

SMALL = dict(days=1, n_receivers=200, n_transmitters=120)


def _keys(spots, call_col, call):
    sel = spots[call_col] == call
    far = C.RX_CALL if call_col == C.TX_CALL else C.TX_CALL
    return set(zip(spots.loc[sel, far].astype(str), spots.loc[sel, C.SLOT],
                   spots.loc[sel, C.BAND].astype(str), strict=True))


def _truth_keys(truth, heard, far):
    tr = truth.pairs[truth.pairs[heard]]
    return set(zip(tr[far].astype(str), tr[C.SLOT], tr[C.BAND].astype(str), strict=True))


# --- the detection curve ------------------------------------------------------------------
def test_decode_hard_threshold():
    assert decode([-28.5, -28.0, -27.9], -28.0).tolist() == [False, True, True]
    assert decode(np.array([[-30.0], [-26.0]]), np.array([-29.0, -27.0])).tolist() == [
        [False, False], [True, True]]
    with pytest.raises(UsageError, match="generator"):
        decode([-28.0], -28.0, 1.0)


@pytest.mark.parametrize("offset_db", [-2.0, -1.0, 0.0, 0.5, 1.0, 2.0])
def test_decode_soft_curve_is_the_normal_cdf(offset_db):
    # reference: scipy.stats.norm.cdf; 200,000 draws give an SE below 0.0012, allow 0.005
    width = 1.5
    ok = decode(np.full(200_000, -28.0 + offset_db * width), -28.0, width,
                np.random.default_rng(5))
    assert ok.mean() == pytest.approx(stats.norm.cdf(offset_db), abs=0.005)


def test_soft_curve_thins_each_whole_db_level_by_phi():
    # same seed: the same SNRs (the curve's draws have a stream of their own). A hard
    # threshold at -30 keeps every report from -30 dB up; a soft curve with its 50 % point
    # at -28 dB and width 1 dB keeps a share Phi(v + 28) of those at report v (decision on
    # the rounded report). Reference: scipy.stats.norm.cdf; 4 binomial SE.
    hard = simulate_spots("simultaneous", seed=3, threshold_db=-30, **SMALL)
    soft = simulate_spots("simultaneous", seed=3, threshold_db=-28, detection_width_db=1.0,
                          **SMALL)
    both = hard.spots.merge(soft.spots, on=C.REPORT_KEY[:-2] + [C.POWER], how="inner",
                            suffixes=("", "_soft"))
    np.testing.assert_array_equal(both[C.SNR], both[C.SNR + "_soft"])
    for v in (-30, -29, -28, -27, -26):
        n = int((hard.spots[C.SNR] == v).sum())
        k = int((soft.spots[C.SNR] == v).sum())
        p = stats.norm.cdf(v + 28.0)
        assert n > 400
        assert k / n == pytest.approx(p, abs=4 * np.sqrt(p * (1 - p) / n) + 1e-9), v
    # 3 dB and more above the 50 % point, Phi >= 0.9987: almost every report stays
    strong = (hard.spots[C.SNR] >= -25).sum()
    assert (soft.spots[C.SNR] >= -25).sum() >= 0.99 * strong


def test_raw_decision_drops_only_reports_exactly_at_the_threshold():
    # a raw SNR in [t - 0.5, t) rounds up to t: decided on the rounded report it is kept,
    # decided on the raw SNR it is lost. Everything else is the same draw for draw.
    rounded = simulate_spots("simultaneous", seed=4, threshold_db=-28, **SMALL)
    raw = simulate_spots("simultaneous", seed=4, threshold_db=-28, threshold_on="raw", **SMALL)
    key = [C.SLOT, C.TX_CALL, C.RX_CALL, C.BAND]
    m = rounded.spots.merge(raw.spots[key].assign(_raw=True), on=key, how="left")
    kept = m["_raw"].fillna(False).astype(bool).to_numpy()
    assert len(raw.spots) == kept.sum()  # raw's reports are a subset
    lost = m.loc[~kept, C.SNR]
    assert len(lost) > 100 and (lost == -28).all()
    # about half of the -28 reports came from [-28.5, -28) (the density of SNRs near the
    # threshold is smooth); between 30 and 70 %
    share = len(lost) / (rounded.spots[C.SNR] == -28).sum()
    assert 0.3 < share < 0.7
    assert raw.spots[C.SNR].min() == -28


# --- fading, thresholds and receiver-level B-A ----------------------------------------------
def _pair_differences(sim):
    """Per-W B-A of both-heard pairs on strong paths, minus each path's mean."""
    sp = sim.spots
    median = sp.groupby([C.RX_CALL, C.BAND], observed=True)[C.SNR].transform("median")
    sp = sp[median >= -8]  # 20 dB above every threshold: no censoring of the pair
    wide = sp.assign(w=sp[C.SNR] - (sp[C.POWER] - 30)).pivot_table(
        index=[C.RX_CALL, C.SLOT, C.BAND], columns=C.TX_CALL, values="w",
        observed=True).dropna()
    d = wide[sim.b] - wide[sim.a]
    return (d - d.groupby(level=[0, 2]).transform("mean")).to_numpy()


def test_heavy_tailed_fading_has_heavy_tails_and_the_same_spread():
    normal = _pair_differences(simulate_spots("simultaneous", seed=6, **SMALL))
    heavy = _pair_differences(simulate_spots(
        "simultaneous", seed=6, propagation=Propagation(fast_fading_df=3), **SMALL))
    assert normal.size > 3000 and heavy.size > 3000
    # normal fading: excess kurtosis of the difference of two normals plus whole-dB
    # rounding is near 0; Student t with 3 df has an infinite fourth moment, so the sample
    # excess kurtosis is large (scipy.stats.kurtosis, Fisher's definition)
    assert abs(stats.kurtosis(normal)) < 0.5
    assert stats.kurtosis(heavy) > 2.0
    # same SD by construction (t scaled by sqrt((df - 2) / df)); the t3 sample SD
    # converges slowly, so within 25 %
    assert heavy.std() == pytest.approx(normal.std(), rel=0.25)
    with pytest.raises(UsageError, match="above 2"):
        simulate_spots("simultaneous", propagation=Propagation(fast_fading_df=2.0), **SMALL)


def test_threshold_spread_adds_a_normal_offset_per_receiver():
    base = simulate_spots("simultaneous", seed=8, **SMALL)
    spread = simulate_spots("simultaneous", seed=8, threshold_sd_db=1.5, **SMALL)
    st0, st1 = (s.stations[s.stations["role"] == "receiver"].set_index("call")[C.THRESHOLD]
                for s in (base, spread))
    off = (st1 - st0[st1.index]).to_numpy()
    # 200 receivers: the sample SD is within 15 % (about 3 SE) of 1.5 dB, mean within 3 SE
    assert off.std(ddof=1) == pytest.approx(1.5, rel=0.15)
    assert abs(off.mean()) < 3 * 1.5 / np.sqrt(off.size)
    # hard threshold on the rounded report: no report below its receiver's threshold
    thr = spread.spots[C.RX_CALL].astype(str).map(st1).to_numpy()
    assert (spread.spots[C.SNR].to_numpy() >= thr).all()


@pytest.mark.parametrize("design", ["simultaneous", "receive"])
def test_difference_spread_is_in_the_truth_and_in_the_reports(design):
    sim = simulate_spots(design, seed=9, difference_db=1.0, difference_sd_db=1.0,
                         power_a_dbm=37, power_b_dbm=37, **SMALL)
    far = C.RX_CALL if design == "simultaneous" else C.TX_CALL
    per_far = sim.truth.pairs.groupby(far, observed=True)[C.B_MINUS_A].agg(["mean", "std"])
    # one effect per far station, the same on every band and slot
    assert (per_far["std"].fillna(0) < 1e-9).all()
    n = len(per_far)
    assert n > 80
    assert per_far["mean"].std() == pytest.approx(1.0, rel=0.2)
    assert per_far["mean"].mean() == pytest.approx(1.0, abs=3 / np.sqrt(n))
    # the reports carry it: per far station, the mean per-W B-A of its both-heard pairs on
    # strong paths follows its true difference
    sp = sim.spots
    side = C.TX_CALL if design == "simultaneous" else C.RX_CALL
    sp = sp[sp[C.SNR] >= -15]
    wide = sp.assign(w=sp[C.SNR] - (sp[C.POWER] - 30)).pivot_table(
        index=[far, C.SLOT, C.BAND], columns=side, values="w", observed=True).dropna()
    d = (wide[sim.b] - wide[sim.a]).groupby(level=0).agg(["mean", "size"])
    d = d[d["size"] >= 20]
    assert len(d) > 30
    r = np.corrcoef(d["mean"], per_far.loc[d.index, "mean"])[0, 1]
    assert r > 0.8


def test_receivers_genuinely_differ_with_the_default_antennas():
    # a ground-mounted vertical against a horizontal dipole: the true B-A depends on the
    # bearing and elevation of each path, so the per-receiver truth spreads by dB
    sim = simulate_spots("simultaneous", seed=3, **SMALL)
    per_rx = sim.truth.pairs.groupby([C.RX_CALL, C.BAND], observed=True)[C.B_MINUS_A].first()
    assert per_rx.std() > 2.0
    assert per_rx.nunique() > 0.9 * len(per_rx)


# --- the truth stays right under every regime ------------------------------------------------
REGIMES = {
    "soft": dict(detection_width_db=1.0),
    "raw": dict(threshold_on="raw"),
    "heavy": dict(propagation=Propagation(fast_fading_df=3)),
    "thresholds": dict(threshold_sd_db=1.5),
    "difference": dict(difference_sd_db=1.0),
    "all": dict(detection_width_db=1.0, threshold_on="raw",
                propagation=Propagation(fast_fading_df=3), threshold_sd_db=1.5,
                difference_sd_db=1.0, power_a_dbm=30, power_b_dbm=37),
}


@pytest.mark.parametrize("design", ["simultaneous", "receive"])
@pytest.mark.parametrize("regime", list(REGIMES))
def test_truth_matches_the_spots_under_every_regime(design, regime):
    sim = simulate_spots(design, seed=12, days=0.5, n_receivers=80, n_transmitters=60,
                         **REGIMES[regime])
    side, far = (C.TX_CALL, C.RX_CALL) if design == "simultaneous" else (C.RX_CALL, C.TX_CALL)
    assert _keys(sim.spots, side, sim.a) == _truth_keys(sim.truth, C.HEARD_A, far)
    assert _keys(sim.spots, side, sim.b) == _truth_keys(sim.truth, C.HEARD_B, far)
    tr = sim.truth.pairs
    assert (tr[C.HEARD_A] | tr[C.HEARD_B]).all() and len(tr) > 100
    # the JSON round trip keeps the regime's truth
    back = Truth.from_json(sim.truth.to_json())
    np.testing.assert_allclose(back.pairs[C.B_MINUS_A], tr[C.B_MINUS_A], atol=1e-4)
    for key in ("detection_width_db", "threshold_on", "threshold_sd_db", "difference_sd_db"):
        assert key in sim.params


def test_regime_arguments_are_checked():
    for kw in (dict(detection_width_db=-1.0), dict(threshold_sd_db=np.nan),
               dict(difference_sd_db=-0.5)):
        with pytest.raises(UsageError, match="dB"):
            simulate_spots("simultaneous", **kw, **SMALL)
    with pytest.raises(UsageError, match="rounded"):
        simulate_spots("simultaneous", threshold_on="floor", **SMALL)


# --- command line -------------------------------------------------------------------------------
def test_cli_simulate_regime_options(tmp_path, capsys):
    from spotkit.cli import main

    out = tmp_path / "soft.csv"
    code = main(["simulate", "--days", "0.5", "--receivers", "80", "--seed", "2",
                 "--threshold", "-28", "--detection-width", "1.5", "--threshold-on", "raw",
                 "--fading-df", "3", "--threshold-spread", "0.5", "--difference-spread", "1",
                 "--difference-db", "1", "-o", str(out)])
    assert code == 0
    assert "spotkit compare" in capsys.readouterr().out
    ingest = pytest.importorskip("spotkit.io.ingest")
    snr = ingest.read_spots(out).spots[C.SNR]
    assert (snr < -28).any()  # a soft curve delivers some reports below its 50 % point
    truth = Truth.from_json(tmp_path / "soft.truth.json")
    per_rx = truth.pairs.groupby(C.RX_CALL, observed=True)[C.B_MINUS_A].first()
    assert per_rx.std() > 0.5  # the per-receiver spread is in the truth
    for bad in (["--fading-df", "2"], ["--detection-width", "-1"],
                ["--threshold-on", "floor"]):
        assert main(["simulate", *bad, "-o", str(tmp_path / "x.csv")]) == 2
