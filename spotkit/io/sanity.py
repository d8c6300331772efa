"""Column sanity before rows: each mapped column checked as a whole.

Model
-----
Row checks (:mod:`spotkit.io.clean`) judge one cell at a time, so a column holding the
wrong quantity lets through the values that happen to be valid for the field it was mapped
to (SNRs of 14 or 7 taken as MHz land in the 20 m and 40 m bands). Before any row is read,
:func:`check_columns` looks at every mapped column of the first
:data:`~spotkit.io.sniff.SAMPLE_ROWS` rows (the rows the units were inferred from) and
stops the run with :class:`~spotkit.errors.InputError` when the column as a whole does not
look like what it claims to hold. The message names the file and column, shows a sample of
the values that do not fit and the likely fix (a ``--unit`` or a ``--map``).

A column is judged only when it has at least :data:`MIN_VALUES` non-empty cells in the
sample (small files are left to the row checks), and it fails when fewer than its share in
:data:`MIN_SHARE` of those cells are plausible:

==========  ===============================================================  =====
field       plausible cell                                                   share
==========  ===============================================================  =====
time        parses in the unit used, 1990 to a day after the moment of ingest  80 %
frequency   inside an amateur band of any IARU region, in the unit used      80 %
snr         a number in -40..+30 dB (:data:`SNR_PLAUSIBLE_DB`)                80 %
power       a number in 0..60 dBm after conversion from the unit used        80 %
drift       a number                                                         80 %
locators    a Maidenhead locator                                             50 %
calls       letters and digits with at least one of each                     50 %
==========  ===============================================================  =====

Besides, an SNR or power column fails when it clearly holds another quantity: at least
:data:`LOOKS_LIKE_SHARE` of its values are frequencies (fractional numbers inside a band
in MHz), and an SNR column also when they are powers (whole numbers on the beacon dBm
ladder, none negative, at least three distinct ones). The plausible SNR range is the span
of weak-signal beacon reports in a 2500 Hz bandwidth (common practice), narrower than
the -60..+60 dB a single row may have.

Known limits: only the first rows are judged (a file whose columns change further down is
caught, if at all, row by row); a locator column holding calls of the shape of a locator,
or two call columns swapped, cannot be seen.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.errors import InputError
from spotkit.geo.locator import is_valid_locator, locator_problem, normalize_locator
from spotkit.io.clean import POWER_RANGE_DBM, _band_codes, _parse_times
from spotkit.io.sniff import _CALL_RE, _CLI_NAME, _Layout, _read_sample, _to_number
from spotkit.units import (
    EPOCH_RANGE_S,
    FREQUENCY_UNITS,
    POWER_LADDER_DBM,
    POWER_UNITS,
    epoch_to_seconds,
    frequency_to_hz,
    power_to_dbm,
)

#: Fewest non-empty cells in the sample for a column to be judged.
MIN_VALUES = 20
#: Least share of plausible cells per field (see the module docstring).
MIN_SHARE = {C.TIME: 0.8, C.FREQ: 0.8, C.SNR: 0.8, C.POWER: 0.8, C.DRIFT: 0.8,
             C.TX_LOCATOR: 0.5, C.RX_LOCATOR: 0.5, C.TX_CALL: 0.5, C.RX_CALL: 0.5}
#: Plausible SNR of a column as a whole [dB] (common practice).
SNR_PLAUSIBLE_DB = (-40.0, 30.0)
#: Share of values at which a column is taken to hold another quantity.
LOOKS_LIKE_SHARE = 0.8
#: Fewest numbers in a small sample (under :data:`MIN_VALUES` cells) for a unit that does
#: not fit to stop the run (:func:`unit_hint`); besides, at least half its non-empty cells
#: must be numbers.
MIN_UNIT_VALUES = 5
#: Values shown in a message.
SHOWN = 6

_WHAT = {C.TIME: "times", C.FREQ: "frequencies", C.SNR: "SNRs", C.POWER: "powers",
         C.DRIFT: "drifts", C.TX_LOCATOR: "locators", C.RX_LOCATOR: "locators",
         C.TX_CALL: "callsigns", C.RX_CALL: "callsigns"}


def _present(col: pd.Series) -> pd.Series:
    """The non-empty cells of a text column, stripped."""
    s = col.dropna().astype("str").str.strip()
    return s[s != ""].reset_index(drop=True)


def _in_band(hz: np.ndarray) -> np.ndarray:
    return _band_codes(np.asarray(hz, dtype=float), "all") >= 0


def _share(mask) -> float:
    mask = np.asarray(mask, dtype=bool)
    return float(mask.mean()) if mask.size else 0.0


def _as_frequency(v: np.ndarray) -> str | None:
    """The unit in which at least LOOKS_LIKE_SHARE of ``v`` fall in a band, if any."""
    for unit in ("MHz", "kHz", "Hz"):
        if _share(_in_band(frequency_to_hz(v, unit))) >= LOOKS_LIKE_SHARE:
            return unit
    return None


def _looks_like(v: np.ndarray, field: str) -> str | None:
    """What else the finite numbers ``v`` of a column look like, as advice (None: nothing
    clear)."""
    if not v.size:
        return None
    whole = v == np.round(v)
    lo, hi = EPOCH_RANGE_S
    if _share((v >= lo) & (v < hi)) >= LOOKS_LIKE_SHARE or _share(
            (v >= lo * 1e3) & (v < hi * 1e3)) >= LOOKS_LIKE_SHARE:
        return "times (epoch counts)"
    if field != C.FREQ:
        unit = _as_frequency(v)
        if unit is not None and (unit != "MHz" or _share(~whole) >= 0.5):
            return f"frequencies in {unit}"
    if field != C.POWER and np.unique(v).size >= 3 and v.min() >= 0 and _share(
            whole & np.isin(v, POWER_LADDER_DBM)) >= 0.9:
        return "powers in dBm (whole numbers on the beacon ladder 0, 3, 7, 10, ...)"
    if field != C.SNR and _share(whole) >= 0.9 and v.min() < 0 and np.abs(v).max() <= 60:
        return "SNRs in dB (whole numbers, some negative)"
    return None


def _numbers(cells: pd.Series, decimal: str) -> np.ndarray:
    return _to_number(cells, decimal).to_numpy(dtype=float)


def _fits(field: str, v: np.ndarray, unit: str) -> np.ndarray:
    """Whether each number ``v`` is plausible for ``field`` read in ``unit``."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if field == C.FREQ:
            return _in_band(frequency_to_hz(v, unit))
        if field == C.POWER:
            dbm = power_to_dbm(v, unit)
            return (dbm >= POWER_RANGE_DBM[0]) & (dbm <= POWER_RANGE_DBM[1])
        secs = epoch_to_seconds(v, unit)
        return (secs >= EPOCH_RANGE_S[0]) & (secs < EPOCH_RANGE_S[1])


