"""A shareable, self-contained HTML report of one antenna comparison.

The report is one HTML file with every figure embedded as a PNG data URI, so it can be
mailed to a club or posted beside an article and opened anywhere with no network. It holds
the job in one line, a data summary, the verdict table with confidence intervals, maps and
plots, the method and its assumptions in plain words, and the safety cautions.
"""
from __future__ import annotations

import base64
import html
import io
from datetime import UTC, datetime
from pathlib import Path

import numpy as np
import pandas as pd

from spotkit import __version__
from spotkit import columns as C
from spotkit.errors import UsageError

#: One line that says what spotkit does (the first line of every report).
JOB = ("spotkit compares two amateur-radio antennas with numbers, from weak-signal beacon "
       "spot reports: how many dB antenna B beats antenna A, how sure that is, and where.")

#: Safety cautions, in the trade's usual words (also in the README).
CAUTIONS = [
    "Keep antennas and feed lines well clear of power lines.",
    "Outdoor antennas need lightning protection and grounding according to your local "
    "electrical codes.",
    "RF exposure limits apply to transmitting antennas: do the exposure evaluation your "
    "licence requires.",
    "Unattended or automatic beacon operation, and the power you use, must be permitted by "
    "your licence and national rules.",
    "spotkit analyses reports; it does not replace local codes or licensed practice.",
]

_DESIGN_WORDS = {
    "simultaneous": (
        "Both antennas beaconed in the same slots under two calls. Each receiver's report of "
        "A and of B in the same slot form a pair, so propagation and the receiver's noise "
        "floor are shared by both halves of a pair and cancel in the difference."),
    "alternating": (
        "One call switched between the antennas by a schedule. A receiver's report in an A "
        "slot is paired with its report in the neighbouring B slot; propagation changes a "
        "little between neighbouring slots, which widens the interval."),
    "receive": (
        "Two co-located receivers heard the same transmitters. Each transmitter's signal in "
        "one slot, as heard on A and on B, forms a pair; the transmitter's power and path "
        "cancel in the difference, and the bootstrap resamples transmitters."),
    "before-after": (
        "One antenna was changed at a moment. Its reports before and after are compared "
        "relative to other stations heard by the same receivers in the same slots. This "
        "design is weaker: propagation, the control stations and the receivers all change "
        "between the two periods. A slot where the target was on the air but not heard "
        "counts as an upper bound; the interval resamples days as well as receivers, and "
        "with a single day in a period none is given."),
}

_METHOD_WORDS = [
    "SNR is normalised to 1 W of transmit power using the power each report states "
    "(10x the power is +10 dB).",
    "Only differences measured at the same receiver in the same slot (or neighbouring slots) "
    "are used, so each receiver's own noise floor and antenna cancel out.",
    "A weak signal is simply not reported: when only one antenna was heard, the other was "
    "below that receiver's decode threshold (taken as the weakest SNR the receiver ever "
    "reported). The headline estimate is a censored-normal (Tobit-type) maximum-likelihood "
    "fit to the paired differences that uses these one-sided pairs as bounds; the estimate "
    "from pairs heard by both antennas alone is shown beside it and is biased towards 0 dB "
    "when many reports sit near the threshold.",
    "The 95 % confidence interval comes from a cluster bootstrap that resamples whole "
    "receivers (transmitters in the receive design), because one receiver's reports share "
    "its location, antenna and noise and are not independent.",
    "Beside the headline (in the CSV and JSON output): the Hodges-Lehmann estimate of the "
    "pairs heard by both, and side tests that count receivers, not pairs, as the "
    "independent units - a Wilcoxon signed-rank test and a sign test on each receiver's "
    "median difference, and a sign test over receivers of whether B was heard alone more "
    "often than A. Tests that count every pair overstate the evidence many times over. "
    "p-values across groups are adjusted with the Benjamini-Hochberg procedure; p-values "
    "below 1e-16 are shown as '< 1e-16'.",
    "A verdict names a better antenna only when the interval excludes 0, at least 5 "
    "receivers (transmitters in the receive design) carry the group and no more than 10 % of "
    "the bootstrap resamples failed; otherwise it says 'too little data' and why. When A is "
    "better its interval is given as A minus B.",
    "Maps per receiver or locator square resample blocks of hours within each receiver "
    "(the cell's few receivers cannot be resampled), and P(heard) intervals resample whole "
    "far stations.",
    "Assumptions: the fast fading of the two antennas is independent and normal in dB with "
    "one spread per group; the antennas' difference is constant within a group; the decode "
    "threshold of a receiver does not change during the run.",
]

