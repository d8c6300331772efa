"""``spotkit archive`` (spotkit.cli.archive) and the ``ingest --dataset`` branch
(spotkit.cli.ingest._ingest_to_archive): each error names its own option, ``archive info``
reports what interrupted appends left and ``archive repair`` removes it. The commit
protocol itself is tested in tests/io/test_archive_faults.py."""
import math

import pytest
from factories import make_spots

from spotkit import columns as C
from spotkit.cli import main
from spotkit.io import manifest, store


@pytest.fixture
def small_archive(tmp_path):
    root = tmp_path / "arch"
    store.append_to_dataset(make_spots(200, seed=3), root, source="a.csv")
    return root


def test_a_bad_scheduler_is_not_called_a_by_or_side_error(small_archive, capsys):
    code = main(["archive", "coverage", str(small_archive), "--scheduler", "bogus"])
    err = capsys.readouterr().err
    assert code == 2
    assert "--by" not in err and "--side" not in err
    assert "scheduler 'bogus'" in err and "tcp://host:8786" in err


def test_a_bad_coverage_key_still_names_the_key(small_archive, capsys):
    assert main(["archive", "coverage", str(small_archive), "--by", "band,nope"]) == 2
    assert "coverage key 'nope'" in capsys.readouterr().err


def test_an_error_of_the_archive_ingest_is_not_called_a_partition_error(tmp_path, monkeypatch,
                                                                       capsys):
    """A plain ValueError from inside the ingest (here a stand-in for any library error) is
    not relabelled '--partition'."""
    def broken(*args, **kwargs):
        raise ValueError("column 'snr_db' could not be converted")

    monkeypatch.setattr("spotkit.io.archive.ingest_to_dataset", broken)
    src = tmp_path / "a.csv"
    src.write_text("x\n")
    try:
        main(["ingest", str(src), "--dataset", str(tmp_path / "arch")])
    except ValueError as exc:  # a bug's own message and traceback, not a usage error
        assert "could not be converted" in str(exc)
    assert "--partition" not in capsys.readouterr().err


@pytest.mark.parametrize("partition, message", [
    ("hour", "unknown --partition key 'hour'; valid: band, day"),
    (",", "--partition: give at least one key from band, day"),
])
def test_a_bad_partition_names_partition(tmp_path, capsys, partition, message):
    src = tmp_path / "a.csv"
    src.write_text("x\n")
    assert main(["ingest", str(src), "--dataset", str(tmp_path / "arch"),
                 "--partition", partition]) == 2
    assert message in capsys.readouterr().err
    assert not (tmp_path / "arch").exists()


def test_info_reports_leftovers_and_repair_removes_them(small_archive, capsys):
    root = small_archive
    (root / "_staging-0123456789ab" / "band=20m").mkdir(parents=True)
    first = root / store.archive_files(root)[0]
    (first.parent / "part-ba9876543210.parquet").write_bytes(first.read_bytes())
    (root / f"{manifest.MANIFEST_NAME}.0f0f.tmp").write_text("{")
    assert main(["archive", "info", str(root)]) == 0
    out = capsys.readouterr().out
    assert "200 spots in" in out
    assert "3 leftover(s) of interrupted appends" in out
    assert f"spotkit archive repair {root}" in out
    assert main(["archive", "repair", str(root)]) == 0
    out = capsys.readouterr().out
    assert "removed 3 leftover(s)" in out and "no leftovers" in out
    assert manifest.check_archive(root).clean
    assert sorted(p.name for p in root.iterdir() if p.name.startswith("_")) == [
        manifest.LOCK_NAME, manifest.MANIFEST_NAME]
    assert len(store.read_dataset(root)) == 200


def test_info_and_repair_on_something_that_is_not_an_archive(tmp_path, capsys):
    (tmp_path / "empty").mkdir()
    assert main(["archive", "info", str(tmp_path / "empty")]) == 1
    assert "not a spotkit archive" in capsys.readouterr().err
    assert main(["archive", "repair", str(tmp_path / "empty")]) == 1
    assert main(["archive", "info", str(tmp_path / "nowhere")]) == 1
    assert "no such archive directory" in capsys.readouterr().err


def test_coverage_counts_only_what_info_reports(small_archive, tmp_path, capsys):
    """A data file left by a killed append is read by no command: the coverage counts add up
    to the spots 'archive info' reports."""
    import pandas as pd

    first = small_archive / store.archive_files(small_archive)[0]
    (first.parent / "part-0123456789ab.parquet").write_bytes(first.read_bytes())
    out = tmp_path / "cov.csv"
    assert main(["archive", "coverage", str(small_archive), "--by", "band", "-o", str(out),
                 "--scheduler", "sync"]) == 0
    assert main(["archive", "info", str(small_archive)]) == 0
    assert "200 spots in" in capsys.readouterr().out
    assert int(pd.read_csv(out)[C.COUNT].sum()) == 200


def test_a_memory_cap_below_the_minimum_names_memory_mb_and_the_minimum(tmp_path, capsys):
    src = tmp_path / "a.csv"
    src.write_text("x\n")
    assert main(["ingest", str(src), "--dataset", str(tmp_path / "arch"),
                 "--memory-mb", "300"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("spotkit: --memory-mb: a memory cap of 300 MiB is too small")
    from spotkit.io import archive

    least = archive.BASE_MEMORY_MB + archive.MIN_CHUNK_ROWS * archive.CHUNK_BYTES_PER_ROW / 2**20
    assert f"needs at least {math.ceil(least)} MiB" in err
