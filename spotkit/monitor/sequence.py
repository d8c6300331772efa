"""Anytime-valid confidence sequences for B - A: intervals that may be looked at after every
update and still hold, all at once, with the stated confidence.

A fixed-time 95 % interval is right once, at a run length chosen in advance. Looked at every
hour and acted on when it first excludes zero, it misses the truth in far more than 5 % of
runs. The *asymptotic confidence sequence* of Waudby-Smith et al. [1]_ widens the interval
by a factor that grows slowly (like the square root of the log of the information), so that
the chance of missing the truth at *any* look is at most ``alpha``. For an estimator that is
asymptotically a mean of independent terms with standard error ``se``, their boundary
(their asymptotic confidence sequence, Theorem 2.2 [1]_; the formula as written here is from
memory, and checked against Howard et al.'s form below, which it must equal) is::

    estimate -+ sigma * sqrt( 2 (t rho^2 + 1) / (t^2 rho^2) * log( sqrt(t rho^2 + 1) / alpha ) )

with ``t`` the number of terms, ``sigma`` their standard deviation and ``rho > 0`` a tuning
constant; ``rho^2 = (-2 log alpha + log(-2 log alpha + 1)) / t*`` makes the sequence tightest
near ``t = t*``. It is Robbins' two-sided normal mixture, the boundary of Howard et al. [2]_
(eq. 14: ``sqrt((v + rho') log((v + rho') / (rho' alpha^2)))`` on the scale of the sum, with
``v = t sigma^2`` and ``rho' = sigma^2 / rho^2``), divided by ``t``.

spotkit's estimate is a censored-normal fit over pairs clustered by receiver, its SE the
cluster bootstrap SE. Written with ``se = sigma / sqrt(t)`` and ``eta = t rho^2``, the
half-width is ``se * m(eta)`` with ``m(eta) = sqrt(2 (eta + 1) / eta * log(sqrt(eta + 1) /
alpha))``; here ``t`` is replaced by the *information* ``1 / se^2`` (the effective number of
independent receivers grows with it), so ``eta = c * (se_tuned / se)^2`` with ``c`` the
constant above and ``se_tuned`` the SE at which the sequence is made tightest, chosen before
the run (from the width the user wants). The systematic part of the estimate (model error)
widens the sequence on each side, as it widens the fixed-time interval.

Known limits: the guarantee is asymptotic (many receivers); before a handful of receivers
have reported, the bootstrap SE is too small and no sequence is shown (the stop rules wait
for ``min_clusters``). When the same few receivers carry the whole run, the SE stops
shrinking with time (the receivers' own B - A spread), and so does the sequence.

References
----------
.. [1] I. Waudby-Smith, D. Arbour, R. Sinha, E. H. Kennedy and A. Ramdas, "Time-uniform
   central limit theory and asymptotic confidence sequences", Annals of Statistics, 2024.
   arXiv:2103.06476. (Authors, volume and arXiv number from memory, not checked.)
.. [2] S. R. Howard, A. Ramdas, J. McAuliffe and J. Sekhon, "Time-uniform, nonparametric,
   nonasymptotic confidence sequences", Annals of Statistics 49(2):1055-1080, 2021.
   doi:10.1214/20-AOS1991 (from memory, not checked)
"""
from __future__ import annotations

import numpy as np
from scipy import stats

from spotkit.errors import UsageError


def _alpha(confidence: float) -> float:
    if not 0 < confidence < 1:
        raise UsageError(f"confidence must lie strictly between 0 and 1, got {confidence!r}")
    return 1.0 - float(confidence)


def tuning_constant(confidence: float = 0.95) -> float:
    """``c = -2 log(alpha) + log(-2 log(alpha) + 1)``, so that ``rho^2 = c / t*`` [1]_.

    Examples
    --------
    >>> round(tuning_constant(0.95), 3)
    7.936
    """
    a = _alpha(confidence)
    return float(-2 * np.log(a) + np.log(-2 * np.log(a) + 1))


