"""The command line's help and exit codes."""
from spotkit.cli import main


def test_help_exits_zero(capsys):
    assert main(["--help"]) == 0
    assert "ingest" in capsys.readouterr().out


def test_unknown_command_is_usage_error(capsys):
    assert main(["no-such-command"]) == 2
    assert "spotkit" in capsys.readouterr().err


def test_no_command_is_usage_error():
    assert main([]) == 2
