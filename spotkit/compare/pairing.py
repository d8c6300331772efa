"""A/B experiment designs -> paired reports with censoring limits.

A comparison of two antennas A and B rests on *pairs*: two reports that share everything
but the antenna. Every design below builds one row per pair in which at least one antenna
was heard; SNRs are normalised to 1 W (``units.snr_per_watt`` with the power each report
states), so A and B may run at different powers.

``"simultaneous"``
    Two transmitter calls (A and B) on the air in the same slot and band. A pair is one
    receiver in one slot and band; the cluster (bootstrap unit) is the receiver.
``"alternating"``
    One transmitter call switched between antennas by a schedule (``"even-odd"``: A in the
    slots whose index since 00:00 UTC is even; ``"odd-even"``; ``"every-N"``: blocks of N
    slots since 00:00 UTC, A in the even blocks; or a table / CSV of ``start, end, antenna``
    [, ``band``] intervals). On each band the on-air A slots are matched one to one with
    on-air B slots no more than ``window_slots`` slots away (first come, first matched); a
    pair is one receiver's reports in a matched (A slot, B slot). Cluster: the receiver.
    By default a pair is kept only when the receiver also reported the call in the slots
    just before and after it (the path stayed open); in simulation this halves the bias
    that paths closing between the two slots cause when A and B run at different powers.
    The rest is absorbed by the missed-report mixture of :mod:`spotkit.compare.estimate`.
``"receive"``
    Two co-located receivers (rx calls A and B) hearing the same transmitters. A pair is one
    transmitter in one slot and band; the cluster is the transmitter.
``"before-after"``
    One transmitter call whose antenna changed at ``change_at``. Each report of the target
    is referred to a control - the mean per-W SNR of the *other* stations the same receiver
    heard on the same band in the same slot - and the relative SNR before (kind
    ``"before"``) is compared with after (``"after"``). Where a receiver heard a control in
    a slot and band in which the target was on the air (someone heard it there) but did not
    hear the target, the row is censored: the relative SNR is below
    ``threshold - (power - 30) - control`` (``LIMIT_A`` before, ``LIMIT_B`` after; kinds
    ``"before_below"`` / ``"after_below"`` in the compressed table). Only receivers that
    heard the target on that band at some time get such rows (the path geometry comes from
    their reports). The compressed table (:func:`summarise_pairs`) keeps the day block of
    each observation, so that the interval can resample days as well as receivers. This
    design is weaker than the others: propagation, the control stations and the receivers
    all change between the periods.

Censoring. A missing report is "not heard" only when that antenna was on the air in that
slot and band (some receiver heard it there; alternating: the schedule says so too).
Otherwise the pair is set aside with a reason (counts in ``pairs.attrs["set_aside"]``).
A receiver's decode threshold is the 50 % point ``t50`` of its detection curve
``P(decoded | s) = Phi((s - t50) / tau)``, fitted to the low end of its report histogram
(:func:`receiver_thresholds`, :mod:`spotkit.stats.detection`); the limit is
``LIMIT = t50 - (power - 30)`` [dB per W]. A one-sided pair's bound is therefore soft: the
censored fit widens it by ``tau`` (:func:`spotkit.stats.censored.interval_censored_mle`).
The detection model (``tau``, whether reports are whole dB, and the plausible
alternatives that make the systematic part of the interval) travels with the pairs in
``pairs.attrs["detection"]``. ``threshold_method="lowest"`` gives the earlier model, the
lowest report of each receiver as a hard threshold (about ``2 tau`` below the 50 %
point: it favours the antenna more often heard alone). Receivers with fewer than
``min_receiver_reports`` reports near their threshold take a typical threshold
(:func:`receiver_thresholds`).

Known error: the model assumes the two antennas see the same propagation within a pair;
in the alternating design the path changes between neighbouring slots (2-4 minutes), which
adds spread but no bias when the schedule is balanced.
"""
from __future__ import annotations

from collections import deque
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_choice, check_time
from spotkit.compare.grouping import _DAY_NS, _SLOT_NS, _ns, _to_utc
from spotkit.errors import InputError, NoPairsError, SpotkitWarning, UsageError
from spotkit.stats.detection import ROUNDINGS, Rounding, fit_tau, fit_thresholds
from spotkit.units import REFERENCE_POWER_DBM, snr_per_watt

Design = Literal["simultaneous", "alternating", "receive", "before-after"]
DESIGNS = ("simultaneous", "alternating", "receive", "before-after")

#: compressed pair table, before/after design: KIND of an observation where the target was
#: on the air but not heard (the glossary's values, kept here for older imports)
PERIOD_BOUND_KINDS = C.PERIOD_BOUND_KINDS

_NEEDED = [C.SLOT, C.TX_CALL, C.TX_LOCATOR, C.RX_CALL, C.RX_LOCATOR, C.BAND, C.SNR, C.POWER,
           C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.DISTANCE, C.BEARING, C.REVERSE_BEARING]

#: columns of the pairs table, in order (SLOT_B only in the alternating design, KIND only
#: in the before/after design)
PAIR_COLUMNS = [C.CLUSTER, C.BAND, C.SLOT, C.FAR_CALL, C.FAR_LOCATOR, C.FAR_LAT, C.FAR_LON,
                C.TX_LOCATOR, C.RX_LOCATOR, C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON,
                C.DISTANCE, C.BEARING, C.SNR_A, C.SNR_B, C.LIMIT_A, C.LIMIT_B, C.HEARD_A,
                C.HEARD_B]


# --- helpers -------------------------------------------------------------------------------
def _check_design(design: str) -> str:
    return check_choice(design, DESIGNS, "design")


def _as_category(s: pd.Series) -> pd.Series:
    return s if isinstance(s.dtype, pd.CategoricalDtype) else s.astype("category")


def _validate(spots: pd.DataFrame) -> pd.DataFrame:
    if not isinstance(spots, pd.DataFrame):
        raise UsageError("spots must be a pandas DataFrame (the canonical spot table)")
    missing = [c for c in _NEEDED if c not in spots.columns]
    if missing:
        raise InputError(
            "the spot table lacks column(s) " + ", ".join(missing)
            + " - read it with spotkit.io.ingest (it adds positions, distance and bearings)")
    if len(spots) == 0:
        raise NoPairsError("the spot table is empty: nothing to compare")
    return spots


_CODED = (C.TX_CALL, C.RX_CALL, C.TX_LOCATOR, C.RX_LOCATOR, C.BAND)


def _encode(spots: pd.DataFrame):
    """Working copy with the text columns replaced by integer codes, and their categories."""
    data, cats = {}, {}
    for col in _NEEDED:
        if col in _CODED:
            s = _as_category(spots[col].astype(str) if not isinstance(
                spots[col].dtype, pd.CategoricalDtype) else spots[col])
            cats[col] = s.cat.categories
            data[col] = s.cat.codes.to_numpy(dtype=np.int64)
        elif col == C.SLOT:
            data[col] = spots[col]
        else:
            data[col] = spots[col].to_numpy(dtype=float)
    return pd.DataFrame(data, copy=False), cats