_CSS = """
*{box-sizing:border-box}
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;max-width:1100px;margin:1.2em auto;
padding:0 .8em;color:#1b1b1b;line-height:1.45;overflow-wrap:break-word}
h1{font-size:1.45em;margin:.2em 0} h2{border-bottom:1px solid #ccc;padding-bottom:.2em;
margin-top:1.6em} h3{margin:.8em 0 .2em;font-size:1em} .job{color:#333;font-size:.95em}
.headline{font-size:1.15em;background:#eef4fb;border-left:5px solid #2166ac;padding:.5em .8em;
margin:.6em 0} .who{margin:.2em 0 .4em}
.tbl{overflow-x:auto;max-width:100%;-webkit-overflow-scrolling:touch;margin:.4em 0}
table{border-collapse:collapse;font-size:.9em}
th,td{border:1px solid #ccc;padding:.25em .5em;text-align:right;vertical-align:top}
th{background:#eef} td.l,th.l{text-align:left} td{white-space:nowrap}
td.l{white-space:normal;min-width:8em} td.verdict{min-width:20em;max-width:40em}
.grid td,.grid th{padding:.2em .35em;text-align:center;white-space:nowrap;font-size:.92em}
.grid td.sig{font-weight:700;outline:2px solid #000;outline-offset:-2px}
.grid td.ns{color:#555;background-image:repeating-linear-gradient(135deg,transparent 0 4px,
rgba(0,0,0,.13) 4px 5px)} .grid th.band{text-align:left}
.grid.hour td,.grid.hour th{padding:.15em .12em;font-size:.78em}
figure{margin:1em 0} figure img{max-width:100%;height:auto;border:1px solid #ddd}
figcaption{color:#555;font-size:.9em} .caution{background:#fff6e5;border-left:4px solid #e0a000;
padding:.6em 1em} .small{color:#666;font-size:.85em}
pre.paste{white-space:pre;overflow-x:auto;background:#f6f6f6;border:1px solid #ddd;
padding:.6em;font-size:.85em}
@media (max-width:600px){body{margin:.5em auto;padding:0 .5em} h1{font-size:1.25em}
h2{font-size:1.2em} .headline{font-size:1.05em}
table{font-size:.82em} td.verdict{min-width:24em}}
@media print{body{max-width:none;margin:0;font-size:10.5pt} .tbl{overflow:visible}
details>summary{list-style:none} figure,table,.headline,pre.paste{break-inside:avoid}
h2,h3{break-after:avoid} a{color:inherit} .grid td{-webkit-print-color-adjust:exact;
print-color-adjust:exact}}
"""

#: opens the folded tables before printing (the page needs no script otherwise)
_PRINT_SCRIPT = ("<script>addEventListener('beforeprint',()=>document.querySelectorAll("
                 "'details').forEach(d=>d.open=true))</script>")


def figure_to_data_uri(fig, dpi: int = 96) -> str:
    """PNG data URI of a matplotlib figure (the figure is closed afterwards)."""
    import matplotlib.pyplot as plt

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, bbox_inches="tight")
    plt.close(fig)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def data_summary(spots: pd.DataFrame, ingest_summary=None) -> pd.DataFrame:
    """Key figures of the data: period, spots, stations, bands, rejects.

    Returns
    -------
    pandas.DataFrame
        Two columns, ``item`` and ``value`` (text).
    """
    rows = []
    if len(spots):
        t0, t1 = spots[C.SLOT].min(), spots[C.SLOT].max()
        rows.append(("period (UTC)", f"{t0:%Y-%m-%d %H:%M} to {t1:%Y-%m-%d %H:%M}"))
    rows += [
        ("spots", f"{len(spots):,}"),
        ("transmitters", f"{spots[C.TX_CALL].nunique():,}"),
        ("receivers", f"{spots[C.RX_CALL].nunique():,}"),
    ]
    per_band = spots[C.BAND].astype(str).value_counts()
    from spotkit.bands import sort_bands

    rows.append(("spots per band", ", ".join(f"{b}: {per_band[b]:,}"
                                             for b in sort_bands(per_band.index))))
    if ingest_summary is not None:
        s = ingest_summary
        rows.append(("rows read", f"{s.rows_read:,}"))
        rows.append(("rows set aside", f"{s.rejected:,}" + (
            " (" + ", ".join(f"{k}: {v:,}" for k, v in s.rejected_by_reason.items()) + ")"
            if s.rejected else "")))
        rows.append(("exact duplicates removed", f"{s.duplicates:,}"))
    return pd.DataFrame(rows, columns=["item", "value"])


def verdict_table(result, overall: bool = True) -> pd.DataFrame:
    """The verdict table of a comparison: one row per group with estimate, CI and counts.

    ``overall=False`` leaves out the overall row (shown once per report). When the user
    named the antennas, the headings use the names ("dipole - vertical (dB)", "only
    vertical"). p-values below
    the floating-point floor show as ``"< 1e-16"``
    (:func:`spotkit.compare.estimate.format_p_value`); the side tests (rank, sign) are not
    in this table: they are in the CSV/JSON output, counted over receivers.
    """
    from spotkit.compare.estimate import format_p_value

    frame = result.to_frame()
    verdicts = result.verdicts()
    if not overall:
        frame, verdicts = frame.iloc[1:], verdicts[1:]
    out = pd.DataFrame({"group": frame[C.GROUP]})

    def f(x, fmt):
        return "" if pd.isna(x) else format(x, fmt)

    la, lb = result.labels if getattr(result, "named", False) else ("A", "B")
    out[f"{lb} - {la} (dB)"] = [f(x, "+.2f") for x in frame[C.B_MINUS_A]]
    out[f"{result.confidence:.0%} CI (dB)"] = [
        "" if pd.isna(lo) else f"{lo:+.2f} to {hi:+.2f}"
        for lo, hi in zip(frame[C.CI_LOW], frame[C.CI_HIGH], strict=True)]
    out["pairs"] = [f(x, ",.0f") for x in frame[C.PAIRS]]
    out[f"only {la}"] = [f(x, ",.0f") for x in frame[C.ONLY_A]]
    out[f"only {lb}"] = [f(x, ",.0f") for x in frame[C.ONLY_B]]
    if C.BOTH_HEARD in frame:
        out["both-heard only (dB)"] = [f(x, "+.2f") for x in frame[C.BOTH_HEARD]]
    if C.P_ADJUSTED in frame:
        out["p (adjusted)"] = [format_p_value(x) for x in frame[C.P_ADJUSTED]]
    out["verdict"] = verdicts
    return out


