"""The README's Python example runs as written, from the repository's top folder."""
from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]


def test_readme_python_blocks_run():
    blocks = re.findall(r"```python\n(.*?)```", (REPO / "README.md").read_text(), re.S)
    assert blocks, "the README shows the library in a ```python block"
    for code in blocks:
        proc = subprocess.run([sys.executable, "-c", code], cwd=REPO, capture_output=True,
                              text=True, timeout=300)
        assert proc.returncode == 0, proc.stderr
        # the example's own claims: every row accounted for, and a verdict per group
        assert "accepted + rejected + duplicates = rows read: yes" in proc.stdout
        assert "B is" in proc.stdout and "on 10 m" in proc.stdout


# --- the README's commands are commands the program takes ----------------------------------
def _readme_commands() -> list[str]:
    """Every ``spotkit ...`` command the README shows: lines of its shell blocks and of its
    ``$ spotkit`` output blocks, and inline code spans (which may wrap across lines)."""
    sys.path.insert(0, str(REPO / "scripts"))
    try:
        from readme_tour import commands
    finally:
        sys.path.pop(0)
    text = (REPO / "README.md").read_text()
    found = []
    for lang, body in re.findall(r"```(\w*)\n(.*?)```", text, re.S):
        if lang == "sh":
            found += [c for c in commands(body.splitlines()) if c.startswith("spotkit ")]
        else:
            found += [line[2:] for line in body.splitlines() if line.startswith("$ spotkit ")]
    prose = re.sub(r"```.*?```", "", text, flags=re.S)
    found += [" ".join(span.split()) for span in re.findall(r"`(spotkit [^`]+)`", prose)]
    return found


def test_readme_commands_parse():
    """Each command the README shows is accepted by the parser as written (required options
    present, options that exist, valid choices); ``--help`` spans are only looked up."""
    import shlex

    from spotkit.cli._messages import command_parser
    from spotkit.cli.app import build_parser

    found = _readme_commands()
    assert len(found) >= 10, found
    bad = []
    for command in found:
        if "..." in command:  # an elided command ("spotkit ingest ... -o"): not checked
            continue
        words = [w for w in shlex.split(command)[1:] if w != "--help"]
        if words and words[0].isupper():  # a placeholder ("spotkit COMMAND --help")
            continue
        named, _ = command_parser(build_parser(), words)
        if words and named == words:  # a command's name ("spotkit plan duration")
            continue
        try:
            build_parser().parse_args(words)
        except SystemExit as exc:  # --version
            if exc.code:
                bad.append(f"{command}: exit {exc.code}")
        except Exception as exc:  # report every bad command
            bad.append(f"{command}: {exc}")
    assert not bad, "\n".join(bad)


def test_readme_names_the_options_users_asked_about():
    """Options that were missing from the README (issue 16): named, with their defaults as the
    parser has them."""
    from spotkit.cli.app import build_parser

    text = (REPO / "README.md").read_text()
    for option in ("--csv", "--json", "--title", "--progress", "--hour-basis"):
        assert option in text, option
    compare = build_parser()._subparsers._group_actions[0].choices["compare"]
    default = next(a.default for a in compare._actions if "--hour-basis" in a.option_strings)
    assert f"`--hour-basis utc|local` (default {default})" in text


@pytest.mark.slow
def test_readme_output_blocks_match_the_program():
    """``scripts/readme_tour.py --check``: the tour's commands run on the demo data print
    what the README shows (tables, verdicts, the planner, the demo's files)."""
    proc = subprocess.run([sys.executable, str(REPO / "scripts" / "readme_tour.py"),
                           "--check"], cwd=REPO, capture_output=True, text=True, timeout=3000)
    assert proc.returncode == 0, proc.stdout[-6000:] + proc.stderr[-3000:]


def _tour_module():
    sys.path.insert(0, str(REPO / "scripts"))
    try:
        import readme_tour
    finally:
        sys.path.pop(0)
    return readme_tour


def test_tour_script_rewrites_a_stale_block_and_then_checks_clean(tmp_path, capsys):
    """The tour script finds drift (exit 1 with a diff), rewrites the block from the program's
    output, and then checks clean; unmarked text is left as it is."""
    tour = _tour_module()
    readme = tmp_path / "README.md"
    readme.write_text("intro `spotkit`\n\n<!-- tour: output -->\n```text\n"
                      "$ spotkit plan schedule --help\nstale text\n```\n\ntail\n")
    assert tour.main(["--check", "--readme", str(readme)]) == 1
    assert "-stale text" in capsys.readouterr().out
    assert tour.main(["--readme", str(readme)]) == 0
    text = readme.read_text()
    assert "usage: spotkit plan schedule" in text and "--start TIME" in text
    assert text.startswith("intro `spotkit`\n\n<!-- tour: output -->\n```text\n$ spotkit plan")
    assert text.endswith("```\n\ntail\n") and "stale" not in text
    assert tour.main(["--check", "--readme", str(readme)]) == 0


def test_tour_commands_join_continuations_and_skip_setup_lines():
    tour = _tour_module()
    body = [". .venv/bin/activate", "# a comment", "spotkit compare a.parquet \\",
            "    --by band   # trailing comment", "", "spotkit map x -o m.png"]
    assert tour.commands(body) == ["spotkit compare a.parquet --by band",
                                   "spotkit map x -o m.png"]
