"""A small generator of A/B cells as real decoders make them, for the estimator's tests.

It shares no code with :mod:`spotkit.sim` and builds the compressed pair table directly
(numpy only), so that many runs stay cheap. Per receiver: a 50 % decode point ``t50``
(spread between receivers), a level distribution (normal, ``level_sd_db``, centred a few
dB above ``t50``), a B-A that varies from receiver to receiver (``rx_sd_db``); per pair:
a common level, independent fading of A and B (normal or Student t), a soft decode
probability ``Phi((s - t50) / tau)`` on the raw SNR, and the report rounded to whole dB.
Each receiver also reports other stations (from the same level distribution), so its
report histogram is as a real receiver's. The truth is the mean B-A over the pairs
offered.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from scipy import stats

from spotkit import columns as C


def make_cell(rng, *, n_pairs=7000, n_rx=60, diff_db=7.0, tau_db=1.0, whole_db=True,
              fade_sd_db=1.5, fade_df=np.inf, level_sd_db=6.0, rx_sd_db=0.3,
              t50_sd_db=1.5, other_reports=300):
    """One cell: (spots of the receivers' reports, pair arrays, truth [dB])."""
    t50 = rng.normal(-27.0, t50_sd_db, n_rx)
    centre = t50 + rng.uniform(0.0, 8.0, n_rx)
    delta = diff_db + rng.normal(0.0, rx_sd_db, n_rx)
    # pairs offered (at least one antenna decoded comes out of it, about n_pairs)
    n_off = int(n_pairs * 1.15)
    rx = rng.integers(0, n_rx, n_off)
    level = centre[rx] + rng.normal(0.0, level_sd_db, n_off) - diff_db / 2

    def fade(n):
        if np.isinf(fade_df):
            return rng.normal(0.0, fade_sd_db, n)
        return fade_sd_db * rng.standard_t(fade_df, n) / np.sqrt(fade_df / (fade_df - 2))

    sa = level + fade(n_off)
    sb = level + delta[rx] + fade(n_off)

    def decoded(s, thr):
        if tau_db <= 0:
            return s >= thr
        return rng.random(s.size) < stats.norm.cdf((s - thr) / tau_db)

    ha, hb = decoded(sa, t50[rx]), decoded(sb, t50[rx])
    keep = ha | hb
    rx, sa, sb, ha, hb = rx[keep], sa[keep], sb[keep], ha[keep], hb[keep]
    # reports in whole dB, or to 0.1 dB (keeps the compressed table small)
    sa, sb = (np.round(sa), np.round(sb)) if whole_db else (np.round(sa, 1), np.round(sb, 1))
    snr_a = np.where(ha, sa, np.nan)
    snr_b = np.where(hb, sb, np.nan)
    truth = float(np.mean(delta[rx]))
    # the receivers' other reports
    n_o = other_reports * n_rx
    orx = np.repeat(np.arange(n_rx), other_reports)
    so = centre[orx] + rng.normal(0.0, level_sd_db, n_o) + fade(n_o)
    ok = decoded(so, t50[orx])
    so = np.round(so[ok]) if whole_db else np.round(so[ok], 1)
    calls = np.array([f"Q{i % 10}R{i:03d}" for i in range(n_rx)])
    rx_all = np.concatenate([orx[ok], rx[ha], rx[hb]])
    snr_all = np.concatenate([so, snr_a[ha], snr_b[hb]])
    spots = pd.DataFrame({C.RX_CALL: calls[rx_all], C.SNR: snr_all})
    pairs = dict(cluster=calls[rx], snr_a=snr_a, snr_b=snr_b)
    return spots, pairs, truth


def cell_counts(pairs, thresholds: pd.Series) -> pd.DataFrame:
    """The compressed pair table (as :func:`spotkit.compare.grouping.summarise_pairs`) with
    the limits at ``thresholds`` (equal powers: per-W values are the reports)."""
    lim = thresholds.reindex(pairs["cluster"]).to_numpy(dtype=float)
    sa, sb = pairs["snr_a"], pairs["snr_b"]
    ha, hb = ~np.isnan(sa), ~np.isnan(sb)
    kind = np.where(ha & hb, "both", np.where(ha, "only_a", "only_b"))
    value = np.where(ha & hb, sb - sa, np.where(ha, lim - sa, sb - lim))
    frame = pd.DataFrame({C.CLUSTER: pairs["cluster"], C.KIND: kind,
                          C.VALUE: np.round(value, 6)})
    return frame.groupby([C.CLUSTER, C.KIND, C.VALUE]).size().rename(C.COUNT).reset_index()
