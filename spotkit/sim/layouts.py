"""Spot tables written as CSV in invented foreign layouts, for tests of the readers.

:func:`write_foreign_csv` writes a canonical spot table with other headings (or none),
delimiters, units (kHz / MHz, W / mW) and time formats (epoch seconds, ISO 8601, plain
date and time), optionally with duplicate uploads and corrupted rows, and returns the
mapping and units the ingest needs to read it back (:data:`LAYOUTS` lists the layouts).

Known error: frequencies are written with the layout's decimals (1 Hz at worst) and powers
in W or mW with 6 significant digits (within 1e-4 dB of the dBm value); nothing else is
rounded beyond the canonical table's own whole-dB SNR.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_choice
from spotkit.errors import UsageError

#: Invented CSV layouts: delimiter, heading line (None: none), time format ("epoch" or a
#: strftime format), frequency unit and decimals, power unit. Field order is always time,
#: tx call, tx locator, rx call, rx locator, frequency, SNR, power, drift.
LAYOUTS = {
    "comma": dict(sep=",", time="%Y-%m-%d %H:%M", freq=("MHz", 6), power="dBm",
                  headings=["Time UTC", "Tx Call", "Tx Grid", "Rx Call", "Rx Grid",
                            "Freq MHz", "SNR dB", "Power dBm", "Drift"]),
    "semicolon": dict(sep=";", time="epoch", freq=("kHz", 3), power="W",
                      headings=["t_epoch", "origin", "origin_sq", "hearer", "hearer_sq",
                                "khz", "s_n", "watts", "dr"]),
    "tab": dict(sep="\t", time="%Y-%m-%dT%H:%M:%SZ", freq=("Hz", 0), power="mW",
                headings=["timestamp", "sender callsign", "sender locator",
                          "reporter callsign", "reporter locator", "frequency hz", "snr",
                          "power mw", "drift"]),
    "space": dict(sep=" ", time="epoch", freq=("MHz", 6), power="dBm", headings=None),
    "canonical": dict(sep=",", time="%Y-%m-%dT%H:%M:%SZ", freq=("Hz", 0), power="dBm",
                      headings=list(C.INPUT_FIELDS)),
}
_LAYOUT_FIELDS = ["time", "tx_call", "tx_locator", "rx_call", "rx_locator", "frequency",
                  "snr", "power", "drift"]
# (field position, junk) written into corrupted rows; each makes the row unusable
_JUNK = [(0, "yesterday"), (1, ""), (2, "ZZ99"), (4, "AB1"), (5, "abc"), (6, "n/a"),
         (7, "-5"), (5, "1.0")]


def _fmt(values, spec):
    return np.char.mod(spec, np.asarray(values, dtype=float)).astype(object)


def _spoil(table: np.ndarray, rng, duplicates: float, corrupt: int, junk_list) -> np.ndarray:
    """``corrupt`` rows with one cell replaced by junk, then a share ``duplicates`` of the
    clean rows uploaded again a little later in the table."""
    n = table.shape[0]
    if corrupt:
        rows = rng.choice(n, size=min(int(corrupt), n), replace=False)
        junk = rng.integers(0, len(junk_list), rows.size)
        for r, j in zip(rows, junk, strict=True):
            table[r, junk_list[j][0]] = junk_list[j][1]
        clean = np.setdiff1d(np.arange(n), rows)
    else:
        clean = np.arange(n)
    n_dup = int(round(duplicates * n))
    if n_dup and clean.size:
        src = rng.choice(clean, size=min(n_dup, clean.size), replace=False)
        key = np.concatenate([np.arange(n), src + rng.integers(1, 30, src.size) + 0.5])
        order = np.argsort(key, kind="stable")
        table = np.concatenate([table, table[src]])[order]
    return table


def write_foreign_csv(spots: pd.DataFrame, path, layout: str = "comma", *,
                      duplicates: float = 0.0, corrupt: int = 0, seed: int = 0):
    """Write a spot table as CSV in one of several invented layouts (:data:`LAYOUTS`).

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table (as from :func:`simulate_spots`).
    path : str or path-like
        Output file; a ``.gz`` suffix compresses with gzip.
    layout : {"comma", "semicolon", "tab", "space", "canonical"}
        ``comma``: ``YYYY-MM-DD HH:MM`` times, MHz, dBm; ``semicolon``: epoch seconds, kHz,
        W, headings the reader cannot guess; ``tab``: ISO 8601 with Z, Hz, mW; ``space``:
        no heading line, epoch seconds, MHz, dBm; ``canonical``: glossary names.
    duplicates : float
        Fraction of rows uploaded twice, 0 to 1 (the copy follows a little later in the
        file).
    corrupt : int
        Number of rows (0 or more) with one field replaced by junk (bad time, empty call,
        bad locator, non-numeric frequency or SNR, power out of range, frequency out of
        band); never duplicated.
    seed : int
        Seed for choosing duplicated and corrupted rows.

    Returns
    -------
    mapping : dict
        Field (CLI name) -> heading or 1-based column position, for ``read_spots``.
    units : dict
        Field -> unit (``time``: iso|epoch, ``frequency``: Hz|kHz|MHz, ``power``:
        dBm|W|mW), for ``read_spots``.
    """
    check_choice(layout, tuple(LAYOUTS), "layout")
    if not 0.0 <= duplicates <= 1.0:
        raise UsageError(f"duplicates must be a fraction from 0 to 1, got {duplicates}")
    if int(corrupt) != corrupt or corrupt < 0:
        raise UsageError(f"corrupt must be a whole number of rows, 0 or more, got {corrupt}")
    lay = LAYOUTS[layout]
    rng = np.random.default_rng(seed)
    n = len(spots)
    slot = pd.DatetimeIndex(spots[C.SLOT])
    if lay["time"] == "epoch":
        t = (slot.as_unit("ns").asi8 // 10**9).astype(str).astype(object)
    else:
        t = np.asarray(slot.strftime(lay["time"]), dtype=object)
    funit, dec = lay["freq"]
    f = spots[C.FREQ].to_numpy(float) / {"Hz": 1.0, "kHz": 1e3, "MHz": 1e6}[funit]
    pw = spots[C.POWER].to_numpy(float)
    if lay["power"] == "dBm":
        p = _fmt(pw, "%.0f")
    else:
        p = _fmt(10.0 ** ((pw - 30.0) / 10.0) * (1.0 if lay["power"] == "W" else 1e3), "%.6g")
    cols = [t, spots[C.TX_CALL].astype(str).to_numpy(object),
            spots[C.TX_LOCATOR].astype(str).to_numpy(object),
            spots[C.RX_CALL].astype(str).to_numpy(object),
            spots[C.RX_LOCATOR].astype(str).to_numpy(object), _fmt(f, f"%.{dec}f"),
            _fmt(spots[C.SNR], "%.0f"), p, _fmt(spots[C.DRIFT].fillna(0.0), "%.0f")]
    table = np.column_stack(cols) if n else np.empty((0, 9), dtype=object)
    table = _spoil(table, rng, duplicates, corrupt, _JUNK)
    out = pd.DataFrame(table, columns=lay["headings"] or list(range(9)))
    gz = str(path).endswith(".gz")
    out.to_csv(path, sep=lay["sep"], index=False, header=lay["headings"] is not None,
               compression={"method": "gzip", "mtime": 0} if gz else None,
               lineterminator="\n")
    if lay["headings"] is None:
        mapping = {k: i + 1 for i, k in enumerate(_LAYOUT_FIELDS)}
    else:
        mapping = dict(zip(_LAYOUT_FIELDS, lay["headings"], strict=True))
    units = {"time": "epoch" if lay["time"] == "epoch" else "iso", "frequency": funit,
             "power": lay["power"]}
    return mapping, units


# --- the files users have (issue 17) ----------------------------------------------------------
#: Invented layouts of files users have: ``decode-log``, one receiver's own log (blank
#: delimited, date and HHMM clock in two columns, no receiver columns, an extra column of
#: time offsets, headings the reader cannot map: the receiver is given with ``constants``
#: and the columns with ``mapping``); ``day-first``, a spreadsheet export (semicolons,
#: decimal commas, ``DD.MM.YYYY HH:MM``, powers in W); ``xlsx``, a workbook with
#: date-and-time cells and number cells (frequency in kHz).
USER_LAYOUTS = {
    "decode-log": dict(headings=["day", "hhmm", "snr", "dt", "freq", "drift", "call", "grid",
                                 "pwr"]),
    "day-first": dict(headings=["Date time UTC", "Transmitter", "Transmitter locator",
                                "Receiver", "Receiver locator", "MHz", "S/N dB", "Power W",
                                "Drift"]),
    "xlsx": dict(headings=["Time (UTC)", "Sender", "Sender locator", "Reporter",
                           "Reporter locator", "Frequency kHz", "SNR", "Power dBm", "Drift"]),
}
# (position in the canonical order of _LAYOUT_FIELDS, junk); each makes the row unusable
_USER_JUNK = [(0, "yesterday"), (1, ""), (2, "ZZ99"), (5, "abc"), (6, "n/a"), (7, "-5")]
# blank-delimited: no empty cells (a field would be lost)
_LOG_JUNK = [(0, "yesterday"), (1, "?"), (2, "ZZ99"), (5, "abc"), (6, "n/a"), (7, "-5")]


def write_user_file(spots: pd.DataFrame, path, layout: str = "decode-log", *,
                    duplicates: float = 0.0, corrupt: int = 0, seed: int = 0) -> dict:
    """Write a spot table as a file of one of :data:`USER_LAYOUTS`.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table; for ``decode-log`` the reports of one receiver only (its
        call and locator are not written: they are returned as ``constants``).
    path : str or path-like
        Output file (``.xlsx`` for the ``xlsx`` layout, which needs openpyxl).
    layout : {"decode-log", "day-first", "xlsx"}
        See :data:`USER_LAYOUTS`.
    duplicates, corrupt, seed
        As :func:`write_foreign_csv` (junk: bad time, empty call, bad locator,
        non-numeric frequency or SNR, power out of range).

    Returns
    -------
    dict
        Keywords of :func:`spotkit.io.ingest.read_spots` that read the file back:
        ``mapping``, ``units``, ``constants`` and ``date_order``.

    Raises
    ------
    UsageError
        Unknown layout, bad ``duplicates`` or ``corrupt``, or a decode log asked of the
        reports of more than one receiver.
    """
    check_choice(layout, tuple(USER_LAYOUTS), "layout")
    if not 0.0 <= duplicates <= 1.0:
        raise UsageError(f"duplicates must be a fraction from 0 to 1, got {duplicates}")
    if int(corrupt) != corrupt or corrupt < 0:
        raise UsageError(f"corrupt must be a whole number of rows, 0 or more, got {corrupt}")
    rng = np.random.default_rng(seed)
    n = len(spots)
    slot = pd.DatetimeIndex(spots[C.SLOT]).tz_convert("UTC")
    heads = USER_LAYOUTS[layout]["headings"]
    text = {f: spots[c].astype(str).to_numpy(object) for f, c in (
        ("tx_call", C.TX_CALL), ("tx_locator", C.TX_LOCATOR), ("rx_call", C.RX_CALL),
        ("rx_locator", C.RX_LOCATOR))}
    hz = spots[C.FREQ].to_numpy(float)
    pw = spots[C.POWER].to_numpy(float)
    snr, drift = _fmt(spots[C.SNR], "%.0f"), _fmt(spots[C.DRIFT].fillna(0.0), "%.0f")
    if layout == "decode-log":
        calls = np.unique(text["rx_call"])
        if calls.size > 1:
            raise UsageError(f"a decode log holds one receiver's reports; got {calls.size} "
                             "receivers: write one file per receiver")
        time = np.asarray(slot.strftime("%Y-%m-%d %H%M"), dtype=object)
        canon = [time, text["tx_call"], text["tx_locator"], text["rx_call"],
                 text["rx_locator"], _fmt(hz / 1e6, "%.6f"), snr, _fmt(pw, "%.0f"), drift]
        table = _spoil(np.column_stack(canon) if n else np.empty((0, 9), dtype=object),
                       rng, duplicates, corrupt, _LOG_JUNK)
        dt = _fmt(rng.normal(0.0, 0.4, table.shape[0]), "%.1f")
        parts = pd.Series(table[:, 0], dtype="str").str.split(" ", n=1, expand=True)
        day = parts[0].to_numpy(object) if n else np.empty(0, dtype=object)
        clock = (parts[1].fillna("0000").to_numpy(object) if parts.shape[1] > 1
                 else np.full(len(day), "0000", dtype=object))
        out = pd.DataFrame({heads[0]: day, heads[1]: clock, heads[2]: table[:, 6],
                            heads[3]: dt, heads[4]: table[:, 5], heads[5]: table[:, 8],
                            heads[6]: table[:, 1], heads[7]: table[:, 2],
                            heads[8]: table[:, 7]})
        out.to_csv(path, sep=" ", index=False, lineterminator="\n")
        first = spots.iloc[0] if n else None
        return dict(mapping={"time": "day+hhmm", "tx_call": "call", "tx_locator": "grid",
                             "frequency": "freq", "snr": "snr", "power": "pwr",
                             "drift": "drift"},
                    units={"frequency": "MHz", "power": "dBm"},
                    constants={} if first is None else {
                        "rx_call": str(first[C.RX_CALL]),
                        "rx_locator": str(first[C.RX_LOCATOR])},
                    date_order=None)
    if layout == "day-first":
        time = np.asarray(slot.strftime("%d.%m.%Y %H:%M"), dtype=object)
        watts = 10.0 ** ((pw - 30.0) / 10.0)
        canon = [time, text["tx_call"], text["tx_locator"], text["rx_call"],
                 text["rx_locator"], np.char.replace(_fmt(hz / 1e6, "%.6f").astype(str), ".",
                                                     ",").astype(object),
                 snr, np.char.replace(_fmt(watts, "%.6g").astype(str), ".", ",").astype(object),
                 drift]
        table = _spoil(np.column_stack(canon) if n else np.empty((0, 9), dtype=object),
                       rng, duplicates, corrupt, _USER_JUNK)
        pd.DataFrame(table, columns=heads).to_csv(path, sep=";", index=False,
                                                  lineterminator="\n")
        return dict(mapping={}, units={"frequency": "MHz", "power": "W"}, constants={},
                    date_order="dmy")
    # xlsx: date-and-time cells, number cells
    canon = [np.asarray(slot.tz_localize(None).to_pydatetime(), dtype=object),
             text["tx_call"], text["tx_locator"], text["rx_call"], text["rx_locator"],
             (hz / 1e3).astype(object), spots[C.SNR].to_numpy(float).astype(object),
             pw.astype(object), spots[C.DRIFT].fillna(0.0).to_numpy(float).astype(object)]
    table = _spoil(np.column_stack(canon) if n else np.empty((0, 9), dtype=object),
                   rng, duplicates, corrupt, _USER_JUNK)
    pd.DataFrame(table, columns=heads).to_excel(path, index=False, engine="openpyxl")
    return dict(mapping={}, units={"frequency": "kHz", "power": "dBm"}, constants={},
                date_order=None)


__all__ = ["LAYOUTS", "USER_LAYOUTS", "write_foreign_csv", "write_user_file"]
