"""Modelled antenna gain patterns: spotkit's own plain CSV layout, read, written and evaluated.

The layout (version 1) is a UTF-8 CSV with one heading line and one row per direction:

=================  ==========================================================================
column             meaning
=================  ==========================================================================
``band``           IARU band name (``20m``) - **or** ``frequency_mhz`` (RF frequency [MHz],
                   mapped to its band by :func:`spotkit.bands.freq_to_band`)
``elevation_deg``  elevation angle above the horizon [deg], 0 to 90
``azimuth_deg``    direction [deg clockwise from true north], 0 to below 360
``gain_dbi``       gain [dBi], a finite number from -100 to +40
=================  ==========================================================================

Lines starting with ``#`` (before or between the rows) are comments; blank lines are
skipped; extra columns are ignored. For each band the rows must form a complete grid:
every elevation with every azimuth, each direction once, at least two elevations. A band
with a single azimuth is omnidirectional (a vertical). Between grid points the gain is
interpolated linearly in elevation and in azimuth (azimuth wraps round through 360 deg);
outside the elevation grid the nearest row is used.

Example file::

    # spotkit gain pattern 1
    # antenna: quarter-wave vertical, average ground
    band,elevation_deg,azimuth_deg,gain_dbi
    20m,0,0,-60.0
    20m,1,0,-19.8
    ...

A bad file raises :class:`spotkit.errors.InputError` naming the file, the line and the
field. The layout is spotkit's own; antenna modelling programs can export their far-field
tables into it with a spreadsheet or a few lines of Python.
"""
from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.bands import freq_to_band
from spotkit.errors import InputError

#: The layout's version, written in its first comment line.
PATTERN_VERSION = 1
#: Columns of a pattern table, in order.
PATTERN_COLUMNS = [C.BAND, C.ELEVATION, C.AZIMUTH, C.GAIN]
#: Plausible gain range of a pattern file [dBi].
GAIN_RANGE_DBI = (-100.0, 40.0)


def _fail(name, line, field, message):
    where = f"{name}" + (f", line {line}" if line is not None else "")
    where += f", field {field!r}" if field else ""
    raise InputError(f"{where}: {message}")


