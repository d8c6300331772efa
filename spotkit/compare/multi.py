"""Several antennas at once: every antenna against a reference (or all pairs), with
intervals that hold for all the comparisons together, and a ranking with its uncertainty.

Designs. Simultaneous (``k`` transmitter calls on the air in the same slots), receive
(``k`` co-located receivers) and alternating (one call switched between ``k`` antennas by
a schedule whose ``antenna`` column holds labels A, B, C, ...; ``spotkit plan schedule
--antennas A,B,C`` writes one). Each comparison ("contrast") of antennas ``x`` and ``y``
is the two-antenna comparison: :func:`spotkit.compare.pairing.pair_spots` pairs the
reports of ``x`` (as A) and ``y`` (as B) and
:func:`spotkit.compare.estimate.estimate_groups` fits ``y - x`` with the same censoring
model (detection curve, missed reports, tails, systematic part). In the alternating design
the reports of the other antennas are not paired, but count as evidence that the path
stayed open around a pair; the pairing window defaults to ``k - 1`` slots (a round robin
puts two given antennas at most ``k - 1`` slots apart).

Simultaneous intervals. Reports of one receiver (transmitter in the receive design) share
its noise floor and paths, and the contrasts share receivers, so the contrasts are
correlated. Every contrast is bootstrapped with one common list of clusters (the union
over the contrasts) and one seed, so resample ``b`` gives every contrast the same cluster
weights: the receivers are resampled once and every contrast recomputed on that resample.
:func:`spotkit.stats.simultaneous.max_t` turns these joint replicates into intervals that
cover all contrasts of the family at once with the nominal probability (max-statistic
method) and into family-wise adjusted p-values; each interval is then widened by its
contrast's systematic part, as in the two-antenna fit. The marginal (one-at-a-time)
interval is reported beside it.

Ranking. The order of the antennas is that of their estimates against the reference; two
antennas are *separated* when the simultaneous interval of their difference over the
family of all pairs excludes 0 (always computed for the ranking, also when only the
reference contrasts are reported), so "C > B > A with 95 % confidence" holds for the
whole statement at once.

Known error: each contrast inherits the two-antenna fit's known error
(:mod:`spotkit.compare.estimate`); the max-T factor from ``n_boot`` resamples is a sample
quantile (a few hundred resamples put it within a few per cent). The contrasts are fitted
separately, so ``(C - A) - (B - A)`` need not equal the fitted ``C - B`` exactly (each pair
of antennas is compared on its own pairs).

References
----------
.. [1] P. H. Westfall and S. S. Young, Resampling-Based Multiple Testing, Wiley, 1993
   (citation from memory).
.. [2] A. C. Davison and D. V. Hinkley, Bootstrap Methods and their Application, 1997,
   s. 3.8 (cluster bootstrap). doi:10.1017/CBO9780511802843
"""
from __future__ import annotations

import json
from dataclasses import dataclass, field
from itertools import combinations
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit import stats
from spotkit._validate import check_choice, check_confidence
from spotkit.compare.estimate import (
    DETECTION_MODELS,
    MissedReports,
    Model,
    estimate_groups,
    format_p_value,
)
from spotkit.compare.grouping import summarise_pairs
from spotkit.compare.pairing import pair_spots, receiver_thresholds
from spotkit.compare.width import WIDTH_FROM, WidthFrom, width_from_pairs
from spotkit.errors import NoPairsError, UsageError

MultiDesign = Literal["simultaneous", "alternating", "receive"]
#: the designs that compare several antennas at once
MULTI_DESIGNS = ("simultaneous", "alternating", "receive")

#: columns of :attr:`MultiResult.contrasts`
MULTI_COLUMNS = [C.FIRST, C.SECOND, C.CONTRAST, C.B_MINUS_A, C.CI_SIM_LOW, C.CI_SIM_HIGH,
                 C.CI_LOW, C.CI_HIGH, C.SE_BOOT, C.P_FAMILY, C.PAIRS, C.BOTH, C.ONLY_A,
                 C.ONLY_B, C.CLUSTERS, C.SYSTEMATIC, C.TAIL_DF, C.NOTE]


def _jsonable(x):
    if isinstance(x, (np.floating, float)):
        return None if not np.isfinite(x) else float(x)
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, np.bool_):
        return bool(x)
    if isinstance(x, pd.Timestamp):
        return x.isoformat()
    return x


def parse_antennas(text) -> list[str]:
    """Antennas from ``"A,B,C"`` (or a sequence): stripped, upper case, at least two, no
    repeats.

    Examples
    --------
    >>> parse_antennas(" q1abc, Q1ABD ,q1abe")
    ['Q1ABC', 'Q1ABD', 'Q1ABE']
    >>> parse_antennas("A")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: give at least two antennas, e.g. A,B,C (got 'A')
    """
    items = text.split(",") if isinstance(text, str) else list(text)
    out = [str(x).strip().upper() for x in items if str(x).strip()]
    if len(out) < 2:
        raise UsageError(f"give at least two antennas, e.g. A,B,C (got {text!r})")
    if len(set(out)) != len(out):
        raise UsageError(f"an antenna is listed twice: {', '.join(out)}")
    return out


