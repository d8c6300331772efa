"""The decoders' detection width from the pairs: a profile of the paired likelihood.

The detection model (:mod:`spotkit.compare.pairing`, :mod:`spotkit.stats.detection`)
needs the width ``tau`` of the curve ``P(decoded | s) = Phi((s - t50) / tau)``. Fitted to
each receiver's report histogram with a 50 % point and a level slope per receiver
(:func:`spotkit.stats.detection.fit_tau`), it comes out too narrow when receivers have
few reports near their threshold: a common parameter profiled over hundreds of nuisance
parameters (the Neyman-Scott problem). Measured with the held-out generator (soft curve
of width 1 dB, about 7,000 pairs from 200 receivers): 0.25 to 0.66 dB, and with A 7 dB
below B the estimate of B - A was then +0.12 dB off; with the width set to the true 1 dB,
+0.01 dB.

Here the width is chosen by the pairs themselves. For each ``tau`` of a grid
(:data:`WIDTH_GRID_DB`) the receivers' 50 % points are refitted (the histograms are made
once), the one-sided bounds move with them, and the composite likelihood of the pairs is
maximised over ``mu`` and ``sigma`` (normal tails, no missed-report share, all pairs as
one group) - with the term the estimate itself can drop: the detection probability of
each heard report in its factor (B heard given A heard, A heard given B heard),
``Phi((v - LIMIT) / tau)``, averaged over the report's 1-dB interval when reports are
whole dB. With it each factor is a proper distribution of the other antenna's outcome,
so its maximum over ``tau`` is the width the paired outcomes support. The best grid
point is refined by a parabola. Assumption: as in the estimate, a flat distribution of
signal levels within a pair's neighbourhood (the same assumption the detection model of
:mod:`spotkit.compare.estimate` makes). The one-sided pairs carry the information: the
design must pair reports (simultaneous, alternating, receive); the before/after design
keeps the width of the reports.

Measured (held-out generator ``tests/heldout.py``, A 7 dB below B, about 7,000 pairs
from 200 receivers, point estimates over runs with seeds 20000 and up): soft curve of
width 1 dB: width 0.94 dB on average (histogram fit 0.25-0.66 dB), bias of B - A +0.008
+- 0.008 dB over 40 runs (histogram width: +0.075 +- 0.022 over 10, +0.055 over 60 runs
in the coverage study); whole-dB reports decided on the rounded value: width 0.05 dB
(the grid's edge; true 0) and bias -0.016 +- 0.012 dB over 20 runs (histogram width:
-0.029 on the same runs). A common shift of all 50 % points profiled the same way stayed
within 0.03 dB of 0 and changed little, so it was left out; with the true thresholds
that regime's bias was +0.010 dB, so a few hundredths remain in the 50 % points of
receivers with few reports near threshold.

References
----------
.. [1] J. Neyman and E. L. Scott, "Consistent estimates based on partially consistent
   observations", Econometrica 16(1):1-32, 1948 (citation from memory).
.. [2] C. Varin, N. Reid and D. Firth, "An overview of composite likelihood methods",
   Statistica Sinica 21:5-42, 2011 (citation from memory).
"""
from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd
from scipy.special import log_ndtr, ndtr

from spotkit import columns as C
from spotkit import stats
from spotkit.compare.pairing import (
    T50_ERROR_DB,
    TAU_FACTORS,
    _t50_fitter,
)
from spotkit.errors import UsageError
from spotkit.stats.detection import TAU_GRID_DB

WidthFrom = Literal["pairs", "reports"]
#: where the detection width comes from when it is not given: "pairs" (this module, the
#: default) or "reports" (the histogram fit of :func:`spotkit.stats.detection.fit_tau`)
WIDTH_FROM = ("pairs", "reports")
#: widths tried [dB]: the histogram fit's grid (:data:`spotkit.stats.detection.TAU_GRID_DB`)
#: and, below it, near-hard thresholds (whole-dB reports decided on the rounded value: a
#: hard edge half a dB below the threshold, measured best at 0.05 to 0.15 dB)
WIDTH_GRID_DB = (0.05, 0.1, 0.15) + tuple(TAU_GRID_DB)
#: designs whose pairs can choose the width
PAIRED_DESIGNS = ("simultaneous", "alternating", "receive")


