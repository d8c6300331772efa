"""No command can overwrite what it reads (issue: "nothing in the README's workflow can destroy
an input file").

Every output option of every command that reads a spot file or an archive is given the path of
that input (by the same name, by another spelling and through a hard link); each run must stop
with exit 2 before touching anything, and the input must stay byte-identical. `spotkit ingest`'s
own refusals are tested in test_ingest_command.py.
"""
from __future__ import annotations

import os

import pytest
from factories import make_spots

from spotkit.cli.app import main
from spotkit.io.store import append_to_dataset

AB = ["--design", "simultaneous", "--a", "Q1ABC", "--b", "Q7XYZ"]


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    spots = make_spots(80, seed=5)
    spots.to_csv("spots.csv", index=False)
    os.link("spots.csv", "linked.csv")
    (tmp_path / "sub").mkdir()
    append_to_dataset(spots, tmp_path / "arch")
    return tmp_path


def _files(folder):
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*"))
            if p.is_file()}


SPELLINGS = ["spots.csv", "./sub/../spots.csv", "linked.csv"]

RUNS = [
    ("compare --csv", lambda out: ["compare", "spots.csv", *AB, "--csv", out]),
    ("compare --json", lambda out: ["compare", "spots.csv", *AB, "--json", out]),
    ("report -o", lambda out: ["report", "spots.csv", *AB, "-o", out]),
    ("plan audit --csv", lambda out: ["plan", "audit", "spots.csv", "--call", "Q1ABC",
                                      "--schedule", "even-odd", "--csv", out]),
    ("plan audit --corrected", lambda out: ["plan", "audit", "spots.csv", "--call", "Q1ABC",
                                            "--schedule", "even-odd", "--corrected", out]),
    ("plan duration --csv", lambda out: ["plan", "duration", "--pilot", "spots.csv", *AB,
                                         "--effect", "1", "--csv", out]),
]


@pytest.mark.parametrize("spelling", SPELLINGS)
@pytest.mark.parametrize("name, argv", RUNS, ids=[r[0] for r in RUNS])
def test_an_output_that_is_the_input_is_refused_first(folder, name, argv, spelling, capsys):
    before = _files(folder)
    assert main(argv(spelling)) == 2, name
    err = capsys.readouterr().err
    assert "is also an input file; choose another name" in err, err
    assert _files(folder) == before


@pytest.mark.parametrize("argv", [
    ["archive", "coverage", "arch", "--by", "band", "-o", "arch/manifest.json"],
    ["archive", "compare", "arch", *AB, "--csv", "arch/manifest.json"],
    ["archive", "compare", "arch", *AB, "--json", "arch/new.json"],
], ids=["coverage -o", "compare --csv", "compare --json"])
def test_an_output_inside_the_archive_is_refused_first(folder, argv, capsys):
    before = _files(folder)
    assert main(argv) == 2
    assert "is inside the archive arch; write it elsewhere" in capsys.readouterr().err
    assert _files(folder) == before


def test_two_outputs_of_one_run_may_not_be_one_file(folder, capsys):
    before = _files(folder)
    assert main(["compare", "spots.csv", *AB, "--csv", "r.csv", "--json", "sub/../r.csv"]) == 2
    assert "are the same file" in capsys.readouterr().err
    assert _files(folder) == before
