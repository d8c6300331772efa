"""The censored-normal maximum-likelihood fit of paired SNR differences (Tobit model).

The data are paired SNR differences ``d = B - A`` [dB]: exact values where both antennas
were heard, and one-sided bounds where only one was (the other was below its receiver's
threshold). Values come as distinct ``values`` with ``kinds`` (0 exact, +1 upper bound,
-1 lower bound) and optional ``counts`` (frequency weights), so a fit costs time in the
number of distinct values, not pairs; :func:`censored_normal_mle_batch` runs many weighted
fits at once (one per bootstrap resample).

Known error:

* The censored-normal maximum-likelihood fit (Tobin 1958): the headline estimator. It uses
  the pairs where only one antenna was heard as bounds on ``d`` and returns a continuous
  estimate. Its known error is the normal model itself: heavy tails or a mixture of paths
  with different differences bias ``sigma`` and, when censoring is one-sided, ``mu``.
  Whole-dB exact values are taken as exact; near the censoring limits this biases ``mu``
  slightly (-0.006 dB with sigma 3 dB and limits at -+2.5 dB, by simulation of 2e6 pairs).
  The fit floors ``sigma`` (default 0.3 dB, a choice well below the 1 dB resolution of
  reports) because a normal fitted to identical whole-dB values would otherwise collapse to
  zero width.
* The detection-model fit (:func:`interval_censored_mle`, the default of
  :mod:`spotkit.compare.estimate`): whole-dB values as 1-dB intervals, bounds softened by
  the width ``tau`` of the decoders' detection curve (``Phi((c - mu)/sqrt(sigma^2 +
  tau^2))``, exact for a normal), optional Student t tails and missed-report shares. Its
  known error: the soft-bound identity holds for the normal only (an approximation for the
  t), and it takes the anchor report of a one-sided pair as exact.

References
----------
J. Tobin, "Estimation of relationships for limited dependent variables", Econometrica
26(1):24-36, 1958. doi:10.2307/1907382
R. J. Olsen, "Note on the uniqueness of the maximum likelihood estimator for the Tobit
model", Econometrica 46(5):1211-1215, 1978. doi:10.2307/1911445
"""
from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
from scipy import special

from spotkit._validate import check_positive
from spotkit.errors import UsageError

#: Default floor of the censored-normal sigma, dB (see the module docstring).
SIGMA_FLOOR_DB = 0.3


@dataclass(frozen=True)
class CensoredFit:
    """Result of :func:`censored_normal_mle`.

    Attributes
    ----------
    mu : float
        Fitted mean [dB]; NaN when the likelihood has no maximum.
    sigma : float
        Fitted standard deviation [dB], at least the sigma floor; NaN as ``mu``.
    converged : bool
        Whether the Newton iteration met its tolerance.
    n_exact, n_upper, n_lower : float
        Total weight of exact values, upper bounds and lower bounds.
    loglik : float
        Maximised log-likelihood (including the ``-log(2 pi)/2`` constants of exact values).
    n_iter : int
        Newton iterations used.
    se_mu, se_sigma : float
        Standard errors [dB] from the observed information (inverse Hessian, delta method).
        They assume independent observations and an interior maximum: with ``sigma`` on its
        floor ``se_sigma`` is not meaningful, and with clustered data use the cluster
        bootstrap instead.
    missed_a, missed_b : float
        :func:`censored_mixture_mle` only: fitted shares ``pa``, ``pb`` of pairs with only
        A (only B) heard for a reason that says nothing about ``d`` (0 for the plain fit).

    Examples
    --------
    >>> fit = censored_normal_mle([-1, 0, 1, 2, 3], [0, 0, 0, 0, 0])
    >>> fit.mu, round(fit.sigma, 4), fit.converged, fit.n_exact
    (1.0, 1.4142, True, 5.0)
    >>> fit.to_dict()["n_upper"]
    0.0
    """

    mu: float
    sigma: float
    converged: bool
    n_exact: float
    n_upper: float
    n_lower: float
    loglik: float = float("nan")
    n_iter: int = 0
    se_mu: float = float("nan")
    se_sigma: float = float("nan")
    missed_a: float = 0.0
    missed_b: float = 0.0

    def to_dict(self) -> dict:
        """The fields as a plain dict."""
        return asdict(self)


# --------------------------------------------------------------------------- censored normal MLE
_LOG_SQRT_2PI = 0.5 * np.log(2 * np.pi)


def _check_batch(values, kinds, weights, sigma_floor):
    """Checked (values, kinds, weights) of a batch fit (weights shape (B, K))."""
    check_positive(sigma_floor, "sigma_floor")
    v, k = _check_kinds(values, kinds)
    w = np.asarray(weights, dtype=float)
    if w.ndim != 2 or w.shape[1] != v.size:
        raise UsageError(f"weights must have shape (B, {v.size}), got {w.shape}")
    if np.any(~np.isfinite(w)) or np.any(w < 0):
        raise UsageError("weights must be finite and non-negative")
    return v, k, w


def _check_kinds(values, kinds):
    v = np.asarray(values, dtype=float).ravel()
    k = np.asarray(kinds).ravel()
    if k.shape != v.shape:
        raise UsageError(f"kinds has {k.size} entries but values has {v.size}")
    if not np.all(np.isin(k, (-1, 0, 1))):
        raise UsageError("kinds must be 0 (exact), +1 (upper bound) or -1 (lower bound)")
    if not np.all(np.isfinite(v)):
        raise UsageError("values must be finite (no NaN or inf)")
    return v, k.astype(int)


def _tobit_parts(delta, gamma, v, kind, w, need_derivs=True):
    """Log-likelihood, gradient and Hessian in Olsen's (delta, gamma) = (mu/s, 1/s).

    ``w`` is (B, K); ``delta``, ``gamma`` are (B,); ``v`` is (K,) or (B, K) and ``kind``
    (K,). Exact values contribute ``log gamma - r^2/2 - log sqrt(2 pi)`` with
    ``r = gamma v - delta``; bounds contribute ``log Phi(u)`` with ``u = sgn r`` (sgn +1
    for an upper bound, -1 for a lower bound). Each run of one kind is evaluated on its
    own (the normal cdf only for bounds). Returns ``ll`` or ``(ll, g_d, g_g, h_dd, h_dg,
    h_gg)``."""
    v = np.atleast_2d(v)
    b = delta.size
    ll = np.zeros(b)
    g_d, g_g, h_dd, h_dg, h_gg = (np.zeros(b) for _ in range(5))
    gam, dl = gamma[:, None], delta[:, None]
    lg = np.log(gamma)[:, None]
    for kd, sl in _blocks(kind):
        vb, wb = v[:, sl], w[:, sl]
        r = gam * vb - dl
        if kd == 0:
            ll += np.sum(np.where(wb > 0, wb * (lg - 0.5 * r * r - _LOG_SQRT_2PI), 0.0), axis=1)
            if not need_derivs:
                continue
            g_d += np.sum(wb * r, axis=1)
            g_g += np.sum(wb * (1.0 / gam - r * vb), axis=1)
            h_dd -= np.sum(wb, axis=1)
            h_dg += np.sum(wb * vb, axis=1)
            h_gg += np.sum(wb * (-1.0 / gam ** 2 - vb * vb), axis=1)
            continue
        sgn = float(kd)
        u = r if kd == 1 else -r
        log_cdf = special.log_ndtr(u)
        ll += np.sum(np.where(wb > 0, wb * log_cdf, 0.0), axis=1)
        if not need_derivs:
            continue
        lam = np.exp(-0.5 * u * u - _LOG_SQRT_2PI - log_cdf)  # inverse Mills ratio phi/Phi
        h = -lam * (u + lam)
        g_d += np.sum(wb * (-sgn * lam), axis=1)
        g_g += np.sum(wb * (sgn * vb * lam), axis=1)
        h_dd += np.sum(wb * h, axis=1)
        h_dg += np.sum(wb * (-h * vb), axis=1)
        h_gg += np.sum(wb * (h * vb * vb), axis=1)
    if not need_derivs:
        return ll
    return ll, g_d, g_g, h_dd, h_dg, h_gg


def _by_kind(v, kind, w):
    """``v``, ``kind``, ``w`` with the items sorted by kind (lower bounds, exact values,
    upper bounds), so that each kind is one run of columns; unchanged when sorted."""
    kind = np.asarray(kind)
    if kind.size < 2 or np.all(np.diff(kind) >= 0):
        return v, kind, w
    order = np.argsort(kind, kind="stable")
    return v[..., order], kind[order], w[:, order]


