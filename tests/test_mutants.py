"""Mutation check: the four statistical bugs of issue 15, re-applied to a temporary copy of
the package by benchmarks/mutants.py, each make at least one named test fail (and those
tests pass on the unmutated copy)."""
from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import pytest

SCRIPT = Path(__file__).resolve().parents[1] / "benchmarks" / "mutants.py"


@pytest.mark.slow
def test_every_deliberate_bug_is_caught():
    spec = importlib.util.spec_from_file_location("spotkit_mutants", SCRIPT)
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod  # dataclasses look their module up there
    spec.loader.exec_module(mod)
    rows = mod.run_mutants()
    base, mutants = rows[0], rows[1:]
    assert base["name"] == "baseline" and not base["failed"], base.get("log")
    assert [r["name"] for r in mutants] == ["pairs-not-receivers", "bonferroni",
                                            "ninety-as-95", "se-plus-20"]
    survivors = {r["name"]: r.get("error") or r.get("log") for r in mutants if r["survived"]}
    assert not survivors, survivors