def _best(grid, ll, default: float) -> float:
    """The grid point of the largest finite ``ll``, refined by a parabola through it and
    its neighbours; ``default`` when none is finite."""
    ll = np.asarray(ll, dtype=float)
    if not np.isfinite(ll).any():
        return float(default)
    i = int(np.argmax(np.where(np.isfinite(ll), ll, -np.inf)))
    if 0 < i < grid.size - 1 and np.isfinite(ll[i - 1:i + 2]).all():
        c2, c1, _c0 = np.polyfit(grid[i - 1:i + 2], ll[i - 1:i + 2], 2)
        if c2 < 0:
            return float(np.clip(-c1 / (2 * c2), grid[i - 1], grid[i + 1]))
    return float(grid[i])


def _log_heard(x, tau, h):
    """log of the detection probability of a report ``x`` [dB] above its limit, averaged
    over the report's interval ``[x - h, x + h]`` (a flat latent SNR within it):
    ``tau / 2h [G((x + h) / tau) - G((x - h) / tau)]`` with ``G(z) = z Phi(z) + phi(z)``,
    the integral of ``Phi``; ``log Phi(x / tau)`` when ``h`` is 0."""
    if h <= 0:
        return log_ndtr(x / tau)

    def g(z):
        return z * ndtr(z) + np.exp(-0.5 * z * z) / np.sqrt(2 * np.pi)

    with np.errstate(divide="ignore"):
        return np.log(np.maximum(tau / (2 * h) * (g((x + h) / tau) - g((x - h) / tau)),
                                 1e-300))


def _limit_owners(pairs: pd.DataFrame, design: str, a: str, b: str | None):
    """The receiver call whose threshold makes each pair's LIMIT_A and LIMIT_B."""
    if design == "receive":
        n = len(pairs)
        return np.full(n, str(a).upper(), dtype=object), np.full(
            n, str(b).upper(), dtype=object)
    own = pairs[C.CLUSTER].astype(str).to_numpy(dtype=object)
    return own, own


def profile_loglik(pairs: pd.DataFrame, tau_db: float, half_width_db: float) -> dict:
    """The paired composite log-likelihood at one detection width, maximised over ``mu``
    and ``sigma`` (normal tails), plus the detection terms of the heard reports.

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (``C.SNR_A``, ``C.SNR_B`` [dB per
        W], ``C.LIMIT_A``, ``C.LIMIT_B`` [dB per W] at this width), or its compressed
        form :func:`pair_outcomes`, whose ``C.COUNT`` column weights each row (a row
        counted ``n`` times enters the likelihood ``n`` times).
    tau_db : float
        Width of the detection curve [dB], above 0.
    half_width_db : float
        Half-width of a report's interval [dB]: 0.5 for whole-dB reports, else 0.

    Returns
    -------
    dict
        ``mu`` [dB], ``sigma`` [dB], ``loglik`` (the sum).

    Examples
    --------
    >>> pairs = pd.DataFrame({"snr_a_db": [-20.0, -22.0, -25.0, np.nan],
    ...                       "snr_b_db": [-19.0, -20.0, np.nan, -27.0],
    ...                       "limit_a_db": -28.0, "limit_b_db": -28.0})
    >>> r = profile_loglik(pairs, 1.0, 0.0)
    >>> bool(np.isfinite(r["loglik"]))
    True
    >>> r2 = profile_loglik(pair_outcomes(pd.concat([pairs, pairs]).assign(cluster="Q2XY")),
    ...                     1.0, 0.0)
    >>> bool(np.isclose(r2["loglik"], 2 * r["loglik"]))
    True
    """
    sa, sb = pairs[C.SNR_A].to_numpy(float), pairs[C.SNR_B].to_numpy(float)
    la, lb = pairs[C.LIMIT_A].to_numpy(float), pairs[C.LIMIT_B].to_numpy(float)
    n = (pairs[C.COUNT].to_numpy(float) if C.COUNT in pairs.columns
         else np.ones(len(pairs)))
    ha, hb = np.isfinite(sa), np.isfinite(sb)
    both, oa, ob = ha & hb, ha & ~hb, hb & ~ha
    v = np.concatenate([(sb - sa)[both], (lb - sa)[oa], (sb - la)[ob]])
    k = np.concatenate([np.zeros(both.sum()), np.ones(oa.sum()),
                        -np.ones(ob.sum())]).astype(np.int64)
    w = np.concatenate([n[both], n[oa], n[ob]])
    if not (both.any() and w.sum() >= 3):
        return dict(mu=np.nan, sigma=np.nan, loglik=-np.inf)
    r = stats.interval_censored_mle_batch(v, k, w[None, :],
                                          half_width_db=half_width_db, tau_db=tau_db,
                                          exact_weight=2.0)
    det = ((n[both] * _log_heard(sb[both] - lb[both], tau_db, half_width_db)).sum()
           + (n[both] * _log_heard(sa[both] - la[both], tau_db, half_width_db)).sum())
    ll = float(r["loglik"][0]) + float(det)
    return dict(mu=float(r["mu"][0]), sigma=float(r["sigma"][0]),
                loglik=ll if np.isfinite(ll) else -np.inf)