def _tobit_batch(v, kind, w, sigma_floor, max_iter=100, tol=1e-10):
    """Batch Newton fit; returns mu, sigma, converged, loglik, n_iter (arrays over rows).

    ``v`` is (K,) or (B, K) (each row its own values); the log-likelihood and derivatives
    are evaluated once per accepted step (the first trial point of the line search carries
    its derivatives to the next iteration)."""
    v, kind, w = _by_kind(v, kind, w)
    v2 = np.atleast_2d(np.asarray(v, dtype=float))
    shared = v2.shape[0] == 1

    def vrows(r):
        return v2 if shared else v2[r]

    b = w.shape[0]
    exact = kind == 0
    w_e, w_u, w_l = _kind_sums(w, kind)
    mu = np.full(b, np.nan)
    sigma = np.full(b, np.nan)
    conv = np.zeros(b, dtype=bool)
    n_iter = np.zeros(b, dtype=int)
    gmax = 1.0 / sigma_floor

    # starting values (and the answer, for rows without censoring): weighted mean / SD
    with np.errstate(invalid="ignore", divide="ignore"):
        we = np.where(exact[None, :], w, 0.0)
        base_w = np.where((w_e > 0)[:, None], we, w)
        tot = base_w.sum(axis=1)
        m0 = (base_w * v2).sum(axis=1) / tot
        sd0 = np.sqrt((base_w * (v2 - m0[:, None]) ** 2).sum(axis=1) / tot)
    closed = (w_e > 0) & (w_u + w_l == 0)
    mu[closed] = m0[closed]
    sigma[closed] = np.maximum(sd0[closed], sigma_floor)
    conv[closed] = True
    fit = (w_e > 0) & (w_u + w_l > 0) | (w_e == 0) & (w_u > 0) & (w_l > 0)
    loglik = np.full(b, np.nan)
    rows = np.nonzero(fit)[0]
    if rows.size:
        start_sd = np.where(w_e[rows] > 0, sd0[rows], np.maximum(sd0[rows], 1.0))
        gamma = 1.0 / np.maximum(start_sd, sigma_floor)
        delta = m0[rows] * gamma
        active = np.ones(rows.size, dtype=bool)
        done_ok = np.zeros(rows.size, dtype=bool)
        it = np.zeros(rows.size, dtype=int)
        wr = w[rows]
        vr = vrows(rows)
        vsub = (lambda r: vr) if shared else (lambda r: vr[r])
        known = np.zeros(rows.size, bool)
        cache = np.zeros((6, rows.size))  # ll and derivatives at (delta, gamma)
        for _ in range(max_iter):
            idx = np.nonzero(active)[0]
            if idx.size == 0:
                break
            need = idx[~known[idx]]
            if need.size:
                cache[:, need] = _tobit_parts(delta[need], gamma[need], vsub(need), kind,
                                              wr[need])
                known[need] = True
            d0, g0 = delta[idx], gamma[idx]
            ll, gd, gg, hdd, hdg, hgg = cache[:, idx]
            det = hdd * hgg - hdg * hdg
            with np.errstate(invalid="ignore", divide="ignore"):
                step_d = -(hgg * gd - hdg * gg) / det
                step_g = -(-hdg * gd + hdd * gg) / det
            bad = ~((hdd < 0) & (det > 0) & np.isfinite(step_d) & np.isfinite(step_g))
            if np.any(bad):  # gradient ascent scaled by the curvature
                scale = 1.0 / np.maximum(np.maximum(np.abs(hdd), np.abs(hgg)), 1.0)
                step_d = np.where(bad, gd * scale, step_d)
                step_g = np.where(bad, gg * scale, step_g)
            at_floor = (g0 >= gmax * (1 - 1e-12)) & (gg > 0)
            if np.any(at_floor):  # sigma on its floor: maximise over delta alone
                step_d = np.where(at_floor, -gd / np.where(hdd < 0, hdd, -1.0), step_d)
                step_g = np.where(at_floor, 0.0, step_g)
            t = np.ones(idx.size)
            with np.errstate(invalid="ignore", divide="ignore"):
                t = np.where(step_g > 0, np.minimum(t, (gmax - g0) / step_g), t)
                t = np.where(step_g < 0, np.minimum(t, -0.9 * g0 / step_g), t)
            accepted = np.zeros(idx.size, dtype=bool)
            new_d, new_g = d0.copy(), g0.copy()
            for half in range(50):
                todo = np.nonzero(~accepted)[0]
                if todo.size == 0:
                    break
                cd = d0[todo] + t[todo] * step_d[todo]
                cg = np.minimum(g0[todo] + t[todo] * step_g[todo], gmax)
                sub = idx[todo]
                res = _tobit_parts(cd, cg, vsub(sub), kind, wr[sub], need_derivs=half == 0)
                ll_new = res[0] if half == 0 else res
                ok = np.isfinite(ll_new) & (ll_new >= ll[todo] - 1e-12 * np.abs(ll[todo]))
                new_d[todo[ok]] = cd[ok]
                new_g[todo[ok]] = cg[ok]
                accepted[todo[ok]] = True
                t[todo[~ok]] *= 0.5
                if half == 0:
                    cache[:, sub[ok]] = np.asarray(res)[:, ok]
                else:
                    known[sub[ok]] = False
            moved = np.maximum(np.abs(new_d - d0) / (1 + np.abs(d0)), np.abs(new_g - g0) / g0)
            delta[idx], gamma[idx] = new_d, new_g
            it[idx] += 1
            small = (moved < tol) | ~accepted
            diverged = (new_g < 1e-8) | (np.abs(new_d / new_g) > 1e8)
            finished = small | diverged
            done_ok[idx[small & ~diverged]] = True
            active[idx[finished]] = False
        ok = done_ok & (gamma >= 1e-8)
        mu[rows] = np.where(np.isfinite(delta / gamma) & (gamma >= 1e-8), delta / gamma, np.nan)
        sigma[rows] = np.where(gamma >= 1e-8, 1.0 / gamma, np.nan)
        conv[rows] = ok
        n_iter[rows] = it
    have = np.isfinite(mu)
    if np.any(have):
        loglik[have] = _tobit_parts(mu[have] / sigma[have], 1.0 / sigma[have],
                                    v2 if shared else v2[have], kind, w[have],
                                    need_derivs=False)
    return mu, sigma, conv, loglik, n_iter


def censored_normal_mle(values, kinds, counts=None,
                        sigma_floor: float = SIGMA_FLOOR_DB) -> CensoredFit:
    """Maximum-likelihood fit of N(mu, sigma^2) to exact values and one-sided bounds.

    The log-likelihood (weights ``c``) is the Tobit / censored-normal one: an exact value
    ``v`` contributes ``log phi((v - mu)/sigma) - log sigma``; an upper bound (the true
    value is ``<= v``) ``log Phi((v - mu)/sigma)``; a lower bound (``>= v``)
    ``log Phi(-(v - mu)/sigma)`` (``scipy.special.log_ndtr`` keeps far tails finite).
    It is maximised by Newton's method with step halving in Olsen's parameters
    ``(mu/sigma, 1/sigma)``, where the log-likelihood is concave, so the iteration cannot
    stall at a saddle; it starts from the mean and SD of the exact values. ``sigma`` is
    held at or above ``sigma_floor``: when the unconstrained maximum lies below it (e.g.
    all exact values equal) the fit maximises over ``mu`` with ``sigma = sigma_floor``.
    With no bounds the answer is the weighted mean and the ``ddof=0`` SD (floored)
    exactly. With no exact values and only one kind of bound there is no maximum
    (``mu`` runs to infinity): ``mu`` and ``sigma`` are NaN and ``converged`` False; also
    when ``sigma`` diverges (bounds that contradict each other).

    Parameters
    ----------
    values : array_like
        Differences or bounds [dB].
    kinds : array_like of int
        0 = exact value, +1 = upper bound (true <= value), -1 = lower bound (true >= value).
    counts : array_like, optional
        Non-negative frequency weights; default one each.
    sigma_floor : float
        Smallest allowed sigma [dB], default 0.3 dB.

    Returns
    -------
    CensoredFit

    References
    ----------
    .. [1] J. Tobin, "Estimation of relationships for limited dependent variables",
       Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
    .. [2] R. J. Olsen, "Note on the uniqueness of the maximum likelihood estimator for the
       Tobit model", Econometrica 46(5):1211-1215, 1978. doi:10.2307/1911445

    Examples
    --------
    An invented sample: 36 pairs with both antennas heard (B - A from -1 to +3 dB), 3 with
    only A heard at a bound of -1 dB and 6 with only B heard at a bound of +2 dB. A direct
    maximisation of the same log-likelihood with ``scipy.optimize.minimize`` (Nelder-Mead)
    finds the same maximum:

    >>> values = [-1, 0, 1, 2, 3, -1, 2]
    >>> kinds = [0, 0, 0, 0, 0, 1, -1]
    >>> counts = [4, 9, 12, 8, 3, 3, 6]
    >>> fit = censored_normal_mle(values, kinds, counts)
    >>> round(fit.mu, 3), round(fit.sigma, 3), fit.converged
    (1.002, 1.412, True)
    >>> fit.n_exact, fit.n_upper, fit.n_lower
    (36.0, 3.0, 6.0)
    >>> round(fit.loglik, 3), round(fit.se_mu, 3)
    (-73.006, 0.215)

    Without bounds the fit is the weighted mean, 33/36, and the ``ddof=0`` SD:

    >>> fit = censored_normal_mle(values[:5], kinds[:5], counts[:5])
    >>> round(fit.mu, 4), round(fit.sigma, 4)
    (0.9167, 1.1149)

    Only upper bounds have no maximum:

    >>> censored_normal_mle([1, 2], [1, 1]).converged
    False
    """
    check_positive(sigma_floor, "sigma_floor")
    v, k = _check_kinds(values, kinds)
    if counts is None:
        c = np.ones(v.shape)
    else:
        c = np.asarray(counts, dtype=float).ravel()
        if c.shape != v.shape:
            raise UsageError(f"counts has {c.size} entries but values has {v.size}")
        if np.any(~np.isfinite(c)) or np.any(c < 0):
            raise UsageError("counts must be finite and non-negative")
    mu, sigma, conv, ll, it = _tobit_batch(v, k, c[None, :], sigma_floor)
    se_mu = se_sigma = float("nan")
    if np.isfinite(mu[0]):
        gamma = 1.0 / sigma
        _, _, _, hdd, hdg, hgg = _tobit_parts(mu * gamma, gamma, v, k, c[None, :])
        info = -np.array([[hdd[0], hdg[0]], [hdg[0], hgg[0]]])
        if np.all(np.isfinite(info)) and np.linalg.det(info) > 0:
            g = gamma[0]
            jac = np.array([[g**-1, -mu[0] * g**-1], [0.0, -(g**-2)]])  # d(mu, s)/d(delta, gamma)
            cov = jac @ np.linalg.inv(info) @ jac.T
            se_mu, se_sigma = float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))
    return CensoredFit(float(mu[0]), float(sigma[0]), bool(conv[0]), float(c[k == 0].sum()),
                       float(c[k == 1].sum()), float(c[k == -1].sum()), float(ll[0]),
                       int(it[0]), se_mu, se_sigma)


