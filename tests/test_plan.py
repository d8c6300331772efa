"""Experiment planning: schedules, run length, audit of a finished run."""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, stats

from spotkit import columns as C
from spotkit.errors import InputError, UsageError
from spotkit.pairing import read_schedule, schedule_antennas
from spotkit.plan import (
    audit_schedule,
    censoring_information,
    duration_by_simulation,
    duration_closed_form,
    duration_table,
    make_schedule,
    pairs_needed,
    pilot_parameters,
    plot_duration_tradeoff,
    power_closed_form,
    schedule_balance,
    write_schedule,
)

START = "2026-12-01T00:00Z"


# --- schedules ---------------------------------------------------------------------------
@pytest.mark.parametrize("band_hop", [False, True])
@pytest.mark.parametrize("block_slots", [2, 4, 6])
@pytest.mark.parametrize("bands", [["20m"], ["20m", "10m"], ["40m", "20m", "10m"]])
def test_schedule_is_balanced_per_hour_band_antenna(bands, block_slots, band_hop):
    s = make_schedule(START, 2, bands, block_slots=block_slots, band_hop=band_hop, seed=3)
    bal = schedule_balance(s)
    # exact: every antenna has the same number of slots in every clock hour and band
    assert (bal["A"] == bal["B"]).all()
    assert (bal["A"] > 0).all()
    hours = pd.to_datetime(s[C.SCHEDULE_START]).dt.floor("h")
    assert hours.nunique() == 48
    assert set(s[C.BAND]) == set(bands)
    # every band appears in every clock hour
    assert len(bal) == 48 * len(bands)
    if band_hop:  # one transmitter: one row per slot, slots back to back
        assert len(s) == 48 * 30
        assert not s[C.SCHEDULE_START].duplicated().any()
    else:  # every band in every slot, same antenna on all bands
        assert len(s) == 48 * 30 * len(bands)
        assert (s.groupby(C.SCHEDULE_START)[C.ANTENNA].nunique() == 1).all()
    step = (s[C.SCHEDULE_END] - s[C.SCHEDULE_START]).unique()
    assert list(step) == [pd.Timedelta(minutes=2)]
    # slots start on even UTC minutes (common practice for the 2-minute beacon modes)
    assert (s[C.SCHEDULE_START].dt.minute % 2 == 0).all()


def test_blocks_of_two_keep_a_and_b_next_to_each_other():
    s = make_schedule(START, 1, ["20m", "10m"], block_slots=2, band_hop=True, seed=5)
    # in band-hop mode each block is one band: slots 2k and 2k+1 share a band and differ
    # in antenna
    ant = s[C.ANTENNA].to_numpy().reshape(-1, 2)
    band = s[C.BAND].to_numpy().reshape(-1, 2)
    assert (band[:, 0] == band[:, 1]).all()
    assert (ant[:, 0] != ant[:, 1]).all()
    # and the order inside the blocks is random: both orders occur often
    first_a = (ant[:, 0] == "A").mean()
    assert 0.35 < first_a < 0.65


def test_schedule_reproducible_from_seed_and_seed_matters():
    a = make_schedule(START, 1, "20m,10m", band_hop=True, seed=11)
    b = make_schedule(START, 1, "20m,10m", band_hop=True, seed=11)
    c = make_schedule(START, 1, "20m,10m", band_hop=True, seed=12)
    pd.testing.assert_frame_equal(a, b)
    assert not a[C.ANTENNA].equals(c[C.ANTENNA])
    assert not a[C.BAND].equals(c[C.BAND])
    # a different seed changes the order, not the balance
    assert (schedule_balance(c)["A"] == schedule_balance(c)["B"]).all()


@pytest.mark.parametrize("kwargs", [
    dict(start="2026-12-01T00:10Z"),        # not on the hour
    dict(block_slots=3),                     # odd block
    dict(block_slots=0),
    dict(slot_minutes=4),                    # 15 slots per hour: cannot balance an hour
    dict(days=0),
    dict(days=0.01),                          # not whole hours
    dict(bands="20m,11m"),                    # unknown band
    dict(bands="20m,20m"),
])
def test_schedule_bad_arguments(kwargs):
    args = dict(start=START, days=1, bands="20m")
    args.update(kwargs)
    with pytest.raises(UsageError):
        make_schedule(args.pop("start"), args.pop("days"), args.pop("bands"), **args)


