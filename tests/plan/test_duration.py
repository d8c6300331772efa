"""Experiment planning: how long to run (closed form, pilot, simulation), the plan CLI."""
from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, stats

from spotkit import columns as C
from spotkit.compare.pairing import read_schedule
from spotkit.errors import InputError, UsageError
from spotkit.plan.duration import (
    censoring_information,
    duration_by_simulation,
    duration_closed_form,
    duration_from_pilot,
    duration_table,
    pairs_needed,
    pilot_parameters,
    power_closed_form,
    power_from_pilot,
)
from spotkit.plan.schedule import make_schedule, schedule_balance, write_schedule
from spotkit.viz.plots import duration_tradeoff_plot


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
    from spotkit.stats.censored import censored_normal_mle_batch

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


# --- with the simulator and the comparison -------------------------------------------------
def _simulate(schedule, days, seed, **kw):
    from spotkit.sim.simulate import simulate_spots

    opts = dict(bands=("10m",), difference_db=1.0, n_receivers=120)
    opts.update(kw)
    return simulate_spots("alternating", days=days, seed=seed, start="2026-03-02",
                          schedule=schedule, **opts)


def test_pilot_parameters_from_a_simulated_pilot():
    from spotkit.compare.estimate import compare_antennas

    s = make_schedule("2026-03-02", 0.5, ["10m"], seed=8)
    sim = _simulate(s, 0.5, 8)
    pil = pilot_parameters(sim.spots, sim.design, sim.a, sim.b, schedule=sim.schedule,
                           band="10m", n_boot=200, seed=1)
    res = compare_antennas(sim.spots, sim.design, sim.a, sim.b, schedule=sim.schedule,
                           n_boot=200, seed=1)
    o = res.overall
    assert pil.pairs == o[C.PAIRS]
    assert pil.censored_fraction == pytest.approx((o[C.ONLY_A] + o[C.ONLY_B]) / o[C.PAIRS])
    # the pilot spans its first to its last reported slot on the band, both ends' slots
    # included (about 00:00 to 12:00 UTC; the first or last slot may have no report)
    slots = sim.spots.loc[(sim.spots[C.BAND].astype(str) == "10m").to_numpy(), C.SLOT]
    span_h = ((slots.max() - slots.min()) / pd.Timedelta(hours=1)) + C.SLOT_MINUTES / 60
    assert pil.hours == pytest.approx(span_h)
    assert 11.5 <= pil.hours <= 12.0
    assert pil.pairs_per_hour == pytest.approx(pil.pairs / pil.hours)
    assert pil.mean_db == pytest.approx(o[C.B_MINUS_A], abs=1e-9)
    assert pil.sigma_db == pytest.approx(o[C.SIGMA], abs=1e-6)
    # the simulated truth is B = A + 1 dB; the pilot's own 95 % interval should cover it
    assert abs(pil.mean_db - 1.0) < 3 * pil.se_db
    assert 0 < pil.censoring_factor <= 1.05 and pil.design_effect > 0
    assert pil.receivers <= 120 and 1 <= pil.clusters <= pil.receivers
    # the measured censoring factor lies near the doubly censored normal model's value
    model = float(censoring_information(pil.censored_fraction))
    assert pil.censoring_factor == pytest.approx(model, abs=0.1)
    # the pilot's own interval is the anchor: scaled to its own length it is itself
    assert float(pil.se_at(pil.hours)) == pytest.approx(pil.se_db, rel=1e-9)
    assert pil.se_db == pytest.approx((o[C.CI_HIGH] - o[C.CI_LOW]) / (2 * 1.959964), rel=1e-5)
    # B = A + 1 dB on every path: receivers do not disagree, the between share is small
    assert 0 <= pil.between_share < 0.5
    d = duration_from_pilot(1.0, pil)
    assert d.feasible and d.hours > 0 and d.design == "alternating"
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
    ax = duration_tradeoff_plot(t)
    assert ax.get_xscale() == "log" and ax.right_ax.get_ylim()[1] <= 1.05
    assert len(ax.lines) >= 1 and len(ax.right_ax.lines) >= 1
    fig, given = plt.subplots()
    assert duration_tradeoff_plot(t, ax=given) is given
    plt.close("all")