def censored_normal_mle_batch(values, kinds, weights,
                              sigma_floor: float = SIGMA_FLOOR_DB):
    """Many censored-normal fits at once, one per row of ``weights`` (for the bootstrap).

    Same model and rules as :func:`censored_normal_mle`; all rows iterate together as
    ``(B, K)`` arrays. Rows with zero total weight, or without a maximum, give NaN.

    Parameters
    ----------
    values : array_like, shape (K,)
        Differences or bounds [dB], shared by all rows.
    kinds : array_like of int, shape (K,)
        0 exact, +1 upper bound, -1 lower bound.
    weights : array_like, shape (B, K)
        Non-negative weights of each value in each fit.
    sigma_floor : float
        Smallest allowed sigma [dB].

    Returns
    -------
    mu, sigma : numpy.ndarray, shape (B,)
        Fitted mean and SD [dB].

    References
    ----------
    .. [1] J. Tobin, Econometrica 26(1):24-36, 1958. doi:10.2307/1907382

    Examples
    --------
    The sample of :func:`censored_normal_mle`, then its exact values only, then its bounds
    only (no maximum):

    >>> values = [-1, 0, 1, 2, 3, -1, 2]
    >>> kinds = [0, 0, 0, 0, 0, 1, -1]
    >>> weights = [[4, 9, 12, 8, 3, 3, 6], [4, 9, 12, 8, 3, 0, 0], [0, 0, 0, 0, 0, 3, 6]]
    >>> mu, sigma = censored_normal_mle_batch(values, kinds, weights)
    >>> mu.round(3).tolist(), sigma.round(3).tolist()
    ([1.002, 0.917, nan], [1.412, 1.115, nan])
    """
    v, k, w = _check_batch(values, kinds, weights, sigma_floor)
    mu, sigma, _conv, _ll, _it = _tobit_batch(v, k, w, sigma_floor)
    return mu, sigma


# ------------------------------------------------------------- censored normal with missed reports
def _mixture_parts(delta, gamma, pa, pb, v, sgn, exact, w, need_hess=True, ew=1.0):
    """Log-likelihood, gradient (B, 4) and Hessian (B, 4, 4) of the missed-report mixture.

    Parameters ``(delta, gamma, pa, pb)``, each (B,); ``w`` is (B, K). An exact value
    contributes ``log(1 - pa) + log(1 - pb) + ew (log gamma - r^2/2 - log sqrt(2 pi))``;
    an upper bound (only A heard) ``log(pa + (1 - pa) Phi(u))``, a lower bound (only B
    heard) ``log(pb + (1 - pb) Phi(u))``, with ``u = sgn (gamma v - delta)``.
    """
    r = gamma[:, None] * v[None, :] - delta[:, None]
    u = sgn[None, :] * r
    log_cdf = special.log_ndtr(u)
    up = sgn[None, :] > 0
    own = np.where(up, pa[:, None], pb[:, None])     # the bound's own missing share
    log_1mo = np.log1p(-own)
    log_m = np.logaddexp(np.log(own), log_1mo + log_cdf)
    ex = exact[None, :]
    lg = np.log(gamma)[:, None]
    l1a, l1b = np.log1p(-pa)[:, None], np.log1p(-pb)[:, None]
    ll_e = l1a + l1b + ew * (lg - 0.5 * r * r - _LOG_SQRT_2PI)
    ll = np.sum(np.where(w > 0, w * np.where(ex, ll_e, log_m), 0.0), axis=1)
    if not need_hess:
        return ll
    log_pdf = -0.5 * u * u - _LOG_SQRT_2PI
    q = np.exp(log_1mo + log_pdf - log_m)           # (1 - p) phi / M
    h = -q * (u + q)
    ncdf = np.exp(special.log_ndtr(-u) - log_m)     # (1 - Phi) / M
    dq = -np.exp(log_pdf - 2.0 * log_m)             # d q / d own = -phi / M^2
    sv = sgn[None, :] * v[None, :]
    ia, ib = 1.0 / (1.0 - pa)[:, None], 1.0 / (1.0 - pb)[:, None]
    g_d = np.sum(w * np.where(ex, ew * r, -sgn * q), axis=1)
    g_g = np.sum(w * np.where(ex, ew * (1.0 / gamma[:, None] - r * v), sv * q), axis=1)
    g_a = np.sum(w * np.where(ex, -ia, np.where(up, ncdf, 0.0)), axis=1)
    g_b = np.sum(w * np.where(ex, -ib, np.where(up, 0.0, ncdf)), axis=1)
    h_dd = np.sum(w * np.where(ex, -ew, h), axis=1)
    h_dg = np.sum(w * np.where(ex, ew * v, -h * v), axis=1)
    h_gg = np.sum(w * np.where(ex, -ew * (1.0 / gamma[:, None] ** 2 + v * v), h * v * v),
                  axis=1)
    h_da = np.sum(w * np.where(ex | ~up, 0.0, -sgn * dq), axis=1)
    h_db = np.sum(w * np.where(ex | up, 0.0, -sgn * dq), axis=1)
    h_ga = np.sum(w * np.where(ex | ~up, 0.0, sv * dq), axis=1)
    h_gb = np.sum(w * np.where(ex | up, 0.0, sv * dq), axis=1)
    h_aa = np.sum(w * np.where(ex, -ia * ia, np.where(up, -ncdf * ncdf, 0.0)), axis=1)
    h_bb = np.sum(w * np.where(ex, -ib * ib, np.where(up, 0.0, -ncdf * ncdf)), axis=1)
    h_ab = np.zeros_like(h_aa)
    grad = np.stack([g_d, g_g, g_a, g_b], axis=1)
    hess = np.stack([np.stack([h_dd, h_dg, h_da, h_db], 1),
                     np.stack([h_dg, h_gg, h_ga, h_gb], 1),
                     np.stack([h_da, h_ga, h_aa, h_ab], 1),
                     np.stack([h_db, h_gb, h_ab, h_bb], 1)], axis=1)
    return ll, grad, hess


def _newton_step(hf, gf, eye):
    """Newton steps of a batch of log-likelihoods: ``-H^-1 g`` where the Hessian ``hf`` is
    negative definite, else gradient ascent scaled by the curvature; rows with non-finite
    derivatives take no step. ``hf`` and ``gf`` are modified in place."""
    finite = np.all(np.isfinite(hf), axis=(1, 2)) & np.all(np.isfinite(gf), axis=1)
    hf[~finite] = -eye
    gf[~finite] = 0.0
    ok_h = finite & (np.linalg.eigvalsh(hf).max(axis=1) < 0)
    step = np.zeros(gf.shape)
    if ok_h.any():
        step[ok_h] = -np.linalg.solve(hf[ok_h], gf[ok_h][:, :, None])[:, :, 0]
    if (~ok_h).any():  # gradient ascent scaled by the curvature
        diag = np.abs(np.diagonal(hf[~ok_h], axis1=1, axis2=2))
        step[~ok_h] = gf[~ok_h] / np.maximum(diag, 1.0)
    return step


