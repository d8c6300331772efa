"""Stop rules on the confidence sequence, and plain verdicts.

At each look, per band, the first rule that holds gives the verdict:

1. the sequence lies above 0: "B is better on 10 m - you can stop" (below 0: A is better);
2. the sequence lies within ``-margin .. +margin``: "no difference larger than 0.5 dB on
   20 m - you can stop";
3. the sequence is no wider than the width asked for (``target_width_db``): you can stop;
4. the run has reached its cap (``max_hours``): stop, without a clear answer;
5. otherwise "keep going: about N more hours at the current rate", where N is the time until
   the sequence, if the estimate stayed where it is, would be narrow enough for rule 1, 2 or
   3. The information (1 / SE^2) is taken to grow in proportion to the hours of data, as it
   has so far; its half-width at ``H`` hours is ``se sqrt(h / H) m(eta(H))`` (see
   :mod:`spotkit.monitor.sequence`).

Because the sequence holds at every look at once, acting on rule 1 or 2 the first time it
fires keeps the error rate at ``1 - confidence``, however often one looks.
"""
from __future__ import annotations

import re

import numpy as np

from spotkit.monitor.sequence import sequence_multiplier, tuning_constant

#: how far ahead "N more hours" looks [h]; beyond it the verdict says no answer is in sight
HORIZON_HOURS = 24 * 90


def band_text(band) -> str:
    """``"10m"`` -> ``"10 m"``; ``"70cm"`` -> ``"70 cm"``; anything else as it is.

    Examples
    --------
    >>> band_text("10m"), band_text("70cm"), band_text(None)
    ('10 m', '70 cm', 'all bands')
    """
    if band is None or (isinstance(band, float) and np.isnan(band)):
        return "all bands"
    m = re.fullmatch(r"(\d+(?:\.\d+)?)(m|cm|mm)", str(band))
    return f"{m.group(1)} {m.group(2)}" if m else str(band)


def hours_to_halfwidth(need_db, se_db, hours, *, se_tuned: float, confidence: float = 0.95,
                       systematic_db=0.0, horizon_hours: float = HORIZON_HOURS):
    """More hours until the sequence's half-width falls to ``need_db`` at the current rate.

    Parameters
    ----------
    need_db : float or array
        Half-width that would let a stop rule fire [dB].
    se_db : float or array
        SE now [dB].
    hours : float or array
        Hours of data so far [h].
    se_tuned : float
        Tuning SE of the sequence [dB].
    confidence : float
        ``1 - alpha``.
    systematic_db : float or array
        Systematic part [dB] (it does not shrink with time).
    horizon_hours : float
        Look no further ahead than this [h].

    Returns
    -------
    numpy.ndarray
        Hours more [h], 0 when already narrow enough, NaN when not within the horizon.

    Examples
    --------
    Half-width now 0.2 * 3.04 = 0.61 dB at 10 h (at the tuning point); 0.25 dB needs about
    6.5 times the information, the multiplier growing slowly with it:

    >>> float(np.round(hours_to_halfwidth(0.25, 0.2, 10.0, se_tuned=0.2), 0))
    55.0
    """
    need, se, h, sysd = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in
                                              (need_db, se_db, hours, systematic_db)))
    c = tuning_constant(confidence)
    # future lengths on a log grid from now to the horizon: (looks, grid)
    steps = np.geomspace(1.0, 1.0 + horizon_hours / np.maximum(h, 1e-9), 600, axis=-1)
    H = h[..., None] * steps
    se_h = se[..., None] * np.sqrt(h[..., None] / H)
    half = se_h * sequence_multiplier(c * (se_tuned / se_h) ** 2, confidence) + sysd[..., None]
    ok = half <= need[..., None]
    first = np.argmax(ok, axis=-1)
    more = np.take_along_axis(H, first[..., None], axis=-1)[..., 0] - h
    bad = ~ok.any(axis=-1) | ~np.isfinite(se) | ~np.isfinite(need)
    return np.where(bad, np.nan, np.maximum(more, 0.0))