@pytest.mark.slow
def test_pilot_scaling_agrees_with_simulation_when_receivers_agree():
    # B = A + 0.25 dB on every path (no between-receiver part): the prediction scaled from a
    # one-day pilot must match what repeated simulated 12-hour experiments (simulator +
    # compare, a new station population each run) show: the empirical power within 3
    # binomial Monte-Carlo standard errors, the mean 95 % CI width within 3 Monte-Carlo
    # standard errors plus 10 % (the pilot's own estimation error of its width, about 5 %
    # at 2,400 pairs, and the population's). Evaluated at the run length that gives the
    # simulations' own mean number of pairs at the pilot's rate, so that day-to-day
    # variation of the report rate (the simulator's daily condition factor) does not enter.
    effect, hours, runs = 0.25, 12.0, 40
    sim_table = duration_by_simulation(effect, [hours], n_runs=runs, n_boot=100, seed=3,
                                       band="10m", n_receivers=120)
    row = sim_table.iloc[0]
    s = make_schedule("2026-03-02", 1, ["10m"], seed=99)
    pil = pilot_parameters(_simulate(s, 1, 99, difference_db=effect).spots, "alternating",
                           "Q1ABC", schedule=s, n_boot=400, seed=2)
    assert pil.between_share < 0.5
    pred = power_from_pilot([row["pairs_sim"] / pil.pairs_per_hour], effect, pil).iloc[0]
    mc = math.sqrt(pred["power"] * (1 - pred["power"]) / runs)
    assert 0.2 < pred["power"] < 0.95  # an informative operating point
    assert abs(row["power_sim"] - pred["power"]) <= 3 * mc
    assert abs(row["ci_width_sim_db"] - pred["ci_width_db"]) <= (
        3 * row["ci_width_sim_se_db"] + 0.10 * pred["ci_width_db"])
    # the estimates are centred on the truth (within 3 standard errors of their mean)
    assert abs(row["estimate_mean_db"] - effect) <= 3 * row["estimate_sd_db"] / math.sqrt(runs)


# --- command line ------------------------------------------------------------------------
def test_cli_schedule_is_read_back_by_spotkit_compare(tmp_path, capsys):
    import json

    from spotkit.cli import main
    from spotkit.io.store import write_spots

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
    from spotkit.io.store import write_spots

    s = make_schedule("2026-03-02", 0.5, ["10m"], seed=6)
    path = write_schedule(s, tmp_path / "s.csv")
    sim = _simulate(s, 0.5, 6)
    spots = write_spots(sim.spots, tmp_path / "pilot.parquet")
    assert main(["plan", "duration", "--effect", "0.5", "--pilot", str(spots), "--design",
                 "alternating", "--a", sim.a, "--schedule", str(path), "--band", "10m",
                 "--hours", "6,24"]) == 0
    out = capsys.readouterr().out
    assert "scaled from the pilot" in out and "pairs" in out
    assert "design assumed: alternating" in out and "No pilot" not in out
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
    with pytest.raises(ValueError, match="alternating, simultaneous, receive, before-after"):
        duration_by_simulation(1.0, [2], design="side-by-side", **kw)
    with pytest.raises(UsageError):
        duration_by_simulation(1.0, [1.5], **kw)  # the schedule needs whole hours


# --- scaled from a pilot ----------------------------------------------------------------------
def _pilot(**kw):
    from spotkit.plan.duration import PilotParameters

    base = dict(design="simultaneous", band="20m", hours=24.0, pairs=2400,
                pairs_per_hour=100.0, mean_db=1.0, sigma_db=4.0, censored_fraction=0.1,
                se_db=0.5, se_iid_db=0.1, between_share=0.96, censoring_factor=0.95,
                clusters=40.0, receivers=50, cluster_curve=((1.0, 10.0), (6.0, 30.0)))
    base.update(kw)
    return PilotParameters(**base)