def _calls_present(codes: np.ndarray, categories, limit: int = 15) -> str:
    n = np.bincount(codes[codes >= 0], minlength=len(categories))
    counts = pd.Series(n, index=np.asarray(categories, dtype=object))
    counts = counts[counts > 0].sort_values(ascending=False, kind="stable")
    shown = ", ".join(f"{k} ({v})" for k, v in counts.head(limit).items())
    more = f" and {len(counts) - limit} more" if len(counts) > limit else ""
    return shown + more


def _check_call(work: pd.DataFrame, cats: dict, col: str, call: str, role: str):
    """The call (upper case) and its integer code in ``col``; InputError if absent."""
    call = str(call).strip().upper()
    codes = work[col].to_numpy()
    code = int(cats[col].get_indexer([call])[0])
    if code < 0 or not (codes == code).any():
        what = "receiver" if col == C.RX_CALL else "transmitter"
        raise InputError(
            f"{role} call {call!r} is not a {what} call in the data; {what} calls present "
            f"(reports): {_calls_present(codes, cats[col])}")
    return call, code


def _thr_by_code(thr: pd.Series, cats: dict) -> np.ndarray:
    return thr.reindex(pd.Index(np.asarray(cats[C.RX_CALL], dtype=object))).to_numpy(
        dtype=float)


ThresholdMethod = Literal["t50", "lowest"]
THRESHOLD_METHODS = ("t50", "lowest")
#: plausible detection models around the fitted one, for the systematic part of the
#: interval: the curve width times these factors (the pooled fit recovers it within
#: about 15 % by simulation; a width that is set, not fitted, gets TAU_FACTORS_SET) ...
TAU_FACTORS = (0.75, 1.25)
TAU_FACTORS_SET = (0.5, 1.5)
#: ... and the 50 % point moved by this much either way [dB], the known error of its fit
#: (:mod:`spotkit.stats.detection`, by simulation)
T50_ERROR_DB = 0.25
_BELOW, _WINDOW = 3, 7


def _report_histograms(spots: pd.DataFrame):
    """Receiver calls, lowest whole-dB report, window histograms and report counts."""
    snr = spots[C.SNR].to_numpy(dtype=float)
    rx = spots[C.RX_CALL]
    codes, calls = pd.factorize(rx.astype(str) if not isinstance(
        rx.dtype, pd.CategoricalDtype) else rx.astype(str), sort=True)
    ok = np.isfinite(snr) & (codes >= 0)
    codes, v = codes[ok], np.floor(snr[ok] + 0.5)
    n_rx = len(calls)
    lowest = np.full(n_rx, np.inf)
    np.minimum.at(lowest, codes, v)
    j = (v - lowest[codes]).astype(np.int64) + _BELOW
    width = _BELOW + _WINDOW + 1
    inw = j < width
    hist = np.bincount(codes[inw] * width + j[inw], minlength=n_rx * width).reshape(
        n_rx, width).astype(float)
    count = np.bincount(codes, minlength=n_rx)
    return pd.Index(calls, name=C.RX_CALL), lowest, hist, count


#: reports are taken as whole dB when at least this share of them is (within 1e-6 dB)
WHOLE_DB_SHARE = 0.99


def whole_db_counts(snr) -> np.ndarray:
    """``[reports within 1e-6 dB of a whole dB, finite reports]`` of SNRs [dB]: mergeable
    (partitions' counts add up), so that :func:`is_whole_db` of the sum decides for the
    whole table (the Dask path, :mod:`spotkit.distributed`).

    Examples
    --------
    >>> whole_db_counts([-12.0, -20.0, -7.5, float("nan")]).tolist()
    [2, 3]
    """
    snr = np.asarray(snr, dtype=float)
    snr = snr[np.isfinite(snr)]
    return np.array([int(np.sum(np.abs(snr - np.round(snr)) < 1e-6)), snr.size],
                    dtype=np.int64)


def is_whole_db(counts) -> bool:
    """Whether reports are whole dB, from :func:`whole_db_counts`: at least
    :data:`WHOLE_DB_SHARE` of them.

    Examples
    --------
    >>> is_whole_db([99, 100]), is_whole_db([98, 100]), is_whole_db([0, 0])
    (True, False, False)
    """
    n_whole, n = (int(x) for x in counts)
    return n > 0 and n_whole >= WHOLE_DB_SHARE * n


def _t50_fitter(spots: pd.DataFrame, min_reports: int = 20, whole_db: bool | None = None):
    """What :func:`receiver_thresholds` fits with: the receiver calls, whether reports are
    whole dB (``whole_db``, or from ``spots`` when None), ``fit(tau, rounding)`` -> the
    50 % points [dB] of every receiver for a detection width ``tau`` [dB], and
    ``fit_width(rounding)`` -> the width fitted to the report histograms. The histograms are
    made once, so that many widths are cheap (:mod:`spotkit.compare.width`)."""
    calls, lowest, hist, _count = _report_histograms(spots)
    snr = spots[C.SNR].to_numpy(dtype=float)
    snr = snr[np.isfinite(snr)]
    whole = is_whole_db(whole_db_counts(snr)) if whole_db is None else bool(whole_db)
    # all reports as one receiver: the fallback when no receiver is well observed
    v_all = np.floor(snr + 0.5)
    low_all = float(v_all.min()) if v_all.size else 0.0
    j_all = (v_all - low_all).astype(np.int64) + _BELOW
    pooled = np.bincount(j_all[j_all < hist.shape[1]], minlength=hist.shape[1])[None, :]
    well = hist.sum(axis=1) >= min_reports
    kw = dict(below_db=_BELOW, window_db=_WINDOW)

    def fit(tau, rnd):
        t50 = np.full(len(calls), np.nan)
        if well.any():
            t50[well] = fit_thresholds(hist[well], lowest[well], tau_db=tau, rounding=rnd,
                                       **kw)[0]
            typical = float(np.median(t50[well]))
            offset = float(np.median(t50[well] - lowest[well]))
        else:
            typical = float(fit_thresholds(pooled, [low_all], tau_db=tau, rounding=rnd,
                                           **kw)[0][0])
            offset = typical - low_all
        t50[~well] = np.minimum(typical, lowest[~well] + offset)
        return t50

    def fit_width(rnd):
        if well.any():
            return fit_tau(hist[well], lowest[well], rounding=rnd, **kw)
        return fit_tau(pooled, [low_all], rounding=rnd, **kw)

    return calls, whole, fit, fit_width


