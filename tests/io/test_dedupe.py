"""Tests of spotkit.io.dedupe: exact duplicates across batches from 64-bit report hashes.

The oracle is pandas' own exact duplicate test (:meth:`pandas.DataFrame.duplicated`, keep
the first) on the concatenated key columns.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit.errors import InputError, UsageError
from spotkit.io import dedupe


def _keys(rng, n, distinct):
    """Report-like key columns with many repeats (``distinct`` possible values each)."""
    return pd.DataFrame({
        "slot": rng.integers(0, distinct, n) * 120 * 10**9,
        "call": rng.choice(np.array([f"Q{i}XY" for i in range(distinct)], dtype=object), n),
        "snr": rng.integers(-30, -28, n).astype(float),
    })


def _hashes(df):
    parts = []
    for name in df.columns:
        codes, uniq = pd.factorize(df[name])
        parts.append((codes, dedupe.hash_values(np.asarray(uniq))))
    return dedupe.report_hashes(parts)


@pytest.mark.parametrize("max_runs", [24, 2])
def test_duplicates_across_batches_equal_pandas(monkeypatch, max_runs):
    # max_runs 2: runs are merged as batches arrive; the byte map grows several times
    monkeypatch.setattr(dedupe.SeenKeys, "MAX_RUNS", max_runs)
    monkeypatch.setattr(dedupe.SeenKeys, "MIN_BITS", 4)
    rng = np.random.default_rng(3)
    df = _keys(rng, 20_000, 30)
    h = _hashes(df)
    seen = dedupe.SeenKeys()
    got = np.concatenate([seen.duplicates(h[i:i + 1_500]) for i in range(0, h.size, 1_500)])
    want = df.duplicated(keep="first").to_numpy()
    assert want.sum() > 1_000  # the test data repeat a lot
    np.testing.assert_array_equal(got, want)
    assert seen.size == (~want).sum()
    assert len(seen.runs) <= max_runs


def test_hash_values_equal_numbers_hash_equal():
    a = dedupe.hash_values(np.array([0.0, -0.0, 1.5, 1.5]))
    assert a[0] == a[1] and a[2] == a[3] and a[0] != a[2]
    s = dedupe.hash_values(np.array(["Q1ABC", "Q1ABC", "Q1ABD"], dtype=object))
    assert s[0] == s[1] != s[2]
    per_row = dedupe.report_hashes([(None, a)])
    by_code = dedupe.report_hashes([(np.array([0, 1, 2, 3]), a)])
    np.testing.assert_array_equal(per_row, by_code)


def test_day_keys_forget_old_days_and_refuse_reports_older_than_the_window():
    day = 86_400 * 10**9
    keys = dedupe.DayKeys(1)
    h = np.array([1, 2, 2], dtype=np.uint64)
    slots = np.array([0, day, day])
    np.testing.assert_array_equal(keys.duplicates(h, slots, np.arange(3), "f.csv"),
                                  [False, False, True])
    keys.duplicates(np.array([3], dtype=np.uint64), np.array([3 * day]), np.array([4]), "f.csv")
    assert sorted(keys.days) == [3]  # day 1 is more than one day before day 3
    with pytest.raises(InputError, match="f.csv, row 9"):
        keys.duplicates(np.array([5], dtype=np.uint64), np.array([0]), np.array([9]), "f.csv")
    with pytest.raises(UsageError):
        dedupe.DayKeys(0)


def test_sort_hashes_equals_numpy_sort():
    rng = np.random.default_rng(5)
    for n in (10, 70_000, 200_000):
        h = rng.integers(0, 2**63, n, dtype=np.int64).astype(np.uint64) * np.uint64(2)
        h[: n // 10] = h[-(n // 10):]  # repeats
        np.testing.assert_array_equal(dedupe.sort_hashes(h), np.sort(h))


@pytest.mark.parametrize("max_runs, batch", [(24, 1_500), (2, 700), (24, 70_000)])
def test_duplicates_of_names_the_first_report_as_pandas(monkeypatch, max_runs, batch):
    # oracle: pandas' duplicated (keep the first) and, per key, the first row's label;
    # max_runs 2 merges runs (with their labels) as batches arrive; a batch of 70,000 takes
    # the counting-sort path of argsort_hashes
    monkeypatch.setattr(dedupe.SeenKeys, "MAX_RUNS", max_runs)
    monkeypatch.setattr(dedupe.SeenKeys, "MIN_BITS", 4)
    rng = np.random.default_rng(11)
    df = _keys(rng, 20_000 if batch < 70_000 else 140_000, 30)
    h = _hashes(df)
    where = rng.permutation(h.size).astype(np.int64) + 10  # arbitrary distinct labels
    seen = dedupe.SeenKeys(track_first=True)
    parts = [seen.duplicates_of(h[i:i + batch], where[i:i + batch])
             for i in range(0, h.size, batch)]
    dup = np.concatenate([p[0] for p in parts])
    first = np.concatenate([p[1] for p in parts])
    np.testing.assert_array_equal(dup, df.duplicated(keep="first").to_numpy())
    key = df.groupby(list(df.columns), sort=False).ngroup().to_numpy()
    first_label = pd.Series(where).groupby(key).transform("first").to_numpy()
    np.testing.assert_array_equal(first, first_label)
    assert dup.sum() > 1_000 and len(seen.runs) <= max_runs


def test_argsort_hashes_is_a_stable_sort():
    rng = np.random.default_rng(6)
    for n in (10, 70_000):
        h = rng.integers(0, 2**63, n, dtype=np.int64).astype(np.uint64)
        h[: n // 5] = h[-(n // 5):]  # repeats: their order must be kept
        np.testing.assert_array_equal(dedupe.argsort_hashes(h), np.argsort(h, kind="stable"))


def test_duplicates_of_needs_a_set_that_tracks_first_reads():
    with pytest.raises(TypeError, match="does not track"):
        dedupe.SeenKeys().duplicates_of(np.zeros(1, dtype=np.uint64), np.zeros(1))