def test_pilot_scaling_by_hand():
    # se(h)^2 = se^2 [(1 - f) H / h + f R / R(h)], R(h) interpolated in log hours between
    # the measured windows, the pilot's own beyond 24 h, in proportion below 1 h
    p = _pilot()
    assert p.clusters_at([0.5, 1.0, 6.0, 24.0, 96.0]).tolist() == pytest.approx(
        [5.0, 10.0, 30.0, 40.0, 40.0])
    r3 = 10 + 20 * math.log(3) / math.log(6)
    assert float(p.clusters_at(3.0)) == pytest.approx(r3)
    want = 0.25 * (0.04 * 24 / 3 + 0.96 * 40 / r3)
    assert float(p.se_at(3.0)) ** 2 == pytest.approx(want, rel=1e-12)
    assert float(p.se_at(96.0)) ** 2 == pytest.approx(0.25 * (0.04 / 4 + 0.96), rel=1e-12)
    # the design effect of the table is the variance over sigma^2 / N
    t = power_from_pilot([96.0], 1.0, p).iloc[0]
    assert t["design_effect"] == pytest.approx(t["se_db"] ** 2 * 9600 / 16.0)
    assert p.between_sd_db == pytest.approx(math.sqrt(0.96 * 0.25 * 40))


def test_duration_from_pilot_by_hand():
    z = stats.norm.ppf(0.975) + stats.norm.ppf(0.8)
    # between part 0.96 x 0.25 = 0.24 dB^2: an effect needing less variance is infeasible
    p = _pilot()
    assert not duration_from_pilot(z * math.sqrt(0.23), p).feasible
    # beyond the pilot: (1 - f) se^2 H / h = target - f se^2
    target = 0.245  # -> 48 h
    d = duration_from_pilot(z * math.sqrt(target), p)
    assert d.hours == pytest.approx(0.04 * 0.25 * 24 / (target - 0.24), rel=1e-9)
    assert d.ci_width_db == pytest.approx(2 * stats.norm.ppf(0.975) * math.sqrt(target))
    assert d.design_effect == pytest.approx(target * d.pairs / 16.0)
    assert d.design == "simultaneous" and d.source == "pilot"
    # a pilot with no between part: the within part alone, se^2 H / h
    q = _pilot(between_share=0.0, se_db=0.2)
    d = duration_from_pilot(z * 0.1, q)
    assert d.hours == pytest.approx(24 * 4, rel=1e-9)
    # within the pilot's length: the first minute on the grid that is enough
    d = duration_from_pilot(z * 0.4, q)
    assert d.hours == pytest.approx(6.0, abs=1 / 60)


def test_before_after_scales_with_days_per_period():
    p = _pilot(design="before-after", hours=96.0, se_db=1.0, se_iid_db=math.nan,
               between_share=math.nan, censoring_factor=math.nan, cluster_curve=(),
               days_per_period=(2, 2))
    se = p.se_at([48.0, 95.0, 96.0, 192.0, 200.0])
    assert np.isnan(se[:2]).all()  # fewer than two days per period: no interval
    assert se[2:].tolist() == pytest.approx([1.0, math.sqrt(0.5), math.sqrt(0.5)])
    z = stats.norm.ppf(0.975) + stats.norm.ppf(0.8)
    d = duration_from_pilot(z * math.sqrt(1 / 3), p)  # needs 6 days per period
    assert d.hours == 288.0 and d.design == "before-after"


def test_duration_estimate_prints_plain_numbers():
    # the notebook showed DurationEstimate(hours=np.float64(...), ...)
    est = duration_closed_form(1.0, sigma_db=np.float64(3.0), pairs_per_hour=np.float64(60),
                               icc=0.02, clusters=40)
    assert "np.float64" not in repr(est) and "np.float64" not in str(est.to_dict())
    assert all(type(v) in (float, int, bool, str, type(None)) for v in est.to_dict().values())
    assert repr(est).startswith("DurationEstimate(") and "design effect" in repr(est)
