"""Tests for spotkit.distributed: the same per-partition functions on pandas and on Dask.

Oracles: plain pandas groupby aggregations (count, nunique, mean, median, max) computed
directly on the whole table, and spotkit.geo.geodesic on the whole table for the enrichment.
Dask runs on a distributed.LocalCluster with 2 in-process workers started by the tests.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from factories import make_spots

from spotkit import columns as C
from spotkit import coverage as CV
from spotkit import distributed as D
from spotkit.errors import UsageError
from spotkit.io import store
from spotkit.units import snr_per_watt


@pytest.fixture(scope="module")
def client():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=":0") as cluster, \
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
        CV.STATIONS: g[station].nunique(),
        CV.SNR_MEAN: g[C.SNR_PER_W].mean(),
        CV.SNR_MEDIAN: g[C.SNR_PER_W].median(),
        CV.SNR_MAX: g[C.SNR_PER_W].max(),
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
    got = CV.coverage_table(spots, by, side=side)
    want = naive_coverage(with_keys(spots), keys, station)
    assert list(got.columns) == keys + CV.COVERAGE_COLUMNS
    got_i = got.assign(**{k: got[k].astype(object) if k != C.HOUR else got[k]
                          for k in keys}).set_index(keys)
    want = want.reset_index()
    want = want.assign(**{k: want[k].astype(object) if k != C.HOUR else want[k]
                          for k in keys}).set_index(keys)
    got_i = got_i.loc[want.index]
    assert len(got) == len(want)
    np.testing.assert_array_equal(got_i[C.COUNT], want[C.COUNT])  # counts exact
    np.testing.assert_array_equal(got_i[CV.STATIONS], want[CV.STATIONS])
    for col in (CV.SNR_MEAN, CV.SNR_MEDIAN, CV.SNR_MAX):
        np.testing.assert_allclose(got_i[col], want[col], rtol=0, atol=1e-9)  # dB


def test_coverage_whole_table_without_keys(spots):
    got = CV.coverage_table(spots, [])
    v = snr_per_watt(spots[C.SNR], spots[C.POWER])
    assert got[C.COUNT].item() == len(spots)
    assert got[CV.STATIONS].item() == spots[C.RX_CALL].nunique()
    assert got[CV.SNR_MEDIAN].item() == pytest.approx(np.median(v), abs=1e-9)


def test_partials_merge_in_any_split(spots, rng):
    by = ("band", "square", "hour")
    want = CV.coverage_table(spots, by)
    for n_parts in (2, 7, 31):
        labels = rng.integers(0, n_parts, len(spots))
        parts = [CV.coverage_partials(p, by) for _, p in spots.groupby(labels)]
        # merge in two stages, as a Dask tree does
        half = len(parts) // 2
        merged = CV.combine_coverage([CV.combine_coverage(parts[:half] or parts[:1]),
                                     CV.combine_coverage(parts[half:])]) if half else \
            CV.combine_coverage(parts)
        pd.testing.assert_frame_equal(CV.finish_coverage(merged), want)


def test_median_even_and_missing_values():
    df = make_spots(4, seed=2).assign(**{C.BAND: "20m", C.RX_LOCATOR: "JN58td"})
    df[C.POWER] = 30.0
    df[C.SNR] = [-20.0, -10.0, -13.0, np.nan]
    got = CV.coverage_table(C.apply_dtypes(df), ["band"])
    assert got[C.COUNT].item() == 4  # a spot without SNR still counts as a spot
    assert got[CV.SNR_MEDIAN].item() == pytest.approx(-13.0, abs=1e-12)  # median of 3
    df[C.SNR] = [-20.0, -10.0, -13.0, -11.0]
    got = CV.coverage_table(C.apply_dtypes(df), ["band"])
    assert got[CV.SNR_MEDIAN].item() == pytest.approx(-12.0, abs=1e-12)  # (-13 + -11) / 2


def test_coverage_bad_arguments(spots):
    with pytest.raises(ValueError, match="valid: band, square"):
        CV.coverage_table(spots, ["continent"])
    with pytest.raises(ValueError, match="valid: rx, tx"):
        CV.coverage_table(spots, ["band"], side="both")
    with pytest.raises(UsageError, match="repeat"):
        CV.coverage_table(spots, ["band", "band"])
    with pytest.raises(UsageError, match="scheduler"):
        with D.dask_scheduler(3.5):
            pass


def test_coverage_dask_equals_pandas_on_local_cluster(archive, spots, client):
    for by, side in [(("band", "square"), "rx"), (("band", "field", "hour"), "tx")]:
        want = CV.coverage_table(spots, by, side=side)
        got = D.coverage_dask(archive, by, side=side, scheduler=client, split_every=3)
        pd.testing.assert_frame_equal(got, want)  # exact: same partial maths, merged


def test_coverage_dask_selection_equals_pandas(archive, spots, client):
    t0, t1 = pd.Timestamp("2026-11-30 23:00", tz="UTC"), pd.Timestamp("2026-12-01 05:00", tz="UTC")
    keep = (spots[C.BAND].isin(["20m", "10m"]) & (spots[C.SLOT] >= t0) & (spots[C.SLOT] < t1))
    want = CV.coverage_table(spots.loc[keep], ("band", "square"))
    got = D.coverage_dask(archive, ("band", "square"), bands=["20m", "10m"], start=t0, end=t1,
                          scheduler=client)
    pd.testing.assert_frame_equal(got, want)
    got = D.coverage_dask(archive, ("band",), scheduler="sync")
    pd.testing.assert_frame_equal(got, CV.coverage_table(spots, ("band",)))


def test_enrichment_on_dask_equals_pandas(archive, spots, client):
    from spotkit.geo.geodesic import add_path_columns

    cols = [C.SOURCE_ROW, C.TX_LOCATOR, C.RX_LOCATOR]
    ddf = D.read_archive_dask(archive, columns=cols)
    assert ddf.npartitions == len(store.archive_files(archive))
    got = D.enrich_dask(ddf).compute(scheduler=client).sort_values(C.SOURCE_ROW)
    want = add_path_columns(spots[cols]).sort_values(C.SOURCE_ROW)
    for col in C.DERIVED:
        np.testing.assert_allclose(got[col].to_numpy(), want[col].to_numpy(),
                                   rtol=0, atol=1e-9)  # deg / km: the same function


# --- A/B comparison -----------------------------------------------------------------------------
def _plain_sorted(df, keys):
    """Text columns as text, rows sorted by ``keys`` (category order may differ)."""
    df = df.reset_index(drop=True)
    df = df.assign(**{c: df[c].astype(str) for c in df.columns
                      if not pd.api.types.is_numeric_dtype(df[c])})
    return df.sort_values(list(keys), kind="stable").reset_index(drop=True)


def assert_same_counts(got, want):
    """Compressed pair tables equal row for row (text columns compared as text)."""
    keys = [c for c in want.columns if c != C.COUNT]
    pd.testing.assert_frame_equal(_plain_sorted(got, keys), _plain_sorted(want, keys),
                                  check_dtype=False)


def assert_same_groups(got, want, keys):
    """Group results equal: numbers to 1e-9 dB (or exactly for counts), text exactly."""
    g, w = _plain_sorted(got, keys), _plain_sorted(want, keys)
    num = want.select_dtypes("number").columns
    np.testing.assert_allclose(g[num].to_numpy(float), w[num].to_numpy(float),
                               rtol=0, atol=1e-9)
    text = [c for c in want.columns if c not in num]
    pd.testing.assert_frame_equal(g[text], w[text])


@pytest.fixture(scope="module")
def sim_archive(tmp_path_factory):
    """Simulated simultaneous-transmit run over 2 days (crossing midnight), as an archive."""
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots("simultaneous", days=2, seed=3, n_receivers=60, start="2026-03-02")
    root = tmp_path_factory.mktemp("sim") / "arch"
    store.append_to_dataset(sim.spots, root)
    return sim, root


def test_partition_thresholds_differ_from_global(sim_archive):
    """The case the threshold correction is for: some receiver's lowest SNR differs
    between a partition and the whole run."""
    from spotkit.compare.pairing import receiver_thresholds

    sim, root = sim_archive
    glob = receiver_thresholds(sim.spots)
    rec = D.combine_receivers([D.receiver_partials(store.read_archive_file(root, f))
                               for f in store.archive_files(root)])
    pd.testing.assert_series_equal(D.thresholds_from_partials(rec).sort_index(),
                                   glob.rename_axis(glob.index.name).set_axis(
                                       glob.index.astype(str)).sort_index(),
                                   check_names=False, check_index_type=False)
    differs = 0
    for f in store.archive_files(root):
        loc = receiver_thresholds(store.read_archive_file(root, f))
        loc.index = loc.index.astype(str)
        g = glob.set_axis(glob.index.astype(str)).reindex(loc.index)
        differs += int((loc != g).sum())
    assert differs > 0


@pytest.mark.parametrize("by", [(), ("band", "distance")])
def test_compare_dask_equals_pandas_simultaneous(sim_archive, client, by):
    from spotkit.compare.estimate import compare_antennas

    sim, root = sim_archive
    # the width fitted to the report histograms on both paths (the width from the pairs,
    # the default, is checked by test_compare_dask_width_from_pairs_equals_pandas)
    want = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, by=by, n_boot=200, seed=1,
                            tau_from="reports")
    got = D.compare_dask(root, "simultaneous", sim.a, sim.b, by=by, n_boot=200, seed=1,
                         scheduler=client, split_every=2, tau_from="reports")
    # same pairs -> the same compressed table (counts exact) -> the same bootstrap
    assert_same_counts(got.counts, want.counts)
    for k, v in want.overall.items():
        if isinstance(v, float):
            assert got.overall[k] == pytest.approx(v, rel=0, abs=1e-9, nan_ok=True), k
        else:
            assert got.overall[k] == v, k
    if by:
        assert_same_groups(got.groups, want.groups, [C.BAND, C.DISTANCE_MIN])
    assert got.set_aside == want.set_aside
    assert sorted(got.verdicts()) == sorted(want.verdicts())


def test_compare_dask_bootstrap_seeds_agree_within_monte_carlo_error(sim_archive):
    """Another seed moves the interval ends only by bootstrap noise. The Monte-Carlo SD of
    a 2.5 % percentile from B resamples is sqrt(p(1-p)/B)/phi(z_p) x SE (asymptotic
    variance of a sample quantile) = 0.19 SE for B = 200; two runs differ by sqrt(2) x that.
    Allow 5 such SDs."""
    from scipy.stats import norm

    from spotkit.compare.estimate import compare_antennas

    sim, root = sim_archive
    want = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, n_boot=200, seed=1,
                            tau_from="reports")
    got = D.compare_dask(root, "simultaneous", sim.a, sim.b, n_boot=200, seed=2,
                         scheduler="sync", tau_from="reports")
    assert got.overall[C.B_MINUS_A] == pytest.approx(want.overall[C.B_MINUS_A], abs=1e-9)
    se = (want.overall[C.CI_HIGH] - want.overall[C.CI_LOW]) / (2 * norm.ppf(0.975))
    mc_sd = np.sqrt(0.025 * 0.975 / 200) / norm.pdf(norm.ppf(0.975)) * se * np.sqrt(2)
    for col in (C.CI_LOW, C.CI_HIGH):
        assert abs(got.overall[col] - want.overall[col]) < 5 * mc_sd  # dB
    assert got.overall[C.CI_LOW] != want.overall[C.CI_LOW]  # really another resampling


def test_compare_dask_unknown_call_lists_calls(sim_archive):
    from spotkit.errors import InputError

    sim, root = sim_archive
    with pytest.raises(InputError, match=f"Q9NOPE.*present: .*{sim.a}"):
        D.compare_dask(root, "simultaneous", sim.a, "Q9NOPE", n_boot=10, scheduler="sync")


@pytest.mark.parametrize("design, options", [
    ("alternating", {}), ("receive", {}), ("before-after", {}),
    # the estimator's options reach the Dask path too
    ("alternating", dict(missed_reports="none", threshold_correction="edge",
                         require_open_path=False)),
    ("before-after", dict(day_hours=12.0, missed_reports="none")),
])
def test_compare_dask_equals_pandas_other_designs(tmp_path, design, options):
    """Receive pairs by (transmitter, slot); the alternating design's reports are read as
    one partition and before/after one partition per band: all exact."""
    from spotkit.compare.estimate import compare_antennas
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots(design, days=2, seed=3, n_receivers=40, n_transmitters=40,
                         start="2026-03-02")
    kw = {"alternating": dict(schedule=sim.schedule),
          "before-after": dict(change_at=sim.change_at)}.get(design, {}) | options
    store.append_to_dataset(sim.spots, tmp_path / "arch")
    want = compare_antennas(sim.spots, design, sim.a, sim.b, by=("band",), n_boot=100, seed=4,
                            tau_from="reports", **kw)
    got = D.compare_dask(tmp_path / "arch", design, sim.a, sim.b, by=("band",), n_boot=100,
                         seed=4, scheduler="sync", tau_from="reports", **kw)
    assert_same_counts(got.counts, want.counts)
    assert_same_groups(got.groups, want.groups, [C.BAND])
    assert got.set_aside == want.set_aside


@pytest.fixture(scope="module")
def soft_archive(tmp_path_factory):
    """A soft detection curve (1 dB wide) and A 5 dB below B: the width matters."""
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots("simultaneous", days=2, seed=7, n_receivers=60, start="2026-03-02",
                         detection_width_db=1.0, difference_db=5.0)
    root = tmp_path_factory.mktemp("soft") / "arch"
    store.append_to_dataset(sim.spots, root)
    return sim, root


@pytest.mark.parametrize("width", [{}, dict(tau_from="reports"), dict(tau_db=0.8)])
def test_compare_dask_width_from_pairs_equals_pandas(soft_archive, client, width):
    """The Dask path chooses the detection width as the in-memory path does - by default
    from the paired outcomes (issue 15), else from the histograms or as given - and so
    gives the same width, estimate, interval and method line."""
    from spotkit.compare.estimate import compare_antennas

    sim, root = soft_archive
    want = compare_antennas(sim.spots, "simultaneous", sim.a, sim.b, by=("band",),
                            n_boot=100, seed=1, **width)
    got = D.compare_dask(root, "simultaneous", sim.a, sim.b, by=("band",), n_boot=100,
                         seed=1, scheduler=client, split_every=2, **width)
    how = {"tau_from": "fitted to the paired outcomes", "reports": "fitted to the reports",
           "set": "dB set"}[("set" if width.get("tau_db") else width.get("tau_from", "tau_from"))]
    assert how in got.overall[C.METHOD]
    assert got.overall[C.METHOD] == want.overall[C.METHOD]
    # tight: the same maths on merged counts; only the order of float sums differs
    for col in (C.DETECTION_TAU, C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.SYSTEMATIC):
        assert got.overall[col] == pytest.approx(want.overall[col], rel=0, abs=1e-6), col
    assert_same_counts(got.counts, want.counts)
    num = [C.B_MINUS_A, C.CI_LOW, C.CI_HIGH, C.DETECTION_TAU]
    g = _plain_sorted(got.groups, [C.BAND])
    w = _plain_sorted(want.groups, [C.BAND])
    np.testing.assert_allclose(g[num].to_numpy(float), w[num].to_numpy(float), rtol=0,
                               atol=1e-6)  # dB
    assert got.options["tau_from"] == want.options["tau_from"]


def test_compare_dask_width_from_pairs_receive_design(tmp_path):
    """The receive design's limits belong to the two receivers A and B, not the clusters."""
    from spotkit.compare.estimate import compare_antennas
    from spotkit.sim.simulate import simulate_spots

    sim = simulate_spots("receive", days=2, seed=3, n_transmitters=60, start="2026-03-02",
                         detection_width_db=1.0, difference_db=3.0)
    store.append_to_dataset(sim.spots, tmp_path / "arch")
    want = compare_antennas(sim.spots, "receive", sim.a, sim.b, n_boot=50, seed=4)
    got = D.compare_dask(tmp_path / "arch", "receive", sim.a, sim.b, n_boot=50, seed=4,
                         scheduler="sync")
    assert "fitted to the paired outcomes" in got.overall[C.METHOD]
    for col in (C.DETECTION_TAU, C.B_MINUS_A):
        assert got.overall[col] == pytest.approx(want.overall[col], rel=0, abs=1e-6), col


