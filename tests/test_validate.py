"""The one validator of arguments, and that user-facing choices go through it."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit._validate import (
    check_at_least,
    check_choice,
    check_choices,
    check_columns,
    check_confidence,
    check_divides,
    check_finite,
    check_increasing,
    check_positive,
)
from spotkit.errors import InputError, SpotkitError, UsageError


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


# --- numbers, bin edges, divisors, table columns (issue 14: options silently accepted) -------
@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf, "abc", None])
def test_check_finite_refuses_what_is_not_a_finite_number(bad):
    with pytest.raises(UsageError, match=r"^threshold_db must be a finite number"):
        check_finite(bad, "threshold_db")


def test_check_finite_returns_a_float():
    assert check_finite("-3.5", "x") == -3.5 and check_finite(0, "x") == 0.0


@pytest.mark.parametrize(("value", "minimum"), [(0, 1), (-1, 0), (1.5, 1), (np.nan, 0),
                                                (np.inf, 0), ("two", 0)])
def test_check_at_least_refuses_small_or_fractional_numbers(value, minimum):
    with pytest.raises(UsageError, match=rf"^window must be a whole number of at least "
                                          rf"{minimum}, got"):
        check_at_least(value, minimum, "window")


def test_check_at_least_returns_an_int():
    assert check_at_least(3.0, 1, "window") == 3 and isinstance(check_at_least(3.0, 1, "w"), int)


@pytest.mark.parametrize("bad", [[5, 1], [1, 1], [0], [], [0, np.nan, 90], [0, np.inf],
                                 [[0, 1], [2, 3]], ["a", "b"]])
def test_check_increasing_refuses_edges_that_make_no_bins(bad):
    with pytest.raises(UsageError, match=r"^distance edges must"):
        check_increasing(bad, "distance edges")


def test_check_increasing_returns_floats():
    assert check_increasing((0, 1000, 20100), "edges") == [0.0, 1000.0, 20100.0]


@pytest.mark.parametrize("width", [1, 7.5, 30, 45, 90, 360])
def test_check_divides_accepts_whole_sectors(width):
    assert check_divides(width, 360, "bearing width") == float(width)


@pytest.mark.parametrize("bad", [0, -45, 50, 361, np.nan, np.inf, "wide"])
def test_check_divides_refuses_partial_sectors(bad):
    with pytest.raises(UsageError, match=r"^bearing width must divide 360 into whole parts"):
        check_divides(bad, 360, "bearing width")


def test_check_columns_is_an_input_error_naming_what_is_missing():
    table = pd.DataFrame({"a": [1], "snr_db": [-3.0]})
    assert check_columns(table, ["snr_db"], "a plot") is table
    with pytest.raises(InputError, match=r"^a plot needs column\(s\) distance_km, power_dbm, "
                                         r"which the table does not have \(it has a, snr_db\)"):
        check_columns(table, ["distance_km", "snr_db", "power_dbm"], "a plot")
    assert not issubclass(InputError, UsageError)  # bad data, exit 1, not bad usage
