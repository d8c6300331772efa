"""The command line's help, exit codes, error messages and ``--version``; the layout of the
``spotkit.cli`` modules."""
import ast
import subprocess
import sys
from pathlib import Path

import pytest

import spotkit
from spotkit import errors
from spotkit.cli import main

CLI = Path(spotkit.__file__).parent / "cli"


def test_help_exits_zero(capsys):
    assert main(["--help"]) == 0
    assert "ingest" in capsys.readouterr().out


def test_unknown_command_is_usage_error(capsys):
    assert main(["no-such-command"]) == 2
    assert "spotkit" in capsys.readouterr().err


def test_no_command_is_usage_error():
    assert main([]) == 2


# --- every SpotkitError: its exit code, one line on stderr, no traceback ---------------------
EXIT_CODES = {
    errors.SpotkitError: 1,
    errors.InputError: 1,
    errors.NotASpotTableError: 1,
    errors.MappingError: 1,
    errors.NoPairsError: 1,
    errors.MostlyRejectedError: 1,
    errors.OutputError: 1,
    errors.LocatorError: 2,  # escapes only from an argument (see test_figures_command.py)
    errors.UsageError: 2,
}

# a command line of each command, and a library function it calls that is made to raise
COMMANDS = {
    "ingest": (["ingest", "x.csv", "-o", "x.parquet"], "spotkit.io.ingest.ingest_to_parquet"),
    "ingest --dataset": (["ingest", "x.csv", "--dataset", "arch"],
                         "spotkit.io.archive.ingest_to_dataset"),
    "simulate": (["simulate", "-o", "x.csv"], "spotkit.sim.simulate.simulate_spots"),
    "compare": (["compare", "x.csv", "--design", "simultaneous", "--a", "Q1ABC"],
                "spotkit.io.ingest.load_spots"),
    "map": (["map", "x.csv", "--kind", "coverage", "-o", "m.png", "--home", "JN58"],
            "spotkit.io.ingest.load_spots"),
    "plot": (["plot", "x.csv", "--kind", "snr-distance", "-o", "p.png"],
             "spotkit.io.ingest.load_spots"),
    "plan": (["plan", "schedule", "--start", "2026-12-01T00:00Z", "-o", "s.csv"],
             "spotkit.plan.schedule.make_schedule"),
    "report": (["report", "x.csv", "--design", "simultaneous", "--a", "Q1ABC", "-o", "r.html"],
               "spotkit.io.ingest.load_spots"),
    "demo": (["demo", "-o", "out"], "spotkit.demo.run_demo"),
    "archive info": (["archive", "info", "arch"], "spotkit.io.store.dataset_manifest"),
    "archive coverage": (["archive", "coverage", "arch"], "spotkit.distributed.coverage_dask"),
    "archive compare": (["archive", "compare", "arch", "--design", "simultaneous", "--a",
                         "Q1ABC"], "spotkit.distributed.compare_dask"),
}


def test_every_spotkit_error_has_an_expected_exit_code():
    """A new error class must be given its exit code here (and in ``main``)."""
    classes = {obj for name in errors.__all__ if isinstance(obj := getattr(errors, name), type)
               and issubclass(obj, errors.SpotkitError)}
    assert classes == set(EXIT_CODES)


@pytest.mark.parametrize("error", list(EXIT_CODES), ids=lambda c: c.__name__)
@pytest.mark.parametrize("command", list(COMMANDS))
def test_a_spotkit_error_in_a_command_gives_its_exit_code(command, error, monkeypatch, tmp_path,
                                                          capsys):
    argv, target = COMMANDS[command]
    message = f"{error.__name__} raised by {target.rsplit('.', 1)[1]}"

    def fail(*args, **kwargs):
        raise error(message)

    monkeypatch.setattr(target, fail)
    monkeypatch.chdir(tmp_path)
    assert main(argv) == EXIT_CODES[error]  # returns: no exception (traceback) escapes
    out, err = capsys.readouterr()
    prefix = "spotkit: " if error is errors.UsageError else "spotkit: error: "
    assert err == f"{prefix}{message}\n"  # one line, nothing else
    assert "Traceback" not in out


def test_missing_file_is_bad_input(tmp_path, capsys):
    missing = tmp_path / "missing.csv"
    assert main(["compare", str(missing), "--design", "simultaneous", "--a", "Q1ABC"]) == 1
    err = capsys.readouterr().err
    assert err.startswith("spotkit: error: ") and "missing.csv" in err
    assert len(err.splitlines()) == 1


def test_a_bug_keeps_its_traceback(monkeypatch):
    """Exceptions that are not spotkit's (bugs) are not turned into an exit code."""
    def broken(*args, **kwargs):
        raise KeyError("a bug")

    monkeypatch.setattr("spotkit.io.ingest.load_spots", broken)
    with pytest.raises(KeyError, match="a bug"):
        main(["compare", "x.csv", "--design", "simultaneous", "--a", "Q1ABC"])


# --- issue 14: Ctrl-C, errors of the operating system, notes ------------------------------------
COMPARE = ["compare", "x.parquet", "--design", "simultaneous", "--a", "Q1ABC"]


def test_ctrl_c_is_one_line_and_exit_130(monkeypatch, capsys):
    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr("spotkit.io.ingest.load_spots", interrupted)
    assert main(COMPARE) == 130
    assert capsys.readouterr().err == "spotkit: interrupted\n"


