"""Unit conversions: power (dBm, W, mW), frequency (Hz, kHz, MHz) and epoch times.

Decibels relative to one milliwatt: P[dBm] = 10 log10(P[mW]); 30 dBm = 1 W.
The weak-signal beacon modes report power on a 1-2-5 ladder ending in 0, 3 or 7
(common practice): +3 dB is x1.995, +7 dB is x5.012.

Times are ISO 8601 text or a count since 1970-01-01 00:00 UTC (Unix epoch, leap seconds
not counted) in seconds or milliseconds; which one is told by magnitude
(:func:`infer_epoch_unit`): the report times spotkit accepts (1990 to 2100) are 6.3e8 to
4.1e9 in seconds and 6.3e11 to 4.1e12 in milliseconds, three orders of magnitude apart.
"""
from __future__ import annotations

from typing import Literal

import numpy as np

from spotkit._validate import check_choice

PowerUnit = Literal["dBm", "W", "mW"]
FrequencyUnit = Literal["Hz", "kHz", "MHz"]

POWER_UNITS = ("dBm", "W", "mW")
FREQUENCY_UNITS = ("Hz", "kHz", "MHz")
#: Time units: ISO 8601 text, epoch seconds, epoch milliseconds; ``epoch`` is kept as
#: another name for ``epoch-s``.
TIME_UNITS = ("iso", "epoch-s", "epoch-ms", "epoch")
TimeUnit = Literal["iso", "epoch-s", "epoch-ms", "epoch"]
_EPOCH_SCALE = {"epoch": 1.0, "epoch-s": 1.0, "epoch-ms": 1e-3}
#: Epoch seconds of the times accepted in reports, 1990-01-01 to 2100-01-01 UTC.
EPOCH_RANGE_S = (631_152_000.0, 4_102_444_800.0)
_FREQ_SCALE = {"Hz": 1.0, "kHz": 1e3, "MHz": 1e6}

#: Reference power for SNR normalisation, dBm (1 W).
REFERENCE_POWER_DBM = 30.0

#: The customary power ladder of beacon reports, dBm: 0..60 ending in 0, 3 or 7
#: (common practice).
POWER_LADDER_DBM = np.array(
    sorted(d for d in range(0, 61) if d % 10 in (0, 3, 7)), dtype=float
)


def dbm_to_watts(dbm):
    """Convert power in dBm to watts: ``10 ** ((dbm - 30) / 10)``.

    Examples
    --------
    30 dBm is 1 W and 0 dBm is 1 mW (definition of the dBm):

    >>> float(dbm_to_watts(30))
    1.0
    >>> dbm_to_watts([0, 23, 37]).round(3).tolist()
    [0.001, 0.2, 5.012]
    """
    return np.power(10.0, (np.asarray(dbm, dtype=float) - 30.0) / 10.0)


def watts_to_dbm(watts):
    """Convert power in watts to dBm: ``10 log10(W) + 30``; 0 W gives -inf.

    Examples
    --------
    1 W is 30 dBm (definition of the dBm):

    >>> watts_to_dbm([1, 5, 0]).round(2).tolist()
    [30.0, 36.99, -inf]
    """
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.asarray(watts, dtype=float)) + 30.0


def milliwatts_to_dbm(mw):
    """Convert power in milliwatts to dBm: ``10 log10(mW)``.

    Examples
    --------
    1 mW is 0 dBm (definition of the dBm):

    >>> milliwatts_to_dbm([1, 200]).round(2).tolist()
    [0.0, 23.01]
    """
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.asarray(mw, dtype=float))


def power_to_dbm(values, unit: PowerUnit):
    """Convert power in ``unit`` (one of ``dBm``, ``W``, ``mW``) to dBm.

    Examples
    --------
    >>> power_to_dbm([0.2, 5], "W").round(2).tolist()
    [23.01, 36.99]
    >>> power_to_dbm([37], "dBm").tolist()
    [37.0]
    >>> power_to_dbm([1], "kW")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: unknown power unit 'kW'; valid: dBm, W, mW
    """
    if unit == "dBm":
        return np.asarray(values, dtype=float)
    if unit == "W":
        return watts_to_dbm(values)
    if unit == "mW":
        return milliwatts_to_dbm(values)
    check_choice(unit, POWER_UNITS, "power unit")


def frequency_to_hz(values, unit: FrequencyUnit):
    """Convert frequency in ``unit`` (one of ``Hz``, ``kHz``, ``MHz``) to Hz.

    Examples
    --------
    >>> frequency_to_hz([14.0971, 7.0401], "MHz").tolist()
    [14097100.0, 7040100.0]
    >>> float(frequency_to_hz(1838.1, "kHz"))
    1838100.0
    """
    scale = _FREQ_SCALE[check_choice(unit, FREQUENCY_UNITS, "frequency unit")]
    return np.asarray(values, dtype=float) * scale


def snr_per_watt(snr_db, power_dbm):
    """SNR normalised to 1 W transmit power, dB: ``snr_db - (power_dbm - 30)``.

    Valid where the receiver's noise is independent of the transmitter: every 10x
    in transmit power is +10 dB of SNR at the same receiver (common practice).

    Examples
    --------
    A spot heard at -15 dB from a 5 W (37 dBm) transmitter is -22 dB per watt:

    >>> float(snr_per_watt(-15, 37))
    -22.0
    >>> snr_per_watt([-20, -20], [30, 23]).tolist()
    [-20.0, -13.0]
    """
    return np.asarray(snr_db, dtype=float) - (
        np.asarray(power_dbm, dtype=float) - REFERENCE_POWER_DBM
    )


def epoch_to_seconds(values, unit: TimeUnit):
    """Convert epoch counts in ``unit`` (``epoch-s``, ``epoch-ms`` or ``epoch``, which is
    seconds) to seconds since 1970-01-01 UTC.

    Examples
    --------
    >>> epoch_to_seconds([1772359200000], "epoch-ms").tolist()
    [1772359200.0]
    >>> epoch_to_seconds([1772359200], "epoch").tolist()
    [1772359200.0]
    """
    scale = _EPOCH_SCALE[check_choice(unit, tuple(_EPOCH_SCALE), "epoch time unit")]
    return np.asarray(values, dtype=float) * scale


def infer_epoch_unit(values) -> str:
    """``"epoch-s"`` or ``"epoch-ms"``: the unit that puts more of ``values`` between
    1990 and 2100 (:data:`EPOCH_RANGE_S`); seconds when neither puts any there.

    Examples
    --------
    2026-03-01 10:00 UTC is 1772359200 s after 1970 (``datetime.datetime(2026, 3, 1, 10,
    tzinfo=datetime.UTC).timestamp()``):

    >>> infer_epoch_unit([1772359200, 1772359320])
    'epoch-s'
    >>> infer_epoch_unit([1772359200000, 1772359320000])
    'epoch-ms'
    """
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    lo, hi = EPOCH_RANGE_S
    share = {u: float(np.mean((v * k >= lo) & (v * k < hi))) if v.size else 0.0
             for u, k in (("epoch-s", 1.0), ("epoch-ms", 1e-3))}
    return "epoch-ms" if share["epoch-ms"] > share["epoch-s"] else "epoch-s"
