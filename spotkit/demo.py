"""The whole job on the bundled demo scenario, start to finish.

The demo data (``demo_data/``, see its README) describe an invented station, Q1ABC, that
beacons on 20 m and 10 m from a ground-mounted quarter-wave vertical (A) and a horizontal
dipole (B) at the same time under two calls, plus a receive-side test with two co-located
receivers. Every file comes with the true B-minus-A difference it was simulated with, so the
demo can show how close the estimate lands.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from spotkit import columns as C

#: The demo scenario's experiments: file stem -> (design, breakdown for the report).
DEMO_EXPERIMENTS = {
    "simultaneous": ("simultaneous", ("band", "distance", "bearing")),
    "receive": ("receive", ("band", "distance")),
}


def demo_data_dir() -> Path:
    """The bundled demo data folder (``demo_data/`` beside the package in a source tree)."""
    here = Path(__file__).resolve().parent
    for cand in (here.parent / "demo_data", here / "demo_data"):
        if (cand / "simultaneous.csv.gz").exists():
            return cand
    raise FileNotFoundError(
        "the demo data were not found (looked for demo_data/simultaneous.csv.gz beside the "
        "spotkit package); pass the folder with --data")


def truth_check(result, truth, distance_edges=None) -> pd.DataFrame:
    """Estimated against true B minus A, overall and per band x distance cell.

    Parameters
    ----------
    result : spotkit.compare.estimate.ComparisonResult
        A comparison grouped by band and distance.
    truth : spotkit.sim.truth.Truth
        The scenario's truth.
    distance_edges : sequence of float, optional
        Distance edges [km] (default: those of the result).

    Returns
    -------
    pandas.DataFrame
        band, distance_min_km, distance_max_km, estimate [dB], CI, truth [dB], pairs, and
        whether the CI covers the truth.
    """
    edges = distance_edges or result.options.get("distance_edges")
    cells = truth.cells(distance_edges=edges)
    est = result.groups
    keys = [C.BAND, C.DISTANCE_MIN]
    merged = est.merge(cells[keys + [C.B_MINUS_A]].rename(columns={C.B_MINUS_A: C.TRUTH}),
                       on=keys, how="left")
    out = merged[[C.BAND, C.DISTANCE_MIN, C.DISTANCE_MAX, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH,
                  C.TRUTH, C.PAIRS]].copy()
    covered = (out[C.CI_LOW] <= out[C.TRUTH]) & (out[C.TRUTH] <= out[C.CI_HIGH])
    out["covered"] = covered.astype("boolean").mask(out[C.CI_LOW].isna())
    over = {C.BAND: "all", C.DISTANCE_MIN: np.nan, C.DISTANCE_MAX: np.nan,
            C.B_MINUS_A: result.overall[C.B_MINUS_A], C.CI_LOW: result.overall[C.CI_LOW],
            C.CI_HIGH: result.overall[C.CI_HIGH], C.TRUTH: truth.overall[C.B_MINUS_A],
            C.PAIRS: result.overall[C.PAIRS]}
    over["covered"] = over[C.CI_LOW] <= over[C.TRUTH] <= over[C.CI_HIGH]
    return pd.concat([pd.DataFrame([over]), out], ignore_index=True)


def run_demo(out_dir="out", *, data_dir=None, n_boot: int = 1000, progress: bool = True,
             echo=print) -> dict:
    """Ingest, compare, check against truth, map and report the demo scenario.

    Writes into ``out_dir``: ``<experiment>.parquet`` (the canonical tables),
    ``<experiment>.rejects.csv``, ``<experiment>.json`` (comparison), ``<experiment>.truth.csv``
    (estimate against truth), ``coverage.png``, ``difference.png`` and ``report.html`` (the
    simultaneous experiment) and ``receive_report.html``.

    Parameters
    ----------
    out_dir : path
    data_dir : path, optional
        Demo data folder (default :func:`demo_data_dir`).
    n_boot : int
        Bootstrap resamples.
    progress : bool
        Show progress bars.
    echo : callable
        Where to print the running commentary (``print``; ``None`` for silence).

    Returns
    -------
    dict
        experiment -> {"result": ComparisonResult, "truth_check": DataFrame, "report": Path}
    """
    from spotkit.io.ingest import read_spots
    from spotkit.io.store import write_spots
    from spotkit.report import standard_comparisons, write_report
    from spotkit.sim.truth import Truth

    say = echo or (lambda *a, **k: None)
    data = Path(data_dir) if data_dir else demo_data_dir()
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    done = {}
    for stem, (design, by) in DEMO_EXPERIMENTS.items():
        src = data / f"{stem}.csv.gz"
        truth = Truth.from_json(data / f"{stem}.truth.json")
        say(f"\n== {stem}: {src}")
        ing = read_spots([src], progress=progress)
        say(ing.summary_text())
        write_spots(ing.spots, out / f"{stem}.parquet")
        ing.rejects.to_csv(out / f"{stem}.rejects.csv", index=False)
        results, map_result = standard_comparisons(
            ing.spots, design, truth.a, truth.b, by=by, n_boot=n_boot, progress=progress)
        main = next(r for r in results if tuple(r.by) == tuple(by))
        main.to_json(out / f"{stem}.json")
        by_dist = next(r for r in results if tuple(r.by) == ("band", "distance"))
        check = truth_check(by_dist, truth)
        check.to_csv(out / f"{stem}.truth.csv", index=False)
        say(str(results[0]))
        say("\nestimate against the scenario's truth (band x distance):")
        db = {c: (lambda x: "" if pd.isna(x) else f"{x:+.2f}")
              for c in (C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.TRUTH)}
        km = {c: (lambda x: "" if pd.isna(x) else f"{x:,.0f}")
              for c in (C.DISTANCE_MIN, C.DISTANCE_MAX)}
        say(check.to_string(index=False, formatters={**db, **km}))
        name = "report.html" if stem == "simultaneous" else f"{stem}_report.html"
        title = (f"Demo: {truth.a} vs {truth.b}, {design} design "
                 "(invented scenario, Q-prefix calls)")
        report = write_report(out / name, ing.spots, results, map_result=map_result,
                              ingest_summary=ing.summary, title=title, progress=progress)
        say(f"wrote {report}")
        if stem == "simultaneous":
            import matplotlib.pyplot as plt

            from spotkit.viz import maps
            from spotkit.viz.mapdata import result_antenna_spots

            coverage = maps.coverage_map(ing.spots,
                                         antennas=result_antenna_spots(ing.spots, map_result),
                                         labels=map_result.labels)
            for fname, fig in (("coverage.png", coverage),
                               ("difference.png", maps.difference_map(map_result))):
                fig.savefig(out / fname, dpi=110, bbox_inches="tight")
                plt.close(fig)
                say(f"wrote {out / fname}")
        done[stem] = {"result": main, "truth_check": check, "report": report}
    say(f"\nOpen {out / 'report.html'} in a browser.")
    return done


__all__ = ["DEMO_EXPERIMENTS", "demo_data_dir", "truth_check", "run_demo"]
