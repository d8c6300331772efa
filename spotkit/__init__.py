"""spotkit: compare amateur-radio antennas with numbers, from weak-signal beacon spot reports.

The public functions live in one module per concept (see DEVELOPERS.md); the most used
ones are re-exported here lazily so that ``import spotkit`` stays light.
"""
from __future__ import annotations

import importlib

__version__ = "0.1.0"

# name -> module that defines it; resolved on first use (PEP 562)
_LAZY = {
    "read_spots": "ingest",
    "load_spots": "ingest",
    "simulate_spots": "simulate",
    "compare_antennas": "compare",
    "locator_to_latlon": "locator",
    "latlon_to_locator": "locator",
    "freq_to_band": "bands",
}


def __getattr__(name):
    mod = _LAZY.get(name)
    if mod is None:
        raise AttributeError(f"module 'spotkit' has no attribute {name!r}")
    return getattr(importlib.import_module(f".{mod}", __name__), name)


def __dir__():
    return sorted(list(globals()) + list(_LAZY))


__all__ = ["__version__", *_LAZY]
