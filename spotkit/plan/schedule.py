"""Switching schedules for the alternating design: write them, check their balance, expand them.

A switching schedule for the alternating design: one transmitter, antenna A or B in each
slot. Slots are grouped into *blocks* of ``block_slots`` consecutive slots inside one
clock hour; each block holds as many A slots as B slots in a random order (a permuted-block
design, Friedman, Furberg & DeMets 2010, ch. 6). Blocks restart at every clock hour, so
every antenna gets exactly the same number of slots in every clock hour and band; the
last block of an hour is shorter when ``block_slots`` does not divide the slots per hour.
Without band hopping every listed band is on the air in every slot (one transmitter per
band, or a multi-band transmitter) and all bands follow the same antenna sequence, so one
antenna relay can serve all of them. With band hopping one transmitter visits the bands
block by block: each round of blocks visits every band once in a random order, and A and
B of a band stay in neighbouring slots of the same block, where the alternating design
pairs them.

:func:`make_schedule` writes a schedule, :func:`write_schedule` stores it as the CSV file
``spotkit compare --schedule FILE`` reads, :func:`schedule_balance` counts slots per clock
hour, band and antenna, and :func:`expand_schedule` turns a schedule whose rows span several
slots into one row per slot (what :mod:`spotkit.plan.audit` checks a run against).

Known error: none in the balance, which is exact by construction. What a schedule cannot
remove is change within a block (fading, a band opening or closing between the A and the B
slot), which adds noise to every pair; short blocks keep it small. A schedule is a plan:
whether the station followed it is for :func:`spotkit.plan.audit.audit_schedule` to find out.

References
----------
L. M. Friedman, C. D. Furberg, D. L. DeMets, *Fundamentals of Clinical Trials*, 4th ed.,
Springer, 2010, ch. 6 (blocked randomisation) [from memory].
"""
from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_time
from spotkit.bands import BAND_ORDER
from spotkit.compare.pairing import read_schedule
from spotkit.errors import InputError, UsageError

#: Antenna labels used in schedules.
ANTENNAS = ("A", "B")

# Name of this module's own output column (not a spot-table column).
HOUR_UTC = "hour_utc"  # start of a clock hour [UTC]


# ---------------------------------------------------------------------------------------------
# schedules
# ---------------------------------------------------------------------------------------------
def _check_bands(bands) -> list[str]:
    if isinstance(bands, str):
        bands = [b for b in bands.split(",") if b.strip()]
    out = [str(b).strip().lower() for b in bands]
    if not out:
        raise UsageError("give at least one band")
    unknown = [b for b in out if b not in BAND_ORDER]
    if unknown:
        raise UsageError(f"unknown band(s) {', '.join(unknown)}; valid: {', '.join(BAND_ORDER)}")
    if len(set(out)) != len(out):
        raise UsageError(f"a band is listed twice: {', '.join(out)}")
    return out


