"""Maidenhead locators: decode to cell-centre latitude/longitude and encode back.

The Maidenhead system (IARU Region 1 VHF Managers Handbook; E. Tyson, "Conversion between
geodetic and grid locator systems", QST, January 1989) divides the WGS-84 globe after adding
180 deg to longitude and 90 deg to latitude. In every character pair the longitude comes first:

=========  ============  ==============  ================
length     characters    cell (lon)      cell (lat)
=========  ============  ==============  ================
2 field    A-R           20 deg          10 deg
4 square   0-9           2 deg           1 deg
6 subsq.   a-x           5 arc-minutes   2.5 arc-minutes
8 ext.     0-9           30 arc-seconds  15 arc-seconds
10         a-x           1.25 arc-sec.   0.625 arc-sec.
=========  ============  ==============  ================

The IARU definition stops at 8 characters. For the fifth pair this module follows the usual
extension (common practice, described in the English Wikipedia article "Maidenhead Locator
System"): the subsquare rule is used again, letters a-x dividing the 8-character cell
24 x 24, so a 10-character cell is 1.25 by 0.625 arc-seconds (about 39 by 19 m).

A locator names a cell, not a point: this module returns the cell centre, so a 4-character
locator is uncertain by up to about +-56 km north-south and +-111 km east-west at the
equator. Letters are accepted in any case. All functions are vectorised over numpy arrays
and pandas Series.
"""
from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

from spotkit.errors import LocatorError

#: Valid locator lengths.
LOCATOR_LENGTHS = (2, 4, 6, 8, 10)

# per-position: base character, number of values, and cell size in degrees (lon, lat)
_BASES = [("A", 18), ("A", 18), ("0", 10), ("0", 10), ("A", 24), ("A", 24), ("0", 10), ("0", 10),
          ("A", 24), ("A", 24)]
_LON_STEP = np.array([20.0, 2.0, 5.0 / 60.0, 0.5 / 60.0, 0.5 / 60.0 / 24.0])
_LAT_STEP = np.array([10.0, 1.0, 2.5 / 60.0, 0.25 / 60.0, 0.25 / 60.0 / 24.0])
_NCHAR = len(_BASES)


def _as_str_array(locators) -> np.ndarray:
    arr = np.asarray(pd.Series(np.atleast_1d(np.asarray(locators, dtype=object)), dtype=object)
                     .fillna("").astype(str).str.strip().str.upper(), dtype="U")
    return arr


def _distinct(locators):
    """Row codes into the distinct values, and those values stripped and upper case.

    Each distinct spelling is parsed once; missing values map to an empty string.
    """
    if isinstance(getattr(locators, "dtype", None), pd.CategoricalDtype):
        cat = pd.Categorical(locators)
        codes = np.asarray(cat.codes, dtype=np.int64)
        uniq = np.asarray(cat.categories, dtype=object)
    else:
        codes, uniq = pd.factorize(np.atleast_1d(np.asarray(locators, dtype=object)),
                                   use_na_sentinel=True)
        codes = np.asarray(codes, dtype=np.int64)
        uniq = np.asarray(uniq, dtype=object)
    upper = np.append(_as_str_array(uniq) if uniq.size else np.zeros(0, dtype="U10"), "")
    codes = np.where(codes < 0, upper.size - 1, codes)
    return codes, upper


