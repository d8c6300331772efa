"""Tests for spotkit.io.store: Parquet files and partitioned archives.

The oracle throughout is pandas itself: what comes back from Parquet (with filters pushed
down) must equal the in-memory table selected with plain boolean masks.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow.compute as pc
import pytest
from factories import make_spots

from spotkit import columns as C
from spotkit.errors import InputError, UsageError
from spotkit.io import archive, store


def canonical_sorted(df):
    """Sort rows and give categoricals sorted/band-ordered categories, as store returns."""
    out = store.table_to_spots(store._to_arrow(df.reset_index(drop=True)))
    key = [c for c in (C.SOURCE_FILE, C.SOURCE_ROW, C.TIME, C.FREQ, C.SNR) if c in out.columns]
    return out.sort_values(key, kind="stable").reset_index(drop=True)


def assert_same_spots(got, want):
    pd.testing.assert_frame_equal(canonical_sorted(got), canonical_sorted(want))


# --- single files ----------------------------------------------------------------------
def test_write_read_roundtrip_keeps_glossary_dtypes(tmp_path):
    df = make_spots()
    path = store.write_spots(df, tmp_path / "sub" / "spots.parquet")
    got = store.read_spots_parquet(path)
    assert list(got.columns) == C.CANONICAL
    for name in C.CANONICAL:
        assert str(got[name].dtype) == str(C.GLOSSARY[name].dtype), name
    assert_same_spots(got, df)


def test_read_filters_and_columns_pushdown(tmp_path):
    df = make_spots()
    path = store.write_spots(df, tmp_path / "spots.parquet")
    got = store.read_spots_parquet(path, filters=[(C.BAND, "==", "20m"), (C.SNR, ">", -10)],
                                   columns=[C.SLOT, C.BAND, C.SNR])
    want = df.loc[(df[C.BAND] == "20m") & (df[C.SNR] > -10), [C.SLOT, C.BAND, C.SNR]]
    assert list(got.columns) == [C.SLOT, C.BAND, C.SNR]
    assert len(got) == len(want) > 0
    np.testing.assert_array_equal(np.sort(got[C.SNR].to_numpy()), np.sort(want[C.SNR].to_numpy()))
    expr = pc.field(C.TX_CALL) == "Q7XYZ"
    got = store.read_spots_parquet(path, filters=expr)
    assert len(got) == int((df[C.TX_CALL] == "Q7XYZ").sum())


def test_read_bad_inputs(tmp_path):
    bad = tmp_path / "bad.parquet"
    bad.write_text("time,call\n1,2\n")
    with pytest.raises(InputError, match="bad.parquet"):
        store.read_spots_parquet(bad)
    with pytest.raises(FileNotFoundError):
        store.read_spots_parquet(tmp_path / "missing.parquet")
    path = store.write_spots(make_spots(20), tmp_path / "s.parquet")
    with pytest.raises(InputError, match="no_such_column"):
        store.read_spots_parquet(path, columns=["no_such_column"])


# --- partitioned archives ----------------------------------------------------------------
def test_append_read_back_and_layout(tmp_path):
    df = make_spots()
    root = tmp_path / "arch"
    entry = store.append_to_dataset(df, root, source_hash="0" * 64, source="a.csv")
    assert entry["rows"] == len(df)
    got = store.read_dataset(root)
    assert list(got.columns) == C.CANONICAL
    assert_same_spots(got, df)
    # one directory per band x slot day; midnight UTC splits the slots (20:00 -> 08:00)
    days = df[C.SLOT].dt.strftime("%Y-%m-%d")
    want_dirs = {f"{C.BAND}={b}/{store.DAY}={d}"
                 for b, d in zip(df[C.BAND].astype(str), days, strict=True)}
    got_dirs = {str(p.parent.relative_to(root)) for p in root.rglob("*.parquet")}
    assert got_dirs == want_dirs and len(want_dirs) == 6
    man = store.dataset_manifest(root)
    assert man["partition_by"] == [C.BAND, store.DAY]
    assert [b["sha256"] for b in man["batches"]] == ["0" * 64]
    assert sorted(man["batches"][0]["files"]) == sorted(
        p.relative_to(root).as_posix() for p in root.rglob("*.parquet"))


def test_append_never_rewrites_and_refuses_same_hash(tmp_path):
    root = tmp_path / "arch"
    a, b = make_spots(300, seed=1), make_spots(200, seed=2, start="2026-12-01 06:00")
    store.append_to_dataset(a, root, source_hash="a" * 64, source="a.csv")
    before = {p: (p.stat().st_mtime_ns, p.stat().st_ino) for p in root.rglob("*.parquet")}
    store.append_to_dataset(b, root, source_hash="b" * 64, source="b.csv")
    after = {p: (p.stat().st_mtime_ns, p.stat().st_ino) for p in root.rglob("*.parquet")}
    assert all(after[p] == v for p, v in before.items())  # old files untouched
    assert len(after) > len(before)
    assert_same_spots(store.read_dataset(root), pd.concat([a, b], ignore_index=True))
    with pytest.raises(InputError, match="already in the archive"):
        store.append_to_dataset(b, root, source_hash="b" * 64, source="b-again.csv")
    assert len(store.dataset_manifest(root)["batches"]) == 2
    assert not [p for p in root.iterdir() if p.name.startswith("_staging")]


def test_append_partition_mismatch_and_foreign_dir(tmp_path):
    root = tmp_path / "arch"
    store.append_to_dataset(make_spots(50), root, partition_by=(C.BAND,))
    with pytest.raises(UsageError, match="partitioned by"):
        store.append_to_dataset(make_spots(50), root)
    with pytest.raises(ValueError, match="valid: band, day"):
        store.append_to_dataset(make_spots(50), tmp_path / "x", partition_by=("hour",))
    other = tmp_path / "other"
    other.mkdir()
    (other / "notes.txt").write_text("x")
    with pytest.raises(UsageError, match="not a spotkit archive"):
        store.append_to_dataset(make_spots(50), other)
    got = store.read_dataset(root, bands="40m")
    assert set(got[C.BAND].astype(str)) == {"40m"}


@pytest.mark.parametrize("query", [
    dict(bands="20m"),
    dict(bands=["40m", "10m"]),
    dict(start="2026-12-01 01:00", end="2026-12-01T03:30Z"),
    dict(start=pd.Timestamp("2026-11-30 23:00", tz="UTC")),
    dict(end="2026-11-30 21:00"),
    dict(tx_calls="Q1ABC", rx_calls=["Q2AA", "Q5CC"]),
    dict(locator_prefix="io9"),
    dict(bands="10m", start="2026-12-01", locator_prefix="RE"),
])
def test_read_dataset_filters_match_pandas(tmp_path, query):
    df = make_spots(600, seed=3)
    root = tmp_path / "arch"
    store.append_to_dataset(df, root)
    keep = np.ones(len(df), bool)
    if "bands" in query:
        b = query["bands"]
        keep &= df[C.BAND].astype(str).isin([b] if isinstance(b, str) else b).to_numpy()
    if "start" in query:
        t0 = pd.Timestamp(query["start"])
        t0 = t0.tz_localize("UTC") if t0.tzinfo is None else t0
        keep &= (df[C.SLOT] >= t0).to_numpy()
    if "end" in query:
        t1 = pd.Timestamp(query["end"])
        t1 = t1.tz_localize("UTC") if t1.tzinfo is None else t1
        keep &= (df[C.SLOT] < t1).to_numpy()
    if "tx_calls" in query:
        keep &= (df[C.TX_CALL] == query["tx_calls"]).to_numpy()
    if "rx_calls" in query:
        keep &= df[C.RX_CALL].astype(str).isin(query["rx_calls"]).to_numpy()
    if "locator_prefix" in query:
        p = query["locator_prefix"].upper()
        keep &= (df[C.TX_LOCATOR].astype(str).str.upper().str.startswith(p)
                 | df[C.RX_LOCATOR].astype(str).str.upper().str.startswith(p)).to_numpy()
    got = store.read_dataset(root, **query)
    assert 0 < len(got) < len(df)
    assert_same_spots(got, df.loc[keep])


def test_read_dataset_columns_dedupe_and_errors(tmp_path):
    df = make_spots(200)
    root = tmp_path / "arch"
    store.append_to_dataset(df, root, source_hash="1" * 64)
    store.append_to_dataset(df.iloc[:50], root, source_hash="2" * 64)  # overlapping export
    assert len(store.read_dataset(root)) == 250
    got = store.read_dataset(root, dedupe=True, columns=[C.SLOT, C.SNR])
    assert list(got.columns) == [C.SLOT, C.SNR] and len(got) == 200
    both = store.read_spots_parquet(root, filters=[(C.BAND, "==", "20m")])
    assert set(both[C.BAND].astype(str)) == {"20m"}
    with pytest.raises(UsageError, match="not after"):
        store.read_dataset(root, start="2026-12-02", end="2026-12-01")
    with pytest.raises(UsageError, match="start"):
        store.read_dataset(root, start="yesterday-ish")
    with pytest.raises(FileNotFoundError):
        store.read_dataset(tmp_path / "nowhere")


def test_empty_archive_reads_empty_table(tmp_path):
    root = tmp_path / "arch"
    store.append_to_dataset(make_spots(10).iloc[:0], root)
    got = store.read_dataset(root)
    assert len(got) == 0 and list(got.columns) == C.CANONICAL


# --- archive ingest (bounded memory) ----------------------------------------------------------
def spots_csv(df, path, extra_lines=()):
    """Write a spot table as a plain CSV with generic headings; append raw extra lines."""
    out = pd.DataFrame({
        "time": df[C.TIME].dt.strftime("%Y-%m-%d %H:%M:%S"), "tx call": df[C.TX_CALL],
        "tx locator": df[C.TX_LOCATOR], "rx call": df[C.RX_CALL],
        "rx locator": df[C.RX_LOCATOR], "frequency hz": df[C.FREQ], "snr": df[C.SNR],
        "power dbm": df[C.POWER], "drift": df[C.DRIFT]})
    out.to_csv(path, index=False)
    with open(path, "a") as fh:
        for line in extra_lines:
            fh.write(line + "\n")
    return path


def test_ingest_to_dataset_tiny_chunks_equals_in_memory(tmp_path):
    from spotkit.io.ingest import read_spots

    df = make_spots(700, seed=5)
    dup = df.iloc[[3, 400]]  # duplicates far from their originals: across chunk borders
    bad = ["2026-12-01 01:00:00,Q1ABC,ZZ99zz,Q2AA,JN58td,14097100,-10,37,0",
           "2026-12-01 01:02:00,Q1ABC,JN58td,Q2AA,JN58td,14097100,-10,37,0"]
    path = spots_csv(pd.concat([df, dup]), tmp_path / "a.csv", extra_lines=bad)
    want = read_spots(path)  # in one go, in memory
    assert want.summary.rejected >= 1 and want.summary.duplicates == 2
    root = tmp_path / "arch"
    summary = archive.ingest_to_dataset(path, root, chunk_rows=37)
    got = store.read_dataset(root)
    assert_same_spots(got, want.spots)
    assert (summary.rows_read, summary.accepted, summary.rejected, summary.duplicates) == (
        want.summary.rows_read, want.summary.accepted, want.summary.rejected,
        want.summary.duplicates)
    batch = store.dataset_manifest(root)["batches"][0]
    assert batch["sha256"] == store.file_sha256(path) and batch["rows"] == len(want.spots)
    rejects = pd.read_csv(root / batch["rejects"])
    assert batch["rejected"] == len(rejects) == want.summary.rejected
    assert list(rejects[C.SOURCE_ROW]) == list(want.rejects[C.SOURCE_ROW])


def test_ingest_to_dataset_refuses_same_file_and_appends_new(tmp_path):
    a = spots_csv(make_spots(300, seed=6), tmp_path / "a.csv")
    b = spots_csv(make_spots(200, seed=7, start="2026-12-02 00:00"), tmp_path / "b.csv")
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root, memory_mb=1000)
    files_before = sorted(p.name for p in root.rglob("*.parquet"))
    copy = tmp_path / "renamed-copy.csv"
    copy.write_bytes(a.read_bytes())
    with pytest.raises(InputError, match="already in the archive"):
        archive.ingest_to_dataset([b, copy], root)  # refused before anything is written
    assert sorted(p.name for p in root.rglob("*.parquet")) == files_before
    with pytest.raises(InputError, match="same content"):
        archive.ingest_to_dataset([b, b], root)
    archive.ingest_to_dataset(b, root, chunk_rows=50)
    man = store.dataset_manifest(root)
    assert [m["source"] for m in man["batches"]] == [str(a), str(b)]
    assert len(store.read_dataset(root)) == 500
    assert len(store.read_dataset(root, start="2026-12-02")) == 200


def test_chunk_rows_for_memory():
    # budget formula (see the docstring): base + seen keys + chunk
    rows = archive.chunk_rows_for_memory(1000)
    assert rows == int((1000 - archive.BASE_MEMORY_MB) * 2**20 // archive.CHUNK_BYTES_PER_ROW)
    assert archive.chunk_rows_for_memory(1000, total_input_bytes=6 * 10**8) < rows
    with pytest.raises(UsageError, match="too small"):
        archive.chunk_rows_for_memory(archive.BASE_MEMORY_MB)
    with pytest.raises(UsageError, match="positive"):
        archive.chunk_rows_for_memory(-5)


# --- command line -----------------------------------------------------------------------------
def test_cli_ingest_dataset_append_and_refuse(tmp_path, capsys):
    from spotkit.cli import main

    a = spots_csv(make_spots(120, seed=8), tmp_path / "a.csv")
    root = tmp_path / "arch"
    assert main(["ingest", str(a), "--dataset", str(root), "--chunk-rows", "40"]) == 0
    assert "appended 120 spots" in capsys.readouterr().out
    assert len(store.read_dataset(root)) == 120
    assert main(["ingest", str(a), "--dataset", str(root)]) == 1  # same file again
    assert "already in the archive" in capsys.readouterr().err
    assert main(["ingest", str(a), "--dataset", str(root), "-o", str(tmp_path / "x.parquet")]) == 2
    assert main(["ingest", str(a)]) == 2  # neither -o nor --dataset
    assert main(["ingest", str(a), "--dataset", str(tmp_path / "b"), "--partition", "hour"]) == 2
    assert main(["archive", "info", str(root)]) == 0
    assert "120 spots" in capsys.readouterr().out
    out = tmp_path / "one.parquet"  # -o with a memory cap: one file, chunked
    assert main(["ingest", str(a), "-o", str(out), "--memory-mb", "500"]) == 0
    assert len(store.read_spots_parquet(out)) == 120


def test_partition_filters_skip_other_directories(tmp_path):
    """Pushdown check: a damaged file in a partition outside the selection is never opened."""
    root = tmp_path / "arch"
    df = make_spots(300, seed=9)
    store.append_to_dataset(df, root)
    victim = next(root.glob(f"{C.BAND}=40m/*/*.parquet"))
    victim.write_bytes(b"not parquet at all")
    got = store.read_dataset(root, bands="20m", start="2026-12-01")
    want = df[(df[C.BAND] == "20m") & (df[C.SLOT] >= pd.Timestamp("2026-12-01", tz="UTC"))]
    assert_same_spots(got, want)
    assert all(f.startswith(f"{C.BAND}=20m/{store.DAY}=2026-12-01")
               for f in store.archive_files(root, bands="20m", start="2026-12-01"))
    with pytest.raises(InputError, match="cannot read"):
        store.read_dataset(root, bands="40m")


def test_ingest_under_a_memory_cap_keeps_recent_days_keys_only(tmp_path):
    from spotkit.io.ingest import read_spots

    # three days of time-ordered reports (about 1.7 MB, so the reader takes several chunks);
    # three day-1 reports are uploaded again after day 2, in a later chunk but within the
    # one-day window
    days = [make_spots(8000, seed=20 + d, start=f"2026-12-0{1 + d} 00:00").sort_values(
        C.SLOT, kind="stable") for d in range(3)]
    again = days[0].iloc[[7990, 7995, 7999]]
    path = spots_csv(pd.concat([days[0], days[1], again, days[2]]), tmp_path / "ordered.csv")
    want = read_spots(path)
    assert want.summary.duplicates == 3
    root = tmp_path / "arch"
    summary = archive.ingest_to_dataset(path, root, chunk_rows=5000, memory_mb=2000)
    assert (summary.accepted, summary.duplicates) == (want.summary.accepted, 3)
    assert_same_spots(store.read_dataset(root), want.spots)


def test_ingest_under_a_memory_cap_refuses_input_out_of_time_order(tmp_path):
    late = make_spots(12000, seed=30, start="2026-12-05 00:00")
    early = make_spots(12000, seed=31, start="2026-12-01 00:00")
    path = spots_csv(pd.concat([late, early]), tmp_path / "unordered.csv")
    with pytest.raises(InputError, match=r"unordered\.csv, row \d+: .*time.order"):
        archive.ingest_to_dataset(path, tmp_path / "arch", chunk_rows=5000, memory_mb=2000)
    # without a cap every report's key is kept, so any order is fine
    archive.ingest_to_dataset(path, tmp_path / "arch2", chunk_rows=5000)
    assert len(store.read_dataset(tmp_path / "arch2")) == 24000


# --- the manifest is the archive (spotkit.io.manifest) -------------------------------------------
def stray_copy(root, rel, name):
    """Copy committed file ``rel`` to ``name`` in the same partition folder, as a killed
    append would have left it."""
    src = root / rel
    dst = src.parent / name
    dst.write_bytes(src.read_bytes())
    return dst.relative_to(root).as_posix()


def test_readers_open_only_the_files_the_manifest_lists(tmp_path):
    df = make_spots(300, seed=12)
    root = tmp_path / "arch"
    store.append_to_dataset(df, root)
    committed = store.archive_files(root)
    left = stray_copy(root, committed[0], "part-0123456789ab.parquet")  # spotkit's name
    alien = stray_copy(root, committed[1], "from-elsewhere.parquet")  # not spotkit's
    assert len(store.read_dataset(root)) == len(df)
    assert len(store.read_spots_parquet(root)) == len(df)
    assert store.archive_files(root) == committed
    from spotkit.io import manifest

    check = manifest.check_archive(root)
    assert (check.rows, check.rows_in_files) == (len(df), len(df))
    assert check.leftovers == [left] and check.foreign == [alien] and not check.clean
    assert manifest.repair_archive(root) == [left]  # spotkit's leftovers only
    assert not (root / left).exists() and (root / alien).exists()
    assert manifest.check_archive(root).foreign == [alien]


def test_a_committed_file_that_went_missing_is_named(tmp_path):
    from spotkit.io import manifest

    root = tmp_path / "arch"
    store.append_to_dataset(make_spots(200, seed=13), root)
    gone = store.archive_files(root)[0]
    (root / gone).unlink()
    with pytest.raises(InputError, match="not on disk"):
        store.read_dataset(root)
    check = manifest.check_archive(root)
    assert check.missing == [gone] and "missing from disk" in check.text()


def test_a_new_archive_is_marked_by_its_manifest_from_the_start(tmp_path):
    """An append killed before its first commit still leaves a folder that is recognisably an
    archive (and can be appended to), not 'a folder that is not a spotkit archive'."""
    from spotkit.io import manifest

    root = tmp_path / "arch"
    store._open_for_append(root, store.PARTITION_KEYS)
    assert store.dataset_manifest(root)["batches"] == []
    stage = root / "_staging-0123456789ab" / "band=20m" / "day=2026-12-01"
    stage.mkdir(parents=True)
    (root / "band=20m" / "day=2026-12-01").mkdir(parents=True)
    (root / "band=20m" / "day=2026-12-01" / "part-0123456789ab.parquet").write_bytes(b"x")
    assert len(manifest.check_archive(root).leftovers) == 4  # staging, file, two folders
    store.append_to_dataset(make_spots(50, seed=14), root)  # rolls the leftovers back first
    assert manifest.check_archive(root).clean
    assert len(store.read_dataset(root)) == 50


def test_append_holds_the_archive_lock_while_it_commits(tmp_path):
    from spotkit.io import manifest

    root = tmp_path / "arch"
    store.append_to_dataset(make_spots(50, seed=15), root)
    with manifest.archive_lock(root):
        with pytest.raises(UsageError, match="another spotkit process is writing"):
            store.append_to_dataset(make_spots(60, seed=16), root, lock_timeout=0.1)
    assert len(store.read_dataset(root)) == 50
    assert manifest.check_archive(root).clean  # the loser's staging is gone
    store.append_to_dataset(make_spots(60, seed=16), root)
    assert len(store.read_dataset(root)) == 110


def test_partition_keys_must_be_given_once(tmp_path):
    with pytest.raises(UsageError, match="at least one key"):
        store.append_to_dataset(make_spots(20), tmp_path / "a", partition_by=())
    with pytest.raises(UsageError, match="repeat"):
        store.append_to_dataset(make_spots(20), tmp_path / "b", partition_by=("band", "band"))


def test_ingest_refuses_a_gzip_copy_of_a_file_already_taken(tmp_path):
    import gzip

    a = spots_csv(make_spots(150, seed=17), tmp_path / "a.csv")
    root = tmp_path / "arch"
    archive.ingest_to_dataset(a, root)
    packed = tmp_path / "a.csv.gz"
    packed.write_bytes(gzip.compress(a.read_bytes()))
    with pytest.raises(InputError, match="already in the archive"):
        archive.ingest_to_dataset(packed, root)
    assert len(store.read_dataset(root)) == 150


def test_archive_memory_cap_works_from_the_measured_minimum(tmp_path):
    """The cap's model (constants measured by benchmarks/bench_archive_memory.py: peaks of
    328 to 353 MiB at chunks of a few thousand rows, 432 MiB at 100,000) accepts caps from
    about 363 MiB and names that minimum when it refuses one (it used to refuse anything
    below 803 MiB)."""
    path = spots_csv(make_spots(300, seed=18), tmp_path / "b.csv")
    summary = archive.ingest_to_dataset(path, tmp_path / "arch", memory_mb=400)
    assert summary.accepted == len(store.read_dataset(tmp_path / "arch")) == 300
    least = archive.BASE_MEMORY_MB + archive.MIN_CHUNK_ROWS * archive.CHUNK_BYTES_PER_ROW / 2**20
    assert 300 <= least <= 370
    assert archive.chunk_rows_for_memory(400) >= 10_000  # measured: 336 MiB at 10,485 rows
    with pytest.raises(UsageError, match=f"needs at least {int(np.ceil(least))} MiB"):
        archive.ingest_to_dataset(spots_csv(make_spots(50), tmp_path / "a.csv"),
                                  tmp_path / "arch2", memory_mb=350)


def test_an_append_never_rolls_back_its_own_staging(tmp_path, monkeypatch):
    """Even if the lock library let one process take its own staging lock twice (so that the
    staging looked abandoned), the commit's roll back leaves this process's staging alone."""
    from spotkit.io import manifest

    monkeypatch.setattr(manifest, "_staging_is_dead", lambda lock: True)
    root = tmp_path / "arch"
    store.append_to_dataset(make_spots(80, seed=19), root)
    assert len(store.read_dataset(root)) == 80 and manifest.check_archive(root).clean
