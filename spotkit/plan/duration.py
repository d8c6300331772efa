"""How long to run an antenna comparison.

Run length (:func:`duration_closed_form`, :func:`duration_by_simulation`,
:func:`duration_table`, :func:`pilot_parameters`; drawn by
:func:`spotkit.viz.plots.duration_tradeoff_plot`)
    The closed form is the normal-approximation sample size of a paired mean difference,
    ``n0 = ((z_(1-alpha/2) + z_(power)) sigma / delta)^2`` (Chow, Shao & Wang 2008, sec. 3.1),
    turned into hours by the report rate and corrected for two things spot data do:

    * clustering - pairs heard by one receiver share that receiver's true B-minus-A. With an
      intraclass correlation ``rho`` and ``R`` receivers the variance of the mean of N pairs
      is ``sigma^2 (1 - rho) / N + sigma^2 rho / R``, which is Kish's design effect
      ``1 + (m - 1) rho`` with ``m = N / R`` pairs per receiver (Kish 1965). It never falls
      below ``sigma^2 rho / R``: when that floor exceeds the variance the test needs, no run
      length is enough and the answer is infinite hours (more receivers are needed instead).
      The receivers are assumed to stay the same as the run grows, which is conservative.
    * censoring - a pair in which only one antenna was heard bounds B-minus-A from one side.
      Its information about the mean is that of a censored normal observation: with a
      fraction ``p`` of pairs censored (split between the two sides) the within-receiver
      variance is divided by the relative Fisher information ``r`` of a doubly censored
      normal sample with mean and spread estimated together (:func:`censoring_information`,
      from the Tobit likelihood, Tobin 1958). Real pairs are censored at scattered points,
      so ``r`` is an approximation; a pilot measures it instead, and the simulation checks
      it.

    The simulation runs :func:`spotkit.sim.simulate.simulate_spots` and
    :func:`spotkit.compare.estimate.compare_antennas` for a few run lengths and many seeds and
    counts how often the confidence interval excludes zero (empirical power, with a Wilson
    interval) and how wide it is. Its Monte-Carlo error is reported beside it.

Switching schedules live in :mod:`spotkit.plan.schedule` and the audit of a finished run in
:mod:`spotkit.plan.audit`; the subpackage :mod:`spotkit.plan` offers all three modules' names
(``plan.make_schedule``, ``plan.duration_table``, ``plan.audit_schedule``, ...).

Known error: the closed form is a planning figure. Its inputs (spread, report rate,
correlation, censored fraction) come from a pilot day or from defaults, and propagation on the
day of the run will differ (in the simulator the report rate alone varies by +-25 % from day to
day); treat the hours as good to a factor of about 1.5. In the test suite's simulations (12 h,
2,400 pairs, 120 receivers) the predicted standard error matched the spread of the estimates
within a few per cent, but the comparison's bootstrap intervals came out about 10 % wider than
``2 z SE``; for runs with only a few hundred pairs (a night on 10 m) the intervals were up to
1.7 times the closed form's and the spread of the estimates 1.35 times: the normal
approximation is optimistic when pairs are few, and a pilot that covers a whole day describes
a run of a few night hours badly. Prefer a pilot over the same hours, and the simulation, when
the decision matters.

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
    if not sigma_db > 0:
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
    if not sigma_db > 0:
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
    """Closed-form run length; see :func:`duration_closed_form`.

    Examples
    --------
    >>> est = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=100)
    >>> est.feasible, round(float(est.hours), 2), round(float(est.ci_width_db), 2)
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

    @property
    def feasible(self) -> bool:
        """False when clustering alone leaves too much variance for any run length."""
        return bool(np.isfinite(self.hours))

    def to_dict(self) -> dict:
        d = dict(self.__dict__)
        d["feasible"] = self.feasible
        return d

    def __str__(self) -> str:
        if not self.feasible:
            return (f"No run length is enough to detect {self.effect_db:g} dB with power "
                    f"{self.power:g}: with icc {self.icc:g} and {self.clusters:g} receivers the "
                    "between-receiver spread alone exceeds what the test allows; more "
                    "receivers are needed, not more hours.")
        return (f"{self.hours:.1f} h ({self.pairs:.0f} pairs at {self.pairs_per_hour:g} pairs/h) "
                f"to detect {self.effect_db:g} dB with power {self.power:g} at alpha "
                f"{self.alpha:g}; {self.pairs_simple:.1f} pairs without clustering or censoring, "
                f"x{self.design_effect:.2f} for clustering, /{self.censoring_factor:.3f} for "
                f"censoring; expected CI width {self.ci_width_db:.2f} dB.")