def receiver_thresholds(spots: pd.DataFrame, min_reports: int = 20, *,
                        method: ThresholdMethod = "t50", tau_db: float | None = None,
                        rounding: Rounding = "after",
                        whole_db: bool | None = None) -> pd.Series:
    """Each receiver's decode threshold: the 50 % point of its detection curve.

    ``method="t50"`` (default) fits ``P(decoded | s) = Phi((s - t50) / tau)`` to the low
    end of each receiver's report histogram (:func:`spotkit.stats.detection.fit_thresholds`;
    ``tau`` common to all receivers, fitted by profile likelihood unless given) - the
    point where half of the signals at that SNR are decoded, which is what the censored
    fit needs. ``method="lowest"``: the lowest report (the earlier model; with a soft
    decoder it is the bottom of the ramp, about ``2 tau`` below the 50 % point, and makes
    the one-sided bounds too tight).

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table (``C.RX_CALL``, ``C.SNR``).
    min_reports : int
        Receivers with fewer reports (in the fit window, for ``t50``) get the smaller of
        the median threshold of the better-observed receivers and their own lowest report
        plus the median distance between the two of those receivers; when no receiver has
        that many, the same from one fit to all reports together (``lowest``: the smaller
        of their own minimum and the median threshold).
    method : {"t50", "lowest"}
        See above.
    tau_db : float, optional
        Width of the detection curve [dB]; fitted when None.
    rounding : {"after", "before"}
        Whether the decoder decides on the raw SNR and rounds the report afterwards.
    whole_db : bool, optional
        Whether the reports are whole dB (``attrs["detection"]["whole_db"]``); None: from
        ``spots`` (:func:`is_whole_db`). For a stand-in table of rounded reports (the Dask
        path) that cannot show it.

    Returns
    -------
    pandas.Series
        Threshold [dB, raw SNR in 2500 Hz] indexed by receiver call. For ``t50``,
        ``attrs["detection"]`` holds the detection model: ``tau_db``, ``rounding``,
        ``whole_db`` (reports in whole dB), ``method`` and ``alternatives`` (the plausible
        models of the systematic part: label, ``tau_db`` and the median shift of the
        thresholds ``shift_db``).

    Examples
    --------
    Q2XY sent 25 reports from -27 to -3 dB; Q3DEF only 3, the lowest -20 dB:

    >>> spots = pd.DataFrame({"rx_call": ["Q2XY"] * 25 + ["Q3DEF"] * 3,
    ...                       "snr_db": list(range(-27, -2)) + [-20, -15, -10]})
    >>> receiver_thresholds(spots, method="lowest").to_dict()
    {'Q2XY': -27.0, 'Q3DEF': -27.0}
    >>> receiver_thresholds(spots, min_reports=3, method="lowest").to_dict()
    {'Q2XY': -27.0, 'Q3DEF': -20.0}

    Q2XY's histogram is flat from its lowest report up: a sharp edge, so its 50 % point
    lies just below -27 dB (a whole-dB report of -27 stands for -27.5 to -26.5 dB); Q3DEF,
    with too few reports, gets the same:

    >>> thr = receiver_thresholds(spots, tau_db=1.0)
    >>> thr.round(2).to_dict()
    {'Q2XY': -27.15, 'Q3DEF': -27.15}
    >>> thr.attrs["detection"]["tau_db"], thr.attrs["detection"]["whole_db"]
    (1.0, True)
    """
    check_choice(method, THRESHOLD_METHODS, "threshold method")
    if method == "lowest":
        g = spots.groupby(C.RX_CALL, observed=True)[C.SNR].agg(["min", "count"])
        thr = g["min"].astype(float)
        well = g["count"] >= min_reports
        if well.any() and (~well).any():
            typical = float(thr[well].median())
            thr[~well] = np.minimum(thr[~well], typical)
        thr.name = C.THRESHOLD
        return thr
    check_choice(rounding, ROUNDINGS, "rounding")
    calls, whole, fit, fit_width = _t50_fitter(spots, min_reports, whole_db)
    tau = float(tau_db) if tau_db is not None else fit_width(rounding)
    t50 = fit(tau, rounding)
    alternatives = []
    for f in TAU_FACTORS if tau_db is None else TAU_FACTORS_SET:
        alt = fit(tau * f, rounding)
        alternatives.append(dict(label=f"detection width x{f:g}", tau_db=tau * f,
                                 shift_db=float(np.median(alt - t50))))
    other = "before" if rounding == "after" else "after"
    alt = fit(tau, other)
    alternatives.append(dict(label=f"rounding {other} the threshold", tau_db=tau,
                             shift_db=float(np.median(alt - t50))))
    for sgn in (-1, 1):
        alternatives.append(dict(label=f"50 % point {sgn * T50_ERROR_DB:+g} dB", tau_db=tau,
                                 shift_db=sgn * T50_ERROR_DB))
    thr = pd.Series(t50, index=calls, name=C.THRESHOLD)
    thr.attrs["detection"] = dict(method="t50", tau_db=tau, rounding=rounding,
                                  whole_db=whole, tau_fitted=tau_db is None,
                                  alternatives=alternatives)
    return thr


def _side(df: pd.DataFrame, keys: list[str]) -> pd.DataFrame:
    """One row per key (mean per-W SNR of duplicate reports; first of everything else)."""
    df = df.assign(_snrw=snr_per_watt(df[C.SNR], df[C.POWER]))
    if not df.duplicated(keys).any():
        return df
    agg = {c: "first" for c in df.columns if c not in keys}
    agg["_snrw"] = "mean"
    return df.groupby(keys, observed=True, sort=False).agg(agg).reset_index()


def _decode(codes, categories) -> pd.Categorical:
    c = np.asarray(codes, dtype=float)
    c = np.where(np.isnan(c), -1, c).astype(np.int64)
    return pd.Categorical.from_codes(c, categories=categories).remove_unused_categories()


def _finish(merged: pd.DataFrame, set_aside: dict, design: str, cats: dict,
            cluster_col: str, far_side: str, keep_unheard: bool = False) -> pd.DataFrame:
    """Common tail: limits, heard flags, on-air filter, output columns.

    ``keep_unheard`` (before/after): every row is one observation, heard or censored."""
    heard_a = merged["_snrw_a"].notna().to_numpy()
    heard_b = merged["_snrw_b"].notna().to_numpy()
    on_a = merged["_pow_a"].notna().to_numpy()
    on_b = merged["_pow_b"].notna().to_numpy()
    keep = (heard_a & heard_b) | (heard_a & on_b) | (heard_b & on_a)
    if keep_unheard:
        keep = np.ones(len(merged), dtype=bool)
        on_a = on_b = keep
    n_off_b = int((heard_a & ~heard_b & ~on_b).sum())
    n_off_a = int((heard_b & ~heard_a & ~on_a).sum())
    if n_off_b:
        set_aside["only A heard and B not on the air in that slot"] = n_off_b
    if n_off_a:
        set_aside["only B heard and A not on the air in that slot"] = n_off_a
    m = merged.loc[keep].reset_index(drop=True)
    out = pd.DataFrame({
        C.CLUSTER: _decode(m["_cluster"], cats[cluster_col]),
        C.BAND: _decode(m["_band"], cats[C.BAND]),
        C.SLOT: _to_utc(m["_slot"].to_numpy(dtype=np.int64) * _SLOT_NS),
    })
    if "_slot_b" in m:
        out[C.SLOT_B] = _to_utc(m["_slot_b"].to_numpy(dtype=np.int64) * _SLOT_NS)
    far_cols = ((C.RX_CALL, C.RX_LOCATOR) if far_side == "rx" else
                (C.TX_CALL, C.TX_LOCATOR))
    for col, src in zip([C.FAR_CALL, C.FAR_LOCATOR], far_cols, strict=True):
        out[col] = _decode(m[col], cats[src])
    for col in [C.FAR_LAT, C.FAR_LON]:
        out[col] = m[col].to_numpy(dtype=float)
    for col in [C.TX_LOCATOR, C.RX_LOCATOR]:
        out[col] = _decode(m[col], cats[col])
    for col in [C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.DISTANCE, C.BEARING]:
        out[col] = m[col].to_numpy(dtype=float)
    out[C.SNR_A] = m["_snrw_a"].to_numpy(dtype=float)
    out[C.SNR_B] = m["_snrw_b"].to_numpy(dtype=float)
    out[C.LIMIT_A] = m["_thr_a"].to_numpy(dtype=float) - (
        m["_pow_a"].to_numpy(dtype=float) - REFERENCE_POWER_DBM)
    out[C.LIMIT_B] = m["_thr_b"].to_numpy(dtype=float) - (
        m["_pow_b"].to_numpy(dtype=float) - REFERENCE_POWER_DBM)
    out[C.HEARD_A] = out[C.SNR_A].notna()
    out[C.HEARD_B] = out[C.SNR_B].notna()
    out.attrs["set_aside"] = set_aside
    out.attrs["design"] = design
    if len(out) == 0:
        why = "; ".join(f"{k}: {v}" for k, v in set_aside.items()) or "no reports"
        raise NoPairsError(f"no pairs found for the {design} design ({why})")
    return out


