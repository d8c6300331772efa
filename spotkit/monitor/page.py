"""What the watch shows: a terminal view and a self-refreshing HTML page, both with the
estimate over time (the confidence sequence beside the fixed-time interval).

The page is one file with its figure inside (PNG, base64) and a ``<meta http-equiv=
"refresh">`` so that a browser showing it reloads it; no server is needed. It is written
through :func:`spotkit.io.atomic.staged`, so a browser never reads half a page. matplotlib
is imported only inside :func:`sequence_plot` and :func:`page_html`.
"""
from __future__ import annotations

import base64
import html
import io

import numpy as np
import pandas as pd

from spotkit import columns as C
from spotkit.io.atomic import staged
from spotkit.monitor.stopping import band_text

#: width of the terminal chart [characters]
CHART_WIDTH = 56


def _bands(history: pd.DataFrame) -> list[str]:
    return list(dict.fromkeys(history[C.BAND].astype(str)))


def latest(history: pd.DataFrame) -> pd.DataFrame:
    """The last look of every band (one row per band)."""
    if not len(history):
        return history
    return history.groupby(C.BAND, sort=False).tail(1).reset_index(drop=True)


def _fmt(x, fmt="{:+.2f}") -> str:
    return "-" if x is None or not np.isfinite(x) else fmt.format(x)


def summary_lines(history: pd.DataFrame) -> list[str]:
    """One block per band: the estimate now, its interval and sequence, the width shrink
    and the verdict (what ``spotkit watch`` prints after each update)."""
    lines = []
    for r in latest(history).itertuples(index=False):
        r = r._asdict()
        shrink = r[C.WIDTH_SHRINK]
        lines += [
            f"{band_text(r[C.BAND])}: B-A {_fmt(r[C.B_MINUS_A])} dB after {r[C.HOURS]:.1f} h "
            f"({int(r[C.PAIRS]):,} pairs, {int(r[C.CLUSTERS])} receivers)",
            f"  fixed-time 95 % interval {_fmt(r[C.CI_LOW])} to {_fmt(r[C.CI_HIGH])} dB "
            "(right only if you look once)",
            f"  confidence sequence     {_fmt(r[C.CS_LOW])} to {_fmt(r[C.CS_HIGH])} dB "
            f"(holds however often you look); width {_fmt(r[C.CS_WIDTH], '{:.2f}')} dB"
            + ("" if not np.isfinite(shrink) else f", {shrink:.0%} of the first"),
            f"  => {r[C.VERDICT]}",
        ]
    return lines


def terminal_chart(history: pd.DataFrame, band: str, *, width: int = CHART_WIDTH,
                   last: int = 24) -> list[str]:
    """The estimate over time as text, one line per look (the latest ``last``)::

        hours  [ sequence ]  ( fixed interval )  * estimate  | 0 dB

    Examples
    --------
    >>> h = pd.DataFrame({"hours": [1.0, 2.0], "band": "20m", "b_minus_a_db": [1.0, 1.2],
    ...                   "ci_low_db": [0.2, 0.7], "ci_high_db": [1.8, 1.7],
    ...                   "cs_low_db": [-0.5, 0.2], "cs_high_db": [2.5, 2.2]})
    >>> print("\\n".join(terminal_chart(h, "20m", width=30)))
    20 m, B-A [dB] from -0.5 to +2.5: [ sequence ] ( fixed ) * estimate | 0
        1.0 h [------(------*-------)------]
        2.0 h      | [----(---*----)----]
    """
    h = history[history[C.BAND].astype(str) == band].tail(last)
    cols = [C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.CS_LOW, C.CS_HIGH]
    vals = h[cols].to_numpy(float)
    scale = vals[:, [0, 3, 4]]  # estimate and sequence; the fixed interval is clipped
    finite = scale[np.isfinite(scale)]
    if not finite.size:
        finite = vals[np.isfinite(vals)]
    if not finite.size:
        return [f"{band_text(band)}: no estimate yet"]
    lo, hi = min(finite.min(), 0.0), max(finite.max(), 0.0)
    span = hi - lo or 1.0

    def pos(x):
        return int(np.clip(round((x - lo) / span * (width - 1)), 0, width - 1))

    out = [f"{band_text(band)}, B-A [dB] from {lo:+.1f} to {hi:+.1f}: "
           "[ sequence ] ( fixed ) * estimate | 0"]
    for hours, row in zip(h[C.HOURS], vals, strict=True):
        line = [" "] * width
        est, clo, chi, slo, shi = row
        if np.isfinite(slo) and np.isfinite(shi):
            for i in range(pos(slo), pos(shi) + 1):
                line[i] = "-"
            line[pos(slo)], line[pos(shi)] = "[", "]"
        zero = pos(0.0)
        if line[zero] == " ":
            line[zero] = "|"
        if np.isfinite(clo) and np.isfinite(chi):
            line[pos(clo)], line[pos(chi)] = "(", ")"
        if np.isfinite(est):
            line[pos(est)] = "*"
        out.append(f"{hours:7.1f} h " + "".join(line).rstrip())
    return out


def terminal_view(history: pd.DataFrame) -> str:
    """The whole terminal view: each band's chart, then the summary."""
    parts = []
    for band in _bands(history):
        parts += terminal_chart(history, band) + [""]
    return "\n".join(parts + summary_lines(history))


