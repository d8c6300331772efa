"""How long to run an antenna comparison.

Three sources of the figures, in order of preference:

From a pilot run (:func:`pilot_parameters`, :func:`duration_from_pilot`, :func:`power_from_pilot`)
    A day of reports with the real set-up (before-after: two days on each side of the
    change) is compared as the run will be (:func:`spotkit.compare.estimate.compare_antennas`),
    and its interval is scaled to other run lengths. For a paired design the variance of the
    estimate has a part within receivers, falling as 1 / pairs, and a part between
    receivers - their true B-minus-A differ because the antennas' patterns differ by
    direction and elevation - falling as 1 / effective receivers, which stops growing once
    every receiver that can hear the station has been heard (Kish 1965; Davison & Hinkley
    1997, sec. 3.8). The pilot splits its own variance: a plain censored-normal fit (Tobin
    1958) gives the independent-pairs part, the cluster bootstrap the rest. The effective
    receivers of shorter runs are measured on windows of the pilot. For the before-after
    design the day-to-day change of propagation dominates (:mod:`spotkit.compare.beforeafter`)
    and the variance is scaled by the days per period.

From the simulated default pilot (:func:`simulate_default_pilot`)
    When there is no pilot: a vertical against a dipole (so receivers genuinely disagree),
    unequal powers and the simulator's heterogeneous receivers - deliberately not the
    optimistic "same difference on every path", and not the user's station. The command
    line says so in its first line.

From given numbers (:func:`duration_closed_form`, :func:`power_closed_form`)
    The textbook closed form: the normal-approximation sample size of a paired mean
    difference, ``n0 = ((z_(1-alpha/2) + z_(power)) sigma / delta)^2`` (Chow, Shao & Wang
    2008, sec. 3.1), turned into hours by the report rate and corrected for clustering
    (``Var = sigma^2 (1 - rho) / N + sigma^2 rho / R``, Kish's design effect
    ``1 + (m - 1) rho``; no run length is enough once ``sigma^2 rho / R`` exceeds what the
    test allows) and for censoring (the relative Fisher information of a doubly censored
    normal, :func:`censoring_information`, from the Tobit likelihood).

Every answer (:class:`DurationEstimate`) states the design it assumed and one design effect:
the variance it applied over ``sigma^2 / pairs``. :func:`duration_by_simulation` simulates
whole experiments for a check (:func:`duration_table` joins them,
:func:`spotkit.viz.plots.duration_tradeoff_plot` draws them).

Switching schedules live in :mod:`spotkit.plan.schedule` and the audit of a finished run in
:mod:`spotkit.plan.audit`; the subpackage :mod:`spotkit.plan` offers all three modules' names.

Known error: a planning figure. Checked by simulation (tests/plan/test_planner_check.py,
benchmarks/bench_plan.py): the default pilot's predicted 95 % CI width against the width a
simulated run of the predicted length reached, with the pilot's station population and fresh
propagation, mean ratio reached / predicted over 4 seeds on 20 m with 60 far stations: 0.92
(simultaneous, 48 h), 1.03 (alternating), 0.97 (receive), 1.14 (before-after, 8 days: the
between-receiver part of its variance does not shrink with days, and the scaling ignores
it); on 10 m with 300 far stations 1.02, 0.87 and 0.96 (3 seeds); single runs scatter by
10-20 %. Runs shorter than a day depend on which hours they cover (the windows average over
start hours), and propagation on the day of the run will differ from the pilot's (in the
simulator the report rate varies by +-25 % from day to day). The constant-difference
assumption this module used before predicted 0.07-0.12 dB where runs reached 1.5-3 dB.

References
----------
S.-C. Chow, J. Shao, H. Wang, *Sample Size Calculations in Clinical Research*, 2nd ed.,
Chapman & Hall/CRC, 2008, sec. 3.1 (one-sample design; a paired design is a one-sample design
on the differences) [section from memory].
L. Kish, *Survey Sampling*, Wiley, 1965 (design effect of cluster sampling) [from memory].
J. Tobin, "Estimation of relationships for limited dependent variables", Econometrica 26:24-36,
1958.
A. C. Davison, D. V. Hinkley, *Bootstrap Methods and their Application*, Cambridge, 1997,
sec. 3.8 (cluster bootstrap; a pilot's design effect).
E. B. Wilson, "Probable inference, the law of succession, and statistical inference",
JASA 22:209-212, 1927.
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd
from scipy import stats as _st

from spotkit import columns as C
from spotkit._validate import check_choice, check_time
from spotkit.bands import sort_bands
from spotkit.errors import InputError, UsageError
from spotkit.plan.schedule import (
    _check_bands,
    make_schedule,
)

_HOUR = pd.Timedelta(hours=1)


# ---------------------------------------------------------------------------------------------
# run length: closed form
# ---------------------------------------------------------------------------------------------
def _check_prob(value: float, name: str) -> float:
    value = float(value)
    if not 0.0 < value < 1.0:
        raise UsageError(f"{name}={value} must lie strictly between 0 and 1")
    return value


def pairs_needed(effect_db: float, *, sigma_db: float, alpha: float = 0.05,
                 power: float = 0.8) -> float:
    """Pairs needed to detect a paired mean difference, normal approximation.

    ``n0 = ((z_(1-alpha/2) + z_(power)) * sigma_db / effect_db) ** 2`` for a two-sided test at
    level ``alpha``; not rounded (round up for a count of pairs).

    Parameters
    ----------
    effect_db : float
        B-minus-A difference to detect [dB], non-zero.
    sigma_db : float
        Standard deviation of one pair's B-minus-A [dB].
    alpha : float
        Two-sided significance level.
    power : float
        Probability of detecting ``effect_db`` (1 - beta).

    Returns
    -------
    float
        Pairs [count].

    References
    ----------
    Chow, Shao & Wang, *Sample Size Calculations in Clinical Research*, 2nd ed., 2008,
    sec. 3.1 [from memory].

    Examples
    --------
    With the standard normal quantiles ``z_0.975 = 1.960`` and ``z_0.8 = 0.842``,
    ``(2.802 * 3 / 1)^2 = 70.6`` pairs; half the effect needs four times the pairs:

    >>> round(pairs_needed(1.0, sigma_db=3.0), 1)
    70.6
    >>> round(pairs_needed(2.0, sigma_db=3.0), 2), round(pairs_needed(0.5, sigma_db=3.0), 1)
    (17.66, 282.6)
    """
    alpha = _check_prob(alpha, "alpha")
    power = _check_prob(power, "power")
    if not np.isfinite(effect_db) or effect_db == 0:
        raise UsageError(f"effect_db={effect_db} must be a non-zero number of dB")
    if not 0 < sigma_db < math.inf:
        raise UsageError(f"sigma_db={sigma_db} must be positive")
    z = _st.norm.ppf(1 - alpha / 2) + _st.norm.ppf(power)
    return float((z * sigma_db / effect_db) ** 2)


def censoring_information(censored_fraction, *, only_b_share: float = 0.5) -> np.ndarray:
    """Information about the mean B-minus-A per pair, relative to an uncensored pair, when
    a fraction of the pairs is one-sided.

    Model: the differences are N(mu, sigma^2); a fraction ``p_a = (1 - s) p`` of pairs (only A
    heard) is censored below a point ``c1`` (the pair says only ``d <= bound``) and
    ``p_b = s p`` (only B heard) above a point ``c2``, with ``Phi(c1) = p_a`` and
    ``1 - Phi(c2) = p_b`` (in units of sigma about mu). With mu and sigma estimated together
    (as the comparison does) the information about mu is the Schur complement
    ``I_mm - I_ms^2 / I_ss`` of the Fisher information of this doubly censored normal
    (from the Tobit likelihood, Tobin 1958), in units of ``1 / sigma^2``:

    * ``I_mm = M2 + p_a L1^2 + p_b L2^2``
    * ``I_ms = M3 - M1 + p_a L1^2 c1 + p_b L2^2 c2``
    * ``I_ss = M4 - 2 M2 + M0 + p_a L1^2 c1^2 + p_b L2^2 c2^2``

    with ``Mk`` the k-th moment of phi over (c1, c2), ``L1 = phi(c1) / p_a``,
    ``L2 = phi(c2) / p_b``. No censoring gives 1; half the pairs censored on one side gives
    0.659, split evenly over both sides 0.879 (where ``I_ms = 0``). Real pairs are censored
    at scattered points, so this is a planning approximation; a pilot measures the factor
    (:class:`PilotParameters`).

    Parameters
    ----------
    censored_fraction : float or array-like
        Fraction of pairs in which only one antenna was heard, in [0, 1).
    only_b_share : float
        Share of those in which only B was heard, in [0, 1]; 0.5 (default) when A and B are
        close compared with the per-pair spread.

    Returns
    -------
    numpy.ndarray
        Relative information in (0, 1].

    References
    ----------
    J. Tobin, Econometrica 26:24-36 (1958).

    Examples
    --------
    The three cases named above:

    >>> censoring_information([0.0, 0.5]).round(3).tolist()
    [1.0, 0.879]
    >>> censoring_information(0.5, only_b_share=1.0).round(3).tolist()
    0.659
    """
    p = np.asarray(censored_fraction, dtype=float)
    if np.any(~np.isfinite(p)) or np.any(p < 0) or np.any(p >= 1):
        raise UsageError(f"censored fraction {censored_fraction} must lie in [0, 1)")
    sb = float(only_b_share)
    if not 0.0 <= sb <= 1.0:
        raise UsageError(f"only_b_share={only_b_share} must lie in [0, 1]")
    pa, pb = p * (1 - sb), p * sb
    c1 = _st.norm.ppf(pa)  # -inf when pa == 0
    c2 = _st.norm.isf(pb)  # +inf when pb == 0
    f1 = np.where(np.isfinite(c1), _st.norm.pdf(c1), 0.0)
    f2 = np.where(np.isfinite(c2), _st.norm.pdf(c2), 0.0)
    g1 = np.where(np.isfinite(c1), c1, 0.0)  # c * phi(c) -> 0 at infinity
    g2 = np.where(np.isfinite(c2), c2, 0.0)
    m0 = 1.0 - pa - pb
    m1 = f1 - f2
    m2 = m0 + g1 * f1 - g2 * f2
    m3 = (g1 ** 2 + 2) * f1 - (g2 ** 2 + 2) * f2
    m4 = 3 * m0 + (g1 ** 3 + 3 * g1) * f1 - (g2 ** 3 + 3 * g2) * f2
    with np.errstate(divide="ignore", invalid="ignore"):
        t1 = np.where(pa > 0, f1 ** 2 / pa, 0.0)  # p_a L1^2
        t2 = np.where(pb > 0, f2 ** 2 / pb, 0.0)
    i_mm = m2 + t1 + t2
    i_ms = m3 - m1 + t1 * g1 + t2 * g2
    i_ss = m4 - 2 * m2 + m0 + t1 * g1 ** 2 + t2 * g2 ** 2
    return np.where(p > 0, i_mm - i_ms ** 2 / i_ss, 1.0)


def _censoring_factor(censored_fraction, censoring_factor) -> float:
    if censoring_factor is None:
        return float(censoring_information(censored_fraction))
    r = float(censoring_factor)
    if not 0.0 < r <= 1.0:
        raise UsageError(f"censoring_factor={censoring_factor} must lie in (0, 1]")
    return r


def _variance_terms(sigma_db, icc, clusters, censored_fraction, censoring_factor=None):
    """(within, floor): Var(mean of N pairs) = within / N + floor [dB^2]."""
    if not 0 < sigma_db < math.inf:
        raise UsageError(f"sigma_db={sigma_db} must be positive")
    icc = float(icc)
    if not 0.0 <= icc < 1.0:
        raise UsageError(f"icc={icc} must lie in [0, 1)")
    if icc > 0 and (clusters is None or not clusters > 0):
        raise UsageError("icc > 0 needs the number of receivers (clusters) as well")
    r = _censoring_factor(censored_fraction, censoring_factor)
    within = sigma_db ** 2 * (1.0 - icc) / r
    floor = sigma_db ** 2 * icc / clusters if icc > 0 else 0.0
    return within, floor


@dataclass(frozen=True)
class DurationEstimate:
    """Run length needed, with what it assumed; see :func:`duration_closed_form` and
    :func:`duration_from_pilot`.

    ``design_effect`` is the one factor applied: the variance of the estimate at the answer
    divided by ``sigma^2 / pairs`` (the variance of the mean of that many independent,
    uncensored pairs with the per-pair spread ``sigma``). It carries everything that makes
    spot pairs worth less than independent ones - receivers that disagree about B-minus-A
    (clustering) and pairs in which only one antenna was heard (censoring).

    Examples
    --------
    >>> est = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=100)
    >>> est.feasible, round(est.hours, 2), round(est.ci_width_db, 2)
    (True, 0.71, 1.4)
    >>> sorted(est.to_dict())[:4]
    ['alpha', 'censored_fraction', 'censoring_factor', 'ci_width_db']
    """

    effect_db: float
    hours: float
    pairs: float
    pairs_simple: float
    design_effect: float
    censoring_factor: float
    ci_width_db: float
    pairs_per_hour: float
    sigma_db: float
    alpha: float
    power: float
    icc: float
    clusters: float | None
    censored_fraction: float
    design: str | None = None
    source: str = "closed form"

    def __post_init__(self):
        # plain Python numbers, so that the repr and to_dict() read as numbers
        for name, value in self.__dict__.items():
            if isinstance(value, (np.floating, np.integer)):
                object.__setattr__(self, name, float(value))

    @property
    def feasible(self) -> bool:
        """False when clustering alone leaves too much variance for any run length."""
        return bool(np.isfinite(self.hours))

    def to_dict(self) -> dict:
        d = dict(self.__dict__)
        d["feasible"] = self.feasible
        return d

    def _design_text(self) -> str:
        return f"the {self.design} design" if self.design else "a paired design"

    def __str__(self) -> str:
        if not self.feasible:
            return (f"No run length is enough to detect {self.effect_db:g} dB with power "
                    f"{self.power:g} ({self._design_text()}, {self.source}): receivers that "
                    "disagree about B-A leave more uncertainty than the test allows however "
                    f"long the run ({self.clusters:.0f} effective receivers); more receivers "
                    "are needed, or a larger effect, not more hours.")
        d = self.design_effect
        d = f"{d:.2f}" if d < 100 else f"{d:,.0f}"
        return (f"{self.hours:.1f} h ({self.pairs:,.0f} pairs at {self.pairs_per_hour:.4g} "
                f"pairs/h) to detect {self.effect_db:g} dB with power {self.power:g} at alpha "
                f"{self.alpha:g}, assuming {self._design_text()} ({self.source}); design "
                f"effect {d}: the estimate's variance is {d} times that of as many "
                f"independent, uncensored pairs with spread {self.sigma_db:.2f} dB (which would "
                f"need only {self.pairs_simple:,.1f} pairs); expected CI width "
                f"{self.ci_width_db:.2f} dB.")

    def __repr__(self) -> str:
        return f"DurationEstimate({self})"


def duration_closed_form(effect_db: float, *, sigma_db: float, pairs_per_hour: float,
                         alpha: float = 0.05, power: float = 0.8, icc: float = 0.0,
                         clusters: float | None = None,
                         censored_fraction: float = 0.0,
                         censoring_factor: float | None = None,
                         design: str | None = None) -> DurationEstimate:
    """Hours of a paired design (simultaneous, alternating or receive) needed to detect a
    B-minus-A difference, from given inputs.

    Solves ``Var(N) = sigma^2 (1 - icc) / (N r) + sigma^2 icc / clusters`` equal to
    ``(effect / (z_(1-alpha/2) + z_(power)))^2`` for the number of pairs N, then divides by
    the report rate. ``r`` is :func:`censoring_information` of the censored fraction. With
    ``icc = 0`` and no censoring N equals :func:`pairs_needed`. The design effect reported
    is the factor applied, ``Var(N) N / sigma^2`` (Kish's ``1 + (m - 1) icc`` without
    censoring). The inputs are the user's; :func:`duration_from_pilot` measures them.

    Parameters
    ----------
    effect_db : float
        B-minus-A difference to detect [dB].
    sigma_db : float
        Standard deviation of one pair's B-minus-A (latent, uncensored) [dB].
    pairs_per_hour : float
        Pairs (slots x receivers where at least one antenna was heard) per hour [1/h].
    alpha, power : float
        Two-sided level and power (1 - beta).
    icc : float
        Intraclass correlation of B-minus-A within a receiver, in [0, 1).
    clusters : float, optional
        Number of receivers (or effective number, ``(sum m)^2 / sum m^2`` for unequal
        shares); needed when ``icc > 0``.
    censored_fraction : float
        Fraction of pairs in which only one antenna was heard.
    censoring_factor : float, optional
        Information per pair relative to an uncensored pair; overrides the value computed
        from ``censored_fraction``.
    design : {"simultaneous", "alternating", "receive"}, optional
        The paired design the inputs describe (stated in the answer; the formula is the
        same for all three).

    Returns
    -------
    DurationEstimate
        ``hours`` [h] (``inf`` when no run length suffices), ``pairs``, ``pairs_simple``
        (no clustering, no censoring), ``design_effect`` (the variance factor applied),
        ``censoring_factor`` r, ``ci_width_db`` (expected width of the ``1 - alpha``
        confidence interval at that run length) [dB].

    References
    ----------
    Chow, Shao & Wang (2008), sec. 3.1 [from memory]; Kish, *Survey Sampling* (1965)
    [from memory]; Tobin, Econometrica 26:24-36 (1958).

    Examples
    --------
    Without clustering or censoring the answer is :func:`pairs_needed` over the rate:

    >>> print(duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=100))
    0.7 h (71 pairs at 100 pairs/h) to detect 1 dB with power 0.8 at alpha 0.05, assuming a
    paired design (closed form); design effect 1.00: the estimate's variance is 1.00 times
    that of as many independent, uncensored pairs with spread 3.00 dB (which would need only
    70.6 pairs); expected CI width 1.40 dB.

    With 40 receivers, a small intraclass correlation and 30 % one-sided pairs:

    >>> est = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=100, icc=0.02,
    ...                            clusters=40, censored_fraction=0.3)
    >>> [round(float(x), 3) for x in (est.pairs, est.design_effect, est.censoring_factor)]
    [76.218, 1.079, 0.942]

    Five receivers that disagree a lot: no run length is enough:

    >>> est = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=100, icc=0.5, clusters=5)
    >>> float(est.hours), est.feasible
    (inf, False)
    """
    n0 = pairs_needed(effect_db, sigma_db=sigma_db, alpha=alpha, power=power)
    if not 0 < pairs_per_hour < math.inf:
        raise UsageError(f"pairs_per_hour={pairs_per_hour} must be positive")
    within, floor = _variance_terms(sigma_db, icc, clusters, censored_fraction,
                                    censoring_factor)
    z_a = _st.norm.ppf(1 - alpha / 2)
    target = (effect_db / (z_a + _st.norm.ppf(power))) ** 2
    if floor >= target:
        n = math.inf
    else:
        n = within / (target - floor)
    r = _censoring_factor(censored_fraction, censoring_factor)
    # the one design effect: the variance applied over sigma^2 / N (clustering and censoring)
    deff = (within + floor * n) / sigma_db ** 2 if np.isfinite(n) else math.inf
    width = 2 * z_a * math.sqrt(within / n + floor) if np.isfinite(n) else math.nan
    if design is not None:
        check_choice(design, PAIRED_DESIGNS, "design of the closed form (a paired design)")
    return DurationEstimate(
        effect_db=float(effect_db), hours=n / pairs_per_hour, pairs=n, pairs_simple=n0,
        design_effect=deff, censoring_factor=r, ci_width_db=width,
        pairs_per_hour=float(pairs_per_hour), sigma_db=float(sigma_db), alpha=float(alpha),
        power=float(power), icc=float(icc),
        clusters=None if clusters is None else float(clusters),
        censored_fraction=float(censored_fraction), design=design)


def power_closed_form(hours, effect_db: float, *, sigma_db: float, pairs_per_hour: float,
                      alpha: float = 0.05, icc: float = 0.0, clusters: float | None = None,
                      censored_fraction: float = 0.0,
                      censoring_factor: float | None = None) -> pd.DataFrame:
    """Expected power and CI width after given run lengths (the inverse of
    :func:`duration_closed_form`).

    Parameters
    ----------
    hours : array-like
        Run lengths [h].
    effect_db, sigma_db, pairs_per_hour, alpha, icc, clusters, censored_fraction, \