def _table_html(df: pd.DataFrame, left=("group", "item", "value", "verdict")) -> str:
    """A table in its own scrolling box, so a wide table never widens the page."""
    def cls(c):
        return ("l verdict" if c == "verdict" else "l") if c in left else ""

    head = "".join(f'<th class="{cls(c)}">{html.escape(str(c))}</th>' for c in df.columns)
    body = []
    for row in df.itertuples(index=False):
        cells = "".join(f'<td class="{cls(c)}">{html.escape(str(v))}</td>'
                        for c, v in zip(df.columns, row, strict=True))
        body.append(f"<tr>{cells}</tr>")
    return (f"<div class='tbl'><table><thead><tr>{head}</tr></thead>"
            f"<tbody>{''.join(body)}</tbody></table></div>")


def _cell_colour(est: float, vmax: float) -> str:
    """Background of a grid cell: the RdBu scale (blue: B better), as in the plots."""
    import matplotlib

    if not np.isfinite(est):
        return "#ffffff"
    r, g, b, _ = matplotlib.colormaps["RdBu"](0.5 + 0.5 * float(np.clip(est / vmax, -1, 1)))
    return f"#{int(r * 255):02x}{int(g * 255):02x}{int(b * 255):02x}"


def _grid_html(result, vmax: float) -> str:
    """One "where" grid (band x distance, bearing or hour) as a coloured HTML table."""
    from spotkit.compare.grid import difference_grid

    grid = difference_grid(result)
    if grid.empty:
        return ""
    cells = (grid[[C.CELL, C.CELL_ORDER]].drop_duplicates(C.CELL)
             .sort_values(C.CELL_ORDER)[C.CELL].tolist())
    key = grid[C.GRID_KEY].iloc[0]
    basis = result.options.get("hour", "utc")
    what = {"distance": "distance", "bearing": "bearing from home",
            "hour": "hour of day, " + ("UTC" if basis == "utc"
                                       else "local solar time at the path midpoint")}[key]
    shown = [c.replace(" h", "") for c in cells] if key == "hour" else cells
    head = "<th class='band'>band</th>" + "".join(f"<th>{html.escape(c)}</th>" for c in shown)
    rows = []
    for band, sub in grid.groupby(C.BAND, sort=False):
        by_cell = sub.set_index(C.CELL)
        tds = []
        for c in cells:
            if c not in by_cell.index:
                tds.append("<td></td>")
                continue
            r = by_cell.loc[c]
            est = float(r[C.B_MINUS_A])
            if not np.isfinite(est):
                tds.append("<td class='ns' title='no estimate'>.</td>")
                continue
            sig = bool(r[C.SIGNIFICANT])
            colour = _cell_colour(est, vmax)
            ink = "#fff" if abs(est) > 0.6 * vmax else "#000"
            tip = (f"{est:+.1f} dB, CI {float(r[C.CI_LOW]):+.1f} to "
                   f"{float(r[C.CI_HIGH]):+.1f}, {int(r[C.PAIRS]):,} pairs")
            tds.append(f"<td class='{'sig' if sig else 'ns'}' title='{tip}' "
                       f"style='background-color:{colour};color:{ink}'>"
                       f"{est:+.1f}{'*' if sig else ''}</td>")
        rows.append(f"<tr><th class='band'>{html.escape(str(band))}</th>{''.join(tds)}</tr>")
    return (f"<h3>by band and {html.escape(what)}</h3><div class='tbl'>"
            f"<table class='grid {html.escape(key)}'>"
            f"<thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table></div>")


def where_html(results) -> str:
    """The "where" answer at the top of the report: band x distance, bearing and hour grids
    of B minus A [dB] on one colour scale, significant cells bold with a star and outlined,
    the others hatched; ``""`` when no comparison has those groups."""
    from spotkit.compare.grid import GRID_KEYS, difference_grid, grid_key
    from spotkit.errors import UsageError as _Usage

    picked = {}
    for res in results:
        try:
            picked.setdefault(grid_key(res), res)
        except _Usage:
            continue
    if not picked:
        return ""
    ests = np.concatenate([difference_grid(r)[C.B_MINUS_A].to_numpy(dtype=float)
                           for r in picked.values()])
    ests = ests[np.isfinite(ests)]
    vmax = float(max(1.0, np.ceil(np.abs(ests).max()))) if ests.size else 1.0
    first = next(iter(picked.values()))
    la, lb = first.labels
    parts = [f"<p class='small'>{html.escape(lb)} minus {html.escape(la)} [dB] per group. "
             f"<strong>Bold*</strong>, outlined: the {first.confidence * 100:g} % interval "
             "excludes "
             f"0 dB with enough receivers; hatched grey: no difference shown; dot: no "
             f"estimate. Blue: {html.escape(lb)} better, red: {html.escape(la)} better "
             f"(scale +-{vmax:g} dB). Each group's interval is in the verdict tables below.</p>"]
    parts += [_grid_html(picked[k], vmax) for k in GRID_KEYS if k in picked]
    return "".join(parts)


