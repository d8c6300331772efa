"""Is antenna B better than antenna A? Estimates of B minus A [dB] by group, with honest CIs.

Model. Within a pair both antennas see the same path, so per-W SNRs are
``A = L + e_A`` and ``B = L + delta + e_B`` with a common level ``L``. Under a flat prior
on ``L``, given A's value ``a`` B is ``N(a + mu, sigma^2)``: heard (its difference ``d``
has a normal density) or below its limit (``d <= LIMIT_B - a``). That is a proper
conditional likelihood over the pairs in which A was heard; likewise A's outcome given B
over the pairs in which B was heard (only B -> ``d >= B - LIMIT_A``). The fit maximises
their product, a composite likelihood: a both-heard pair enters both factors, so its
normal density counts twice (:data:`PAIRED_EXACT_WEIGHT`), a one-sided pair once, in a
censored-normal (Tobit) fit. The headline ``b_minus_a_db`` is its ``mu``; it uses the
one-sided pairs and is not stuck on whole or half dB. (The plain difference-Tobit, which
counts a both-heard pair once, is not a likelihood of the observed pairs: which pairs are
observed at all - at least one antenna heard - depends on ``mu``. It was biased by
0.1-0.4 dB with A 7 dB louder, even with a flat level distribution, where the composite
fit is unbiased; see Known error.) The mean over both-heard pairs only is reported beside
it: near threshold it is biased in favour of the antenna heard less often (its unlucky
fades drop out of the both-heard set), which is why it is not the headline.

Detection model (the default, ``model="detection"``). Decoders do not cut off sharply: a
signal of latent SNR ``s`` is decoded with probability ``Phi((s - t50) / tau)``
(:mod:`spotkit.stats.detection`; ``t50`` per receiver fitted to its report histogram,
``tau`` common and given, or fitted: by default (``tau_from="pairs"``) to the paired
outcomes by profile likelihood, each receiver's ``t50`` refitted at every width tried,
:mod:`spotkit.compare.width`, because the fit to the histograms alone comes out too
narrow when receivers have few reports near threshold). In the factor "B's outcome
given A heard at ``a``" the latent difference ``x = b* - a`` is ``N(mu, sigma^2)`` (the
rounding of ``a`` is part of ``sigma``); B is missed with probability
``integral phi((x - mu)/sigma)/sigma (1 - Phi((a + x - t50_B)/tau)) dx
= Phi((LIMIT_B - a - mu) / sqrt(sigma^2 + tau^2))`` -
the one-sided bound at the 50 % point, softened by ``tau``; B heard at a whole-dB report
``b`` means ``x`` in ``[b - a - 1/2, b - a + 1/2]`` (the detection probability of the
heard report, ``Phi((b - t50_B)/tau)``, does not depend on ``mu`` or ``sigma`` and drops
out). Likewise A's outcome given B heard. Whole dB is detected from the reports. The
tails are normal or Student t (3, 5 or 10 df), chosen per group by the composite
log-likelihood less twice Akaike's penalty (a both-heard pair counts twice); the t keeps
the interval honest under heavy-tailed fading. Fit:
:func:`spotkit.stats.censored.interval_censored_mle_batch`. The systematic part
``C.SYSTEMATIC``: the same fit under the plausible detection models that the reports
cannot tell apart (detection width x0.75 and x1.25 when fitted, x0.5 and x1.5 when set;
the decision on the rounded instead of the raw SNR; the 50 % points -+0.25 dB, the known
error of their fit), each moving the thresholds as a refit does; the largest change of
the estimate is the systematic part, and ``C.CI_LOW`` / ``C.CI_HIGH`` are the bootstrap
interval (``C.CI_STAT_LOW`` / ``C.CI_STAT_HIGH``) widened by it on each side (a linear
sum: if the model error is at most the systematic part, the coverage stays at least
nominal). ``p_value`` agrees with that widened interval (below ``1 - confidence`` exactly
when it leaves out 0).
Known error of the detection model, measured with an independent generator
(``tests/detection_cells.py``: 7,000 pairs, 60 receivers, B-A varying 0.3 dB between
receivers, 40 runs each): bias -0.010 dB (equal antennas, hard or soft threshold),
-0.024 dB (hard threshold, whole dB, A 7 dB below B), -0.018 dB (soft 1 dB, whole dB, 7
dB apart; earlier model +0.092 dB) and -0.010 dB (soft, whole dB, Student t fading with 3
df, 7 dB apart; earlier model +0.127 dB). The remaining few hundredths are the flat
level prior (not modelled: a level spread ``s_L`` makes ``B | a`` regress towards the
receiver's mean level by ``c = sigma_e^2 / (s_L^2 + sigma_e^2)``, which the two factors
cancel only when A and B are heard equally often).

Receiver shift (part of the default, ``model="detection"``; ``model="pooled"`` leaves it
out). The fit above takes one law of B-A for every pair. When B-A varies between
receivers (real antennas: patterns differ by direction and elevation) and one antenna is
heard much less often, its ``mu`` is a blend of the mean B-A over the pairs in which A was
heard and over those in which B was heard, not the mean over the pairs in the data (the
truth of the simulations; with receivers differing by 1 dB and A 7 dB below B it was
0.056 dB low). So every group with two or more clusters also gets one fit with a normal
random effect per cluster (:mod:`spotkit.stats.receivers`, integrated out), summarised as
the mean over the pairs; the receiver shift ``C.RECEIVER_SHIFT`` is that less the pooled
``mu``, and the estimate and every bootstrap replicate are the pooled ones plus the
shift: the interval is the pooled fit's bootstrap spread (and systematic part) around the
random-effects estimate. One extra fit per group, not one per resample
(``model="receiver-effects"`` refits in every resample and is several times slower).
The random-effects fit has no missed-report share, so a group in which the pooled fit
found a share of reports missed for other reasons of :data:`SHIFT_MISSED_MAX` or more
(typically the alternating design, paths closing between slots) keeps the pooled
estimate (``C.RECEIVER_SHIFT`` NaN): moved by the difference of a fit with and one without
that share, 200 small alternating runs at unequal powers lost coverage (0.925 -> 0.825;
scaling the bootstrap by the spread of the shift over 50 resamples did not see the extra
spread). No shift with ``threshold_correction="edge"`` either. Measured with the coverage
study (``benchmarks/coverage_study.py --model pooled,detection``, error against each
run's truth): receivers differing by 1 dB with A 7 dB below B -0.056 +- 0.007 -> -0.022
+- 0.005 dB (17 runs, seeds 5000+), the large cell (70,000 pairs, every regime at once)
-0.057 +- 0.002 -> -0.021 +- 0.001 dB (60 runs, seeds 7000+; against the population
truth -0.062 -> -0.025 dB), coverage unchanged within its noise; the other ten regimes
moved by at most 0.003 dB (measured before the missed-share condition, which can only
leave more of them pooled). Where B-A varies within a receiver as well (a receiver's paths
change elevation through the day), a normal effect per receiver removes only part of
the blend (three-antenna demo's patterns: see Known error).

Uncertainty. Reports of one receiver (transmitter, in the receive design) share its noise
floor and its paths, so pairs are not independent: the 95 % CI is a percentile cluster
bootstrap resampling whole clusters. The cluster weights are drawn once, shape
``(n_boot, n_clusters)``, and shared by every group; each group's bootstrap weights are
``W @ M`` (M: per-cluster counts of its distinct (kind, value) rows), fitted in one batch.
``p_value`` is two-sided, from the same replicates as the interval (for the percentile
interval: the smallest ``1 - confidence`` at which the widened interval leaves out 0,
:func:`spotkit.stats.percentile_p_value`; it cannot go below ``1 / n_boot``); ``p_adjusted`` is
Benjamini-Hochberg over the groups. Beside them: the Hodges-Lehmann shift of the
both-heard differences, and side tests with receivers (the clusters) as the units -
Wilcoxon's signed-rank and the sign test on each cluster's median both-heard difference,
and a sign test over clusters of only-B minus only-A counts (the cluster-level version of
McNemar's test). Pair-level versions of these tests count one receiver's pairs as
independent and gave p = 1e-29 where the cluster bootstrap gave 0.45.

Verdicts (:func:`verdict`) name a better antenna only where the numbers support one: the
interval excludes 0, at least :data:`MIN_CLUSTERS` clusters carry the group, and no more
than :data:`MAX_FAILED_SHARE` of the bootstrap resamples failed; otherwise they say "too
little data" and why. p-values below :data:`P_FLOOR` print as ``< 1e-16``
(:func:`format_p_value`).

Threshold correction (optional, off by default). :func:`edge_correction` adds a
first-order Tweedie term for reports piling up at the decode threshold
(``-sigma_e^2 h_A`` for pairs anchored on A, ``+sigma_e^2 h_B`` on B; ``h``: share of the
heard pairs exactly at threshold), from extra ``edge_a`` / ``edge_b`` counts in the
compressed table. It was made for the plain difference-Tobit; with the composite
likelihood it over-corrects (by 0.1-0.18 dB in the simulations below), so
``threshold_correction="none"`` is the default and ``"edge"`` is kept for comparison.

Missed reports. A pair can be one-sided for a reason that has nothing to do with the
antennas: in the alternating design the path closes (or fades out) between the A slot and
the B slot, or the receiver stops listening; in any design a decode can be lost. The bound
of such a pair is spurious, and its size depends on the silent antenna's power
(``LIMIT = threshold - (power - 30)``), so with A and B at different powers the spurious
bounds are lopsided and bias the plain fit. By default (``missed_reports="fit"``) the
likelihood is a mixture: an only-A pair is missing B's report for such a reason with
probability ``pa`` (only-B: ``pb``), fitted per group with ``mu`` and ``sigma``
(:func:`spotkit.stats.censored.censored_mixture_mle`); strong one-sided reports the normal
cannot explain identify ``pa`` and ``pb``. It nests the plain fit (``pa = pb = 0``), which
it returns where the mixture does not fit better; an edge correction, if asked for, then
counts each one-sided pair by its posterior share of the censored-normal component.

Known error (measured in the test suite's simulations, cells with 2,000 or more pairs):
simultaneous and receive designs, equal or unequal powers, with and without many reports
near threshold: within 0.08 dB (simulator) and 0.06 dB (held-out generator, where the
plain difference-Tobit was off by 0.1-0.2 dB and its edge-corrected version by up to
0.1 dB); the both-heard-only mean was off by 0.26 dB in the held-out case with heavy
censoring. Alternating design, A 5 W and B 1 W (2 days, seed 7): the plain
difference-Tobit was off by +0.37, -0.05, +0.14 and +0.01 dB in the four big cells, the
composite fit with the missed-report mixture by -0.02, -0.02, 0.00 and +0.01 dB; over
360,000 pairs of one band by -0.01 dB (+0.005 dB without the open-path check, where the
plain fit was off by +0.14 dB), and with paths that never close by -0.006 dB. In 200 small
alternating runs at unequal powers (about 1,200 pairs, 15 receivers each) the 95 % CI
covered the truth in 92 %: its half-width is about 6 % short of the spread of the
estimates over the runs (simultaneous design, 600 pairs per run: 95.5 %). In the
simultaneous and receive designs (no closures) the mixture fits shares near zero and
changes the estimate by under 0.02 dB. The normal
model for the per-pair spread (fast fading, rounding, alternating slots) and the flat
prior are approximations; a strongly skewed level distribution leaves a few hundredths
of a dB (-0.03 dB in a synthetic check with A 7 dB louder). A difference that varies
within a group (real antennas: direction, elevation) with heavy one-sided censoring
breaks the one-normal model: in the demo's receive test, 10 m beyond 6,000 km (60 % of
the pairs heard by B alone), the pooled estimate was 0.52 dB above the mean true difference
(plain difference-Tobit 0.88 dB; with the edge correction 0.16 dB, which over-corrects
the groups with one difference); the demo's other cells were within 0.25 dB (measured
before the receiver shift). Overall (``benchmarks/bench_models.py``) the demo's
simultaneous test is off by -0.047 dB (pooled +0.016), its receive test by -0.078 dB
(pooled +0.066). With the three-antenna demo's patterns (difference from +5 dB at low
angles to -10 dB at 30 degrees, varying along each receiver's paths) the receiver shift
removes the blend: the step between the dipoles is -0.02 dB off in the demo (pooled
+1.34 dB) and -0.011 +- 0.013 dB on average over 16 runs (pooled +0.79 +- 0.13 dB; the
other two contrasts +0.04 dB; ``benchmarks/three_patterns_study.py``), every simultaneous
interval holding.

Before/after design: :mod:`spotkit.compare.beforeafter` (a censored fit per period, after minus
before, with a two-way bootstrap over receivers and days).

Groups with a single cluster (e.g. ``by="receiver"``) get an interval from resampling
their pairs as if independent, which is too narrow: their verdict says "too little data"
(fewer than :data:`MIN_CLUSTERS` clusters), and the maps re-estimate such cells with
blocks of hours within each receiver as the clusters (:mod:`spotkit.compare.cells`).

References
----------
.. [1] J. Tobin, "Estimation of relationships for limited dependent variables",
   Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
.. [2] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
   s. 3.8 (cluster bootstrap). doi:10.1017/CBO9780511802843
.. [3] Y. Benjamini and Y. Hochberg, "Controlling the false discovery rate", JRSS-B
   57:289-300, 1995.
.. [4] B. Efron, "Tweedie's formula and selection bias", JASA 106(496):1602-1614, 2011.
   doi:10.1198/jasa.2011.tm11181 (citation from memory)
.. [5] G. J. McLachlan and D. Peel, Finite Mixture Models, Wiley, 2000 (citation from
   memory).
.. [6] C. Varin, N. Reid and D. Firth, "An overview of composite likelihood methods",
   Statistica Sinica 21:5-42, 2011 (citation from memory).
"""
from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd
from scipy import sparse

