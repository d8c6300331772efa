"""Tests for spotkit.distributed: the same per-partition functions on pandas and on Dask.

Oracles: plain pandas groupby aggregations (count, nunique, mean, median, max) computed
directly on the whole table, and spotkit.geo on the whole table for the enrichment.
Dask runs on a distributed.LocalCluster with 2 in-process workers started by the tests.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from spotkit import columns as C
from spotkit import distributed as D
from spotkit import store
from spotkit.errors import UsageError
from spotkit.units import snr_per_watt

from test_store import make_spots


@pytest.fixture(scope="module")
def client():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as c:
        yield c


@pytest.fixture(scope="module")
def spots():
    return make_spots(3000, seed=11)


@pytest.fixture(scope="module")
def archive(tmp_path_factory, spots):
    root = tmp_path_factory.mktemp("arch") / "spots"
    # two exports appended separately: more partitions than band x day
    store.append_to_dataset(spots.iloc[:1800], root, source_hash="1" * 64)
    store.append_to_dataset(spots.iloc[1800:], root, source_hash="2" * 64)
    return root


def naive_coverage(df, keys, station):
    """Oracle: pandas groupby aggregations on the whole table."""
    x = df.assign(**{C.SNR_PER_W: snr_per_watt(df[C.SNR], df[C.POWER])})
    g = x.groupby(keys, observed=True)
    return pd.DataFrame({
        C.COUNT: g.size(),
        D.STATIONS: g[station].nunique(),
        D.SNR_MEAN: g[C.SNR_PER_W].mean(),
        D.SNR_MEDIAN: g[C.SNR_PER_W].median(),
        D.SNR_MAX: g[C.SNR_PER_W].max(),
    })


def with_keys(df):
    return df.assign(**{
        C.SQUARE: df[C.RX_LOCATOR].astype(str).str[:4].str.upper(),
        C.FIELD: df[C.TX_LOCATOR].astype(str).str[:2].str.upper(),
        C.HOUR: df[C.SLOT].dt.hour,
    })


@pytest.mark.parametrize("by,side,keys,station", [
    (("band", "square"), "rx", [C.BAND, C.SQUARE], C.RX_CALL),
    (("hour",), "rx", [C.HOUR], C.RX_CALL),
    (("band", "field", "hour"), "tx", [C.BAND, C.FIELD, C.HOUR], C.TX_CALL),
    (("rx_call",), "tx", [C.RX_CALL], C.TX_CALL),
])
def test_coverage_table_matches_pandas_groupby(spots, by, side, keys, station):
    got = D.coverage_table(spots, by, side=side)
    want = naive_coverage(with_keys(spots), keys, station)
    assert list(got.columns) == keys + D.COVERAGE_COLUMNS
    got_i = got.assign(**{k: got[k].astype(object) if k != C.HOUR else got[k]
                          for k in keys}).set_index(keys)
    want = want.reset_index()
    want = want.assign(**{k: want[k].astype(object) if k != C.HOUR else want[k]
                          for k in keys}).set_index(keys)
    got_i = got_i.loc[want.index]
    assert len(got) == len(want)
    np.testing.assert_array_equal(got_i[C.COUNT], want[C.COUNT])  # counts exact
    np.testing.assert_array_equal(got_i[D.STATIONS], want[D.STATIONS])
    for col in (D.SNR_MEAN, D.SNR_MEDIAN, D.SNR_MAX):
        np.testing.assert_allclose(got_i[col], want[col], rtol=0, atol=1e-9)  # dB


def test_coverage_whole_table_without_keys(spots):
    got = D.coverage_table(spots, [])
    v = snr_per_watt(spots[C.SNR], spots[C.POWER])
    assert got[C.COUNT].item() == len(spots)
    assert got[D.STATIONS].item() == spots[C.RX_CALL].nunique()
    assert got[D.SNR_MEDIAN].item() == pytest.approx(np.median(v), abs=1e-9)


def test_partials_merge_in_any_split(spots, rng):
    by = ("band", "square", "hour")
    want = D.coverage_table(spots, by)
    for n_parts in (2, 7, 31):
        labels = rng.integers(0, n_parts, len(spots))
        parts = [D.coverage_partials(p, by) for _, p in spots.groupby(labels)]
        # merge in two stages, as a Dask tree does
        half = len(parts) // 2
        merged = D.combine_coverage([D.combine_coverage(parts[:half] or parts[:1]),
                                     D.combine_coverage(parts[half:])]) if half else \
            D.combine_coverage(parts)
        pd.testing.assert_frame_equal(D.finish_coverage(merged), want)


def test_median_even_and_missing_values():
    df = make_spots(4, seed=2).assign(**{C.BAND: "20m", C.RX_LOCATOR: "JN58td"})
    df[C.POWER] = 30.0
    df[C.SNR] = [-20.0, -10.0, -13.0, np.nan]
    got = D.coverage_table(C.apply_dtypes(df), ["band"])
    assert got[C.COUNT].item() == 4  # a spot without SNR still counts as a spot
    assert got[D.SNR_MEDIAN].item() == pytest.approx(-13.0, abs=1e-12)  # median of 3
    df[C.SNR] = [-20.0, -10.0, -13.0, -11.0]
    got = D.coverage_table(C.apply_dtypes(df), ["band"])
    assert got[D.SNR_MEDIAN].item() == pytest.approx(-12.0, abs=1e-12)  # (-13 + -11) / 2


def test_coverage_bad_arguments(spots):
    with pytest.raises(ValueError, match="valid: band, square"):
        D.coverage_table(spots, ["continent"])
    with pytest.raises(ValueError, match="valid: rx, tx"):
        D.coverage_table(spots, ["band"], side="both")
    with pytest.raises(UsageError, match="repeat"):
        D.coverage_table(spots, ["band", "band"])
    with pytest.raises(UsageError, match="scheduler"):
        with D.dask_scheduler(3.5):
            pass


def test_coverage_dask_equals_pandas_on_local_cluster(archive, spots, client):
    for by, side in [(("band", "square"), "rx"), (("band", "field", "hour"), "tx")]:
        want = D.coverage_table(spots, by, side=side)
        got = D.coverage_dask(archive, by, side=side, scheduler=client, split_every=3)
        pd.testing.assert_frame_equal(got, want)  # exact: same partial maths, merged


def test_coverage_dask_selection_equals_pandas(archive, spots, client):
    t0, t1 = pd.Timestamp("2026-11-30 23:00", tz="UTC"), pd.Timestamp("2026-12-01 05:00", tz="UTC")
    keep = (spots[C.BAND].isin(["20m", "10m"]) & (spots[C.SLOT] >= t0) & (spots[C.SLOT] < t1))
    want = D.coverage_table(spots.loc[keep], ("band", "square"))
    got = D.coverage_dask(archive, ("band", "square"), bands=["20m", "10m"], start=t0, end=t1,
                          scheduler=client)
    pd.testing.assert_frame_equal(got, want)
    got = D.coverage_dask(archive, ("band",), scheduler="sync")
    pd.testing.assert_frame_equal(got, D.coverage_table(spots, ("band",)))


def test_enrichment_on_dask_equals_pandas(archive, spots, client):
    from spotkit.geo import add_path_columns

    cols = [C.SOURCE_ROW, C.TX_LOCATOR, C.RX_LOCATOR]
    ddf = D.read_archive_dask(archive, columns=cols)
    assert ddf.npartitions == len(store.archive_files(archive))
    got = D.enrich_dask(ddf).compute(scheduler=client).sort_values(C.SOURCE_ROW)
    want = add_path_columns(spots[cols]).sort_values(C.SOURCE_ROW)
    for col in C.DERIVED:
        np.testing.assert_allclose(got[col].to_numpy(), want[col].to_numpy(),
                                   rtol=0, atol=1e-9)  # deg / km: the same function
