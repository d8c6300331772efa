"""Messages name what the user can type: the option of the command that ran, never a library
parameter, and never an option of another command without saying which command has it."""
import pytest
from factories import make_spots

from spotkit.cli import main
from spotkit.cli._messages import PARAMETER_OPTIONS, cli_message, command_parser
from spotkit.cli.app import build_parser


@pytest.fixture
def spots_file(tmp_path):
    path = tmp_path / "spots.parquet"
    make_spots(200, seed=2).to_parquet(path)
    return str(path)


def _err(capsys):
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert err.count("\n") >= 1
    return err


@pytest.mark.parametrize("command", ["compare", "report", "map", "plot"])
def test_missing_b_names_the_option(command, spots_file, tmp_path, capsys):
    argv = [command, spots_file, "--design", "simultaneous", "--a", "Q1ABC"]
    if command in ("report", "map", "plot"):
        argv += ["-o", str(tmp_path / ("r.html" if command == "report" else "m.png"))]
    if command in ("map", "plot"):
        argv += ["--kind", "difference" if command == "map" else "bearing"]
    assert main(argv) == 2
    err = _err(capsys)
    assert "the simultaneous design compares two transmitter calls: the call of B is " \
           "missing: give --b CALL" in err
    assert "'NONE'" not in err


def test_missing_b_receive_design(spots_file, capsys):
    assert main(["compare", spots_file, "--design", "receive", "--a", "Q2XY"]) == 2
    assert "two receiver calls: the call of B is missing: give --b CALL" in _err(capsys)


def test_one_call_designs_need_no_b(spots_file, capsys):
    """alternating and before-after use one call: no --b demanded, the next need is named."""
    assert main(["compare", spots_file, "--design", "before-after", "--a", "Q1ABC"]) == 2
    err = _err(capsys)
    assert "needs --change-at" in err and "change_at" not in err
    assert main(["compare", spots_file, "--design", "alternating", "--a", "Q1ABC"]) == 2
    assert "needs --schedule" in _err(capsys)


def test_mapping_hint_sends_compare_users_to_ingest(tmp_path, capsys):
    path = tmp_path / "export.csv"
    path.write_text("when,station,grid,rx,rxgrid,f,s_n,pwr\n"
                    "2026-01-01T00:00Z,Q1ABC,JO62qm,Q2XY,JN58td,14.0971,-12,37\n")
    assert main(["compare", str(path), "--design", "simultaneous", "--a", "Q1ABC",
                 "--b", "Q1ABD"]) == 1
    err = _err(capsys)
    assert (f"--map is an option of spotkit ingest, not of spotkit compare: run 'spotkit "
            f"ingest {path} --map FIELD=COLUMN -o spots.parquet', then 'spotkit compare "
            "spots.parquet ...'") in err
    # ingest has --map: its message is left as the library wrote it
    assert main(["ingest", str(path), "-o", str(tmp_path / "s.parquet")]) == 1
    err = _err(capsys)
    assert "Map them with --map FIELD=COLUMN" in err and "not of spotkit" not in err


@pytest.mark.parametrize("name, content", [("export.xlsx", b"PK\x03\x04" + b"\0" * 60),
                                           ("export.xls", b"\xd0\xcf\x11\xe0" + b"\0" * 60),
                                           ("export.csv", b"PK\x03\x04" + b"\0" * 60)])
def test_spreadsheet_gets_a_save_as_csv_hint(name, content, tmp_path, capsys):
    path = tmp_path / name
    path.write_bytes(content)
    assert main(["ingest", str(path), "-o", str(tmp_path / "s.parquet")]) == 1
    err = _err(capsys)
    assert "is a spreadsheet workbook" in err and "as CSV" in err


def test_plain_bad_csv_gets_no_spreadsheet_hint(tmp_path, capsys):
    path = tmp_path / "export.csv"
    path.write_text("a,b,c\n1,2,3\n")
    assert main(["ingest", str(path), "-o", str(tmp_path / "s.parquet")]) == 1
    assert "spreadsheet" not in _err(capsys)


def test_every_parameter_mapping_names_a_real_option():
    """Each option in the table is an option of some command (a renamed option breaks it)."""
    parser = build_parser()
    options = set()
    stack = [parser]
    while stack:
        p = stack.pop()
        for action in p._actions:
            options.update(action.option_strings)
            if hasattr(action, "choices") and isinstance(action.choices, dict):
                stack.extend(action.choices.values())
    assert set(PARAMETER_OPTIONS.values()) <= options


def test_parameter_replaced_only_where_the_command_has_the_option():
    parser = build_parser()
    msg = "window_slots must be at least 1"
    assert cli_message(msg, parser, ["compare", "x"]) == "--window must be at least 1"
    # ingest has no --window: the word stays (and no hint is made up)
    assert cli_message(msg, parser, ["ingest", "x"]) == msg
    # a word that merely contains a parameter name is left alone
    assert cli_message("my_change_at_x", parser, ["compare", "x"]) == "my_change_at_x"


def test_option_of_another_command_is_named():
    parser = build_parser()
    got = cli_message("give --effect.", parser, ["compare", "x"])
    assert got == "give --effect. spotkit compare has no --effect; spotkit plan duration has it"
    got = cli_message("give --start", parser, ["compare", "x"])
    assert "spotkit plan schedule" in got and got.endswith(" have it")


def test_command_parser_finds_nested_commands():
    parser = build_parser()
    assert command_parser(parser, ["plan", "duration", "--effect", "1"])[0] == ["plan",
                                                                               "duration"]
    assert command_parser(parser, ["compare", "plan"])[0] == ["compare"]
    assert command_parser(parser, [])[0] == []


@pytest.mark.parametrize("home, expected", [
    ("JO62qz", "'JO62qz': 6th character 'z' is past 'x' (the subsquare is letters a-x)"),
    ("J062qm", "'J062qm': 2nd character '0' is the digit 0 where the letter O belongs"),
])
def test_home_typo_says_what_is_wrong(home, expected, spots_file, tmp_path, capsys):
    """Issue 16: these had "expected 2, 4, 6, 8 or 10 characters" though they have 6."""
    pytest.importorskip("cartopy")
    out = tmp_path / "m.png"
    assert main(["map", spots_file, "--kind", "coverage", "--home", home, "-o", str(out)]) == 2
    err = _err(capsys)
    assert expected in err and "characters like" not in err
    assert not out.exists()


def test_a_detection_width_out_of_range_names_the_tau_option(capsys):
    # the library says tau_db; the command line user gave --tau
    from spotkit.demo import demo_data_dir

    code = main(["compare", str(demo_data_dir() / "simultaneous.csv.gz"), "--design",
                 "simultaneous", "--a", "Q1ABC", "--b", "Q1ABD", "--tau", "20"])
    err = capsys.readouterr().err
    assert code == 2
    assert "--tau must be between 0 and 10 dB" in err and "tau_db" not in err
