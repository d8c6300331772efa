"""Checks of arguments at the boundary, shared by the whole package.

Each check of an argument raises :class:`spotkit.errors.UsageError` (exit code 2 on the
command line; also a ``ValueError`` for callers who do not know spotkit) with a message that
names the argument and, for a choice, lists the valid values. :func:`check_columns` checks a
table, not an argument: it raises :class:`spotkit.errors.InputError` (exit code 1). Internal
code trusts what passed these checks.

Examples
--------
>>> check_choice("even", ("even", "odd"), "parity")
'even'
>>> check_choice("odds", ("even", "odd"), "parity")
Traceback (most recent call last):
...
spotkit.errors.UsageError: unknown parity 'odds'; valid: even, odd
"""
from __future__ import annotations

from collections.abc import Iterable, Sequence

import numpy as np
import pandas as pd

from spotkit.errors import InputError, UsageError


def check_choice(value, valid: Sequence, what: str):
    """Return ``value`` if it is one of ``valid``, else raise a usage error listing them.

    Parameters
    ----------
    value : object
        The argument as given.
    valid : sequence
        The allowed values, in the order the message lists them.
    what : str
        What the argument is, for the message (``"design"``, ``"hour basis"``).

    Returns
    -------
    object
        ``value`` itself.

    Raises
    ------
    UsageError
        ``unknown <what> <value>; valid: <a>, <b>, ...``.
    """
    if value not in valid:
        raise UsageError(f"unknown {what} {value!r}; valid: {', '.join(map(str, valid))}")
    return value


def check_choices(values: Iterable, valid: Sequence, what: str) -> list:
    """Return ``values`` as a list if every one is in ``valid``, else name all the bad ones.

    Parameters
    ----------
    values : iterable
        The arguments as given.
    valid : sequence
        The allowed values.
    what : str
        What one value is, for the message (``"group key"``).

    Returns
    -------
    list

    Raises
    ------
    UsageError
        ``unknown <what>(s) 'x', 'y'; valid: ...``.

    Examples
    --------
    >>> check_choices(["band", "hour"], ("band", "hour", "distance"), "group key")
    ['band', 'hour']
    """
    values = list(values)
    bad = [v for v in values if v not in valid]
    if bad:
        raise UsageError(f"unknown {what}(s) {', '.join(map(repr, bad))}; valid: "
                         f"{', '.join(map(str, valid))}")
    return values


def check_confidence(confidence: float) -> float:
    """Return a confidence level strictly between 0 and 1 as a float.

    Raises
    ------
    UsageError
        ``confidence must be in (0, 1), got <value>``.

    Examples
    --------
    >>> check_confidence(0.95)
    0.95
    """
    if not 0.0 < confidence < 1.0:
        raise UsageError(f"confidence must be in (0, 1), got {confidence}")
    return float(confidence)


def check_positive(value: float, what: str) -> float:
    """Return ``value`` as a float if it is a finite number above 0.

    Raises
    ------
    UsageError
        ``<what> must be positive, got <value>``.

    Examples
    --------
    >>> check_positive(3, "sigma_db")
    3.0
    """
    try:
        ok = 0.0 < float(value) < float("inf")
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise UsageError(f"{what} must be positive, got {value}")
    return float(value)


def check_finite(value: float, what: str) -> float:
    """Return ``value`` as a float if it is a finite number (not NaN, not infinite).

    Raises
    ------
    UsageError
        ``<what> must be a finite number, got <value>``.

    Examples
    --------
    >>> check_finite("-3.5", "power_dbm")
    -3.5
    >>> check_finite(float("nan"), "threshold_db")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: threshold_db must be a finite number, got nan
    """
    try:
        number = float(value)
    except (TypeError, ValueError):
        number = float("nan")
    if not np.isfinite(number):
        raise UsageError(f"{what} must be a finite number, got {value}")
    return number


def check_at_least(value: int, minimum: int, what: str) -> int:
    """Return ``value`` as an int if it is a whole number of at least ``minimum``.

    Raises
    ------
    UsageError
        ``<what> must be a whole number of at least <minimum>, got <value>``.

    Examples
    --------
    >>> check_at_least(3, 1, "window_slots")
    3
    >>> check_at_least(-1, 0, "min_pairs")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: min_pairs must be a whole number of at least 0, got -1
    """
    try:
        number = float(value)
        ok = number.is_integer() and number >= minimum
    except (TypeError, ValueError, OverflowError):
        ok = False
    if not ok:
        raise UsageError(f"{what} must be a whole number of at least {minimum}, got {value}")
    return int(number)


def check_divides(value: float, whole: float, what: str) -> float:
    """Return ``value`` as a float if it is above 0 and ``whole`` holds a whole number of it
    (a bearing sector width that divides 360 deg).

    Raises
    ------
    UsageError
        ``<what> must divide <whole> into whole parts, got <value>``.

    Examples
    --------
    >>> check_divides(45, 360, "bearing width [deg]")
    45.0
    >>> check_divides(50, 360, "bearing width [deg]")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: bearing width [deg] must divide 360 into whole parts (e.g. 180, \
120, 90, 72), got 50
    """
    try:
        number = float(value)
        parts = whole / number
        ok = 0 < number <= whole and abs(parts - round(parts)) <= 1e-9
    except (TypeError, ValueError, ZeroDivisionError, OverflowError):
        ok = False
    if not ok:
        examples = ", ".join(f"{whole / n:g}" for n in (2, 3, 4, 5))
        raise UsageError(f"{what} must divide {whole:g} into whole parts (e.g. {examples}), "
                         f"got {value}")
    return number