_UNIT_OPTIONS = {C.FREQ: ("frequency", FREQUENCY_UNITS), C.POWER: ("power", POWER_UNITS),
                 C.TIME: ("time", ("epoch-s", "epoch-ms"))}


def unit_hint(field: str, cells: pd.Series, layout: _Layout) -> tuple[float, str | None]:
    """(share of ``cells`` plausible in the unit used, the option that would make them
    fit): a hint when fewer than half fit and another unit makes at least
    :data:`LOOKS_LIKE_SHARE` of them fit (kHz vs MHz vs Hz, W vs mW vs dBm, epoch
    seconds vs milliseconds); else None.

    Examples
    --------
    >>> from spotkit.io.sniff import _Layout
    >>> lay = _Layout(path=None, name="f", compression=None, encoding="utf-8", sep=",",
    ...               decimal=".", header_lines=1, headings=[],
    ...               units={"time": "iso", "frequency": "kHz", "power": "dBm"})
    >>> unit_hint("freq_hz", pd.Series(["14.0971", "7.0401"]), lay)
    (0.0, 'the values fit MHz, not kHz: use --unit frequency=MHz')
    >>> unit_hint("power_dbm", pd.Series(["5000", "200"]), lay)
    (0.0, 'the values fit mW, not dBm: use --unit power=mW')
    """
    name, choices = _UNIT_OPTIONS[field]
    unit = layout.units.get(name, "")
    if field == C.TIME and not unit.startswith("epoch"):
        return 1.0, None
    v = _numbers(cells, layout.decimal if field != C.TIME else ".")
    v = v[np.isfinite(v)]
    if not v.size:
        return 1.0, None
    here = _share(_fits(field, v, unit))
    if here >= 0.5:
        return here, None
    other = [u for u in choices if u != unit and not (field == C.TIME and u == "epoch")
             and _share(_fits(field, v, u)) >= LOOKS_LIKE_SHARE]
    if unit == "epoch":
        unit = "epoch-s"
        other = [u for u in other if u != "epoch-s"]
    if not other:
        return here, None
    return here, (f"the values fit {' or '.join(other)}, not {unit}: use "
                  + " or ".join(f"--unit {name}={u}" for u in other))


