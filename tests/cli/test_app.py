"""The command line's help and exit codes; the layout of the ``spotkit.cli`` modules."""
import ast
from pathlib import Path

import pytest

import spotkit
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
