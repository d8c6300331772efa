"""Every subcommand against hostile inputs and bad option values: one clear message and exit
1 (bad data) or 2 (usage), never a traceback.

The subcommands are found by walking :func:`spotkit.cli.app.build_parser`, so a new command
is covered without editing this file; a new *required* option needs a value in
:data:`REQUIRED_VALUES` (the test says so). Runs are in-process through
:func:`spotkit.cli.app.main` (fast); :func:`test_no_traceback_through_a_real_process` runs a
few through ``python -m spotkit``.
"""
from __future__ import annotations

import argparse
import os
import subprocess
import sys

import pandas as pd
import pytest
from factories import make_spots

from spotkit.cli.app import build_parser, main

# --- the subcommands --------------------------------------------------------------------------
#: values of required options (and of the A/B options, kept small and fast)
REQUIRED_VALUES = {
    "--design": "simultaneous",
    "--antenna": "vertical",
    "--a": "Q1ABC",
    "--b": "Q7XYZ",
    "--start": "2026-03-02",
    "--effect": "1",
    "--call": "Q1ABC",
}
#: set on every command that has the option, so runs on good data stay quick
SMALL = {"--boot": "20", "--days": "0.05", "--receivers": "6", "--transmitters": "6",
         "--runs": "2", "--sim-receivers": "6", "--hours": "3,6",
         "--sigma": "6", "--pairs-per-hour": "50"}
#: options that stand in for the input data: left out when a command reads input
SMALL_MODEL = {"--sigma", "--pairs-per-hour"}
#: positionals that name the input data
INPUT_POSITIONALS = {"files", "spots", "dataset", "sources"}
#: switches set on every command that has them (``watch --once``: one update, not a loop)
ALWAYS_ON = {"--once"}
#: options that name input data, for commands without an input positional
INPUT_OPTIONS = {"--pilot", "--data"}


def _leaves(parser, path=()):
    subs = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    if not subs:
        yield path, parser
        return
    for name, child in subs[0].choices.items():
        yield from _leaves(child, (*path, name))


def _suffix(action) -> str:
    metavar = str(action.metavar or "")
    if metavar == "DIR":
        return ""
    return os.path.splitext(metavar)[1] or ".csv"


def _commands():
    """(id, path, parser) for every leaf subcommand, one per ``--kind`` choice."""
    out = []
    for path, parser in _leaves(build_parser()):
        kinds = [a for a in parser._actions if a.option_strings == ["--kind"]]
        for kind in (kinds[0].choices if kinds else [None]):
            out.append((" ".join(path) + (f" --kind {kind}" if kind else ""), path, kind,
                        parser))
    return out


COMMANDS = _commands()


def _argv(path, kind, parser, tmp_path, data, *, skip=(), schedule=None, archive=None):
    """Arguments of one run: ``data`` for every input (``archive`` for an archive folder and
    ``schedule`` for a schedule file when given), the required options, small sizes."""
    argv = list(path)
    if kind:
        argv += ["--kind", kind]
    for action in parser._actions:
        opts = action.option_strings
        if not opts:
            if action.dest in INPUT_POSITIONALS:
                argv.append(str(archive if archive and action.dest == "dataset" else data))
            elif action.dest != "help":
                raise AssertionError(f"{' '.join(path)}: new positional {action.dest!r}; "
                                     "tell test_hostile_inputs.py what to give it")
            continue
        flag = opts[-1]
        if flag in skip or flag == "--kind":
            continue
        if flag in ALWAYS_ON:
            argv.append(flag)
        elif flag in ("--output",):
            argv += [flag, str(tmp_path / f"out{_suffix(action)}")]
        elif flag == "--schedule" and action.required:
            argv += [flag, str(schedule or data)]
        elif flag in INPUT_OPTIONS and not (set(INPUT_POSITIONALS) & {
                a.dest for a in parser._actions if not a.option_strings}):
            argv += [flag, str(data)]
        elif flag in REQUIRED_VALUES and (action.required or flag in ("--design", "--a", "--b")):
            argv += [flag, REQUIRED_VALUES[flag]]
        elif flag in SMALL and not (flag in SMALL_MODEL and flag_uses_input(parser)):
            argv += [flag, SMALL[flag]]
        elif action.required:
            raise AssertionError(f"{' '.join(path)}: new required option {flag}; add a value "
                                 "to REQUIRED_VALUES in test_hostile_inputs.py")
    return argv