#: the columns of :func:`pair_outcomes`
OUTCOME_COLUMNS = [C.CLUSTER, C.SNR_A, C.SNR_B, C.LIMIT_A, C.LIMIT_B, C.COUNT]


def pair_outcomes(pairs: pd.DataFrame) -> pd.DataFrame:
    """The pairs compressed to what the width fit needs: counts of identical outcomes.

    The fit (:func:`profile_loglik` at each width, the limits moved per receiver) needs
    each pair's two SNRs, two limits and the receiver (cluster) whose 50 % point makes
    its limits - not the group keys or times. Reports are whole dB and powers sit on a
    short ladder, so many pairs share all five and the table is far shorter than the
    pairs. It is **mergeable**: tables of disjoint parts of the pairs (Dask partitions)
    combine exactly by :func:`merge_pair_outcomes`, and the fit on the merged table
    equals the fit on all pairs (up to the order of floating-point sums).

    Parameters
    ----------
    pairs : pandas.DataFrame
        From :func:`spotkit.compare.pairing.pair_spots` (a paired design): ``C.CLUSTER``,
        ``C.SNR_A``, ``C.SNR_B``, ``C.LIMIT_A``, ``C.LIMIT_B`` [dB per W].

    Returns
    -------
    pandas.DataFrame
        :data:`OUTCOME_COLUMNS`: the five (``C.CLUSTER`` as text, a missing SNR as NaN)
        and ``C.COUNT``, the number of pairs with them, sorted.

    Examples
    --------
    >>> nan = float("nan")
    >>> pairs = pd.DataFrame({"cluster": ["Q2XY", "Q2XY", "Q3DEF"],
    ...                       "snr_a_db": [-20.0, -20.0, nan], "snr_b_db": [-17.0, -17.0, -25.0],
    ...                       "limit_a_db": -28.0, "limit_b_db": -28.0})
    >>> print(pair_outcomes(pairs).to_string(index=False))
    cluster  snr_a_db  snr_b_db  limit_a_db  limit_b_db  count
       Q2XY     -20.0     -17.0       -28.0       -28.0      2
      Q3DEF       NaN     -25.0       -28.0       -28.0      1
    """
    frame = pd.DataFrame({C.CLUSTER: pairs[C.CLUSTER].astype(str).to_numpy(dtype=object)})
    for col in OUTCOME_COLUMNS[1:-1]:
        frame[col] = pairs[col].to_numpy(dtype=float)
    return _count(frame.assign(**{C.COUNT: np.int64(1)}))


def merge_pair_outcomes(tables) -> pd.DataFrame:
    """Combine :func:`pair_outcomes` tables of disjoint pairs by summing ``C.COUNT``.

    Examples
    --------
    >>> t = pd.DataFrame({"cluster": ["Q2XY"], "snr_a_db": [-20.0], "snr_b_db": [float("nan")],
    ...                   "limit_a_db": [-28.0], "limit_b_db": [-28.0], "count": [2]})
    >>> merge_pair_outcomes([t, t])["count"].tolist()
    [4]
    """
    tables = [t for t in tables if len(t)]
    if not tables:
        return empty_pair_outcomes()
    return _count(pd.concat(tables, ignore_index=True))


def empty_pair_outcomes() -> pd.DataFrame:
    """A :func:`pair_outcomes` table without rows."""
    frame = pd.DataFrame({c: pd.Series(dtype=float) for c in OUTCOME_COLUMNS})
    return frame.astype({C.CLUSTER: object, C.COUNT: np.int64})