from spotkit import columns as C
from spotkit import stats
from spotkit._validate import check_choice, check_confidence, check_labels
from spotkit.compare.beforeafter import WEAKER_DESIGN, estimate_before_after
from spotkit.compare.grouping import (
    DEFAULT_DAY_HOURS,
    DEFAULT_DISTANCE_EDGES,
    DEFAULT_ELEVATION_EDGES,
    HourBasis,
    group_columns,
    group_index,
    parse_by,
    summarise_pairs,
)
from spotkit.compare.pairing import T50_ERROR_DB, TAU_FACTORS_SET, Design, pair_spots
from spotkit.compare.width import PAIRED_DESIGNS, WIDTH_FROM, WidthFrom, width_from_pairs
from spotkit.errors import NoPairsError, UsageError
from spotkit.stats.detection import DEFAULT_TAU_DB
from spotkit.stats.paired import cluster_medians
from spotkit.stats.receivers import receiver_effects_mle_batch

_KIND_CODE = {"both": 0, "only_a": 1, "only_b": -1, "edge_a": 2, "edge_b": -2}
ThresholdCorrection = Literal["edge", "none"]
THRESHOLD_CORRECTIONS = ("edge", "none")
MissedReports = Literal["fit", "none"]
MISSED_REPORTS = ("fit", "none")
Model = Literal["detection", "pooled", "tobit", "receiver-effects"]
#: "detection" (default): soft detection curve, whole-dB intervals, tails chosen by the
#: data, a systematic part, and the estimate moved by the receiver shift (the
#: receiver-effects fit's mean over the pairs less the pooled fit's, one fit per group);
#: "pooled": the same without the receiver shift (one law of B-A for every pair, the
#: default until 0.x); "tobit": the earlier model (points, hard limits, normal);
#: "receiver-effects": the detection model with a random effect per receiver (cluster),
#: summarised as the mean over the pairs and refitted in every resample
#: (:mod:`spotkit.stats.receivers`)
MODELS = ("detection", "pooled", "tobit", "receiver-effects")
#: the models that use the detection curve (50 % points, fitted width)
DETECTION_MODELS = ("detection", "pooled", "receiver-effects")
#: Student t degrees of freedom the data may choose instead of the normal (inf)
TAIL_DFS = (np.inf, 10.0, 5.0, 3.0)
Tails = Literal["auto", "normal"]
TAILS = ("auto", "normal")
Interval = Literal["percentile", "normal"]
#: bootstrap interval of the paired designs: "percentile" (default) or "normal" (the
#: estimate -+ z times the bootstrap SE; needs far fewer resamples for the same coverage)
INTERVALS = ("percentile", "normal")
#: weight of a both-heard pair's density in the paired designs' likelihood: it enters both
#: conditional likelihoods, "B's outcome given A heard" and "A's outcome given B heard"
PAIRED_EXACT_WEIGHT = 2.0
_META = (C.CLUSTER, C.KIND, C.VALUE, C.COUNT)

#: result columns of :func:`estimate_groups` after the group keys
RESULT_COLUMNS = [C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.PAIRS, C.BOTH, C.ONLY_A, C.ONLY_B,
                  C.CLUSTERS, C.P_VALUE, C.P_ADJUSTED, C.BOTH_HEARD, C.HODGES_LEHMANN,
                  C.P_WILCOXON, C.P_SIGN, C.P_MCNEMAR, C.SIGMA, C.CORRECTION,
                  C.RECEIVER_SHIFT, C.CI_STAT_LOW, C.CI_STAT_HIGH, C.SYSTEMATIC, C.TAIL_DF,
                  C.DETECTION_TAU, C.METHOD, C.NOTE]

def _nan_if_none(x):
    return float("nan") if x is None else float(x)