def _where_words(grid: pd.DataFrame, la: str, lb: str, limit: int = 4) -> list[str]:
    """Two or three sentences on where B wins and loses, from a band x distance grid."""
    from spotkit.compare.estimate import group_label

    def place(r):
        return group_label({C.BAND: r[C.BAND], C.DISTANCE_MIN: r["_lo"],
                            C.DISTANCE_MAX: r["_hi"]}, sentence=True)

    def listing(rows, sign, unit="dB"):
        items = [f"{place(r)} ({sign * r[C.B_MINUS_A]:+.1f} {unit})" for r in rows[:limit]]
        if len(rows) > limit:
            return ", ".join(items) + f" and {len(rows) - limit} more"
        return ", ".join(items[:-1]) + " and " + items[-1] if len(items) > 1 else items[0]

    est = grid[C.B_MINUS_A]
    win = grid[grid[C.SIGNIFICANT] & (est > 0)].sort_values(C.B_MINUS_A, ascending=False)
    lose = grid[grid[C.SIGNIFICANT] & (est < 0)].sort_values(C.B_MINUS_A)
    unclear = grid[~grid[C.SIGNIFICANT]]
    out = []
    win_rows = win.to_dict("records")
    lose_rows = lose.to_dict("records")
    out.append(f"{lb} is better {listing(win_rows, 1)}." if win_rows
               else f"{lb} is not shown better at any band and distance.")
    out.append(f"{la} is better {listing(lose_rows, -1)}." if lose_rows
               else f"{la} is not shown better at any band and distance.")
    if len(unclear):
        out.append(f"No difference shown, or too little data ({lb} minus {la}): "
                   + listing(unclear.to_dict("records"), 1) + ".")
    return out


def markdown_summary(result, by_distance=None) -> str:
    """A plain-text summary to paste into a forum post or an e-mail (Markdown).

    The headline verdict, the receivers and pairs behind it, a band x distance table of B
    minus A (``*``: the interval excludes 0 dB with enough receivers) and two or three
    sentences on where B wins and where it loses.

    Parameters
    ----------
    result : ComparisonResult
        Any comparison of the run (its overall row gives the headline).
    by_distance : ComparisonResult, optional
        The comparison by band and distance; without it the table and sentences are left
        out.

    Returns
    -------
    str
        Markdown text (readable as plain text), ending in a newline.

    Examples
    --------
    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.estimate import compare_antennas
    >>> sim = simulate_spots(days=0.2, n_receivers=40, bands=("20m",), difference_db=3.0,
    ...                      seed=1)
    >>> res = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, n_boot=30,
    ...                        by=("band", "distance"), min_pairs=5,
    ...                        labels=("vertical", "dipole"))
    >>> print(markdown_summary(res, res))  # doctest: +NORMALIZE_WHITESPACE
    **dipole (B, Q1ABD) against vertical (A, Q1ABC)**, simultaneous design
    <BLANKLINE>
    dipole (B) is 2.8 dB better than vertical (A) (95 % CI 2.6 to 3.0 dB, 151 pairs)
    <BLANKLINE>
    Data: 18 receivers, 151 pairs (150 heard both, 0 only vertical, 1 only dipole).
    <BLANKLINE>
    dipole minus vertical [dB] by band and distance (* = 95 % CI excludes 0):
    <BLANKLINE>
    | band | < 1,000 km | 1,000-3,000 km | > 6,000 km |
    |------|------------|----------------|------------|
    | 20m  | +3.2*      | +2.7           | +2.8*      |
    <BLANKLINE>
    dipole is better on 20 m, within 1,000 km (+3.2 dB) and on 20 m, beyond 6,000 km (+2.8
    dB). vertical is not shown better at any band and distance. No difference shown, or too
    little data (dipole minus vertical): on 20 m, at 1,000-3,000 km (+2.7 dB).
    <BLANKLINE>
    """
    from spotkit.compare.grid import difference_grid, grid_table

    la, lb = result.labels
    o = result.overall
    head = (f"{lb} (B, {result.b}) against {la} (A, {result.a})" if result.named
            else f"B = {result.b} against A = {result.a}")
    lines = [f"**{head}**, {result.design} design",
             "", result.verdicts()[0], ""]
    unit = "transmitters" if result.design == "receive" else "receivers"

    def n(k):
        v = o.get(k)
        return "?" if v is None or pd.isna(v) else f"{int(v):,}"
    lines.append(f"Data: {n(C.CLUSTERS)} {unit}, {n(C.PAIRS)} pairs ({n(C.BOTH)} heard "
                 f"both, {n(C.ONLY_A)} only {la}, {n(C.ONLY_B)} only {lb}).")
    if by_distance is not None:
        grid = difference_grid(by_distance)
        if len(grid):
            tab = grid_table(grid)
            head = ["band"] + [str(c) for c in tab.columns]
            rows = [[str(b)] + [str(v) for v in r] for b, r in zip(tab.index, tab.to_numpy(),
                                                                    strict=True)]
            widths = [max(len(x) for x in col) for col in zip(head, *rows, strict=True)]

            def md(cells):
                return "| " + " | ".join(c.ljust(w) for c, w in zip(cells, widths,
                                                                   strict=True)) + " |"
            lines += ["", f"{lb} minus {la} [dB] by band and distance (* = "
                      f"{by_distance.confidence * 100:g} % CI excludes 0):",
                      "", md(head), "|" + "|".join("-" * (w + 2) for w in widths) + "|"]
            lines += [md(r) for r in rows]
            grid = _with_edges(grid, by_distance)
            lines += ["", " ".join(_where_words(grid, la, lb))]
    import textwrap

    # prose lines wrapped for e-mail; table lines as they are
    out = [ln if ln.startswith("|") else textwrap.fill(ln, 88, break_on_hyphens=False)
           for ln in lines]
    return "\n".join(out) + "\n"