censoring_factor
        As in :func:`duration_closed_form`.

    Returns
    -------
    pandas.DataFrame
        ``hours`` [h], ``pairs``, ``se_db`` (standard error of the estimate) [dB],
        ``ci_width_db`` (expected width of the ``1 - alpha`` interval) [dB], ``power``
        (two-sided, both tails), ``design_effect`` (see :class:`DurationEstimate`).

    Examples
    --------
    1 hour of 100 pairs: SE ``3 / sqrt(100) = 0.3`` dB:

    >>> table = power_closed_form([0.5, 1, 2, 4], 1.0, sigma_db=3.0, pairs_per_hour=100)
    >>> print(table.round(3).to_string(index=False))
     hours  pairs  se_db  ci_width_db  power  design_effect
       0.5   50.0  0.424        1.663  0.654            1.0
       1.0  100.0  0.300        1.176  0.915            1.0
       2.0  200.0  0.212        0.832  0.997            1.0
       4.0  400.0  0.150        0.588  1.000            1.0
    """
    _check_prob(alpha, "alpha")
    h = np.atleast_1d(np.asarray(hours, dtype=float))
    if np.any(~np.isfinite(h)) or np.any(h <= 0):
        raise UsageError("run lengths must be positive, finite hours")
    if not 0 < pairs_per_hour < math.inf:
        raise UsageError(f"pairs_per_hour={pairs_per_hour} must be positive")
    within, floor = _variance_terms(sigma_db, icc, clusters, censored_fraction,
                                    censoring_factor)
    n = h * pairs_per_hour
    se = np.sqrt(within / n + floor)
    z_a = _st.norm.ppf(1 - alpha / 2)
    pw = _st.norm.cdf(abs(effect_db) / se - z_a) + _st.norm.cdf(-abs(effect_db) / se - z_a)
    return pd.DataFrame({C.HOURS: h, C.PAIRS: n, C.SE: se, C.CI_WIDTH: 2 * z_a * se,
                         "power": pw, "design_effect": se ** 2 * n / sigma_db ** 2})


# ---------------------------------------------------------------------------------------------
# run length: from a pilot run (measured, or the simulated default)
# ---------------------------------------------------------------------------------------------
#: designs whose pairs the closed form describes
PAIRED_DESIGNS = ("simultaneous", "alternating", "receive")
#: every design the planner handles (before-after through a pilot only)
PLAN_DESIGNS = ("simultaneous", "alternating", "receive", "before-after")
#: the simulated default pilot, when there is no real one: two antennas whose difference
#: depends on the path (so receivers genuinely disagree), unequal powers, the simulator's
#: heterogeneous receivers (noise floors, thresholds, uptimes)
DEFAULT_PILOT = dict(antenna_a="vertical", antenna_b="dipole", power_a_dbm=37.0,
                     power_b_dbm=33.0)
_WINDOWS_H = (1.0, 2.0, 3.0, 4.0, 6.0, 8.0, 12.0, 16.0, 20.0)


@dataclass(frozen=True)
class PilotParameters:
    """What a pilot run says about a longer run of the same set-up.

    The pilot is compared as the real run would be
    (:func:`spotkit.compare.estimate.compare_antennas`); its interval is the anchor, and the
    planner scales it to other run lengths (:meth:`se_at`). For a paired design the
    variance of the estimate has two parts (Kish 1965; Davison & Hinkley 1997, sec. 3.8):

    * within receivers, falling as ``1 / pairs``;
    * between receivers - their true B-minus-A differ (the antennas' patterns differ by
      direction and elevation) - falling as ``1 / clusters``, the effective number of
      receivers ``(sum m_i)^2 / sum m_i^2``, which stops growing once every receiver that
      can hear the station has been heard.

    The split comes from the pilot: the independent-pairs variance ``se_iid^2`` (a plain
    censored-normal fit, Tobin 1958) is the within part, the rest of the cluster bootstrap's
    ``se^2`` the between part. For the before-after design the day-to-day change of
    propagation dominates (:mod:`spotkit.compare.beforeafter`), so the variance is scaled by
    the days per period.

    Attributes
    ----------
    design : str
        Design of the pilot (and of the planned run).
    band : str or None
        Band used (None: all bands).
    hours : float
        Span of the pilot [h].
    pairs : int
        Pairs (before-after: observations) in the pilot.
    pairs_per_hour : float
        Report rate [1/h].
    mean_db, sigma_db : float
        B-minus-A as the comparison reports it, and the per-pair spread [dB].
    censored_fraction : float
        Fraction of one-sided pairs (observations where the target was not heard).
    se_db : float
        The pilot's own standard error, its interval width over ``2 z`` [dB].
    se_iid_db : float
        Standard error if the pairs were independent [dB] (NaN for before-after).
    between_share : float
        Share of ``se_db^2`` due to receivers that disagree, ``1 - se_iid^2 / se^2``
        clipped to [0, 1] (NaN for before-after).
    censoring_factor : float
        Information per pair relative to an uncensored pair, ``sigma^2 / (N se_iid^2)``
        (for comparison with :func:`censoring_information`; it is part of ``se_iid`` and
        not applied again; NaN for before-after).
    clusters : float
        Effective number of receivers (transmitters in the receive design).
    receivers : int
        Receivers (clusters) with at least one pair.
    cluster_curve : tuple of (float, float)
        (run length [h], effective clusters) for runs shorter than the pilot, averaged over
        the runs of that length that fit in the pilot (start on every whole hour).
    days_per_period : tuple of (int, int)
        Before-after: days before and after the change (else (0, 0)).
    confidence : float
        Coverage of the pilot's interval.
    """

    design: str
    band: str | None
    hours: float
    pairs: int
    pairs_per_hour: float
    mean_db: float
    sigma_db: float
    censored_fraction: float
    se_db: float
    se_iid_db: float
    between_share: float
    censoring_factor: float
    clusters: float
    receivers: int
    cluster_curve: tuple = ()
    days_per_period: tuple = (0, 0)
    confidence: float = 0.95

    def __post_init__(self):
        for name, value in self.__dict__.items():
            if isinstance(value, (np.floating, np.integer)):
                object.__setattr__(self, name, value.item())

    def to_dict(self) -> dict:
        return dict(self.__dict__)

    @property
    def design_effect(self) -> float:
        """The pilot's variance over ``sigma^2 / pairs`` (see :class:`DurationEstimate`)."""
        return self.se_db ** 2 * self.pairs / self.sigma_db ** 2

    @property
    def between_sd_db(self) -> float:
        """Spread of the receivers' own B-minus-A implied by the between part [dB]."""
        return math.sqrt(self.between_share * self.se_db ** 2 * self.clusters)

    def clusters_at(self, hours) -> np.ndarray:
        """Effective clusters of a run of ``hours`` [h]: from :attr:`cluster_curve`
        (interpolated in log hours), the pilot's beyond its length, in proportion to the run
        length below the shortest window."""
        h = np.asarray(hours, dtype=float)
        if not self.cluster_curve:
            return np.full(h.shape, self.clusters)
        ch, cr = np.array(self.cluster_curve, dtype=float).T
        # never more than the whole pilot's, never fewer for a longer run
        cr = np.maximum.accumulate(np.minimum(np.r_[cr, self.clusters], self.clusters))
        ch = np.r_[ch, self.hours]
        r = np.interp(np.log(h), np.log(ch), cr, left=cr[0], right=self.clusters)
        # below the shortest window measured: in proportion to the run length (fewer
        # receivers are heard in a shorter run), at least one
        return np.where(h < ch[0], np.maximum(1.0, cr[0] * h / ch[0]), r)

    def se_at(self, hours) -> np.ndarray:
        """Predicted standard error of a run of ``hours`` [h] with this set-up [dB].

        Paired designs: ``se^2 [(1 - f) H / h + f R / R(h)]`` with ``H``, ``R`` the pilot's
        hours and effective clusters, ``f`` the between share. Before-after (the change in
        the middle of the run): ``se^2 (2 / D) / (1 / D_before + 1 / D_after)`` with
        ``D = floor(h / 48)`` days per period; NaN below two days per period (the
        comparison then gives no interval).
        """
        h = np.asarray(hours, dtype=float)
        if self.design == "before-after":
            d = np.floor(h / 48.0 + 1e-9)
            db, da = self.days_per_period
            with np.errstate(divide="ignore", invalid="ignore"):
                var = self.se_db ** 2 * (2.0 / d) / (1.0 / db + 1.0 / da)
            return np.where(d >= 2, np.sqrt(var), np.nan)
        f = self.between_share
        var = self.se_db ** 2 * ((1 - f) * self.hours / h
                                 + f * self.clusters / self.clusters_at(h))
        return np.sqrt(var)

    def __str__(self) -> str:
        where = f" on {self.band}" if self.band else ""
        z = _st.norm.ppf(0.5 + self.confidence / 2)
        text = (f"pilot ({self.design}{where}): {self.hours:.1f} h, {self.pairs:,} pairs "
                f"({self.pairs_per_hour:.1f}/h) from {self.receivers} receivers (effective "
                f"{self.clusters:.1f}); B-A {self.mean_db:+.2f} dB, "
                f"{100 * self.confidence:g} % CI width {2 * z * self.se_db:.2f} dB "
                f"(SE {self.se_db:.3f} dB); spread {self.sigma_db:.2f} dB; "
                f"{100 * self.censored_fraction:.1f} % one-sided")
        if self.design == "before-after":
            db, da = self.days_per_period
            return text + f"; {db} days before and {da} after the change"
        return text + (f"; receivers disagree: {100 * self.between_share:.0f} % of the "
                       f"variance (their own B-A spread {self.between_sd_db:.2f} dB)")


