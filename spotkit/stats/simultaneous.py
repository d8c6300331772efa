"""Intervals that hold for several comparisons at once: the max-statistic (max-T) method.

With ``m`` comparisons (every antenna against a reference, or all pairs), a 95 % interval
for each one alone misses one of them far more often than one run in twenty. The max-T
method widens every interval by one common factor: from joint replicates of the
estimates (a bootstrap that resamples the clusters once and recomputes every comparison
on each resample), each replicate's studentised deviations ``t_bj = (r_bj - est_j) /
se_j`` are reduced to their largest absolute value ``M_b = max_j |t_bj|``; the
``confidence`` quantile ``q`` of ``M`` makes ``est_j -+ q se_j`` hold for all ``j`` at once
with the nominal probability, whatever the correlation between the comparisons (which
Bonferroni ignores, and pays for with width). The single-step adjusted p-value of
comparison ``j`` is the share of resamples with ``M_b >= |est_j| / se_j`` (Westfall and
Young's single-step max-T), which controls the family-wise error rate.

Resamples in which some comparison has no estimate (NaN) take the maximum over the
comparisons that have one; the caller reports the share of such resamples.

References
----------
.. [1] P. H. Westfall and S. S. Young, Resampling-Based Multiple Testing, Wiley, 1993,
   s. 2.6 (single-step max-T adjusted p-values) (citation from memory).
.. [2] T. Hothorn, F. Bretz and P. Westfall, "Simultaneous inference in general parametric
   models", Biometrical Journal 50(3):346-363, 2008 (the max-T simultaneous interval)
   (citation from memory).
.. [3] C. W. Dunnett, "A multiple comparison procedure for comparing several treatments
   with a control", JASA 50:1096-1121, 1955 (the many-to-one case; the test suite checks
   this module against :func:`scipy.stats.dunnett` on that paper's example).
"""
from __future__ import annotations

import numpy as np

from spotkit._validate import check_confidence
from spotkit.errors import UsageError


def max_t(estimates, replicates, confidence: float = 0.95, *, systematic=None) -> dict:
    """Simultaneous intervals and adjusted p-values by the max-statistic method.

    Parameters
    ----------
    estimates : array_like, shape (m,)
        The estimates of the ``m`` comparisons [any unit, e.g. dB].
    replicates : array_like, shape (n_boot, m)
        Joint replicates: row ``b`` holds every comparison recomputed on the same
        resample (NaN where a fit failed).
    confidence : float
        Simultaneous coverage, e.g. 0.95.
    systematic : array_like, shape (m,), optional
        A systematic part per comparison [unit of the estimates]: each interval is widened
        by it on each side and the estimate moved towards 0 by it before the p-value (as
        :func:`spotkit.compare.estimate.estimate_groups` does for one comparison).

    Returns
    -------
    dict
        ``se`` (bootstrap SE per comparison), ``quantile`` (the common factor ``q``),
        ``low`` and ``high`` (simultaneous interval), ``p_adjusted`` (single-step max-T),
        ``failed_share`` (share of resamples with some comparison missing).

    References
    ----------
    .. [1] P. H. Westfall and S. S. Young, Resampling-Based Multiple Testing, 1993.

    Examples
    --------
    Two independent comparisons with unit SE, estimates 0 and 3: the 95 % factor is the
    root of ``(2 Phi(q) - 1)^2 = 0.95``, 2.236, against 1.96 for one comparison alone:

    >>> rng = np.random.default_rng(0)
    >>> reps = np.array([0.0, 3.0]) + rng.standard_normal((200_000, 2))
    >>> out = max_t([0.0, 3.0], reps)
    >>> round(out["quantile"], 2), out["low"].round(2).tolist()
    (2.24, [-2.24, 0.76])
    >>> out["p_adjusted"].round(2).tolist()
    [1.0, 0.01]
    """
    check_confidence(confidence)
    est = np.asarray(estimates, dtype=float)
    r = np.asarray(replicates, dtype=float)
    if r.ndim != 2 or est.ndim != 1 or r.shape[1] != est.size:
        raise UsageError(f"replicates must have shape (n_boot, m) with m = {est.size} "
                         f"estimates; got {r.shape}")
    sys_db = np.zeros(est.size) if systematic is None else np.asarray(systematic, float)
    sys_db = np.where(np.isfinite(sys_db), sys_db, 0.0)
    ok = np.isfinite(r)
    n = ok.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        se = np.nanstd(np.where(ok, r, np.nan), axis=0, ddof=1) if r.shape[0] > 1 else \
            np.full(est.size, np.nan)
        se = np.where((n >= 2) & (se > 0), se, np.nan)
        t = np.abs(r - est) / se
    t = np.where(np.isfinite(t), t, -np.inf)
    m_b = t.max(axis=1)
    m_b = m_b[np.isfinite(m_b)]
    failed = float(np.mean(~ok[:, np.isfinite(est)].all(axis=1))) if est.size else 0.0
    q = float(np.quantile(m_b, confidence)) if m_b.size else np.nan
    low, high = est - q * se - sys_db, est + q * se + sys_db
    shrunk = np.maximum(np.abs(est) - sys_db, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        t_obs = shrunk / se
    p = (np.mean(m_b[:, None] >= t_obs[None, :], axis=0) if m_b.size
         else np.full(est.size, np.nan))
    p = np.where(np.isfinite(t_obs), p, np.nan)
    return {"se": se, "quantile": q, "low": low, "high": high, "p_adjusted": p,
            "failed_share": failed}


__all__ = ["max_t"]
