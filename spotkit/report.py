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
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;max-width:1100px;margin:2em auto;
padding:0 1em;color:#1b1b1b;line-height:1.45}
h1{font-size:1.6em;margin-bottom:.2em} h2{border-bottom:1px solid #ccc;padding-bottom:.2em;
margin-top:2em} .job{font-size:1.05em;color:#333}
table{border-collapse:collapse;margin:.5em 0;font-size:.92em}
th,td{border:1px solid #ccc;padding:.25em .6em;text-align:right} th{background:#eef}
td.l,th.l{text-align:left} figure{margin:1em 0} figure img{max-width:100%;height:auto;
border:1px solid #ddd} figcaption{color:#555;font-size:.9em} .caution{background:#fff6e5;
border-left:4px solid #e0a000;padding:.6em 1em} .small{color:#666;font-size:.85em}
"""


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

    ``overall=False`` leaves out the overall row (shown once per report). p-values below
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

    out["B - A (dB)"] = [f(x, "+.2f") for x in frame[C.B_MINUS_A]]
    out[f"{result.confidence:.0%} CI (dB)"] = [
        "" if pd.isna(lo) else f"{lo:+.2f} to {hi:+.2f}"
        for lo, hi in zip(frame[C.CI_LOW], frame[C.CI_HIGH], strict=True)]
    out["pairs"] = [f(x, ",.0f") for x in frame[C.PAIRS]]
    out["only A"] = [f(x, ",.0f") for x in frame[C.ONLY_A]]
    out["only B"] = [f(x, ",.0f") for x in frame[C.ONLY_B]]
    if C.BOTH_HEARD in frame:
        out["both-heard only (dB)"] = [f(x, "+.2f") for x in frame[C.BOTH_HEARD]]
    if C.P_ADJUSTED in frame:
        out["p (adjusted)"] = [format_p_value(x) for x in frame[C.P_ADJUSTED]]
    out["verdict"] = verdicts
    return out


def _table_html(df: pd.DataFrame, left=("group", "item", "value", "verdict")) -> str:
    head = "".join(f'<th class="{"l" if c in left else ""}">{html.escape(str(c))}</th>'
                   for c in df.columns)
    body = []
    for row in df.itertuples(index=False):
        cells = "".join(
            f'<td class="{"l" if c in left else ""}">{html.escape(str(v))}</td>'
            for c, v in zip(df.columns, row, strict=True))
        body.append(f"<tr>{cells}</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _figures(spots, results, map_result, progress: bool):
    """(caption, data URI) for every figure of the report; failures are reported, not hidden."""
    from spotkit.viz import maps, plots

    def fig_of(obj):
        return obj if hasattr(obj, "savefig") else obj.figure

    result = results[0]

    def having(col):
        return next((r for r in results if col in r.groups.columns), None)
    jobs = [
        ("Coverage by band: far stations coloured by their median SNR normalised to 1 W.",
         lambda: maps.coverage_map(spots)),
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
        jobs.append(("B minus A by hour of day.", lambda c=C.HOUR, f=plots.hour_plot: f(having(c))))
    jobs += [
        ("Probability of being heard against distance, A beside B, with Wilson intervals "
         "(among slots where the path was open to at least one antenna).",
         lambda: plots.heard_plot(result.pairs)),
        ("SNR normalised to 1 W against distance, with a running median.",
         lambda: plots.snr_distance_plot(spots)),
        ("Spots per hour by band.", lambda: plots.spots_per_hour_plot(spots)),
    ]
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
                 progress: bool = False) -> str:
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

    Returns
    -------
    str
        A complete HTML document with embedded figures.
    """
    results = [results] if hasattr(results, "overall") else list(results)
    if not results:
        raise UsageError("build_report needs at least one comparison result")
    result = results[0]
    title = title or f"Antenna comparison: A = {result.a}, B = {result.b}"
    parts = [f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
             f"<title>{html.escape(title)}</title><style>{_CSS}</style></head><body>",
             f"<h1>{html.escape(title)}</h1>", f"<p class='job'>{html.escape(JOB)}</p>"]
    o = result.overall
    if not pd.isna(o.get(C.B_MINUS_A, np.nan)):
        parts.append(f"<p><strong>{html.escape(result.verdicts()[0])}</strong></p>")
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
           "verdict_table", "standard_comparisons", "build_report", "write_report"]