def read_pattern(source, *, name: str | None = None) -> pd.DataFrame:
    """Read a gain pattern in spotkit's CSV layout (module docstring).

    Parameters
    ----------
    source : str or path-like or file-like
        The CSV file.
    name : str, optional
        Name used in error messages (default the path).

    Returns
    -------
    pandas.DataFrame
        :data:`PATTERN_COLUMNS`: ``C.BAND`` (str), ``C.ELEVATION`` [deg], ``C.AZIMUTH``
        [deg], ``C.GAIN`` [dBi], sorted by band, elevation, azimuth;
        ``attrs["source"]`` is the name.

    Raises
    ------
    InputError
        Unreadable file, missing heading, a value that is not a number or is out of range,
        a frequency in no amateur band, a direction given twice, an incomplete grid; the
        message names the file, the line and the field.

    Examples
    --------
    >>> text = '''# spotkit gain pattern 1
    ... band,elevation_deg,azimuth_deg,gain_dbi
    ... 20m,0,0,-3
    ... 20m,10,0,1.5
    ... '''
    >>> read_pattern(io.StringIO(text), name="demo.csv").to_dict("list")
    {'band': ['20m', '20m'], 'elevation_deg': [0.0, 10.0], 'azimuth_deg': [0.0, 0.0], \
'gain_dbi': [-3.0, 1.5]}
    >>> read_pattern(io.StringIO(text.replace("1.5", "high")), name="demo.csv")
    Traceback (most recent call last):
    ...
    spotkit.errors.InputError: demo.csv, line 4, field 'gain_dbi': 'high' is not a number
    """
    if hasattr(source, "read"):
        label = name or getattr(source, "name", "pattern")
        try:
            text = source.read()
        except UnicodeDecodeError as e:
            _fail(label, None, None, f"not UTF-8 text ({e.reason})")
    else:
        label = name or str(source)
        try:
            raw = Path(source).read_bytes()
        except OSError as e:
            _fail(label, None, None, f"cannot be read ({e.strerror or e})")
        if b"\x00" in raw[:4096]:
            _fail(label, None, None, "is binary, not a CSV gain pattern")
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError as e:
            _fail(label, None, None, f"not UTF-8 text (byte {e.start})")
    if isinstance(text, bytes):
        text = text.decode("utf-8", errors="replace")
    kept, lines = [], []
    for i, line in enumerate(text.splitlines(), start=1):
        s = line.strip()
        if not s or s.startswith("#"):
            continue
        kept.append(line)
        lines.append(i)
    if not kept:
        _fail(label, None, None, "has no heading line and no rows")
    try:
        df = pd.read_csv(io.StringIO("\n".join(kept)), dtype=str, keep_default_na=False,
                         skipinitialspace=True)
    except (pd.errors.ParserError, ValueError) as e:
        _fail(label, None, None, f"is not a readable CSV ({str(e).splitlines()[0]})")
    df.columns = [str(c).strip().lower() for c in df.columns]
    head_line = lines[0]
    has_band, has_freq = C.BAND in df.columns, C.FREQ_MHZ in df.columns
    if has_band == has_freq:
        _fail(label, head_line, None,
              f"needs exactly one of the columns {C.BAND!r} or {C.FREQ_MHZ!r}; headings "
              f"are {', '.join(df.columns)}")
    for col in (C.ELEVATION, C.AZIMUTH, C.GAIN):
        if col not in df.columns:
            _fail(label, head_line, col, f"missing column; headings are {', '.join(df.columns)}")
    if not len(df):
        _fail(label, None, None, "has a heading but no rows")
    row_line = np.asarray(lines[1:], dtype=np.int64)

    def numeric(col, lo, hi, *, hi_open=False):
        s = df[col].str.strip()
        x = pd.to_numeric(s, errors="coerce").to_numpy(dtype=float)
        bad = ~np.isfinite(x)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            what = "is empty" if s.iloc[i] == "" else f"{s.iloc[i]!r} is not a number"
            _fail(label, int(row_line[i]), col, what)
        out = (x < lo) | ((x >= hi) if hi_open else (x > hi))
        if out.any():
            i = int(np.flatnonzero(out)[0])
            rng = f"{lo:g} to below {hi:g}" if hi_open else f"{lo:g} to {hi:g}"
            _fail(label, int(row_line[i]), col, f"{x[i]:g} is outside {rng}")
        return x

    el = numeric(C.ELEVATION, 0.0, 90.0)
    az = numeric(C.AZIMUTH, 0.0, 360.0, hi_open=True)
    gain = numeric(C.GAIN, *GAIN_RANGE_DBI)
    if has_freq:
        f = numeric(C.FREQ_MHZ, 0.0, 1e6)
        band = freq_to_band(f * 1e6)
        none = np.array([b is None for b in band])
        if none.any():
            i = int(np.flatnonzero(none)[0])
            _fail(label, int(row_line[i]), C.FREQ_MHZ, f"{f[i]:g} MHz is in no amateur band")
        band = band.astype(str)
    else:
        band = df[C.BAND].str.strip().str.lower().to_numpy(dtype=object)
        from spotkit.bands import band_plan

        known = set(band_plan()["band"])
        bad = ~np.isin(band, list(known))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            _fail(label, int(row_line[i]), C.BAND, f"{band[i]!r} is not a band name "
                  "(e.g. 20m)")
        band = band.astype(str)
    out = pd.DataFrame({C.BAND: band, C.ELEVATION: el, C.AZIMUTH: az, C.GAIN: gain,
                        "_line": row_line})
    dup = out.duplicated([C.BAND, C.ELEVATION, C.AZIMUTH], keep="first")
    if dup.any():
        i = int(np.flatnonzero(dup.to_numpy())[0])
        r = out.iloc[i]
        _fail(label, int(r["_line"]), None,
              f"direction given twice: {r[C.BAND]} elevation {r[C.ELEVATION]:g} deg, "
              f"azimuth {r[C.AZIMUTH]:g} deg")
    for b, g in out.groupby(C.BAND, sort=True):
        n_el, n_az = g[C.ELEVATION].nunique(), g[C.AZIMUTH].nunique()
        if n_el < 2:
            _fail(label, None, C.ELEVATION, f"band {b}: needs at least two elevations, "
                  f"has {n_el}")
        if len(g) != n_el * n_az:
            _fail(label, None, None, f"band {b}: not a complete grid ({len(g)} rows for "
                  f"{n_el} elevations x {n_az} azimuths = {n_el * n_az}); every elevation "
                  "needs every azimuth")
    out = (out.drop(columns="_line").sort_values([C.BAND, C.ELEVATION, C.AZIMUTH])
           .reset_index(drop=True))
    out.attrs["source"] = label
    return out


