"""Numeric options of compare, report, map and plot: a value that makes no sense is a usage
error (exit 2) naming the option, before any file is read (issue 14: these were accepted
silently, or ended in a traceback)."""
import pytest

from spotkit.cli import main

COMMANDS = {
    "compare": ["compare", "spots.parquet", "--design", "simultaneous", "--a", "Q1ABC"],
    "report": ["report", "spots.parquet", "--design", "simultaneous", "--a", "Q1ABC",
               "-o", "r.html"],
    "map": ["map", "spots.parquet", "--kind", "difference", "-o", "m.png"],
    "plot": ["plot", "spots.parquet", "--kind", "distance", "-o", "p.png"],
}

BAD = [
    ("--distance-edges", "5,1", "must be at least two finite numbers in increasing order"),
    ("--distance-edges", "0,1000,1000", "increasing order"),
    ("--distance-edges", "1000", "at least two"),
    ("--distance-edges", "0,x", "expected numbers separated by commas"),
    ("--elevation-edges", "0,nan,90", "finite numbers"),
    ("--window", "0", "must be a whole number of at least 1, got 0"),
    ("--window", "1.5", "expected a whole number, got '1.5'"),
    ("--min-pairs", "-1", "must be a whole number of at least 1, got -1"),
    ("--layer-height", "-5", "must be positive, got -5.0"),
    ("--layer-height", "0", "must be positive"),
    ("--layer-height", "nan", "must be positive"),
    ("--bearing-width", "50", "must divide 360 into whole parts"),
    ("--bearing-width", "-45", "must divide 360"),
    ("--day-hours", "0", "must be positive"),
    ("--day-hours", "inf", "must be positive"),
    ("--boot", "1", "must be a whole number of at least 2"),
    ("--seed", "-1", "must be a whole number of at least 0"),
    ("--confidence", "nan", "must be in (0, 1)"),
    ("--confidence", "1", "must be in (0, 1)"),
]


@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize(("option", "value", "message"), BAD)
def test_bad_value_is_a_usage_error_naming_the_option(command, option, value, message,
                                                      capsys):
    assert main([*COMMANDS[command], option, value]) == 2
    err = capsys.readouterr().err
    assert f"argument {option}: " in err and message in err
    assert err.count("\n") == 1 and "Traceback" not in err


@pytest.mark.parametrize("command", ["map", "plot"])
@pytest.mark.parametrize(("value", "message"), [("0", "a whole number of at least 1"),
                                                ("-3", "a whole number of at least 1"),
                                                ("100000", "at most 1200")])
def test_dpi_must_be_a_sensible_resolution(command, value, message, capsys):
    assert main([*COMMANDS[command], "--dpi", value]) == 2
    assert f"argument --dpi: must be {message}" in capsys.readouterr().err


@pytest.mark.parametrize(("option", "value", "parsed"), [
    ("--distance-edges", "0,500,20100", [0.0, 500.0, 20100.0]),
    ("--bearing-width", "30", 30.0), ("--layer-height", "250", 250.0), ("--window", "2", 2),
    ("--seed", "0", 0), ("--confidence", "0.9", 0.9), ("--min-pairs", "1", 1)])
def test_good_values_pass_as_numbers(option, value, parsed):
    from spotkit.cli.app import build_parser

    args = build_parser().parse_args([*COMMANDS["compare"], option, value])
    assert getattr(args, option[2:].replace("-", "_")) == parsed
