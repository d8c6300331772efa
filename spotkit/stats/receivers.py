"""The censored paired fit with a random effect per receiver (cluster).

The pooled fit (:func:`spotkit.stats.censored.interval_censored_mle_batch`) treats every
pair's difference as one law ``N(mu, sigma^2)``. When the difference varies between
receivers and one antenna is much weaker, which pairs are one-sided depends on the
receiver's own mean, and the pooled ``mu`` lands on a blend of the means over the pairs
in which A was heard and those in which B was heard - not on the mean over the pairs in
the data. Here a pair ``j`` of receiver ``r`` has latent difference
``x_j = mu + u_r + e_j`` with ``u_r ~ N(0, s_u^2)`` and ``e_j`` under the same item
likelihood as the pooled fit (whole-dB intervals, the detection curve's softened bounds,
normal or Student t tails, both-heard items weighted by ``exact_weight``); ``u_r`` is
integrated out per receiver by Gauss-Hermite quadrature. The summary that matches "the
mean B-A over the pairs in the data" is

``mu_pairs = mu + sum_r n_r E[u_r | data] / sum_r n_r``

(``n_r`` the receiver's pairs, ``E[u_r | data]`` its posterior mean under the fitted
``s_u``): ``mu`` alone is the mean over receivers, each counted once.

With ``exact_weight`` 2 (the paired composite likelihood, see
:mod:`spotkit.compare.estimate`) a both-heard pair's density counts twice inside each
receiver's integral, so the posterior of ``u_r`` is somewhat narrower than a full
likelihood's; the point of the weight is the composite likelihood's balance of "B given
A heard" and "A given B heard", kept here unchanged. No missed-report share.

References
----------
.. [1] J. C. Pinheiro and D. M. Bates, "Approximations to the log-likelihood function in
   the nonlinear mixed-effects model", J. Comput. Graph. Stat. 4(1):12-35, 1995
   (Gauss-Hermite quadrature over a random effect; citation from memory).
.. [2] G. K. Robinson, "That BLUP is a good thing: the estimation of random effects",
   Statistical Science 6(1):15-32, 1991 (posterior means of random effects; citation
   from memory).
"""
from __future__ import annotations

import numpy as np
from scipy import sparse, special

from spotkit.errors import UsageError
from spotkit.stats.censored import (
    SIGMA_FLOOR_DB,
    _check_detection,
    _detection_items,
    _family,
    _interval_terms,
    _newton_step,
)

#: Gauss-Hermite nodes over the receiver effect (probabilists' Hermite polynomials)
N_NODES = 21
#: rows of the batch evaluated at once (memory: rows x nodes x items doubles, x6)
_CHUNK = 8


def _nodes(n):
    x, w = np.polynomial.hermite_e.hermegauss(int(n))
    return x, np.log(w / w.sum())


def _per_receiver(x, items, ew, St, fam, xq, logw, need_derivs):
    """Each receiver's integrated log-likelihood (B, R) at parameters ``x`` (B, 3) =
    (mu, sigma, s_u); with derivatives also its gradient (B, R, 3) and Hessian
    (B, R, 3, 3), and the posterior mean of ``u`` (B, R)."""
    lo, hi, point, tau2, _kind = items
    b, q = x.shape[0], xq.size
    m = (x[:, 0:1] + x[:, 2:3] * xq[None, :]).ravel()
    s = np.repeat(x[:, 1], q)
    res = _interval_terms(m, s, lo, hi, point, tau2, fam, need_derivs)
    parts = res if need_derivs else (res,)

    def agg(a):  # (B*Q, K) item terms -> (B, Q, R) per receiver sums
        return np.asarray(St @ (a * ew[None, :]).T).T.reshape(b, q, -1)

    with np.errstate(invalid="ignore"):
        a = agg(parts[0]) + logw[None, :, None]
        parts = parts[:1] + tuple(np.nan_to_num(d) for d in parts[1:])
    a = np.where(np.isnan(a), -np.inf, a)
    lse = special.logsumexp(a, axis=1)  # (B, R)
    with np.errstate(invalid="ignore"):
        p = np.exp(a - lse[:, None, :])  # posterior weights of the nodes
    p = np.nan_to_num(p)
    eu = x[:, 2:3] * np.einsum("bqr,q->br", p, xq)
    if not need_derivs:
        return lse, eu
    _l, l_m, l_s, l_mm, l_ms, l_ss = parts
    gm, gs = agg(l_m), agg(l_s)
    hmm, hms, hss = agg(l_mm), agg(l_ms), agg(l_ss)
    xqb = xq[None, :, None]
    g = np.stack([gm, gs, xqb * gm], axis=-1)  # (B, Q, R, 3)
    h = np.empty(g.shape + (3,))
    h[..., 0, 0], h[..., 1, 1], h[..., 2, 2] = hmm, hss, xqb ** 2 * hmm
    h[..., 0, 1] = h[..., 1, 0] = hms
    h[..., 0, 2] = h[..., 2, 0] = xqb * hmm
    h[..., 1, 2] = h[..., 2, 1] = xqb * hms
    gbar = np.einsum("bqr,bqrk->brk", p, g)
    hr = (np.einsum("bqr,bqrkl->brkl", p, h + g[..., :, None] * g[..., None, :])
          - gbar[..., :, None] * gbar[..., None, :])
    return lse, eu, gbar, hr