def _count(frame: pd.DataFrame) -> pd.DataFrame:
    keys = OUTCOME_COLUMNS[:-1]
    out = (frame.groupby(keys, dropna=False, sort=True)[C.COUNT].sum().reset_index())
    out[C.COUNT] = out[C.COUNT].astype(np.int64)
    return out[OUTCOME_COLUMNS]


def _fit(spots: pd.DataFrame, outcomes: pd.DataFrame, design: str, a: str, b: str | None,
         det0: dict, min_receiver_reports: int, grid, whole_db: bool | None = None):
    """The width fit on a :func:`pair_outcomes` table: the detection model chosen, and
    ``moved(table, t50)`` that moves a table's limits from the reference 50 % points to
    ``t50``."""
    if design not in PAIRED_DESIGNS:
        raise UsageError(f"the detection width from the pairs needs a paired design "
                         f"({', '.join(PAIRED_DESIGNS)}), not {design!r}")
    if not det0 or "tau_db" not in det0:
        raise UsageError("the pairs carry no detection model (threshold_method='t50')")
    rounding = det0.get("rounding", "after")
    calls, whole, fit, _ = _t50_fitter(spots, min_receiver_reports, whole_db)
    calls = pd.Index(calls.astype(str))
    t50_0 = fit(float(det0["tau_db"]), rounding)
    hw = 0.5 if whole else 0.0

    def moved(table, t50):
        own_a, own_b = _limit_owners(table, design, a, b)
        ia, ib = calls.get_indexer(own_a), calls.get_indexer(own_b)
        d = t50 - t50_0
        sa = np.where(ia >= 0, d[np.clip(ia, 0, None)], 0.0)
        sb = np.where(ib >= 0, d[np.clip(ib, 0, None)], 0.0)
        return table.assign(**{C.LIMIT_A: table[C.LIMIT_A].to_numpy(float) + sa,
                               C.LIMIT_B: table[C.LIMIT_B].to_numpy(float) + sb})

    taus = np.asarray(grid, dtype=float)
    tau = _best(taus, [profile_loglik(moved(outcomes, fit(t, rounding)), t, hw)["loglik"]
                       for t in taus], float(det0["tau_db"]))
    t50 = fit(tau, rounding)
    alternatives = []
    for f in TAU_FACTORS:
        alt = fit(tau * f, rounding)
        alternatives.append(dict(label=f"detection width x{f:g}", tau_db=tau * f,
                                 shift_db=float(np.nanmedian(alt - t50))))
    other = "before" if rounding == "after" else "after"
    alternatives.append(dict(label=f"rounding {other} the threshold", tau_db=tau,
                             shift_db=float(np.nanmedian(fit(tau, other) - t50))))
    for sgn in (-1, 1):
        alternatives.append(dict(label=f"50 % point {sgn * T50_ERROR_DB:+g} dB",
                                 tau_db=tau, shift_db=sgn * T50_ERROR_DB))
    det = dict(det0, tau_db=tau, tau_fitted=True, tau_from="pairs",
               tau_reports_db=float(det0["tau_db"]), alternatives=alternatives)
    return det, (lambda table: moved(table, t50))


