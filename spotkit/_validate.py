"""Checks of arguments at the boundary, shared by the whole package.

Each check raises :class:`spotkit.errors.UsageError` (exit code 2 on the command line; also a
``ValueError`` for callers who do not know spotkit) with a message that names the argument
and, for a choice, lists the valid values. Internal code trusts what passed these checks.

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

import pandas as pd

from spotkit.errors import UsageError


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


__all__ = ["check_choice", "check_choices", "check_confidence", "check_positive", "check_time"]