def test_schedule_csv_is_read_back_by_compare(tmp_path):
    s = make_schedule(START, 1, "20m,10m", band_hop=True, seed=2)
    path = write_schedule(s, tmp_path / "schedule.csv")
    back = read_schedule(path)  # the reader `spotkit compare --schedule FILE` uses
    assert len(back) == len(s)
    assert (back[C.SCHEDULE_START].to_numpy() == s[C.SCHEDULE_START].to_numpy()).all()
    assert (back[C.SCHEDULE_END].to_numpy() == s[C.SCHEDULE_END].to_numpy()).all()
    assert (back[C.ANTENNA].to_numpy() == s[C.ANTENNA].to_numpy()).all()
    assert (back[C.BAND].to_numpy() == s[C.BAND].to_numpy()).all()
    # and compare assigns every scheduled slot the planned antenna (mid-slot times too)
    mid = s[C.SCHEDULE_START] + pd.Timedelta(seconds=30)
    code = schedule_antennas(mid, s[C.BAND], str(path))
    assert (code == (s[C.ANTENNA] == "B").to_numpy().astype(int)).all()
    # a band the schedule does not have in that slot is not covered
    other = np.where(s[C.BAND] == "20m", "10m", "20m")
    assert (schedule_antennas(s[C.SCHEDULE_START], other, str(path)) == -1).all()


# --- run length: closed form ---------------------------------------------------------------
def test_pairs_needed_against_textbook_formula():
    # Normal-approximation sample size of a paired (one-sample) mean difference,
    # n = ((z_(1-alpha/2) + z_(1-beta)) sigma / delta)^2 - Chow, Shao & Wang, Sample Size
    # Calculations in Clinical Research, 2nd ed. (2008), sec. 3.1 (from memory).
    # Worked number: alpha 0.05, power 0.8, sigma 3 dB, delta 1 dB -> 70.6 -> 71 pairs;
    # z values recomputed with scipy.stats.norm.ppf as the oracle. Tolerance 0.01 pairs.
    z = stats.norm.ppf(0.975) + stats.norm.ppf(0.8)
    n = pairs_needed(1.0, sigma_db=3.0, alpha=0.05, power=0.8)
    assert n == pytest.approx((z * 3.0 / 1.0) ** 2, abs=1e-9)
    assert n == pytest.approx(70.6, abs=0.05)
    assert math.ceil(n) == 71
    # statsmodels' one-sample normal power solver (NormalIndPower with ratio=0) as a
    # second oracle; its root finder is good to about 1e-3 pairs
    from statsmodels.stats.power import NormalIndPower
    sm = NormalIndPower().solve_power(effect_size=1 / 3, alpha=0.05, power=0.8, ratio=0)
    assert n == pytest.approx(sm, abs=0.01)
    # sign of the effect does not matter; halving it quadruples n
    assert pairs_needed(-1.0, sigma_db=3.0) == pytest.approx(n)
    assert pairs_needed(0.5, sigma_db=3.0) == pytest.approx(4 * n)


@pytest.mark.parametrize("hours", [1.0, 5.0, 20.0])
def test_power_closed_form_against_statsmodels(hours):
    # one-sample two-sided z-test power (statsmodels NormalIndPower, ratio=0) at
    # n = hours x 10 pairs/h, effect size delta/sigma = 1/3; tolerance 1e-6 in power
    from statsmodels.stats.power import NormalIndPower
    got = power_closed_form(hours, 1.0, sigma_db=3.0, pairs_per_hour=10.0)
    want = NormalIndPower().power(effect_size=1 / 3, nobs1=hours * 10, alpha=0.05, ratio=0)
    assert got["power"].iloc[0] == pytest.approx(want, abs=1e-6)
    # CI width: 2 z_(0.975) sigma / sqrt(n)
    assert got["ci_width_db"].iloc[0] == pytest.approx(
        2 * stats.norm.ppf(0.975) * 3.0 / math.sqrt(hours * 10), rel=1e-12)


def test_duration_without_clustering_or_censoring_is_n0_over_rate():
    d = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=25.0)
    assert d.pairs == pytest.approx(pairs_needed(1.0, sigma_db=3.0))
    assert d.hours == pytest.approx(d.pairs / 25.0)
    assert d.design_effect == pytest.approx(1.0)
    assert d.censoring_factor == 1.0
    # at that run length the closed-form power is the asked power (plus the far tail)
    p = power_closed_form(d.hours, 1.0, sigma_db=3.0, pairs_per_hour=25.0)["power"].iloc[0]
    assert p == pytest.approx(0.8, abs=1e-6)