def _mixture_batch(v, kind, w, sigma_floor, max_iter=200, tol=1e-9, pi_min=1e-6,
                   pi_max=0.95, ew=1.0):
    """Batch fit of the missed-report mixture; returns mu, sigma, pa, pb, converged, loglik."""
    b = w.shape[0]
    exact = kind == 0
    sgn = kind.astype(float)
    w_e = w[:, exact].sum(axis=1)
    mu, sigma, conv, loglik, _it = _tobit_batch(v, kind, np.where(exact[None, :], ew * w, w),
                                                sigma_floor)
    pa, pb = np.zeros(b), np.zeros(b)
    # the mixture needs exact values (without them the missing shares explain every bound)
    rows = np.nonzero((w_e > 0) & (w[:, ~exact].sum(axis=1) > 0))[0]
    if rows.size == 0:
        return mu, sigma, pa, pb, conv, loglik
    gmax = 1.0 / sigma_floor
    wr = w[rows]
    with np.errstate(invalid="ignore", divide="ignore"):
        we = np.where(exact[None, :], wr, 0.0)
        m0 = (we * v).sum(axis=1) / w_e[rows]
        sd0 = np.sqrt((we * (v - m0[:, None]) ** 2).sum(axis=1) / w_e[rows])
    x = np.empty((rows.size, 4))
    x[:, 1] = 1.0 / np.maximum(sd0, sigma_floor)
    x[:, 0] = m0 * x[:, 1]
    tot = wr.sum(axis=1)
    x[:, 2] = np.clip(0.5 * wr[:, kind == 1].sum(axis=1) / tot, 0.01, 0.3)
    x[:, 3] = np.clip(0.5 * wr[:, kind == -1].sum(axis=1) / tot, 0.01, 0.3)
    active = np.ones(rows.size, bool)
    done = np.zeros(rows.size, bool)
    eye = np.eye(4)
    for _ in range(max_iter):
        idx = np.nonzero(active)[0]
        if idx.size == 0:
            break
        wa = wr[idx]
        x0 = x[idx]
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            ll, grad, hess = _mixture_parts(x0[:, 0], x0[:, 1], x0[:, 2], x0[:, 3], v, sgn,
                                            exact, wa, ew=ew)
        # parameters held on a bound: a share at its floor pushing down, sigma at its floor
        fixed = np.zeros((idx.size, 4), bool)
        fixed[:, 1] = (x0[:, 1] >= gmax * (1 - 1e-12)) & (grad[:, 1] > 0)
        for j in (2, 3):
            fixed[:, j] = ((x0[:, j] <= pi_min) & (grad[:, j] <= 0.0)
                           | (x0[:, j] >= pi_max) & (grad[:, j] >= 0.0))
        gf = np.where(fixed, 0.0, grad)
        hf = np.where(fixed[:, :, None] | fixed[:, None, :], 0.0, hess)
        hf = hf - eye[None] * fixed[:, :, None]
        step = _newton_step(hf, gf, eye)
        t = np.ones(idx.size)
        with np.errstate(invalid="ignore", divide="ignore"):
            sg = step[:, 1]
            t = np.where(sg > 0, np.minimum(t, (gmax - x0[:, 1]) / sg), t)
            t = np.where(sg < 0, np.minimum(t, -0.9 * x0[:, 1] / sg), t)
            for j in (2, 3):
                sp = step[:, j]
                t = np.where(sp < 0, np.minimum(t, (pi_min - x0[:, j]) / sp), t)
                t = np.where(sp > 0, np.minimum(t, (pi_max - x0[:, j]) / sp), t)
        t = np.maximum(t, 0.0)
        accepted = np.zeros(idx.size, bool)
        xn = x0.copy()
        for _half in range(50):
            todo = np.nonzero(~accepted)[0]
            if todo.size == 0:
                break
            c = x0[todo] + t[todo, None] * step[todo]
            c[:, 1] = np.minimum(c[:, 1], gmax)
            c[:, 2:] = np.clip(c[:, 2:], pi_min, pi_max)
            with np.errstate(invalid="ignore", divide="ignore"):
                ll_new = _mixture_parts(c[:, 0], c[:, 1], c[:, 2], c[:, 3], v, sgn, exact,
                                        wa[todo], need_hess=False, ew=ew)
            okk = np.isfinite(ll_new) & (ll_new >= ll[todo] - 1e-12 * np.abs(ll[todo]))
            xn[todo[okk]] = c[okk]
            accepted[todo[okk]] = True
            t[todo[~okk]] *= 0.5
        scale = np.c_[1 + np.abs(x0[:, :1]), x0[:, 1:2], np.ones((idx.size, 2))]
        moved = np.max(np.abs(xn - x0) / scale, axis=1)
        x[idx] = xn
        small = (moved < tol) | ~accepted
        diverged = (xn[:, 1] < 1e-8) | (np.abs(xn[:, 0] / xn[:, 1]) > 1e8)
        done[idx[small & ~diverged]] = True
        active[idx[small | diverged]] = False
    with np.errstate(invalid="ignore", divide="ignore"):
        m_new = np.where(x[:, 1] >= 1e-8, x[:, 0] / x[:, 1], np.nan)
        ll_new = _mixture_parts(x[:, 0], x[:, 1], x[:, 2], x[:, 3], v, sgn, exact, wr,
                                need_hess=False, ew=ew)
    # keep the plain fit where the mixture did not do better (it nests it at pa = pb = 0)
    better = done & np.isfinite(m_new) & ~(ll_new < np.nan_to_num(loglik[rows], nan=-np.inf))
    r_b = rows[better]
    mu[r_b], sigma[r_b] = m_new[better], 1.0 / x[better, 1]
    pa[r_b], pb[r_b] = x[better, 2], x[better, 3]
    conv[r_b] = True
    loglik[r_b] = ll_new[better]
    return mu, sigma, pa, pb, conv, loglik


#: Default weight of an exact value in the mixture fits: 2, the paired composite likelihood
#: (a both-heard pair enters "B given A heard" and "A given B heard"), the normalised one
MIXTURE_EXACT_WEIGHT = 2.0


def censored_mixture_mle(values, kinds, counts=None, sigma_floor: float = SIGMA_FLOOR_DB,
                         exact_weight: float = MIXTURE_EXACT_WEIGHT) -> CensoredFit:
    """Censored-normal fit allowing for reports missing for reasons other than ``d``.

    A one-sided observation (one antenna heard, the other not) is explained either by the
    censored normal - the silent side was below its limit - or by something that does not
    depend on ``d`` (the path closed or faded out between two slots, the receiver stopped
    listening, a decode was lost to interference): with probability ``pa`` when only A
    was heard (an upper bound), ``pb`` when only B was (a lower bound). An upper bound
    contributes ``log(pa + (1 - pa) Phi(u))``, a lower bound ``log(pb + (1 - pb) Phi(u))``
    and an exact value ``log(1 - pa) + log(1 - pb) + exact_weight * log(phi(r) / sigma)``:
    the product of the two conditional likelihoods "B's outcome given A heard" and "A's
    outcome given B heard" of paired reports (each with its own missing share) when
    ``exact_weight`` is 2 (the default). Each factor is normalised: over B's outcomes given
    A heard, ``(1 - pa) P(B heard) + pa + (1 - pa) P(B missed) = 1``. With
    ``exact_weight`` 1 and both kinds of bound the terms are no probability distribution
    over the outcomes of a pair (both heard would weigh ``(1 - pa)(1 - pb)``, the one-sided
    outcomes ``pa + ...`` and ``pb + ...``): its maximum is no maximum-likelihood
    estimate, and the shares it fits are not the shares of missed reports. 1 is right only
    for unpaired observations with one kind of bound (the before/after design), where it
    is the normalised likelihood of one report. ``pa`` and ``pb`` are nuisance
    parameters fitted with ``mu`` and ``sigma``; bounds the normal cannot explain (a
    strong report on one side and nothing on the other) identify them. The model nests the
    censored-normal fit (``pa = pb = 0``), which is returned where the mixture does not
    fit better. ``pa`` and ``pb`` are held in ``[1e-6, 0.95]`` (the floor keeps the
    derivatives finite for bounds far in the normal's tail); without exact values they are
    0 (they would explain every bound). Maximised by Newton's method in
    ``(mu/sigma, 1/sigma, pa, pb)`` with step halving, started from the mean and SD of the
    exact values.

    Parameters and returns as :func:`censored_normal_mle`, plus ``exact_weight`` (weight
    of an exact value's normal density, default :data:`MIXTURE_EXACT_WEIGHT`);
    ``CensoredFit.missed_a`` / ``missed_b`` hold
    ``pa`` / ``pb``. Standard errors are not computed (NaN): use the bootstrap.

    References
    ----------
    .. [1] J. Tobin, Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
    .. [2] G. J. McLachlan and D. Peel, Finite Mixture Models, Wiley, 2000 (mixture
       likelihoods; citation from memory).
    .. [3] C. Varin, N. Reid and D. Firth, "An overview of composite likelihood methods",
       Statistica Sinica 21:5-42, 2011 (products of conditional likelihoods; citation
       from memory).

    Examples
    --------
    The sample of :func:`censored_normal_mle` with two more pairs where only B was heard,
    at a bound of +8 dB: far above the exact values, so the plain fit's ``mu`` moves up to
    1.39 dB while the mixture puts those pairs in ``missed_b`` and stays near 0.9 dB:

    >>> values = [-1, 0, 1, 2, 3, -1, 2, 8]
    >>> kinds = [0, 0, 0, 0, 0, 1, -1, -1]
    >>> counts = [4, 9, 12, 8, 3, 3, 6, 2]
    >>> round(censored_normal_mle(values, kinds, counts).mu, 2)
    1.39
    >>> fit = censored_mixture_mle(values, kinds, counts)
    >>> round(fit.mu, 2), round(fit.sigma, 2), round(fit.missed_a, 3), round(fit.missed_b, 3)
    (0.94, 1.22, 0.022, 0.093)
    """
    check_positive(sigma_floor, "sigma_floor")
    v, k = _check_kinds(values, kinds)
    c = np.ones(v.shape) if counts is None else np.asarray(counts, dtype=float).ravel()
    if c.shape != v.shape:
        raise UsageError(f"counts has {c.size} entries but values has {v.size}")
    if np.any(~np.isfinite(c)) or np.any(c < 0):
        raise UsageError("counts must be finite and non-negative")
    mu, sigma, pa, pb, conv, ll = _mixture_batch(v, k, c[None, :], sigma_floor,
                                                 ew=float(exact_weight))
    return CensoredFit(float(mu[0]), float(sigma[0]), bool(conv[0]), float(c[k == 0].sum()),
                       float(c[k == 1].sum()), float(c[k == -1].sum()), float(ll[0]), 0,
                       missed_a=float(pa[0]), missed_b=float(pb[0]))