def _cluster_curve(pairs: pd.DataFrame, hours: float) -> tuple:
    """(h, effective clusters) averaged over the windows of ``h`` hours inside the pilot."""
    t = pd.to_datetime(pairs[C.SLOT], utc=True)
    hour = ((t - t.min()) // _HOUR).to_numpy(dtype=np.int64)
    code = pd.factorize(pairs[C.CLUSTER].astype(str))[0]
    m = np.zeros((code.max() + 1, hour.max() + 1))
    np.add.at(m, (code, hour), 1.0)
    cum = np.concatenate([np.zeros((m.shape[0], 1)), np.cumsum(m, axis=1)], axis=1)
    out = []
    for w in _WINDOWS_H:
        k = int(w)
        if k >= hours or k >= cum.shape[1]:
            break
        per = cum[:, k:] - cum[:, :-k]  # clusters x window starts
        tot = per.sum(axis=0)
        ok = tot > 0
        if not ok.any():
            continue
        share2 = (per[:, ok] ** 2).sum(axis=0) / tot[ok] ** 2
        out.append((float(w), float(1.0 / share2.mean())))
    return tuple(out)


def pilot_parameters(spots: pd.DataFrame, design: str, a: str, b: str | None = None, *,
                     band: str | None = None, schedule=None, change_at=None,
                     window_slots: int = 1, n_boot: int = 400, seed: int = 0,
                     confidence: float = 0.95) -> PilotParameters:
    """Report rate, spread, censoring and clustering of B-minus-A from a pilot run.

    The pilot (a day of reports with the real set-up; for the before-after design at least
    two days on each side of the change) is compared as the real run would be
    (:func:`spotkit.compare.estimate.compare_antennas`): its interval width gives ``se_db``.
    A plain censored-normal (Tobit) fit to all pairs, one-sided ones included, gives the
    independent-pairs standard error (observed information); what the cluster bootstrap
    adds to it is the between-receiver part (:class:`PilotParameters`). The report rate is
    pairs per hour of the pilot's span (first to last slot of the band, plus one slot).

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table of the pilot.
    design, a, b, schedule, change_at, window_slots
        As for :func:`spotkit.compare.estimate.compare_antennas`.
    band : str, optional
        Use only this band's pairs (e.g. "10m").
    n_boot : int
        Bootstrap resamples of the comparison.
    seed : int
        Seed of the bootstrap.
    confidence : float
        Coverage of the comparison's interval.

    Returns
    -------
    PilotParameters

    References
    ----------
    Kish, *Survey Sampling* (1965) [from memory]; Tobin, Econometrica 26:24-36 (1958);
    Davison & Hinkley, *Bootstrap Methods and their Application* (1997), sec. 3.8.

    Examples
    --------
    A simulated half-day pilot, B 3 dB better than A on every path:

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.5, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> pilot = pilot_parameters(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=50)
    >>> pilot.design, pilot.receivers, round(pilot.pairs_per_hour)
    ('simultaneous', 16, 26)
    """
    from spotkit.compare.beforeafter import DAY_SHARE
    from spotkit.compare.estimate import compare_antennas
    from spotkit.stats.censored import censored_normal_mle

    check_choice(design, PLAN_DESIGNS, "design")
    by = ("band",) if band is not None else ()
    res = compare_antennas(spots, design, a, b, schedule=schedule, change_at=change_at,
                           window_slots=window_slots, by=by, n_boot=n_boot, seed=seed,
                           min_pairs=2, confidence=confidence)
    counts, pairs, row, span_spots = res.counts, res.pairs, res.overall, spots
    if band is not None:
        band = str(band).strip().lower()
        bands = counts[C.BAND].astype(str)
        if not (bands == band).any():
            raise InputError(f"the pilot has no pairs on {band}; bands with pairs: "
                             f"{', '.join(sort_bands(bands.unique().tolist()))}")
        counts = counts[(bands == band).to_numpy()]
        pairs = pairs[(pairs[C.BAND].astype(str) == band).to_numpy()]
        span_spots = spots[(spots[C.BAND].astype(str) == band).to_numpy()]
        g = res.groups
        row = g[(g[C.BAND].astype(str) == band).to_numpy()].iloc[0].to_dict()
    z = _st.norm.ppf(0.5 + confidence / 2)
    se = (row[C.CI_HIGH] - row[C.CI_LOW]) / (2 * z)
    if not np.isfinite(se) or se <= 0:
        raise InputError(f"the pilot's comparison gives no interval ({row.get(C.NOTE, '')}); "
                         "a pilot needs more reports"
                         + (" and at least two days on each side of the change"
                            if design == "before-after" else ""))
    slots = pd.to_datetime(span_spots[C.SLOT], utc=True)
    hours = ((slots.max() - slots.min()) + pd.Timedelta(minutes=C.SLOT_MINUTES)) / _HOUR
    n = float(row[C.PAIRS])
    per_cluster = pairs.groupby(C.CLUSTER, observed=True).size().to_numpy(float)
    per_cluster = per_cluster[per_cluster > 0]
    clusters = per_cluster.sum() ** 2 / (per_cluster ** 2).sum()
    common = dict(design=design, band=band, hours=float(hours), pairs=int(n),
                  pairs_per_hour=n / float(hours), mean_db=float(row[C.B_MINUS_A]),
                  sigma_db=float(row[C.SIGMA]),
                  censored_fraction=float((row[C.ONLY_A] + row[C.ONLY_B]) / n)
                  if design != "before-after"
                  else float(1 - (pairs[C.HEARD_A] | pairs[C.HEARD_B]).mean()),
                  se_db=float(se), clusters=float(clusters),
                  receivers=int(per_cluster.size), confidence=float(confidence))
    if design == "before-after":
        day = pd.to_datetime(pairs[C.SLOT], utc=True).dt.floor("D")
        per_day = pairs.groupby([pairs[C.KIND].astype(str).to_numpy(), day.to_numpy()]).size()
        days = []
        for period in ("before", "after"):
            sizes = per_day[period] if period in per_day.index.get_level_values(0) else []
            sizes = np.asarray(sizes, dtype=float)
            days.append(int((sizes >= DAY_SHARE * sizes.max()).sum()) if sizes.size else 0)
        return PilotParameters(se_iid_db=math.nan, between_share=math.nan,
                               censoring_factor=math.nan, days_per_period=tuple(days),
                               **common)
    # the fit uses the pairs themselves; compare's extra threshold-edge rows only feed its
    # correction of the estimate
    counts = counts[counts[C.KIND].astype(str).isin(C.KINDS).to_numpy()]
    kinds = counts[C.KIND].astype(str).map({"both": 0, "only_a": 1, "only_b": -1}).to_numpy()
    w = counts[C.COUNT].to_numpy(dtype=float)
    fit = censored_normal_mle(counts[C.VALUE].to_numpy(dtype=float), kinds, w)
    if not (np.isfinite(fit.mu) and np.isfinite(fit.se_mu)):
        raise InputError("the pilot's pairs do not determine a spread (too few pairs in "
                         "which both antennas were heard)")
    share = min(1.0, max(0.0, 1.0 - fit.se_mu ** 2 / se ** 2))
    return PilotParameters(se_iid_db=float(fit.se_mu), between_share=float(share),
                           censoring_factor=float(fit.sigma ** 2 / (n * fit.se_mu ** 2)),
                           cluster_curve=_cluster_curve(pairs, float(hours)), **common)


def simulate_default_pilot(design: str = "simultaneous", band: str = "10m", *,
                           n_receivers: int = 300, seed: int = 0, start="2026-03-02",
                           n_boot: int = 400) -> PilotParameters:
    """The planner's stand-in for a pilot: a simulated run with realistic disagreement.

    A ground-mounted vertical (A, 37 dBm) against a horizontal dipole 10 m high (B, 33 dBm;
    :mod:`spotkit.sim.antenna`), so B-minus-A depends on the direction and elevation of each
    path and receivers genuinely disagree, heard by the simulator's heterogeneous receivers
    (noise floors, decode thresholds, uptimes; :func:`spotkit.sim.simulate.simulate_spots`).
    One day for the paired designs; four days with the change after the second for the
    before-after design (the comparison needs two days per period for an interval). It is
    deliberately not optimistic, and it is not your station: a 24-hour pilot with your own
    antennas gives a real answer.

    Parameters
    ----------
    design : {"simultaneous", "alternating", "receive", "before-after"}
        Design of the planned run.
    band : str
        Band.
    n_receivers : int
        Far stations simulated (receivers; transmitters in the receive design).
    seed : int
        Seed of the simulation and of the bootstrap.
    start : str
        First day simulated (UTC).
    n_boot : int
        Bootstrap resamples of the pilot's comparison.

    Returns
    -------
    PilotParameters
    """
    from spotkit.sim.simulate import simulate_spots

    check_choice(design, PLAN_DESIGNS, "design")
    band = _check_bands([band])[0]
    days = 4 if design == "before-after" else 1
    kw = dict(DEFAULT_PILOT)
    if design == "alternating":
        kw["schedule"] = make_schedule(start, days, [band], seed=seed)
    sim = simulate_spots(design, days=days, seed=seed, start=start, bands=(band,),
                         n_receivers=int(n_receivers), n_transmitters=int(n_receivers), **kw)
    return pilot_parameters(sim.spots, sim.design, sim.a, sim.b, band=band,
                            schedule=sim.schedule, change_at=sim.change_at, n_boot=n_boot,
                            seed=seed)


def power_from_pilot(hours, effect_db: float, pilot: PilotParameters, *,
                     alpha: float = 0.05) -> pd.DataFrame:
    """Expected CI width and power after given run lengths, scaled from a pilot.

    Parameters
    ----------
    hours : array-like
        Run lengths [h].
    effect_db : float
        B-minus-A to detect [dB].
    pilot : PilotParameters
        From :func:`pilot_parameters` or :func:`simulate_default_pilot`.
    alpha : float
        Two-sided level.

    Returns
    -------
    pandas.DataFrame
        As :func:`power_closed_form`: ``hours``, ``pairs``, ``se_db``, ``ci_width_db``,
        ``power``, plus ``design_effect`` (see :class:`DurationEstimate`); NaN where the
        design gives no interval (before-after with fewer than two days per period).
    """
    _check_prob(alpha, "alpha")
    h = np.atleast_1d(np.asarray(hours, dtype=float))
    if np.any(~np.isfinite(h)) or np.any(h <= 0):
        raise UsageError("run lengths must be positive, finite hours")
    se = pilot.se_at(h)
    n = h * pilot.pairs_per_hour
    z_a = _st.norm.ppf(1 - alpha / 2)
    e = abs(float(effect_db))
    pw = _st.norm.cdf(e / se - z_a) + _st.norm.cdf(-e / se - z_a)
    return pd.DataFrame({C.HOURS: h, C.PAIRS: n, C.SE: se, C.CI_WIDTH: 2 * z_a * se,
                         "power": pw, "design_effect": se ** 2 * n / pilot.sigma_db ** 2})


def duration_from_pilot(effect_db: float, pilot: PilotParameters, *, alpha: float = 0.05,
                        power: float = 0.8, source: str = "pilot") -> DurationEstimate:
    """Hours needed to detect a B-minus-A difference, scaled from a pilot.

    The shortest run whose predicted standard error (:meth:`PilotParameters.se_at`) is at
    most ``effect / (z_(1-alpha/2) + z_(power))``: below the pilot's length on a grid of
    1-minute steps, beyond it in closed form (paired designs) or in whole days per period
    (before-after, the change in the middle).

    Parameters
    ----------
    effect_db : float
        B-minus-A to detect [dB], non-zero.
    pilot : PilotParameters
        From :func:`pilot_parameters` or :func:`simulate_default_pilot`.
    alpha, power : float
        Two-sided level and power.
    source : str
        Where the pilot came from, for the answer's text.

    Returns
    -------
    DurationEstimate
        Its ``design_effect`` is the pilot-scaled variance at the answer over
        ``sigma^2 / pairs``; ``icc`` the between-receiver share of the per-pair variance
        this implies, ``clusters`` the effective receivers at the answer.
    """
    alpha = _check_prob(alpha, "alpha")
    power = _check_prob(power, "power")
    n0 = pairs_needed(effect_db, sigma_db=pilot.sigma_db, alpha=alpha, power=power)
    z_a = _st.norm.ppf(1 - alpha / 2)
    target = (abs(effect_db) / (z_a + _st.norm.ppf(power))) ** 2
    var_p = pilot.se_db ** 2
    if pilot.design == "before-after":
        db, da = pilot.days_per_period
        d = max(2.0, math.ceil(2.0 * var_p / (target * (1.0 / db + 1.0 / da)) - 1e-9))
        hours = 48.0 * d
    else:
        f = pilot.between_share
        floor = f * var_p  # between part once every receiver has been heard
        if floor >= target:
            hours = math.inf
        else:
            grid = np.arange(1, int(round(pilot.hours * 60)) + 1) / 60.0
            ok = pilot.se_at(grid) ** 2 <= target
            hours = (float(grid[np.argmax(ok)]) if ok.any()
                     else (1 - f) * var_p * pilot.hours / (target - floor))
    if np.isfinite(hours):
        se = float(pilot.se_at(hours))
        pairs = hours * pilot.pairs_per_hour
        deff = se ** 2 * pairs / pilot.sigma_db ** 2
        clusters = float(pilot.clusters_at(hours))
    else:
        se, pairs, deff, clusters = math.nan, math.inf, math.inf, pilot.clusters
    icc = (min(1.0, pilot.between_sd_db ** 2 / pilot.sigma_db ** 2)
           if pilot.design != "before-after" else math.nan)
    return DurationEstimate(
        effect_db=float(effect_db), hours=float(hours), pairs=float(pairs), pairs_simple=n0,
        design_effect=float(deff), censoring_factor=pilot.censoring_factor,
        ci_width_db=2 * z_a * se, pairs_per_hour=pilot.pairs_per_hour,
        sigma_db=pilot.sigma_db, alpha=alpha, power=power, icc=float(icc),
        clusters=clusters, censored_fraction=pilot.censored_fraction,
        design=pilot.design, source=source)


# ---------------------------------------------------------------------------------------------
# run length: simulation, table, plot
# ---------------------------------------------------------------------------------------------
SimDesign = Literal["alternating", "simultaneous", "receive", "before-after"]
SIM_DESIGNS = ("alternating", "simultaneous", "receive", "before-after")


def duration_by_simulation(effect_db: float | None, hours: Sequence[float], *,
                           n_runs: int = 50,
                           n_boot: int = 100, alpha: float = 0.05, seed: int = 0,
                           design: SimDesign = "alternating", band: str = "10m",
                           block_slots: int = 2, start="2026-03-02", progress: bool = False,
                           **simulate_options) -> pd.DataFrame:
    """Empirical power and CI width after given run lengths, by simulation.

    For every run length, ``n_runs`` experiments with B = A + ``effect_db`` on one band are
    simulated (:func:`spotkit.sim.simulate.simulate_spots`; the alternating design gets a fresh
    :func:`make_schedule` per run) and compared (:func:`spotkit.compare.estimate.compare_antennas`
    with ``n_boot`` resamples and confidence ``1 - alpha``). A run detects the difference
    when its interval excludes zero. Runs in which nothing could be paired count as not
    detected. With ``effect_db=None`` the antennas of ``simulate_options`` keep their own,
    path-dependent difference (e.g. :data:`DEFAULT_PILOT`): the widths are then those of
    that set-up, and the power columns are NaN (there is no single effect to detect).

    Parameters
    ----------
    effect_db : float or None
        True B-minus-A [dB], the same on every path; None: the antennas' own difference.
    hours : sequence of float
        Run lengths [h]; whole hours for the alternating design.
    n_runs : int
        Simulated experiments per run length.
    n_boot : int
        Bootstrap resamples per comparison (few are enough for power).
    alpha : float
        Two-sided level; the intervals have confidence ``1 - alpha``.
    seed : int
        Seed; the same seed gives the same table.
    design : {"alternating", "simultaneous", "receive", "before-after"}
        Experiment design (before-after: the change in the middle of each run).
    band : str
        Band simulated.
    block_slots : int
        Alternating design: block length of the schedule [slots].
    start : str or datetime-like
        First day of the simulated runs (UTC, 00:00).
    progress : bool
        Show a progress bar (tqdm).
    **simulate_options
        Passed to :func:`spotkit.sim.simulate.simulate_spots` (e.g. ``n_receivers``,
        ``power_a_dbm``, ``threshold_db``).

    Returns
    -------
    pandas.DataFrame
        One row per run length: ``hours`` [h], ``runs``, ``power_sim`` (fraction detected)
        with Wilson limits ``power_sim_low`` / ``power_sim_high``, ``estimate_mean_db``,
        ``estimate_sd_db`` (spread of the estimates over runs), ``ci_width_sim_db`` (mean
        interval width) and ``ci_width_sim_se_db`` (its Monte-Carlo error), ``pairs_sim``
        (mean pairs), ``censored_fraction_sim``.

    References
    ----------
    Wilson, JASA 22:209-212 (1927) (interval of the empirical power).

    Examples
    --------
    Two runs only, to keep the example fast (use 50 or more): both detect a 3 dB
    difference in half an hour; the Wilson interval of 2 out of 2 is wide:

    >>> table = duration_by_simulation(3.0, [0.5], n_runs=2, n_boot=20, design="simultaneous",
    ...                                band="20m", n_receivers=30)
    >>> row = table.iloc[0]
    >>> int(row["runs"]), float(row["power_sim"]), round(float(row["power_sim_low"]), 3)
    (2, 1.0, 0.342)
    """
    from spotkit.compare.estimate import compare_antennas
    from spotkit.errors import NoPairsError
    from spotkit.sim.simulate import simulate_spots
    from spotkit.stats.paired import wilson_interval

    check_choice(design, SIM_DESIGNS, "design")
    alpha = _check_prob(alpha, "alpha")
    if int(n_runs) < 2:
        raise UsageError("n_runs must be at least 2")
    hours = [float(h) for h in np.atleast_1d(hours)]
    if not hours or any(not 0 < h < math.inf for h in hours):
        raise UsageError("run lengths must be positive, finite hours")
    band = _check_bands([band])[0]
    t0 = check_time(start, "start").floor("D")
    seeds = np.random.SeedSequence(seed).generate_state(len(hours) * int(n_runs))
    seeds = seeds.reshape(len(hours), int(n_runs))
    todo = [(i, j) for i in range(len(hours)) for j in range(int(n_runs))]
    if progress:
        from tqdm import tqdm
        todo = tqdm(todo, desc="simulating", unit="run")
    est = np.full(seeds.shape, np.nan)
    lo = np.full(seeds.shape, np.nan)
    hi = np.full(seeds.shape, np.nan)
    npairs = np.zeros(seeds.shape)
    ncens = np.zeros(seeds.shape)
    for i, j in todo:
        s = int(seeds[i, j])
        opts = dict(simulate_options)
        if design == "alternating":
            opts["schedule"] = make_schedule(t0, hours[i] / 24.0, [band],
                                             block_slots=block_slots, seed=s)
        if effect_db is not None:
            opts["difference_db"] = effect_db
        sim = simulate_spots(design, days=hours[i] / 24.0, seed=s, start=t0,
                             bands=(band,), **opts)
        try:
            res = compare_antennas(sim.spots, **sim.compare_kwargs(), n_boot=n_boot, seed=s,
                                   confidence=1 - alpha, min_pairs=2)
        except NoPairsError:
            continue
        o = res.overall
        est[i, j], lo[i, j], hi[i, j] = o[C.B_MINUS_A], o[C.CI_LOW], o[C.CI_HIGH]
        if design == "before-after":  # observations with the target on the air
            npairs[i, j] = len(res.pairs)
            ncens[i, j] = (~(res.pairs[C.HEARD_A] | res.pairs[C.HEARD_B])).sum()
        else:
            npairs[i, j] = o[C.PAIRS]
            ncens[i, j] = o[C.ONLY_A] + o[C.ONLY_B]
    detected = (lo > 0) | (hi < 0)
    k = detected.sum(axis=1).astype(float)
    w_lo, w_hi = wilson_interval(k, np.full(len(hours), int(n_runs)), 1 - alpha)
    if effect_db is None:
        k, w_lo, w_hi = (np.full(len(hours), np.nan) for _ in range(3))
    width = hi - lo
    n_ok = np.isfinite(width).sum(axis=1)
    return pd.DataFrame({
        C.HOURS: hours,
        "runs": int(n_runs),
        "power_sim": k / int(n_runs),
        "power_sim_low": w_lo,
        "power_sim_high": w_hi,
        "estimate_mean_db": _nanmean(est),
        "estimate_sd_db": _nanstd(est),
        C.CI_WIDTH_SIM: _nanmean(width),
        C.CI_WIDTH_SIM_SE: _nanstd(width) / np.sqrt(np.maximum(n_ok, 1)),
        "pairs_sim": npairs.mean(axis=1),
        "censored_fraction_sim": ncens.sum(axis=1) / np.maximum(npairs.sum(axis=1), 1),
    })


def _nanmean(x: np.ndarray) -> np.ndarray:
    ok = np.isfinite(x)
    n = ok.sum(axis=1)
    return np.where(n > 0, np.where(ok, x, 0).sum(axis=1) / np.maximum(n, 1), np.nan)


def _nanstd(x: np.ndarray) -> np.ndarray:
    ok = np.isfinite(x)
    n = ok.sum(axis=1)
    m = _nanmean(x)
    ss = (np.where(ok, x - m[:, None], 0) ** 2).sum(axis=1)
    return np.where(n > 1, np.sqrt(ss / np.maximum(n - 1, 1)), np.nan)


def duration_table(effect_db: float, hours: Sequence[float] = (3, 6, 12, 24, 48, 96, 168), *,
                   sigma_db: float | None = None, pairs_per_hour: float | None = None,
                   alpha: float = 0.05, power: float = 0.8, icc: float = 0.0,
                   clusters: float | None = None, censored_fraction: float = 0.0,
                   censoring_factor: float | None = None, design: str | None = None,
                   pilot: PilotParameters | None = None, source: str = "pilot",
                   simulation: pd.DataFrame | None = None) -> pd.DataFrame:
    """The trade-off between run length, CI width and power, as a table.

    Either from given inputs (closed form, :func:`power_closed_form`) or scaled from a
    pilot (:func:`power_from_pilot`; real or :func:`simulate_default_pilot`).

    Parameters
    ----------
    effect_db : float
        B-minus-A to detect [dB].
    hours : sequence of float
        Run lengths [h].
    sigma_db, pairs_per_hour, icc, clusters, censored_fraction, censoring_factor, design
        As in :func:`duration_closed_form` (without a pilot; ``sigma_db`` and
        ``pairs_per_hour`` are then needed).
    alpha : float
        Two-sided level.
    power : float
        Target power; the run length that reaches it is in ``attrs["needed"]``.
    pilot : PilotParameters, optional
        Scale this pilot instead of the closed form.
    source : str
        Where the pilot came from (for the answer's text).
    simulation : pandas.DataFrame, optional
        From :func:`duration_by_simulation`; its columns are joined on ``hours``.

    Returns
    -------
    pandas.DataFrame
        ``hours``, ``pairs``, ``se_db``, ``ci_width_db``, ``power``, ``design_effect``, then
        the simulation's columns when given. ``attrs["needed"]`` is the
        :class:`DurationEstimate` (as a dict), ``attrs["effect_db"]`` the effect and
        ``attrs["inputs"]`` the inputs (the pilot's parameters when scaled from a pilot).

    Examples
    --------
    >>> table = duration_table(1.0, [1, 2, 4], sigma_db=3.0, pairs_per_hour=100)
    >>> print(table[["hours", "se_db", "power"]].round(3).to_string(index=False))
     hours  se_db  power
       1.0  0.300  0.915
       2.0  0.212  0.997
       4.0  0.150  1.000
    >>> round(table.attrs["needed"]["hours"], 2)
    0.71
    """
    if not len(np.atleast_1d(hours)):
        raise UsageError("duration_table needs at least one run length")
    if pilot is not None:
        table = power_from_pilot(hours, effect_db, pilot, alpha=alpha)
        need = duration_from_pilot(effect_db, pilot, alpha=alpha, power=power, source=source)
        inputs = pilot.to_dict()
    else:
        if sigma_db is None or pairs_per_hour is None:
            raise UsageError("duration_table needs sigma_db and pairs_per_hour, or a pilot")
        table = power_closed_form(hours, effect_db, sigma_db=sigma_db,
                                  pairs_per_hour=pairs_per_hour, alpha=alpha, icc=icc,
                                  clusters=clusters, censored_fraction=censored_fraction,
                                  censoring_factor=censoring_factor)
        need = duration_closed_form(effect_db, sigma_db=sigma_db,
                                    pairs_per_hour=pairs_per_hour, alpha=alpha, power=power,
                                    icc=icc, clusters=clusters,
                                    censored_fraction=censored_fraction,
                                    censoring_factor=censoring_factor, design=design)
        inputs = dict(sigma_db=sigma_db, pairs_per_hour=pairs_per_hour, alpha=alpha, icc=icc,
                      clusters=clusters, censored_fraction=censored_fraction,
                      censoring_factor=censoring_factor)
    if simulation is not None:
        sim = simulation.drop(columns=[c for c in simulation.columns
                                       if c in table.columns and c != C.HOURS])
        table = table.merge(sim, on=C.HOURS, how="outer").sort_values(C.HOURS)
        table = table.reset_index(drop=True)
    table.attrs["needed"] = need.to_dict()
    table.attrs["effect_db"] = float(effect_db)
    table.attrs["inputs"] = inputs
    return table


__all__ = [
    "SIM_DESIGNS", "pairs_needed", "censoring_information", "DurationEstimate",
    "duration_closed_form", "power_closed_form", "PAIRED_DESIGNS", "PLAN_DESIGNS",
    "DEFAULT_PILOT", "PilotParameters", "pilot_parameters", "simulate_default_pilot",
    "power_from_pilot", "duration_from_pilot", "duration_by_simulation", "duration_table",
]
