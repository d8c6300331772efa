"""Spreadsheet files (``.xlsx``, ``.ods``) as spot tables.

Model
-----
A workbook is read with :func:`pandas.read_excel` (engine openpyxl for ``.xlsx`` /
``.xlsm``, odfpy for ``.ods``; the optional extra ``sheets``), every cell as text, and
written to a tab-delimited text file that the CSV reader (:mod:`spotkit.io.ingest`) then
reads like any other file: the sheet's first row is its heading line (or its first data
row), and each later row of the sheet is one data row with the same number as in a CSV
file, blank rows included (rejected as blank lines), so every sheet row is accounted for.
Date-and-time cells come out as ISO 8601 text (``2026-03-02 00:15:00``), time-only cells
as ``00:15:00``, numbers in their shortest spelling with a decimal point; text cells as
they are (a day-first date typed as text stays ``02.03.2026``).

Only the first sheet is read; a workbook whose other sheets hold data too is refused
with a message naming them (save each sheet as a file of its own).

Known limits: formulas are read as the values the spreadsheet program last saved (a
workbook written by a library without calculating them has none); cell formats (a number
shown with fewer decimals) are not applied, the stored value is read; the whole sheet is
held in memory once (spreadsheets hold at most about a million rows).
"""
from __future__ import annotations

import csv
from pathlib import Path

from spotkit.errors import InputError

#: Spreadsheet suffixes and the pandas engine that reads each.
SHEET_ENGINES = {".xlsx": "openpyxl", ".xlsm": "openpyxl", ".ods": "odf"}
_MODULES = {"openpyxl": "openpyxl", "odf": "odfpy"}


def is_spreadsheet(path) -> bool:
    """Whether ``path`` names a spreadsheet by its suffix (``.xlsx``, ``.xlsm``, ``.ods``).

    Examples
    --------
    >>> is_spreadsheet("spots.XLSX"), is_spreadsheet("spots.ods"), is_spreadsheet("a.csv")
    (True, True, False)
    """
    return Path(path).suffix.lower() in SHEET_ENGINES


def _engine(path: Path) -> str:
    engine = SHEET_ENGINES[path.suffix.lower()]
    try:
        __import__(engine)
    except ImportError:
        raise InputError(
            f"{path}: reading a spreadsheet ({path.suffix}) needs the package "
            f"{_MODULES[engine]}: install spotkit's optional extra with "
            "pip install 'spotkit[sheets]', or save the sheet as CSV in the spreadsheet "
            "program and give that file") from None
    return engine


def sheet_to_text(path, out_path) -> Path:
    """Write the first sheet of a spreadsheet as a tab-delimited text file, cells as text.

    Parameters
    ----------
    path : str or path-like
        The spreadsheet (``.xlsx``, ``.xlsm`` or ``.ods``).
    out_path : str or path-like
        The text file to write (UTF-8, tab-delimited, quoted where a cell needs it).

    Returns
    -------
    pathlib.Path
        ``out_path``.

    Raises
    ------
    InputError
        When the engine is not installed (the message says how to install it or to save
        the sheet as CSV), the file is no spreadsheet, or sheets other than the first
        hold data.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> import pandas as pd
    >>> with tempfile.TemporaryDirectory() as d:
    ...     src = pathlib.Path(d) / "s.xlsx"
    ...     pd.DataFrame({"snr": [-12, -3], "freq": [14.0971, 7.0401]}).to_excel(
    ...         src, index=False)
    ...     text = sheet_to_text(src, pathlib.Path(d) / "s.txt").read_text()
    >>> print(text.replace("\\t", " | "), end="")
    snr | freq
    -12 | 14.0971
    -3 | 7.0401
    """
    import pandas as pd

    path, out_path = Path(path), Path(out_path)
    if not path.exists():
        raise FileNotFoundError(f"{path}: no such file")
    engine = _engine(path)
    try:
        sheets = pd.read_excel(path, sheet_name=None, header=None, dtype=str, engine=engine,
                               keep_default_na=False, na_filter=False)
    except (ValueError, OSError, KeyError) as exc:  # zip or XML not a workbook
        raise InputError(f"{path}: not a readable spreadsheet ({exc}); save it again "
                         "from the spreadsheet program, or as CSV") from None
    except Exception as exc:
        raise InputError(f"{path}: not a readable spreadsheet ({type(exc).__name__}: "
                         f"{exc}); save it again, or as CSV") from None
    if not sheets:
        raise InputError(f"{path}: the workbook has no sheet")
    names = list(sheets)
    others = [n for n in names[1:] if sheets[n].size and (sheets[n] != "").to_numpy().any()]
    if others:
        raise InputError(f"{path}: sheets {', '.join(map(repr, [names[0], *others]))} hold "
                         "data; spotkit reads one sheet per file: save each sheet as a file "
                         "of its own (CSV or spreadsheet)")
    first = sheets[names[0]]
    first.to_csv(out_path, sep="\t", header=False, index=False, encoding="utf-8",
                 lineterminator="\n", quoting=csv.QUOTE_MINIMAL)
    return out_path


__all__ = ["SHEET_ENGINES", "is_spreadsheet", "sheet_to_text"]