def test_duration_design_effect_is_kish():
    # Kish (1965), design effect of cluster sampling 1 + (m - 1) rho (from memory): the
    # answer N must satisfy sigma^2 / N * deff = (delta / (z_a + z_b))^2 with m = N / R.
    rho, R, sigma, delta = 0.05, 40.0, 3.0, 1.0
    d = duration_closed_form(delta, sigma_db=sigma, pairs_per_hour=10.0, icc=rho, clusters=R)
    m = d.pairs / R
    assert d.design_effect == pytest.approx(1 + (m - 1) * rho, rel=1e-12)
    z = stats.norm.ppf(0.975) + stats.norm.ppf(0.8)
    assert sigma ** 2 / d.pairs * d.design_effect == pytest.approx((delta / z) ** 2, rel=1e-9)
    assert d.pairs > pairs_needed(delta, sigma_db=sigma)


def test_duration_infeasible_when_receivers_are_too_few():
    # between-receiver floor sigma^2 rho / R = 9 * 0.5 / 5 = 0.9 dB^2 exceeds the allowed
    # variance (1 / 2.80)^2 = 0.127 dB^2: no run length is enough
    d = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=10.0, icc=0.5, clusters=5)
    assert not d.feasible and math.isinf(d.hours)
    assert "receivers" in str(d)
    with pytest.raises(UsageError):
        duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=10.0, icc=0.1)


def _tobit_information_by_quadrature(p_a, p_b):
    """Fisher information of N(0, 1) censored below c1 (mass p_a) and above c2 (mass p_b),
    for (mu, sigma), computed as E[score score^T] by numerical integration."""
    c1 = stats.norm.ppf(p_a) if p_a > 0 else -np.inf
    c2 = stats.norm.isf(p_b) if p_b > 0 else np.inf

    def exact(f):
        return integrate.quad(lambda y: f(y) * stats.norm.pdf(y), c1, c2)[0]

    info = np.array([[exact(lambda y: y * y), exact(lambda y: y * (y * y - 1))],
                     [0.0, exact(lambda y: (y * y - 1) ** 2)]])
    info[1, 0] = info[0, 1]
    if p_a > 0:  # log Phi((c1 - mu) / sigma): d/dmu = -L1, d/dsigma = -L1 c1
        s = -stats.norm.pdf(c1) / p_a * np.array([1.0, c1])
        info += p_a * np.outer(s, s)
    if p_b > 0:  # log(1 - Phi((c2 - mu) / sigma)): d/dmu = L2, d/dsigma = L2 c2
        s = stats.norm.pdf(c2) / p_b * np.array([1.0, c2])
        info += p_b * np.outer(s, s)
    return info


@pytest.mark.parametrize("p", [0.05, 0.2, 0.5, 0.8])
@pytest.mark.parametrize("share_b", [0.0, 0.3, 0.5, 1.0])
def test_censoring_information_against_quadrature(p, share_b):
    # Fisher information of a doubly censored normal with mu and sigma both estimated
    # (Tobit likelihood, Tobin 1958): information about mu = 1 / [I^-1]_(mu mu), from the
    # variance of the score by numerical integration - independent of the module's closed
    # moments. Tolerance 1e-7 (relative information).
    info = _tobit_information_by_quadrature(p * (1 - share_b), p * share_b)
    want = 1.0 / np.linalg.inv(info)[0, 0]
    assert censoring_information(p, only_b_share=share_b) == pytest.approx(want, abs=1e-7)


def test_censoring_information_known_values():
    # half the pairs censored on one side: c = 0, I_mm = 1/2 + 1/pi, I_ms = phi(0),
    # I_ss = 1 -> 1/2 + 1/(2 pi) exactly (derived, not read); symmetric two-sided censoring
    # has I_ms = 0 by symmetry
    assert censoring_information(0.5, only_b_share=0.0) == pytest.approx(
        0.5 + 1 / (2 * math.pi), abs=1e-12)
    assert censoring_information(0.5, only_b_share=1.0) == pytest.approx(
        0.5 + 1 / (2 * math.pi), abs=1e-12)
    assert censoring_information(0.0) == 1.0
    r = censoring_information(np.linspace(0, 0.99, 50))
    assert np.all(np.diff(r) < 0)
    with pytest.raises(UsageError):
        censoring_information(1.0)