def edge_correction(sigma, n_both, n_only_a, n_only_b, n_edge_a, n_edge_b):
    """First-order correction of the difference-Tobit for reports piling up at threshold.

    ``sigma^2 / 2 * (h_A * n_only_a - h_B * n_only_b) / n`` [dB], with ``h_A`` the fraction
    of the pairs in which A was heard that sit exactly at A's decode threshold (per dB of
    whole-dB reports; likewise ``h_B``) and ``n`` the number of pairs. Works on arrays
    (bootstrap replicates).

    Rationale (Tweedie's formula): with fading spread ``sigma_e^2 = sigma^2 / 2`` per antenna,
    a report heard at level ``a`` carries noise ``E[e | a] = -sigma_e^2 (log f)'(a)``, and
    averaged over the heard reports the score ``(log f)'`` is ``-f(threshold) / P(heard)``.
    A one-sided pair takes its bound from the heard antenna's noisy value, so one-sided
    pairs anchored on A pull the estimate by about ``-sigma_e^2 h_A`` and those anchored
    on B by ``+sigma_e^2 h_B``. Empirical, validated by simulation (test suite), not a
    published estimator.

    Examples
    --------
    100 pairs, 10 of them only-A; 9 of the 90 pairs with A heard sit at A's threshold
    (``h_A = 0.1``): ``2**2 / 2 * 0.1 * 10 / 100 = 0.02`` dB:

    >>> float(edge_correction(2.0, 80, 10, 10, 9, 0))
    0.02
    >>> edge_correction([2.0, 3.0], 80, 10, 10, 9, 0).round(3).tolist()
    [0.02, 0.045]
    """
    sigma = np.asarray(sigma, dtype=float)
    n = np.asarray(n_both, float) + np.asarray(n_only_a, float) + np.asarray(n_only_b, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        h_a = np.where(n_both + n_only_a > 0, n_edge_a / (n_both + n_only_a), 0.0)
        h_b = np.where(n_both + n_only_b > 0, n_edge_b / (n_both + n_only_b), 0.0)
        return np.where(n > 0, sigma ** 2 / 2 * (h_a * n_only_a - h_b * n_only_b) / n, 0.0)


def _fit(v, k, t, use_mix):
    """The censored fit of one group's paired differences (both-heard pairs count in both
    conditional likelihoods, see :data:`PAIRED_EXACT_WEIGHT`)."""
    if use_mix:
        return stats.censored_mixture_mle(v, k, t, exact_weight=PAIRED_EXACT_WEIGHT)
    fit = stats.censored_normal_mle(v, k, np.where(k == 0, PAIRED_EXACT_WEIGHT, 1.0) * t)
    return fit


def default_detection(tau_db: float = DEFAULT_TAU_DB, whole_db: bool | None = None) -> dict:
    """The detection model used when the pairs carry none (see :func:`estimate_groups`).

    ``tau_db`` [dB] is the common-practice width (:data:`spotkit.stats.detection.DEFAULT_TAU_DB`,
    not fitted); the alternatives are that width times
    :data:`spotkit.compare.pairing.TAU_FACTORS_SET` and the
    50 % point moved by -+ :data:`spotkit.compare.pairing.T50_ERROR_DB` (the threshold shifts
    of a refit are unknown here, so the width alternatives move no threshold).

    Examples
    --------
    >>> det = default_detection()
    >>> det["tau_db"], [a["label"] for a in det["alternatives"]][:2]
    (1.0, ['detection width x0.5', 'detection width x1.5'])
    """
    alts = [dict(label=f"detection width x{f:g}", tau_db=tau_db * f, shift_db=0.0)
            for f in TAU_FACTORS_SET]
    alts += [dict(label=f"50 % point {sg * T50_ERROR_DB:+g} dB", tau_db=tau_db,
                  shift_db=sg * T50_ERROR_DB) for sg in (-1, 1)]
    return dict(method="t50", tau_db=float(tau_db), rounding="after", whole_db=whole_db,
                tau_fitted=False, alternatives=alts)


def _detection_settings(det, exact_values, exact_counts) -> dict:
    """The detection model with ``whole_db`` settled (from the values when unknown)."""
    out = default_detection()
    if det:
        out.update(det)
    if out.get("whole_db") is None:
        v = np.asarray(exact_values, dtype=float)
        c = np.asarray(exact_counts, dtype=float)
        whole = np.abs(v - np.round(v)) < 1e-6
        out["whole_db"] = bool(c.sum() > 0 and np.sum(c[whole]) >= 0.99 * c.sum())
    out["half_width_db"] = 0.5 if out["whole_db"] else 0.0
    return out


#: largest number of (row x item) cells of one batch of single fits (memory: about 40
#: doubles per cell while a batch iterates)
_BATCH_CELLS = 200_000


class _Fitter:
    """The censored fit of one group, its bootstrap batch and its systematic part.

    With the detection model the single fits (one group's pairs under one tail and one
    detection model) are many and small; :meth:`prepare` runs those of all groups
    beforehand as a few batches (one row per fit, each with its own values:
    :func:`spotkit.stats.censored.interval_censored_mle_batch`) and keeps their results,
    which :meth:`point` and :meth:`systematic` then look up (a fit not prepared is run
    on its own: the same answer, to rounding)."""

    def __init__(self, use_mix: bool, det: dict | None, dfs=TAIL_DFS):
        self.use_mix, self.det, self.df, self.dfs = use_mix, det, np.inf, tuple(dfs)
        self._done = {}

    @staticmethod
    def _key(v, k, t, df, tau):
        return (v.tobytes(), k.tobytes(), t.tobytes(), float(df), float(tau))

    def _single(self, v, k, t, df, tau):
        """The detection-model fit of items ``v``, ``k`` with counts ``t`` (one row)."""
        hit = self._done.get(self._key(v, k, t, df, tau))
        if hit is not None:
            return hit
        return stats.interval_censored_mle_batch(v, k, t[None, :], df=df, **self._kw(tau))

    def _run(self, jobs):
        """Fit ``jobs`` (v, k, t, df, tau) in batches, one row per job, and keep them."""
        by_df = {}
        for job in jobs:
            if self._key(*job) not in self._done:
                by_df.setdefault(job[3], []).append(job)
        for df, todo in by_df.items():
            todo.sort(key=lambda j: j[0].size)
            start = 0
            while start < len(todo):
                stop = start + 1
                while (stop < len(todo)
                       and (stop + 1 - start) * todo[stop][0].size <= _BATCH_CELLS):
                    stop += 1
                chunk = todo[start:stop]
                v, k, w, tau = _stack_items(chunk)
                r = stats.interval_censored_mle_batch(v, k, w, df=df, **self._kw(tau))
                for i, job in enumerate(chunk):
                    self._done[self._key(*job)] = {c: a[i:i + 1] for c, a in r.items()}
                start = stop

    def prepare(self, groups):
        """Run the single fits of :meth:`point` and :meth:`systematic` for ``groups``
        (a list of the items ``(v, k, t)`` of each group to be estimated) in batches."""
        if self.det is None or not groups:
            return
        tau = self.det["tau_db"]
        self._run([(v, k, t, df, tau) for v, k, t in groups for df in self.dfs])
        alts = self.det.get("alternatives") or []
        jobs = []
        for v, k, t in groups:
            if alts and np.isfinite(self.point(v, k, t).mu):
                jobs += [(_shifted(v, k, alt), k, t, self.df, float(alt["tau_db"]))
                         for alt in alts]
        self._run(jobs)
        self.df = np.inf

    def _kw(self, tau=None):
        return dict(half_width_db=self.det["half_width_db"],
                    tau_db=self.det["tau_db"] if tau is None else tau,
                    missed=self.use_mix, exact_weight=PAIRED_EXACT_WEIGHT)

    def point(self, v, k, t):
        """Fit on the group's pairs; with the detection model the tails (normal or
        Student t, :data:`TAIL_DFS`) are chosen by the log-likelihood less a penalty for
        the t's extra parameter: Akaike's 1 times :data:`PAIRED_EXACT_WEIGHT`, as the
        composite likelihood counts a both-heard pair twice (the penalty of the composite
        likelihood information criterion, Varin and Vidoni 2005)."""
        self.df = np.inf
        if self.det is None:
            return _fit(v, k, t, self.use_mix)
        best, best_score = None, -np.inf
        for df in self.dfs:
            r = self._single(v, k, t, df, self.det["tau_db"])
            score = r["loglik"][0] - (0.0 if np.isinf(df) else PAIRED_EXACT_WEIGHT)
            if np.isfinite(r["mu"][0]) and score > best_score:
                best, best_score, self.df = r, score, df
        if best is None:
            return stats.CensoredFit(np.nan, np.nan, False, 0.0, 0.0, 0.0)
        return stats.CensoredFit(float(best["mu"][0]), float(best["sigma"][0]) * self._sd(),
                                 True,
                                 0.0, 0.0, 0.0, missed_a=float(best["missed_a"][0]),
                                 missed_b=float(best["missed_b"][0]))

    def batch(self, v, k, wb):
        """Bootstrap fits (rows of ``wb``): mu, sigma, missed_a, missed_b."""
        if self.det is None:
            if self.use_mix:
                return stats.censored_mixture_mle_batch(v, k, wb,
                                                        exact_weight=PAIRED_EXACT_WEIGHT)
            mu, sig = stats.censored_normal_mle_batch(
                v, k, np.where(k == 0, PAIRED_EXACT_WEIGHT, 1.0) * wb)
            return mu, sig, 0.0, 0.0
        r = stats.interval_censored_mle_batch(v, k, wb, df=self.df, **self._kw())
        return r["mu"], r["sigma"] * self._sd(), r["missed_a"], r["missed_b"]

    def _sd(self) -> float:
        """SD of the fitted law per unit scale: ``sqrt(df / (df - 2))`` for the t, so that
        ``C.SIGMA`` stays the spread (SD) of B - A per pair whatever the tails."""
        return 1.0 if np.isinf(self.df) else float(np.sqrt(self.df / (self.df - 2.0)))

    def systematic(self, v, k, t, mu) -> float:
        """Largest change of ``mu`` [dB] over the plausible detection models (0 without
        the detection model)."""
        if self.det is None or not self.det.get("alternatives"):
            return 0.0
        alts = self.det["alternatives"]
        moved = []
        for alt in alts:
            r = self._single(_shifted(v, k, alt), k, t, self.df, float(alt["tau_db"]))
            moved.append(abs(r["mu"][0] - mu))
        moved = np.asarray(moved)
        return float(np.max(moved[np.isfinite(moved)])) if np.isfinite(moved).any() else 0.0


def _shifted(v, k, alt):
    """Values under an alternative detection model: the bounds follow its 50 % point."""
    sh = float(alt.get("shift_db", 0.0))
    return v + sh * (k == 1) - sh * (k == -1)


def _stack_items(jobs):
    """Rows of many single fits for one batch: values (R, K), kinds (K,), weights (R, K),
    widths (R,) [dB].

    Each job's items (sorted by kind: lower bounds, exact values, upper bounds) go into
    the columns of their kind; a row's unused columns repeat one of its own values (its
    first exact value, else its first value) with weight 0, so that every term stays
    finite."""
    n = np.array([[np.sum(j[1] == c) for c in (-1, 0, 1)] for j in jobs])
    width = n.max(axis=0)
    start = np.r_[0, np.cumsum(width)]
    kinds = np.repeat([-1, 0, 1], width)
    vals = np.empty((len(jobs), kinds.size))
    wts = np.zeros((len(jobs), kinds.size))
    for i, (v, k, t, _df, _tau) in enumerate(jobs):
        ex = np.flatnonzero(k == 0)
        vals[i] = v[ex[0]] if ex.size else v[0]
        pos = 0
        for j in range(3):
            m = n[i, j]
            vals[i, start[j]:start[j] + m] = v[pos:pos + m]
            wts[i, start[j]:start[j] + m] = t[pos:pos + m]
            pos += m
    tau = np.array([j[4] for j in jobs], dtype=float)
    return vals, kinds, wts, tau


#: largest fitted share of missed reports (``missed_a``, ``missed_b`` of the pooled fit)
#: with which the default applies the receiver shift. Measured: the simultaneous runs of
#: the coverage study ("receiver heterogeneity, A 7 dB below B", 17 runs) fit at most
#: 0.0032, the 200 small alternating runs of the test suite (paths closing between slots)
#: at least 0.0087 (5 % quantile 0.0115)
SHIFT_MISSED_MAX = 0.005


def _detection_method_text(det, use_mix, use_edge, confidence, cluster_label, n_boot,
                           tails="auto", interval="percentile"):
    """The method line of the detection model."""
    alts = ", ".join(a["label"] for a in det.get("alternatives", []))
    how = ("fitted to the paired outcomes" if det.get("tau_from") == "pairs" else
           "fitted to the reports" if det.get("tau_fitted") else "set")
    return (
        "censored MLE of per-W B-A with a soft detection model (decode probability "
        f"Phi((s - t50)/tau), t50 per receiver from its reports, tau {det['tau_db']:.2f} dB "
        f"{how})"
        + ("; whole-dB reports as 1-dB intervals" if det["whole_db"] else "")
        + "; both-heard pairs in both conditional likelihoods (given A heard, given B "
        "heard); "
        + ("tails normal or Student t (3, 5, 10 df) as the data choose (tail_df)"
           if tails == "auto" else "normal tails")
        + ("" if not use_mix else "; a fitted share of one-sided pairs may be missing for "
           "other reasons (path closed, receiver off)")
        + ("" if not use_edge else "; with a first-order correction for reports at the "
           "decode threshold")
        + f"; interval: {confidence:.0%} {_INTERVAL_TEXT[interval]} cluster bootstrap over "
        f"{cluster_label} "
        f"({int(n_boot)} resamples) widened on each side by the systematic part, the "
        f"largest change of the estimate over plausible detection models ({alts}); "
        + _P_TEXT[interval])


_P_TEXT = {
    "percentile": "p the smallest 1 - confidence at which that interval leaves out 0 "
                  "(at least 1/resamples)",
    "normal": "p from the bootstrap SE after moving the estimate towards 0 by the "
              "systematic part"}


_EFFECTS_TEXT = (
    "; receiver-effects model: B-A = mu + u per {0} (normal, SD fitted, integrated out by "
    "Gauss-Hermite quadrature) + the pair's term; the estimate is mu plus the pair-weighted "
    "mean of the {0}s' posterior mean u (the mean B-A over the pairs), refitted in every "
    "resample, without a missed-report share (groups with one {0}: the pooled fit); the "
    "systematic part is the pooled fit's")

_SHIFT_TEXT = (
    "; the estimate and the interval moved by the receiver shift (receiver_shift_db): "
    "the mean B-A over the pairs from a fit with a normal random effect per {0} less the "
    "pooled fit's (one fit per group; none in groups with one {0} or with a fitted share "
    "of missed reports of 0.5 % or more)")

_INTERVAL_TEXT = {"percentile": "percentile", "normal": "normal-approximation (bootstrap SE)"}


def _explained(v, k, w, mu, sigma, missed_a, missed_b):
    """Weights of the only-A and only-B pairs the censored normal explains, per row of ``w``.

    With the missed-report mixture a one-sided pair counts with its posterior share of the
    normal component (:func:`spotkit.stats.censored.normal_share`); the plain fit counts each."""
    n = w.shape[:1]
    share = stats.normal_share(v, k, np.broadcast_to(mu, n), np.broadcast_to(sigma, n),
                               np.broadcast_to(missed_a, n), np.broadcast_to(missed_b, n))
    share = np.where(np.isfinite(share), share, 0.0)
    ws = w * share
    return ws[:, k == 1].sum(1), ws[:, k == -1].sum(1)


def _tests_on_both(v, k, t, per_cluster, out, g):
    """The side tests of one group, with clusters (receivers) as the independent units.

    ``v``, ``k``, ``t``: the group's distinct pair items (value [dB], kind code, count);
    ``per_cluster``: their counts per cluster (sparse, items x clusters). The both-heard
    mean and the Hodges-Lehmann shift are point estimates over the pairs; the signed-rank
    and sign tests run on each cluster's median both-heard difference
    (:func:`spotkit.stats.paired.cluster_medians`), and the McNemar-type test is a sign
    test over clusters of "B heard alone more often than A alone" (only-B minus only-A
    count per cluster): a pair-level test treats one receiver's hundreds of pairs as
    independent and overstates the evidence (module docstring)."""
    coo = sparse.coo_matrix(per_cluster)
    kind = k[coo.row]
    both = kind == 0
    if t[k == 0].sum() > 0:
        vals, cnts = v[k == 0], t[k == 0]
        out[C.BOTH_HEARD][g] = float(np.average(vals, weights=cnts))
        out[C.HODGES_LEHMANN][g] = float(stats.hodges_lehmann(vals, cnts))
        _, med = cluster_medians(v[coo.row[both]], coo.col[both], coo.data[both])
        out[C.P_WILCOXON][g] = _nan_if_none(stats.wilcoxon_signed_rank(med).p_value)
        out[C.P_SIGN][g] = _nan_if_none(stats.sign_test(med).p_value)
    one = kind != 0
    if one.any():
        bal = np.bincount(coo.col[one], weights=np.where(kind[one] == -1, 1.0, -1.0)
                          * coo.data[one], minlength=coo.shape[1])
        bal = bal[np.bincount(coo.col[one], minlength=coo.shape[1]) > 0]
        out[C.P_MCNEMAR][g] = _nan_if_none(stats.sign_test(np.sign(bal)).p_value)


def estimate_groups(counts: pd.DataFrame, *, n_boot: int = 1000, seed: int = 0,
                    confidence: float = 0.95, min_pairs: int = 30, clusters=None,
                    cluster_label: str = "receivers", progress: bool = False,
                    threshold_correction: ThresholdCorrection = "none",
                    missed_reports: MissedReports = "fit", model: Model = "detection",
                    detection: dict | None = None, tails: Tails = "auto",
                    interval: Interval = "percentile", return_replicates: bool = False):
    """B minus A per group from a compressed pair table.

    Parameters
    ----------
    counts : pandas.DataFrame
        From :func:`spotkit.compare.grouping.summarise_pairs` (possibly merged over partitions):
        group-key columns, ``C.CLUSTER``, ``C.KIND``, ``C.VALUE`` [dB], ``C.COUNT``; in
        the before/after design also ``C.SLOT``, the day block [UTC] (without it, or with
        fewer than two days in a period, before/after groups get no interval).
    n_boot : int
        Bootstrap resamples of the clusters.
    seed : int
        Seed of the resampling; the same seed and cluster list give the same weights.
    confidence : float
        Coverage of the interval, e.g. 0.95.
    min_pairs : int
        Groups with fewer pairs get no estimate (their counts are still reported, with a
        note).
    clusters : sequence of str, optional
        The cluster list (defines the order of the bootstrap weights); default: the sorted
        clusters of ``counts``.
    cluster_label : str
        What the clusters are, for the method text ("receivers" / "transmitters").
    progress : bool
        Show a progress bar over groups (tqdm).
    threshold_correction : {"none", "edge"}
        ``"edge"``: add :func:`edge_correction` to the censored MLE (and to each bootstrap
        replicate); needs the ``edge_a`` / ``edge_b`` rows of the compressed table. Off by
        default: it over-corrects the composite likelihood (module docstring).
    missed_reports : {"fit", "none"}
        ``"fit"``: allow a share of the one-sided pairs to be missing for reasons other
        than B - A (path closed between slots, receiver off, decode lost), fitted per group
        (:func:`spotkit.stats.censored.censored_mixture_mle`); an edge correction then counts
        only the one-sided pairs the censored normal explains. ``"none"``: the plain
        censored-normal fit.
    model : {"detection", "pooled", "tobit", "receiver-effects"}
        ``"detection"`` (default): the detection model of the module docstring (soft
        limits, whole-dB intervals, tails chosen by the data, systematic part), its
        estimate and bootstrap moved by the receiver shift ``C.RECEIVER_SHIFT`` (the
        receiver-effects fit's mean over the pairs less the pooled fit without a
        missed-report share; one receiver-effects fit per group with two or more
        clusters; none with ``threshold_correction="edge"`` nor where the pooled fit found
        missed reports); ``"pooled"``: the same
        without the receiver shift (one law of B-A for every pair, the default before);
        ``"tobit"``: the earlier censored-normal fit of points with hard limits (for
        comparison; its ``C.SYSTEMATIC`` is 0); ``"receiver-effects"``: the
        detection model with a normal random effect per cluster
        (:func:`spotkit.stats.receivers.receiver_effects_mle_batch`), the estimate being
        the mean B-A over the group's pairs (``mu`` plus the pair-weighted mean of the
        clusters' posterior mean effects), refitted in every bootstrap resample; no
        missed-report share, no threshold correction; the tails (normal or t) and
        ``C.SIGMA`` and ``C.SYSTEMATIC`` are the pooled fit's; groups with one cluster
        get the pooled fit.
    detection : dict, optional
        The detection model: ``tau_db`` [dB], ``whole_db`` (bool) and ``alternatives``
        (list of dicts with ``label``, ``tau_db``, ``shift_db``), as
        :func:`spotkit.compare.pairing.receiver_thresholds` puts in ``attrs``. Default:
        ``counts.attrs["detection"]`` if there, else :func:`default_detection` (whole dB
        detected from the values).
    tails : {"auto", "normal"}
        Detection model: tails chosen by the data among the normal and Student t
        (:data:`TAIL_DFS`), or always normal.
    interval : {"percentile", "normal"}
        The statistical interval of the paired designs: the percentile interval of the
        cluster bootstrap (default), or the estimate -+ z times the bootstrap SE
        (:func:`spotkit.stats.bootstrap.bootstrap_interval`). The normal one holds its
        coverage with far fewer resamples (its SE from 50 resamples is within about 10 %;
        a percentile endpoint from 50 resamples is an extreme order statistic) but
        assumes a symmetric sampling distribution. The before/after design always uses
        the percentile interval.
    return_replicates : bool
        Also return the bootstrap replicates of ``C.B_MINUS_A``, shape
        ``(n_groups, n_boot)`` [dB] (NaN rows for groups without an interval). Two calls
        with the same ``clusters`` list and ``seed`` draw the same cluster weights, so
        their replicates are joint draws (one resample of the receivers for every
        comparison: :mod:`spotkit.compare.multi`). Paired designs only.

    Returns
    -------
    pandas.DataFrame
        One row per group: the group keys and :data:`RESULT_COLUMNS` -
        ``C.B_MINUS_A``, ``C.CI_LOW``, ``C.CI_HIGH`` [dB], ``C.PAIRS``, ``C.BOTH``,
        ``C.ONLY_A``, ``C.ONLY_B``, ``C.CLUSTERS``, ``C.P_VALUE`` (bootstrap, two-sided),
        ``C.P_ADJUSTED`` (Benjamini-Hochberg), ``C.BOTH_HEARD`` [dB], ``C.HODGES_LEHMANN``
        [dB], ``C.P_WILCOXON``, ``C.P_SIGN``, ``C.P_MCNEMAR``, ``C.SIGMA`` [dB],
        ``C.CORRECTION`` [dB] (the threshold correction), ``C.RECEIVER_SHIFT`` [dB] (the
        default model's receiver shift; NaN where not applied and for the other models),
        ``C.CI_STAT_LOW``, ``C.CI_STAT_HIGH`` [dB] (the statistical part alone),
        ``C.SYSTEMATIC`` [dB] (``C.CI_LOW`` / ``C.CI_HIGH`` are the statistical interval
        widened by it on each side), ``C.TAIL_DF`` (inf: normal), ``C.DETECTION_TAU``
        [dB], ``C.METHOD``, ``C.NOTE``. With ``return_replicates``: ``(table,
        replicates)``.

    References
    ----------
    .. [1] J. Tobin, Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
    .. [2] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
       s. 3.8.

    Examples
    --------
    The compressed pairs of a short simulated run in which B is 3 dB better than A:

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.1, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> from spotkit.compare.grouping import summarise_pairs
    >>> from spotkit.compare.pairing import pair_spots
    >>> counts = summarise_pairs(pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD"))
    >>> result = estimate_groups(counts, n_boot=50)
    >>> cols = ["b_minus_a_db", "ci_low_db", "ci_high_db", "pairs", "both", "only_a",
    ...         "only_b", "clusters"]
    >>> print(result[cols].round(2).to_string(index=False))
     b_minus_a_db  ci_low_db  ci_high_db  pairs  both  only_a  only_b  clusters
             3.52       3.19        3.87     42    41       0       1        10
    """
    check_confidence(confidence)
    check_choice(threshold_correction, THRESHOLD_CORRECTIONS, "threshold correction")
    check_choice(missed_reports, MISSED_REPORTS, "missed_reports")
    check_choice(model, MODELS, "model")
    check_choice(tails, TAILS, "tails")
    check_choice(interval, INTERVALS, "interval")
    use_mix = missed_reports == "fit"
    if model == "receiver-effects" and threshold_correction == "edge":
        raise UsageError("the receiver-effects model takes no threshold correction: use "
                         "threshold_correction='none' (the default)")
    if int(n_boot) < 2:
        raise UsageError(f"n_boot must be at least 2, got {n_boot}")
    missing = [c for c in _META if c not in counts.columns]
    if missing:
        raise UsageError("counts lacks column(s) " + ", ".join(missing))
    if len(counts) == 0:
        raise NoPairsError("no pairs to estimate from")
    keys = [c for c in counts.columns if c not in _META]
    kinds = counts[C.KIND].astype(str).to_numpy()
    if np.isin(kinds, C.PERIOD_KINDS + C.PERIOD_BOUND_KINDS).all() and kinds.size:
        if return_replicates:
            raise UsageError("return_replicates is for the paired designs, not before-after")
        return estimate_before_after(counts, keys, n_boot, seed, confidence, min_pairs,
                                      clusters, cluster_label,
                                      use_mix=missed_reports == "fit")
    if not np.isin(kinds, C.KINDS + C.EDGE_KINDS).all():
        raise UsageError(f"kind must be one of {', '.join(C.KINDS + C.EDGE_KINDS)} (or "
                         "before/after)")
    use_edge = threshold_correction == "edge"
    cl_names = (np.asarray(sorted(counts[C.CLUSTER].astype(str).unique()))
                if clusters is None else np.asarray([str(c) for c in clusters]))
    cl_code = pd.Index(cl_names).get_indexer(counts[C.CLUSTER].astype(str))
    if (cl_code < 0).any():
        raise UsageError("counts has clusters not in the given cluster list")
    gcode, groups = group_index(counts, keys)
    n_groups = len(groups)
    kcode = pd.Series(kinds).map(_KIND_CODE).to_numpy(dtype=np.int64)
    value = counts[C.VALUE].to_numpy(dtype=float)
    cnt = counts[C.COUNT].to_numpy(dtype=float)
    # distinct items (group, kind, value); sparse matrix items x clusters
    item_key = pd.MultiIndex.from_arrays([gcode, kcode, value])
    icode, items = pd.factorize(item_key, sort=True)
    it_g = items.get_level_values(0).to_numpy()
    it_k = items.get_level_values(1).to_numpy()
    it_v = items.get_level_values(2).to_numpy(dtype=float)
    S = sparse.csr_matrix((cnt, (icode, cl_code)), shape=(len(items), cl_names.size))
    tot = np.asarray(S.sum(axis=1)).ravel()
    clusters_per_group = (pd.DataFrame({"g": gcode, "c": cl_code}).drop_duplicates()
                          .groupby("g").size().reindex(range(n_groups), fill_value=0)
                          .to_numpy())
    bounds = np.searchsorted(it_g, np.arange(n_groups + 1))
    W = stats.cluster_bootstrap_weights(cl_names.size, int(n_boot),
                                        np.random.default_rng(seed))
    WT = np.ascontiguousarray(W.T, dtype=float)
    out = {c: np.full(n_groups, np.nan) for c in
           [C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.P_VALUE, C.BOTH_HEARD, C.HODGES_LEHMANN,
            C.P_WILCOXON, C.P_SIGN, C.P_MCNEMAR, C.SIGMA, C.CORRECTION, C.CI_STAT_LOW,
            C.CI_STAT_HIGH, C.SYSTEMATIC, C.TAIL_DF, C.RECEIVER_SHIFT]}
    det = None
    if model in DETECTION_MODELS:
        det = _detection_settings(detection if detection is not None else
                                  counts.attrs.get("detection"),
                                  it_v[np.abs(it_k) <= 1][it_k[np.abs(it_k) <= 1] == 0],
                                  tot[(it_k == 0)])
    fitter = _Fitter(use_mix, det, TAIL_DFS if tails == "auto" else (np.inf,))
    reps = np.full((n_groups, int(n_boot)), np.nan)
    n_both = np.zeros(n_groups, np.int64)
    n_a = np.zeros(n_groups, np.int64)
    n_b = np.zeros(n_groups, np.int64)
    notes = [""] * n_groups
    todo = []  # the single fits of the groups to be estimated, run in batches
    for g in range(n_groups):
        k_all, v_all, t_all = (a[bounds[g]:bounds[g + 1]] for a in (it_k, it_v, tot))
        pm = np.abs(k_all) <= 1
        if t_all[pm].sum() >= min_pairs:
            todo.append((v_all[pm], k_all[pm], t_all[pm]))
    fitter.prepare(todo)
    it = range(n_groups)
    if progress:
        from tqdm.auto import tqdm
        it = tqdm(it, desc="groups", unit="group")
    for g in it:
        sl = slice(bounds[g], bounds[g + 1])
        k_all, v_all, t_all = it_k[sl], it_v[sl], tot[sl]
        pm = np.abs(k_all) <= 1  # pair items (not the edge counts)
        k, v, t = k_all[pm], v_all[pm], t_all[pm]
        e_a, e_b = t_all[k_all == 2].sum(), t_all[k_all == -2].sum()
        n_both[g] = int(t[k == 0].sum())
        n_a[g] = int(t[k == 1].sum())
        n_b[g] = int(t[k == -1].sum())
        pairs = n_both[g] + n_a[g] + n_b[g]
        _tests_on_both(v, k, t, S[sl][np.flatnonzero(pm)], out, g)
        if pairs < min_pairs:
            notes[g] = f"too few pairs ({pairs:,} < {min_pairs:,}): no estimate"
            continue
        fit = fitter.point(v, k, t)
        if not np.isfinite(fit.mu):
            notes[g] = ("no estimate: the pairs do not bound B - A on both sides (e.g. "
                        "only one antenna ever heard)")
            continue
        if use_edge:
            na_eff, nb_eff = _explained(v, k, t[None, :], fit.mu, fit.sigma, fit.missed_a,
                                        fit.missed_b)
            corr = float(edge_correction(fit.sigma, n_both[g], na_eff, nb_eff, e_a, e_b)[0])
        else:
            corr = 0.0
        out[C.B_MINUS_A][g], out[C.SIGMA][g] = fit.mu + corr, fit.sigma
        out[C.CORRECTION][g] = corr
        out[C.TAIL_DF][g] = fitter.df
        out[C.SYSTEMATIC][g] = fitter.systematic(v, k, t, fit.mu)
        single = clusters_per_group[g] < 2
        effects = model == "receiver-effects" and not single
        # the receiver shift: not with the edge correction, nor where the pooled fit found
        # reports missed for other reasons (the receiver-effects fit has no such share;
        # small alternating runs lost coverage, 0.925 -> 0.825, with it moved there)
        shifted = (model == "detection" and not single and not use_edge
                   and max(fit.missed_a, fit.missed_b) < SHIFT_MISSED_MAX)
        shift = 0.0
        if effects or shifted:  # the receiver random-effects fit, summarised over the pairs
            s_g = S[sl][np.flatnonzero(pm)]
            cols = np.flatnonzero(np.asarray(s_g.sum(axis=0)).ravel() > 0)
            s_g = s_g[:, cols]
            rfx = dict(half_width_db=det["half_width_db"], tau_db=det["tau_db"],
                       df=fitter.df, exact_weight=PAIRED_EXACT_WEIGHT)
            scale = fit.sigma / fitter._sd()
            r0 = receiver_effects_mle_batch(v, k, s_g, np.ones((1, cols.size)),
                                            start_mu=fit.mu, start_sigma=scale, **rfx)
            if effects and not np.isfinite(r0["mu_pairs"][0]):
                notes[g] = "no estimate: the receiver-effects fit did not converge"
                out[C.B_MINUS_A][g] = np.nan
                continue
            if effects:
                out[C.B_MINUS_A][g] = float(r0["mu_pairs"][0])
            else:
                shift = float(r0["mu_pairs"][0]) - fit.mu
                if np.isfinite(shift):
                    out[C.B_MINUS_A][g] = fit.mu + shift
                    out[C.RECEIVER_SHIFT][g] = shift
                else:
                    shift = 0.0
                    notes[g] = ("the receiver-effects fit did not converge: the pooled "
                                "estimate, without the receiver shift")
        if not single:
            wb_all = np.asarray((S[sl] @ WT).T)  # (n_boot, K)
            wb = wb_all[:, pm]
            ea_b, eb_b = wb_all[:, k_all == 2].sum(1), wb_all[:, k_all == -2].sum(1)
        else:  # one cluster (e.g. by receiver): resample its pairs, as if independent
            gen = np.random.default_rng([int(seed), g])
            wb = gen.multinomial(int(t.sum()), t / t.sum(), size=int(n_boot)).astype(float)
            heard_a = wb[:, k == 0].sum(1) + wb[:, k == 1].sum(1)
            heard_b = wb[:, k == 0].sum(1) + wb[:, k == -1].sum(1)
            ea_b = e_a * heard_a / max(n_both[g] + n_a[g], 1)
            eb_b = e_b * heard_b / max(n_both[g] + n_b[g], 1)
        if effects:
            rb = receiver_effects_mle_batch(
                v, k, s_g, W[:, cols], start_mu=r0["mu"][0], start_sigma=r0["sigma"][0],
                start_s_u=r0["s_u"][0], **rfx)
            mu_b = rb["mu_pairs"]
        else:
            mu_b, sig_b, pa_b, pb_b = fitter.batch(v, k, wb)
            mu_b = mu_b + shift
        if use_edge and not effects:
            na_b, nb_b = _explained(v, k, wb, mu_b, sig_b, pa_b, pb_b)
            mu_b = mu_b + edge_correction(sig_b, wb[:, k == 0].sum(1), na_b, nb_b, ea_b,
                                          eb_b)
        est = out[C.B_MINUS_A][g]
        if not single:
            reps[g] = mu_b
        lo, hi = stats.bootstrap_interval(mu_b, est, confidence, method=interval)
        sys_db = out[C.SYSTEMATIC][g]
        out[C.CI_STAT_LOW][g], out[C.CI_STAT_HIGH][g] = lo, hi
        out[C.CI_LOW][g], out[C.CI_HIGH][g] = lo - sys_db, hi + sys_db
        out[C.P_VALUE][g] = _p_value(mu_b, est, sys_db, interval)
        bad = np.mean(~np.isfinite(mu_b))
        if single:
            notes[g] = (f"a single {cluster_label.rstrip('s')}: interval from resampling its "
                        "pairs as if independent (too narrow)")
        elif bad > 0.05:
            notes[g] = (f"{bad:.0%} of the bootstrap resamples had no estimate: interval "
                        "unreliable")
        elif clusters_per_group[g] < 5:
            notes[g] = (f"only {clusters_per_group[g]} {cluster_label}: interval "
                        "unreliable")
    res = groups.reset_index(drop=True).copy()
    res[C.B_MINUS_A] = out[C.B_MINUS_A]
    res[C.CI_LOW] = out[C.CI_LOW]
    res[C.CI_HIGH] = out[C.CI_HIGH]
    res[C.PAIRS] = n_both + n_a + n_b
    res[C.BOTH] = n_both
    res[C.ONLY_A] = n_a
    res[C.ONLY_B] = n_b
    res[C.CLUSTERS] = clusters_per_group.astype(np.int64)
    res[C.P_VALUE] = out[C.P_VALUE]
    res[C.P_ADJUSTED] = stats.benjamini_hochberg(out[C.P_VALUE])
    for c in (C.BOTH_HEARD, C.HODGES_LEHMANN, C.P_WILCOXON, C.P_SIGN, C.P_MCNEMAR,
              C.SIGMA, C.CORRECTION, C.RECEIVER_SHIFT, C.CI_STAT_LOW, C.CI_STAT_HIGH,
              C.SYSTEMATIC, C.TAIL_DF):
        res[c] = out[c]
    res[C.DETECTION_TAU] = np.nan if det is None else det["tau_db"]
    if det is not None:
        res[C.METHOD] = _detection_method_text(det, use_mix, use_edge, confidence,
                                               cluster_label, n_boot, tails, interval)
        if model == "receiver-effects":
            res[C.METHOD] = res[C.METHOD] + _EFFECTS_TEXT.format(cluster_label.rstrip("s"))
        elif model == "detection" and not use_edge:
            res[C.METHOD] = res[C.METHOD] + _SHIFT_TEXT.format(cluster_label.rstrip("s"))
        res[C.NOTE] = notes
        return (res, reps) if return_replicates else res
    res[C.METHOD] = (
        "censored-normal MLE (Tobit) of per-W B-A using both-heard and one-sided pairs "
        "(both-heard pairs in both conditional likelihoods, given A heard and given B "
        "heard)"
        + ("" if not use_mix else ", allowing a fitted share of one-sided pairs to be "
           "missing for other reasons (path closed, receiver off)")
        + ("" if not use_edge else ", with a first-order correction for reports at the "
           "decode threshold") + f"; {confidence:.0%} {_INTERVAL_TEXT[interval]} cluster "
        "bootstrap over "
        f"{cluster_label} ({int(n_boot)} resamples); p from the bootstrap SE")
    res[C.NOTE] = notes
    return (res, reps) if return_replicates else res


# --- labels and verdicts ----------------------------------------------------------------------
#: fewest clusters (receivers; transmitters in the receive design) that must carry a group
#: before a verdict names a better antenna (with fewer the cluster bootstrap has too few
#: units to resample: its interval is too narrow, see :mod:`spotkit.stats.bootstrap`)
MIN_CLUSTERS = 5
#: largest share of bootstrap resamples without an estimate for which a verdict is given
#: (failures are left out of the interval, which biases it when they depend on the data)
MAX_FAILED_SHARE = 0.10
#: p-values below this are printed as "< 1e-16": double precision (machine epsilon
#: 2.2e-16) cannot tell them from 0 when they come as 1 - (something close to 1)
P_FLOOR = 1e-16

_FAILED = re.compile(r"(\d+(?:\.\d+)?)\s*% of the bootstrap resamples had no estimate")


def _fmt_num(x: float) -> str:
    return f"{x:,.0f}" if float(x).is_integer() else f"{x:,.1f}"


def _p_value(replicates, estimate: float, systematic: float, interval: str) -> float:
    """Two-sided p for "true B - A = 0" that agrees with the reported interval.

    The interval is the bootstrap interval of ``interval``'s method widened by the
    systematic part on each side; ``p < 1 - confidence`` exactly when it leaves out 0.
    Percentile: :func:`spotkit.stats.percentile_p_value` with the systematic part as its
    margin; basic: the same on the replicates reflected about the estimate; normal: the
    normal-theory p of the estimate moved towards 0 by the systematic part.
    """
    r = np.asarray(replicates, dtype=float)
    if interval == "normal":
        shrunk = np.sign(estimate) * max(abs(estimate) - systematic, 0.0)
        return _nan_if_none(stats.bootstrap_p_value(r - estimate + shrunk, shrunk))
    if interval == "basic":
        r = 2.0 * estimate - r
    return _nan_if_none(stats.percentile_p_value(r, margin=systematic))


def format_p_value(p, digits: int = 3) -> str:
    """A p-value as text: ``digits`` significant figures, ``"< 1e-16"`` below
    :data:`P_FLOOR` (never ``"0"``), ``""`` when missing.

    Examples
    --------
    >>> format_p_value(0.04567), format_p_value(3.2e-9), format_p_value(0.0)
    ('0.0457', '3.2e-09', '< 1e-16')
    >>> format_p_value(float("nan"))
    ''
    """
    if p is None or pd.isna(p):
        return ""
    p = float(p)
    return f"< {P_FLOOR:.0e}" if p < P_FLOOR else f"{p:.{digits}g}"


def _failed_share(row) -> float:
    """Share of the bootstrap resamples without an estimate, from the row's note (0 when
    the note does not mention any)."""
    note = row.get(C.NOTE, "") or ""
    m = _FAILED.search(str(note))
    return float(m.group(1)) / 100 if m else 0.0


def group_label(row, hour_basis: str = "utc", *, sentence: bool = False) -> str:
    """Readable description of one group, e.g. ``"on 10 m, beyond 3,000 km"``.

    ``sentence=True`` words it for the middle of a sentence: a distance range gets "at"
    (``"B is 1.0 dB better than A at 1,000-3,000 km"``).

    Examples
    --------
    >>> group_label({"band": "10m", "distance_min_km": 3000.0, "distance_max_km": 6000.0})
    'on 10 m, 3,000-6,000 km'
    >>> group_label({"distance_min_km": 1000.0, "distance_max_km": 3000.0}, sentence=True)
    'at 1,000-3,000 km'
    >>> group_label({"distance_min_km": 6000.0, "distance_max_km": 20100.0,
    ...              "bearing_min_deg": 270.0, "bearing_max_deg": 315.0})
    'beyond 6,000 km, towards 270-315 deg'
    >>> group_label({"hour": 22, "square_locator": "JN58"}, hour_basis="local")
    'at 22-23 h local time, in square JN58'
    >>> group_label({})
    'overall'
    """
    parts = []
    get = row.get if hasattr(row, "get") else (lambda k, d=None: d)
    band = get(C.BAND)
    if band is not None and not pd.isna(band):
        b = str(band)
        parts.append(f"on {b[:-1]} m" if b.endswith("m") and not b.endswith("cm") else
                     f"on {b}")
    dmin, dmax = get(C.DISTANCE_MIN), get(C.DISTANCE_MAX)
    if dmin is not None and not pd.isna(dmin):
        if dmin <= 0:
            parts.append(f"within {_fmt_num(dmax)} km")
        elif dmax >= 20000:
            parts.append(f"beyond {_fmt_num(dmin)} km")
        else:
            parts.append(("at " if sentence else "")
                         + f"{_fmt_num(dmin)}-{_fmt_num(dmax)} km")
    bmin, bmax = get(C.BEARING_MIN), get(C.BEARING_MAX)
    if bmin is not None and not pd.isna(bmin):
        parts.append(f"towards {_fmt_num(bmin)}-{_fmt_num(bmax)} deg")
    emin, emax = get(C.ELEVATION_MIN), get(C.ELEVATION_MAX)
    if emin is not None and not pd.isna(emin):
        parts.append(f"at {_fmt_num(emin)}-{_fmt_num(emax)} deg elevation")
    h = get(C.HOUR)
    if h is not None and not pd.isna(h):
        parts.append(f"at {int(h):02d}-{(int(h) + 1) % 24:02d} h "
                     + ("UTC" if hour_basis == "utc" else "local time"))
    light = get(C.PATH_LIGHT)
    if light is not None and not pd.isna(light):
        parts.append(f"on {light} paths")
    for col, word in ((C.FIELD, "field"), (C.SQUARE, "square")):
        v = get(col)
        if v is not None and not pd.isna(v):
            parts.append(f"in {word} {v}")
    far = get(C.FAR_CALL)
    if far is not None and not pd.isna(far):
        parts.append(f"at {far}")
    return ", ".join(parts) if parts else "overall"


def too_little_data(row, cluster_label: str = "receivers") -> str:
    """Why a result row's numbers cannot carry a verdict; ``""`` when they can.

    Reasons: fewer than :data:`MIN_CLUSTERS` clusters (when the row has a ``clusters``
    count), more than :data:`MAX_FAILED_SHARE` of the bootstrap resamples without an
    estimate (as the row's note reports them), or an estimate outside its own interval.

    Examples
    --------
    >>> too_little_data({"clusters": 3, "note": ""})
    'only 3 receivers (at least 5 needed)'
    >>> too_little_data({"clusters": 40, "note": "12% of the bootstrap resamples had no "
    ...                  "estimate: interval unreliable"})
    '12% of the bootstrap resamples had no estimate (at most 10% allowed)'
    >>> too_little_data({"clusters": 40, "b_minus_a_db": 1.0, "ci_low_db": 0.2,
    ...                  "ci_high_db": 1.9, "note": ""})
    ''
    """
    why = []
    get = row.get
    n_cl = get(C.CLUSTERS)
    if n_cl is not None and not pd.isna(n_cl) and int(n_cl) < MIN_CLUSTERS:
        one = cluster_label[:-1] if cluster_label.endswith("s") else cluster_label
        why.append(f"only {int(n_cl)} {one if int(n_cl) == 1 else cluster_label} "
                   f"(at least {MIN_CLUSTERS} needed)")
    bad = _failed_share(row)
    if bad > MAX_FAILED_SHARE:
        why.append(f"{bad:.0%} of the bootstrap resamples had no estimate (at most "
                   f"{MAX_FAILED_SHARE:.0%} allowed)")
    est, lo, hi = (float(get(c, np.nan)) for c in (C.B_MINUS_A, C.CI_LOW, C.CI_HIGH))
    if not why and (lo > 0 > est or hi < 0 < est):
        why.append("the estimate lies outside its own interval")
    return " and ".join(why)


def verdict(row, confidence: float = 0.95, hour_basis: str = "utc",
            design: str = "", cluster_label: str | None = None,
            labels: tuple[str, str] | None = None) -> str:
    """One plain-language sentence about one result row.

    A better antenna is named only when the interval excludes 0, at least
    :data:`MIN_CLUSTERS` clusters (receivers; transmitters in the receive design) carry the
    row (when it has a ``clusters`` count) and no more than :data:`MAX_FAILED_SHARE` of the
    bootstrap resamples failed (as its note reports); otherwise the sentence says "too
    little data" and why. An A-favoured verdict gives its interval as A minus B.

    Parameters
    ----------
    row : dict-like
        One row of a comparison's results (:data:`RESULT_COLUMNS` and group keys).
    confidence : float
        Coverage of the row's interval.
    hour_basis : {"utc", "local"}
        How an hour group is worded.
    design : str
        The comparison's design ("before-after" words it as reports of a weaker design).
    cluster_label : str, optional
        What the clusters are, plural ("receivers"); default "transmitters" in the receive
        design, else "receivers".
    labels : (str, str), optional
        Names of A and B ("vertical", "dipole"): the sentence names them, each followed by
        its letter ("dipole (B) is 2.4 dB better than vertical (A)"). Default: the letters.

    Examples
    --------
    >>> row = {"band": "20m", "b_minus_a_db": 2.4, "ci_low_db": 1.1, "ci_high_db": 3.6,
    ...        "pairs": 1234, "clusters": 40, "note": ""}
    >>> verdict(row)
    'B is 2.4 dB better than A on 20 m (95 % CI 1.1 to 3.6 dB, 1,234 pairs)'
    >>> verdict(dict(row, ci_low_db=-0.4))
    'no difference shown on 20 m (B minus A +2.4 dB, 95 % CI -0.4 to 3.6 dB, 1,234 pairs)'
    >>> verdict(dict(row, b_minus_a_db=-2.4, ci_low_db=-3.6, ci_high_db=-1.1))
    'A is 2.4 dB better than B on 20 m (95 % CI 1.1 to 3.6 dB, 1,234 pairs)'
    >>> verdict(dict(row, clusters=1))  # doctest: +NORMALIZE_WHITESPACE
    'too little data on 20 m to name a better antenna: only 1 receiver (at least 5
    needed); B minus A +2.4 dB from 1,234 pairs'
    >>> verdict(row, labels=("vertical", "dipole"))
    'dipole (B) is 2.4 dB better than vertical (A) on 20 m (95 % CI 1.1 to 3.6 dB, 1,234 pairs)'
    """
    if cluster_label is None:
        cluster_label = "transmitters" if design == "receive" else "receivers"
    if labels is None:
        name_a, name_b, diff = "A", "B", "B minus A"
    else:
        # a label that is its own letter (schedule labels A, B) is not repeated
        name_a, name_b = (lab if lab == let else f"{lab} ({let})"
                          for lab, let in zip(labels, "AB", strict=True))
        diff = f"{labels[1]} minus {labels[0]}"
    where = group_label(row, hour_basis, sentence=True)
    where = "" if where == "overall" else f" {where}"
    pct = f"{confidence * 100:g} %"
    pairs = int(row[C.PAIRS])
    what = "reports" if design == "before-after" else "pairs"
    est, lo, hi = row[C.B_MINUS_A], row[C.CI_LOW], row[C.CI_HIGH]
    note = str(row.get(C.NOTE, "") or "")
    tail = f" ({WEAKER_DESIGN})" if design == "before-after" else ""
    if pd.isna(est):
        why = re.sub(r"^no estimate(: |$)|: no estimate$", "", note) or "no estimate"
        return f"no estimate{where}: {why}{tail}"
    if design == "before-after":  # its note starts with the days and what the interval holds
        note = note.split("; ")[0]
    if pd.isna(lo) or pd.isna(hi):
        return (f"{diff} is {est:+.1f} dB{where} but without an interval ({note}, "
                f"{pairs:,} {what}){tail}")
    why = too_little_data(row, cluster_label)
    if why:
        return (f"too little data{where} to name a better antenna: {why}; {diff} "
                f"{est:+.1f} dB from {pairs:,} {what}{tail}")
    extra = f"; {note}" if note else ""
    if lo <= 0 <= hi:
        ci = f"{pct} CI {lo:.1f} to {hi:.1f} dB, {pairs:,} {what}"
        return f"no difference shown{where} ({diff} {est:+.1f} dB, {ci}{extra}){tail}"
    if est > 0:
        better, worse, size, ci_lo, ci_hi = name_b, name_a, est, lo, hi
    else:  # state A's advantage and its interval as A minus B
        better, worse, size, ci_lo, ci_hi = name_a, name_b, -est, -hi, -lo
    ci = f"{pct} CI {ci_lo:.1f} to {ci_hi:.1f} dB, {pairs:,} {what}"
    return f"{better} is {size:.1f} dB better than {worse}{where} ({ci}{extra}){tail}"


# --- the result object ------------------------------------------------------------------------
def _jsonable(x):
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (np.floating, float)):
        return None if not math.isfinite(float(x)) else float(x)
    if isinstance(x, (np.bool_,)):
        return bool(x)
    if x is pd.NA or x is None:
        return None
    if isinstance(x, pd.Timestamp):
        return x.isoformat()
    return x