def _rank(labels, ref_est: dict, sep: dict, confidence: float):
    """Order by estimate against the reference; a sentence on what is separated."""
    have = [x for x in labels if np.isfinite(ref_est.get(x, np.nan))]
    order = sorted(have, key=lambda x: -ref_est[x])
    missing = [x for x in labels if x not in have]
    if len(order) < 2:
        return order, "no ranking: fewer than two antennas have an estimate"
    chain = order[0]
    apart = []
    for u, v in zip(order[:-1], order[1:], strict=True):
        s = sep.get((u, v))
        chain += " > " + v if s else " ~ " + v
        if not s:
            apart.append(f"{u} and {v} not separated")
    far = [f"{u} > {v}" for i, u in enumerate(order) for v in order[i + 2:] if sep.get((u, v))
           and not all(sep.get((order[j], order[j + 1])) for j in range(i, order.index(v)))]
    text = f"{chain} with {confidence * 100:g} % simultaneous confidence"
    if apart:
        text += " (" + "; ".join(apart) + ")"
    if far:
        text += "; separated further apart: " + ", ".join(far)
    if missing:
        text += "; not ranked (no estimate): " + ", ".join(missing)
    return order, text


@dataclass
class MultiResult:
    """What :func:`compare_several` returns.

    Attributes
    ----------
    design : str
    antennas : list of str
        Calls (simultaneous, receive) or schedule labels (alternating), in the order given.
    reference : str
    contrasts : pandas.DataFrame
        The reported family (:data:`MULTI_COLUMNS`): ``C.SECOND`` minus ``C.FIRST`` [dB]
        with its simultaneous interval ``C.CI_SIM_LOW`` / ``C.CI_SIM_HIGH`` and its
        marginal one ``C.CI_LOW`` / ``C.CI_HIGH`` [dB].
    all_pairs : pandas.DataFrame
        Every pair, simultaneous over all pairs (what the ranking uses).
    order : list of str
        Best first, by estimate against the reference.
    ranking : str
        The ranking sentence.
    set_aside : dict
        Per contrast, reports or pairs set aside by reason.
    options : dict
    """

    design: str
    antennas: list
    reference: str
    contrasts: pd.DataFrame
    all_pairs: pd.DataFrame
    order: list
    ranking: str
    set_aside: dict = field(default_factory=dict)
    options: dict = field(default_factory=dict)

    def to_frame(self) -> pd.DataFrame:
        """The reported contrasts, one row each."""
        return self.contrasts.copy()

    def to_dict(self) -> dict:
        """Plain Python (what :meth:`to_json` writes)."""
        def rows(df):
            return [{k: _jsonable(v) for k, v in r.items()} for r in df.to_dict("records")]
        return {"design": self.design, "antennas": list(self.antennas),
                "reference": self.reference,
                "options": {k: _jsonable(v) for k, v in self.options.items()},
                "contrasts": rows(self.contrasts), "all_pairs": rows(self.all_pairs),
                "order": list(self.order), "ranking": self.ranking,
                "set_aside": {k: {r: int(n) for r, n in v.items()}
                              for k, v in self.set_aside.items()}}

    def to_json(self, path=None, indent: int = 2) -> str:
        """JSON text of :meth:`to_dict`; also written to ``path`` when given."""
        text = json.dumps(self.to_dict(), indent=indent, default=_jsonable)
        if path is not None:
            Path(path).write_text(text + "\n", encoding="utf-8")
        return text

    def _p(self, row) -> str:
        """The family-wise p; 0 (no resample as extreme) prints as ``< 1 / n_boot``."""
        p = row[C.P_FAMILY]
        if np.isfinite(p) and p == 0:
            return f"< {1 / int(self.options.get('n_boot', 1000)):.2g}"
        return format_p_value(p)

    def __str__(self) -> str:
        conf = float(self.options.get("confidence", 0.95))
        lines = [f"{self.design} comparison of {len(self.antennas)} antennas "
                 f"({', '.join(self.antennas)}), reference {self.reference}",
                 f"intervals: {conf * 100:g} % simultaneous over the {len(self.contrasts)} "
                 f"contrast{'s' if len(self.contrasts) != 1 else ''} (max-T cluster "
                 "bootstrap, widened by the systematic part)"]
        for r in self.contrasts.to_dict("records"):
            est = r[C.B_MINUS_A]
            if not np.isfinite(est):
                lines.append(f"  {r[C.SECOND]} - {r[C.FIRST]}: no estimate ({r[C.NOTE]})")
                continue
            lines.append(f"  {r[C.SECOND]} - {r[C.FIRST]}: {est:+.2f} dB "
                         f"({r[C.CI_SIM_LOW]:+.2f} to {r[C.CI_SIM_HIGH]:+.2f}; "
                         f"{int(r[C.PAIRS]):,} pairs, family-wise p {self._p(r)})")
        lines.append("ranking: " + self.ranking)
        return "\n".join(lines)