@pytest.mark.parametrize("p, share_b", [(0.5, 0.0), (0.4, 0.5), (0.3, 0.8)])
def test_censoring_information_by_simulation(p, share_b):
    # Monte Carlo: 1000 samples of 400 censored N(0, 1) values fitted by the package's
    # Tobit MLE (stats.censored_normal_mle_batch; values rounded to 0.05 sigma, which adds
    # 0.0002 to the variance); 1 / (n Var(mu_hat)) must match the information within
    # 3 Monte-Carlo standard errors of a variance, 3 sqrt(2 / 999) = 13.4 %.
    from spotkit.stats import censored_normal_mle_batch

    rng = np.random.default_rng(7)
    B, n, step = 1000, 400, 0.05
    p_a, p_b = p * (1 - share_b), p * share_b
    c1 = stats.norm.ppf(p_a) if p_a > 0 else -np.inf
    c2 = stats.norm.isf(p_b) if p_b > 0 else np.inf
    grid = np.arange(-6, 6 + step / 2, step)
    y = rng.standard_normal((B, n))
    low, high = y <= c1, y >= c2
    idx = np.clip(np.rint((y + 6) / step).astype(int), 0, grid.size - 1)
    w = np.zeros((B, grid.size + 2))
    rows = np.broadcast_to(np.arange(B)[:, None], y.shape)
    ex = ~low & ~high
    np.add.at(w, (rows[ex], idx[ex]), 1.0)
    w[:, -2], w[:, -1] = low.sum(axis=1), high.sum(axis=1)
    values = np.r_[grid, c1 if np.isfinite(c1) else 0.0, c2 if np.isfinite(c2) else 0.0]
    kinds = np.r_[np.zeros(grid.size, int), 1, -1]
    mu, _ = censored_normal_mle_batch(values, kinds, w, sigma_floor=0.01)
    got = 1.0 / (n * np.var(mu, ddof=1))
    want = float(censoring_information(p, only_b_share=share_b))
    assert got == pytest.approx(want, rel=0.134)


def test_censoring_raises_needed_pairs():
    plain = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=10.0)
    cens = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=10.0, censored_fraction=0.5)
    r = float(censoring_information(0.5))
    assert cens.pairs == pytest.approx(plain.pairs / r, rel=1e-9)
    assert cens.censoring_factor == r < 1
    given = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=10.0,
                                 censored_fraction=0.5, censoring_factor=0.5)
    assert given.pairs == pytest.approx(2 * plain.pairs, rel=1e-9)


@pytest.mark.parametrize("kwargs", [dict(alpha=0), dict(power=1.0), dict(sigma_db=0),
                                    dict(pairs_per_hour=0), dict(effect_db=0)])
def test_duration_bad_arguments(kwargs):
    args = dict(effect_db=1.0, sigma_db=3.0, pairs_per_hour=10.0)
    args.update(kwargs)
    with pytest.raises(UsageError):
        duration_closed_form(args.pop("effect_db"), **args)


# --- audit -------------------------------------------------------------------------------
P_A, P_B = 37.0, 30.0  # the two antennas run at different powers: the power is the marker


def _in(df, cols, keys) -> np.ndarray:
    """Rows of ``df`` whose (cols) tuple is in the set ``keys``."""
    idx = pd.MultiIndex.from_arrays([df[c].astype(object).to_numpy() for c in cols])
    return np.asarray(idx.isin(list(keys)), dtype=bool)


def _spots_following(schedule, rng, call="Q1ABC", per_slot=(1, 6)):
    """Reports of ``call`` in every scheduled slot, power telling the antenna."""
    n = rng.integers(per_slot[0], per_slot[1] + 1, size=len(schedule))
    rows = schedule.loc[schedule.index.repeat(n)].reset_index(drop=True)
    rx = np.array([f"Q{d}R{c}" for d in range(2, 8) for c in "ABCDEFGH"])
    return pd.DataFrame({
        C.SLOT: rows[C.SCHEDULE_START].astype(C.UTC_DTYPE),
        C.TX_CALL: pd.Categorical([call] * len(rows)),
        C.RX_CALL: rng.choice(rx, size=len(rows)),
        C.BAND: rows[C.BAND].to_numpy(),
        C.SNR: rng.integers(-28, 5, size=len(rows)).astype(float),
        C.POWER: np.where(rows[C.ANTENNA] == "A", P_A, P_B),
    })


def test_audit_of_a_clean_run_finds_nothing(rng):
    s = make_schedule(START, 1, "20m,10m", band_hop=True, seed=4)
    spots = _spots_following(s, rng)
    r = audit_schedule(spots, s, "q1abc")
    assert r.markers == {"A": P_A, "B": P_B}  # inferred from the data
    assert r.summary["slots_ok"] == len(s)
    assert r.summary["gaps"] == r.summary["wrong_antenna"] == 0
    assert r.summary["off_schedule_reports"] == 0
    assert r.summary["hours_one_antenna"] == 0
    assert r.summary["efficiency"] == pytest.approx(1.0)
    # planned effective pairs: half the slots
    assert r.summary["effective_pairs_planned"] == pytest.approx(len(s) / 2)
    assert r.to_frame().empty


