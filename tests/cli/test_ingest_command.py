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
                      progress=False)
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
                      region="all", progress=False)
    assert capsys.readouterr().out == ("summary text\nappended 7 spots to the archive arch "
                                       "(2 rejects kept in arch/_rejects/)\n")


@pytest.mark.parametrize("argv, message", [
    (["--dataset", "arch", "-o", "o.parquet"],
     "give either -o OUT.parquet or --dataset DIR, not both"),
    ([], "give -o OUT.parquet or --dataset DIR"),
    (["--dataset", "arch", "--rejects", "r.csv"],
     "--rejects applies to -o; an archive keeps its rejects in DIR/_rejects/"),
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
