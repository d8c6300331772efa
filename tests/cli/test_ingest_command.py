"""``spotkit ingest`` (spotkit.cli.ingest): what each branch passes to the library and the
usage errors it raises itself. The whole ingest through the command line is tested in
tests/io/test_ingest.py and tests/io/test_store.py."""
import pytest

from spotkit.cli import main
from spotkit.io.archive import chunk_rows_for_memory


class _Summary:
    accepted, rejected = 7, 2

    def text(self):
        return "summary text"


@pytest.fixture
def to_file(monkeypatch):
    """Calls of ingest_to_parquet: a list of (files, output, keyword arguments)."""
    calls = []

    def fake(files, output, **kw):
        calls.append((files, output, kw))
        return _Summary()

    monkeypatch.setattr("spotkit.io.ingest.ingest_to_parquet", fake)
    return calls


@pytest.fixture
def to_archive(monkeypatch):
    calls = []

    def fake(files, dataset, **kw):
        calls.append((files, dataset, kw))
        return _Summary()

    monkeypatch.setattr("spotkit.io.archive.ingest_to_dataset", fake)
    return calls


def test_file_branch_passes_the_reading_options(to_file, tmp_path, capsys):
    src = tmp_path / "a.csv"
    src.write_text("x\n")
    out = str(tmp_path / "o.parquet")
    assert main(["ingest", str(src), "-o", out, "--map", "snr=S", "--unit", "power=W",
                 "--delimiter", ";", "--header", "no", "--slot-minutes", "10",
                 "--region", "2", "--rejects", "r.csv", "--no-progress"]) == 0
    [(files, output, kw)] = to_file
    assert files == [str(src)] and output == out
    assert kw == dict(rejects_path="r.csv", mapping={"snr": "S"}, units={"power": "W"},
                      delimiter=";", header=False, slot_minutes=10, region="2",
                      progress=False, max_reject_share=0.5, constants={},
                      date_order=None)
    assert capsys.readouterr().out == (f"summary text\nwrote 7 spots to {out} and 2 rejects "
                                       "to r.csv\n")


@pytest.mark.parametrize("given", [None, 50, 10**9])
def test_file_branch_chunk_size_from_the_memory_cap(given, to_file, tmp_path):
    src = tmp_path / "a.csv"
    src.write_bytes(b"x" * 100_000)
    by_memory = chunk_rows_for_memory(500, total_input_bytes=100_000)
    argv = ["ingest", str(src), "-o", str(tmp_path / "o.parquet"), "--memory-mb", "500"]
    if given:
        argv += ["--chunk-rows", str(given)]
    assert main(argv) == 0
    assert to_file[0][2]["chunk_rows"] == min(given or by_memory, by_memory)


def test_file_branch_chunk_rows_only_when_given(to_file, tmp_path):
    out = str(tmp_path / "o.parquet")
    assert main(["ingest", "a.csv", "-o", out]) == 0
    assert main(["ingest", "a.csv", "-o", out, "--chunk-rows", "40"]) == 0
    assert "chunk_rows" not in to_file[0][2]
    assert to_file[1][2]["chunk_rows"] == 40


def test_archive_branch_passes_partition_and_memory(to_archive, to_file, capsys):
    assert main(["ingest", "a.csv", "b.csv", "--dataset", "arch", "--partition", "band, day",
                 "--memory-mb", "900", "--chunk-rows", "30", "--header", "yes",
                 "--no-progress"]) == 0
    assert not to_file
    [(files, dataset, kw)] = to_archive
    assert files == ["a.csv", "b.csv"] and dataset == "arch"
    assert kw == dict(chunk_rows=30, memory_mb=900.0, partition_by=["band", "day"],
                      mapping={}, units={}, delimiter="auto", header=True, slot_minutes=2,
                      region="all", progress=False, constants={}, date_order=None)
    assert capsys.readouterr().out == ("summary text\nappended 7 spots to the archive arch "
                                       "(2 rejects kept in arch/_rejects/)\n")


@pytest.mark.parametrize("argv, message", [
    (["--dataset", "arch", "-o", "o.parquet"],
     "give either -o OUT.parquet or --dataset DIR, not both"),
    ([], "give -o OUT.parquet or --dataset DIR"),
    (["--dataset", "arch", "--rejects", "r.csv"],
     "--rejects applies to -o; an archive keeps its rejects in DIR/_rejects/"),
    (["--dataset", "arch", "--max-reject-share", "0.9"],
     "--max-reject-share applies to -o, not to --dataset"),
    (["--dataset", "arch", "--map", "snr=A", "--map", "snr=B"],
     "each FIELD may be given only once in --map / --unit"),
    (["-o", "o.parquet", "--unit", "power=W", "--unit", "power=mW"],
     "each FIELD may be given only once in --map / --unit"),
])
def test_usage_errors(argv, message, to_file, to_archive, capsys):
    assert main(["ingest", "a.csv", *argv]) == 2
    assert capsys.readouterr().err == f"spotkit: {message}\n"
    assert not to_file and not to_archive