def width_from_outcomes(spots: pd.DataFrame, outcomes: pd.DataFrame, design: str, a: str,
                        b: str | None = None, *, detection: dict,
                        min_receiver_reports: int = 20, grid=WIDTH_GRID_DB,
                        whole_db: bool | None = None) -> dict:
    """The detection width the pairs support, from their compressed outcomes.

    What :func:`width_from_pairs` does, on a (merged) :func:`pair_outcomes` table instead
    of the pairs: the form the Dask path (:func:`spotkit.distributed.compare_dask`) can
    gather partition by partition. ``spots`` needs only ``C.RX_CALL`` and ``C.SNR`` (the
    receivers' report histograms; a stand-in table with the same histograms gives the
    same fit).

    Parameters
    ----------
    spots : pandas.DataFrame
        The reports (``C.RX_CALL``, ``C.SNR`` [dB]) whose histograms set the 50 % points.
    outcomes : pandas.DataFrame
        :func:`pair_outcomes` of the pairs, their limits at ``detection["tau_db"]``.
    design, a, b :
        As given to :func:`~spotkit.compare.pairing.pair_spots`.
    detection : dict
        The detection model the limits were made with (``attrs["detection"]`` of the
        pairs or of :func:`~spotkit.compare.pairing.receiver_thresholds`).
    min_receiver_reports : int
        As given to :func:`~spotkit.compare.pairing.pair_spots`.
    grid : sequence of float
        Widths tried [dB] (default :data:`WIDTH_GRID_DB`).
    whole_db : bool, optional
        Whether the reports are whole dB (then each is a 1-dB interval); None: from
        ``spots``, which a stand-in table of rounded reports cannot show.

    Returns
    -------
    dict
        The detection model, as :func:`width_from_pairs` returns it.

    Examples
    --------
    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.pairing import pair_spots
    >>> sim = simulate_spots(days=0.2, n_receivers=40, bands=("20m",), seed=2)
    >>> pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
    >>> det = width_from_outcomes(sim.spots, pair_outcomes(pairs), "simultaneous", "Q1ABC",
    ...                           "Q1ABD", detection=pairs.attrs["detection"])
    >>> _, det2 = width_from_pairs(sim.spots, pairs, "simultaneous", "Q1ABC", "Q1ABD")
    >>> det["tau_from"], bool(np.isclose(det["tau_db"], det2["tau_db"]))
    ('pairs', True)
    """
    det, _ = _fit(spots, outcomes, design, a, b, dict(detection or {}),
                  min_receiver_reports, grid, whole_db)
    return det


def width_from_pairs(spots: pd.DataFrame, pairs: pd.DataFrame, design: str, a: str,
                     b: str | None = None, *, min_receiver_reports: int = 20,
                     grid=WIDTH_GRID_DB) -> tuple[pd.DataFrame, dict]:
    """The pairs with their limits at the detection width the pairs support.

    The fit runs on the compressed outcomes of the pairs (:func:`pair_outcomes`), as the
    Dask path's does on the merged outcomes of its partitions
    (:func:`width_from_outcomes`), so that both choose the same width.

    Parameters
    ----------
    spots : pandas.DataFrame
        The canonical spot table the pairs came from (the receivers' report histograms).
    pairs : pandas.DataFrame
        :func:`spotkit.compare.pairing.pair_spots` of ``spots`` with the default
        (``"t50"``) thresholds; ``pairs.attrs["detection"]`` names the width they used.
    design, a, b :
        As given to :func:`~spotkit.compare.pairing.pair_spots`.
    min_receiver_reports : int
        As given to :func:`~spotkit.compare.pairing.pair_spots`.
    grid : sequence of float
        Widths tried [dB] (default :data:`WIDTH_GRID_DB`).

    Returns
    -------
    pairs : pandas.DataFrame
        A copy with ``C.LIMIT_A`` / ``C.LIMIT_B`` moved to the refitted 50 % points.
    detection : dict
        The detection model (as ``pairs.attrs["detection"]``, also set on the copy):
        ``tau_db`` (the chosen width), ``tau_fitted`` True, ``tau_from`` "pairs",
        ``tau_reports_db`` (the histogram fit's width), ``alternatives`` (width x0.75
        and x1.25, rounding before/after, 50 % point -+0.25 dB).

    Examples
    --------
    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.pairing import pair_spots
    >>> sim = simulate_spots(days=0.2, n_receivers=40, bands=("20m",), seed=2)
    >>> pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
    >>> moved, det = width_from_pairs(sim.spots, pairs, "simultaneous", "Q1ABC", "Q1ABD")
    >>> det["tau_from"], 0.0 < det["tau_db"] <= 2.0, len(moved) == len(pairs)
    ('pairs', True, True)
    """
    det0 = dict(pairs.attrs.get("detection") or {})
    if design in PAIRED_DESIGNS and det0 and "tau_db" in det0:
        outcomes = pair_outcomes(pairs)
    else:  # _fit says what is wrong
        outcomes = empty_pair_outcomes()
    det, move = _fit(spots, outcomes, design, a, b, det0, min_receiver_reports, grid)
    out = move(pairs)
    out.attrs = dict(pairs.attrs)
    out.attrs["detection"] = det
    return out, det


__all__ = ["PAIRED_DESIGNS", "WIDTH_FROM", "WIDTH_GRID_DB", "OUTCOME_COLUMNS",
           "profile_loglik", "pair_outcomes", "merge_pair_outcomes", "empty_pair_outcomes",
           "width_from_outcomes", "width_from_pairs"]
