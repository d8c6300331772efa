"""The one validator of arguments, and that user-facing choices go through it."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit._validate import check_choice, check_choices, check_confidence, check_positive
from spotkit.errors import SpotkitError, UsageError


def test_check_choice_returns_the_value_or_lists_the_valid_ones():
    assert check_choice("b", ("a", "b"), "letter") == "b"
    with pytest.raises(UsageError, match=r"unknown letter 'z'; valid: a, b$") as info:
        check_choice("z", ("a", "b"), "letter")
    # a usage error is also a ValueError and a SpotkitError, for callers of either kind
    assert isinstance(info.value, ValueError) and isinstance(info.value, SpotkitError)
    assert check_choice(2, (1, 2), "number") == 2
    with pytest.raises(UsageError, match="valid: 1, 2"):
        check_choice(3, (1, 2), "number")


def test_check_choices_names_every_bad_value():
    assert check_choices(("a",), ("a", "b"), "key") == ["a"]
    with pytest.raises(UsageError, match=r"unknown key\(s\) 'x', 'y'; valid: a, b"):
        check_choices(["a", "x", "y"], ("a", "b"), "key")


@pytest.mark.parametrize("bad", [0, 1, -0.5, 1.5, np.nan])
def test_check_confidence_refuses_outside_the_open_unit_interval(bad):
    with pytest.raises(UsageError, match="confidence must be in"):
        check_confidence(bad)
    assert check_confidence(0.9) == 0.9


@pytest.mark.parametrize("bad", [0, -1, np.nan, np.inf, "x", None])
def test_check_positive_refuses_zero_negative_and_non_numbers(bad):
    with pytest.raises(UsageError, match="sigma must be positive"):
        check_positive(bad, "sigma")
    assert check_positive(2, "sigma") == 2.0


def _calls():
    """One call per public function with a choice argument, each given a bad choice."""
    from spotkit import bands, coverage, units
    from spotkit.compare import grouping, pairing
    from spotkit.io import store
    from spotkit.plan import audit, duration
    from spotkit.sim import antenna, layouts, simulate
    from spotkit.stats import bootstrap, paired

    pairs = pd.DataFrame({"x": [1.0]})
    return {
        "units.power_to_dbm": lambda: units.power_to_dbm([1.0], "kW"),
        "units.frequency_to_hz": lambda: units.frequency_to_hz([1.0], "GHz"),
        "bands.band_plan": lambda: bands.band_plan(region="4"),
        "paired.wilcoxon alternative": lambda: paired.wilcoxon_signed_rank([1.0, 2.0],
                                                                           alternative="up"),
        "paired.mcnemar method": lambda: paired.mcnemar(3, 4, method="fancy"),
        "bootstrap.interval method": lambda: bootstrap.bootstrap_interval(
            np.zeros(10), 0.0, method="magic"),
        "bootstrap.draws": lambda: bootstrap.stratified_bootstrap_weights(
            [0, 0, 1], 5, 1, draws="all"),
        "coverage side": lambda: coverage.coverage_table(pd.DataFrame(), ["band"], side="both"),
        "grouping.parse_by": lambda: grouping.parse_by("band,colour"),
        "grouping hour basis": lambda: grouping.add_group_keys(pairs, ["hour"], hour="solar"),
        "pairing design": lambda: pairing.pair_spots(pd.DataFrame(), "sideways", "Q1A", "Q1B"),
        "store partition key": lambda: store.append_to_dataset(pd.DataFrame(), "unused",
                                                                partition_by=["colour"]),
        "audit marker": lambda: audit.audit_schedule(pd.DataFrame(), pd.DataFrame(), "Q1A",
                                                     marker="flag"),
        "duration design": lambda: duration.duration_by_simulation(1.0, [1.0],
                                                                   design="sideways"),
        "antenna kind": lambda: antenna.make_antenna("yagi", ["20m"]),
        "antenna band": lambda: antenna.band_frequency_hz("11m"),
        "layout": lambda: layouts.write_foreign_csv(pd.DataFrame(), "nowhere.csv", "odd"),
        "simulate design": lambda: simulate.simulate_spots(design="sideways"),
    }


def test_time_arguments_are_read_as_utc_or_refused():
    from spotkit._validate import check_time

    assert str(check_time("2026-03-02", "start")) == "2026-03-02 00:00:00+00:00"
    with pytest.raises(UsageError, match="start: cannot read 'notadate' as a time"):
        check_time("notadate", "start")
    with pytest.raises(UsageError, match="end: no time given"):
        check_time(None, "end")


# what `spotkit simulate --start notadate`, `--change-at garbage`, `--corrupt -3` and
# `--duplicates 2` hand the library: the first three were bare ValueErrors (a traceback on
# the command line), the last was silently capped
SIMULATOR_CALLS = {
    "start": ("simulate_spots", {"start": "notadate"}),
    "change_at": ("simulate_spots", {"design": "before-after", "change_at": "garbage",
                                     "days": 1, "n_receivers": 5}),
    "corrupt": ("write_foreign_csv", {"spots": pd.DataFrame(), "path": "out.csv",
                                      "corrupt": -3}),
    "duplicates": ("write_foreign_csv", {"spots": pd.DataFrame(), "path": "out.csv",
                                         "duplicates": 2}),
}


@pytest.mark.parametrize("argument", sorted(SIMULATOR_CALLS))
def test_simulator_arguments_raise_usage_errors(argument, tmp_path, monkeypatch):
    from spotkit import sim

    name, kwargs = SIMULATOR_CALLS[argument]
    monkeypatch.chdir(tmp_path)
    with pytest.raises(UsageError, match=argument):
        getattr(sim, name)(**kwargs)
    assert not list(tmp_path.iterdir())


@pytest.mark.parametrize("name", sorted(_calls()))
def test_bad_choices_raise_usage_errors_listing_the_valid_ones(name):
    with pytest.raises(UsageError, match="valid: "):
        _calls()[name]()