def slots_per_hour(slot_minutes: int) -> int:
    """Number of slots in a clock hour; raises UsageError unless it is a whole even number.

    An even number of slots per hour is what lets A and B share every hour exactly.

    Examples
    --------
    >>> slots_per_hour(2), slots_per_hour(10)
    (30, 6)
    >>> slots_per_hour(4)
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: slot length 4 min does not split an hour into an even number of
    slots; valid: 1, 2, 3, 5, 6, 10, 15, 30
    """
    valid = [m for m in range(1, 61) if 60 % m == 0 and (60 // m) % 2 == 0]
    if slot_minutes not in valid:
        raise UsageError(
            f"slot length {slot_minutes} min does not split an hour into an even number of "
            f"slots; valid: {', '.join(map(str, valid))}")
    return 60 // slot_minutes


def _balanced_blocks(n_hours: int, per_hour: int, block_slots: int,
                     rng: np.random.Generator, k: int = 2) -> tuple[np.ndarray, np.ndarray]:
    """Antenna (0 = A, 1 = B, ...) and block number of every slot, blocks restarting each
    hour; ``k`` antennas share each block equally (floor or ceiling in a short block)."""
    j = np.tile(np.arange(per_hour), n_hours)
    hour = np.repeat(np.arange(n_hours), per_hour)
    blocks_per_hour = -(-per_hour // block_slots)
    block = hour * blocks_per_hour + j // block_slots
    length = np.minimum(block_slots, per_hour - (j // block_slots) * block_slots)
    key = rng.random(j.size)
    order = np.lexsort((key, block))  # by block, then random key
    rank = np.empty(j.size, dtype=np.int64)
    starts = np.r_[0, np.flatnonzero(np.diff(block[order])) + 1]
    pos = np.arange(j.size) - np.repeat(starts, np.diff(np.r_[starts, j.size]))
    rank[order] = pos
    if k == 2:
        antenna = (rank >= length // 2).astype(np.int8)
    else:
        antenna = (rank * k // length).astype(np.int8)
    return antenna, block


def make_schedule(start, days: float, bands: Sequence[str] | str, *, slot_minutes: int = 2,
                  block_slots: int | None = None, band_hop: bool = False, seed: int = 0,
                  antennas: Sequence[str] | str = ANTENNAS) -> pd.DataFrame:
    """Write a balanced, randomised antenna-switching schedule for the alternating design.

    Parameters
    ----------
    start : str or datetime-like
        First slot [UTC]; must be a whole UTC hour. A time without a zone is taken as UTC.
    days : float
        Length of the run [days]; ``days * 24`` must be a whole number of hours.
    bands : sequence of str or str
        Bands such as ``["20m", "10m"]`` or ``"20m,10m"``.
    slot_minutes : int
        Slot length [min]; the hour must hold an even number of slots (2 is the custom).
    block_slots : int, optional
        Slots per randomisation block [slots], a multiple of the number of antennas (even
        for two; default: the number of antennas): each block holds every antenna equally
        often in a random order. 2 keeps every A slot next to a B slot; with longer blocks
        give the comparison a pairing window of ``block_slots - 1`` slots (``spotkit
        compare --window``), or some A and B slots of a block find no partner.
    band_hop : bool
        False: every band is on the air in every slot, all with the same antenna sequence.
        True: one transmitter visits the bands block by block; each round of blocks visits
        every band once in a random order.
    seed : int
        Seed of the random order; the same seed gives the same schedule.
    antennas : sequence of str or str
        The antenna labels (default A, B; ``"A,B,C"`` for three antennas). With ``k``
        antennas each block of ``k`` slots holds each once in random order; the balance
        per clock hour is exact when ``k`` divides the slots per hour (otherwise the
        hour's last, shorter block gives some antennas one slot more).

    Returns
    -------
    pandas.DataFrame
        One row per slot and band: ``start``, ``end`` [UTC], ``band``, ``antenna`` ("A" or
        "B"), sorted by time and band. Every antenna has the same number of slots in every
        clock hour and band.

    References
    ----------
    Friedman, Furberg & DeMets, *Fundamentals of Clinical Trials*, 4th ed., 2010, ch. 6
    (permuted-block randomisation) [from memory].

    Examples
    --------
    One hour on two bands: 30 slots of 2 minutes, each band in every slot, A and B in
    random order within each block of 2 slots:

    >>> schedule = make_schedule("2024-03-01 10:00", days=1 / 24, bands="20m,10m", seed=1)
    >>> len(schedule)
    60
    >>> print(schedule.head(4).to_string(index=False))
                        start                       end band antenna
    2024-03-01 10:00:00+00:00 2024-03-01 10:02:00+00:00  20m       A
    2024-03-01 10:00:00+00:00 2024-03-01 10:02:00+00:00  10m       A
    2024-03-01 10:02:00+00:00 2024-03-01 10:04:00+00:00  20m       B
    2024-03-01 10:02:00+00:00 2024-03-01 10:04:00+00:00  10m       B

    With band hopping one transmitter visits the bands block by block:

    >>> hop = make_schedule("2024-03-01 10:00", days=2 / 24, bands=["20m", "10m"],
    ...                     band_hop=True, seed=1)
    >>> hop["band"].head(6).tolist(), hop["antenna"].head(6).tolist()
    (['10m', '10m', '20m', '20m', '10m', '10m'], ['A', 'B', 'A', 'B', 'A', 'B'])

    Three antennas, each once in every block of three slots:

    >>> three = make_schedule("2024-03-01 10:00", days=1 / 24, bands="20m", seed=1,
    ...                       antennas="A,B,C")
    >>> three["antenna"].value_counts().sort_index().tolist()
    [10, 10, 10]
    """
    t0 = check_time(start, "start")
    if t0 != t0.floor("h"):
        raise UsageError(f"start {t0.isoformat()} is not on a whole UTC hour; schedules are "
                         "balanced hour by hour, so start on the hour")
    hours_f = float(days) * 24.0
    if not math.isfinite(hours_f):
        raise UsageError(f"days={days} is not a positive whole number of hours")
    n_hours = int(round(hours_f))
    if n_hours < 1 or abs(hours_f - n_hours) > 1e-9:
        raise UsageError(f"days={days} is not a positive whole number of hours")
    band_list = _check_bands(bands)
    per_hour = slots_per_hour(int(slot_minutes))
    labels = [x.strip().upper() for x in (antennas.split(",") if isinstance(antennas, str)
                                          else antennas) if str(x).strip()]
    k = len(labels)
    if k < 2 or len(set(labels)) != k:
        raise UsageError(f"give at least two distinct antenna labels, got {antennas!r}")
    if block_slots is None:
        block_slots = k
    if k == 2 and (int(block_slots) != block_slots or block_slots < 2 or block_slots % 2):
        raise UsageError(f"block_slots={block_slots} must be an even number of slots >= 2")
    if k > 2 and (int(block_slots) != block_slots or block_slots < k or block_slots % k):
        raise UsageError(f"block_slots={block_slots} must be a multiple of the {k} antennas")
    block_slots = int(block_slots)
    rng = np.random.default_rng(seed)
    antenna, block = _balanced_blocks(n_hours, per_hour, block_slots, rng, k)
    names = np.asarray(labels, dtype=object)
    n_slots = antenna.size
    step = pd.Timedelta(minutes=int(slot_minutes))
    starts = t0 + step * np.arange(n_slots)
    if band_hop and len(band_list) > 1:
        nb = len(band_list)
        n_blocks = int(block[-1]) + 1
        rounds = -(-n_blocks // nb)
        perm = rng.permuted(np.tile(np.arange(nb), (rounds, 1)), axis=1).ravel()
        band_idx = perm[block]
        table = pd.DataFrame({
            C.SCHEDULE_START: starts,
            C.BAND: np.asarray(band_list, dtype=object)[band_idx],
            C.ANTENNA: names[antenna],
        })
    else:
        nb = len(band_list)
        table = pd.DataFrame({
            C.SCHEDULE_START: np.repeat(starts, nb),
            C.BAND: np.tile(np.asarray(band_list, dtype=object), n_slots),
            C.ANTENNA: np.repeat(names[antenna], nb),
        })
    table.insert(1, C.SCHEDULE_END, table[C.SCHEDULE_START] + step)
    order = {b: i for i, b in enumerate(BAND_ORDER)}
    table["_b"] = table[C.BAND].map(order)
    table = table.sort_values([C.SCHEDULE_START, "_b"], kind="stable").drop(columns="_b")
    table[C.SCHEDULE_START] = table[C.SCHEDULE_START].astype(C.UTC_DTYPE)
    table[C.SCHEDULE_END] = table[C.SCHEDULE_END].astype(C.UTC_DTYPE)
    return table.reset_index(drop=True)


def write_schedule(schedule: pd.DataFrame, path) -> Path:
    """Write a schedule as CSV: ``start,end,band,antenna`` with ISO 8601 UTC times ("...Z").

    This is the file ``spotkit compare --schedule FILE`` and ``spotkit plan audit`` read.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> schedule = make_schedule("2024-03-01 10:00", days=1 / 24, bands="20m", seed=1)
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = write_schedule(schedule.head(2), pathlib.Path(d) / "schedule.csv")
    ...     print(path.read_text(), end="")
    start,end,band,antenna
    2024-03-01T10:00:00Z,2024-03-01T10:02:00Z,20m,A
    2024-03-01T10:02:00Z,2024-03-01T10:04:00Z,20m,B
    """
    path = Path(path)
    out = pd.DataFrame({
        C.SCHEDULE_START: _iso(schedule[C.SCHEDULE_START]),
        C.SCHEDULE_END: _iso(schedule[C.SCHEDULE_END]),
    })
    if C.BAND in schedule.columns:
        out[C.BAND] = schedule[C.BAND].astype(str).to_numpy()
    out[C.ANTENNA] = schedule[C.ANTENNA].astype(str).to_numpy()
    out.to_csv(path, index=False)
    return path


def _iso(times: pd.Series) -> np.ndarray:
    t = pd.to_datetime(times, utc=True)
    return t.dt.strftime("%Y-%m-%dT%H:%M:%SZ").to_numpy()


def schedule_balance(schedule: pd.DataFrame) -> pd.DataFrame:
    """Slots per clock hour, band and antenna of a schedule.

    Returns
    -------
    pandas.DataFrame
        Index (``hour_utc``: start of the clock hour [UTC], ``band``), columns ``A`` and
        ``B`` [slots].

    Examples
    --------
    Two hours of band hopping: each band gets as many A as B slots in every hour:

    >>> hop = make_schedule("2024-03-01 10:00", days=2 / 24, bands=["20m", "10m"],
    ...                     band_hop=True, seed=1)
    >>> balance = schedule_balance(hop)
    >>> [(str(h.time()), band) for h, band in balance.index], balance.to_numpy().tolist()
    ([('10:00:00', '10m'), ('10:00:00', '20m'), ('11:00:00', '10m'), ('11:00:00', '20m')],
     [[8, 8], [7, 7], [7, 7], [8, 8]])
    """
    hour = pd.to_datetime(schedule[C.SCHEDULE_START], utc=True).dt.floor("h")
    keys = [hour.rename(HOUR_UTC)]
    if C.BAND in schedule.columns:
        keys.append(schedule[C.BAND].astype(str).rename(C.BAND))
    counts = schedule.groupby(keys + [schedule[C.ANTENNA].astype(str)]).size()
    labels = sorted(set(ANTENNAS) | set(counts.index.get_level_values(-1)))
    return counts.unstack(C.ANTENNA, fill_value=0).reindex(columns=labels, fill_value=0)


def expand_schedule(schedule: pd.DataFrame, slot_minutes: int = C.SLOT_MINUTES) -> pd.DataFrame:
    """One row per slot (and band) of a schedule whose rows may span several slots.

    Parameters
    ----------
    schedule : pandas.DataFrame, str or pathlib.Path
        ``start``, ``end`` [UTC], ``antenna`` ("A"/"B"), optional ``band``; intervals are
        [start, end). A path is read with :func:`spotkit.compare.pairing.read_schedule`.
    slot_minutes : int
        Slot length [min].

    Returns
    -------
    pandas.DataFrame
        ``slot_utc``, ``antenna`` and ``band`` when the schedule has one.

    Examples
    --------
    >>> rows = pd.DataFrame({"start": ["2024-03-01 10:00", "2024-03-01 10:06"],
    ...                      "end": ["2024-03-01 10:06", "2024-03-01 10:08"],
    ...                      "antenna": ["A", "B"]})
    >>> print(expand_schedule(rows).to_string(index=False))
                     slot_utc antenna
    2024-03-01 10:00:00+00:00       A
    2024-03-01 10:02:00+00:00       A
    2024-03-01 10:04:00+00:00       A
    2024-03-01 10:06:00+00:00       B
    """
    schedule = read_schedule(schedule)  # validates columns, times, antennas, overlaps
    start = schedule[C.SCHEDULE_START]
    end = schedule[C.SCHEDULE_END]
    ant = schedule[C.ANTENNA]
    step = pd.Timedelta(minutes=slot_minutes)
    n = np.ceil((end - start) / step).astype("int64").to_numpy()
    idx = np.repeat(np.arange(len(schedule)), n)
    k = np.arange(idx.size) - np.repeat(np.cumsum(n) - n, n)
    slot = pd.DatetimeIndex(start).take(idx) + pd.to_timedelta(k * slot_minutes, unit="min")
    out = pd.DataFrame({C.SLOT: slot.astype(C.UTC_DTYPE)})
    if C.BAND in schedule.columns:
        out[C.BAND] = schedule[C.BAND].astype(str).str.strip().str.lower().to_numpy()[idx]
    out[C.ANTENNA] = ant.to_numpy()[idx]
    keys = [C.SLOT, C.BAND] if C.BAND in out.columns else [C.SLOT]
    dup = out.duplicated(keys, keep=False)
    if dup.any():
        row = out[dup].iloc[0]
        raise InputError(f"schedule gives slot {row[C.SLOT].isoformat()} twice")
    return out


__all__ = ["ANTENNAS", "HOUR_UTC", "slots_per_hour", "make_schedule", "write_schedule",
           "schedule_balance", "expand_schedule"]