def test_archive_branch_names_a_bad_partition(to_archive, capsys):
    # checked before the library is called; other errors of the library keep their own
    # names (tests/cli/test_archive_command.py)
    assert main(["ingest", "a.csv", "--dataset", "arch", "--partition", "hour"]) == 2
    assert capsys.readouterr().err == "spotkit: unknown --partition key 'hour'; valid: band, day\n"
    assert not to_archive


# --- the outputs of -o (real runs) ---------------------------------------------------------------
HEAD = "time,tx call,tx locator,rx call,rx locator,frequency mhz,snr,power dbm\n"
GOOD = ["2026-03-01 10:00,Q1ABC,JN58td,Q7XYZ,IO91lk,14.097100,-12,23",
        "2026-03-01 10:02,Q1ABC,JN58td,Q9DEF,FN31pr,14.097105,-21,23",
        "2026-03-01 10:04,Q2BCD,JO62,Q7XYZ,IO91lk,7.038650,-5,37",
        "2026-03-01 10:06,Q2BCD,JO62,Q9DEF,FN31pr,10.140200,3,30"]


@pytest.fixture
def export(tmp_path, monkeypatch):
    """An invented export ``export.csv`` in the current folder."""
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "export.csv"
    path.write_text(HEAD + "\n".join(GOOD) + "\n")
    return path