# --- several antennas and series of changes (issue 18) -------------------------------------

def _is_series(result) -> bool:
    """A :class:`~spotkit.compare.series.SeriesResult` (else a ``MultiResult``)."""
    return hasattr(result, "periods")


def _signed(x) -> str:
    return "-" if x is None or not np.isfinite(x) else f"{x:+.1f}"


def several_table(result) -> pd.DataFrame:
    """The comparisons of several antennas or of a series of changes, as shown.

    Parameters
    ----------
    result : MultiResult or SeriesResult
        From :func:`spotkit.compare.multi.compare_several` or
        :func:`spotkit.compare.series.compare_series`.

    Returns
    -------
    pandas.DataFrame
        One row per comparison, text cells: the comparison ("C minus A"), its kind, the
        difference [dB], the simultaneous interval [dB], for several antennas the
        one-at-a-time interval [dB], the family-wise p, pairs (reports in a series) and
        receivers, and the note.
    """
    conf = float(result.options.get("confidence", 0.95)) * 100
    t = result.table if _is_series(result) else result.contrasts
    out = pd.DataFrame({"comparison": t[C.SECOND].astype(str) + " minus "
                        + t[C.FIRST].astype(str)})
    if _is_series(result):
        out["kind"] = t[C.CONTRAST].map({"first": "against the first",
                                         "step": "step",
                                         "first, step": "step, against the first"})
    out["difference [dB]"] = [_signed(x) for x in t[C.B_MINUS_A].astype(float)]
    out[f"{conf:g} % simultaneous [dB]"] = [
        "none" if not np.isfinite(lo) else f"{lo:+.1f} to {hi:+.1f}"
        for lo, hi in zip(t[C.CI_SIM_LOW].astype(float), t[C.CI_SIM_HIGH].astype(float),
                          strict=True)]
    if not _is_series(result):
        out["one at a time [dB]"] = [
            "none" if not np.isfinite(lo) else f"{lo:+.1f} to {hi:+.1f}"
            for lo, hi in zip(t[C.CI_LOW].astype(float), t[C.CI_HIGH].astype(float),
                              strict=True)]
    n_boot = int(result.options.get("n_boot", 1000))
    out["family-wise p"] = [
        "-" if not np.isfinite(p) else (f"< {1 / n_boot:.2g}" if p == 0 and not
                                        _is_series(result) else f"{p:.2g}")
        for p in t[C.P_FAMILY].astype(float)]
    out["reports" if _is_series(result) else "pairs"] = [
        f"{int(x):,}" if np.isfinite(x) else "0" for x in t[C.PAIRS].astype(float)]
    unit = "transmitters" if getattr(result, "design", "") == "receive" else "receivers"
    out[unit] = [f"{int(x):,}" if np.isfinite(x) else "-"
                 for x in t[C.CLUSTERS].astype(float)]
    out["note"] = t[C.NOTE].fillna("").astype(str).to_numpy()
    return out


def _contrast_words(first, second, est, lo, hi, conf) -> str:
    """One comparison in words: who is better by how much, or not separated."""
    if not np.isfinite(est):
        return f"{second} against {first}: no estimate"
    if not np.isfinite(lo):
        return f"{second} minus {first} is {est:+.1f} dB, with no interval"
    if lo > 0:
        return (f"{second} is {est:.1f} dB better than {first} ({lo:.1f} to {hi:.1f} dB)")
    if hi < 0:
        return (f"{first} is {-est:.1f} dB better than {second} ({-hi:.1f} to {-lo:.1f} dB)")
    return (f"{second} and {first} are not separated ({second} minus {first} {est:+.1f} dB, "
            f"{lo:+.1f} to {hi:+.1f} dB)")


def several_sentences(result) -> tuple[str, list[str]]:
    """The headline and the plain sentences of a several-antenna or series result.

    Returns
    -------
    headline : str
        The ranking (several antennas) or the steps (series).
    sentences : list of str
        Every comparison in words, and what the intervals mean.
    """
    conf = float(result.options.get("confidence", 0.95))
    if _is_series(result):
        t = result.table
        steps = t[t[C.CONTRAST].str.contains("step")]
        firsts = t[t[C.CONTRAST].str.contains("first")]
        head = "Steps: " + "; ".join(
            _contrast_words(r[C.FIRST], r[C.SECOND], r[C.B_MINUS_A], r[C.CI_SIM_LOW],
                            r[C.CI_SIM_HIGH], conf) for r in steps.to_dict("records")) + "."
        words = []
        if len(firsts) > 1:
            words.append("Against the first period: " + "; ".join(
                _contrast_words(r[C.FIRST], r[C.SECOND], r[C.B_MINUS_A], r[C.CI_SIM_LOW],
                                r[C.CI_SIM_HIGH], conf)
                for r in firsts.to_dict("records")[1:]) + ".")
        words.append(f"The {len(t)} intervals hold together with {conf * 100:g} % "
                     "confidence (before/after with control stations; Bonferroni, so they "
                     "are on the wide side).")
        return head, words
    t = result.contrasts
    head = "Ranking: " + result.ranking + "."
    words = ["; ".join(_contrast_words(r[C.FIRST], r[C.SECOND], r[C.B_MINUS_A],
                                       r[C.CI_SIM_LOW], r[C.CI_SIM_HIGH], conf)
                       for r in t.to_dict("records")) + ".",
             f"The {len(t)} intervals hold together with {conf * 100:g} % confidence "
             "(max-T cluster bootstrap, one resample of the receivers for all comparisons)."]
    return head, words