def _add(df: pd.DataFrame, **cols) -> pd.DataFrame:
    """Add columns in place (``df`` is the working copy) and return it."""
    for k, v in cols.items():
        df[k] = v.to_numpy() if isinstance(v, pd.Series) else v
    return df


def _far_from(df: pd.DataFrame, side: Literal["rx", "tx"]) -> pd.DataFrame:
    if side == "rx":
        src = [C.RX_CALL, C.RX_LOCATOR, C.RX_LAT, C.RX_LON, C.BEARING]
    else:
        src = [C.TX_CALL, C.TX_LOCATOR, C.TX_LAT, C.TX_LON, C.REVERSE_BEARING]
    dst = [C.FAR_CALL, C.FAR_LOCATOR, C.FAR_LAT, C.FAR_LON, "_bearing"]
    for s_, d in zip(src, dst, strict=True):  # in place: ``df`` is the working copy
        df[d] = df[s_].to_numpy()
    return df


_CARRY = [C.FAR_CALL, C.FAR_LOCATOR, C.FAR_LAT, C.FAR_LON, C.TX_LOCATOR, C.RX_LOCATOR,
          C.TX_LAT, C.TX_LON, C.RX_LAT, C.RX_LON, C.DISTANCE, "_bearing"]


def _combine(arrays, dims=None):
    """One int64 key from several non-negative integer arrays (mixed radix)."""
    arrays = [np.asarray(x, dtype=np.int64) for x in arrays]
    if dims is None:
        dims = [int(x.max()) + 1 if x.size else 1 for x in arrays]
    key = np.zeros(arrays[0].size, dtype=np.int64)
    for x, d in zip(arrays, dims, strict=True):
        key = key * d + x
    return key, dims


def _split(key, dims):
    out = []
    for d in reversed(dims):
        key, r = np.divmod(key, d)
        out.append(r)
    return out[::-1]


def _dedupe(key: np.ndarray, snrw: np.ndarray):
    """Distinct keys, mean per-W SNR per key, and one representative row per key."""
    order = np.argsort(key, kind="stable")
    ks = key[order]
    first = np.flatnonzero(np.r_[True, ks[1:] != ks[:-1]]) if ks.size else np.zeros(0, int)
    uniq = ks[first]
    inv = np.repeat(np.arange(uniq.size), np.diff(np.append(first, ks.size)))
    mean = np.bincount(inv, weights=snrw[order], minlength=uniq.size) / np.bincount(
        inv, minlength=uniq.size)
    return uniq, mean, order[first]


def _lookup(keys: np.ndarray, table_keys: np.ndarray, table_values: np.ndarray):
    """Values of ``table_keys`` (sorted, distinct) at ``keys``; NaN where absent."""
    if table_keys.size == 0:
        return np.full(keys.size, np.nan)
    i = np.clip(np.searchsorted(table_keys, keys), 0, table_keys.size - 1)
    hit = table_keys[i] == keys
    return np.where(hit, table_values[i], np.nan)


def _group_median(key: np.ndarray, values: np.ndarray):
    s = pd.Series(values).groupby(key, sort=True).median()
    return s.index.to_numpy(dtype=np.int64), s.to_numpy(dtype=float)


def _outer(df: pd.DataFrame, ia: np.ndarray, ib: np.ndarray, keys: list[str]) -> pd.DataFrame:
    """Outer join of A's reports (rows ``ia`` of ``df``) and B's (rows ``ib``) on ``keys``.

    ``keys`` are non-negative integer columns. Duplicate reports of one key are merged
    (mean per-W SNR); far-station columns are taken from A's report, else from B's;
    ``_power_a`` / ``_power_b`` are the powers of the representative reports. Works on
    row indices, so no copy of the table is made.
    """
    kcols = [df[k].to_numpy() for k in keys]
    dims = [int(x.max()) + 1 if x.size else 1 for x in kcols]
    snr = df[C.SNR].to_numpy(dtype=float)
    power = df[C.POWER].to_numpy(dtype=float)
    res = {}
    parts = []
    for x, idx in (("a", ia), ("b", ib)):
        key, _ = _combine([col[idx] for col in kcols], dims)
        uniq, mean, rows = _dedupe(key, snr_per_watt(snr[idx], power[idx]))
        parts.append((x, uniq, mean, idx[rows]))  # rows of df
    allk = np.concatenate([parts[0][1], parts[1][1]])
    allk.sort()
    allk = allk[np.r_[True, allk[1:] != allk[:-1]]] if allk.size else allk
    for k, col in zip(keys, _split(allk, dims), strict=True):
        res[k] = col
    pos = [np.searchsorted(allk, part[1]) for part in parts]
    for (x, _uniq, mean, rows), at in zip(parts, pos, strict=True):
        v = np.full(allk.size, np.nan)
        v[at] = mean
        res[f"_snrw_{x}"] = v
        pw = np.full(allk.size, np.nan)
        pw[at] = power[rows]
        res[f"_power_{x}"] = pw
    for c in _CARRY:
        col = df[c].to_numpy()
        v = np.full(allk.size, np.nan)
        for (*_, rows), at in list(zip(parts, pos, strict=True))[::-1]:  # A over B
            v[at] = col[rows]
        res[c] = v
    return pd.DataFrame(res, copy=False)


# --- designs -------------------------------------------------------------------------------
#: the same-slot designs: (column of the A/B calls, cluster column, far side, calls are)
_SAME_SLOT = {"simultaneous": (C.TX_CALL, C.RX_CALL, "rx", "transmitter"),
              "receive": (C.RX_CALL, C.TX_CALL, "tx", "receiver")}