def _frequency(cells, layout) -> tuple[np.ndarray, str]:
    unit = layout.units["frequency"]
    v = _numbers(cells, layout.decimal)
    ok = _in_band(frequency_to_hz(v, unit))
    hint = None
    finite = v[np.isfinite(v)]
    other = [u for u in FREQUENCY_UNITS if u != unit
             and _share(_in_band(frequency_to_hz(finite, u))) >= LOOKS_LIKE_SHARE]
    if other:
        hint = f"the values look like {other[0]}, not {unit}: use --unit frequency={other[0]}"
    else:
        like = _looks_like(finite, C.FREQ)
        if like:
            hint = f"this looks like {like}, not frequencies: check --map frequency=COLUMN"
    return ok, hint or ("check which column holds the frequency (--map frequency=COLUMN) "
                        "and its unit (--unit frequency=Hz|kHz|MHz)")


def _snr(cells, layout) -> tuple[np.ndarray, str]:
    v = _numbers(cells, layout.decimal)
    ok = (v >= SNR_PLAUSIBLE_DB[0]) & (v <= SNR_PLAUSIBLE_DB[1])
    like = _looks_like(v[np.isfinite(v)], C.SNR)
    if like and not like.startswith("SNR"):
        if like.startswith(("frequencies", "powers")):
            ok = np.zeros(v.size, dtype=bool)  # the column as a whole is another quantity
        return ok, f"this looks like {like}, not SNRs: check --map snr=COLUMN"
    return ok, "check which column holds the SNR (--map snr=COLUMN)"


def _power(cells, layout) -> tuple[np.ndarray, str]:
    unit = layout.units["power"]
    v = _numbers(cells, layout.decimal)
    with np.errstate(divide="ignore", invalid="ignore"):
        dbm = power_to_dbm(v, unit)
    ok = (dbm >= POWER_RANGE_DBM[0]) & (dbm <= POWER_RANGE_DBM[1])
    like = _looks_like(v[np.isfinite(v)], C.POWER)
    if like and like.startswith("frequencies"):
        ok = np.zeros(v.size, dtype=bool)
    hint = unit_hint(C.POWER, cells, layout)[1]
    if hint and not (like and like.startswith("frequencies")):
        return ok, hint
    if like:
        return ok, f"this looks like {like}, not powers: check --map power=COLUMN"
    return ok, ("check which column holds the power (--map power=COLUMN) and its unit "
                "(--unit power=dBm|W|mW)")


def _drift(cells, layout) -> tuple[np.ndarray, str]:
    v = _numbers(cells, layout.decimal)
    return np.isfinite(v), "check which column holds the drift (--map drift=COLUMN)"