@dataclass
class ComparisonResult:
    """What :func:`compare_antennas` returns.

    Attributes
    ----------
    overall : dict
        Result over all pairs (keys as the columns of :data:`RESULT_COLUMNS`).
    groups : pandas.DataFrame
        One row per group: group keys and :data:`RESULT_COLUMNS`.
    pairs : pandas.DataFrame
        The pairs table (:func:`spotkit.compare.pairing.pair_spots`).
    design, a, b : str
        The design and the calls compared.
    by : tuple of str
        The group keys.
    counts : pandas.DataFrame
        The compressed pair table behind ``groups``.
    set_aside : dict
        Reports or pairs left out, by reason.
    options : dict
        The settings used (edges, widths, n_boot, seed, confidence...).
    label_a, label_b : str, optional
        Names the user gave A and B ("vertical", "dipole"); :attr:`labels` falls back to
        the calls. When given, the verdict sentences name them.
    """

    overall: dict
    groups: pd.DataFrame
    pairs: pd.DataFrame
    design: str
    a: str
    b: str
    by: tuple = ()
    counts: pd.DataFrame | None = None
    set_aside: dict = field(default_factory=dict)
    options: dict = field(default_factory=dict)
    label_a: str | None = None
    label_b: str | None = None

    @property
    def labels(self) -> tuple[str, str]:
        """Names of A and B for titles, legends and tables: the labels given, else the
        calls."""
        return (self.label_a or self.a, self.label_b or self.b)

    @property
    def named(self) -> bool:
        """Whether the user named A or B (then the verdict sentences use the names)."""
        return bool(self.label_a or self.label_b)

    def who(self, letter: str) -> str:
        """``"vertical (Q1ABC)"`` for ``"A"`` when labelled, else the call."""
        call, label = (self.a, self.label_a) if letter == "A" else (self.b, self.label_b)
        return f"{label} ({call})" if label and label != call else call

    @property
    def confidence(self) -> float:
        return float(self.options.get("confidence", 0.95))

    def to_frame(self) -> pd.DataFrame:
        """Overall row then group rows, with a readable ``C.GROUP`` label first."""
        hb = self.options.get("hour", "utc")
        over = pd.DataFrame([self.overall])
        grp = self.groups.copy()
        frame = pd.concat([over, grp], ignore_index=True) if len(grp) else over
        labels = ["overall"] + [group_label(r, hb) for r in grp.to_dict("records")]
        frame.insert(0, C.GROUP, labels)
        return frame

    def verdicts(self) -> list[str]:
        """Plain-language sentences, overall first, then one per group."""
        hb = self.options.get("hour", "utc")
        rows = [self.overall] + self.groups.to_dict("records")
        labels = self.labels if self.named else None
        return [verdict(r, self.confidence, hb, self.design, labels=labels) for r in rows]

    def to_dict(self) -> dict:
        """The result as plain Python (what :meth:`to_json` writes)."""
        def clean(d):
            return {k: _jsonable(v) for k, v in d.items()}
        return {
            "design": self.design, "a": self.a, "b": self.b,
            "label_a": self.labels[0], "label_b": self.labels[1], "by": list(self.by),
            "options": clean({k: (list(v) if isinstance(v, (tuple, list, np.ndarray))
                                  else v) for k, v in self.options.items()}),
            "set_aside": {k: int(v) for k, v in self.set_aside.items()},
            "overall": clean(self.overall),
            "groups": [clean(r) for r in self.groups.to_dict("records")],
            "verdicts": self.verdicts(),
        }

    def to_json(self, path=None, indent: int = 2) -> str:
        """JSON text of :meth:`to_dict`; also written to ``path`` when given."""
        text = json.dumps(self.to_dict(), indent=indent, default=_jsonable)
        if path is not None:
            Path(path).write_text(text + "\n", encoding="utf-8")
        return text

    def __str__(self) -> str:
        frame = self.to_frame()
        show = pd.DataFrame({"group": frame[C.GROUP]})
        fmt = lambda x: "" if pd.isna(x) else f"{x:+.2f}"  # noqa: E731
        show["B-A dB"] = frame[C.B_MINUS_A].map(fmt)
        show[f"{self.confidence:.0%} CI dB"] = [
            "" if pd.isna(lo) else f"{lo:+.2f} to {hi:+.2f}"
            for lo, hi in zip(frame[C.CI_LOW], frame[C.CI_HIGH], strict=True)]
        show["pairs"] = frame[C.PAIRS].map(lambda x: f"{int(x):,}")
        for col, name in ((C.BOTH, "both"), (C.ONLY_A, "only A"), (C.ONLY_B, "only B")):
            show[name] = frame[col].map(lambda x: "" if pd.isna(x) else f"{int(x):,}")
        show["both-heard dB"] = frame[C.BOTH_HEARD].map(fmt)
        show["p adj"] = frame[C.P_ADJUSTED].map(format_p_value)
        show["note"] = frame[C.NOTE].fillna("")
        head = (f"{self.design} comparison, A = {self.who('A')}, B = {self.who('B')}"
                f"{'; by ' + ', '.join(self.by) if self.by else ''}\n"
                f"method: {self.overall.get(C.METHOD, '')}\n")
        aside = ""
        if self.set_aside:
            aside = "\nset aside: " + "; ".join(f"{k}: {v:,}" for k, v in
                                                self.set_aside.items())
        return head + show.to_string(index=False) + aside + "\n\n" + "\n".join(
            self.verdicts())

    def __repr__(self) -> str:
        o = self.overall
        return (f"ComparisonResult(design={self.design!r}, a={self.a!r}, b={self.b!r}, "
                f"b_minus_a_db={o.get(C.B_MINUS_A)!r}, pairs={o.get(C.PAIRS)!r}, "
                f"groups={len(self.groups)})")