def test_compare_dask_reports_not_in_whole_db(soft_archive, tmp_path):
    """SNRs with a decimal (not whole dB): the Dask path's receiver histograms are of
    whole-dB values, but it decides 'whole dB' on all reports as the in-memory path does
    (reports as points, not 1-dB intervals), so width and estimate still agree."""
    from spotkit.compare.estimate import compare_antennas

    sim, _ = soft_archive
    spots = sim.spots.copy()
    jitter = np.random.default_rng(0).uniform(-0.5, 0.5, len(spots)).round(1)
    spots[C.SNR] = spots[C.SNR].to_numpy(float) + jitter
    store.append_to_dataset(spots, tmp_path / "arch")
    want = compare_antennas(spots, "simultaneous", sim.a, sim.b, n_boot=50, seed=1)
    got = D.compare_dask(tmp_path / "arch", "simultaneous", sim.a, sim.b, n_boot=50, seed=1,
                         scheduler="sync")
    assert "whole-dB" not in want.overall[C.METHOD]
    assert got.overall[C.METHOD] == want.overall[C.METHOD]
    for col in (C.DETECTION_TAU, C.B_MINUS_A):
        assert got.overall[col] == pytest.approx(want.overall[col], rel=0, abs=1e-6), col


def test_pair_outcomes_merge_exactly(soft_archive):
    """Outcome tables of any split of the pairs merge into the table of all pairs."""
    from spotkit.compare.pairing import pair_spots
    from spotkit.compare.width import merge_pair_outcomes, pair_outcomes

    sim, _ = soft_archive
    pairs = pair_spots(sim.spots, "simultaneous", sim.a, sim.b)
    want = pair_outcomes(pairs)
    assert want[C.COUNT].sum() == len(pairs) and len(want) < len(pairs)
    labels = np.random.default_rng(1).integers(0, 5, len(pairs))
    got = merge_pair_outcomes([pair_outcomes(p) for _, p in pairs.groupby(labels)])
    pd.testing.assert_frame_equal(got, want)