def _state(folder):
    """Every file in ``folder`` (recursively) with its bytes."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*"))
            if p.is_file()}


@pytest.mark.parametrize("argv, message", [
    (["-o", "out.parquet", "--rejects", "export.csv"],
     "output export.csv is also an input file; choose another name"),
    (["-o", "export.csv"], "output export.csv is also an input file; choose another name"),
    (["-o", "./sub/../export.csv"],
     "output sub/../export.csv is also an input file; choose another name"),
    (["-o", "hard.csv"], "output hard.csv is also an input file; choose another name"),
    (["-o", "X", "--rejects", "X"], "outputs X and X are the same file; give each output its "
     "own name"),
    (["-o", "folder"], "output folder is a folder; give a file name"),
    (["-o", "o.parquet", "--rejects", "folder"], "output folder is a folder; give a file name"),
    (["-o", "o.parquet", "--chunk-rows", "0"], "--chunk-rows must be 1 or more, not 0"),
    (["-o", "o.parquet", "--chunk-rows", "-3"], "--chunk-rows must be 1 or more, not -3"),
    (["--dataset", "arch", "--chunk-rows", "0"], "--chunk-rows must be 1 or more, not 0"),
])
def test_outputs_that_would_destroy_something_are_refused_first(export, argv, message, capsys):
    import os

    (export.parent / "folder").mkdir()
    (export.parent / "sub").mkdir()
    os.link(export, export.parent / "hard.csv")
    before = _state(export.parent)
    assert main(["ingest", "export.csv", *argv, "--no-progress"]) == 2
    assert capsys.readouterr().err == f"spotkit: {message}\n"
    assert _state(export.parent) == before  # nothing touched, nothing added


def test_read_only_output_folder_is_one_clear_error(export, monkeypatch, capsys):
    import os

    from spotkit.io import atomic

    real_open = os.open

    def refuse(path, flags, *a):  # what a read-only folder does (the suite may run as root)
        if str(path).endswith(".spotkit-tmp"):
            raise PermissionError(13, "Permission denied", str(path))
        return real_open(path, flags, *a)

    monkeypatch.setattr(atomic.os, "open", refuse)
    (export.parent / "ro").mkdir()
    assert main(["ingest", "export.csv", "-o", "ro/o.parquet", "--no-progress"]) == 1
    err = capsys.readouterr().err
    assert err == f"spotkit: error: cannot write in folder {export.parent / 'ro'}: " \
        "permission denied\n"
    assert list((export.parent / "ro").iterdir()) == []


def test_ctrl_c_gives_one_line_and_leaves_earlier_files(export, monkeypatch, capsys):
    assert main(["ingest", "export.csv", "-o", "o.parquet", "--rejects", "r.csv",
                 "--no-progress"]) == 0
    before = _state(export.parent)

    def interrupted(*a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr("spotkit.io.ingest._table", interrupted)
    capsys.readouterr()
    try:
        code = main(["ingest", "export.csv", "-o", "o.parquet", "--rejects", "r.csv",
                     "--no-progress"])
    except KeyboardInterrupt:
        pytest.fail("Ctrl-C reached the user as a traceback")
    assert code == 130
    assert capsys.readouterr().err == ("spotkit: interrupted (Ctrl-C); nothing written, "
                                       "earlier files unchanged\n")
    assert _state(export.parent) == before


def test_a_run_that_accepts_nothing_fails_and_keeps_the_earlier_output(export, capsys):
    assert main(["ingest", "export.csv", "-o", "o.parquet", "--rejects", "r.csv",
                 "--no-progress"]) == 0
    before = _state(export.parent)
    capsys.readouterr()
    # frequencies said to be in kHz: 14.0971 kHz is in no amateur band
    assert main(["ingest", "export.csv", "-o", "o.parquet", "--rejects", "r.csv",
                 "--unit", "frequency=kHz", "--no-progress"]) == 1
    out, err = capsys.readouterr()
    assert "accepted:           0" in out and "frequency not in an amateur band: 4" in out
    assert err == ("spotkit: error: export.csv: no row accepted (4 read; set aside: frequency "
                   "not in an amateur band: 4); the values may be kHz or Hz rather than MHz "
                   "(--unit frequency=Hz|kHz|MHz), another column (--map frequency=COLUMN) or "
                   "outside the --region band plan; nothing written, earlier files "
                   "unchanged\n")
    assert _state(export.parent) == before


@pytest.mark.parametrize("share, code", [(None, 1), ("0.5", 1), ("70%", 1), ("80%", 0), ("1", 0)])
def test_more_than_the_allowed_share_for_one_reason_fails(export, share, code, capsys):
    bad = [r.replace("IO91lk", "XX99").replace("FN31pr", "XX98") for r in GOOD[:3]]
    export.write_text(HEAD + "\n".join(bad + GOOD[3:]) + "\n")  # 3 of 4: bad locator
    argv = ["ingest", "export.csv", "-o", "o.parquet", "--no-progress"]
    if share:
        argv += ["--max-reject-share", share]
    assert main(argv) == code
    err = capsys.readouterr().err
    assert (export.parent / "o.parquet").exists() == (code == 0)
    if code:
        allowed = {"70%": "70 %"}.get(share, "50 %")
        assert err == ("spotkit: error: export.csv: 3 of 4 rows (75 %) set aside as 'bad "
                       f"locator', more than the {allowed} allowed (--max-reject-share); check "
                       "--map tx_locator=COLUMN / rx_locator=COLUMN; nothing written, earlier "
                       "files unchanged\n")


@pytest.mark.parametrize("share", ["abc", "150%", "-0.1", "2"])
def test_bad_share_is_a_usage_error(share, to_file, capsys):
    assert main(["ingest", "a.csv", "-o", "o.parquet", "--max-reject-share", share]) == 2
    assert "--max-reject-share" in capsys.readouterr().err and not to_file


def test_duplicates_are_listed_in_the_rejects_file(export, capsys):
    import pandas as pd

    extra = export.parent / "more.csv"
    extra.write_text(HEAD + "\n".join([GOOD[2], "2026-03-01 10:08,Q1ABC,JN58td,Q7XYZ,XX99,"
                                       "14.0971,-9,23", GOOD[2], GOOD[0]]) + "\n")
    export.write_text(HEAD + "\n".join(GOOD + [GOOD[1]]) + "\n")
    assert main(["ingest", "export.csv", "more.csv", "-o", "o.parquet", "--rejects", "r.csv",
                 "--no-progress", "--chunk-rows", "2"]) == 0
    out = capsys.readouterr().out
    assert "wrote 4 spots to o.parquet and 1 rejects and 4 duplicates to r.csv" in out
    assert "accepted + rejected + duplicates = rows read: yes (4 + 1 + 4 = 9)" in out
    rej = pd.read_csv("r.csv", keep_default_na=False)
    assert rej.values.tolist() == [
        ["export.csv", 5, "report", "export.csv row 2", "exact duplicate"],
        ["more.csv", 1, "report", "export.csv row 3", "exact duplicate"],
        ["more.csv", 2, "rx_locator", "XX99", "bad locator"],
        ["more.csv", 3, "report", "export.csv row 3", "exact duplicate"],
        ["more.csv", 4, "report", "export.csv row 1", "exact duplicate"],
    ]


def test_ctrl_c_during_the_commit_says_the_outputs_are_written(export, monkeypatch, capsys):
    import os
    import signal

    monkeypatch.setattr("spotkit.io.atomic._before_rename_hook",
                        lambda: os.kill(os.getpid(), signal.SIGINT))
    assert main(["ingest", "export.csv", "-o", "o.parquet", "--rejects", "r.csv",
                 "--no-progress"]) == 130
    assert capsys.readouterr().err == ("spotkit: interrupted (Ctrl-C); the outputs were "
                                       "already written in full\n")
    assert sorted(p.name for p in export.parent.iterdir()) == ["export.csv", "o.parquet",
                                                                "r.csv"]


def test_an_output_under_a_file_is_one_clear_error(export, capsys):
    assert main(["ingest", "export.csv", "-o", "export.csv/o.parquet", "--no-progress"]) == 1
    assert capsys.readouterr().err == (f"spotkit: error: cannot write in folder {export}: it "
                                       "is a file, not a folder\n")


def test_a_file_with_a_heading_and_no_rows_fails_and_keeps_the_earlier_output(export, capsys):
    assert main(["ingest", "export.csv", "-o", "o.parquet", "--no-progress"]) == 0
    (export.parent / "empty.csv").write_text(HEAD)
    before = _state(export.parent)
    capsys.readouterr()
    assert main(["ingest", "empty.csv", "-o", "o.parquet", "--no-progress"]) == 1
    assert "empty.csv: no data rows to read" in capsys.readouterr().err
    assert _state(export.parent) == before