def censored_mixture_mle_batch(values, kinds, weights, sigma_floor: float = SIGMA_FLOOR_DB,
                               exact_weight: float = MIXTURE_EXACT_WEIGHT):
    """Many :func:`censored_mixture_mle` fits at once, one per row of ``weights``.

    Returns
    -------
    mu, sigma, missed_a, missed_b : numpy.ndarray, shape (B,)
        Fitted mean and SD [dB] and the missing shares ``pa``, ``pb``.

    Examples
    --------
    The sample of :func:`censored_mixture_mle` with and without its two far bounds:

    >>> values = [-1, 0, 1, 2, 3, -1, 2, 8]
    >>> kinds = [0, 0, 0, 0, 0, 1, -1, -1]
    >>> weights = [[4, 9, 12, 8, 3, 3, 6, 2], [4, 9, 12, 8, 3, 3, 6, 0]]
    >>> mu, sigma, missed_a, missed_b = censored_mixture_mle_batch(values, kinds, weights)
    >>> mu.round(2).tolist(), missed_b.round(3).tolist()
    ([0.94, 0.96], [0.093, 0.0])
    """
    v, k, w = _check_batch(values, kinds, weights, sigma_floor)
    mu, sigma, pa, pb, _conv, _ll = _mixture_batch(v, k, w, sigma_floor,
                                                   ew=float(exact_weight))
    return mu, sigma, pa, pb


def normal_share(values, kinds, mu, sigma, missed_a, missed_b):
    """Posterior share of each observation explained by the censored normal.

    1 for exact values; for a bound ``(1 - p) Phi(u) / (p + (1 - p) Phi(u))`` with ``p``
    its side's missing share (``missed_a`` for upper bounds, ``missed_b`` for lower
    bounds). Parameters are arrays of shape (B,); returns shape (B, K).

    Examples
    --------
    With the fit of :func:`censored_mixture_mle`: the bounds at -1 and +2 dB are mostly
    explained by the normal, the one at +8 dB not at all:

    >>> values = [-1, 0, 1, 2, 3, -1, 2, 8]
    >>> kinds = [0, 0, 0, 0, 0, 1, -1, -1]
    >>> fit = censored_mixture_mle(values, kinds, [4, 9, 12, 8, 3, 3, 6, 2])
    >>> share = normal_share(values, kinds, fit.mu, fit.sigma, fit.missed_a, fit.missed_b)
    >>> share.round(3).tolist()
    [[1.0, 1.0, 1.0, 1.0, 1.0, 0.709, 0.652, 0.0]]
    """
    v, k = _check_kinds(values, kinds)
    mu, sigma, pa, pb = (np.atleast_1d(np.asarray(x, dtype=float))
                         for x in (mu, sigma, missed_a, missed_b))
    u = k[None, :] * (v[None, :] - mu[:, None]) / sigma[:, None]
    own = np.where(k[None, :] > 0, pa[:, None], pb[:, None])
    with np.errstate(divide="ignore", invalid="ignore"):
        a = np.log1p(-own) + special.log_ndtr(u)
        share = np.exp(a - np.logaddexp(np.log(own), a))
    return np.where(k[None, :] == 0, 1.0, share)


