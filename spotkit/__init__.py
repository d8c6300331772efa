"""spotkit: compare amateur-radio antennas with numbers, from weak-signal beacon spot reports.

The package is laid out along the data flow (see DEVELOPERS.md):

- ground floor: :mod:`spotkit.columns` (the glossary), :mod:`spotkit.errors`,
  :mod:`spotkit.units`, :mod:`spotkit.bands`;
- :mod:`spotkit.geo` (locators, geodesics, sun) and :mod:`spotkit.stats` (paired tests,
  censored fit, bootstrap);
- :mod:`spotkit.io` (spot files in, the Parquet store and the archive);
- :mod:`spotkit.compare` (pairs, groups, B minus A) and :mod:`spotkit.coverage`;
- :mod:`spotkit.sim` (the simulator with known truth), :mod:`spotkit.plan` (schedules, run
  length, audits), :mod:`spotkit.viz` (maps and plots);
- :mod:`spotkit.distributed`, :mod:`spotkit.report`, :mod:`spotkit.demo` and the command
  line :mod:`spotkit.cli`.

The names below are the most used ones, collected here; each is imported on first use
(PEP 562), so ``import spotkit`` stays light and never imports matplotlib.

Examples
--------
>>> import spotkit
>>> lat, lon = spotkit.locator_to_latlon("JO62qm")
>>> round(lat, 4), round(lon, 4)
(52.5208, 13.375)
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> module that defines it
_LAZY = {
    # reading spot files
    "read_spots": "spotkit.io.ingest",
    "load_spots": "spotkit.io.ingest",
    "ingest_to_parquet": "spotkit.io.ingest",
    "ingest_to_dataset": "spotkit.io.archive",
    # places and bands
    "locator_to_latlon": "spotkit.geo.locator",
    "latlon_to_locator": "spotkit.geo.locator",
    "geodesic_inverse": "spotkit.geo.geodesic",
    "geodesic_path": "spotkit.geo.geodesic",
    "freq_to_band": "spotkit.bands",
    # comparing antennas
    "pair_spots": "spotkit.compare.pairing",
    "compare_antennas": "spotkit.compare.estimate",
    "compare_reach": "spotkit.compare.reach",
    "coverage_table": "spotkit.coverage",
    # simulating and planning
    "simulate_spots": "spotkit.sim.simulate",
    "make_schedule": "spotkit.plan.schedule",
    "duration_table": "spotkit.plan.duration",
    "audit_schedule": "spotkit.plan.audit",
    # showing the result
    "coverage_map": "spotkit.viz.maps",
    "difference_map": "spotkit.viz.maps",
    "write_report": "spotkit.report",
}

_SUBPACKAGES = ("geo", "stats", "io", "compare", "sim", "plan", "viz", "cli", "coverage",
                "distributed", "report", "demo", "columns", "errors", "units", "bands")


def __getattr__(name):
    if name in _LAZY:
        return getattr(importlib.import_module(_LAZY[name]), name)
    if name in _SUBPACKAGES:
        return importlib.import_module(f"{__name__}.{name}")
    raise AttributeError(f"module 'spotkit' has no attribute {name!r}")


def __dir__():
    return sorted({*globals(), *_LAZY, *_SUBPACKAGES})


__all__ = ["__version__", *_LAZY]
