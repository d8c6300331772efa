"""--model, --tau, --tau-from and --interval of compare, report, map and plot: they reach
:func:`spotkit.compare.compare_antennas` as its model, tau_db, tau_from and interval."""
import json

import pytest

from spotkit.cli import main
from spotkit.cli._common import compare_kwargs
from spotkit.cli.app import build_parser

COMPARE = ["compare", "spots.parquet", "--design", "simultaneous", "--a", "Q1ABC"]


def _choices(option):
    sub = build_parser()._subparsers._group_actions[0].choices["compare"]
    return next(a.choices for a in sub._actions if option in a.option_strings)


def test_choices_are_the_library_ones():
    from spotkit.compare import INTERVALS, MODELS, WIDTH_FROM

    assert tuple(_choices("--model")) == MODELS
    assert tuple(_choices("--interval")) == INTERVALS
    assert tuple(_choices("--tau-from")) == WIDTH_FROM


def test_defaults_are_the_library_defaults():
    import inspect

    from spotkit.compare import compare_antennas

    kw = compare_kwargs(build_parser().parse_args(COMPARE))
    sig = inspect.signature(compare_antennas).parameters
    for name in ("model", "tau_db", "tau_from", "interval"):
        assert kw[name] == sig[name].default, name


@pytest.mark.parametrize("command", [
    COMPARE,
    ["report", "s.parquet", "--design", "simultaneous", "--a", "Q1ABC", "-o", "r.html"],
    ["map", "s.parquet", "--kind", "difference", "-o", "m.png"],
    ["plot", "s.parquet", "--kind", "distance", "-o", "p.png"],
])
def test_options_map_to_the_library_parameters(command):
    args = build_parser().parse_args([*command, "--model", "tobit", "--tau", "0.8",
                                      "--tau-from", "reports", "--interval", "normal"])
    kw = compare_kwargs(args)
    assert (kw["model"], kw["tau_db"], kw["tau_from"], kw["interval"]) == (
        "tobit", 0.8, "reports", "normal")


@pytest.mark.parametrize(("option", "value", "message"), [
    ("--tau", "0", "must be positive"), ("--tau", "-1", "must be positive"),
    ("--tau", "x", "expected a number"), ("--model", "flat", "invalid choice"),
    ("--interval", "bca", "invalid choice"), ("--tau-from", "guess", "invalid choice")])
def test_bad_values_are_usage_errors(option, value, message, capsys):
    assert main([*COMPARE, option, value]) == 2
    err = capsys.readouterr().err
    assert f"argument {option}: " in err and message in err and "Traceback" not in err


def test_compare_end_to_end_states_the_chosen_model(sim, tmp_path, capsys):
    path = tmp_path / "spots.parquet"
    spots = sim.spots[sim.spots["band"].astype(str) == "20m"].head(4000)
    spots.to_parquet(path)
    base = ["compare", str(path), "--design", "simultaneous", "--a", sim.a, "--b", sim.b,
            "--boot", "20"]
    out = {}
    for name, extra in (("set", ["--tau", "1.3", "--interval", "normal"]),
                        ("tobit", ["--model", "tobit"])):
        js = tmp_path / f"{name}.json"
        assert main([*base, *extra, "--json", str(js)]) == 0
        capsys.readouterr()
        out[name] = json.loads(js.read_text())
    overall = out["set"]["overall"]
    assert overall["detection_tau_db"] == pytest.approx(1.3)
    assert "tau 1.30 dB set" in overall["method"]
    assert "normal-approximation" in overall["method"]
    assert out["set"]["options"]["interval"] == "normal"
    assert "Tobit" in out["tobit"]["overall"]["method"]


@pytest.mark.parametrize("extra, want", [
    ([], dict(tau_db=None, tau_from="pairs")),
    (["--tau-from", "reports"], dict(tau_db=None, tau_from="reports")),
    (["--tau", "0.8"], dict(tau_db=0.8, tau_from="pairs")),
])
def test_archive_compare_passes_the_width_options(extra, want, monkeypatch, tmp_path):
    """``spotkit archive compare`` (the Dask path) takes --tau / --tau-from as 'spotkit
    compare' does; the defaults are compare_dask's."""
    import inspect

    from spotkit.distributed import compare_dask
    from spotkit.errors import InputError

    seen = {}

    def fake(*args, **kwargs):
        seen.update(kwargs)
        raise InputError("stop here")

    monkeypatch.setattr("spotkit.distributed.compare_dask", fake)
    assert main(["archive", "compare", str(tmp_path / "arch"), "--design", "simultaneous",
                 "--a", "Q1ABC", "--b", "Q1ABD", *extra]) == 1
    assert {k: seen[k] for k in want} == want
    sig = inspect.signature(compare_dask).parameters
    assert sig["tau_from"].default == "pairs" and sig["tau_db"].default is None