def sequence_plot(history: pd.DataFrame, band: str, ax=None, *, margin_db: float = 0.0):
    """The estimate of one band over time with its fixed-time interval and its confidence
    sequence; returns the Axes.

    Parameters
    ----------
    history : pandas.DataFrame
        A history (:func:`spotkit.monitor.track.add_sequence`).
    band : str
        Which band.
    ax : matplotlib.axes.Axes, optional
    margin_db : float
        Draw the no-difference margin (+-) when positive [dB].
    """
    import matplotlib.pyplot as plt

    if ax is None:
        _, ax = plt.subplots(figsize=(7, 3.2))
    h = history[history[C.BAND].astype(str) == band]
    x = h[C.HOURS].to_numpy(float)
    ax.fill_between(x, h[C.CS_LOW], h[C.CS_HIGH], color="#7aa6c2", alpha=0.35,
                    label="confidence sequence (any number of looks)")
    ax.fill_between(x, h[C.CI_LOW], h[C.CI_HIGH], color="#d9822b", alpha=0.45,
                    label="fixed-time 95 % interval (one look)")
    ax.plot(x, h[C.B_MINUS_A], color="#222222", lw=1.4, marker="o", ms=3,
            label="B-A estimate at each look")
    ax.axhline(0.0, color="#555555", lw=0.8)
    if margin_db > 0:
        for m in (-margin_db, margin_db):
            ax.axhline(m, color="#555555", lw=0.8, ls=":")
    ax.set_xlabel("hours of data [h]")
    ax.set_ylabel("B - A [dB]")
    ax.set_title(band_text(band))
    ax.legend(loc="best", fontsize="small")
    ax.grid(alpha=0.3)
    return ax


def _figure_png(history: pd.DataFrame, margin_db: float) -> str:
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    bands = _bands(history)
    fig, axes = plt.subplots(len(bands), 1, figsize=(7.5, 3.3 * len(bands)), squeeze=False)
    for band, ax in zip(bands, axes[:, 0], strict=True):
        sequence_plot(history, band, ax, margin_db=margin_db)
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110)
    plt.close(fig)
    return base64.b64encode(buf.getvalue()).decode("ascii")


def page_html(history: pd.DataFrame, *, title: str, refresh_s: int | None = 600,
              margin_db: float = 0.0, notes: list[str] | tuple = ()) -> str:
    """The watch page as a string (self-contained; reloads itself every ``refresh_s`` s)."""
    e = html.escape
    head = (f'<meta http-equiv="refresh" content="{int(refresh_s)}">' if refresh_s else "")
    rows, verdicts = [], []
    for r in latest(history).itertuples(index=False):
        r = r._asdict()
        stop = "stop" if r[C.CAN_STOP] else "go"
        rows.append(
            f"<tr class='{stop}'><td>{e(band_text(r[C.BAND]))}</td><td>{r[C.HOURS]:.1f}</td>"
            f"<td>{int(r[C.PAIRS]):,}</td><td>{_fmt(r[C.B_MINUS_A])}</td>"
            f"<td>{_fmt(r[C.CI_LOW])} to {_fmt(r[C.CI_HIGH])}</td>"
            f"<td>{_fmt(r[C.CS_LOW])} to {_fmt(r[C.CS_HIGH])}</td>"
            f"<td>{_fmt(r[C.WIDTH_SHRINK], '{:.0%}')}</td></tr>")
        verdicts.append(f"<li class='{stop}'>{e(r[C.VERDICT])}</li>")
    img = (f'<img alt="B-A over time" src="data:image/png;base64,'
           f'{_figure_png(history, margin_db)}">' if len(history) else
           "<p>No estimate yet.</p>")
    note_html = "".join(f"<li>{e(n)}</li>" for n in notes)
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">{head}
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{e(title)}</title>
<style>
body {{ font-family: system-ui, sans-serif; margin: 1em auto; max-width: 60em;
       padding: 0 0.8em; color: #222; }}
table {{ border-collapse: collapse; width: 100%; font-size: 0.92em; }}
th, td {{ border-bottom: 1px solid #ddd; padding: 0.3em 0.4em; text-align: left;
          vertical-align: top; }}
ul.verdicts {{ padding-left: 1.2em; font-size: 1.05em; }}
li.stop {{ font-weight: bold; color: #1b5e20; }}
li.go {{ color: #7a4a00; }}
.wrap {{ overflow-x: auto; }}
img {{ max-width: 100%; height: auto; }}
.small {{ color: #666; font-size: 0.85em; }}
h1 {{ font-size: 1.5em; }}
</style></head><body>
<h1>{e(title)}</h1>
<p class="small">This page reloads itself every {int(refresh_s or 0)} s. The confidence
sequence stays right however often you look; the fixed-time interval is right only at one
look chosen in advance.</p>
<ul class="verdicts">{''.join(verdicts) or '<li>No estimate yet.</li>'}</ul>
<div class="wrap"><table>
<tr><th>band</th><th>hours</th><th>pairs</th><th>B-A [dB]</th><th>fixed 95 % [dB]</th>
<th>sequence [dB]</th><th>width now / first</th></tr>
{''.join(rows)}
</table></div>
{img}
{f'<h2>Set aside</h2><ul>{note_html}</ul>' if note_html else ''}
</body></html>
"""


def write_page(history: pd.DataFrame, path, **kw) -> None:
    """Write :func:`page_html` to ``path`` atomically."""
    text = page_html(history, **kw)
    with staged([path]) as (tmp,):
        tmp.write_text(text, encoding="utf-8")


__all__ = ["CHART_WIDTH", "latest", "summary_lines", "terminal_chart", "terminal_view",
           "sequence_plot", "page_html", "write_page"]