def check_increasing(values, what: str) -> list[float]:
    """Return ``values`` as a list of floats if they are at least two finite numbers, each
    larger than the one before (bin edges).

    Raises
    ------
    UsageError
        ``<what> must be at least two finite numbers in increasing order, got [...]``.

    Examples
    --------
    >>> check_increasing([0, 1000, 3000], "distance edges")
    [0.0, 1000.0, 3000.0]
    >>> check_increasing([5, 1], "distance edges")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: distance edges must be at least two finite numbers in ...
    """
    try:
        numbers = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise UsageError(f"{what} must be numbers, got {values!r}") from None
    if (numbers.ndim != 1 or numbers.size < 2 or not np.all(np.isfinite(numbers))
            or np.any(np.diff(numbers) <= 0)):
        raise UsageError(f"{what} must be at least two finite numbers in increasing order, "
                         f"got {np.atleast_1d(numbers).tolist()}")
    return numbers.tolist()


def check_columns(table: pd.DataFrame, columns: Iterable[str], what: str) -> pd.DataFrame:
    """Return ``table`` if it has every one of ``columns``, else say which are missing.

    A check of data, not of an argument: it raises :class:`~spotkit.errors.InputError`
    (exit code 1 on the command line).

    Parameters
    ----------
    table : pandas.DataFrame
    columns : iterable of str
        Glossary names the caller needs.
    what : str
        What needs them, for the message (``"a coverage map"``).

    Raises
    ------
    InputError
        ``<what> needs column(s) ...; the table has ...``.

    Examples
    --------
    >>> table = pd.DataFrame({"a": [1], "b": [2]})
    >>> check_columns(table, ["snr_db", "a"], "an SNR plot")
    Traceback (most recent call last):
    ...
    spotkit.errors.InputError: an SNR plot needs column(s) snr_db, which the table does not have ...
    """
    missing = [c for c in columns if c not in table.columns]
    if missing:
        has = ", ".join(map(str, table.columns[:12])) or "no columns"
        more = ", ..." if len(table.columns) > 12 else ""
        raise InputError(f"{what} needs column(s) {', '.join(missing)}, which the table does "
                         f"not have (it has {has}{more}): is it a spot table from "
                         "'spotkit ingest'?")
    return table


def check_time(value, what: str) -> pd.Timestamp:
    """Read a time argument as a UTC timestamp; a time without a zone is taken as UTC.

    Parameters
    ----------
    value : str, datetime-like
        ISO 8601 text, ``datetime``, ``numpy.datetime64`` or ``pandas.Timestamp``.
    what : str
        The argument's name, for the message (``"start"``, ``"change_at"``).

    Returns
    -------
    pandas.Timestamp
        In UTC.

    Raises
    ------
    UsageError
        ``<what>: cannot read <value> as a time (...)`` or ``<what>: no time given``.

    Examples
    --------
    >>> check_time("2026-03-02 12:00", "start")
    Timestamp('2026-03-02 12:00:00+0000', tz='UTC')
    >>> check_time("2026-03-02T12:00+01:00", "start")
    Timestamp('2026-03-02 11:00:00+0000', tz='UTC')
    """
    try:
        ts = pd.Timestamp(value)
    except (ValueError, TypeError) as exc:
        raise UsageError(f"{what}: cannot read {value!r} as a time ({exc})") from None
    if ts is pd.NaT:
        raise UsageError(f"{what}: no time given")
    return ts.tz_localize("UTC") if ts.tzinfo is None else ts.tz_convert("UTC")


#: longest antenna label [characters]: it has to fit a plot title and a table heading
MAX_LABEL_CHARS = 32


def check_labels(label_a, label_b) -> tuple[str, str]:
    """Return the two antenna labels stripped, or raise a usage error saying what is wrong.

    A label names an antenna in sentences, tables and figure titles ("vertical", "dipole"):
    it must be non-empty, at most :data:`MAX_LABEL_CHARS` characters, free of control
    characters, and the two must differ (ignoring case).

    Examples
    --------
    >>> check_labels(" vertical ", "dipole")
    ('vertical', 'dipole')
    >>> check_labels("dipole", "Dipole")
    Traceback (most recent call last):
    ...
    spotkit.errors.UsageError: the labels of A and B must differ, got 'dipole' for both
    """
    out = []
    for which, label in (("A", label_a), ("B", label_b)):
        text = str(label).strip() if label is not None else ""
        if not text:
            raise UsageError(f"the label of {which} must not be empty")
        if len(text) > MAX_LABEL_CHARS:
            raise UsageError(f"the label of {which} must be at most {MAX_LABEL_CHARS} "
                             f"characters, got {len(text)} ({text[:MAX_LABEL_CHARS]!r}...)")
        if any(not ch.isprintable() for ch in text):
            raise UsageError(f"the label of {which} must not hold control characters, got "
                             f"{text!r}")
        out.append(text)
    if out[0].casefold() == out[1].casefold():
        raise UsageError(f"the labels of A and B must differ, got {out[0]!r} for both")
    return out[0], out[1]


__all__ = ["check_choice", "check_choices", "check_confidence", "check_positive", "check_finite",
           "check_at_least", "check_divides", "check_increasing", "check_columns", "check_time",
           "check_labels", "MAX_LABEL_CHARS"]