def _evaluate(x, items, ew, St, fam, xq, logw, wr, need_derivs):
    """Total log-likelihood (B,) with receiver weights ``wr`` (B, R); with derivatives
    its gradient and Hessian; always the pair-weighted mean posterior ``u``."""
    outs = []
    for i in range(0, x.shape[0], _CHUNK):
        sl = slice(i, i + _CHUNK)
        outs.append(_per_receiver(x[sl], items, ew, St, fam, xq, logw, need_derivs))
    lse = np.concatenate([o[0] for o in outs])
    eu = np.concatenate([o[1] for o in outs])
    w = np.where(wr > 0, wr, 0.0)
    with np.errstate(invalid="ignore"):
        ll = np.sum(np.where(w > 0, w * lse, 0.0), axis=1)
    if not need_derivs:
        return ll, eu
    grad = np.einsum("br,brk->bk", w, np.concatenate([o[2] for o in outs]))
    hess = np.einsum("br,brkl->bkl", w, np.concatenate([o[3] for o in outs]))
    return ll, eu, grad, hess


def receiver_effects_mle_batch(values, kinds, counts, weights, *, start_mu, start_sigma,
                               start_s_u=0.5, half_width_db: float = 0.0,
                               tau_db: float = 0.0, df: float = np.inf,
                               exact_weight: float = 1.0,
                               sigma_floor: float = SIGMA_FLOOR_DB, n_nodes: int = N_NODES,
                               max_iter: int = 100, tol: float = 1e-8) -> dict:
    """The receiver random-effects fit, one per row of ``weights`` (cluster weights).

    Parameters
    ----------
    values, kinds : array_like, shape (K,)
        The distinct items: differences or bounds [dB] and kinds (0 exact, +1 upper
        bound, -1 lower bound), as :func:`spotkit.stats.censored.interval_censored_mle`.
    counts : array_like or scipy.sparse matrix, shape (K, R)
        Count of each item at each of the R receivers (clusters).
    weights : array_like, shape (B, R)
        Weight of each receiver per fit (bootstrap: how often it was drawn; ones: the
        data as they are).
    start_mu, start_sigma, start_s_u : float or array_like (B,)
        Starting values [dB] (e.g. the pooled fit's).
    half_width_db, tau_db, df, exact_weight, sigma_floor :
        As :func:`spotkit.stats.censored.interval_censored_mle`.
    n_nodes : int
        Gauss-Hermite nodes over the receiver effect.
    max_iter, tol :
        Newton iterations and the relative change that stops them.

    Returns
    -------
    dict of numpy.ndarray, shape (B,)
        ``mu`` (mean over receivers) [dB], ``sigma`` (SD of a pair's difference about its
        receiver's mean, scale of the law for the t) [dB], ``s_u`` (SD of the receivers'
        means) [dB], ``mu_pairs`` (``mu`` plus the pair-weighted mean of the receivers'
        posterior mean effects: the mean over the pairs) [dB], ``loglik``,
        ``converged``; NaN where a row has no maximum.

    Examples
    --------
    Two receivers whose differences sit 2 dB apart (exact values only, no bounds): the
    receivers' SD is about sqrt(2) dB less the share of the within spread, and with
    equal pairs per receiver ``mu_pairs`` is the plain mean (1.0 dB):

    >>> v = [-0.5, 0.0, 0.5, 1.5, 2.0, 2.5]
    >>> k = [0, 0, 0, 0, 0, 0]
    >>> cnt = [[5, 0], [10, 0], [5, 0], [0, 5], [0, 10], [0, 5]]
    >>> fit = receiver_effects_mle_batch(v, k, cnt, [[1.0, 1.0]], start_mu=1.0,
    ...                                  start_sigma=1.0)
    >>> round(float(fit["mu_pairs"][0]), 3), bool(fit["converged"][0])
    (1.0, True)
    """
    v = np.asarray(values, dtype=float).ravel()
    k = np.asarray(kinds).astype(np.int64).ravel()
    S = sparse.csr_matrix(counts, dtype=float)
    w = np.atleast_2d(np.asarray(weights, dtype=float))
    if S.shape[0] != v.size or k.size != v.size:
        raise UsageError(f"counts has {S.shape[0]} rows, values {v.size}, kinds {k.size}")
    if w.shape[1] != S.shape[1]:
        raise UsageError(f"weights has {w.shape[1]} columns but counts {S.shape[1]} "
                         "receivers")
    _check_detection(half_width_db, tau_db, df, exact_weight)
    items = _detection_items(v, k, half_width_db, tau_db)
    ew = np.where(k == 0, float(exact_weight), 1.0)
    St = S.T.tocsr()
    fam = _family(df)
    xq, logw = _nodes(n_nodes)
    b = w.shape[0]
    x = np.empty((b, 3))
    x[:, 0] = np.broadcast_to(np.asarray(start_mu, float), b)
    x[:, 1] = np.maximum(np.broadcast_to(np.asarray(start_sigma, float), b), sigma_floor)
    x[:, 2] = np.broadcast_to(np.asarray(start_s_u, float), b)
    active = np.all(np.isfinite(x), axis=1)
    done = np.zeros(b, bool)
    ll_cur = np.full(b, np.nan)
    eye = np.eye(3)
    for _ in range(max_iter):
        idx = np.nonzero(active)[0]
        if idx.size == 0:
            break
        x0 = x[idx]
        ll, _eu, grad, hess = _evaluate(x0, items, ew, St, fam, xq, logw, w[idx], True)
        step = _newton_step(hess, grad, eye)
        t = np.ones(idx.size)
        with np.errstate(invalid="ignore", divide="ignore"):
            sg = step[:, 1]
            t = np.where(sg < 0, np.minimum(t, 0.9 * (x0[:, 1] - 0.5 * sigma_floor) / -sg), t)
        t = np.maximum(t, 0.0)
        accepted = np.zeros(idx.size, bool)
        xn, ll_new_all = x0.copy(), ll.copy()
        for _half in range(40):
            todo = np.nonzero(~accepted)[0]
            if todo.size == 0:
                break
            c = x0[todo] + t[todo, None] * step[todo]
            c[:, 1] = np.maximum(c[:, 1], sigma_floor)
            ll_new, _ = _evaluate(c, items, ew, St, fam, xq, logw, w[idx[todo]], False)
            ok = np.isfinite(ll_new) & (ll_new >= ll[todo] - 1e-12 * np.abs(ll[todo]))
            xn[todo[ok]] = c[ok]
            ll_new_all[todo[ok]] = ll_new[ok]
            accepted[todo[ok]] = True
            t[todo[~ok]] *= 0.5
        scale = np.c_[1 + np.abs(x0[:, 0]), x0[:, 1], 1 + np.abs(x0[:, 2])]
        moved = np.max(np.abs(xn - x0) / scale, axis=1)
        x[idx] = xn
        ll_cur[idx] = ll_new_all
        small = (moved < tol) | ~accepted
        diverged = (np.abs(xn) > 1e6).any(axis=1) | ~np.isfinite(ll_new_all)
        done[idx[small & ~diverged]] = True
        active[idx[small | diverged]] = False
    ok = done & np.isfinite(ll_cur)
    _ll, eu = _evaluate(np.where(ok[:, None], x, 0.0), items, ew, St, fam, xq, logw, w,
                        False)
    n_r = np.asarray(S.sum(axis=0)).ravel()[None, :] * np.where(w > 0, w, 0.0)
    shift = np.sum(n_r * eu, axis=1) / np.maximum(n_r.sum(axis=1), 1e-300)
    nan = np.full(b, np.nan)
    return dict(mu=np.where(ok, x[:, 0], nan), sigma=np.where(ok, x[:, 1], nan),
                s_u=np.where(ok, np.abs(x[:, 2]), nan),
                mu_pairs=np.where(ok, x[:, 0] + shift, nan), loglik=np.where(ok, ll_cur, nan),
                converged=ok)


__all__ = ["N_NODES", "receiver_effects_mle_batch"]