def _same_slot_pairs(spots, a, b, cats, design):
    """Shared start of the simultaneous and receive designs: the two calls checked, A's and
    B's reports (rows ``ia``, ``ib`` of ``df``) outer-joined on (cluster, band, slot) into
    ``m``; ``mk`` and ``rk`` the (band, slot) keys of ``m``'s and ``df``'s rows."""
    call_col, cluster_col, far, what = _SAME_SLOT[design]
    for role, call in (("A", a), ("B", b)):
        if call is None or not str(call).strip():
            raise UsageError(f"the {design} design compares two {what} calls: the call of "
                             f"{role} is missing ({role.lower()}={call!r})")
    a, code_a = _check_call(spots, cats, call_col, a, "A")
    b, code_b = _check_call(spots, cats, call_col, b, "B")
    if a == b:
        raise UsageError(f"the {design} design needs two different {what} calls for A and B")
    df = _add(spots, _slot=_ns(spots[C.SLOT]) // _SLOT_NS, _band=spots[C.BAND],
              _cluster=spots[cluster_col])
    df = _far_from(df, far)
    calls = df[call_col].to_numpy()
    ia, ib = np.flatnonzero(calls == code_a), np.flatnonzero(calls == code_b)
    m = _outer(df, ia, ib, ["_cluster", "_band", "_slot"])
    dims = [int(df["_band"].max()) + 1, int(df["_slot"].max()) + 1]
    mk, _ = _combine([m["_band"], m["_slot"]], dims)
    rk, _ = _combine([df["_band"], df["_slot"]], dims)
    return a, b, df, ia, ib, m, mk, rk


def _pair_simultaneous(spots, a, b, thr, cats):
    a, b, df, ia, ib, m, mk, rk = _same_slot_pairs(spots, a, b, cats, "simultaneous")
    power = df[C.POWER].to_numpy(dtype=float)
    for x, idx in (("a", ia), ("b", ib)):  # the antenna's power in that slot (median)
        tk, tv = _group_median(rk[idx], power[idx])
        m[f"_pow_{x}"] = _lookup(mk, tk, tv)
    thr_rx = _thr_by_code(thr, cats)[m["_cluster"].to_numpy(dtype=np.int64)]
    m["_thr_a"] = thr_rx
    m["_thr_b"] = thr_rx
    return m


def _pair_receive(spots, a, b, thr, cats):
    a, b, df, ia, ib, m, mk, rk = _same_slot_pairs(spots, a, b, cats, "receive")
    # transmitter power of the pair: from whichever report is present (same transmitter)
    pa, pb = m["_power_a"].to_numpy(), m["_power_b"].to_numpy()
    power = np.where(np.isnan(pa), pb, pa)
    for x, idx in (("a", ia), ("b", ib)):  # receiver on the air: it reported something
        tk = np.unique(rk[idx])
        on = ~np.isnan(_lookup(mk, tk, np.ones(tk.size)))
        m[f"_pow_{x}"] = np.where(on, power, np.nan)
    m["_thr_a"] = float(thr.get(a, np.nan))
    m["_thr_b"] = float(thr.get(b, np.nan))
    return m


def _single_call(a, b, design) -> str:
    if b is not None and str(b).strip() and str(b).strip().upper() != str(a).strip().upper():
        raise UsageError(f"the {design} design uses one transmitter call: pass the same call "
                         f"for A and B (got {a!r} and {b!r})")
    return a


def read_schedule(source, antennas=("A", "B")) -> pd.DataFrame:
    """Read a switching schedule (alternating design).

    Parameters
    ----------
    source : str, pathlib.Path or pandas.DataFrame
        CSV file or table with columns ``start``, ``end`` (UTC times; naive times are taken
        as UTC), ``antenna`` (``A`` or ``B``) and optionally ``band`` (e.g. ``20m``). Each
        row covers the slots starting in [start, end).
    antennas : sequence of str
        The antenna labels the schedule may use (``A``, ``B``, ``C`` ... for a schedule of
        several antennas); case is ignored.

    Returns
    -------
    pandas.DataFrame
        Columns ``C.SCHEDULE_START``, ``C.SCHEDULE_END`` (UTC), ``C.ANTENNA`` and, when
        given, ``C.BAND``; sorted by start.

    Examples
    --------
    >>> table = pd.DataFrame({"start": ["2024-03-01 12:00", "2024-03-01 10:00"],
    ...                       "end": ["2024-03-01 14:00", "2024-03-01 12:00"],
    ...                       "antenna": ["b", "A"]})
    >>> print(read_schedule(table).to_string(index=False))
                        start                       end antenna
    2024-03-01 10:00:00+00:00 2024-03-01 12:00:00+00:00       A
    2024-03-01 12:00:00+00:00 2024-03-01 14:00:00+00:00       B
    """
    name = "schedule"
    if isinstance(source, pd.DataFrame):
        df = source.copy()
    else:
        name = str(source)
        try:
            df = pd.read_csv(source, dtype=str, skipinitialspace=True)
        except FileNotFoundError:
            raise
        except Exception as exc:  # any parse failure is bad input
            raise InputError(f"{name}: cannot read the schedule CSV ({exc})") from None
    df.columns = [str(c).strip().lower() for c in df.columns]
    need = [C.SCHEDULE_START, C.SCHEDULE_END, C.ANTENNA]
    missing = [c for c in need if c not in df.columns]
    if missing:
        raise InputError(f"{name}: schedule lacks column(s) {', '.join(missing)} (needs "
                         f"start, end, antenna and optionally band)")
    out = pd.DataFrame()
    for col in (C.SCHEDULE_START, C.SCHEDULE_END):
        t = pd.to_datetime(df[col], errors="coerce", utc=True)
        bad = np.flatnonzero(t.isna().to_numpy())
        if bad.size:
            raise InputError(f"{name}: row {bad[0] + 1}, field {col}: not a time "
                             f"({df[col].iloc[bad[0]]!r})")
        out[col] = t
    labels = [str(x).strip().upper() for x in antennas]
    ant = df[C.ANTENNA].astype(str).str.strip().str.upper()
    bad = np.flatnonzero(~ant.isin(labels).to_numpy())
    if bad.size:
        raise InputError(f"{name}: row {bad[0] + 1}, field antenna: expected "
                         f"{', '.join(labels[:-1])} or {labels[-1]}, got "
                         f"{df[C.ANTENNA].iloc[bad[0]]!r}")
    out[C.ANTENNA] = ant.to_numpy()
    if C.BAND in df.columns:
        out[C.BAND] = df[C.BAND].astype(str).str.strip().str.lower().to_numpy()
    bad = np.flatnonzero((out[C.SCHEDULE_END] <= out[C.SCHEDULE_START]).to_numpy())
    if bad.size:
        raise InputError(f"{name}: row {bad[0] + 1}: end is not after start")
    out = out.sort_values(C.SCHEDULE_START, kind="stable").reset_index(drop=True)
    for _, g in out.groupby(C.BAND, sort=False) if C.BAND in out else [(None, out)]:
        st = _ns(g[C.SCHEDULE_START])
        en = _ns(g[C.SCHEDULE_END])
        if np.any(st[1:] < en[:-1]):
            raise InputError(f"{name}: schedule intervals overlap")
    return out