def test_cli_archive_coverage_and_compare(sim_archive, tmp_path, capsys):
    from spotkit.cli import main

    sim, root = sim_archive
    out = tmp_path / "cov.csv"
    assert main(["archive", "coverage", str(root), "--by", "band,hour", "--band", "20m",
                 "--scheduler", "sync", "-o", str(out)]) == 0
    got = pd.read_csv(out)
    want = CV.coverage_table(sim.spots[sim.spots[C.BAND] == "20m"], ("band", "hour"))
    np.testing.assert_array_equal(got[C.COUNT], want[C.COUNT])
    np.testing.assert_allclose(got[CV.SNR_MEDIAN], want[CV.SNR_MEDIAN], atol=1e-9)
    assert main(["archive", "coverage", str(root), "--by", "continent"]) == 2
    js = tmp_path / "r.json"
    assert main(["archive", "compare", str(root), "--design", "simultaneous", "--a", sim.a,
                 "--b", sim.b, "--boot", "50", "--scheduler", "sync", "--json", str(js)]) == 0
    assert "b_minus_a_db" in js.read_text()
    assert main(["archive", "compare", str(root), "--design", "simultaneous", "--a", sim.a,
                 "--b", "Q9NOPE", "--boot", "50", "--scheduler", "sync"]) == 1
    assert main(["archive"]) == 2