def test_ctrl_c_through_a_real_signal(tmp_path):
    # SIGINT sent to the process while a command runs, as Ctrl-C in a terminal does
    code = ("import os, signal, sys\n"
            "import spotkit.io.ingest as ingest\n"
            "ingest.load_spots = lambda *a, **k: os.kill(os.getpid(), signal.SIGINT)\n"
            "from spotkit.cli.app import main\n"
            f"sys.exit(main({COMPARE!r}))\n")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=120, cwd=tmp_path)
    assert run.returncode == 130
    assert run.stderr == "spotkit: interrupted\n"


@pytest.mark.parametrize(("error", "message"), [
    (OSError(5, "Input/output error", "x.parquet"), "x.parquet: Input/output error"),
    (PermissionError(13, "Permission denied", "x.parquet"), "x.parquet: Permission denied"),
    (OSError("disk went away"), "disk went away"),
])
def test_error_of_the_operating_system_is_one_line(error, message, monkeypatch, capsys):
    def fail(*args, **kwargs):
        raise error

    monkeypatch.setattr("spotkit.io.ingest.load_spots", fail)
    assert main(COMPARE) == 1
    assert capsys.readouterr().err == f"spotkit: error: {message}\n"


def test_reader_gone_away_is_no_traceback(monkeypatch, capsys):
    # spotkit compare ... | head: the pipe closes while the result is printed
    def gone(*args, **kwargs):
        raise BrokenPipeError(32, "Broken pipe")

    monkeypatch.setattr("spotkit.io.ingest.load_spots", gone)
    assert main(COMPARE) == 1
    assert capsys.readouterr().err == ""


def test_spotkit_warning_is_shown_as_a_note(monkeypatch, capsys):
    import warnings

    def suspicious(*args, **kwargs):
        warnings.warn("something to know", errors.SpotkitWarning, stacklevel=2)
        raise errors.InputError("and then it stopped")

    monkeypatch.setattr("spotkit.io.ingest.load_spots", suspicious)
    assert main(COMPARE) == 1
    assert capsys.readouterr().err == ("spotkit: note: something to know\n"
                                       "spotkit: error: and then it stopped\n")


# --- --version and python -m spotkit -------------------------------------------------------------
DEPENDENCIES = ("numpy", "pandas", "pyarrow", "pyproj", "geopy", "scipy", "cartopy",
                "matplotlib", "dask")


def _run_module(*args):
    return subprocess.run([sys.executable, "-m", "spotkit", *args], capture_output=True,
                          text=True, timeout=120)


def test_python_m_spotkit_version_lists_the_dependencies():
    import platform

    import numpy
    import pandas

    run = _run_module("--version")
    assert run.returncode == 0, run.stderr
    lines = run.stdout.splitlines()
    assert lines[0] == f"spotkit {spotkit.__version__}"
    found = dict(line.split(None, 1) for line in lines[1:])
    assert list(found) == ["Python", *DEPENDENCIES]
    assert found["Python"] == platform.python_version()
    assert found["numpy"] == numpy.__version__
    assert found["pandas"] == pandas.__version__
    assert all(v.strip() for v in found.values())


def test_version_says_not_installed_for_a_missing_package(monkeypatch, capsys):
    import importlib.metadata

    real = importlib.metadata.version

    def version(name):
        if name == "cartopy":
            raise importlib.metadata.PackageNotFoundError(name)
        return real(name)

    monkeypatch.setattr(importlib.metadata, "version", version)
    assert main(["--version"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert [ln.split(None, 1) for ln in lines if ln.split()[0] == "cartopy"] == [
        ["cartopy", "not installed"]]
    assert sum("not installed" in ln for ln in lines) == 1


def test_version_imports_none_of_the_dependencies():
    code = ("import sys; from spotkit.cli import main; main(['--version']); "
            f"print(sorted(m for m in {DEPENDENCIES!r} if m in sys.modules))")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=120, check=True)
    assert run.stdout.splitlines()[-1] == "[]"


def test_python_m_spotkit_help_exits_zero():
    run = _run_module("--help")
    assert run.returncode == 0, run.stderr
    assert run.stdout.startswith("usage: spotkit ")
    assert "Exit codes: 0 ok, 1 bad input" in run.stdout


def test_python_m_spotkit_runs_a_subcommand():
    run = _run_module("plan")
    assert run.returncode == 2
    assert run.stderr == "spotkit: spotkit plan needs an action: schedule, duration or audit\n"


# --- layout: the command modules import _common and the library, never each other ------------
def _cli_imports(path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module:
            if node.module == "spotkit.cli":
                yield from (f"spotkit.cli.{a.name}" for a in node.names)
            elif node.module.startswith("spotkit.cli"):
                yield node.module
        elif isinstance(node, ast.Import):
            yield from (a.name for a in node.names if a.name.startswith("spotkit.cli"))


@pytest.mark.parametrize("path", sorted(CLI.glob("*.py")), ids=lambda p: p.name)
def test_cli_module_imports(path):
    imported = set(_cli_imports(path))
    if path.stem == "_common":
        assert imported == set()
    elif path.stem == "app":
        commands = {f"spotkit.cli.{p.stem}" for p in CLI.glob("*.py")
                    if p.stem not in ("__init__", "app", "_common")}
        assert imported == commands | {"spotkit.cli._common"}
    elif path.stem == "__init__":
        assert imported == {"spotkit.cli.app"}
    else:
        assert imported <= {"spotkit.cli._common"}