def _decode_upper(arr: np.ndarray):
    """Decode an array of upper-case strings; returns (lat, lon, valid)."""
    n = arr.size
    lengths = np.char.str_len(arr) if n else np.zeros(0, dtype=int)
    valid = np.isin(lengths, LOCATOR_LENGTHS)
    padded = np.where(valid, arr, "").astype(f"U{_NCHAR}")  # longer texts are invalid anyway
    codes = padded.view(np.uint32).reshape(n, _NCHAR) if n else np.zeros((0, _NCHAR), np.uint32)
    digits = np.zeros((n, _NCHAR), dtype=np.int64)
    for pos, (base, count) in enumerate(_BASES):
        used = lengths > pos
        d = codes[:, pos].astype(np.int64) - ord(base)
        ok = (d >= 0) & (d < count)
        valid &= ~used | ok
        digits[:, pos] = np.where(used & ok, d, 0)
    lon = np.full(n, -180.0)
    lat = np.full(n, -90.0)
    for k in range(_NCHAR // 2):
        lon += digits[:, 2 * k] * _LON_STEP[k]
        lat += digits[:, 2 * k + 1] * _LAT_STEP[k]
    pairs = np.clip(lengths // 2, 1, _NCHAR // 2) - 1
    lon += _LON_STEP[pairs] / 2.0
    lat += _LAT_STEP[pairs] / 2.0
    lon[~valid] = np.nan
    lat[~valid] = np.nan
    return lat, lon, valid


#: what each character pair of a locator is called and holds, for messages
_PAIR_NAMES = ("field", "square", "subsquare", "extended square", "extended subsquare")
_PAIR_RANGES = ("letters A-R", "digits 0-9", "letters a-x", "digits 0-9", "letters a-x")
_ORDINALS = ("1st", "2nd", "3rd", "4th", "5th", "6th", "7th", "8th", "9th", "10th")
#: characters people type for one another: (typed, meant, how to say it)
_LOOKALIKES = {("0", "letter"): ("O", "the digit 0 where the letter O belongs"),
               ("1", "letter"): ("I", "the digit 1 where the letter I belongs"),
               ("O", "digit"): ("0", "the letter O where the digit 0 belongs"),
               ("I", "digit"): ("1", "the letter I where the digit 1 belongs"),
               ("L", "digit"): ("1", "the letter l where the digit 1 belongs")}


def locator_problem(text) -> str | None:
    """What is wrong with one locator, in words; ``None`` when it is well formed.

    Names the first character that breaks the Maidenhead rules (its position, the pair it
    belongs to and the characters allowed there), a digit typed for a look-alike letter
    (``0`` for ``O``) and the reverse, or a length that is not 2, 4, 6, 8 or 10.

    Parameters
    ----------
    text : str
        One locator as typed (any case; surrounding blanks are ignored).

    Returns
    -------
    str or None

    Examples
    --------
    >>> locator_problem("JO62qm") is None
    True
    >>> locator_problem("J062qm")
    "2nd character '0' is the digit 0 where the letter O belongs (the field is letters A-R)"
    >>> locator_problem("JO62qz")
    "6th character 'z' is past 'x' (the subsquare is letters a-x)"
    >>> locator_problem("JO62q")
    'it has 5 characters; a locator has 2, 4, 6, 8 or 10 (pairs: field, square, subsquare, ...)'
    """
    if text is None or (isinstance(text, float) and np.isnan(text)):
        return "it is empty"
    raw = str(text).strip()
    if not raw:
        return "it is empty"
    up = raw.upper()
    for pos, ch in enumerate(up[:_NCHAR]):
        base, count = _BASES[pos]
        pair = pos // 2
        where = f"(the {_PAIR_NAMES[pair]} is {_PAIR_RANGES[pair]})"
        shown = raw[pos]
        if base == "A":
            if ch.isascii() and ch.isalpha():
                if ord(ch) - ord("A") >= count:
                    last = chr(ord("A") + count - 1)
                    last = last.lower() if pair in (2, 4) else last
                    return f"{_ORDINALS[pos]} character {shown!r} is past {last!r} {where}"
                continue
            hint = _LOOKALIKES.get((ch, "letter"))
            if hint:
                return f"{_ORDINALS[pos]} character {shown!r} is {hint[1]} {where}"
            kind = "a digit" if ch.isdigit() else "not a letter"
            return f"{_ORDINALS[pos]} character {shown!r} is {kind} {where}"
        if ch.isascii() and ch.isdigit():
            continue
        hint = _LOOKALIKES.get((ch, "digit"))
        if hint:
            return f"{_ORDINALS[pos]} character {shown!r} is {hint[1]} {where}"
        kind = "a letter" if ch.isalpha() else "not a digit"
        return f"{_ORDINALS[pos]} character {shown!r} is {kind} {where}"
    if len(up) not in LOCATOR_LENGTHS:
        return (f"it has {len(up)} characters; a locator has 2, 4, 6, 8 or 10 (pairs: "
                "field, square, subsquare, ...)")
    return None


def is_valid_locator(locators) -> np.ndarray:
    """Whether each value is a well-formed Maidenhead locator of 2, 4, 6, 8 or 10 characters.

    Parameters
    ----------
    locators : str or array-like of str
        Locators in any letter case; surrounding blanks are ignored.

    Returns
    -------
    numpy.ndarray of bool

    Examples
    --------
    ``Z`` is past the last field letter ``R``; three characters is no valid length:

    >>> is_valid_locator(["JN58td", "jn58", "JZ58", "JN58td25", "JN58td25kx", "JN5", None]).tolist()
    [True, True, False, True, True, False, False]
    """
    codes, upper = _distinct(locators)
    return _decode_upper(upper)[2][codes]


def locator_to_latlon(locators, errors: Literal["raise", "coerce"] = "raise"):
    """Centre of each locator's cell.

    Parameters
    ----------
    locators : str or array-like of str
        Maidenhead locators of 2, 4, 6, 8 or 10 characters, any case.
    errors : {"raise", "coerce"}
        ``"raise"`` raises :class:`~spotkit.errors.LocatorError` naming the first bad value;
        ``"coerce"`` returns NaN for it.

    Returns
    -------
    lat, lon : float or numpy.ndarray
        Latitude and longitude of the cell centre [deg, WGS-84]; scalars for scalar input.

    References
    ----------
    E. Tyson, "Conversion between geodetic and grid locator systems", QST, Jan. 1989, pp. 29-30.

    Examples
    --------
    Worked by hand from the table in the module docstring: JN58td starts at longitude
    -180 + 9*20 + 5*2 + 19*5' = 11.5833 deg and latitude -90 + 13*10 + 8 + 3*2.5' = 48.125 deg;
    the centre is half a subsquare (2.5' by 1.25') further:

    >>> lat, lon = locator_to_latlon("JN58td")
    >>> round(lat, 4), round(lon, 4)
    (48.1458, 11.625)
    >>> lat, lon = locator_to_latlon(["FN31pr", "IO91lk", "JO62"])
    >>> lat.round(4).tolist(), lon.round(4).tolist()
    ([41.7292, 51.4375, 52.5], [-72.7083, -1.0417, 13.0])
    >>> lat, lon = locator_to_latlon(["JO62qm", "XX99"], errors="coerce")
    >>> lat.round(4).tolist()
    [52.5208, nan]
    >>> locator_to_latlon("JZ58")
    Traceback (most recent call last):
    ...
    spotkit.errors.LocatorError: not a Maidenhead locator: 'JZ58': 2nd character 'Z' is past 'R' ...
    """
    if errors not in ("raise", "coerce"):
        raise ValueError(f"errors must be 'raise' or 'coerce', not {errors!r}")
    scalar = np.ndim(locators) == 0
    codes, upper = _distinct(locators)
    lat, lon, valid = _decode_upper(upper)
    lat, lon, valid = lat[codes], lon[codes], valid[codes]
    if errors == "raise" and not valid.all():
        first = int(np.flatnonzero(~valid)[0])
        raw = locators if scalar else np.atleast_1d(np.asarray(locators, dtype=object))[first]
        bad = str(raw).strip() if isinstance(raw, str) else str(upper[codes[first]])
        raise LocatorError(
            f"not a Maidenhead locator: {bad!r}: {locator_problem(raw)}; a locator is like "
            "'JN58', 'JN58td' or 'JN58td25'")
    if scalar:
        return float(lat[0]), float(lon[0])
    return lat, lon


def latlon_to_locator(lat, lon, precision: int = 6):
    """Maidenhead locator of the cell containing each point.

    Parameters
    ----------
    lat, lon : float or array-like
        Latitude [-90, 90] and longitude [deg]; longitudes are wrapped into [-180, 180).
    precision : {2, 4, 6, 8, 10}
        Number of characters. The subsquare letters (and those of the fifth pair) are lower
        case (common practice).

    Returns
    -------
    str or numpy.ndarray of str

    References
    ----------
    E. Tyson, "Conversion between geodetic and grid locator systems", QST, Jan. 1989, pp. 29-30.

    Examples
    --------
    The cell centres of :func:`locator_to_latlon` encode back to their locators:

    >>> latlon_to_locator(52.5208, 13.375)
    'JO62qm'
    >>> latlon_to_locator(52.5208, 13.375, precision=4)
    'JO62'
    >>> latlon_to_locator([41.7292, 51.4375], [-72.7083, -1.0417]).tolist()
    ['FN31pr', 'IO91lk']
    """
    if precision not in LOCATOR_LENGTHS:
        raise ValueError(f"precision must be one of {LOCATOR_LENGTHS}, not {precision!r}")
    scalar = np.ndim(lat) == 0 and np.ndim(lon) == 0
    la = np.atleast_1d(np.asarray(lat, dtype=float))
    lo = np.atleast_1d(np.asarray(lon, dtype=float))
    la, lo = np.broadcast_arrays(la, lo)
    if np.any(~np.isfinite(la)) or np.any(~np.isfinite(lo)):
        raise LocatorError("latitude and longitude must be finite numbers")
    if np.any(np.abs(la) > 90):
        raise LocatorError("latitude must be within -90..90 deg")
    # work in units of the finest cell used to avoid floating-point drift at boundaries
    x = np.mod(lo + 180.0, 360.0)
    y = np.clip(la + 90.0, 0.0, 180.0 - 1e-9)
    out = np.full(la.shape, "", dtype=f"U{_NCHAR}")
    rem_x, rem_y = x, y
    for k in range(precision // 2):
        dx = np.minimum(np.floor(rem_x / _LON_STEP[k] + 1e-9), _BASES[2 * k][1] - 1)
        dy = np.minimum(np.floor(rem_y / _LAT_STEP[k] + 1e-9), _BASES[2 * k + 1][1] - 1)
        dx = np.maximum(dx, 0).astype(int)
        dy = np.maximum(dy, 0).astype(int)
        rem_x = rem_x - dx * _LON_STEP[k]
        rem_y = rem_y - dy * _LAT_STEP[k]
        base = _BASES[2 * k][0]
        if k in (2, 4):
            base = "a"
        cx = np.array([chr(ord(base) + v) for v in range(_BASES[2 * k][1])])[dx]
        cy = np.array([chr(ord(base) + v) for v in range(_BASES[2 * k + 1][1])])[dy]
        out = np.char.add(np.char.add(out, cx), cy)
    if scalar:
        return str(out[0])
    return out


def normalize_locator(locators):
    """Canonical spelling: field letters upper case, subsquare letters lower case.

    Invalid values become ``None``.

    Examples
    --------
    >>> normalize_locator([" jn58TD ", "FN31", "jn58td25KX", "bad!"]).tolist()
    ['JN58td', 'FN31', 'JN58td25kx', None]
    """
    codes, upper = _distinct(locators)
    valid = _decode_upper(upper)[2]
    res = np.array(
        [s[:4] + s[4:6].lower() + s[6:8] + s[8:].lower() if ok else None
         for s, ok in zip(upper, valid, strict=True)],
        dtype=object,
    )
    return res[codes]


def locator_cell_size(locators):
    """Cell size (dlon, dlat) [deg] of each locator, from its length.

    Examples
    --------
    In arc-minutes: a square is 2 by 1 deg, a subsquare 5 by 2.5 arc-minutes (the table in
    the module docstring):

    >>> dlon, dlat = locator_cell_size(["JO", "JO62", "JO62qm"])
    >>> (dlon * 60).round(2).tolist(), (dlat * 60).round(2).tolist()
    ([1200.0, 120.0, 5.0], [600.0, 60.0, 2.5])
    """
    arr = _as_str_array(locators)
    lengths = np.char.str_len(arr)
    pairs = np.clip(lengths // 2, 1, _NCHAR // 2) - 1
    return _LON_STEP[pairs], _LAT_STEP[pairs]


__all__ = [
    "LOCATOR_LENGTHS", "is_valid_locator", "locator_problem", "locator_to_latlon",
    "latlon_to_locator",
    "normalize_locator", "locator_cell_size",
]