def schedule_antennas(slots, bands, schedule, antennas=("A", "B")) -> np.ndarray:
    """Antenna the schedule assigns to each slot.

    Parameters
    ----------
    slots : array-like of datetime
        Slot starts (UTC).
    bands : array-like of str
        Band of each slot (used when the schedule table has a band column).
    schedule : str or pandas.DataFrame
        ``"even-odd"`` (A in the slots whose index since 00:00 UTC is even), ``"odd-even"``,
        ``"every-N"`` (blocks of N slots counted from 00:00 UTC, A in even blocks), a CSV
        path or a table for :func:`read_schedule`. With ``k`` antennas, "even-odd" is
        the round robin ``A, B, C, ...`` slot by slot and "every-N" the same by blocks of
        N slots.
    antennas : sequence of str
        The schedule's antenna labels, in code order (default A, B).

    Returns
    -------
    numpy.ndarray of int8
        The position of the slot's antenna in ``antennas`` (0 for A, 1 for B, ...), -1
        where the schedule does not cover the slot.

    Examples
    --------
    10:00 UTC is slot 300 of the day (even), 10:04 slot 302:

    >>> slots = pd.to_datetime(["2024-03-01 10:00", "2024-03-01 10:02", "2024-03-01 10:04",
    ...                         "2024-03-01 13:00", "2024-03-01 15:00"], utc=True)
    >>> bands = ["20m"] * 5
    >>> schedule_antennas(slots, bands, "even-odd").tolist()
    [0, 1, 0, 0, 0]
    >>> schedule_antennas(slots, bands, "every-2").tolist()
    [0, 0, 1, 1, 1]
    >>> table = pd.DataFrame({"start": ["2024-03-01 10:00", "2024-03-01 12:00"],
    ...                       "end": ["2024-03-01 12:00", "2024-03-01 14:00"],
    ...                       "antenna": ["A", "B"]})
    >>> schedule_antennas(slots, bands, table).tolist()
    [0, 0, 0, 1, -1]
    """
    ns = _ns(pd.Series(slots))
    labels = [str(x).strip().upper() for x in antennas]
    k = len(labels)
    if k < 2 or len(set(labels)) != k:
        raise UsageError(f"a schedule needs at least two distinct antenna labels, got {labels}")
    if isinstance(schedule, str) and not Path(schedule).suffix:
        key = schedule.strip().lower()
        n = None
        if key in ("even-odd", "odd-even"):
            n = 1
        elif key.startswith("every-"):
            try:
                n = int(key.split("-", 1)[1])
            except ValueError:
                n = None
        if not n or n < 1:
            raise UsageError(f"unknown schedule {schedule!r}; valid: even-odd, odd-even, "
                             "every-N (N slots per block) or a CSV file of start, end, "
                             "antenna [, band]")
        idx = (ns % _DAY_NS) // _SLOT_NS // n
        if k > 2:
            return ((idx + (key == "odd-even")) % k).astype(np.int8)
        ant = (idx % 2).astype(np.int8)
        return 1 - ant if key == "odd-even" else ant
    table = read_schedule(schedule, labels)
    out = np.full(ns.size, -1, dtype=np.int8)
    band_arr = np.asarray(pd.Series(bands).astype(str).str.lower())
    groups = table.groupby(C.BAND, sort=False) if C.BAND in table else [(None, table)]
    for band, g in groups:
        st = _ns(g[C.SCHEDULE_START])
        en = _ns(g[C.SCHEDULE_END])
        code = pd.Index(labels).get_indexer(g[C.ANTENNA].to_numpy()).astype(np.int8)
        sel = np.ones(ns.size, bool) if band is None else band_arr == band
        t = ns[sel]
        i = np.searchsorted(st, t, side="right") - 1
        ok = (i >= 0) & (t < en[np.clip(i, 0, None)])
        res = np.full(t.size, -1, dtype=np.int8)
        res[ok] = code[i[ok]]
        out[sel] = np.where(res >= 0, res, out[sel])
    return out


def _match_slots(a_slots: np.ndarray, b_slots: np.ndarray, window: int):
    """Match sorted A slots to B slots one to one, at most ``window`` slots apart (FIFO).

    Slots are given as slot numbers (slot start / slot length)."""
    limit = window
    ev = np.concatenate([a_slots, b_slots])
    kind = np.concatenate([np.zeros(a_slots.size, np.int8), np.ones(b_slots.size, np.int8)])
    order = np.lexsort((kind, ev))
    queues = (deque(), deque())
    pa, pb = [], []
    # loop over slots, not spots
    for t, k in zip(ev[order].tolist(), kind[order].tolist(), strict=True):
        other = queues[1 - k]
        while other and t - other[0] > limit:
            other.popleft()
        if other:
            o = other.popleft()
            pa.append(t if k == 0 else o)
            pb.append(o if k == 0 else t)
        else:
            queues[k].append(t)
    return np.asarray(pa, dtype=np.int64), np.asarray(pb, dtype=np.int64)


