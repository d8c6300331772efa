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
integrated out per receiver by adaptive Gauss-Hermite quadrature (:data:`N_NODES` nodes
centred on each receiver's posterior of ``mu + u_r``: a receiver with dozens of pairs
has a posterior several times narrower than ``s_u``, which fixed nodes miss; the
first centres come from a coarse grid over the data's range refined per receiver, then
from the quadrature after each refit of the data until they settle; the starting SDs come
from the receivers' own means, and the nodes of a receiver that its prior dominates move
with the mean).
Maximised by Newton's method with analytic derivatives, all bootstrap rows at once
(the nodes of the unit-weight fit are kept for the rows). The summary that matches "the
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
    _block_terms,
    _blocks,
    _check_detection,
    _detection_items,
    _family,
    _newton_step,
)

#: Gauss-Hermite nodes over the receiver effect (probabilists' Hermite polynomials; with
#: the adaptive centring 9 and 15 nodes gave the same estimate and interval to 1e-8 dB on
#: a 7,000-pair run, 5 nodes to 1e-6 dB)
N_NODES = 9
#: rows of the batch evaluated at once (memory: rows x nodes x items doubles, x6)
_CHUNK = 8


def _nodes(n):
    x, w = np.polynomial.hermite_e.hermegauss(int(n))
    return x, np.log(w / w.sum())