def sequence_multiplier(eta, confidence: float = 0.95):
    """Half-width of the asymptotic confidence sequence in units of the SE, ``m(eta)``.

    Parameters
    ----------
    eta : float or array
        ``t rho^2``: information relative to the tuning point times :func:`tuning_constant`.
    confidence : float
        ``1 - alpha``.

    Returns
    -------
    float or numpy.ndarray
        ``sqrt(2 (eta + 1) / eta * log(sqrt(eta + 1) / alpha))``; always above the fixed-time
        normal quantile.

    Examples
    --------
    >>> round(float(sequence_multiplier(1.0)), 4)
    3.6564
    >>> round(float(sequence_multiplier(tuning_constant())), 2)  # at the tuning point
    3.04
    """
    a = _alpha(confidence)
    eta = np.asarray(eta, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.sqrt(2 * (eta + 1) / eta * np.log(np.sqrt(eta + 1) / a))
    return np.where(eta > 0, m, np.inf)


def confidence_sequence(estimate, se, *, se_tuned: float, confidence: float = 0.95,
                        systematic=0.0):
    """The anytime-valid interval of an estimate with standard error ``se``.

    Parameters
    ----------
    estimate : float or array
        B - A [dB] at each look.
    se : float or array
        Its standard error at each look [dB] (cluster bootstrap).
    se_tuned : float
        SE at which the sequence is tightest [dB]; fixed before the run.
    confidence : float
        ``1 - alpha``: the chance that every interval of the sequence holds the truth.
    systematic : float or array
        Systematic part [dB], added on each side.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Lower and upper ends [dB]; NaN where ``se`` is not positive and finite.

    Examples
    --------
    >>> lo, hi = confidence_sequence(2.0, 0.2, se_tuned=0.2)
    >>> round(float(lo), 2), round(float(hi), 2)
    (1.39, 2.61)
    """
    if not (np.isfinite(se_tuned) and se_tuned > 0):
        raise UsageError(f"se_tuned must be a positive number of dB, got {se_tuned!r}")
    est = np.asarray(estimate, dtype=float)
    se = np.asarray(se, dtype=float)
    ok = np.isfinite(se) & (se > 0)
    safe = np.where(ok, se, 1.0)
    eta = tuning_constant(confidence) * (se_tuned / safe) ** 2
    half = np.where(ok, safe * sequence_multiplier(eta, confidence), np.nan)
    half = half + np.asarray(systematic, dtype=float)
    return est - half, est + half


def fixed_interval(estimate, se, *, confidence: float = 0.95, systematic=0.0):
    """The fixed-time normal interval ``estimate -+ z se`` (widened by ``systematic``) [dB].

    Examples
    --------
    >>> lo, hi = fixed_interval(2.0, 0.2)
    >>> round(float(lo), 2), round(float(hi), 2)
    (1.61, 2.39)
    """
    z = stats.norm.ppf(0.5 + confidence / 2)
    half = z * np.asarray(se, dtype=float) + np.asarray(systematic, dtype=float)
    est = np.asarray(estimate, dtype=float)
    return est - half, est + half


def se_for_width(width_db: float, confidence: float = 0.95) -> float:
    """The SE [dB] at which the fixed-time interval is ``width_db`` wide: the default tuning
    point of the sequence (``width / (2 z)``).

    Examples
    --------
    >>> round(se_for_width(1.0), 3)
    0.255
    """
    if not (np.isfinite(width_db) and width_db > 0):
        raise UsageError(f"the target width must be a positive number of dB, got {width_db!r}")
    return float(width_db / (2 * stats.norm.ppf(0.5 + confidence / 2)))


def normal_mixture_radius(v, rho: float, confidence: float = 0.95):
    """Howard et al.'s two-sided normal-mixture boundary on the scale of a sum [2]_:
    ``sqrt((v + rho) log((v + rho) / (rho alpha^2)))``.

    Parameters
    ----------
    v : float or array
        Intrinsic time: the variance of the sum so far.
    rho : float
        Mixture precision parameter (the prior variance of the mixture is ``1 / rho``).
    confidence : float
        ``1 - alpha``.

    Examples
    --------
    >>> round(float(normal_mixture_radius(400.0, 400.0)), 3)
    73.128
    """
    a = _alpha(confidence)
    v = np.asarray(v, dtype=float)
    return np.sqrt((v + rho) * np.log((v + rho) / (rho * a**2)))


__all__ = ["tuning_constant", "sequence_multiplier", "confidence_sequence", "fixed_interval",
           "se_for_width", "normal_mixture_radius"]