def _pair_alternating(spots, a, b, thr, schedule, window_slots, set_aside, cats,
                      require_open_path, antennas=("A", "B"), contrast=None):
    call, code = _check_call(spots, cats, C.TX_CALL, _single_call(a, b, "alternating"),
                             "A/B")
    if schedule is None:
        raise UsageError("the alternating design needs a schedule (even-odd, odd-even, "
                         "every-N or a CSV of start, end, antenna)")
    if int(window_slots) < 1:
        raise UsageError("window_slots must be at least 1")
    df = spots[spots[C.TX_CALL] == code]
    df = df.assign(_slot=_ns(df[C.SLOT]) // _SLOT_NS, _band=df[C.BAND],
                   _cluster=df[C.RX_CALL])
    band_names = np.asarray(cats[C.BAND], dtype=object)[df["_band"].to_numpy()]
    ant = schedule_antennas(df[C.SLOT], band_names, schedule, antennas)
    if contrast is not None:  # the two compared antennas -> 0 and 1, the others -> 2
        labels = [str(x).strip().upper() for x in antennas]
        i0, i1 = (labels.index(str(x).strip().upper()) for x in contrast)
        ant = np.where(ant < 0, -1, np.where(ant == i0, 0, np.where(ant == i1, 1, 2)))
        ant = ant.astype(np.int8)
    uncovered = int((ant < 0).sum())
    if uncovered == len(df):
        t0, t1 = df[C.SLOT].min(), df[C.SLOT].max()
        raise InputError(f"the schedule does not cover the data: none of the {len(df)} "
                         f"reports of {call} ({t0} to {t1}) falls in a scheduled interval "
                         "(for its band)")
    if uncovered:
        set_aside["slot not covered by the schedule"] = uncovered
        import warnings
        warnings.warn(f"{uncovered} of {len(df)} reports of {call} fall outside the schedule "
                      "and are set aside", SpotkitWarning, stacklevel=3)
    df = _far_from(df.assign(_ant=ant), "rx")
    df = df[df["_ant"] >= 0].reset_index(drop=True)
    pieces = []
    for band, g in df.groupby("_band", sort=False):
        sa = np.unique(g.loc[g["_ant"] == 0, "_slot"].to_numpy())
        sb = np.unique(g.loc[g["_ant"] == 1, "_slot"].to_numpy())
        ma, mb = _match_slots(sa, sb, int(window_slots))
        pieces.append(pd.DataFrame({"_band": band, "_slot": ma, "_slot_b": mb}))
    match = pd.concat(pieces, ignore_index=True)
    match["_pair"] = np.arange(len(match))
    keys = ["_cluster", "_pair"]
    dims = [int(df["_band"].max()) + 1, int(df["_slot"].max()) + 1]
    rk, _ = _combine([df["_band"], df["_slot"]], dims)
    ant = df["_ant"].to_numpy()
    pair_of = np.full(len(df), -1, dtype=np.int64)
    for x, slot_col in ((0, "_slot"), (1, "_slot_b")):  # row -> matched pair id
        mk, _ = _combine([match["_band"], match[slot_col]], dims)
        order = np.argsort(mk)
        found = _lookup(rk, mk[order], match["_pair"].to_numpy()[order].astype(float))
        sel = (ant == x) & ~np.isnan(found)
        pair_of[sel] = found[sel].astype(np.int64)
    unmatched = int(((pair_of < 0) & (ant <= 1)).sum())
    if unmatched:
        set_aside[f"no slot of the other antenna within {int(window_slots)} slot(s)"] = \
            unmatched
    df["_pair"] = np.maximum(pair_of, 0)
    ia = np.flatnonzero((ant == 0) & (pair_of >= 0))
    ib = np.flatnonzero((ant == 1) & (pair_of >= 0))
    m = _outer(df, ia, ib, keys)
    pair = m["_pair"].to_numpy()
    for col in ("_band", "_slot", "_slot_b"):
        m[col] = match[col].to_numpy()[pair]
    power = df[C.POWER].to_numpy(dtype=float)
    for x, idx in (("a", ia), ("b", ib)):
        tk, tv = _group_median(pair_of[idx], power[idx])
        m[f"_pow_{x}"] = _lookup(pair, tk, tv)
    # an antenna is on the air in a matched slot by construction (someone heard it there)
    thr_rx = _thr_by_code(thr, cats)[m["_cluster"].to_numpy(dtype=np.int64)]
    m["_thr_a"] = thr_rx
    m["_thr_b"] = thr_rx
    if require_open_path:
        # keep a pair only if the receiver heard the call (either antenna) in the slot just
        # before and just after the pair: evidence that the path was open throughout
        dims2 = [int(df["_cluster"].max()) + 1, int(df["_slot"].max()) + 3]
        have = np.unique(_combine([df["_cluster"], df["_slot"] + 1], dims2)[0])
        lo = np.minimum(m["_slot"].to_numpy(), m["_slot_b"].to_numpy())
        hi = np.maximum(m["_slot"].to_numpy(), m["_slot_b"].to_numpy())
        cl = m["_cluster"].to_numpy(dtype=np.int64)
        before = ~np.isnan(_lookup(_combine([cl, lo], dims2)[0], have, np.ones(have.size)))
        after = ~np.isnan(_lookup(_combine([cl, hi + 2], dims2)[0], have, np.ones(have.size)))
        ok = before & after
        if (~ok).any():
            set_aside["alternating pair without reports in the slots around it"] = int(
                (~ok).sum())
        m = m[ok].reset_index(drop=True)
    return m


def _pair_before_after(spots, a, b, change_at, set_aside, cats, thr):
    call, code = _check_call(spots, cats, C.TX_CALL, _single_call(a, b, "before-after"),
                             "A/B")
    if change_at is None:
        raise UsageError("the before-after design needs change_at (the moment the antenna "
                         "changed, UTC)")
    t_change = check_time(change_at, "change_at")
    df = _add(spots, _slot=_ns(spots[C.SLOT]) // _SLOT_NS, _band=spots[C.BAND],
              _cluster=spots[C.RX_CALL],
              _snrw=snr_per_watt(spots[C.SNR], spots[C.POWER]))
    keys = ["_cluster", "_band", "_slot"]
    is_t = (df[C.TX_CALL] == code).to_numpy()
    target = _side(_far_from(df[is_t], "rx").drop(columns="_snrw"), keys)
    control = df[~is_t].groupby(keys, sort=False)["_snrw"].mean().rename("_ctrl")
    m = target.merge(control, left_on=keys, right_index=True, how="left")
    no_ctrl = int(m["_ctrl"].isna().sum())
    if no_ctrl:
        set_aside["no control station heard by that receiver in that slot and band"] = no_ctrl
    m = m[m["_ctrl"].notna()].reset_index(drop=True)
    after = m["_slot"].to_numpy(dtype=np.int64) * _SLOT_NS >= t_change.value
    n_before, n_after = int((~after).sum()), int(after.sum())
    if n_before == 0 or n_after == 0:
        raise NoPairsError(
            f"before-after: {n_before} usable reports before and {n_after} after "
            f"{t_change.isoformat()}; both periods need reports of {call} with control "
            "stations heard by the same receivers")
    # target not heard: a receiver heard a control station in a slot and band where the
    # target was on the air (someone heard it there), on a band where it heard the target
    # at some time (its path geometry comes from that report)
    dims = [int(df["_cluster"].max()) + 1, int(df["_band"].max()) + 1,
            int(df["_slot"].max()) + 1]
    tgt = df[is_t]
    onair_k, onair_p = _group_median(_combine([tgt["_band"], tgt["_slot"]], dims[1:])[0],
                                     tgt[C.POWER].to_numpy(dtype=float))
    ctrl = control.reset_index()
    ck = _combine([ctrl["_band"], ctrl["_slot"]], dims[1:])[0]
    ctrl["_tp"] = _lookup(ck, onair_k, onair_p)
    heard_k = np.unique(_combine([tgt[k] for k in keys], dims)[0])
    ctrl_heard = ~np.isnan(_lookup(_combine([ctrl[k] for k in keys], dims)[0], heard_k,
                                   np.ones(heard_k.size)))
    cens = ctrl[ctrl["_tp"].notna().to_numpy() & ~ctrl_heard]
    geom = target.drop_duplicates(["_cluster", "_band"]).drop(columns=["_slot", "_snrw"])
    cens = cens.merge(geom, on=["_cluster", "_band"], how="inner")
    cens["_snrw"] = np.nan
    m["_tp"] = m[C.POWER].to_numpy(dtype=float)
    m = pd.concat([m, cens[m.columns]], ignore_index=True)
    after = m["_slot"].to_numpy(dtype=np.int64) * _SLOT_NS >= t_change.value
    ctrl_v = m["_ctrl"].to_numpy(dtype=float)
    rel = m["_snrw"].to_numpy(dtype=float) - ctrl_v
    # censoring limit of the relative SNR: threshold - (target power - 30) - control
    bound = (_thr_by_code(thr, cats)[m["_cluster"].to_numpy(dtype=np.int64)] - ctrl_v)
    m["_snrw_a"] = np.where(after, np.nan, rel)
    m["_snrw_b"] = np.where(after, rel, np.nan)
    m["_pow_a"] = np.where(after, np.nan, m["_tp"].to_numpy(dtype=float))
    m["_pow_b"] = np.where(after, m["_tp"].to_numpy(dtype=float), np.nan)
    m["_thr_a"] = np.where(after, np.nan, bound)
    m["_thr_b"] = np.where(after, bound, np.nan)
    return m, after