def _signed(x: float) -> str:
    """``+0.3`` / ``-1.2`` with one decimal, never ``-0.0``."""
    text = f"{x:+.1f}"
    return "+0.0" if text == "-0.0" else text


def stop_verdict(band, estimate, cs_low, cs_high, *, margin_db: float = 0.5,
                 target_width_db: float | None = None, hours_more=np.nan,
                 reached_cap: bool = False, too_few: str | None = None) -> tuple[bool, str]:
    """The verdict of one band at one look: ``(can_stop, text)``.

    Parameters
    ----------
    band : str
        Band name (``"10m"``).
    estimate, cs_low, cs_high : float
        B - A and its confidence sequence now [dB].
    margin_db : float
        Differences smaller than this do not matter [dB] (0: no such rule).
    target_width_db : float, optional
        Stop when the sequence is no wider than this [dB].
    hours_more : float
        From :func:`hours_to_halfwidth` [h].
    reached_cap : bool
        The run has reached its longest planned length.
    too_few : str, optional
        Why there is no sequence yet (few receivers); then keep going.

    Examples
    --------
    >>> stop_verdict("10m", 2.1, 1.2, 3.0)  # doctest: +NORMALIZE_WHITESPACE
    (True, 'B is better on 10 m - you can stop (B-A +2.1 dB, sequence +1.2 to +3.0 dB)')
    >>> print(stop_verdict("20m", 0.1, -0.4, 0.45)[1])  # doctest: +NORMALIZE_WHITESPACE
    no difference larger than 0.5 dB on 20 m - you can stop
    (B-A +0.1 dB, sequence -0.4 to +0.5 dB)
    >>> print(stop_verdict("20m", 0.3, -0.9, 1.5, hours_more=17.2)[1])
    ... # doctest: +NORMALIZE_WHITESPACE
    keep going on 20 m: about 17 more hours at the current rate
    (B-A +0.3 dB, sequence -0.9 to +1.5 dB)
    """
    where = band_text(band)
    if too_few:
        return False, f"keep going on {where}: {too_few}"
    nums = (f"(B-A {_signed(estimate)} dB, sequence {_signed(cs_low)} to "
            f"{_signed(cs_high)} dB)")
    if cs_low > 0:
        return True, f"B is better on {where} - you can stop {nums}"
    if cs_high < 0:
        return True, f"A is better on {where} - you can stop {nums}"
    if margin_db > 0 and cs_low >= -margin_db and cs_high <= margin_db:
        return True, (f"no difference larger than {margin_db:g} dB on {where} - you can stop "
                      f"{nums}")
    if target_width_db is not None and cs_high - cs_low <= target_width_db:
        return True, (f"B-A on {where} is known to within the {target_width_db:g} dB asked "
                      f"for - you can stop {nums}")
    if reached_cap:
        return True, f"no clear answer on {where} by the end of the planned run - stop {nums}"
    if not np.isfinite(hours_more):
        return False, f"keep going on {where}: no answer in sight at the current rate {nums}"
    n = max(1, int(round(float(hours_more))))
    return False, (f"keep going on {where}: about {n} more hour{'s' if n != 1 else ''} "
                   f"at the current rate {nums}")


def needed_halfwidth(estimate, *, margin_db: float = 0.5, target_width_db: float | None = None):
    """Half-width [dB] at which a stop rule would fire if the estimate stayed put: the
    largest of ``|estimate|`` (excludes 0), ``margin - |estimate|`` (within the margin) and
    half the target width.

    Examples
    --------
    >>> float(needed_halfwidth(0.2)), float(needed_halfwidth(1.5, target_width_db=4))
    (0.3, 2.0)
    """
    e = np.abs(np.asarray(estimate, dtype=float))
    need = np.maximum(e, margin_db - e if margin_db > 0 else 0.0)
    if target_width_db is not None:
        need = np.maximum(need, target_width_db / 2)
    return need


__all__ = ["HORIZON_HOURS", "band_text", "hours_to_halfwidth", "stop_verdict",
           "needed_halfwidth"]