def test_audit_finds_every_deliberately_broken_slot(rng, tmp_path):
    s = make_schedule(START, 1, "20m,10m", band_hop=True, seed=9)
    spots = _spots_following(s, rng)
    hour = s[C.SCHEDULE_START].dt.floor("h")
    spare = np.flatnonzero((hour != hour.iloc[0] + pd.Timedelta(hours=5)).to_numpy())
    pick = rng.choice(spare, size=24, replace=False)
    gap_i, wrong_i, ghost_i = pick[:8], pick[8:16], pick[16:]
    # 1. gaps: all reports of 8 slots removed
    SB = [C.SLOT, C.BAND]
    gap_slots = set(zip(s[C.SCHEDULE_START].iloc[gap_i], s[C.BAND].iloc[gap_i]))
    spots = spots[~_in(spots, SB, gap_slots)].reset_index(drop=True)
    # 2. wrong antenna: 8 slots run at the other antenna's power
    wrong_slots = set(zip(s[C.SCHEDULE_START].iloc[wrong_i], s[C.BAND].iloc[wrong_i]))
    hit = _in(spots, SB, wrong_slots)
    spots.loc[hit, C.POWER] = np.where(spots.loc[hit, C.POWER] == P_A, P_B, P_A)
    # 3. off schedule: the station heard on the band it was not scheduled on (band hop)
    ghost_slots = set(zip(s[C.SCHEDULE_START].iloc[ghost_i], s[C.BAND].iloc[ghost_i]))
    ghost = spots[_in(spots, SB, ghost_slots)].copy()
    ghost[C.BAND] = np.where(ghost[C.BAND] == "20m", "10m", "20m")
    #    and after the schedule ended
    late = spots.iloc[:3].copy()
    late[C.SLOT] = pd.Timestamp("2026-12-02T00:10Z")
    # 4. one clock hour x band in which every B slot is silent
    h5 = hour.iloc[0] + pd.Timedelta(hours=5)
    b5 = s[(hour == h5) & (s[C.BAND] == "10m") & (s[C.ANTENNA] == "B")]
    silent = set(zip(b5[C.SCHEDULE_START], b5[C.BAND]))
    spots = spots[~_in(spots, SB, silent)]
    spots = pd.concat([spots, ghost, late], ignore_index=True)
    spots = spots.sample(frac=1.0, random_state=1).reset_index(drop=True)
    spots[C.BAND] = spots[C.BAND].astype("category")

    path = write_schedule(s, tmp_path / "plan.csv")
    r = audit_schedule(spots, path, "Q1ABC")
    sl = r.slots
    found = lambda status: set(zip(sl.loc[sl["status"] == status, C.SLOT],  # noqa: E731
                                   sl.loc[sl["status"] == status, C.BAND]))
    assert found("gap") == gap_slots | silent
    assert found("wrong_antenna") == wrong_slots
    assert found("unknown_power") == set()
    assert r.summary["off_schedule_reports"] == len(ghost) + 3
    off = r.off_schedule
    assert set(off.loc[off[C.REJECT_REASON] == "not scheduled", C.SLOT]) == {
        pd.Timestamp("2026-12-02T00:10Z")}
    assert set(zip(off.loc[off[C.REJECT_REASON] != "not scheduled", C.SLOT],
                   off.loc[off[C.REJECT_REASON] != "not scheduled", C.BAND])) == set(
        zip(ghost[C.SLOT], ghost[C.BAND].astype(str)))
    one = r.hours[r.hours["one_antenna"]]
    assert list(zip(one["hour_utc"], one[C.BAND])) == [(h5, "10m")]
    # the findings table lists each problem once
    f = r.to_frame()
    assert (f[C.KIND] == "gap").sum() == len(gap_slots | silent)
    assert (f[C.KIND] == "wrong_antenna").sum() == 8
    assert (f[C.KIND] == "one_antenna_hour").sum() == 1
    # cost: effective pairs recomputed by hand from usable slot counts per hour x band
    usable = sl[sl["status"] == "ok"]
    g = usable.groupby([usable[C.SLOT].dt.floor("h"), C.BAND, C.ANTENNA]).size()
    g = g.unstack(C.ANTENNA, fill_value=0)
    want = (2 * g["A"] * g["B"] / (g["A"] + g["B"])).sum()
    assert r.summary["effective_pairs"] == pytest.approx(want)
    assert r.summary["efficiency"] < 1
    # the corrected schedule gives the wrong-antenna slots the antenna the power says
    cs = r.corrected_schedule()
    fixed = cs[_in(cs, [C.SCHEDULE_START, C.BAND], wrong_slots)]
    orig = s.set_index([C.SCHEDULE_START, C.BAND]).loc[list(
        zip(fixed[C.SCHEDULE_START], fixed[C.BAND])), C.ANTENNA].to_numpy()
    assert (fixed[C.ANTENNA].to_numpy() != orig).all()
    assert "wrong antenna" in r.text