# --- public entry ---------------------------------------------------------------------------
def pair_spots(spots: pd.DataFrame, design: Design, a: str, b: str | None = None, *,
               schedule=None, change_at=None, window_slots: int = 1,
               min_receiver_reports: int = 20,
               require_open_path: bool = True, threshold_method: ThresholdMethod = "t50",
               tau_db: float | None = None, antennas=("A", "B"),
               contrast=None, thresholds: pd.Series | None = None) -> pd.DataFrame:
    """Pair the reports of antennas A and B according to an experiment design.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical, enriched spot table (:data:`spotkit.columns.CANONICAL`).
    design : {"simultaneous", "alternating", "receive", "before-after"}
        See the module docstring.
    a, b : str
        Calls of A and B: transmitter calls (simultaneous), receiver calls (receive), or the
        one transmitter call (alternating, before-after: ``b`` may be omitted or equal ``a``).
    schedule : str, path or pandas.DataFrame, optional
        Alternating design: see :func:`schedule_antennas`.
    change_at : str or pandas.Timestamp, optional
        Before-after design: the moment the antenna changed (UTC; reports from this slot on
        are "after" = B).
    window_slots : int
        Alternating design: the largest distance between paired A and B slots [slots].
    min_receiver_reports : int
        See :func:`receiver_thresholds`.
    require_open_path : bool
        Alternating design: keep a pair only if the receiver also reported the call in the
        slot just before and the slot just after the pair (either antenna), as evidence
        that the path stayed open; otherwise a path that closes between the A and the B
        slot looks like a one-sided pair. Pairs without that evidence are set aside.
    threshold_method : {"t50", "lowest"}
        How receiver thresholds are found (:func:`receiver_thresholds`).
    tau_db : float, optional
        Width of the detection curve [dB]; fitted from the reports when None.
    antennas : sequence of str
        Alternating design: the schedule's antenna labels (default A, B).
    contrast : (str, str), optional
        Alternating design with more than two antennas: the two labels compared (as A
        and B); reports of the schedule's other antennas are not paired but count as
        evidence of an open path.
    thresholds : pandas.Series, optional
        The result of :func:`receiver_thresholds` on these spots with these settings, when
        the caller already has it (several comparisons of one table); computed otherwise.

    Returns
    -------
    pandas.DataFrame
        One row per pair with :data:`PAIR_COLUMNS`: ``C.CLUSTER`` (bootstrap unit),
        ``C.BAND``, ``C.SLOT`` (A's slot; the observation slot in before-after),
        ``C.SLOT_B`` (alternating), the far station ``C.FAR_CALL``, ``C.FAR_LOCATOR``,
        ``C.FAR_LAT``, ``C.FAR_LON`` [deg], path ``C.DISTANCE`` [km] and ``C.BEARING`` [deg]
        (at the station under test towards the far station), ``C.SNR_A``, ``C.SNR_B``
        [dB per W; NaN if not heard], ``C.LIMIT_A``, ``C.LIMIT_B`` [dB per W, censoring
        limits], ``C.HEARD_A``, ``C.HEARD_B``; before-after adds ``C.KIND`` ("before" /
        "after") and its SNR columns hold the target-minus-control SNR [dB]. ``attrs``
        holds ``set_aside`` ({reason: reports or pairs}), ``design`` and ``detection``
        (the detection model, :func:`receiver_thresholds`; None with ``"lowest"``).

    Raises
    ------
    InputError
        Unknown call (the message lists the calls present), a schedule that covers none of
        the data, missing columns; :class:`~spotkit.errors.NoPairsError` if nothing pairs.

    Examples
    --------
    A short simulated run (2.4 hours, one band) with B 3 dB better than A, both at 37 dBm:
    the limits are each receiver's 50 % decode point minus 7 dB (per-W scale); with so few
    reports per receiver that point comes from one fit to all reports (-30.46 dB):

    >>> from spotkit.sim.simulate import simulate_spots
    >>> sim = simulate_spots(days=0.1, n_receivers=30, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> pairs = pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q1ABD")
    >>> len(pairs), int(pairs["heard_a"].sum()), int(pairs["heard_b"].sum())
    (42, 41, 42)
    >>> cols = ["cluster", "far_locator", "snr_a_db", "snr_b_db", "limit_a_db", "limit_b_db"]
    >>> print(pairs[cols].head(2).round(2).to_string(index=False))
    cluster far_locator  snr_a_db  snr_b_db  limit_a_db  limit_b_db
      Q0JAS        JN05      -5.0      -2.0      -37.46      -37.46
      Q0JAS        JN05      -7.0      -2.0      -37.46      -37.46
    >>> pair_spots(sim.spots, "simultaneous", "Q1ABC", "Q9ZZZ")
    Traceback (most recent call last):
    ...
    spotkit.errors.InputError: B call 'Q9ZZZ' is not a transmitter call in the data; ...
    """
    _check_design(design)
    spots = _validate(spots)
    set_aside: dict[str, int] = {}
    thr = thresholds if thresholds is not None else receiver_thresholds(
        spots, min_receiver_reports, method=threshold_method, tau_db=tau_db)
    work, cats = _encode(spots)
    after = None
    if design == "simultaneous":
        m = _pair_simultaneous(work, a, b, thr, cats)
    elif design == "receive":
        m = _pair_receive(work, a, b, thr, cats)
    elif design == "alternating":
        m = _pair_alternating(work, a, b, thr, schedule, window_slots, set_aside, cats,
                              require_open_path, antennas, contrast)
    else:
        m, after = _pair_before_after(work, a, b, change_at, set_aside, cats, thr)
    m = m.drop(columns=[C.BEARING], errors="ignore").rename(columns={"_bearing": C.BEARING})
    out = _finish(m, set_aside, design, cats,
                  C.TX_CALL if design == "receive" else C.RX_CALL,
                  "tx" if design == "receive" else "rx", keep_unheard=after is not None)
    if after is not None:
        out[C.KIND] = pd.Categorical(np.where(after, "after", "before"),
                                     categories=list(C.PERIOD_KINDS))
    out.attrs["detection"] = thr.attrs.get("detection")
    return out



__all__ = ["DESIGNS", "PAIR_COLUMNS", "THRESHOLD_METHODS", "TAU_FACTORS",
           "TAU_FACTORS_SET", "T50_ERROR_DB", "PERIOD_BOUND_KINDS", "pair_spots",
           "receiver_thresholds", "read_schedule", "schedule_antennas", "WHOLE_DB_SHARE",
           "whole_db_counts", "is_whole_db"]