class _Receivers:
    """The items of each receiver at quadrature points of ``m = mu + u``.

    Adaptive quadrature: receiver ``r``'s nodes are ``m_rq = lam_r mu + o_rq`` with
    ``o_rq = c_r - lam_r mu_0 + d_r x_q`` (``c_r``, ``d_r``: the posterior mean and SD of
    ``mu + u_r`` at the centring parameters, ``mu_0`` the mean there, ``lam_r = d_r^2 /
    s_u^2`` the prior's share of the posterior, clipped to [0, 1]), so that
    ``integral f_r(m) phi((m - mu)/s_u)/s_u dm ~ sum_q w_q f_r(m_rq) phi((m_rq - mu)/s_u)
    / s_u * d_r / phi(x_q)``. A receiver with many pairs (``lam`` near 0) keeps its nodes
    where its data put it; one the prior dominates (``lam`` near 1, e.g. receivers that do
    not differ) moves them with ``mu`` - as the normal posterior mean ``(1 - k) mu + k
    ybar`` does - so that Newton's steps in ``mu`` are not held to the old nodes."""

    def __init__(self, items, ew, S, fam, xq, logw):
        self.items, self.fam, self.xq, self.logw = items, fam, xq, logw
        coo = S.tocoo()
        # entries in runs of one item category (bounds, intervals, points), each run
        # evaluated with the formulas its category needs (:func:`_block_terms`)
        cat = np.zeros(items.point.size, np.int64)
        for c, sl in items.blocks:
            cat[sl] = c
        order = np.argsort(cat[coo.row], kind="stable")
        row, col, data = coo.row[order], coo.col[order], coo.data[order]
        self.item, self.rx, self.cnt = row, col, data * ew[row]
        self.runs = _blocks(cat[row])
        self.n_rx = S.shape[1]
        nnz = self.item.size
        self.M = sparse.csr_matrix((np.ones(nnz), (self.rx, np.arange(nnz))),
                                   shape=(self.n_rx, nnz))

    def set_nodes(self, c, d, mu0, s_u0):
        """Receiver centres ``c`` and scales ``d`` (R,) [dB] of the posterior at the mean
        ``mu0`` and receiver SD ``s_u0`` [dB]."""
        self.lam = np.clip(d ** 2 / max(float(s_u0), 1e-12) ** 2, 0.0, 1.0)
        self.off = (c - self.lam * mu0)[:, None] + d[:, None] * self.xq[None, :]  # (R, Q)
        # the normal constants of phi(z) and 1/phi(x_q) cancel
        self.const = self.logw[None, :] + 0.5 * self.xq[None, :] ** 2 + np.log(d)[:, None]

    def grid_posterior(self, mu, sigma, s_u, span, step=0.5, fine=81):
        """Posterior mean and SD (R,) of ``mu + u_r`` [dB] at one parameter set: the
        centres and scales of the nodes. First on a coarse grid over ``span`` (low, high)
        [dB] with ``step`` [dB], then on ``fine`` points per receiver across its coarse
        posterior (five SDs either side, at least two steps), so that a receiver with
        thousands of pairs (a posterior SD of a few hundredths of a dB) is placed as well
        as one with a few."""
        grid = np.arange(span[0], span[1] + step / 2, step)
        c, d = self._posterior_on(np.broadcast_to(grid, (self.n_rx, grid.size)), mu, sigma,
                                  s_u, step / 2)
        half = np.maximum(5.0 * d, 2.0 * step)
        o = np.linspace(-1.0, 1.0, int(fine))
        local = c[:, None] + half[:, None] * o[None, :]
        return self._posterior_on(local, mu, sigma, s_u, half * (o[1] - o[0]) / 2)

    def _posterior_on(self, grid, mu, sigma, s_u, sd_floor):
        """Posterior mean and SD (R,) of ``mu + u_r`` over the points ``grid`` (R, G)
        [dB] of each receiver (SD at least ``sd_floor``)."""
        saved = getattr(self, "off", None), getattr(self, "lam", None), self.xq
        a = np.empty(grid.shape)
        # in pieces of the grid: items x grid points at once would be large
        piece = max(16, int(2_000_000 // max(self.item.size, 1)))
        try:
            self.lam = np.zeros(self.n_rx)
            for i in range(0, grid.shape[1], piece):
                g = grid[:, i:i + piece]
                self.off = g
                self.xq = g[0]
                a[:, i:i + piece] = self.data_terms(np.zeros(1), np.array([float(sigma)]),
                                                    False)[0][0]
        finally:
            self.off, self.lam, self.xq = saved
        a = np.where(np.isnan(a), -np.inf, a) - 0.5 * ((grid - mu) / s_u) ** 2
        p = np.exp(a - special.logsumexp(a, axis=1, keepdims=True))
        c = np.sum(p * grid, axis=1)
        d = np.sqrt(np.maximum(np.sum(p * grid ** 2, axis=1) - c ** 2, sd_floor ** 2))
        return c, d

    def nodes(self, mu):
        """The nodes ``m`` (B, R, Q) [dB] at the means ``mu`` (B,)."""
        return self.lam[None, :, None] * mu[:, None, None] + self.off[None]

    def data_terms(self, mu, sigma, need_derivs):
        """Sum over each receiver's items of the log-probabilities at its nodes, (B, R, Q),
        at the means ``mu`` and SDs ``sigma`` (B,); with derivatives also their derivatives
        in the node ``m`` and ``sigma``: ``l_m, l_s, l_mm, l_ms, l_ss``."""
        lo, hi, tau2 = self.items.lo[0], self.items.hi[0], self.items.tau2[0]
        q = self.xq.size
        oq = self.off[self.rx]  # (nnz, Q)
        lo_e = (lo[self.item][:, None] - oq).ravel()
        hi_e = (hi[self.item][:, None] - oq).ravel()
        t2 = np.repeat(tau2[self.item], q)
        lam_e = np.repeat(self.lam[self.rx], q)
        b = sigma.size
        sg = np.asarray(sigma, dtype=float)[:, None]
        m_all = np.asarray(mu, dtype=float)[:, None] * lam_e[None, :]  # (B, nnz Q)
        parts = [np.empty((b, lo_e.size)) for _ in range(6 if need_derivs else 1)]
        for cat, sl in self.runs:
            e = slice(sl.start * q, sl.stop * q)
            res = _block_terms(cat, m_all[:, e], sg, lo_e[None, e], hi_e[None, e],
                               t2[None, e], self.fam, bool(need_derivs))
            for out, r in zip(parts, res if need_derivs else (res,), strict=True):
                out[:, e] = r
        w = np.repeat(self.cnt, q)[None, :]
        out = []
        for j, a in enumerate(parts):
            a = a * w if j == 0 else np.nan_to_num(a * w)
            a = a.reshape(b, -1, q).transpose(1, 0, 2).reshape(self.item.size, b * q)
            out.append(np.asarray(self.M @ a).reshape(self.n_rx, b, q).transpose(1, 0, 2))
        return out


def _evaluate(x, rec, wr, need_derivs):
    """Total log-likelihood (B,) at ``x`` (B, 3) = (mu, sigma, s_u) with receiver weights
    ``wr`` (B, R); the posterior mean of ``mu + u_r`` (B, R) and its SD; with derivatives
    also the gradient (B, 3) and Hessian (B, 3, 3)."""
    ll_out, em_out, sd_out, g_out, h_out = [], [], [], [], []
    lam = rec.lam[None, :, None]
    for i in range(0, x.shape[0], _CHUNK):
        xs, w = x[i:i + _CHUNK], np.where(wr[i:i + _CHUNK] > 0, wr[i:i + _CHUNK], 0.0)
        parts = rec.data_terms(xs[:, 0], xs[:, 1], need_derivs)
        su = np.abs(xs[:, 2])[:, None, None]
        m = rec.nodes(xs[:, 0])  # (B, R, Q)
        z = (m - xs[:, 0][:, None, None]) / su
        a = parts[0] + rec.const[None] - 0.5 * z * z - np.log(su)
        a = np.where(np.isnan(a), -np.inf, a)
        lse = special.logsumexp(a, axis=2)  # (B, R)
        with np.errstate(invalid="ignore"):
            p = np.nan_to_num(np.exp(a - lse[..., None]))
        em = np.einsum("brq,brq->br", p, m)
        var = np.einsum("brq,brq->br", p, m ** 2) - em ** 2
        ll_out.append(np.sum(np.where(w > 0, w * lse, 0.0), axis=1))
        em_out.append(em)
        sd_out.append(np.sqrt(np.maximum(var, 0.0)))
        if not need_derivs:
            continue
        _l, l_m, l_s, l_mm, l_ms, l_ss = parts
        dz = (lam - 1.0) / su  # dz / dmu
        g = np.stack([lam * l_m - z * dz, l_s, (z * z - 1) / su], axis=-1)  # (B, R, Q, 3)
        h = np.empty(g.shape + (3,))
        h[..., 0, 0] = lam * lam * l_mm - dz * dz
        h[..., 1, 1] = l_ss
        h[..., 2, 2] = (1 - 3 * z * z) / su ** 2
        h[..., 0, 1] = h[..., 1, 0] = lam * l_ms
        h[..., 1, 2] = h[..., 2, 1] = 0.0
        h[..., 0, 2] = h[..., 2, 0] = 2 * z * dz / su
        gbar = np.einsum("brq,brqk->brk", p, g)
        hr = (np.einsum("brq,brqkl->brkl", p, h + g[..., :, None] * g[..., None, :])
              - gbar[..., :, None] * gbar[..., None, :])
        g_out.append(np.einsum("br,brk->bk", w, gbar))
        h_out.append(np.einsum("br,brkl->bkl", w, hr))
    ll, em, sd = np.concatenate(ll_out), np.concatenate(em_out), np.concatenate(sd_out)
    if not need_derivs:
        return ll, em, sd
    return ll, em, sd, np.concatenate(g_out), np.concatenate(h_out)


def _moment_starts(v, k, S):
    """Starting SDs (sigma, s_u) [dB] from the exact items (method of moments): the pooled
    SD of the pairs about their receivers' means and the SD of those means less the
    within part (each at least 0.1 dB); None where fewer than two receivers have two
    exact items. Sparse throughout (items x receivers can be large)."""
    ex = np.flatnonzero(k == 0)
    cnt = sparse.csr_matrix(S)[ex]
    val = v[ex]
    n = np.asarray(cnt.sum(axis=0)).ravel()
    use = n >= 2
    if use.sum() < 2:
        return None
    n = n[use]
    s1 = np.asarray(cnt.T @ val).ravel()[use]
    s2 = np.asarray(cnt.T @ (val * val)).ravel()[use]
    m = s1 / n
    within = np.sum(s2 - n * m * m) / max(np.sum(n - 1), 1)
    mu = np.sum(n * m) / n.sum()
    between = np.sum(n * (m - mu) ** 2) / n.sum() - within / np.mean(n)
    return np.sqrt(max(within, 0.01)), np.sqrt(max(between, 0.01))


def _grid_span(v, x):
    """Range [dB] of the grid for the receivers' posteriors: the data's values widened
    by four of the larger of the pair and receiver SDs (at least 12 dB either side of
    the mean)."""
    pad = 4.0 * max(float(x[1]), float(x[2])) + 1.0
    fin = v[np.isfinite(v)]
    lo = min(float(fin.min()) - pad, float(x[0]) - 12.0)
    hi = max(float(fin.max()) + pad, float(x[0]) + 12.0)
    return lo, hi


def _newton(x, rec, w, sigma_floor, max_iter, tol):
    """Batch Newton ascent from ``x`` (modified); returns (x, loglik, converged)."""
    b = x.shape[0]
    active = np.all(np.isfinite(x), axis=1)
    done = np.zeros(b, bool)
    ll_cur = np.full(b, np.nan)
    eye = np.eye(3)
    # log-likelihood and derivatives at x where known: the first trial point of each line
    # search is evaluated with derivatives, which the next iteration uses if it is accepted
    known = np.zeros(b, bool)
    c_ll, c_g, c_h = np.full(b, np.nan), np.zeros((b, 3)), np.zeros((b, 3, 3))
    for _ in range(max_iter):
        idx = np.nonzero(active)[0]
        if idx.size == 0:
            break
        need = idx[~known[idx]]
        if need.size:
            c_ll[need], _em, _sd, c_g[need], c_h[need] = _evaluate(x[need], rec, w[need], True)
            known[need] = True
        x0 = x[idx]
        ll, grad, hess = c_ll[idx], c_g[idx], c_h[idx]
        step = _newton_step(hess, grad, eye)
        t = np.ones(idx.size)
        with np.errstate(invalid="ignore", divide="ignore"):
            for j, floor in ((1, sigma_floor), (2, 1e-3)):
                sg = step[:, j]
                t = np.where(sg < 0, np.minimum(t, 0.9 * (x0[:, j] - 0.5 * floor) / -sg), t)
        t = np.maximum(t, 0.0)
        accepted = np.zeros(idx.size, bool)
        xn, ll_new_all = x0.copy(), ll.copy()
        for half in range(40):
            todo = np.nonzero(~accepted)[0]
            if todo.size == 0:
                break
            c = x0[todo] + t[todo, None] * step[todo]
            c[:, 1] = np.maximum(c[:, 1], sigma_floor)
            c[:, 2] = np.maximum(c[:, 2], 1e-3)
            rows = idx[todo]
            res = _evaluate(c, rec, w[rows], half == 0)
            ll_new = res[0]
            ok = np.isfinite(ll_new) & (ll_new >= ll[todo] - 1e-12 * np.abs(ll[todo]))
            xn[todo[ok]] = c[ok]
            ll_new_all[todo[ok]] = ll_new[ok]
            accepted[todo[ok]] = True
            t[todo[~ok]] *= 0.5
            if half == 0:
                c_ll[rows[ok]], c_g[rows[ok]], c_h[rows[ok]] = (ll_new[ok], res[3][ok],
                                                                res[4][ok])
            else:
                known[rows[ok]] = False
        scale = np.c_[1 + np.abs(x0[:, 0]), x0[:, 1], 1 + np.abs(x0[:, 2])]
        moved = np.max(np.abs(xn - x0) / scale, axis=1)
        x[idx] = xn
        ll_cur[idx] = ll_new_all
        small = (moved < tol) | ~accepted
        diverged = (np.abs(xn) > 1e6).any(axis=1) | ~np.isfinite(ll_new_all)
        done[idx[small & ~diverged]] = True
        active[idx[small | diverged]] = False
    return x, ll_cur, done & np.isfinite(ll_cur)


def receiver_effects_mle_batch(values, kinds, counts, weights, *, start_mu, start_sigma,
                               start_s_u=None, half_width_db: float = 0.0,
                               tau_db: float = 0.0, df: float = np.inf,
                               exact_weight: float = 1.0,
                               sigma_floor: float = SIGMA_FLOOR_DB, n_nodes: int = N_NODES,
                               max_iter: int = 100, tol: float = 1e-8,
                               adapt_rounds: int = 10) -> dict:
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
        Starting values [dB] (e.g. the pooled fit's). Without ``start_s_u`` the SDs
        start from the receivers' own means of their exact items (method of moments:
        the SD of those means, at least 0.5 dB, and the pooled SD about them), where at
        least two receivers have two or more exact items; ``start_sigma`` is then used
        only where that fails, and ``start_s_u`` is 0.5 dB.
    half_width_db, tau_db, df, exact_weight, sigma_floor :
        As :func:`spotkit.stats.censored.interval_censored_mle`.
    n_nodes : int
        Gauss-Hermite nodes over the receiver effect.
    max_iter, tol :
        Newton iterations and the relative change that stops them.
    adapt_rounds : int
        Most refits of the unit-weight data used to centre each receiver's nodes on its
        posterior (adaptive quadrature); the rows of ``weights`` are then fitted with
        those nodes.

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
    xq, logw = _nodes(n_nodes)
    rec = _Receivers(items, ew, S, _family(df), xq, logw)
    b = w.shape[0]
    x = np.empty((b, 3))
    x[:, 0] = np.broadcast_to(np.asarray(start_mu, float), b)
    x[:, 1] = np.maximum(np.broadcast_to(np.asarray(start_sigma, float), b), sigma_floor)
    x[:, 2] = np.maximum(np.broadcast_to(np.asarray(start_s_u, float), b), 1e-3)
    n_r = np.asarray(S.sum(axis=0)).ravel()
    if start_s_u is None:
        moments = _moment_starts(v, k, S)
        # the receivers' SD and the pairs' SD about their receivers from the moments (at
        # least 0.5 dB for the receivers: a start at the boundary would fix the nodes
        # there); the mean stays the caller's, which accounts for the bounds
        x[:, 2] = 0.5 if moments is None else max(moments[1], 0.5)
        if moments is not None:
            x[:, 1] = moments[0]
    # nodes centred on each receiver's posterior: first computed on a fine grid over the
    # whole range of the data at the starting values, then from the quadrature at each
    # refit until the centres settle (adaptive quadrature); a fit whose centres do not
    # settle is reported as not converged
    x1 = x[:1].copy()
    one = np.ones((1, S.shape[1]))
    span = _grid_span(v, x1[0])
    c, d = rec.grid_posterior(x1[0, 0], x1[0, 1], x1[0, 2], span=span)
    settled = False
    for _round in range(adapt_rounds):
        rec.set_nodes(c, np.maximum(d, 1e-3), x1[0, 0], x1[0, 2])
        x1, _ll, _ok = _newton(x1, rec, one, sigma_floor, max_iter, tol)
        if not np.all(np.isfinite(x1)):
            break
        _ll, c_new, d_new = _evaluate(x1, rec, one, False)
        c_new, d_new = c_new[0], d_new[0]
        settled = np.max(np.abs(c_new - c) / np.maximum(d, 1e-3)) < 0.05
        c, d = c_new, d_new
        if settled:
            break
    rec.set_nodes(c, np.maximum(d, 1e-3), x1[0, 0], x1[0, 2])
    if start_s_u is None and np.all(np.isfinite(x1)):
        x[:] = x1[0]  # the rows start from the data's own fit
    x, ll_cur, ok = _newton(x, rec, w, sigma_floor, max_iter, tol)
    ok = ok & settled
    _ll, em, _sd = _evaluate(np.where(ok[:, None], x, 1.0), rec, w, False)
    wn = n_r[None, :] * np.where(w > 0, w, 0.0)
    mu_pairs = np.sum(wn * em, axis=1) / np.maximum(wn.sum(axis=1), 1e-300)
    nan = np.full(b, np.nan)
    return dict(mu=np.where(ok, x[:, 0], nan), sigma=np.where(ok, x[:, 1], nan),
                s_u=np.where(ok, x[:, 2], nan), mu_pairs=np.where(ok, mu_pairs, nan),
                loglik=np.where(ok, ll_cur, nan), converged=ok)


__all__ = ["N_NODES", "receiver_effects_mle_batch"]
