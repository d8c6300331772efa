"""The detection curve of a decoder: where a receiver hears half of the signals it is sent.

A decoder does not cut off sharply: a signal of latent SNR ``s`` [dB in 2500 Hz] is
decoded with probability ``P(decoded | s) = Phi((s - t50) / tau)`` (a probit curve [1]_),
``t50`` the 50 % point and ``tau`` the width (from 16 % to 84 % over ``2 tau``). The lowest
report of a receiver sits at the bottom of that ramp, about ``2 tau`` below ``t50`` with a
few hundred reports and further down with more, so it is no estimate of the censoring
limit. This module estimates ``t50`` per receiver from the shape of the low end of its
report histogram.

Model. Near the threshold the density of latent SNRs a receiver is offered is taken as
log-linear, ``h(s) ~ exp(beta s)`` (the low tail of a smooth level distribution, e.g. a
normal with a spread of several dB, over a window of a few dB), so reported whole-dB
values ``v`` have probabilities

    p_v ~ integral over [v - 1/2, v + 1/2] of exp(beta s) Phi((s - t50) / tau) ds

(the decoder decides on the raw SNR, then the report is rounded: ``rounding="after"``), or
``p_v ~ Phi((v - t50) / tau) integral exp(beta s) ds`` when the decision follows the
rounded value (``rounding="before"``). They are normalised over a window of bins from
``below_db`` under the receiver's lowest report to ``window_db`` above it (empty bins
below the lowest report say that the density has fallen), and the likelihood of the
receiver's counts in the window is maximised over ``(t50, beta)`` on a grid (0.05 dB in
``t50``, refined by a parabola through the three best grid points). Because everything is
relative to the receiver's lowest report the table of ``log p`` is the same for every
receiver, so all receivers are fitted by one matrix product. ``tau`` is common to all
receivers: given, or fitted by profiling the summed log-likelihood over a grid.

Known error: the log-linear level density is an approximation; a level distribution
curved within the window shifts ``t50`` (by under 0.2 dB for a normal of 6 dB spread, by
simulation); ``tau`` and the level slope are hard to tell apart on whole-dB data, which
is why :func:`spotkit.compare.estimate.estimate_groups` carries the spread of the
estimate over plausible ``tau`` as a systematic part of its interval.

References
----------
.. [1] D. J. Finney, Probit Analysis, 3rd ed., Cambridge University Press, 1971
   (citation from memory).
.. [2] W. F. Sheppard, Proc. London Math. Soc. 29:353-380, 1898 (grouped data; citation
   from memory).
"""
from __future__ import annotations

from typing import Literal

import numpy as np
from scipy import special

from spotkit._validate import check_choice
from spotkit.errors import UsageError

Rounding = Literal["after", "before"]
ROUNDINGS = ("after", "before")
#: Width of the detection curve used when it is not fitted [dB]: a decoder's decode
#: probability typically goes from 16 % to 84 % over about 2 dB (common practice).
DEFAULT_TAU_DB = 1.0
#: grid of detection widths over which ``tau`` is fitted [dB]
TAU_GRID_DB = (0.25, 0.4, 0.55, 0.7, 0.85, 1.0, 1.2, 1.4, 1.7, 2.0)

_NODES, _NODE_W = np.polynomial.legendre.leggauss(12)
_BETAS = np.linspace(-0.6, 1.5, 43)  # level slope [1/dB]
_CURVES = np.array([0.0])  # level curvature [1/dB^2]
_T_STEP = 0.05


def _log_table(tau, rounding, below, window, t_off):
    """log p[j, t, beta] of bins j = -below..window (relative to the lowest report)."""
    j = np.arange(-below, window + 1, dtype=float)
    u = 0.5 * _NODES  # nodes on [-1/2, 1/2]
    s = j[:, None] + u[None, :]  # (J, N)
    sc = s - 0.5 * window  # curvature about the middle of the window
    lvl = np.exp((_BETAS[:, None] * sc[:, :, None, None]
                  + _CURVES[None, :] * sc[:, :, None, None] ** 2).reshape(
                      s.shape + (-1,)))  # (J, N, Bt * Bc)
    if tau <= 0:
        tau = 1e-3
    if rounding == "after":
        det = special.ndtr((s[None, :, :] - t_off[:, None, None]) / tau)  # (T, J, N)
        mass = np.einsum("tjn,jnb,n->tjb", det, lvl, 0.5 * _NODE_W)
    else:
        det = special.ndtr((j[None, :] - t_off[:, None]) / tau)  # (T, J)
        mass = det[:, :, None] * np.einsum("jnb,n->jb", lvl, 0.5 * _NODE_W)[None]
    with np.errstate(divide="ignore"):
        logp = np.log(mass) - np.log(mass.sum(axis=1, keepdims=True))
    return np.maximum(logp, -700.0)  # (T, J, Bt)