def flag_uses_input(parser) -> bool:
    return bool(set(parser._option_string_actions) & INPUT_OPTIONS)


def _takes_input(parser) -> bool:
    names = {a.dest for a in parser._actions if not a.option_strings}
    flags = set(parser._option_string_actions)
    return bool(names & INPUT_POSITIONALS or flags & INPUT_OPTIONS)


# --- the hostile inputs -----------------------------------------------------------------------
def _hostile(tmp_path, name):
    d = tmp_path / "in"
    d.mkdir(exist_ok=True)
    if name == "empty file":
        p = d / "empty.csv"
        p.write_bytes(b"")
    elif name == "0-row parquet":
        p = d / "none.parquet"
        make_spots(5).iloc[:0].to_parquet(p)
    elif name == "parquet of other columns":
        p = d / "other.parquet"
        pd.DataFrame({"a": [1, 2], "b": ["x", "y"]}).to_parquet(p)
    elif name == "binary":
        p = d / "blob.csv"
        p.write_bytes(bytes(range(256)) * 40)
    elif name == "binary named parquet":
        p = d / "blob.parquet"
        p.write_bytes(bytes(range(256)) * 40)
    elif name == "missing file":
        p = d / "no-such-file.csv"
    elif name == "folder":
        p = d / "a-folder"
        p.mkdir()
    elif name == "header-only csv":
        p = d / "header.csv"
        p.write_text("time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm\n")
    else:
        raise AssertionError(name)
    return p


HOSTILE = ["empty file", "0-row parquet", "parquet of other columns", "binary",
           "binary named parquet", "missing file", "folder", "header-only csv"]

#: (command id, input) that may exit 0: nothing wrong with them
FINE = {
    ("archive info", "folder"),  # an empty archive: says it holds nothing
    ("archive coverage", "folder"),
}

#: (command id, input or option=value) that still show a traceback in code another part of
#: issue 14 owns; strict, so they fail loudly once fixed
OWNED_ELSEWHERE: dict[tuple[str, str], str] = {
}


def _run(argv, capsys):
    try:
        code = main(argv)
    except BaseException as exc:  # whatever escapes main reaches the user
        pytest.fail(f"spotkit {' '.join(argv)}: {type(exc).__name__} escaped main: {exc}")
    err = capsys.readouterr().err
    assert "Traceback" not in err, err
    return code, err


def _mark(cid, what):
    reason = OWNED_ELSEWHERE.get((cid, what))
    return [pytest.mark.xfail(strict=True, reason=reason)] if reason else []


INPUT_CASES = [pytest.param(path, kind, parser, name, id=f"{cid}|{name}",
                            marks=_mark(cid, name))
               for cid, path, kind, parser in COMMANDS if _takes_input(parser)
               for name in HOSTILE]


@pytest.mark.parametrize(("path", "kind", "parser", "name"), INPUT_CASES)
def test_hostile_input_gives_one_clear_message(path, kind, parser, name, tmp_path, capsys):
    data = _hostile(tmp_path, name)
    code, err = _run(_argv(path, kind, parser, tmp_path, data), capsys)
    cid = " ".join(path) + (f" --kind {kind}" if kind else "")
    if (cid, name) in FINE:
        assert code in (0, 1, 2)
    else:
        assert code in (1, 2), err
        assert err.startswith("spotkit: "), err
        assert err.count("\n") == 1, err  # one line