# ------------------------------------------------ interval-censored fit with a detection model
def _t_cdf_odd(nu):
    """Student t CDF for odd ``nu`` in closed form (Abramowitz and Stegun 26.7.3)."""
    terms, coef = [], 1.0
    for j in range(1, (int(nu) - 1) // 2):  # cos theta^(2j+1) coefficients
        terms.append(coef)
        coef *= 2.0 * j / (2.0 * j + 1.0)
    terms.append(coef)

    def cdf(z):
        r = nu + z * z
        c2 = nu / r
        c = np.sqrt(c2)
        poly = np.zeros_like(z)
        for a in reversed(terms):
            poly = poly * c2 + a
        a_t = (2.0 / np.pi) * (np.arctan(z / np.sqrt(nu)) + (z / np.sqrt(r)) * c * poly)
        return 0.5 + 0.5 * a_t

    return cdf


def _t_cdf_even(nu):
    """Student t CDF for even ``nu`` in closed form (Abramowitz and Stegun 26.7.4)."""
    terms, coef = [], 1.0
    for j in range(int(nu) // 2):
        terms.append(coef)
        coef *= (2.0 * j + 1.0) / (2.0 * j + 2.0)

    def cdf(z):
        r = nu + z * z
        c2 = nu / r
        poly = np.zeros_like(z)
        for a in reversed(terms):
            poly = poly * c2 + a
        return 0.5 + 0.5 * (z / np.sqrt(r)) * poly

    return cdf


#: closed-form Student t CDFs for the tails the fit chooses from (:data:`spotkit.compare.
#: estimate.TAIL_DFS`): elementary functions, several times faster than the incomplete beta
#: function of ``scipy.special.stdtr``, which they match to 1e-10 (relative) for ``|z| <``
#: :data:`_T_CLOSED_MAX_Z` (beyond, where ``0.5 + 0.5 A`` would lose relative precision in
#: the lower tail, ``stdtr`` is used)
_T_CDF_CLOSED = {3.0: _t_cdf_odd(3.0), 5.0: _t_cdf_odd(5.0), 10.0: _t_cdf_even(10.0)}
_T_CLOSED_MAX_Z = 8.0


def _family(df):
    """(cdf, log pdf, g, g') of the standard normal (``df`` inf) or Student t (``df``);
    ``g = -f'/f`` is the score of the location."""
    if not np.isfinite(df):
        def logpdf(z):
            return -0.5 * z * z - _LOG_SQRT_2PI

        return (special.ndtr, logpdf, lambda z: z, lambda z: np.ones_like(z),
                special.log_ndtr)
    nu = float(df)
    const = (special.gammaln((nu + 1) / 2) - special.gammaln(nu / 2)
             - 0.5 * np.log(nu * np.pi))

    closed = _T_CDF_CLOSED.get(nu)

    def cdf(z):
        if closed is None:
            return special.stdtr(nu, z)
        z = np.asarray(z, dtype=float)
        far = ~(np.abs(z) < _T_CLOSED_MAX_Z)  # far tails (and NaN): the incomplete beta
        if z.ndim == 0:
            return special.stdtr(nu, z) if far else closed(z)
        with np.errstate(invalid="ignore", over="ignore"):
            out = np.asarray(closed(z), dtype=float)
        if far.any():
            out[far] = special.stdtr(nu, z[far])
        return out

    def logpdf(z):
        return const - (nu + 1) / 2 * np.log1p(z * z / nu)

    def g(z):
        return (nu + 1) * z / (nu + z * z)

    def gp(z):
        return (nu + 1) * (nu - z * z) / (nu + z * z) ** 2

    def logcdf(z):
        with np.errstate(divide="ignore"):
            return np.log(cdf(z))

    return cdf, logpdf, g, gp, logcdf


#: categories of the detection model's items: a lower bound ``[c, inf)``, an interval
#: ``[lo, hi]``, a point (density at ``lo``) and an upper bound ``(-inf, c]``
_LOWER, _INTERVAL, _POINT, _UPPER = 0, 1, 2, 3


def _blocks(cat):
    """Contiguous runs ``(category, slice)`` of a category array (K,)."""
    cat = np.asarray(cat)
    if cat.size == 0:
        return []
    cut = np.flatnonzero(np.diff(cat)) + 1
    starts, ends = np.r_[0, cut], np.r_[cut, cat.size]
    return [(int(cat[s]), slice(int(s), int(e))) for s, e in zip(starts, ends, strict=True)]


class _Items:
    """The items of a detection-model fit, in runs of one category each.

    ``lo``, ``hi``, ``tau2`` have shape (R, K): R is 1 (shared by every row of a batch) or
    the batch's rows (each row its own values, e.g. one group per row). ``kind`` (K,) is
    the kind code; the categories (:data:`_LOWER`...) are the same in every row, so each
    run is evaluated once on a column slice, with only the formulas its category needs."""

    def __init__(self, lo, hi, point, tau2, kind):
        self.lo, self.hi, self.tau2 = (np.atleast_2d(np.asarray(a, dtype=float))
                                       for a in (lo, hi, tau2))
        self.point = np.asarray(point, dtype=bool).ravel()
        self.kind = np.asarray(kind).ravel()
        fin_l, fin_h = np.isfinite(self.lo[0]), np.isfinite(self.hi[0])
        cat = np.where(self.point, _POINT, np.where(fin_l & fin_h, _INTERVAL,
                                                    np.where(fin_h, _UPPER, _LOWER)))
        self.blocks = _blocks(cat)

    def take(self, rows):
        """The items of some rows (all of them when shared)."""
        if self.lo.shape[0] == 1:
            return self
        out = object.__new__(_Items)
        out.lo, out.hi, out.tau2 = self.lo[rows], self.hi[rows], self.tau2[rows]
        out.point, out.kind, out.blocks = self.point, self.kind, self.blocks
        return out


def _block_terms(cat, m, sigma, lo, hi, tau2, fam, need_derivs):
    """Log-probability of the items of one category and its derivatives in (mu, sigma).

    ``m``, ``sigma``: (B, 1); ``lo``, ``hi``, ``tau2``: (R, Kb), R 1 or B. Each cdf, pdf
    and score is evaluated once per item (a bound needs one cdf, a point none); the
    formulas are those of the general interval ``log(F(zh) - F(zl))`` with the terms of an
    infinite end dropped. Returns ``l`` or ``(l, l_m, l_s, l_mm, l_ms, l_ss)`` (B, Kb);
    ``need_derivs="sigma"``: the derivatives in ``sigma`` alone (the others None)."""
    only_s = isinstance(need_derivs, str)
    _cdf, logpdf, g, gp, logcdf = fam
    s = np.sqrt(sigma ** 2 + tau2)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if cat == _POINT:
            z = (lo - m) / s
            ll = logpdf(z) - np.log(s)
            if not need_derivs:
                return ll
            gz, gpz = g(z), gp(z)
            s2 = s * s
            l_s = (z * gz - 1) / s
            l_ss = (1 - 2 * z * gz - z * z * gpz) / s2
            if not only_s:
                l_m = gz / s
                l_mm = -gpz / s2
                l_ms = -(gz + z * gpz) / s2
        else:
            if cat == _INTERVAL:
                # log(F(zh) - F(zl)) without underflow far in a tail: in the upper tail as
                # F(-zl) - F(-zh); then log F(hi) + log1p(-F(lo) / F(hi))
                zl, zh = (lo - m) / s, (hi - m) / s
                upper = zl > 0
                l_hi = logcdf(np.where(upper, -zl, zh))
                l_lo = logcdf(np.where(upper, -zh, zl))
                ll = l_hi + np.log1p(-np.exp(l_lo - l_hi))
            elif cat == _UPPER:
                zh = (hi - m) / s
                ll = _no_neginf(logcdf(zh))
            else:  # a lower bound: log(1 - F(zl)), as F(-zl) in the upper tail
                zl = (lo - m) / s
                upper = zl > 0
                lz = logcdf(np.where(upper, -zl, zl))
                ll = np.where(upper, _no_neginf(lz), np.log1p(-np.exp(lz)))
            if not need_derivs:
                return ll
            if only_s:  # the terms of l_s and l_ss
                a = g1 = c = None
                if cat == _INTERVAL:
                    fl = np.exp(logpdf(zl) - ll)
                    fh = np.exp(logpdf(zh) - ll)
                    bq = zh * fh - zl * fl
                    d = zh * zh * g(zh) * fh - zl * zl * g(zl) * fl
                elif cat == _UPPER:
                    fh = np.exp(logpdf(zh) - ll)
                    bq = zh * fh
                    d = zh * zh * g(zh) * fh
                else:
                    fl = np.exp(logpdf(zl) - ll)
                    bq = -(zl * fl)
                    d = -(zl * zl * g(zl) * fl)
            elif cat == _INTERVAL:
                fl = np.exp(logpdf(zl) - ll)  # f(zl) / P
                fh = np.exp(logpdf(zh) - ll)
                gl, gh = g(zl), g(zh)
                a = fh - fl
                bq = zh * fh - zl * fl
                g1 = gh * fh - gl * fl
                c = zh * gh * fh - zl * gl * fl
                d = zh * zh * gh * fh - zl * zl * gl * fl
            elif cat == _UPPER:
                fh = np.exp(logpdf(zh) - ll)
                gh = g(zh)
                a = fh
                bq = zh * fh
                g1 = gh * fh
                c = zh * gh * fh
                d = zh * zh * gh * fh
            else:
                fl = np.exp(logpdf(zl) - ll)
                gl = g(zl)
                a = -fl
                bq = -(zl * fl)
                g1 = -(gl * fl)
                c = -(zl * gl * fl)
                d = -(zl * zl * gl * fl)
            s2 = s * s
            l_s = -bq / s
            l_ss = (2 * bq - d - bq * bq) / s2
            if not only_s:
                l_m = -a / s
                l_mm = -(g1 + a * a) / s2
                l_ms = (a - c - a * bq) / s2
        # chain rule from s to sigma: s' = sigma / s, s'' = tau2 / s^3
        ds = sigma / s
        d2s = tau2 / (s2 * s)
        if only_s:
            return (ll, None, l_s * ds, None, None, l_ss * ds * ds + l_s * d2s)
        return (ll, l_m, l_s * ds, l_mm, l_ms * ds, l_ss * ds * ds + l_s * d2s)


def _no_neginf(x):
    """``x`` with -inf as NaN (a bound whose probability underflows has no usable log)."""
    bad = np.isneginf(x)
    return np.where(bad, np.nan, x) if bad.any() else x


def _interval_terms(mu, sigma, lo, hi, point, tau2, fam, need_derivs=True):
    """Per-item log-probability and its derivatives in (mu, sigma), shape (B, K).

    An item is the interval ``[lo, hi]`` (``-inf`` / ``+inf`` for one-sided bounds) of a
    variable with location ``mu`` and scale ``s = sqrt(sigma^2 + tau2)``, or a point
    (``point``: density at ``lo``). Returns ``l, l_m, l_s, l_mm, l_ms, l_ss``.
    """
    items = _Items(lo, hi, point, tau2, np.zeros(np.size(point), int))
    m = np.asarray(mu, dtype=float)[:, None]
    sg = np.asarray(sigma, dtype=float)[:, None]
    shape = (m.shape[0], items.point.size)
    out = [np.empty(shape) for _ in range(6 if need_derivs else 1)]
    for cat, sl in items.blocks:
        res = _block_terms(cat, m, sg, items.lo[:, sl], items.hi[:, sl], items.tau2[:, sl],
                           fam, need_derivs)
        for o, r in zip(out, res if need_derivs else (res,), strict=True):
            o[:, sl] = r
    return tuple(out) if need_derivs else out[0]


def _detection_parts(x, items, w, fam, missed, ew, need_derivs=True):
    """Log-likelihood (B,), gradient (B, 4) and Hessian (B, 4, 4) in (mu, sigma, pa, pb).

    Exact items contribute ``ew * l + [log(1 - pa) + log(1 - pb)]``, bounds ``l`` or, with
    the missed-report shares, ``log(p + (1 - p) exp(l))`` with their side's ``p``.
    ``items`` (:class:`_Items`) hold one row or one per row of ``x``."""
    mu, sigma, pa, pb = x[:, 0], x[:, 1], x[:, 2], x[:, 3]
    m, sg = mu[:, None], sigma[:, None]
    bsz = x.shape[0]
    ll = np.zeros(bsz)
    if need_derivs:
        grad = np.zeros((bsz, 4))
        hess = np.zeros((bsz, 4, 4))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if missed:
            l1a, l1b = np.log1p(-pa)[:, None], np.log1p(-pb)[:, None]
            ia, ib = 1.0 / (1.0 - pa), 1.0 / (1.0 - pb)
        for cat, sl in items.blocks:
            wb = w[:, sl]
            res = _block_terms(cat, m, sg, items.lo[:, sl], items.hi[:, sl],
                               items.tau2[:, sl], fam, need_derivs)
            l_i = res[0] if need_derivs else res
            exact = cat in (_INTERVAL, _POINT)
            if missed and not exact:
                own = (pa if cat == _UPPER else pb)[:, None]
                l1o = np.log1p(-own)
                log_m = np.logaddexp(np.log(own), l1o + l_i)
                contrib = log_m
            elif missed:
                contrib = ew * l_i + l1a + l1b
            else:
                contrib = ew * l_i if exact else l_i
            ll += np.sum(np.where(wb > 0, wb * contrib, 0.0), axis=1)
            if not need_derivs:
                continue
            _, l_m, l_s, l_mm, l_ms, l_ss = res
            ww = np.where(wb > 0, wb, 0.0)
            if missed and not exact:
                q = np.exp(l1o + l_i - log_m)  # posterior share
                r = q * (1 - q)
                e_l = np.exp(l_i)
                dp = (1 - e_l) / np.exp(log_m)  # d/dp of a bound
                dpt = -e_l / np.exp(2 * log_m)  # d2/dp dtheta / l_theta
                j = 2 if cat == _UPPER else 3
                grad[:, j] += np.sum(ww * dp, axis=1)
                hess[:, j, j] += np.sum(ww * (-dp * dp), axis=1)
                hess[:, j, 0] += np.sum(ww * (dpt * l_m), axis=1)
                hess[:, j, 1] += np.sum(ww * (dpt * l_s), axis=1)
                wq = ww * q
                grad[:, 0] += np.sum(wq * l_m, axis=1)
                grad[:, 1] += np.sum(wq * l_s, axis=1)
                hess[:, 0, 0] += np.sum(ww * (q * l_mm + r * l_m * l_m), axis=1)
                hess[:, 0, 1] += np.sum(ww * (q * l_ms + r * l_m * l_s), axis=1)
                hess[:, 1, 1] += np.sum(ww * (q * l_ss + r * l_s * l_s), axis=1)
                continue
            wq = ww * ew if exact else ww
            grad[:, 0] += np.sum(wq * l_m, axis=1)
            grad[:, 1] += np.sum(wq * l_s, axis=1)
            hess[:, 0, 0] += np.sum(wq * l_mm, axis=1)
            hess[:, 0, 1] += np.sum(wq * l_ms, axis=1)
            hess[:, 1, 1] += np.sum(wq * l_ss, axis=1)
            if missed:  # exact items: log(1 - pa) + log(1 - pb)
                n_e = np.sum(ww, axis=1)
                grad[:, 2] -= n_e * ia
                grad[:, 3] -= n_e * ib
                hess[:, 2, 2] -= n_e * ia * ia
                hess[:, 3, 3] -= n_e * ib * ib
    if not need_derivs:
        return ll
    hess[:, 1, 0] = hess[:, 0, 1]
    for j in (2, 3):
        hess[:, 0, j], hess[:, 1, j] = hess[:, j, 0], hess[:, j, 1]
    return ll, grad, hess


def _kind_sums(w, kind):
    """Total weight of the exact values, upper and lower bounds per row of ``w``: (3, B)."""
    return np.stack([w[:, kind == c].sum(axis=1) for c in (0, 1, -1)])


def _detection_batch(items, w, fam, missed, ew, sigma_floor, start_mu, start_sigma,
                     max_iter=200, tol=1e-10, pi_min=1e-6, pi_max=0.95):
    """Batch Newton fit of :func:`_detection_parts`; returns mu, sigma, pa, pb, conv, loglik.

    Rows whose start is NaN are left NaN. Parameters on a bound (sigma on its floor, a
    share at ``pi_min`` / ``pi_max``) are held there while the gradient pushes outwards.
    The log-likelihood and its derivatives are evaluated once per accepted step: the
    first trial point of the line search is evaluated with derivatives, which the next
    iteration uses when it is accepted."""
    kind = items.kind
    b = w.shape[0]
    x = np.zeros((b, 4))
    x[:, 0], x[:, 1] = start_mu, np.maximum(start_sigma, sigma_floor)
    n_free = 4 if missed else 2
    w_e, w_u, w_l = _kind_sums(w, kind)
    no_exact = w_e <= 0
    if missed:
        tot = np.maximum(w.sum(axis=1), 1e-300)
        x[:, 2] = np.clip(0.1 * w_u / tot, 0.001, 0.3)
        x[:, 3] = np.clip(0.1 * w_l / tot, 0.001, 0.3)
        # without exact values the shares would explain every bound
        x[no_exact, 2:] = pi_min
    active = np.isfinite(x[:, 0]) & np.isfinite(x[:, 1])
    done = np.zeros(b, bool)
    eye = np.eye(n_free)
    ll_cur = np.full(b, np.nan)
    # the log-likelihood and derivatives at x, where known (``known``)
    known = np.zeros(b, bool)
    c_ll, c_g, c_h = np.full(b, np.nan), np.zeros((b, 4)), np.zeros((b, 4, 4))
    for _ in range(max_iter):
        idx = np.nonzero(active)[0]
        if idx.size == 0:
            break
        need = idx[~known[idx]]
        if need.size:
            c_ll[need], c_g[need], c_h[need] = _detection_parts(
                x[need], items.take(need), w[need], fam, missed, ew)
            known[need] = True
        x0 = x[idx]
        ll, grad, hess = c_ll[idx], c_g[idx, :n_free], c_h[idx, :n_free, :n_free]
        fixed = np.zeros((idx.size, n_free), bool)
        fixed[:, 1] = (x0[:, 1] <= sigma_floor * (1 + 1e-12)) & (grad[:, 1] < 0)
        if missed:
            for j in (2, 3):
                fixed[:, j] = ((x0[:, j] <= pi_min) & (grad[:, j] <= 0)
                               | (x0[:, j] >= pi_max) & (grad[:, j] >= 0) | no_exact[idx])
        gf = np.where(fixed, 0.0, grad)
        hf = np.where(fixed[:, :, None] | fixed[:, None, :], 0.0, hess) - eye * fixed[:, :, None]
        step = _newton_step(hf, gf, eye)
        t = np.ones(idx.size)
        with np.errstate(invalid="ignore", divide="ignore"):
            sg = step[:, 1]
            t = np.where(sg < 0, np.minimum(t, 0.9 * (x0[:, 1] - 0.5 * sigma_floor)
                                            / -sg), t)
            if missed:
                for j in (2, 3):
                    sp = step[:, j]
                    t = np.where(sp < 0, np.minimum(t, (x0[:, j] - 0.5 * pi_min) / -sp), t)
                    t = np.where(sp > 0, np.minimum(t, (1 - x0[:, j]) * 0.99 / sp), t)
        t = np.maximum(t, 0.0)
        accepted = np.zeros(idx.size, bool)
        xn = x0.copy()
        ll_new_all = ll.copy()
        for half in range(40):
            todo = np.nonzero(~accepted)[0]
            if todo.size == 0:
                break
            c = x0[todo].copy()
            c[:, :n_free] += t[todo, None] * step[todo]
            c[:, 1] = np.maximum(c[:, 1], sigma_floor)
            if missed:
                c[:, 2:] = np.clip(c[:, 2:], pi_min, pi_max)
            rows = idx[todo]
            res = _detection_parts(c, items.take(rows), w[rows], fam, missed, ew,
                                   need_derivs=half == 0)
            ll_new = res[0] if half == 0 else res
            okk = np.isfinite(ll_new) & (ll_new >= ll[todo] - 1e-12 * np.abs(ll[todo]))
            xn[todo[okk]] = c[okk]
            ll_new_all[todo[okk]] = ll_new[okk]
            accepted[todo[okk]] = True
            t[todo[~okk]] *= 0.5
            moved_rows = rows[okk]
            if half == 0:  # derivatives at the new point, for the next iteration
                c_ll[moved_rows], c_g[moved_rows], c_h[moved_rows] = (
                    res[0][okk], res[1][okk], res[2][okk])
            else:
                known[moved_rows] = False
        scale = np.c_[1 + np.abs(x0[:, :1]), x0[:, 1:2], np.ones((idx.size, 2))]
        moved = np.max(np.abs(xn - x0) / scale, axis=1)
        x[idx] = xn
        ll_cur[idx] = ll_new_all
        small = (moved < tol) | ~accepted
        diverged = (xn[:, 1] > 1e6) | (np.abs(xn[:, 0]) > 1e6) | ~np.isfinite(ll_new_all)
        done[idx[small & ~diverged]] = True
        active[idx[small | diverged]] = False
    ok = done & np.isfinite(ll_cur)
    mu = np.where(ok, x[:, 0], np.nan)
    sigma = np.where(ok, x[:, 1], np.nan)
    pa = np.where(ok, x[:, 2], np.nan) if missed else np.where(ok, 0.0, np.nan)
    pb = np.where(ok, x[:, 3], np.nan) if missed else np.where(ok, 0.0, np.nan)
    return mu, sigma, pa, pb, ok, np.where(ok, ll_cur, np.nan)


def _detection_items(v, k, half_width, tau):
    """The items (:class:`_Items`) of :func:`interval_censored_mle`: each value's interval
    ``[lo, hi]``, whether it is a point, and ``tau^2`` of its detection curve. ``v`` is
    (K,) or (R, K) (a row of values per fit); ``tau`` a number or (R, 1)."""
    h = float(half_width)
    exact = k == 0
    lo = np.where(exact, v - h, np.where(k == 1, -np.inf, v))
    hi = np.where(exact, v + h, np.where(k == 1, v, np.inf))
    point = exact & (h == 0)
    tau2 = np.where(exact, 0.0, np.asarray(tau, dtype=float) ** 2)
    return _Items(lo, hi, point, tau2, k)


def _check_detection(half_width, tau, df, exact_weight):
    if not (np.isfinite(half_width) and 0 <= half_width <= 5):
        raise UsageError(f"half_width_db must be between 0 and 5 dB, got {half_width}")
    if not (np.isfinite(tau) and 0 <= tau <= 10):
        raise UsageError(f"tau_db must be between 0 and 10 dB, got {tau}")
    if not (df > 2):
        raise UsageError(f"df must be above 2 (finite variance) or inf, got {df}")
    check_positive(exact_weight, "exact_weight")


def interval_censored_mle_batch(values, kinds, weights, *, half_width_db: float = 0.0,
                                tau_db: float = 0.0, df: float = np.inf,
                                missed: bool = False, exact_weight: float = 1.0,
                                sigma_floor: float = SIGMA_FLOOR_DB) -> dict:
    """Many :func:`interval_censored_mle` fits at once, one per row of ``weights``.

    Parameters as :func:`interval_censored_mle`, except:

    values : array_like, shape (K,) or (B, K)
        Differences or bounds [dB], shared by the rows or one row per fit (kinds shared;
        e.g. many groups at once, a group's unused items with weight 0).
    weights : array_like, shape (B, K)
        Non-negative weights of each value in each fit.
    tau_db : float or array_like, shape (B,)
        Width of the detection curve [dB], shared or one per fit.

    Returns
    -------
    dict of numpy.ndarray, shape (B,)
        ``mu``, ``sigma`` [dB], ``missed_a``, ``missed_b`` (shares), ``loglik``,
        ``converged``; NaN where a row has no maximum.

    Examples
    --------
    The sample of :func:`interval_censored_mle` and its exact values alone:

    >>> values = [-1, 0, 1, 2, 3, -1, 2]
    >>> kinds = [0, 0, 0, 0, 0, 1, -1]
    >>> w = [[4, 9, 12, 8, 3, 3, 6], [4, 9, 12, 8, 3, 0, 0]]
    >>> fit = interval_censored_mle_batch(values, kinds, w, half_width_db=0.5)
    >>> fit["mu"].round(3).tolist(), fit["sigma"].round(3).tolist()
    ([1.004, 0.917], [1.405, 1.076])
    """
    vals = np.asarray(values, dtype=float)
    if vals.ndim == 2:  # a row of values per fit
        v, k, w = _check_batch(vals[0], kinds, weights, sigma_floor)
        if vals.shape != w.shape or not np.all(np.isfinite(vals)):
            raise UsageError(f"values must be finite, of shape (K,) or {w.shape}, got "
                             f"{vals.shape}")
        v = vals
    else:
        v, k, w = _check_batch(values, kinds, weights, sigma_floor)
    tau = np.asarray(tau_db, dtype=float)
    if tau.ndim:
        if tau.shape != (w.shape[0],):
            raise UsageError(f"tau_db must be a number or of shape ({w.shape[0]},), got "
                             f"{tau.shape}")
        for x in np.unique(tau):
            _check_detection(half_width_db, x, df, exact_weight)
        tau_db = tau[:, None]
    else:
        _check_detection(half_width_db, float(tau), df, exact_weight)
    return _interval_fit(v, k, w, half_width_db, tau_db, df, missed, exact_weight,
                         sigma_floor)


def _interval_fit(v, k, w, half_width_db, tau_db, df, missed, exact_weight, sigma_floor):
    """:func:`interval_censored_mle_batch` on checked input (``v`` (K,) or (B, K),
    ``tau_db`` a number or (B, 1))."""
    v, k, w = _by_kind(v, k, w)
    items = _detection_items(v, k, half_width_db, tau_db)
    start_w = np.where(k[None, :] == 0, exact_weight * w, w)
    mu0, s0, _c, _ll, _it = _tobit_batch(v, k, start_w, sigma_floor)
    fam = _family(df)
    mu, sigma, pa, pb, conv, ll = _detection_batch(items, w, fam, False, float(exact_weight),
                                                   sigma_floor, mu0, s0)
    if missed:  # started from the plain fit, which it nests (pa = pb = 0) and keeps where
        # the mixture does not converge or fit better
        m2, s2, pa2, pb2, c2, ll2 = _detection_batch(items, w, fam, True, float(exact_weight),
                                                     sigma_floor, mu, sigma)
        better = c2 & (np.nan_to_num(ll2, nan=-np.inf) > np.nan_to_num(ll, nan=-np.inf))
        mu, sigma = np.where(better, m2, mu), np.where(better, s2, sigma)
        pa, pb = np.where(better, pa2, pa), np.where(better, pb2, pb)
        ll, conv = np.where(better, ll2, ll), conv | better
    return dict(mu=mu, sigma=sigma, missed_a=pa, missed_b=pb, loglik=ll, converged=conv)


def interval_censored_mle(values, kinds, counts=None, *, half_width_db: float = 0.0,
                          tau_db: float = 0.0, df: float = np.inf, missed: bool = False,
                          exact_weight: float = 1.0,
                          sigma_floor: float = SIGMA_FLOOR_DB) -> CensoredFit:
    """Censored fit with whole-dB values as intervals and a soft detection threshold.

    A generalisation of :func:`censored_normal_mle` for reports as decoders make them:

    * an exact value ``v`` reported in whole dB stands for a latent value in
      ``[v - h, v + h]`` (``h = half_width_db``, 0.5 for whole dB; ``h = 0``: a point) and
      contributes ``log(F((v + h - mu)/sigma) - F((v - h - mu)/sigma))``;
    * a bound comes from a report that was not decoded. With a soft detection curve
      ``P(decoded | s) = Phi((s - t50) / tau)`` and a latent difference
      ``x ~ N(mu, sigma^2)``, the probability that the other antenna was missed is
      ``integral phi((x - mu)/sigma)/sigma (1 - Phi((x - c)/tau)) dx =
      Phi((c - mu) / sqrt(sigma^2 + tau^2))`` with ``c`` the bound at the 50 % point:
      a bound contributes ``log F(+-(c - mu)/sqrt(sigma^2 + tau^2))`` (Tobin's model is
      ``tau = 0``). The identity is exact for the normal (the convolution of two normals);
      for the Student t option (``df`` finite) the same scale is used as an approximation.
    * ``missed=True`` adds the missed-report shares of :func:`censored_mixture_mle`: an
      upper bound contributes ``log(pa + (1 - pa) P)``, a lower bound
      ``log(pb + (1 - pb) P)`` and an exact value ``log(1 - pa) + log(1 - pb)`` more.
    * ``exact_weight`` multiplies the log-probability of exact values (2 in the paired
      composite likelihood, see :mod:`spotkit.compare.estimate`).

    ``F`` is the standard normal CDF, or Student's t with ``df`` degrees of freedom (a
    heavy-tailed option). Maximised by Newton's method in ``(mu, sigma[, pa, pb])`` with
    analytic derivatives and step halving, started from the :func:`censored_normal_mle`
    fit of the points; ``sigma`` is held at or above ``sigma_floor``.

    Parameters
    ----------
    values : array_like
        Differences or bounds [dB].
    kinds : array_like of int
        0 exact, +1 upper bound, -1 lower bound.
    counts : array_like, optional
        Frequency weights.
    half_width_db : float
        Half the reporting step [dB]: 0.5 for whole-dB reports, 0 for exact points.
    tau_db : float
        Width of the detection curve [dB] (0: a hard threshold).
    df : float
        Degrees of freedom of a Student t model (``inf``: normal).
    missed : bool
        Fit the missed-report shares.
    exact_weight : float
        Weight of the exact values' log-probability.
    sigma_floor : float
        Smallest allowed sigma [dB].

    Returns
    -------
    CensoredFit
        ``se_mu`` / ``se_sigma`` from the observed information when ``missed`` is False
        and ``exact_weight`` is 1 (otherwise NaN: use the bootstrap).

    References
    ----------
    .. [1] J. Tobin, Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
    .. [2] W. F. Sheppard, "On the calculation of the most probable values of
       frequency-constants, for data arranged according to equidistant divisions of a
       scale", Proc. London Math. Soc. 29:353-380, 1898 (grouped data; citation from
       memory).
    .. [3] D. J. Finney, Probit Analysis, 3rd ed., Cambridge University Press, 1971
       (the normal detection curve; citation from memory).
    .. [4] K. L. Lange, R. J. A. Little and J. M. G. Taylor, "Robust statistical modeling
       using the t distribution", JASA 84(408):881-896, 1989. doi:10.2307/2290063
       (citation from memory)

    Examples
    --------
    The sample of :func:`censored_normal_mle` as whole-dB intervals: nearly the same
    ``mu`` and ``sigma`` (with this spread the rounding changes little):

    >>> values = [-1, 0, 1, 2, 3, -1, 2]
    >>> kinds = [0, 0, 0, 0, 0, 1, -1]
    >>> counts = [4, 9, 12, 8, 3, 3, 6]
    >>> fit = interval_censored_mle(values, kinds, counts, half_width_db=0.5)
    >>> round(fit.mu, 3), round(fit.sigma, 3), fit.converged
    (1.004, 1.405, True)

    A soft threshold (``tau`` 1 dB) makes each bound less informative:

    >>> round(interval_censored_mle(values, kinds, counts, half_width_db=0.5,
    ...                             tau_db=1.0).mu, 2)
    0.98
    """
    check_positive(sigma_floor, "sigma_floor")
    v, k = _check_kinds(values, kinds)
    c = np.ones(v.shape) if counts is None else np.asarray(counts, dtype=float).ravel()
    if c.shape != v.shape:
        raise UsageError(f"counts has {c.size} entries but values has {v.size}")
    if np.any(~np.isfinite(c)) or np.any(c < 0):
        raise UsageError("counts must be finite and non-negative")
    res = interval_censored_mle_batch(v, k, c[None, :], half_width_db=half_width_db,
                                      tau_db=tau_db, df=df, missed=missed,
                                      exact_weight=exact_weight, sigma_floor=sigma_floor)
    mu, sigma = float(res["mu"][0]), float(res["sigma"][0])
    se_mu = se_sigma = float("nan")
    if np.isfinite(mu) and not missed and exact_weight == 1.0 and sigma > sigma_floor:
        items = _detection_items(v, k, half_width_db, tau_db)
        x = np.array([[mu, sigma, 0.0, 0.0]])
        _ll, _g, hess = _detection_parts(x, items, c[None, :], _family(df), False, 1.0)
        info = -hess[0, :2, :2]
        if np.all(np.isfinite(info)) and np.linalg.det(info) > 0:
            cov = np.linalg.inv(info)
            se_mu, se_sigma = float(np.sqrt(cov[0, 0])), float(np.sqrt(cov[1, 1]))
    return CensoredFit(mu, sigma, bool(res["converged"][0]), float(c[k == 0].sum()),
                       float(c[k == 1].sum()), float(c[k == -1].sum()),
                       float(res["loglik"][0]), 0, se_mu, se_sigma,
                       missed_a=float(res["missed_a"][0]), missed_b=float(res["missed_b"][0]))


__all__ = ["SIGMA_FLOOR_DB", "MIXTURE_EXACT_WEIGHT", "CensoredFit", "censored_normal_mle",
           "censored_normal_mle_batch", "censored_mixture_mle", "censored_mixture_mle_batch",
           "normal_share", "interval_censored_mle", "interval_censored_mle_batch"]