def duration_closed_form(effect_db: float, *, sigma_db: float, pairs_per_hour: float,
                         alpha: float = 0.05, power: float = 0.8, icc: float = 0.0,
                         clusters: float | None = None,
                         censored_fraction: float = 0.0,
                         censoring_factor: float | None = None) -> DurationEstimate:
    """Hours of alternating or simultaneous beacons needed to detect a B-minus-A difference.

    Solves ``Var(N) = sigma^2 (1 - icc) / (N r) + sigma^2 icc / clusters`` equal to
    ``(effect / (z_(1-alpha/2) + z_(power)))^2`` for the number of pairs N, then divides by
    the report rate. ``r`` is :func:`censoring_information` of the censored fraction. With
    ``icc = 0`` and no censoring N equals :func:`pairs_needed`.

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
        Measured information per pair relative to an uncensored pair (e.g. from a pilot,
        :class:`PilotParameters`); overrides the value computed from ``censored_fraction``.

    Returns
    -------
    DurationEstimate
        ``hours`` [h] (``inf`` when no run length suffices), ``pairs``, ``pairs_simple``
        (no clustering, no censoring), ``design_effect`` (``1 + (m - 1) icc`` at the answer),
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
    0.7 h (71 pairs at 100 pairs/h) to detect 1 dB with power 0.8 at alpha 0.05; 70.6 pairs
    without clustering or censoring, x1.00 for clustering, /1.000 for censoring; expected CI
    width 1.40 dB.

    With 40 receivers, a small intraclass correlation and 30 % one-sided pairs:

    >>> est = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=100, icc=0.02,
    ...                            clusters=40, censored_fraction=0.3)
    >>> [round(float(x), 3) for x in (est.pairs, est.design_effect, est.censoring_factor)]
    [76.218, 1.018, 0.942]

    Five receivers that disagree a lot: no run length is enough:

    >>> est = duration_closed_form(1.0, sigma_db=3.0, pairs_per_hour=100, icc=0.5, clusters=5)
    >>> float(est.hours), est.feasible
    (inf, False)
    """
    n0 = pairs_needed(effect_db, sigma_db=sigma_db, alpha=alpha, power=power)
    if not pairs_per_hour > 0:
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
    m = n / clusters if clusters else 1.0
    deff = 1.0 + (m - 1.0) * icc if np.isfinite(n) else math.inf
    width = 2 * z_a * math.sqrt(within / n + floor) if np.isfinite(n) else math.nan
    return DurationEstimate(
        effect_db=float(effect_db), hours=n / pairs_per_hour, pairs=n, pairs_simple=n0,
        design_effect=deff, censoring_factor=r, ci_width_db=width,
        pairs_per_hour=float(pairs_per_hour), sigma_db=float(sigma_db), alpha=float(alpha),
        power=float(power), icc=float(icc),
        clusters=None if clusters is None else float(clusters),
        censored_fraction=float(censored_fraction))


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
        (two-sided, both tails).

    Examples
    --------
    1 hour of 100 pairs: SE ``3 / sqrt(100) = 0.3`` dB:

    >>> table = power_closed_form([0.5, 1, 2, 4], 1.0, sigma_db=3.0, pairs_per_hour=100)
    >>> print(table.round(3).to_string(index=False))
     hours  pairs  se_db  ci_width_db  power
       0.5   50.0  0.424        1.663  0.654
       1.0  100.0  0.300        1.176  0.915
       2.0  200.0  0.212        0.832  0.997
       4.0  400.0  0.150        0.588  1.000
    """
    _check_prob(alpha, "alpha")
    h = np.atleast_1d(np.asarray(hours, dtype=float))
    if np.any(~(h > 0)):
        raise UsageError("run lengths must be positive hours")
    if not pairs_per_hour > 0:
        raise UsageError(f"pairs_per_hour={pairs_per_hour} must be positive")
    within, floor = _variance_terms(sigma_db, icc, clusters, censored_fraction,
                                    censoring_factor)
    n = h * pairs_per_hour
    se = np.sqrt(within / n + floor)
    z_a = _st.norm.ppf(1 - alpha / 2)
    pw = _st.norm.cdf(abs(effect_db) / se - z_a) + _st.norm.cdf(-abs(effect_db) / se - z_a)
    return pd.DataFrame({C.HOURS: h, C.PAIRS: n, C.SE: se, C.CI_WIDTH: 2 * z_a * se,
                         "power": pw})


# ---------------------------------------------------------------------------------------------
# run length: inputs from a pilot run
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class PilotParameters:
    """What a pilot run says about the inputs of :func:`duration_closed_form`.

    Attributes
    ----------
    band : str or None
        Band used (None: all bands).
    hours : float
        Span of the pilot [h].
    pairs : int
        Pairs in the pilot.
    pairs_per_hour : float
        Report rate [1/h].
    mean_db, sigma_db : float
        B-minus-A as the comparison reports it (the censored-normal fit with its threshold
        correction) and the fit's per-pair spread [dB].
    censored_fraction : float
        Fraction of one-sided pairs.
    censoring_factor : float
        Measured information per pair relative to an uncensored pair,
        ``sigma^2 / (N se_iid^2)``.
    design_effect : float
        Cluster-bootstrap variance over the independent-pairs variance of the estimate,
        ``se_boot^2 / se_iid^2``, at the pilot's size.
    icc : float
        Intraclass correlation implied by it, ``(deff - 1) / (m - 1)`` with
        ``m = pairs / clusters`` (0 when deff <= 1).
    clusters : float
        Effective number of receivers ``(sum m_i)^2 / sum m_i^2``.
    receivers : int
        Receivers (clusters) with at least one pair.
    se_db : float
        The pilot's own cluster-bootstrap standard error [dB].

    Examples
    --------
    See :func:`pilot_parameters` for a pilot measured from spots; by hand:

    >>> pilot = PilotParameters(band="20m", hours=24.0, pairs=2400, pairs_per_hour=100.0,
    ...                         mean_db=1.2, sigma_db=3.0, censored_fraction=0.3,
    ...                         censoring_factor=0.94, design_effect=2.0, icc=0.02,
    ...                         clusters=40.0, receivers=55, se_db=0.1)
    >>> pilot.closed_form_inputs()
    {'sigma_db': 3.0, 'pairs_per_hour': 100.0, 'icc': 0.02, 'clusters': 40.0,
     'censored_fraction': 0.3, 'censoring_factor': 0.94}
    """

    band: str | None
    hours: float
    pairs: int
    pairs_per_hour: float
    mean_db: float
    sigma_db: float
    censored_fraction: float
    censoring_factor: float
    design_effect: float
    icc: float
    clusters: float
    receivers: int
    se_db: float

    def to_dict(self) -> dict:
        return dict(self.__dict__)

    def closed_form_inputs(self) -> dict:
        """Keyword arguments for :func:`duration_closed_form` / :func:`duration_table`."""
        return dict(sigma_db=self.sigma_db, pairs_per_hour=self.pairs_per_hour,
                    icc=self.icc, clusters=self.clusters,
                    censored_fraction=self.censored_fraction,
                    censoring_factor=self.censoring_factor)

    def __str__(self) -> str:
        where = f" on {self.band}" if self.band else ""
        return (f"pilot{where}: {self.hours:.1f} h, {self.pairs:,} pairs "
                f"({self.pairs_per_hour:.1f}/h) from {self.receivers} receivers "
                f"(effective {self.clusters:.1f}); B-A {self.mean_db:+.2f} dB "
                f"(SE {self.se_db:.3f} dB), spread {self.sigma_db:.2f} dB; "
                f"{100 * self.censored_fraction:.1f} % one-sided (information x"
                f"{self.censoring_factor:.3f}); design effect {self.design_effect:.2f} "
                f"(icc {self.icc:.4f})")


def pilot_parameters(spots: pd.DataFrame, design: str, a: str, b: str | None = None, *,
                     band: str | None = None, schedule=None, window_slots: int = 1,
                     n_boot: int = 400, seed: int = 0) -> PilotParameters:
    """Spread, report rate, censoring and clustering of B-minus-A from a pilot run.

    The pilot (e.g. a day of reports with the real set-up) is compared as the real run
    would be (:func:`spotkit.compare.estimate.compare_antennas`). From it:

    * ``sigma_db`` and ``mean_db``: the comparison's fitted spread and headline
      B-minus-A; a plain censored-normal (Tobit) fit to all pairs, so one-sided pairs
      count, gives the independent-pairs standard error ``se_iid`` (observed information)
      and its own ``sigma`` for the two ratios below;
    * the report rate: pairs per hour of the pilot's span (first to last slot of the band,
      plus one slot);
    * censoring, measured rather than modelled: ``censoring_factor = sigma^2 / (N se_iid^2)``;
    * clustering, measured: ``design_effect = se_boot^2 / se_iid^2`` with ``se_boot`` the
      cluster-bootstrap standard error (the interval width over ``2 z_0.975``); it is
      turned into an ICC for :func:`duration_closed_form` by Kish's
      ``deff = 1 + (m - 1) icc``. An ANOVA ICC of the both-heard differences would be
      biased upwards here: near threshold the both-heard set of each receiver is selected
      differently, which looks like between-receiver spread.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table of the pilot.
    design, a, b, schedule, window_slots
        As for :func:`spotkit.compare.estimate.compare_antennas` (a paired design: simultaneous,
        alternating or receive).
    band : str, optional
        Use only this band's pairs (e.g. "10m").
    n_boot : int
        Bootstrap resamples for the design effect.
    seed : int
        Seed of the bootstrap.

    Returns
    -------
    PilotParameters

    References
    ----------
    Kish, *Survey Sampling* (1965) [from memory]; Tobin, Econometrica 26:24-36 (1958);
    Davison & Hinkley, *Bootstrap Methods and their Application* (1997), sec. 3.8.

    Examples
    --------
    A simulated 2.4-hour pilot (B 3 dB better than A; only 42 pairs, so the measured
    design effect is itself uncertain):

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.1, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> pilot = pilot_parameters(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=50)
    >>> print(pilot)
    pilot: 2.0 h, 42 pairs (20.7/h) from 10 receivers (effective 6.9); B-A +3.52 dB (SE 0.174
    dB), spread 2.69 dB; 2.4 % one-sided (information x0.997); design effect 0.21 (icc 0.0000)
    >>> est = duration_closed_form(1.0, **pilot.closed_form_inputs())
    >>> round(float(est.hours), 1)
    2.8
    """
    from spotkit.compare.estimate import compare_antennas
    from spotkit.stats.censored import censored_normal_mle

    if design not in SIM_DESIGNS:
        raise UsageError(f"a pilot needs a paired design; valid: {', '.join(SIM_DESIGNS)}")
    by = ("band",) if band is not None else ()
    res = compare_antennas(spots, design, a, b, schedule=schedule, window_slots=window_slots,
                           by=by, n_boot=n_boot, seed=seed, min_pairs=2)
    counts = res.counts
    span_spots = spots
    row = res.overall
    if band is not None:
        band = str(band).strip().lower()
        bands = counts[C.BAND].astype(str)
        if not (bands == band).any():
            raise InputError(f"the pilot has no pairs on {band}; bands with pairs: "
                             f"{', '.join(sort_bands(bands.unique().tolist()))}")
        counts = counts[(bands == band).to_numpy()]
        span_spots = spots[(spots[C.BAND].astype(str) == band).to_numpy()]
        g = res.groups
        row = g[(g[C.BAND].astype(str) == band).to_numpy()].iloc[0].to_dict()
    # the fit uses the pairs themselves; compare's extra threshold-edge rows only feed its
    # correction of the estimate, which the headline below already carries
    counts = counts[counts[C.KIND].astype(str).isin(C.KINDS).to_numpy()]
    kinds = counts[C.KIND].astype(str).map({"both": 0, "only_a": 1, "only_b": -1}).to_numpy()
    w = counts[C.COUNT].to_numpy(dtype=float)
    fit = censored_normal_mle(counts[C.VALUE].to_numpy(dtype=float), kinds, w)
    if not (np.isfinite(fit.mu) and np.isfinite(fit.se_mu)):
        raise InputError("the pilot's pairs do not determine a spread (too few pairs in "
                         "which both antennas were heard)")
    n = float(w.sum())
    slots = pd.to_datetime(span_spots[C.SLOT], utc=True)
    hours = ((slots.max() - slots.min()) + pd.Timedelta(minutes=C.SLOT_MINUTES)) / _HOUR
    per_cluster = counts.groupby(C.CLUSTER, observed=True)[C.COUNT].sum().to_numpy(float)
    clusters = n ** 2 / (per_cluster ** 2).sum()
    z = _st.norm.ppf(0.5 + res.confidence / 2)
    se_boot = (row[C.CI_HIGH] - row[C.CI_LOW]) / (2 * z)
    r = min(1.0, fit.sigma ** 2 / (n * fit.se_mu ** 2))
    deff = se_boot ** 2 / fit.se_mu ** 2
    m = n / clusters
    icc = min(0.99, max(0.0, (deff - 1.0) / (m - 1.0))) if m > 1 else 0.0
    return PilotParameters(
        band=band, hours=float(hours), pairs=int(n), pairs_per_hour=n / float(hours),
        mean_db=float(row[C.B_MINUS_A]), sigma_db=float(row[C.SIGMA]),
        censored_fraction=float(w[kinds != 0].sum() / n), censoring_factor=float(r),
        design_effect=float(deff), icc=float(icc), clusters=float(clusters),
        receivers=int(per_cluster.size), se_db=float(se_boot))


# ---------------------------------------------------------------------------------------------
# run length: simulation, table, plot
# ---------------------------------------------------------------------------------------------
SimDesign = Literal["alternating", "simultaneous", "receive"]
SIM_DESIGNS = ("alternating", "simultaneous", "receive")


def duration_by_simulation(effect_db: float, hours: Sequence[float], *, n_runs: int = 50,
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
    detected.

    Parameters
    ----------
    effect_db : float
        True B-minus-A [dB].
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
    design : {"alternating", "simultaneous", "receive"}
        Experiment design.
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
    if any(not h > 0 for h in hours):
        raise UsageError("run lengths must be positive hours")
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
        sim = simulate_spots(design, days=hours[i] / 24.0, seed=s, start=t0,
                             bands=(band,), difference_db=effect_db, **opts)
        try:
            res = compare_antennas(sim.spots, sim.design, sim.a, sim.b, schedule=sim.schedule,
                                   n_boot=n_boot, seed=s, confidence=1 - alpha, min_pairs=2)
        except NoPairsError:
            continue
        o = res.overall
        est[i, j], lo[i, j], hi[i, j] = o[C.B_MINUS_A], o[C.CI_LOW], o[C.CI_HIGH]
        npairs[i, j] = o[C.PAIRS]
        ncens[i, j] = o[C.ONLY_A] + o[C.ONLY_B]
    detected = (lo > 0) | (hi < 0)
    k = detected.sum(axis=1)
    w_lo, w_hi = wilson_interval(k, np.full(len(hours), int(n_runs)), 1 - alpha)
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
                   sigma_db: float, pairs_per_hour: float, alpha: float = 0.05,
                   power: float = 0.8, icc: float = 0.0, clusters: float | None = None,
                   censored_fraction: float = 0.0, censoring_factor: float | None = None,
                   simulation: pd.DataFrame | None = None) -> pd.DataFrame:
    """The trade-off between run length, CI width and power, as a table.

    Parameters
    ----------
    effect_db : float
        B-minus-A to detect [dB].
    hours : sequence of float
        Run lengths [h].
    sigma_db, pairs_per_hour, alpha, icc, clusters, censored_fraction, censoring_factor
        As in :func:`duration_closed_form` (e.g. from
        :meth:`PilotParameters.closed_form_inputs`).
    power : float
        Target power; the run length that reaches it is in ``attrs["needed"]``.
    simulation : pandas.DataFrame, optional
        From :func:`duration_by_simulation`; its columns are joined on ``hours``.

    Returns
    -------
    pandas.DataFrame
        :func:`power_closed_form` columns (``hours``, ``pairs``, ``se_db``, ``ci_width_db``,
        ``power``), then the simulation's columns when given. ``attrs["needed"]`` is the
        :class:`DurationEstimate` (as a dict), ``attrs["effect_db"]`` the effect and
        ``attrs["inputs"]`` the closed-form inputs.

    Examples
    --------
    >>> table = duration_table(1.0, [1, 2, 4], sigma_db=3.0, pairs_per_hour=100)
    >>> print(table[["hours", "se_db", "power"]].round(3).to_string(index=False))
     hours  se_db  power
       1.0  0.300  0.915
       2.0  0.212  0.997
       4.0  0.150  1.000
    >>> round(float(table.attrs["needed"]["hours"]), 2)
    0.71
    """
    table = power_closed_form(hours, effect_db, sigma_db=sigma_db,
                              pairs_per_hour=pairs_per_hour, alpha=alpha, icc=icc,
                              clusters=clusters, censored_fraction=censored_fraction,
                              censoring_factor=censoring_factor)
    if simulation is not None:
        sim = simulation.drop(columns=[c for c in simulation.columns
                                       if c in table.columns and c != C.HOURS])
        table = table.merge(sim, on=C.HOURS, how="outer").sort_values(C.HOURS)
        table = table.reset_index(drop=True)
    need = duration_closed_form(effect_db, sigma_db=sigma_db, pairs_per_hour=pairs_per_hour,
                                alpha=alpha, power=power, icc=icc, clusters=clusters,
                                censored_fraction=censored_fraction,
                                censoring_factor=censoring_factor)
    table.attrs["needed"] = need.to_dict()
    table.attrs["effect_db"] = float(effect_db)
    table.attrs["inputs"] = dict(sigma_db=sigma_db, pairs_per_hour=pairs_per_hour, alpha=alpha,
                                 icc=icc, clusters=clusters,
                                 censored_fraction=censored_fraction,
                                 censoring_factor=censoring_factor)
    return table


__all__ = [
    "SIM_DESIGNS", "pairs_needed", "censoring_information", "DurationEstimate",
    "duration_closed_form", "power_closed_form", "PilotParameters", "pilot_parameters",
    "duration_by_simulation", "duration_table",
]