def fit_thresholds(hist, lowest, *, tau_db: float = DEFAULT_TAU_DB,
                   rounding: Rounding = "after", below_db: int = 3, window_db: int = 7):
    """50 % points of the detection curve from whole-dB report histograms.

    Parameters
    ----------
    hist : array_like, shape (R, below_db + window_db + 1)
        Counts of reports per receiver in the bins ``lowest - below_db`` ...
        ``lowest + window_db`` [dB] (the first ``below_db`` are zero by construction).
    lowest : array_like, shape (R,)
        Each receiver's lowest report [dB].
    tau_db : float
        Width of the detection curve [dB].
    rounding : {"after", "before"}
        Whether the decoder decides on the raw SNR and then rounds the report ("after")
        or on the rounded value ("before").
    below_db, window_db : int
        Window of bins [dB] (module docstring).

    Returns
    -------
    t50 : numpy.ndarray, shape (R,)
        The 50 % points [dB].
    loglik : numpy.ndarray, shape (R,)
        Maximised log-likelihood of each receiver's window.

    Examples
    --------
    Counts that follow the model with ``t50`` 0.8 dB above the lowest report (-26 dB),
    ``tau`` 1 dB and a flat level density (binned approximately, as a normal of width
    ``sqrt(1 + 1/12)`` dB at the bin centres) give back that point within 0.15 dB:

    >>> from scipy import stats
    >>> j = np.arange(-3, 8)
    >>> p = stats.norm.cdf((j - 0.8) / np.sqrt(1 + 1 / 12))  # flat level, 1 dB bins
    >>> hist = np.round(4000 * p / p.sum())
    >>> hist[:3] = 0
    >>> t50, _ = fit_thresholds(hist[None, :], [-26.0])
    >>> abs(float(t50[0]) + 26 - 0.8) < 0.15
    True
    """
    check_choice(rounding, ROUNDINGS, "rounding")
    n = np.atleast_2d(np.asarray(hist, dtype=float))
    low = np.atleast_1d(np.asarray(lowest, dtype=float))
    if n.shape != (low.size, below_db + window_db + 1):
        raise UsageError(f"hist must have shape (R, {below_db + window_db + 1}) with R = "
                         f"{low.size}, got {n.shape}")
    t_off = np.arange(-below_db, 5.0 + 1e-9, _T_STEP)
    logp = _log_table(float(tau_db), rounding, below_db, window_db, t_off)
    ll = np.einsum("rj,tjb->rtb", n, logp)  # (R, T, Bt)
    prof = ll.max(axis=2)  # profile over the level slope
    i = prof.argmax(axis=1)
    ic = np.clip(i, 1, t_off.size - 2)
    rr = np.arange(low.size)
    y0, y1, y2 = prof[rr, ic - 1], prof[rr, ic], prof[rr, ic + 1]
    den = y0 - 2 * y1 + y2
    with np.errstate(invalid="ignore", divide="ignore"):
        shift = np.where((den < 0) & (i == ic), 0.5 * (y0 - y2) / den, 0.0)
    t50 = low + t_off[ic] + np.clip(shift, -1, 1) * _T_STEP
    return t50, prof[rr, i]


def fit_tau(hist, lowest, *, rounding: Rounding = "after", grid=TAU_GRID_DB,
            below_db: int = 3, window_db: int = 7) -> float:
    """The common width of the detection curve [dB] by profile likelihood over ``grid``.

    Sums each receiver's maximised window log-likelihood (:func:`fit_thresholds`) per
    ``tau`` and refines the best grid point by a parabola.

    Examples
    --------
    Counts made with ``tau`` 1 dB over 50 receivers (flat level density):

    >>> from scipy import stats
    >>> j = np.arange(-3, 8)
    >>> rng = np.random.default_rng(2)
    >>> offsets = rng.uniform(0.5, 2.0, 50)
    >>> p = stats.norm.cdf((j[None] - offsets[:, None]) / np.sqrt(1 + 1 / 12))
    >>> hist = np.stack([rng.multinomial(600, q / q.sum()) for q in p])
    >>> hist[:, :3] = 0
    >>> 0.7 < fit_tau(hist, np.zeros(50)) < 1.3
    True
    """
    g = np.asarray(grid, dtype=float)
    tot = np.array([fit_thresholds(hist, lowest, tau_db=t, rounding=rounding,
                                   below_db=below_db, window_db=window_db)[1].sum()
                    for t in g])
    i = int(np.argmax(tot))
    if 0 < i < g.size - 1:
        x = g[i - 1:i + 2]
        a, b, _c = np.polyfit(x, tot[i - 1:i + 2], 2)
        if a < 0:
            return float(np.clip(-b / (2 * a), x[0], x[2]))
    return float(g[i])


__all__ = ["DEFAULT_TAU_DB", "ROUNDINGS", "TAU_GRID_DB", "fit_thresholds", "fit_tau"]