def _time(cells, layout) -> tuple[np.ndarray, str]:
    unit = layout.units["time"]
    _, status = _parse_times(cells.to_numpy(dtype=object), unit, layout.ingest_utc,
                             layout.date_order)
    ok = status == 0
    hint = None
    if unit.startswith("epoch"):
        v = _numbers(cells, ".")
        lo, hi = EPOCH_RANGE_S
        in_s = _share((v >= lo) & (v < hi))
        in_ms = _share((v >= lo * 1e3) & (v < hi * 1e3))
        if unit == "epoch-ms" and in_s >= LOOKS_LIKE_SHARE:
            hint = "the values look like epoch seconds: use --unit time=epoch-s"
        elif unit != "epoch-ms" and in_ms >= LOOKS_LIKE_SHARE:
            hint = "the values look like epoch milliseconds: use --unit time=epoch-ms"
    if hint is None and _share(status == 4) >= 0.5:
        hint = ("most times are more than a day after now: check the year, the date "
                "column (--map time=DATE+TIME) or the clock of the station that wrote them")
    if hint is None:
        hint = ("times must be ISO 8601 text (2024-03-01 10:00), a date with its order "
                "given by --date-order dmy|mdy|ymd (02.03.2026 10:00), or epoch seconds or "
                "milliseconds (--unit time=iso|epoch-s|epoch-ms); a date and a clock in "
                "two columns: --map time=DATE+TIME; check --map time=COLUMN")
    return ok, hint