def test_audit_without_power_markers_says_so(rng):
    s = make_schedule(START, 0.25, "20m", seed=1)
    spots = _spots_following(s, rng).assign(**{C.POWER: 37.0})
    r = audit_schedule(spots, s, "Q1ABC")
    assert r.markers is None and r.summary["wrong_antenna"] == 0
    assert "same power" in r.text
    with pytest.raises(ValueError, match="power, none"):
        audit_schedule(spots, s, "Q1ABC", marker="snr")


def test_audit_unknown_call_lists_calls(rng):
    s = make_schedule(START, 0.25, "20m", seed=1)
    spots = _spots_following(s, rng)
    with pytest.raises(InputError, match="Q1ABC"):
        audit_schedule(spots, s, "Q9ZZZ")


# --- with the simulator and the comparison -------------------------------------------------
def _simulate(schedule, days, seed, **kw):
    from spotkit.simulate import simulate_spots

    opts = dict(bands=("10m",), difference_db=1.0, n_receivers=120)
    opts.update(kw)
    return simulate_spots("alternating", days=days, seed=seed, start="2026-03-02",
                          schedule=schedule, **opts)


def test_audit_finds_mistakes_in_a_simulated_run(rng):
    # the plan says S; the operator ran S' = S with 12 slots on the wrong antenna, marked by
    # power (A 37 dBm, B 30 dBm); 6 more slots lost their reports; some reports sneak onto
    # the band the schedule did not have in that slot (band hop)
    planned = make_schedule("2026-03-02", 0.5, "20m,10m", band_hop=True, seed=21)
    ran = planned.copy()
    flip = rng.choice(len(ran), size=12, replace=False)
    ran.loc[flip, C.ANTENNA] = np.where(ran.loc[flip, C.ANTENNA] == "A", "B", "A")
    sim = _simulate(ran, 0.5, 5, bands=("20m", "10m"), power_a_dbm=37.0, power_b_dbm=30.0)
    spots = sim.spots
    SB = [C.SLOT, C.BAND]
    heard = set(zip(spots[C.SLOT], spots[C.BAND].astype(str)))
    flipped = set(zip(ran[C.SCHEDULE_START].iloc[flip], ran[C.BAND].iloc[flip]))
    all_slots = set(zip(planned[C.SCHEDULE_START], planned[C.BAND]))
    heard_ok = sorted((heard & all_slots) - flipped)
    lose = {heard_ok[i] for i in rng.choice(len(heard_ok), size=6, replace=False)}
    spots = spots[~_in(spots.assign(**{C.BAND: spots[C.BAND].astype(str)}), SB, lose)]
    heard = set(zip(spots[C.SLOT], spots[C.BAND].astype(str)))
    r = audit_schedule(spots, planned, sim.a)
    sl = r.slots
    found = {st: set(zip(sl.loc[sl["status"] == st, C.SLOT], sl.loc[sl["status"] == st, C.BAND]))
             for st in ("gap", "wrong_antenna", "unknown_power")}
    assert r.markers == {"A": 37.0, "B": 30.0}
    assert found["wrong_antenna"] == flipped & heard  # every flipped slot that was heard
    assert lose <= found["gap"]
    assert found["gap"] == all_slots - heard  # and the slots nobody heard, nothing else
    assert found["unknown_power"] == set()
    assert r.summary["off_schedule_reports"] == 0
    assert r.summary["efficiency"] < 1


def test_pilot_parameters_from_a_simulated_pilot():
    from spotkit.compare import compare_antennas

    s = make_schedule("2026-03-02", 0.5, ["10m"], seed=8)
    sim = _simulate(s, 0.5, 8)
    pil = pilot_parameters(sim.spots, sim.design, sim.a, sim.b, schedule=sim.schedule,
                           band="10m", n_boot=200, seed=1)
    res = compare_antennas(sim.spots, sim.design, sim.a, sim.b, schedule=sim.schedule,
                           n_boot=200, seed=1)
    o = res.overall
    assert pil.pairs == o[C.PAIRS]
    assert pil.censored_fraction == pytest.approx((o[C.ONLY_A] + o[C.ONLY_B]) / o[C.PAIRS])
    assert pil.hours == pytest.approx(12.0)  # 00:00 to 12:00 UTC, both ends' slots included
    assert pil.pairs_per_hour == pytest.approx(pil.pairs / 12.0)
    assert pil.mean_db == pytest.approx(o[C.B_MINUS_A], abs=1e-9)
    assert pil.sigma_db == pytest.approx(o[C.SIGMA], abs=1e-6)
    # the simulated truth is B = A + 1 dB; the pilot's own 95 % interval should cover it
    assert abs(pil.mean_db - 1.0) < 3 * pil.se_db
    assert 0 < pil.censoring_factor <= 1 and pil.design_effect > 0
    assert pil.receivers <= 120 and 1 <= pil.clusters <= pil.receivers
    # the measured censoring factor lies near the doubly censored normal model's value
    model = float(censoring_information(pil.censored_fraction))
    assert pil.censoring_factor == pytest.approx(model, abs=0.1)
    d = duration_closed_form(1.0, **pil.closed_form_inputs())
    assert d.feasible and d.hours > 0
    with pytest.raises(InputError, match="10m"):
        pilot_parameters(sim.spots, sim.design, sim.a, sim.b, schedule=sim.schedule,
                         band="20m", n_boot=20)
    with pytest.raises(UsageError):
        pilot_parameters(sim.spots, "before-after", sim.a, sim.b, n_boot=20)


