"""Audit of a finished alternating run against its switching schedule.

Compares the reports of a finished run with its schedule: reports in slots or bands the
schedule did not have the station on ("off schedule"), scheduled slots with no report at
all ("gap"), slots whose reported power says the other antenna was connected ("wrong
antenna", when the two antennas were run at different powers), and clock hours in which
only one antenna was heard. What this costs is measured by effective pairs: in a clock
hour and band with ``nA`` usable A slots and ``nB`` usable B slots a difference of means
has the variance of ``2 nA nB / (nA + nB)`` balanced pairs; the audit sums that over hours
and bands and sets it beside the planned ``n / 2``.

Known error: a gap (a scheduled slot nobody reported) cannot be told apart from a closed
band or a transmitter on another band; a wrong antenna is seen only when the two antennas ran
at different powers, and a slot counts by the most common power reported in it. Effective
pairs count slots, not reports, so the growth of the comparison's standard error they imply
is approximate.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit._validate import check_choice
from spotkit.bands import sort_bands
from spotkit.errors import InputError, UsageError
from spotkit.plan.schedule import HOUR_UTC, expand_schedule
from spotkit.units import POWER_LADDER_DBM

Marker = Literal["power", "none"]
MARKERS = ("power", "none")

#: Slot statuses the audit assigns.
SLOT_OK, SLOT_GAP, SLOT_WRONG, SLOT_UNKNOWN = "ok", "gap", "wrong_antenna", "unknown_power"
#: Reasons for reports outside the schedule.
OFF_NOT_SCHEDULED, OFF_WRONG_BAND = "not scheduled", "band not scheduled in this slot"

# Names of this module's own output columns (plan and audit tables, not spot-table columns).
# (HOUR_UTC, the start of a clock hour [UTC], lives in spotkit.schedule.)
STATUS = "status"
ACTUAL_ANTENNA = "actual_antenna"
SLOTS_A, SLOTS_B = "slots_a", "slots_b"
USABLE_A, USABLE_B = "usable_a", "usable_b"
EFF_PLANNED, EFF_ACTUAL = "effective_pairs_planned", "effective_pairs"
IMBALANCE = "imbalance"
ONE_ANTENNA = "one_antenna"
DETAIL = "detail"
#: Kinds of audit finding (the KIND column of :meth:`AuditResult.to_frame`).
FINDINGS = ("gap", "wrong_antenna", "unknown_power", "off_schedule", "one_antenna_hour")


# ---------------------------------------------------------------------------------------------
# audit of a finished run
# ---------------------------------------------------------------------------------------------


def _effective_pairs(a, b) -> np.ndarray:
    """Balanced pairs with the variance of a difference of means of a and b observations."""
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    tot = a + b
    return np.divide(2 * a * b, tot, out=np.zeros_like(tot), where=tot > 0)


@dataclass
class AuditResult:
    """What :func:`audit_schedule` found.

    Attributes
    ----------
    summary : dict
        Counts and effective pairs (see :func:`audit_schedule`).
    slots : pandas.DataFrame
        One row per scheduled slot and band: ``slot_utc``, ``band``, ``antenna`` (scheduled),
        ``count`` (reports), ``power_dbm`` (most common reported power), ``status``
        (ok / gap / wrong_antenna / unknown_power), ``actual_antenna``.
    hours : pandas.DataFrame
        One row per clock hour and band: ``hour_utc``, ``band``, ``slots_a``, ``slots_b``
        (scheduled), ``usable_a``, ``usable_b`` (slots with reports agreeing with the schedule),
        ``effective_pairs_planned``, ``effective_pairs``, ``imbalance``
        (``(usable_a - usable_b) / (usable_a + usable_b)``, NaN when both are 0),
        ``one_antenna``.
    off_schedule : pandas.DataFrame
        The station's reports in slots or bands the schedule does not have, with ``reason``.
    """

    call: str
    summary: dict
    slots: pd.DataFrame
    hours: pd.DataFrame
    off_schedule: pd.DataFrame
    markers: dict | None = None
    notes: list = field(default_factory=list)

    def to_frame(self) -> pd.DataFrame:
        """Every finding, one row each: ``kind`` (see :data:`FINDINGS`), ``slot_utc`` (slot or
        hour start), ``band``, ``antenna`` (scheduled), ``count`` (reports), ``detail``."""
        s = self.slots[self.slots[STATUS] != SLOT_OK]
        parts = [pd.DataFrame({
            C.KIND: s[STATUS].to_numpy(), C.SLOT: s[C.SLOT].to_numpy(),
            C.BAND: s[C.BAND].to_numpy(), C.ANTENNA: s[C.ANTENNA].to_numpy(),
            C.COUNT: s[C.COUNT].to_numpy(),
            DETAIL: np.where(s[STATUS] == SLOT_GAP, "no report at all",
                             "reported power " + s[C.POWER].map("{:g} dBm".format)
                             .astype(str).to_numpy()),
        })]
        off = self.off_schedule
        if len(off):
            g = off.groupby([C.SLOT, C.BAND, C.REJECT_REASON], observed=True).size()
            g = g.rename(C.COUNT).reset_index()
            parts.append(pd.DataFrame({
                C.KIND: "off_schedule", C.SLOT: g[C.SLOT].to_numpy(),
                C.BAND: g[C.BAND].astype(str).to_numpy(), C.ANTENNA: "",
                C.COUNT: g[C.COUNT].to_numpy(), DETAIL: g[C.REJECT_REASON].to_numpy()}))
        h = self.hours[self.hours[ONE_ANTENNA]]
        if len(h):
            only = np.where(h[USABLE_A] > 0, "A", "B")
            parts.append(pd.DataFrame({
                C.KIND: "one_antenna_hour", C.SLOT: h[HOUR_UTC].to_numpy(),
                C.BAND: h[C.BAND].to_numpy(), C.ANTENNA: only,
                C.COUNT: (h[USABLE_A] + h[USABLE_B]).to_numpy(),
                DETAIL: "only antenna " + pd.Series(only) + " usable in this hour"}))
        out = pd.concat([p for p in parts if len(p)], ignore_index=True) if any(
            len(p) for p in parts) else parts[0]
        out[C.SLOT] = pd.to_datetime(out[C.SLOT], utc=True)
        return out.sort_values([C.SLOT, C.BAND, C.KIND], kind="stable").reset_index(drop=True)

    @property
    def text(self) -> str:
        """A plain-language account of the audit."""
        s = self.summary
        lines = [
            f"Schedule audit for {self.call}: {s['slots_scheduled']:,} scheduled slots "
            f"(slot x band), {s['reports']:,} reports of the station.",
            f"  slots as planned:            {s['slots_ok']:,}",
            f"  gaps (no report at all):     {s['gaps']:,}",
            f"  wrong antenna (power says):  {s['wrong_antenna']:,}",
            f"  power matches neither:       {s['unknown_power']:,}",
            f"  reports off the schedule:    {s['off_schedule_reports']:,} "
            f"in {s['off_schedule_slots']:,} slots",
            f"  hours with one antenna only: {s['hours_one_antenna']:,} of {s['hours']:,} "
            f"(hour x band); silent: {s['hours_silent']:,}",
            f"  effective pairs: {s['effective_pairs']:.1f} of {s['effective_pairs_planned']:.1f} "
            f"planned ({100 * s['efficiency']:.1f} %); the comparison's standard error grows "
            f"by about x{s['se_inflation']:.2f}.",
        ]
        lines += [f"  note: {n}" for n in self.notes]
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.text

    def corrected_schedule(self) -> pd.DataFrame:
        """The schedule as the power markers say it ran: one row per slot, ``start``, ``end``,
        ``band``, ``antenna``; gaps kept as scheduled, slots whose power matched neither
        antenna left out."""
        s = self.slots[self.slots[STATUS] != SLOT_UNKNOWN]
        step = pd.Timedelta(minutes=self.summary["slot_minutes"])
        return pd.DataFrame({C.SCHEDULE_START: s[C.SLOT].to_numpy(),
                             C.SCHEDULE_END: (s[C.SLOT] + step).to_numpy(),
                             C.BAND: s[C.BAND].to_numpy(),
                             C.ANTENNA: s[ACTUAL_ANTENNA].to_numpy()}).reset_index(drop=True)


def _modal(values: pd.Series, keys: list[pd.Series]) -> pd.Series:
    """Most common value per group (ties: the smallest)."""
    df = pd.DataFrame({f"k{i}": k.to_numpy() for i, k in enumerate(keys)})
    df["v"] = values.to_numpy()
    names = [f"k{i}" for i in range(len(keys))]
    cnt = df.groupby(names + ["v"], observed=True).size().rename("n").reset_index()
    cnt = cnt.sort_values(names + ["n", "v"], ascending=[True] * len(names) + [False, True])
    return cnt.drop_duplicates(names).set_index(names)["v"]


def audit_schedule(spots: pd.DataFrame, schedule: pd.DataFrame, call: str, *,
                   marker: Marker = "power", power_a_dbm: float | None = None,
                   power_b_dbm: float | None = None,
                   slot_minutes: int = C.SLOT_MINUTES) -> AuditResult:
    """Check whether a finished alternating run followed its schedule, and what lapses cost.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical spot table (needs ``slot_utc``, ``tx_call``, ``band``, ``power_dbm``).
    schedule : pandas.DataFrame, str or pathlib.Path
        ``start``, ``end``, ``antenna`` and optionally ``band`` (as from
        :func:`spotkit.plan.schedule.make_schedule` or the CSV file
        :func:`spotkit.plan.schedule.write_schedule` writes). Without a band column the schedule
        applies to every band the station was heard on.
    call : str
        The transmitting station's callsign (case-insensitive).
    marker : {"power", "none"}
        "power": the two antennas were run at different transmit powers, so a report's power
        tells which antenna was connected. The powers are ``power_a_dbm`` / ``power_b_dbm``
        or, when not given, the most common power in each antenna's scheduled slots (when
        these are equal the check is skipped and a note says so). "none": no check.
    power_a_dbm, power_b_dbm : float, optional
        Transmit power used with each antenna [dBm].
    slot_minutes : int
        Slot length [min].

    Returns
    -------
    AuditResult
        ``summary`` keys: ``slots_scheduled``, ``slots_ok``, ``gaps``, ``wrong_antenna``,
        ``unknown_power``, ``reports``, ``off_schedule_reports``, ``off_schedule_slots``,
        ``hours``, ``hours_one_antenna``, ``hours_silent``, ``effective_pairs_planned``,
        ``effective_pairs`` (sum over clock hour x band of ``2 nA nB / (nA + nB)`` with
        scheduled resp. usable slot counts), ``efficiency`` (their ratio), ``se_inflation``
        (``efficiency ** -0.5``), ``slot_minutes``.

    Notes
    -----
    A gap is a scheduled slot with no report from anyone: the transmitter was off, on
    another band, or the band was closed everywhere - the audit cannot tell which. A slot is
    usable when it has reports and (with markers) their most common power is that of the
    scheduled antenna. Effective pairs count slots, not reports.
    """
    check_choice(marker, MARKERS, "marker")
    for name, value in (("power_a_dbm", power_a_dbm), ("power_b_dbm", power_b_dbm)):
        # a report's power is on the customary ladder; any other value can never match one
        if value is not None and not np.any(np.isclose(POWER_LADDER_DBM, float(value))):
            raise UsageError(f"{name}={value} dBm is not a reportable power (0-60 dBm "
                             "ending in 0, 3 or 7)")
    for col in (C.SLOT, C.TX_CALL, C.BAND, C.POWER):
        if col not in spots.columns:
            raise InputError(f"spot table lacks column {col!r}; run it through ingest first")
    want = str(call).strip().upper()
    calls = spots[C.TX_CALL].astype(str).str.strip().str.upper()
    mine = spots[(calls == want).to_numpy()]
    if mine.empty:
        present = calls.value_counts().index[:12].tolist()
        raise InputError(f"no reports of {want} in the spots; transmitters present: "
                         f"{', '.join(present)}{' ...' if calls.nunique() > 12 else ''}")
    sched = expand_schedule(schedule, slot_minutes)
    has_band = C.BAND in sched.columns
    rep = pd.DataFrame({
        C.SLOT: pd.to_datetime(mine[C.SLOT], utc=True).to_numpy(),
        C.BAND: mine[C.BAND].astype(str).str.lower().to_numpy(),
        C.POWER: mine[C.POWER].astype(float).to_numpy(),
    }, index=mine.index)
    rep[C.SLOT] = pd.to_datetime(rep[C.SLOT], utc=True)
    if not has_band:  # one schedule for every band the station used
        bands = sort_bands(rep[C.BAND].unique().tolist())
        sched = sched.merge(pd.DataFrame({C.BAND: bands}), how="cross")
    sched = sched.sort_values([C.SLOT, C.BAND], kind="stable").reset_index(drop=True)

    # reports -> scheduled slot (or off schedule)
    key_s = pd.MultiIndex.from_frame(sched[[C.SLOT, C.BAND]])
    key_r = pd.MultiIndex.from_frame(rep[[C.SLOT, C.BAND]])
    pos = key_s.get_indexer(key_r)
    on_air_slots = pd.Index(sched[C.SLOT].unique())
    off = pos < 0
    off_rows = mine[off].copy()
    off_rows[C.REJECT_REASON] = np.where(rep[C.SLOT][off].isin(on_air_slots),
                                         OFF_WRONG_BAND, OFF_NOT_SCHEDULED)
    off_rows[C.SLOT] = rep[C.SLOT][off]
    off_rows[C.BAND] = rep[C.BAND][off]

    counts = np.bincount(pos[~off], minlength=len(sched))
    sched[C.COUNT] = counts
    on = rep[~off]
    mode = _modal(on[C.POWER], [pd.Series(pos[~off])])
    sched[C.POWER] = mode.reindex(np.arange(len(sched))).to_numpy(dtype=float)

    notes: list[str] = []
    markers = None
    if marker == "power":
        pa, pb = power_a_dbm, power_b_dbm
        if pa is None or pb is None:
            heard = sched[sched[C.COUNT] > 0]
            m = heard.groupby(C.ANTENNA)[C.POWER].agg(
                lambda v: v.value_counts().sort_index(kind="stable").idxmax()
                if len(v) else np.nan)
            pa = m.get("A", np.nan) if pa is None else pa
            pb = m.get("B", np.nan) if pb is None else pb
        if np.isfinite(pa) and np.isfinite(pb) and pa != pb:
            markers = {"A": float(pa), "B": float(pb)}
        else:
            notes.append("both antennas ran at the same power (or one was never heard), so "
                         "wrong-antenna slots cannot be told from the reports")
    status = np.where(sched[C.COUNT] == 0, SLOT_GAP, SLOT_OK).astype(object)
    actual = sched[C.ANTENNA].to_numpy().copy()
    if markers is not None:
        p = sched[C.POWER].to_numpy()
        heard = sched[C.COUNT].to_numpy() > 0
        is_a, is_b = p == markers["A"], p == markers["B"]
        sched_a = sched[C.ANTENNA].to_numpy() == "A"
        wrong = heard & ((sched_a & is_b) | (~sched_a & is_a))
        unknown = heard & ~is_a & ~is_b
        status[wrong] = SLOT_WRONG
        status[unknown] = SLOT_UNKNOWN
        actual[wrong] = np.where(sched_a[wrong], "B", "A")
        actual[unknown] = ""
    sched[STATUS] = status
    sched[ACTUAL_ANTENNA] = actual

    # clock hour x band balance and effective pairs
    hour = sched[C.SLOT].dt.floor("h")
    is_a = (sched[C.ANTENNA] == "A").to_numpy()
    ok = (sched[STATUS] == SLOT_OK).to_numpy()
    hb = pd.DataFrame({HOUR_UTC: hour, C.BAND: sched[C.BAND],
                       SLOTS_A: is_a.astype(int), SLOTS_B: (~is_a).astype(int),
                       USABLE_A: (ok & is_a).astype(int), USABLE_B: (ok & ~is_a).astype(int)})
    hours = hb.groupby([HOUR_UTC, C.BAND], sort=True).sum().reset_index()
    hours[EFF_PLANNED] = _effective_pairs(hours[SLOTS_A], hours[SLOTS_B])
    hours[EFF_ACTUAL] = _effective_pairs(hours[USABLE_A], hours[USABLE_B])
    tot = (hours[USABLE_A] + hours[USABLE_B]).to_numpy(float)
    hours[IMBALANCE] = np.divide((hours[USABLE_A] - hours[USABLE_B]).to_numpy(float), tot,
                                 out=np.full(tot.size, np.nan), where=tot > 0)
    hours[ONE_ANTENNA] = (hours[USABLE_A] > 0) != (hours[USABLE_B] > 0)
    silent = (hours[USABLE_A] == 0) & (hours[USABLE_B] == 0)

    planned = float(hours[EFF_PLANNED].sum())
    actual_pairs = float(hours[EFF_ACTUAL].sum())
    eff = actual_pairs / planned if planned > 0 else 0.0
    summary = {
        "slots_scheduled": int(len(sched)),
        "slots_ok": int(ok.sum()),
        "gaps": int((status == SLOT_GAP).sum()),
        "wrong_antenna": int((status == SLOT_WRONG).sum()),
        "unknown_power": int((status == SLOT_UNKNOWN).sum()),
        "reports": int(len(mine)),
        "off_schedule_reports": int(off.sum()),
        "off_schedule_slots": int(off_rows[[C.SLOT, C.BAND]].drop_duplicates().shape[0]),
        "hours": int(len(hours)),
        "hours_one_antenna": int(hours[ONE_ANTENNA].sum()),
        "hours_silent": int(silent.sum()),
        "effective_pairs_planned": planned,
        "effective_pairs": actual_pairs,
        "efficiency": eff,
        "se_inflation": eff ** -0.5 if eff > 0 else math.inf,
        "slot_minutes": int(slot_minutes),
    }
    return AuditResult(call=want, summary=summary, slots=sched, hours=hours,
                       off_schedule=off_rows, markers=markers, notes=notes)


__all__ = ["MARKERS", "FINDINGS", "AuditResult", "audit_schedule"]