def several_markdown(result) -> str:
    """A plain-text (Markdown) summary of several antennas or of a series of changes.

    The headline (ranking, or the steps), a table of every comparison with its
    simultaneous interval, and plain sentences; the style of :func:`markdown_summary`.

    Parameters
    ----------
    result : MultiResult or SeriesResult

    Returns
    -------
    str
        Markdown text ending in a newline.

    Examples
    --------
    >>> from spotkit.sim.simulate import simulate_spots
    >>> from spotkit.compare.multi import compare_several
    >>> sim = simulate_spots(days=0.25, n_receivers=40, bands=("20m",), difference_db=2.0,
    ...                      more_antennas=[6.0], seed=3)
    >>> res = compare_several(sim.spots, "simultaneous", sim.params["calls"], n_boot=100)
    >>> print(several_markdown(res).splitlines()[2])
    Ranking: Q1ABE > Q1ABD > Q1ABC with 95 % simultaneous confidence.
    """
    import textwrap

    full = several_table(result)
    tab = full.drop(columns="note")
    if _is_series(result):
        title = (f"**Series of changes of {result.call}**: " + ", ".join(
            f"{lab} from {t:%Y-%m-%d %H:%M}" for lab, t in result.periods))
    else:
        title = (f"**{len(result.antennas)} antennas ({', '.join(result.antennas)}), "
                 f"reference {result.reference}**, {result.design} design")
    head, words = several_sentences(result)
    cells = [list(tab.columns)] + [[str(v) for v in r] for r in tab.to_numpy()]
    widths = [max(len(x) for x in col) for col in zip(*cells, strict=True)]

    def md(row):
        return "| " + " | ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)) + " |"
    lines = [title, "", head, "", md(cells[0]),
             "|" + "|".join("-" * (w + 2) for w in widths) + "|"]
    lines += [md(r) for r in cells[1:]]
    firsts = {}  # the first clause of each note, said once
    for c, n in zip(full["comparison"], full["note"], strict=True):
        if n:
            firsts.setdefault(n.split(";")[0].strip(), []).append(c)
    notes = [f"{', '.join(cs)}: {n}" for n, cs in firsts.items()]
    lines += ["", " ".join(words)]
    if notes:
        lines += ["", "Notes: " + "; ".join(notes) + "."]
    out = [ln if ln.startswith("|") else textwrap.fill(ln, 88, break_on_hyphens=False)
           for ln in lines]
    return "\n".join(out) + "\n"


def several_html(result) -> str:
    """The report section of several antennas ("Several antennas") or of a series of
    changes ("Series of changes"): headline, table, sentences and the Markdown to paste.

    Parameters
    ----------
    result : MultiResult or SeriesResult

    Returns
    -------
    str
        An HTML fragment beginning with its ``<h2>``.
    """
    head, words = several_sentences(result)
    if _is_series(result):
        title, anchor = "Series of changes", "series"
        who = (f"{result.call}: " + ", ".join(f"{lab} from {t:%Y-%m-%d %H:%M} UTC"
                                              for lab, t in result.periods)
               + ". Each period against the first and each step between neighbours, "
               "each by the before/after design with control stations on the two periods' "
               "reports only.")
    else:
        title, anchor = "Several antennas", "several"
        who = (f"{len(result.antennas)} antennas ({', '.join(result.antennas)}), "
               f"{result.design} design; "
               + ("every pair" if result.options.get("all_pairs") else
                  f"each against {result.reference}") + ".")
    table = several_table(result)
    table["note"] = [n.split(";")[0].strip() for n in table["note"]]
    if not table["note"].str.len().any():
        table = table.drop(columns="note")
    return (f"<h2 id='{anchor}'>{title}</h2><p class='who'>{html.escape(who)}</p>"
            f"<p class='headline'><strong>{html.escape(head)}</strong></p>"
            + _table_html(table, left=("comparison", "kind", "note"))
            + "".join(f"<p>{html.escape(w)}</p>" for w in words)
            + "<details><summary>The same as text to paste</summary><pre class='paste'>"
            + html.escape(several_markdown(result)) + "</pre></details>")


def _with_edges(grid: pd.DataFrame, result) -> pd.DataFrame:
    """The grid with each cell's distance edges [km] (``_lo``, ``_hi``) from the result."""
    g = result.groups[[C.BAND, C.DISTANCE_MIN, C.DISTANCE_MAX]].copy()
    g[C.BAND] = g[C.BAND].astype(str)
    g[C.CELL_ORDER] = (g[C.DISTANCE_MIN].rank(method="dense").astype(int) - 1)
    g = g.rename(columns={C.DISTANCE_MIN: "_lo", C.DISTANCE_MAX: "_hi"})
    return grid.merge(g, on=[C.BAND, C.CELL_ORDER], how="left")