def test_duration_table_and_plot():
    import matplotlib.pyplot as plt

    sim = pd.DataFrame({"hours": [6.0], "runs": 20, "power_sim": [0.5],
                        "power_sim_low": [0.3], "power_sim_high": [0.7],
                        "ci_width_sim_db": [1.0], "ci_width_sim_se_db": [0.05]})
    t = duration_table(1.0, [3, 6, 12], sigma_db=3.0, pairs_per_hour=10.0, simulation=sim)
    assert list(t["hours"]) == [3, 6, 12]
    assert t["ci_width_db"].is_monotonic_decreasing and t["power"].is_monotonic_increasing
    assert t.loc[t["hours"] == 6, "power_sim"].iloc[0] == 0.5
    assert t["power_sim"].isna().sum() == 2
    assert t.attrs["needed"]["hours"] == pytest.approx(pairs_needed(1.0, sigma_db=3.0) / 10)
    ax = plot_duration_tradeoff(t)
    assert ax.get_xscale() == "log" and ax.right_ax.get_ylim()[1] <= 1.05
    assert len(ax.lines) >= 1 and len(ax.right_ax.lines) >= 1
    fig, given = plt.subplots()
    assert plot_duration_tradeoff(t, ax=given) is given
    plt.close("all")


@pytest.mark.slow
def test_closed_form_agrees_with_simulation():
    # The closed form, fed with a pilot's spread, censoring factor and design effect, must
    # predict what repeated simulated experiments (simulator + compare) show: the empirical
    # power within 3 binomial Monte-Carlo standard errors, and the mean 95 % CI width within
    # 3 Monte-Carlo standard errors plus 5 % (the pilot's own estimation error of sigma and
    # of the censoring factor, about 2-3 % each at this size). Both are evaluated at the
    # simulations' own mean number of pairs so that day-to-day variation of the report rate
    # (the simulator's daily condition factor) does not enter.
    effect, hours, runs = 0.25, 12.0, 40
    sim_table = duration_by_simulation(effect, [hours], n_runs=runs, n_boot=100, seed=3,
                                       band="10m", n_receivers=120)
    row = sim_table.iloc[0]
    s = make_schedule("2026-03-02", 1, ["10m"], seed=99)
    pil = pilot_parameters(_simulate(s, 1, 99, difference_db=effect).spots, "alternating",
                           "Q1ABC", schedule=s, n_boot=400, seed=2)
    inputs = pil.closed_form_inputs()
    inputs["pairs_per_hour"] = row["pairs_sim"] / hours
    pred = power_closed_form([hours], effect, **inputs).iloc[0]
    mc = math.sqrt(pred["power"] * (1 - pred["power"]) / runs)
    assert 0.2 < pred["power"] < 0.95  # an informative operating point
    assert abs(row["power_sim"] - pred["power"]) <= 3 * mc
    assert abs(row["ci_width_sim_db"] - pred["ci_width_db"]) <= (
        3 * row["ci_width_sim_se_db"] + 0.05 * pred["ci_width_db"])
    # the spread of the estimates over runs is the predicted standard error, within 3
    # Monte-Carlo standard errors of an SD from 40 runs (1 / sqrt(2 x 39) = 11 % each) + 5 %
    assert abs(row["estimate_sd_db"] / pred["se_db"] - 1) <= 3 / math.sqrt(2 * (runs - 1)) + 0.05
    # the estimates are centred on the truth (within 3 standard errors of their mean)
    assert abs(row["estimate_mean_db"] - effect) <= 3 * row["estimate_sd_db"] / math.sqrt(runs)