def _swap_lookalikes(text: str) -> str:
    """``text`` with 0/1 made O/I where a locator has letters and O/I/l made 0/1 where it
    has digits."""
    letters = {"0": "O", "1": "I"}
    digits = {"O": "0", "o": "0", "I": "1", "l": "1"}
    return "".join((digits if (i // 2) % 2 else letters).get(ch, ch)
                   for i, ch in enumerate(text.strip()))


def _locator(cells, layout) -> tuple[np.ndarray, str]:
    ok = normalize_locator(cells.to_numpy(dtype=object)) != None  # noqa: E711
    calls = cells.str.upper().str.match(_CALL_RE.pattern).to_numpy(dtype=bool)
    bad = cells[~np.asarray(ok, dtype=bool)]  # (cells: non-empty, stripped)
    problem = locator_problem(bad.iloc[0]) if len(bad) else None
    # a digit typed for a look-alike letter (J062qm) also looks like a callsign: a typo when
    # swapping the look-alikes makes a locator
    typo = problem is not None and "belongs" in problem and bool(
        is_valid_locator(_swap_lookalikes(str(bad.iloc[0]))))
    if _share(calls & ~ok) >= 0.5 and not typo:
        hint = "this looks like callsigns, not locators: check --map"
    else:
        why = f" ({bad.iloc[0]!r}: {problem})" if problem else ""
        hint = f"locators are 2 to 10 characters like JN58 or JN58td{why}: check --map"
    return np.asarray(ok, dtype=bool), hint


def _call(cells, layout) -> tuple[np.ndarray, str]:
    ok = cells.str.upper().str.match(_CALL_RE.pattern).to_numpy(dtype=bool)
    return ok, "callsigns are letters and digits like Q1ABC: check --map"


_CHECKS = {C.TIME: _time, C.TX_CALL: _call, C.TX_LOCATOR: _locator, C.RX_CALL: _call,
           C.RX_LOCATOR: _locator, C.FREQ: _frequency, C.SNR: _snr, C.POWER: _power,
           C.DRIFT: _drift}


def column_problems(layout: _Layout, sample: pd.DataFrame) -> list[str]:
    """One line per mapped column of ``sample`` that does not look like its field.

    Parameters
    ----------
    layout : spotkit.io.sniff._Layout
        The file's layout with columns mapped and units chosen.
    sample : pandas.DataFrame
        The first rows of the file as text (one column per file column).

    Returns
    -------
    list of str
        Empty when every column passes.
    """
    out = []
    for f, pos in layout.fields.items():
        if len(pos) == 2:  # a date column and a clock column
            a, b = sample.iloc[:, pos[0]], sample.iloc[:, pos[1]]
            both = a.notna() & b.notna()
            cells = _present(a[both].astype("str") + " " + b[both].astype("str"))
        else:
            cells = _present(sample.iloc[:, pos[0]])
        if len(cells) < MIN_VALUES:  # few cells: judged only for a unit that does not fit
            nums = np.isfinite(_numbers(cells, layout.decimal if f != C.TIME else "."))
            if f in _UNIT_OPTIONS and nums.sum() >= max(MIN_UNIT_VALUES, len(cells) / 2):
                share, hint = unit_hint(f, cells, layout)
                if hint:
                    out.append(f"column {'+'.join(layout.label(i) for i in pos)} (mapped to "
                               f"{_CLI_NAME[f]}): {100 * share:.0f} % of its {len(cells)} "
                               f"non-empty cells fit the unit {layout.units[_UNIT_OPTIONS[f][0]]}"
                               f"; {hint}")
            continue
        ok, hint = _CHECKS[f](cells, layout)
        share = _share(ok)
        if share >= MIN_SHARE[f]:
            continue
        bad = pd.unique(cells[~np.asarray(ok, dtype=bool)].to_numpy(dtype=object))[:SHOWN]
        label = "+".join(layout.label(i) for i in pos)
        out.append(
            f"column {label} (mapped to {_CLI_NAME[f]}) does not hold "
            f"{_WHAT[f]}: {100 * share:.0f} % of its {len(cells):,} non-empty cells in the "
            f"first rows are plausible, at least {100 * MIN_SHARE[f]:.0f} % expected; "
            f"e.g. {', '.join(repr(str(x)) for x in bad)}; {hint}")
    return out


def check_columns(layout: _Layout, sample: pd.DataFrame | None = None) -> _Layout:
    """Stop when a mapped column does not look like what it claims to hold.

    Parameters
    ----------
    layout : spotkit.io.sniff._Layout
        The file's layout with columns mapped and units chosen.
    sample : pandas.DataFrame, optional
        The first rows as text; read from the file when not given.

    Returns
    -------
    The layout, unchanged.

    Raises
    ------
    InputError
        Naming the file, each failing column, a sample of its values and the likely fix.

    Examples
    --------
    An invented file of 20 spots whose frequencies are in kHz under a heading saying MHz
    (:func:`spotkit.io.ingest.read_spots` calls this before reading any row):

    >>> import pathlib, tempfile
    >>> from spotkit.io.ingest import read_spots
    >>> rows = ["time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm"]
    >>> rows += [f"2024-03-01 10:{2 * i:02d}:00,Q1ABC,JO62qm,Q2XY,JN58td,14097.1,-12,37"
    ...          for i in range(20)]
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = pathlib.Path(d) / "spots.csv"
    ...     _ = path.write_text("\\n".join(rows) + "\\n")
    ...     try:
    ...         read_spots(path)
    ...     except InputError as exc:
    ...         print(str(exc).splitlines()[1])
      column 'frequency MHz' (mapped to frequency) does not hold frequencies: 0 % of its 20
      non-empty cells in the first rows are plausible, at least 80 % expected; e.g. '14097.1';
      the values look like kHz, not MHz: use --unit frequency=kHz
    """
    if sample is None:
        sample = _read_sample(layout)
    problems = column_problems(layout, sample)
    if problems:
        raise InputError(f"{layout.name}: the columns do not hold what they are mapped to, "
                         "nothing was read:\n  " + "\n  ".join(problems))
    return layout


__all__ = ["check_columns", "column_problems", "unit_hint", "MIN_VALUES", "MIN_SHARE",
           "SNR_PLAUSIBLE_DB", "LOOKS_LIKE_SHARE", "MIN_UNIT_VALUES"]