def test_dask_path_reads_only_committed_files(tmp_path, spots):
    """A data file left in a partition folder by a killed append (not in the manifest) is not
    read by the Dask path: the counts add up to the manifest's rows."""
    root = tmp_path / "arch"
    store.append_to_dataset(spots.iloc[:500], root)
    first = root / store.archive_files(root)[0]
    (first.parent / "part-0123456789ab.parquet").write_bytes(first.read_bytes())
    table = D.coverage_dask(root, ("band",), scheduler="sync")
    assert int(table[C.COUNT].sum()) == 500
    assert len(D.read_archive_dask(root, columns=[C.SNR]).compute(scheduler="sync")) == 500


def test_bad_scheduler_is_a_usage_error_naming_the_scheduler(archive):
    with pytest.raises(UsageError, match=r"scheduler 'bogus': not a scheduler address"):
        D.coverage_dask(archive, ("band",), scheduler="bogus")


def test_plain_parquet_folder_is_not_an_archive(tmp_path, spots):
    """A folder of Parquet files without a manifest: the Dask path says it is not an archive
    (and where such a folder is read), not that nothing matches the selection."""
    from spotkit.errors import InputError

    spots.to_parquet(tmp_path / "a.parquet")
    with pytest.raises(InputError, match=r"not a spotkit archive \(no _spotkit_manifest.json\)"
                                         r".*load_spots"):
        D.coverage_dask(tmp_path, ("band",), scheduler="sync")


def test_a_scheduler_that_fails_leaves_dask_configuration_alone(archive):
    """A Client that cannot be made (a bad address) must not leave Dask's global scheduler
    pointing at a client that does not exist: a later plain compute in the same process
    (e.g. a second command in a notebook) would fail with "no Client active"."""
    import dask

    before = dask.config.get("scheduler", None)
    with pytest.raises(UsageError):
        D.coverage_dask(archive, ("band",), scheduler="bogus")
    assert dask.config.get("scheduler", None) == before
    assert len(D.coverage_dask(archive, ("band",))) > 0