# --- command line ------------------------------------------------------------------------
def test_cli_schedule_is_read_back_by_spotkit_compare(tmp_path, capsys):
    import json

    from spotkit.cli import main
    from spotkit.store import write_spots

    sched = tmp_path / "switch.csv"
    assert main(["plan", "schedule", "--start", "2026-03-02T00:00Z", "--days", "0.5",
                 "--bands", "10m", "--seed", "4", "-o", str(sched)]) == 0
    assert "same number of slots" in capsys.readouterr().out
    table = read_schedule(sched)
    assert (schedule_balance(table)["A"] == 15).all() and (schedule_balance(table)["B"] == 15).all()
    sim = _simulate(table, 0.5, 4)  # B = A + 1 dB, switched as the file says
    spots = write_spots(sim.spots, tmp_path / "spots.parquet")
    out = tmp_path / "result.json"
    assert main(["compare", str(spots), "--design", "alternating", "--a", sim.a,
                 "--schedule", str(sched), "--boot", "200", "--json", str(out)]) == 0
    res = json.loads(out.read_text())["overall"]
    assert res["ci_low_db"] < 1.0 < res["ci_high_db"] and res["pairs"] > 1000
    # audit of the same run from the command line: followed as planned, apart from gaps
    findings = tmp_path / "findings.csv"
    assert main(["plan", "audit", str(spots), "--schedule", str(sched), "--call", sim.a,
                 "--csv", str(findings)]) == 0
    text = capsys.readouterr().out
    assert "wrong antenna" in text and "same power" in text
    f = pd.read_csv(findings)
    assert set(f["kind"]) <= {"gap", "one_antenna_hour"}


def test_cli_duration(tmp_path, capsys):
    from spotkit.cli import main

    csv, png = tmp_path / "d.csv", tmp_path / "d.png"
    assert main(["plan", "duration", "--effect", "1", "--sigma", "3", "--pairs-per-hour",
                 "10", "--hours", "3,6,12", "--csv", str(csv), "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    assert "7.1 h (71 pairs" in out  # 70.6 pairs at 10 pairs/h, see the textbook test
    t = pd.read_csv(csv)
    assert list(t["hours"]) == [3, 6, 12] and png.stat().st_size > 1000
    assert main(["plan", "duration", "--effect", "1", "--sigma", "3", "--pairs-per-hour",
                 "10", "--hours", "x"]) == 2
    assert main(["plan"]) == 2


def test_cli_duration_from_pilot(tmp_path, capsys):
    from spotkit.cli import main
    from spotkit.store import write_spots

    s = make_schedule("2026-03-02", 0.5, ["10m"], seed=6)
    path = write_schedule(s, tmp_path / "s.csv")
    sim = _simulate(s, 0.5, 6)
    spots = write_spots(sim.spots, tmp_path / "pilot.parquet")
    assert main(["plan", "duration", "--effect", "0.5", "--pilot", str(spots), "--design",
                 "alternating", "--a", sim.a, "--schedule", str(path), "--band", "10m",
                 "--hours", "6,24"]) == 0
    out = capsys.readouterr().out
    assert "inputs from pilot" in out and "pairs" in out
    assert main(["plan", "duration", "--effect", "0.5", "--pilot", str(spots)]) == 2


def test_duration_by_simulation_table_is_reproducible():
    kw = dict(n_runs=3, n_boot=20, seed=5, band="10m", n_receivers=40)
    a = duration_by_simulation(1.0, [2], **kw)
    b = duration_by_simulation(1.0, [2], **kw)
    pd.testing.assert_frame_equal(a, b)
    row = a.iloc[0]
    assert row["runs"] == 3 and 0 <= row["power_sim"] <= 1
    assert row["power_sim_low"] <= row["power_sim"] <= row["power_sim_high"]
    assert row["pairs_sim"] > 0 and row["ci_width_sim_db"] > 0
    with pytest.raises(ValueError, match="alternating, simultaneous, receive"):
        duration_by_simulation(1.0, [2], design="before-after", **kw)
    with pytest.raises(UsageError):
        duration_by_simulation(1.0, [1.5], **kw)  # the schedule needs whole hours


def test_audit_schedule_without_band_column_covers_every_band(rng):
    s = make_schedule(START, 0.25, "20m,10m", seed=2)  # same antenna on both bands
    spots = _spots_following(s, rng)
    one = s[s[C.BAND] == "20m"].drop(columns=C.BAND)  # start, end, antenna only
    r = audit_schedule(spots, one, "Q1ABC")
    assert r.summary["slots_scheduled"] == len(s)
    assert r.summary["slots_ok"] == len(s) and r.summary["off_schedule_reports"] == 0