def compare_several(spots: pd.DataFrame, design: MultiDesign, antennas, *,
                    call: str | None = None, reference: str | None = None,
                    all_pairs: bool = False, schedule=None, window_slots: int | None = None,
                    n_boot: int = 400, seed: int = 0, confidence: float = 0.95,
                    min_pairs: int = 30, model: Model = "detection",
                    tau_db: float | None = None, require_open_path: bool = True,
                    missed_reports: MissedReports = "fit",
                    tau_from: WidthFrom = "pairs") -> MultiResult:
    """Compare ``k >= 2`` antennas: each against a reference (or all pairs), simultaneous
    intervals, and a ranking.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical enriched spot table.
    design : {"simultaneous", "alternating", "receive"}
        The experiment design (module docstring).
    antennas : str or sequence of str
        ``"A,B,C"`` or a list: transmitter calls (simultaneous), receiver calls (receive)
        or the schedule's antenna labels (alternating).
    call : str, optional
        Alternating design: the one transmitter call.
    reference : str, optional
        The antenna the others are compared with (default: the first).
    all_pairs : bool
        Report every pair (simultaneous over all pairs) instead of the contrasts against
        the reference.
    schedule : str, path or pandas.DataFrame, optional
        Alternating design: the schedule (labels as in ``antennas``) or "even-odd" (the
        round robin in the order of ``antennas``).
    window_slots : int, optional
        Alternating design: the largest distance of paired slots [slots]; default
        ``k - 1``.
    n_boot : int
        Bootstrap resamples (shared by all contrasts).
    seed : int
        Seed of the resampling.
    confidence : float
        Simultaneous coverage of the family of intervals.
    min_pairs : int
        Contrasts with fewer pairs get no estimate.
    model, tau_db, require_open_path, missed_reports, tau_from
        As in :func:`spotkit.compare.estimate.compare_antennas`; the detection width is
        chosen for each contrast from its own pairs (as in the two-antenna fit).

    Returns
    -------
    MultiResult

    References
    ----------
    .. [1] P. H. Westfall and S. S. Young, Resampling-Based Multiple Testing, 1993.

    Examples
    --------
    Three transmitter calls on the air together; B 2 dB and C 6 dB above A:

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.25, n_receivers=40, bands=("20m",), difference_db=2.0,
    ...                      more_antennas=[6.0], seed=3)
    >>> sim.params["calls"]
    ['Q1ABC', 'Q1ABD', 'Q1ABE']
    >>> res = compare_several(sim.spots, "simultaneous", sim.params["calls"], n_boot=100)
    >>> print(res.contrasts[["first", "second", "b_minus_a_db"]].round(0).to_string(
    ...     index=False))
    first second  b_minus_a_db
    Q1ABC  Q1ABD           2.0
    Q1ABC  Q1ABE           6.0
    >>> res.ranking
    'Q1ABE > Q1ABD > Q1ABC with 95 % simultaneous confidence'
    """
    check_choice(design, MULTI_DESIGNS, "design")
    check_choice(tau_from, WIDTH_FROM, "tau_from")
    check_confidence(confidence)
    labels = parse_antennas(antennas)
    ref = labels[0] if reference is None else str(reference).strip().upper()
    if ref not in labels:
        raise UsageError(f"reference {reference!r} is not one of the antennas "
                         f"{', '.join(labels)}")
    if int(n_boot) < 20:
        raise UsageError(f"n_boot must be at least 20 for simultaneous intervals, got {n_boot}")
    if design == "alternating":
        if not call:
            raise UsageError("the alternating design needs the transmitter call (call=...)")
        if schedule is None:
            raise UsageError("the alternating design needs a schedule with the antennas' "
                             "labels (spotkit plan schedule --antennas ...)")
        window = len(labels) - 1 if window_slots is None else int(window_slots)
    # every pair, in the order given, first minus... second minus first; the reference first
    pairs_list = []
    for u, v in combinations(labels, 2):
        if v == ref:
            u, v = v, u
        pairs_list.append((u, v))
    pairs_list.sort(key=lambda p: (p[0] != ref, labels.index(p[0]), labels.index(p[1])))
    paired, set_aside = {}, {}
    method = "t50" if model in DETECTION_MODELS else "lowest"
    thr = receiver_thresholds(spots, method=method, tau_db=tau_db)  # once for all contrasts
    for u, v in pairs_list:
        kw = dict(require_open_path=require_open_path, tau_db=tau_db,
                  threshold_method=method, thresholds=thr)
        try:
            if design == "alternating":
                p = pair_spots(spots, "alternating", call, call, schedule=schedule,
                               window_slots=window, antennas=labels, contrast=(u, v), **kw)
            else:
                p = pair_spots(spots, design, u, v, **kw)
        except NoPairsError:
            p = None
        if (p is not None and len(p) and model in DETECTION_MODELS and tau_db is None
                and tau_from == "pairs"):
            owners = (call, call) if design == "alternating" else (u, v)
            p, _ = width_from_pairs(spots, p, design, *owners)
        paired[(u, v)] = p
        if p is not None:
            set_aside[f"{v} - {u}"] = dict(p.attrs.get("set_aside", {}))
    clusters = sorted(set().union(*[set(p[C.CLUSTER].astype(str).unique())
                                    for p in paired.values() if p is not None and len(p)]))
    if not clusters:
        raise NoPairsError(f"no pairs for any of the antennas {', '.join(labels)}")
    label = "transmitters" if design == "receive" else "receivers"
    rows, reps = [], []
    for (u, v), p in paired.items():
        row = {C.FIRST: u, C.SECOND: v, C.CONTRAST: "reference" if u == ref else "pair"}
        r = np.full(int(n_boot), np.nan)
        if p is not None and len(p):
            res, rr = estimate_groups(summarise_pairs(p, ()), n_boot=n_boot, seed=seed,
                                      confidence=confidence, min_pairs=min_pairs,
                                      clusters=clusters, cluster_label=label,
                                      missed_reports=missed_reports, model=model,
                                      detection=p.attrs.get("detection"),
                                      return_replicates=True)
            row.update(res.iloc[0].to_dict())
            r = rr[0]
        else:
            row.update({C.B_MINUS_A: np.nan, C.PAIRS: 0, C.NOTE: "no pairs"})
        rows.append(row)
        reps.append(r)
    table = pd.DataFrame(rows)
    reps = np.column_stack(reps)

    def family(sel):
        sub = table[sel].reset_index(drop=True)
        mt = stats.max_t(sub[C.B_MINUS_A].to_numpy(float), reps[:, np.flatnonzero(sel)],
                         confidence, systematic=sub[C.SYSTEMATIC].to_numpy(float))
        sub[C.CI_SIM_LOW], sub[C.CI_SIM_HIGH] = mt["low"], mt["high"]
        sub[C.SE_BOOT], sub[C.P_FAMILY] = mt["se"], mt["p_adjusted"]
        if mt["failed_share"] > 0.05:
            sub[C.NOTE] = (sub[C.NOTE].fillna("").astype(str) + f"; {mt['failed_share']:.0%}"
                           " of the resamples lacked some contrast: intervals unreliable"
                           ).str.lstrip("; ")
        for col in MULTI_COLUMNS:
            if col not in sub:
                sub[col] = np.nan
        return sub[MULTI_COLUMNS], mt["quantile"]

    ref_sel = (table[C.CONTRAST] == "reference").to_numpy()
    every, q_all = family(np.ones(len(table), bool))
    shown, q_shown = (every, q_all) if all_pairs else family(ref_sel)
    ref_est = {ref: 0.0}
    for r in table[ref_sel].to_dict("records"):
        ref_est[r[C.SECOND]] = r[C.B_MINUS_A]
    sep = {}
    for r in every.to_dict("records"):
        lo, hi = r[C.CI_SIM_LOW], r[C.CI_SIM_HIGH]
        u, v = r[C.FIRST], r[C.SECOND]
        sep[(v, u)] = bool(np.isfinite(lo) and lo > 0)  # v - u > 0: v above u
        sep[(u, v)] = bool(np.isfinite(hi) and hi < 0)
    order, text = _rank(labels, ref_est, sep, confidence)
    options = dict(n_boot=int(n_boot), seed=int(seed), confidence=float(confidence),
                   min_pairs=int(min_pairs), model=model, missed_reports=missed_reports,
                   all_pairs=bool(all_pairs), max_t_factor=float(q_shown),
                   max_t_factor_all_pairs=float(q_all), call=call,
                   window_slots=None if design != "alternating" else int(window),
                   schedule=schedule if isinstance(schedule, (str, type(None))) else "table")
    return MultiResult(design=design, antennas=labels, reference=ref, contrasts=shown,
                       all_pairs=every, order=order, ranking=text, set_aside=set_aside,
                       options=options)


__all__ = ["MULTI_DESIGNS", "MULTI_COLUMNS", "MultiResult", "compare_several",
           "parse_antennas"]