def write_pattern(pattern: pd.DataFrame, path, *, comment: str | None = None) -> Path:
    """Write a pattern table in spotkit's CSV layout, atomically.

    Parameters
    ----------
    pattern : pandas.DataFrame
        :data:`PATTERN_COLUMNS` (as :func:`read_pattern` returns, or
        :func:`spotkit.sim.antenna.pattern_table`).
    path : str or path-like
        Output file; written through :func:`spotkit.io.atomic.staged`.
    comment : str, optional
        Description written as ``# ...`` lines after the version line.

    Returns
    -------
    pathlib.Path

    Examples
    --------
    >>> import tempfile
    >>> table = pd.DataFrame({"band": ["20m"] * 2, "elevation_deg": [0.0, 10.0],
    ...                       "azimuth_deg": [0.0, 0.0], "gain_dbi": [-3.0, 1.5]})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = write_pattern(table, Path(d) / "v.csv", comment="a test")
    ...     print(p.read_text().strip())
    ...     back = read_pattern(p)
    # spotkit gain pattern 1
    # a test
    band,elevation_deg,azimuth_deg,gain_dbi
    20m,0,0,-3
    20m,10,0,1.5
    >>> back[PATTERN_COLUMNS].equals(table)
    True
    """
    from spotkit.io.atomic import staged

    missing = [c for c in PATTERN_COLUMNS if c not in pattern.columns]
    if missing:
        raise InputError(f"pattern table lacks columns {', '.join(missing)}")
    head = [f"# spotkit gain pattern {PATTERN_VERSION}"]
    if comment:
        head += [f"# {line}" for line in str(comment).splitlines()]
    body = pattern[PATTERN_COLUMNS].to_csv(index=False, float_format="%.6g",
                                           lineterminator="\n")
    path = Path(path)
    with staged([path]) as (tmp,):
        tmp.write_text("\n".join(head) + "\n" + body, encoding="utf-8")
    return path


class GainPattern:
    """A pattern table evaluated at any direction (bilinear, azimuth wrapping round).

    Parameters
    ----------
    pattern : pandas.DataFrame
        From :func:`read_pattern`.

    Examples
    --------
    >>> table = pd.DataFrame({"band": ["20m"] * 4, "elevation_deg": [0.0, 0.0, 10.0, 10.0],
    ...                       "azimuth_deg": [0.0, 180.0, 0.0, 180.0],
    ...                       "gain_dbi": [0.0, 2.0, 4.0, 6.0]})
    >>> g = GainPattern(table)
    >>> g.gain_db("20m", [5.0, 5.0, 20.0], [90.0, 270.0, 0.0]).tolist()
    [3.0, 3.0, 4.0]
    """

    def __init__(self, pattern: pd.DataFrame):
        self.source = pattern.attrs.get("source", "pattern")
        self._grids = {}
        for band, g in pattern.groupby(C.BAND, sort=True):
            el = np.unique(g[C.ELEVATION].to_numpy(dtype=float))
            az = np.unique(g[C.AZIMUTH].to_numpy(dtype=float))
            grid = (g.pivot_table(index=C.ELEVATION, columns=C.AZIMUTH, values=C.GAIN)
                    .reindex(index=el, columns=az).to_numpy(dtype=float))
            if len(az) > 1:  # wrap: the first azimuth again at +360
                az = np.append(az, az[0] + 360.0)
                grid = np.column_stack([grid, grid[:, 0]])
            self._grids[str(band)] = (el, az, grid)

    @property
    def bands(self) -> list[str]:
        """Bands with a table."""
        return list(self._grids)

    def gain_db(self, band: str, elevation_deg, azimuth_deg) -> np.ndarray:
        """Gain [dBi] towards each (elevation [deg], azimuth [deg]); arrays broadcast."""
        if band not in self._grids:
            raise InputError(f"{self.source}: no gain table for band {band} (it has "
                             f"{', '.join(self._grids) or 'none'})")
        el_g, az_g, grid = self._grids[band]
        e, a = np.broadcast_arrays(np.asarray(elevation_deg, dtype=float),
                                   np.asarray(azimuth_deg, dtype=float))
        e = np.clip(e, el_g[0], el_g[-1])
        ie = np.clip(np.searchsorted(el_g, e, side="right") - 1, 0, len(el_g) - 2)
        te = (e - el_g[ie]) / (el_g[ie + 1] - el_g[ie])
        if len(az_g) == 1:
            col = grid[:, 0]
            return col[ie] * (1 - te) + col[ie + 1] * te
        a = az_g[0] + np.mod(a - az_g[0], 360.0)
        ia = np.clip(np.searchsorted(az_g, a, side="right") - 1, 0, len(az_g) - 2)
        ta = (a - az_g[ia]) / (az_g[ia + 1] - az_g[ia])
        lo = grid[ie, ia] * (1 - ta) + grid[ie, ia + 1] * ta
        hi = grid[ie + 1, ia] * (1 - ta) + grid[ie + 1, ia + 1] * ta
        return lo * (1 - te) + hi * te


__all__ = ["PATTERN_VERSION", "PATTERN_COLUMNS", "GAIN_RANGE_DBI", "read_pattern",
           "write_pattern", "GainPattern"]