def _figures(spots, results, map_result, progress: bool):
    """(caption, data URI) for every figure of the report; failures are reported, not hidden."""
    from spotkit.viz import maps, plots
    from spotkit.viz.mapdata import result_antenna_spots

    def fig_of(obj):
        return obj if hasattr(obj, "savefig") else obj.figure

    result = results[0]

    def having(col):
        return next((r for r in results if col in r.groups.columns), None)
    sets = result_antenna_spots(spots, result)
    la, lb = result.labels
    jobs = [
        (f"Coverage by band: far stations coloured by their median SNR normalised to 1 W; "
         f"{la} (A) and {lb} (B) side by side on one scale." if sets is not None else
         "Coverage by band: far stations coloured by their median SNR normalised to 1 W "
         "(A and B pooled: the design's schedule cannot tell them apart here).",
         lambda: maps.coverage_map(spots, antennas=sets, labels=result.labels)),
    ]
    if map_result is not None:
        jobs.append((
            "B minus A per locator square on a diverging scale centred on 0 dB (blue: B "
            "better). Solid squares: the 95 % CI excludes 0 dB; faint, hatched: it does not. "
            "Triangles: squares heard by only one antenna.",
            lambda: maps.difference_map(map_result)))
    jobs.append(("What each antenna reached, with distance rings.",
                 lambda: maps.reach_map(result.pairs)))
    if having(C.BEARING_MIN) is not None:
        jobs.append(("B minus A by bearing from the home station, with the CI band.",
                     lambda c=C.BEARING_MIN, f=plots.bearing_plot: f(having(c))))
    if having(C.DISTANCE_MIN) is not None:
        jobs.append(("B minus A by distance, with CI bars.",
                     lambda c=C.DISTANCE_MIN, f=plots.distance_plot: f(having(c))))
    if having(C.ELEVATION_MIN) is not None:
        jobs.append(("B minus A by estimated elevation angle (hop geometry), with CI bars.",
                     lambda c=C.ELEVATION_MIN, f=plots.elevation_plot: f(having(c))))
    if having(C.HOUR) is not None:
        basis = result.options.get("hour", "utc")
        words = "UTC" if basis == "utc" else "local solar time at the path midpoint"
        jobs.append((f"B minus A by hour of day ({words}).",
                     lambda c=C.HOUR, f=plots.hour_plot: f(having(c))))
    jobs += [
        ("Probability of being heard against distance, A beside B, with Wilson intervals "
         "(among slots where the path was open to at least one antenna).",
         lambda: plots.heard_plot(result)),
        ("SNR normalised to 1 W against distance, with a running median per band and "
         "antenna (A solid, B dashed; the line breaks where a bin has fewer than 5 spots).",
         lambda: plots.snr_distance_plot(spots, calls=(result.a, result.b),
                                         labels=result.labels)),
        ("Spots per hour by band.", lambda: plots.spots_per_hour_plot(spots)),
    ]
    if result.named:  # captions in the antennas' names
        la, lb = result.labels
        jobs = [(c.replace("B minus A", f"{lb} minus {la}").replace("(blue: B better)",
                                                                   f"(blue: {lb} better)"), m)
                for c, m in jobs]
    from tqdm.auto import tqdm

    out, failed = [], []
    for caption, make in tqdm(jobs, desc="figures", unit="figure", disable=not progress):
        try:
            out.append((caption, figure_to_data_uri(fig_of(make()))))
        except Exception as exc:  # a figure that cannot be drawn is named, not hidden
            failed.append(f"{caption.split(':')[0].split('.')[0]}: {exc}")
    return out, failed