# --- the entry point --------------------------------------------------------------------------
def compare_antennas(spots: pd.DataFrame, design: Design, a: str, b: str | None = None, *,
                     schedule=None, change_at=None, by=(),
                     distance_edges=DEFAULT_DISTANCE_EDGES, bearing_width_deg: float = 45.0,
                     hour: HourBasis = "utc", elevation_edges=DEFAULT_ELEVATION_EDGES,
                     layer_height_km: float = 300.0, window_slots: int = 1,
                     n_boot: int = 1000, seed: int = 0, min_pairs: int = 30,
                     confidence: float = 0.95, progress: bool = False,
                     threshold_correction: ThresholdCorrection = "none",
                     require_open_path: bool = True,
                     missed_reports: MissedReports = "fit",
                     day_hours: float = DEFAULT_DAY_HOURS, model: Model = "detection",
                     tau_db: float | None = None,
                     interval: Interval = "percentile",
                     labels: tuple[str, str] | None = None,
                     tau_from: WidthFrom = "pairs", schedule_labels=None,
                     contrast: tuple[str, str] | None = None) -> ComparisonResult:
    """Compare antenna B with antenna A: B minus A [dB] overall and by group.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical enriched spot table.
    design : {"simultaneous", "alternating", "receive", "before-after"}
        How reports are assigned to A and B (:mod:`spotkit.compare.pairing`).
    a, b : str
        Calls of A and B (see :func:`spotkit.compare.pairing.pair_spots`).
    schedule : str, path or pandas.DataFrame, optional
        Alternating design's schedule.
    change_at : str or pandas.Timestamp, optional
        Before-after design's change time (UTC).
    schedule_labels : sequence of str, optional
        Alternating design: the schedule's antenna labels when it has more than A and B
        (e.g. ``("A", "B", "C")`` from ``spotkit plan schedule --antennas A,B,C``).
    contrast : (str, str), optional
        With ``schedule_labels``: the two labels compared, as A and B (default the first
        two); the other antennas' reports count as evidence of an open path only.
    by : str or sequence of str
        Group keys (:data:`spotkit.compare.grouping.GROUP_KEYS`).
    distance_edges : sequence of float
        Distance bin edges [km].
    bearing_width_deg : float
        Bearing sector width [deg]; must divide 360.
    hour : {"utc", "local"}
        Hour of day in UTC or local mean solar time at the path midpoint.
    elevation_edges : sequence of float
        Elevation bin edges [deg].
    layer_height_km : float
        Reflection height of the hop model [km].
    window_slots : int
        Alternating design: largest distance of paired slots [slots].
    n_boot : int
        Cluster bootstrap resamples.
    seed : int
        Seed of the bootstrap.
    min_pairs : int
        Smallest number of pairs for a group estimate.
    confidence : float
        Coverage of the intervals.
    progress : bool
        Show a progress bar.
    threshold_correction : {"edge", "none"}
        See :func:`estimate_groups` and :func:`edge_correction`.
    require_open_path : bool
        Alternating design: see :func:`spotkit.compare.pairing.pair_spots`.
    missed_reports : {"fit", "none"}
        See :func:`estimate_groups`.
    day_hours : float
        Before-after design: the "days" resampled for the day-to-day part of the interval
        are blocks of this many hours from 00:00 UTC [h] (24: UTC dates). A period needs
        two of them for an interval (module docstring).
    model : {"detection", "pooled", "tobit", "receiver-effects"}
        ``"detection"`` (default): receiver thresholds at the 50 % point of a fitted
        detection curve and the detection-model fit with its systematic part, moved by
        the receiver shift (the mean B-A over the pairs when B-A varies between
        receivers; :func:`estimate_groups`); ``"pooled"``: the same without the receiver
        shift; ``"tobit"``: the earlier model (lowest report as a hard threshold,
        censored normal of points), for comparison; ``"receiver-effects"``: the detection
        model with a random effect per receiver refitted in every resample (slower).
    tau_db : float, optional
        Width of the decoders' detection curve [dB]; fitted when None (``tau_from``).
    interval : {"percentile", "normal"}
        The bootstrap interval (:func:`estimate_groups`): percentile (default) or the
        estimate -+ z times the bootstrap SE.
    labels : (str, str), optional
        Names of A and B ("vertical", "dipole") for verdicts, tables, figures and the
        JSON; checked by :func:`spotkit._validate.check_labels` (non-empty, distinct, at
        most 32 characters). Default: the calls.
    tau_from : {"pairs", "reports"}
        Where a width that is not given comes from: ``"pairs"`` (default; paired designs
        with the detection model) the profile of the paired likelihood over the width,
        the receivers' 50 % points refitted at each
        (:func:`spotkit.compare.width.width_from_pairs`); ``"reports"`` the fit to the
        receivers' report histograms alone, which is too narrow when receivers have few
        reports near threshold (+0.12 dB bias with a 1 dB soft curve and A 7 dB below B,
        held-out generator; :mod:`spotkit.compare.width`).

    Returns
    -------
    ComparisonResult

    References
    ----------
    .. [1] J. Tobin, Econometrica 26(1):24-36, 1958. doi:10.2307/1907382
    .. [2] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997.
    .. [3] Y. Benjamini and Y. Hochberg, JRSS-B 57:289-300, 1995.

    Examples
    --------
    A short simulated run (2.4 hours on 20 m, 10 receivers reporting) in which B is
    exactly 3 dB better than A. With 42 pairs from 10 receivers the estimate is 0.5 dB off
    (the data chose Student t tails, ``tail_df`` 3, which follow the bulk of the
    differences at 3-5 dB) and the interval misses the truth: one of the runs in twenty
    that a 95 % interval may miss:

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.1, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> print(sim.truth)
    Truth(simultaneous, A=Q1ABC, B=Q1ABD: true B-A +3.00 dB over 42 pairs)
    >>> result = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=50)
    >>> result.verdicts()
    ['B is 3.5 dB better than A (95 % CI 3.2 to 3.9 dB, 42 pairs)']
    >>> result.overall["tail_df"], round(result.overall["systematic_db"], 3)
    (3.0, 0.002)

    By distance, with a smaller minimum of pairs per group:

    >>> result = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", n_boot=50,
    ...                           by="distance", min_pairs=10)
    >>> cols = ["group", "b_minus_a_db", "ci_low_db", "ci_high_db", "pairs"]
    >>> print(result.to_frame()[cols].round(1).to_string(index=False))
              group  b_minus_a_db  ci_low_db  ci_high_db  pairs
            overall           3.5        3.2         3.9     42
    within 1,000 km           3.7        3.2         4.5     10
     1,000-3,000 km           3.4        2.3         3.7     13
     3,000-6,000 km           3.3        2.9         5.0     11
    beyond 6,000 km           NaN        NaN         NaN      8
    >>> result.verdicts()[-1]
    'no estimate beyond 6,000 km: too few pairs (8 < 10)'
    """
    keys = parse_by(by)
    check_choice(model, MODELS, "model")
    if labels is not None:
        labels = check_labels(*labels)
    check_choice(tau_from, WIDTH_FROM, "tau_from")
    several = {}
    if schedule_labels is not None:
        several = dict(antennas=tuple(str(x).strip().upper() for x in schedule_labels))
        several["contrast"] = (tuple(str(x).strip().upper() for x in contrast)
                               if contrast is not None else several["antennas"][:2])
    pairs = pair_spots(spots, design, a, b, schedule=schedule, change_at=change_at,
                       window_slots=window_slots, require_open_path=require_open_path,
                       threshold_method="t50" if model in DETECTION_MODELS else "lowest",
                       tau_db=tau_db, **several)
    if (model in DETECTION_MODELS and tau_db is None and tau_from == "pairs"
            and design in PAIRED_DESIGNS):
        pairs, _ = width_from_pairs(spots, pairs, design, a, b)
    set_aside = dict(pairs.attrs.get("set_aside", {}))
    options = dict(distance_edges=[float(x) for x in distance_edges],
                   bearing_width_deg=float(bearing_width_deg), hour=hour,
                   elevation_edges=[float(x) for x in elevation_edges],
                   layer_height_km=float(layer_height_km), window_slots=int(window_slots),
                   n_boot=int(n_boot), seed=int(seed), min_pairs=int(min_pairs),
                   confidence=float(confidence), threshold_correction=threshold_correction,
                   missed_reports=missed_reports,
                   require_open_path=bool(require_open_path),
                   day_hours=float(day_hours), model=model,
                   tau_db=None if tau_db is None else float(tau_db), interval=interval,
                   tau_from=tau_from,
                   **({} if not several else dict(
                       schedule_labels=list(several["antennas"]),
                       contrast=list(several["contrast"]))),
                   schedule=schedule if isinstance(
                       schedule, (str, type(None))) else "table",
                   change_at=None if change_at is None else str(change_at))
    gopts = dict(distance_edges=distance_edges, bearing_width_deg=bearing_width_deg,
                 hour=hour, elevation_edges=elevation_edges, layer_height_km=layer_height_km)
    label = "transmitters" if design == "receive" else "receivers"
    clusters = sorted(pairs[C.CLUSTER].astype(str).unique())
    est = dict(n_boot=n_boot, seed=seed, confidence=confidence, min_pairs=min_pairs,
               clusters=clusters, cluster_label=label,
               threshold_correction=threshold_correction, missed_reports=missed_reports,
               model=model, detection=pairs.attrs.get("detection"), interval=interval)
    overall_counts = summarise_pairs(pairs, (), day_hours=day_hours)
    overall = estimate_groups(overall_counts, **est).iloc[0].to_dict()
    overall[C.P_ADJUSTED] = overall[C.P_VALUE]
    if keys:
        counts = summarise_pairs(pairs, keys, day_hours=day_hours, **gopts)
        for k, v in counts.attrs.get("set_aside", {}).items():
            set_aside[f"groups: {k}"] = v
        if len(counts):
            groups = estimate_groups(counts, progress=progress, **est)
        else:
            groups = pd.DataFrame(columns=group_columns(keys) + RESULT_COLUMNS)
        if "receiver" in keys:  # far-station position for maps
            pos = (pairs.groupby(C.FAR_CALL, observed=True)[[C.FAR_LOCATOR, C.FAR_LAT,
                                                             C.FAR_LON]].first())
            pos[C.FAR_LOCATOR] = pos[C.FAR_LOCATOR].astype(str)
            groups = groups.merge(pos, left_on=C.FAR_CALL, right_index=True, how="left")
    else:
        counts = overall_counts
        groups = pd.DataFrame(columns=RESULT_COLUMNS)
    return ComparisonResult(overall=overall, groups=groups.reset_index(drop=True),
                            pairs=pairs, design=design, a=str(a).upper(),
                            b=str(b if b else a).upper(), by=keys, counts=counts,
                            set_aside=set_aside, options=options,
                            label_a=labels[0] if labels else None,
                            label_b=labels[1] if labels else None)


__all__ = [
    "RESULT_COLUMNS", "THRESHOLD_CORRECTIONS", "MISSED_REPORTS", "MODELS", "DETECTION_MODELS",
    "TAIL_DFS", "TAILS",
    "INTERVALS",
    "ComparisonResult", "compare_antennas", "default_detection", "edge_correction",
    "estimate_groups", "group_label", "verdict",
    "format_p_value", "too_little_data", "MIN_CLUSTERS", "MAX_FAILED_SHARE", "P_FLOOR",
]
