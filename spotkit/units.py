"""Unit conversions: power (dBm, W, mW) and frequency (Hz, kHz, MHz).

Decibels relative to one milliwatt: P[dBm] = 10 log10(P[mW]); 30 dBm = 1 W.
The weak-signal beacon modes report power on a 1-2-5 ladder ending in 0, 3 or 7
(common practice): +3 dB is x1.995, +7 dB is x5.012.
"""
from __future__ import annotations

from typing import Literal

import numpy as np

from spotkit._validate import check_choice

PowerUnit = Literal["dBm", "W", "mW"]
FrequencyUnit = Literal["Hz", "kHz", "MHz"]

POWER_UNITS = ("dBm", "W", "mW")
FREQUENCY_UNITS = ("Hz", "kHz", "MHz")
_FREQ_SCALE = {"Hz": 1.0, "kHz": 1e3, "MHz": 1e6}

#: Reference power for SNR normalisation, dBm (1 W).
REFERENCE_POWER_DBM = 30.0

#: The customary power ladder of beacon reports, dBm: 0..60 ending in 0, 3 or 7
#: (common practice).
POWER_LADDER_DBM = np.array(
    sorted(d for d in range(0, 61) if d % 10 in (0, 3, 7)), dtype=float
)


def dbm_to_watts(dbm):
    """Convert power in dBm to watts: ``10 ** ((dbm - 30) / 10)``."""
    return np.power(10.0, (np.asarray(dbm, dtype=float) - 30.0) / 10.0)


def watts_to_dbm(watts):
    """Convert power in watts to dBm: ``10 log10(W) + 30``; 0 W gives -inf."""
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.asarray(watts, dtype=float)) + 30.0


def milliwatts_to_dbm(mw):
    """Convert power in milliwatts to dBm: ``10 log10(mW)``."""
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.asarray(mw, dtype=float))


def power_to_dbm(values, unit: PowerUnit):
    """Convert power in ``unit`` (one of ``dBm``, ``W``, ``mW``) to dBm."""
    if unit == "dBm":
        return np.asarray(values, dtype=float)
    if unit == "W":
        return watts_to_dbm(values)
    if unit == "mW":
        return milliwatts_to_dbm(values)
    check_choice(unit, POWER_UNITS, "power unit")


def frequency_to_hz(values, unit: FrequencyUnit):
    """Convert frequency in ``unit`` (one of ``Hz``, ``kHz``, ``MHz``) to Hz."""
    scale = _FREQ_SCALE[check_choice(unit, FREQUENCY_UNITS, "frequency unit")]
    return np.asarray(values, dtype=float) * scale


def snr_per_watt(snr_db, power_dbm):
    """SNR normalised to 1 W transmit power, dB: ``snr_db - (power_dbm - 30)``.

    Valid where the receiver's noise is independent of the transmitter: every 10x
    in transmit power is +10 dB of SNR at the same receiver (common practice).
    """
    return np.asarray(snr_db, dtype=float) - (
        np.asarray(power_dbm, dtype=float) - REFERENCE_POWER_DBM
    )