def build_report(spots: pd.DataFrame, results, *, ingest_summary=None, map_result=None,
                 title: str | None = None, figures: bool = True,
                 progress: bool = False, several=None) -> str:
    """HTML text of the report.

    Parameters
    ----------
    spots : pandas.DataFrame
        Canonical enriched spot table the comparison was made from.
    results : ComparisonResult or sequence of ComparisonResult
        The comparisons to report, all of the same design and calls, e.g. by band, by band
        and distance, and by band, distance and bearing. The first gives the headline; each
        gets a verdict table (long ones folded); figures use the first that has the groups
        a figure needs.
    ingest_summary : spotkit.io.ingest.IngestSummary, optional
        Adds rows read / set aside / duplicates to the data summary.
    map_result : ComparisonResult, optional
        A comparison grouped by locator square (or receiver) for the difference map.
    title : str, optional
    figures : bool
        Draw and embed the maps and plots.
    progress : bool
        Show a progress bar while drawing.
    several : MultiResult or SeriesResult, optional
        Adds a section "Several antennas" or "Series of changes" (ranking or steps, the
        table of comparisons with simultaneous intervals, sentences and a paste block)
        after the verdict tables; without it the report is the two-antenna one.

    Returns
    -------
    str
        A complete HTML document with embedded figures.
    """
    results = [results] if hasattr(results, "overall") else list(results)
    if not results:
        raise UsageError("build_report needs at least one comparison result")
    result = results[0]
    la, lb = result.labels
    title = title or (f"{lb} against {la}" if result.named
                      else f"Antenna comparison: A = {result.a}, B = {result.b}")
    parts = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
             "<meta name='viewport' content='width=device-width, initial-scale=1'>"
             f"<title>{html.escape(title)}</title><style>{_CSS}</style>{_PRINT_SCRIPT}"
             "</head><body>",
             f"<h1>{html.escape(title)}</h1>"]
    o = result.overall
    if not pd.isna(o.get(C.B_MINUS_A, np.nan)):
        parts.append(f"<p class='headline' id='verdict'><strong>"
                     f"{html.escape(result.verdicts()[0])}</strong></p>")
    parts.append(f"<p class='who'>A = {html.escape(result.who('A'))}, B = "
                 f"{html.escape(result.who('B'))}; {html.escape(result.design)} design.</p>")
    where = where_html(results)
    if where:
        parts.append(f"<h2 id='where'>Where {html.escape(lb)} is better or worse</h2>"
                     + where)
    parts.append(f"<p class='job'>{html.escape(JOB)}</p>")
    parts.append("<h2>Data</h2>" + _table_html(data_summary(spots, ingest_summary)))
    parts.append("<h2>Verdict</h2>")
    for res in results:
        table = verdict_table(res, overall=res is result)
        label = ("overall" if not res.by else "by " + ", ".join(res.by))
        if len(table) > 12:
            parts.append(f"<details><summary>{html.escape(label)} ({len(table)} groups; "
                         f"click to open)</summary>{_table_html(table)}</details>")
        else:
            parts.append(f"<h3>{html.escape(label)}</h3>{_table_html(table)}")
    if several is not None:
        parts.append(several_html(several))
    by_distance = next((r for r in results if tuple(r.by) == ("band", "distance")), None)
    parts.append("<h2 id='summary'>Summary to paste</h2><p class='small'>Plain text (Markdown) "
                 "for a forum post or an e-mail: select it and copy.</p><pre class='paste'>"
                 + html.escape(markdown_summary(result, by_distance)) + "</pre>")
    if result.set_aside:
        parts.append("<p class='small'>Set aside before pairing: " + html.escape(
            "; ".join(f"{k}: {v:,}" for k, v in result.set_aside.items())) + "</p>")
    if figures:
        figs, failed = _figures(spots, results, map_result, progress)
        parts.append("<h2>Maps and plots</h2>")
        for caption, uri in figs:
            parts.append(f"<figure><img src='{uri}' alt='{html.escape(caption)}'>"
                         f"<figcaption>{html.escape(caption)}</figcaption></figure>")
        if failed:
            parts.append("<p class='small'>Not drawn: " + html.escape("; ".join(failed))
                         + "</p>")
    parts.append("<h2>Method and assumptions</h2>")
    parts.append(f"<p>{html.escape(_DESIGN_WORDS.get(result.design, ''))}</p><ul>"
                 + "".join(f"<li>{html.escape(w)}</li>" for w in _METHOD_WORDS) + "</ul>")
    parts.append(f"<p class='small'>Method string: {html.escape(str(o.get(C.METHOD, '')))}"
                 "</p>")
    parts.append("<h2>Cautions</h2><div class='caution'><ul>"
                 + "".join(f"<li>{html.escape(c)}</li>" for c in CAUTIONS) + "</ul></div>")
    stamp = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    parts.append(f"<p class='small'>Made with spotkit {__version__} on {stamp}.</p>")
    parts.append("</body></html>")
    return "\n".join(parts)


#: The breakdowns every report shows, simplest first (see :func:`standard_comparisons`).
STANDARD_BREAKDOWNS = (("band",), ("band", "distance"), ("band", "bearing"),
                       ("band", "elevation"), ("band", "hour"))


def standard_comparisons(spots: pd.DataFrame, design: str, a: str, b: str | None = None, *,
                         by=None, breakdowns=STANDARD_BREAKDOWNS, map_level: str = "square",
                         n_boot: int = 1000, map_n_boot: int = 200, progress: bool = False,
                         **compare_kw):
    """Run the comparisons a report shows.

    Parameters
    ----------
    spots, design, a, b
        As in :func:`spotkit.compare.estimate.compare_antennas`.
    by : sequence of str, optional
        An extra, finer breakdown asked for by the user (shown last, folded when long).
    breakdowns : sequence of tuple of str
        The standard breakdowns (simplest first).
    map_level : {"square", "field", "receiver"}
        Grouping of the difference map (with band).
    n_boot, map_n_boot : int
        Bootstrap resamples for the tables and for the map's many small groups.
    **compare_kw
        Passed on (schedule, change_at, distance_edges, bearing_width_deg, seed, ...).

    Returns
    -------
    results : list of ComparisonResult
    map_result : ComparisonResult or None
        None when the design has no per-cell estimates (before-after).
    """
    from tqdm.auto import tqdm

    from spotkit.compare.estimate import compare_antennas

    wanted = [tuple(x) for x in breakdowns]
    if by:
        by = tuple(by)
        if by not in wanted:
            wanted.append(by)
    results = []
    for keys in tqdm(wanted, desc="comparisons", unit="table", disable=not progress):
        results.append(compare_antennas(spots, design, a, b, by=keys, n_boot=n_boot,
                                        **compare_kw))
    map_result = None
    if design != "before-after":
        map_result = compare_antennas(spots, design, a, b, by=("band", map_level),
                                      n_boot=map_n_boot, **compare_kw)
    return results, map_result


def write_report(path, spots: pd.DataFrame, result, **kwargs) -> Path:
    """Write :func:`build_report` to ``path`` (UTF-8) and return the path."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(build_report(spots, result, **kwargs), encoding="utf-8")
    return path


__all__ = ["JOB", "CAUTIONS", "STANDARD_BREAKDOWNS", "figure_to_data_uri", "data_summary",
           "verdict_table", "where_html", "markdown_summary", "several_table",
           "several_sentences", "several_markdown", "several_html", "standard_comparisons",
           "build_report", "write_report"]