# --- bad option values ------------------------------------------------------------------------
def _numeric_options(parser):
    return [a for a in parser._actions
            if a.option_strings and a.type in (int, float) or getattr(a.type, "numeric", False)]


#: never a number any option can use: must be a usage error (exit 2) naming the option
NEVER = ["nan", "abc", "inf"]
#: a number some options can use (a power of 0 dBm, a seed of 0): no traceback, exit any
MAYBE = ["-1", "0"]


@pytest.fixture
def good(tmp_path):
    """A small spot table, its archive and a schedule: inputs nothing is wrong with."""
    from spotkit.io.store import append_to_dataset

    spots = make_spots(60, seed=3)
    path = tmp_path / "good.parquet"
    spots.to_parquet(path)
    append_to_dataset(spots, tmp_path / "archive")
    schedule = tmp_path / "schedule.csv"
    schedule.write_text("start,end,antenna\n2026-11-30 20:00,2026-12-01 08:00,A\n")
    csv = tmp_path / "good.csv"
    csv.write_text("time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm\n"
                   "2026-11-30 20:00:12,Q1ABC,JO62qm,Q2AA,JN58td,14.0971,-12,37\n"
                   "2026-11-30 20:02:11,Q1ABC,JO62qm,Q4BB,IO91lk,14.0972,-20,37\n")
    return dict(data=path, archive=tmp_path / "archive", schedule=schedule, csv=csv)


#: commands that draw or write a whole report when a value is accepted (seconds each)
SLOW = {"report", "map --kind coverage"}
OPTION_CASES = []
for _cid, _path, _kind, _parser in COMMANDS:
    if _kind not in (None, "coverage", "distance"):
        continue  # the options of map and plot are the same for every kind
    for _action in _numeric_options(_parser):
        _flag = _action.option_strings[-1]
        for _value in NEVER + MAYBE:
            _slow = [pytest.mark.slow] if _cid in SLOW and _value in MAYBE else []
            OPTION_CASES.append(pytest.param(
                _path, _kind, _parser, _flag, _value, id=f"{_cid}|{_flag}={_value}",
                marks=_mark(_cid, f"{_flag}={_value}") + _slow))


@pytest.mark.parametrize(("path", "kind", "parser", "flag", "value"), OPTION_CASES)
def test_bad_option_value_is_a_usage_error(path, kind, parser, flag, value, tmp_path, capsys,
                                           good):
    inputs = dict(good)
    csv = inputs.pop("csv")
    if path == ("ingest",):  # ingest reads text files
        inputs["data"] = csv
    argv = _argv(path, kind, parser, tmp_path, skip=(flag,), **inputs) + [flag, value]
    code, err = _run(argv, capsys)
    if value in NEVER:
        assert code == 2, err
        assert flag in err, err
    else:
        assert code in (0, 1, 2)


# --- the parser walk covers what it should ----------------------------------------------------
def test_walk_finds_every_command():
    ids = {cid for cid, *_ in COMMANDS}
    for cid in ("ingest", "compare", "report", "map --kind coverage", "plot --kind heard",
                "plan duration", "archive info", "simulate", "demo"):
        assert cid in ids


# --- through a real process -------------------------------------------------------------------
@pytest.mark.slow
@pytest.mark.parametrize("name", ["parquet of other columns", "0-row parquet", "binary"])
def test_no_traceback_through_a_real_process(name, tmp_path):
    data = _hostile(tmp_path, name)
    proc = subprocess.run(
        [sys.executable, "-m", "spotkit", "plot", str(data), "--kind", "spots-per-hour",
         "-o", str(tmp_path / "p.png")], capture_output=True, text=True, timeout=120)
    assert proc.returncode in (1, 2), proc.stderr
    assert "Traceback" not in proc.stderr
    assert proc.stderr.startswith("spotkit: ") and proc.stderr.count("\n") == 1, proc.stderr
