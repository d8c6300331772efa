"""Tests of the spot simulator and the antenna patterns behind it."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from geopy.distance import geodesic

from spotkit import columns as C
from spotkit.errors import UsageError
from spotkit.sim.antenna import (
    band_frequency_hz,
    constant_difference,
    dipole_antenna,
    fresnel_reflection,
    horizontal_dipole_gain,
    isotropic_antenna,
    quarter_wave_vertical_gain,
    vertical_antenna,
)
from spotkit.sim.simulate import DESIGNS, Simulation, simulate_spots
from spotkit.sim.truth import Truth
from spotkit.units import POWER_LADDER_DBM, dbm_to_watts

SMALL = dict(days=1, n_receivers=80, n_transmitters=60, n_controls=4)


@pytest.fixture(scope="module")
def sims():
    """One small run of every design (seeded)."""
    return {d: simulate_spots(d, seed=11, **SMALL) for d in DESIGNS}


# --- physical sanity ---------------------------------------------------------------------
@pytest.mark.parametrize("dbm, watts", [
    (23.0, 0.1995),  # common practice: 23 dBm = 0.1995 W (+-0.0001 W)
    (30.0, 1.0),  # common practice: 30 dBm = 1 W
    (37.0, 5.012),  # common practice: 37 dBm = 5.012 W (+-0.001 W)
])
def test_power_ladder_conversions(dbm, watts):
    assert dbm in POWER_LADDER_DBM
    assert dbm_to_watts(dbm) == pytest.approx(watts, abs=1e-3)


@pytest.mark.parametrize("design", DESIGNS)
def test_reports_look_like_reports(sims, design):
    sim = sims[design]
    sp = sim.spots
    assert len(sp) > 500
    assert list(sp.columns) == C.CANONICAL
    for name in C.CANONICAL:
        assert str(sp[name].dtype) == str(C.GLOSSARY[name].dtype), name
    # whole-dB SNR (common practice: reports are in whole dB)
    snr = sp[C.SNR].to_numpy()
    assert np.all(snr == np.round(snr))
    # powers from the customary 0-60 dBm ladder ending in 0, 3 or 7 (common practice)
    assert np.isin(sp[C.POWER].to_numpy(), POWER_LADDER_DBM).all()
    # slots start on even UTC minutes and the report time is the slot start (common practice)
    slot = sp[C.SLOT]
    assert (slot.dt.minute % 2 == 0).all() and (slot.dt.second == 0).all()
    assert (sp[C.TIME] == slot).all()
    # frequencies sit 1400-1600 Hz (+-3 Hz receiver error) above the customary dial
    # frequencies (common practice)
    from spotkit.bands import BEACON_DIAL_KHZ
    dial = sp[C.BAND].astype(str).map(BEACON_DIAL_KHZ).astype(float) * 1e3
    audio = sp[C.FREQ] - dial
    assert audio.between(1397, 1603).all()
    # 4- and 6-character locators, all callsigns with the Q prefix
    lengths = set(sp[C.RX_LOCATOR].astype(str).str.len()) | set(
        sp[C.TX_LOCATOR].astype(str).str.len())
    assert lengths <= {4, 6} and 6 in lengths
    assert sp[C.TX_CALL].astype(str).str.startswith("Q").all()
    assert sp[C.RX_CALL].astype(str).str.startswith("Q").all()
    # no exact duplicate reports in the canonical table
    assert not sp.duplicated(C.REPORT_KEY).any()


@pytest.mark.parametrize("design", DESIGNS)
def test_no_report_below_its_receivers_threshold(sims, design):
    sim = sims[design]
    thr = sim.stations.dropna(subset=["threshold_db"]).set_index("call")["threshold_db"]
    t = sim.spots[C.RX_CALL].astype(str).map(thr)
    assert t.notna().all()
    assert (sim.spots[C.SNR] >= t).all()
    # and reports reach down to the thresholds: censoring is real, not a far-off limit
    assert (sim.spots[C.SNR] - t).min() == 0


def test_thresholds_near_minus_28_some_minus_30(sims):
    st = sims["simultaneous"].stations
    thr = st.loc[st["role"] == "receiver", "threshold_db"]
    assert thr.between(-30, -27).all()
    assert (thr == -28).mean() > 0.4 and (thr == -30).mean() > 0.05


def test_distances_agree_with_geopy(sims):
    # oracle: geopy's geodesic (Karney 2013) between the locator cell centres, 1 m
    sp = sims["simultaneous"].spots.drop_duplicates([C.TX_LOCATOR, C.RX_LOCATOR]).head(40)
    for row in sp.itertuples():
        d = geodesic((getattr(row, C.TX_LAT), getattr(row, C.TX_LON)),
                     (getattr(row, C.RX_LAT), getattr(row, C.RX_LON))).km
        assert getattr(row, C.DISTANCE) == pytest.approx(d, abs=1e-3)


def _hop_elevation(d_km, h_km=300.0, r0=6371.0):
    """Mirror hop geometry (spherical Earth, form of ITU-R P.533 - from memory)."""
    dmax = 2 * r0 * np.arccos(r0 / (r0 + h_km))
    n = np.maximum(1, np.ceil(d_km / dmax))
    th = d_km / (2 * n * r0)
    return np.degrees(np.arctan2(np.cos(th) - r0 / (r0 + h_km), np.sin(th)))


def test_truth_elevation_from_hop_geometry(sims):
    # recomputed reference value: 1000 km at h = 300 km, one hop: 28.12 deg (+-0.01 deg)
    assert _hop_elevation(1000.0) == pytest.approx(28.12, abs=0.01)
    assert _hop_elevation(2000.0) == pytest.approx(11.81, abs=0.01)
    tr = sims["simultaneous"].truth.pairs
    np.testing.assert_allclose(tr[C.ELEVATION], _hop_elevation(tr[C.DISTANCE].to_numpy()),
                               atol=1e-6)


# --- designs --------------------------------------------------------------------------------
def test_designs_calls_and_compare_arguments(sims):
    s = sims["simultaneous"]
    assert (s.a, s.b) == ("Q1ABC", "Q1ABD")
    assert set(s.spots[C.TX_CALL].cat.remove_unused_categories().cat.categories) == {"Q1ABC",
                                                                                     "Q1ABD"}
    al = sims["alternating"]
    assert al.a == al.b == "Q1ABC" and al.schedule == "even-odd"
    r = sims["receive"]
    assert set(r.spots[C.RX_CALL].astype(str)) == {r.a, r.b}
    assert r.spots[C.RX_LOCATOR].nunique() == 1
    ba = sims["before-after"]
    assert ba.a == ba.b and ba.change_at == pd.Timestamp(ba.params["start"]) + pd.Timedelta(
        hours=12)
    assert ba.spots[C.TX_CALL].nunique() == 1 + 4  # target + controls
    assert s.compare_kwargs()["design"] == "simultaneous"


def test_simultaneous_both_antennas_in_the_same_slots(sims):
    sp = sims["simultaneous"].spots
    slots = sp.groupby(C.TX_CALL, observed=True)[C.SLOT].apply(lambda s: set(s))
    a, b = slots["Q1ABC"], slots["Q1ABD"]
    assert len(a & b) > 0.8 * min(len(a), len(b))


def test_alternating_follows_even_odd_schedule():
    # B = A + 10 dB exactly: B's reports (odd slot index since 00:00 UTC) are much stronger
    sim = simulate_spots("alternating", seed=5, difference_db=10.0, **SMALL)
    sp = sim.spots
    idx = (sp[C.SLOT].dt.hour * 60 + sp[C.SLOT].dt.minute) // 2
    odd = (idx % 2 == 1).to_numpy()
    per_rx = sp.assign(odd=odd).groupby([C.RX_CALL, "odd"], observed=True)[C.SNR].median()
    diff = (per_rx.xs(True, level="odd") - per_rx.xs(False, level="odd")).dropna()
    assert diff.median() > 6.0  # 10 dB less censoring and fading, at least 6 dB
    # pairs in the truth are A's even slot with the following B slot
    tr = sim.truth.pairs
    tidx = (tr[C.SLOT].dt.hour * 60 + tr[C.SLOT].dt.minute) // 2
    assert (tidx % 2 == 0).all()
    assert np.allclose(tr[C.B_MINUS_A], 10.0)


def test_alternating_schedule_table():
    start = pd.Timestamp("2026-03-02", tz="UTC")
    sched = pd.DataFrame({"start": [start, start + pd.Timedelta(hours=12)],
                          "end": [start + pd.Timedelta(hours=12), start + pd.Timedelta(days=1)],
                          "antenna": ["A", "B"]})
    sim = simulate_spots("alternating", seed=2, schedule=sched, start=start, **SMALL)
    assert sim.schedule is sched
    # A all morning, B all afternoon: the only A->B neighbours are at 12:00
    tr = sim.truth.pairs
    assert (tr[C.SLOT] == start + pd.Timedelta(hours=11, minutes=58)).all()


def test_before_after_truth_periods(sims):
    ba = sims["before-after"]
    tr = ba.truth.pairs
    assert (tr.loc[tr[C.HEARD_A], C.SLOT] < ba.change_at).all()
    assert (tr.loc[tr[C.HEARD_B], C.SLOT] >= ba.change_at).all()
    assert not (tr[C.HEARD_A] & tr[C.HEARD_B]).any()


def test_receive_truth_bearing_is_from_home(sims):
    r = sims["receive"]
    tr = r.truth.pairs
    sp = r.spots[r.spots[C.RX_CALL] == r.a]
    rev = sp.groupby(C.TX_CALL, observed=True)[C.REVERSE_BEARING].first()
    got = tr.groupby(C.TX_CALL, observed=True)[C.BEARING].first()
    common = rev.index.intersection(got.index)
    assert len(common) > 10
    np.testing.assert_allclose(got[common], rev[common], atol=1e-9)


# --- the truth the simulator builds (the Truth class itself: test_truth.py) -----------------
def test_truth_pairs_heard_by_at_least_one(sims):
    for sim in sims.values():
        tr = sim.truth.pairs
        assert (tr[C.HEARD_A] | tr[C.HEARD_B]).all()
        o = sim.truth.overall
        assert o[C.PAIRS] == len(tr) == o[C.BOTH] + o[C.ONLY_A] + o[C.ONLY_B]


def test_truth_matches_the_spots(sims):
    # simultaneous: a pair heard by A has A's report at that receiver in that slot
    sim = sims["simultaneous"]
    tr = sim.truth.pairs
    sp = sim.spots
    a_keys = set(zip(sp.loc[sp[C.TX_CALL] == sim.a, C.RX_CALL].astype(str),
                     sp.loc[sp[C.TX_CALL] == sim.a, C.SLOT], strict=True))
    t_keys = set(zip(tr.loc[tr[C.HEARD_A], C.RX_CALL].astype(str),
                     tr.loc[tr[C.HEARD_A], C.SLOT], strict=True))
    assert a_keys == t_keys
    d = sp.groupby(C.RX_CALL, observed=True)[C.DISTANCE].first()
    td = tr.groupby(C.RX_CALL)[C.DISTANCE].first()
    np.testing.assert_allclose(td, d[td.index], atol=1e-9)


# --- knobs and reproducibility ----------------------------------------------------------
def test_reproducible_from_seed():
    one = simulate_spots("simultaneous", seed=7, **SMALL)
    two = simulate_spots("simultaneous", seed=7, **SMALL)
    other = simulate_spots("simultaneous", seed=8, **SMALL)
    pd.testing.assert_frame_equal(one.spots, two.spots)
    pd.testing.assert_frame_equal(one.truth.pairs, two.truth.pairs)
    assert len(one.spots) != len(other.spots) or not one.spots[C.SNR].equals(other.spots[C.SNR])


def test_more_power_more_reports():
    # same seed (same stations and propagation draws), B at 40 dBm instead of 23 dBm
    lo = simulate_spots("simultaneous", seed=4, power_b_dbm=23, **SMALL)
    hi = simulate_spots("simultaneous", seed=4, power_b_dbm=40, **SMALL)
    n_lo = (lo.spots[C.TX_CALL] == "Q1ABD").sum()
    n_hi = (hi.spots[C.TX_CALL] == "Q1ABD").sum()
    assert n_hi > 1.1 * n_lo
    # A is untouched by B's power
    assert (lo.spots[C.TX_CALL] == "Q1ABC").sum() == (hi.spots[C.TX_CALL] == "Q1ABC").sum()


def test_lower_threshold_more_reports():
    t28 = simulate_spots("simultaneous", seed=4, threshold_db=-28, **SMALL)
    t30 = simulate_spots("simultaneous", seed=4, threshold_db=-30, **SMALL)
    assert len(t30.spots) > len(t28.spots)
    assert t30.spots[C.SNR].min() == -30 and t28.spots[C.SNR].min() == -28


def test_tx_fraction_and_receivers_scale_reports():
    few = simulate_spots("simultaneous", seed=4, tx_fraction=0.1, **SMALL)
    many = simulate_spots("simultaneous", seed=4, tx_fraction=0.5, **SMALL)
    assert len(many.spots) > 3 * len(few.spots)
    assert few.spots[C.SLOT].nunique() < many.spots[C.SLOT].nunique()


def test_bad_arguments():
    with pytest.raises(ValueError, match="simultaneous"):
        simulate_spots("sideways", **SMALL)
    with pytest.raises(UsageError, match="ladder"):
        simulate_spots("simultaneous", power_a_dbm=31, **SMALL)
    with pytest.raises(UsageError, match="band"):
        simulate_spots("simultaneous", bands=("11m",), **SMALL)
    with pytest.raises(UsageError):
        simulate_spots("alternating", a="Q1ABC", b="Q1XYZ", **SMALL)
    with pytest.raises(UsageError):
        simulate_spots("simultaneous", antenna_a="yagi", **SMALL)
    with pytest.raises(UsageError, match="home_locator"):
        simulate_spots("simultaneous", home_locator="ZZ99", **SMALL)
    with pytest.raises(UsageError, match="far station"):
        simulate_spots("receive", days=1, n_transmitters=0)
    # the home locator is spelt canonically
    sim = simulate_spots("simultaneous", home_locator="jo62QM", days=0.1, n_receivers=20)
    assert set(sim.spots[C.TX_LOCATOR].astype(str)) == {"JO62qm"}


# --- antenna patterns ---------------------------------------------------------------------
def test_vertical_over_perfect_ground():
    # Balanis, Antenna Theory 3rd ed., sec. 4.7.2: quarter-wave monopole over a perfect
    # ground plane, directivity 3.28 = 5.16 dBi at the horizon (+-0.02 dB)
    f = band_frequency_hz("20m")
    g = quarter_wave_vertical_gain([0.0, 90.0], f, ground="perfect", loss_ohm=0.0)
    assert g[0] == pytest.approx(5.16, abs=0.02)
    assert g[1] < -40  # null at the zenith


def test_horizontal_dipole_over_perfect_ground():
    # Balanis sec. 4.7.5: over a perfect conductor the field is the free-space dipole's
    # times 2 sin(k h sin el): peak 2.15 + 6.02 = 8.17 dBi (+-0.05 dB) at sin el = lambda/4h
    f = band_frequency_hz("10m")
    lam = 299_792_458.0 / f
    h = lam / 2
    g = horizontal_dipole_gain(30.0, 90.0, f, h, wire_azimuth_deg=0.0, ground="perfect")
    assert g == pytest.approx(8.17, abs=0.05)
    # overhead null of a one-wavelength-high dipole: 2 k h sin(90) = 4 pi
    assert horizontal_dipole_gain(90.0, 90.0, f, lam, 0.0, "perfect") < -40
    # broadside beats the ends of the wire
    assert horizontal_dipole_gain(10.0, 90.0, f, h) > horizontal_dipole_gain(10.0, 0.0, f, h)


def test_fresnel_coefficients():
    # Balanis, Advanced Engineering Electromagnetics (1989) sec. 5.3, lossless dielectric
    # eps_r = 4: normal incidence |R| = (2 - 1)/(2 + 1) = 1/3; Brewster angle (grazing)
    # arctan(1/sqrt(4)) = 26.565 deg where R_v = 0 (+-1e-9)
    r_v, r_h = fresnel_reflection([90.0], 14e6, ground=(4.0, 0.0))
    assert abs(r_h[0]) == pytest.approx(1 / 3, abs=1e-9)
    assert abs(r_v[0]) == pytest.approx(1 / 3, abs=1e-9)
    rb, _ = fresnel_reflection([np.degrees(np.arctan(0.5))], 14e6, ground=(4.0, 0.0))
    assert abs(rb[0]) < 1e-9
    # grazing incidence on real ground: both tend to -1
    r_v, r_h = fresnel_reflection([1e-6], 14e6, ground="average")
    assert r_v[0].real == pytest.approx(-1, abs=1e-4) and r_h[0].real == pytest.approx(
        -1, abs=1e-4)


def test_vertical_vs_dipole_depends_on_angle_and_direction():
    bands = ["20m"]
    v, d = vertical_antenna(bands), dipole_antenna(bands, height_m=10.0, wire_azimuth_deg=0)
    # high angle (short paths): the dipole wins; low angle off the wire's ends: the vertical
    assert d.gain_db("20m", 40.0, 90.0, 500.0) > v.gain_db("20m", 40.0, 90.0, 500.0) + 3
    assert v.gain_db("20m", 3.0, 0.0, 8000.0) > d.gain_db("20m", 3.0, 0.0, 8000.0) + 3


def test_constant_difference_antenna():
    base = dipole_antenna(["10m", "20m"])
    b = constant_difference(base, {"10m": 1.5, "20m": 0.0})
    el, az, dist = np.array([5.0, 30.0]), np.array([10.0, 200.0]), np.array([9000.0, 800.0])
    np.testing.assert_allclose(b.gain_db("10m", el, az, dist) - base.gain_db("10m", el, az, dist),
                               1.5)
    np.testing.assert_allclose(b.gain_db("20m", el, az, dist), base.gain_db("20m", el, az, dist))
    iso = isotropic_antenna(2.0)
    assert np.all(iso.gain_db("40m", el, az, dist) == 2.0)
    with pytest.raises(ValueError):
        constant_difference(iso, {"10m": [1, 2, 3]}, distance_edges=(0, 1000, 20000))


def test_simulation_type(sims):
    assert isinstance(sims["simultaneous"], Simulation)
    assert "Q1ABC" in str(sims["simultaneous"])


# --- command line -----------------------------------------------------------------------------
def test_cli_simulate_writes_spots_truth_and_prints_compare(tmp_path, capsys):
    from spotkit.cli import main

    out = tmp_path / "run.csv.gz"
    code = main(["simulate", "--design", "receive", "--days", "0.5", "--transmitters", "40",
                 "--seed", "3", "-o", str(out), "--difference-db", "10m=1.5,20m=0"])
    assert code == 0
    text = capsys.readouterr().out
    assert "spotkit compare" in text and "--a Q1ABC --b Q1ABD" in text
    truth = Truth.from_json(tmp_path / "run.truth.json")
    cells = truth.cells(distance_edges=(0, 20000))
    assert dict(zip(cells[C.BAND], cells[C.B_MINUS_A], strict=True)) == pytest.approx({"10m": 1.5,
                                                                          "20m": 0.0})
    ingest = pytest.importorskip("spotkit.io.ingest")
    assert ingest.read_spots(out).summary.accepted > 100


def test_cli_simulate_headerless_layout_prints_a_working_ingest_command(tmp_path, capsys):
    import shlex

    from spotkit.cli import main

    pytest.importorskip("spotkit.io.ingest")
    out = tmp_path / "alt.csv"
    assert main(["simulate", "--design", "alternating", "--days", "0.25", "--receivers", "40",
                 "-o", str(out), "--layout", "space"]) == 0
    lines = capsys.readouterr().out.splitlines()
    ingest_cmd = lines[lines.index("read it with:") + 1].split()
    assert ingest_cmd[:2] == ["spotkit", "ingest"]
    assert main(shlex.split(" ".join(ingest_cmd[1:]))) == 0
    assert (tmp_path / "alt.parquet").exists()
    assert "--schedule even-odd" in lines[-1]


def test_cli_simulate_bad_arguments(tmp_path):
    from spotkit.cli import main

    assert main(["simulate", "--power-a", "31", "-o", str(tmp_path / "x.csv")]) == 2
    assert main(["simulate", "--difference-db", "lots", "-o", str(tmp_path / "x.csv")]) == 2
    assert main(["simulate", "--bands", "11m", "-o", str(tmp_path / "x.csv")]) == 2


# --- demo data ---------------------------------------------------------------------------------
def test_demo_files_and_truth(demo_dir):
    ingest = pytest.importorskip("spotkit.io.ingest")
    for design in ("simultaneous", "receive"):
        truth = Truth.from_json(demo_dir / f"{design}.truth.json")
        assert truth.design == design and (truth.a, truth.b) == ("Q1ABC", "Q1ABD")
        per_band = truth.pairs.groupby(C.BAND, observed=True).size()
        assert (per_band > 5000).all()  # thousands of pairs per band
        res = ingest.read_spots(demo_dir / f"{design}.csv.gz")  # no mapping needed
        sp = res.spots
        assert res.summary.rejected == 0 and res.summary.duplicates > 0
        assert set(sp[C.BAND].astype(str)) == {"20m", "10m"}
        calls = sp[C.TX_CALL if design == "simultaneous" else C.RX_CALL].astype(str)
        assert set(calls) == {"Q1ABC", "Q1ABD"}
        everyone = pd.concat([sp[C.TX_CALL], sp[C.RX_CALL]]).astype(str)
        assert everyone.str.match(r"^Q\d[A-Z]{2,3}$").all()
        assert (demo_dir / f"{design}.csv.gz").stat().st_size < 2_000_000


@pytest.mark.slow
def test_demo_data_regenerates_byte_for_byte(demo_dir, tmp_path):
    from spotkit.sim.simulate import make_demo_data

    make_demo_data(tmp_path)
    for name in ("simultaneous.csv.gz", "simultaneous.truth.json", "receive.csv.gz",
                 "receive.truth.json"):
        assert (tmp_path / name).read_bytes() == (demo_dir / name).read_bytes(), name


# --- the reports carry the truth ----------------------------------------------------------
@pytest.mark.parametrize("design", ["simultaneous", "receive"])
def test_reports_carry_the_true_difference(design):
    # B = A + 2 dB exactly, A at 37 dBm and B at 30 dBm (transmit designs): at the same
    # receiver and slot, per-W SNR(B) - SNR(A) averages 2 dB on paths whose median report
    # is far above threshold (no censoring there; selecting single pairs by their own SNR
    # would bias the mean); whole-dB rounding and fast fading average out
    sim = simulate_spots(design, seed=21, difference_db=2.0, power_a_dbm=37, power_b_dbm=30,
                         **SMALL)
    sp = sim.spots
    side, far = (C.TX_CALL, C.RX_CALL) if design == "simultaneous" else (C.RX_CALL, C.TX_CALL)
    median = sp.groupby([far, C.BAND], observed=True)[C.SNR].transform("median")
    sp = sp[median >= -5]  # 22+ dB above every threshold
    snrw = sp[C.SNR] - (sp[C.POWER] - 30)
    wide = sp.assign(snrw=snrw).pivot_table(index=[far, C.SLOT, C.BAND], columns=side,
                                            values="snrw", observed=True).dropna()
    d = (wide[sim.b] - wide[sim.a]).to_numpy()
    assert d.size > 1000
    # standard error of the mean about 2.2 dB / sqrt(n) < 0.07 dB; allow 0.2 dB
    assert d.mean() == pytest.approx(2.0, abs=0.2)


def test_ten_metres_opens_by_day_at_the_path_midpoint():
    # 10 m is a daytime band (common practice): most 10 m reports have the path midpoint in
    # local daytime (mean solar time 07-19 h)
    from spotkit.geo.geodesic import path_midpoint

    sim = simulate_spots("simultaneous", seed=9, **SMALL)
    sp = sim.spots[sim.spots[C.BAND] == "10m"]
    _, mid_lon = path_midpoint(sp[C.TX_LAT].to_numpy(), sp[C.TX_LON].to_numpy(),
                               sp[C.RX_LAT].to_numpy(), sp[C.RX_LON].to_numpy())
    hours = sp[C.SLOT].dt.hour + sp[C.SLOT].dt.minute / 60
    local = np.mod(hours.to_numpy() + np.asarray(mid_lon) / 15.0, 24.0)
    assert np.mean((local > 7) & (local < 19)) > 0.75


def test_gain_tables_interpolate_the_patterns():
    # the tables (0.5 deg x 5 deg grid, bilinear) against the pattern functions at points
    # off the grid: within 0.3 dB where the gain is above -10 dBi (away from nulls)
    rng = np.random.default_rng(2)
    el = rng.uniform(3.0, 80.0, 400)
    az = rng.uniform(0.0, 360.0, 400)
    f = band_frequency_hz("20m")
    d = dipole_antenna(["20m"], height_m=10.0, wire_azimuth_deg=30.0)
    direct = horizontal_dipole_gain(el, az, f, 10.0, 30.0)
    table = d.gain_db("20m", el, az, 1000.0)
    ok = direct > -10
    np.testing.assert_allclose(table[ok], direct[ok], atol=0.3)
    v = vertical_antenna(["20m"])
    np.testing.assert_allclose(v.gain_db("20m", el, az, 1000.0),
                               quarter_wave_vertical_gain(el, f), atol=0.3)
    # bearing wraps around 360 deg
    np.testing.assert_allclose(d.gain_db("20m", 20.0, 359.9, 0.0),
                               d.gain_db("20m", 20.0, -0.1, 0.0))


def test_fast_fading_knob_widens_the_pair_differences():
    from spotkit.sim.simulate import Propagation

    def spread(sigma):
        sim = simulate_spots("simultaneous", seed=6, propagation=Propagation(
            sigma_fast_db=sigma), **SMALL)
        sp = sim.spots
        wide = sp.pivot_table(index=[C.RX_CALL, C.SLOT, C.BAND], columns=C.TX_CALL,
                              values=C.SNR, observed=True).dropna()
        d = wide[sim.b] - wide[sim.a]
        # remove each path's true difference: spread of d about its per-receiver mean
        return (d - d.groupby(level=[0, 2]).transform("mean")).std()

    # the difference of two independent fast fadings, each report rounded to whole dB
    # (uniform rounding error, variance 1/12 dB^2): SD sqrt(2 sigma^2 + 2/12); within 10 %
    # (censoring near threshold trims the tails a little)
    for sigma in (0.5, 3.0):
        assert spread(sigma) == pytest.approx(np.sqrt(2 * sigma**2 + 2 / 12), rel=0.1)


def test_alternating_matching_is_greedy_in_time_order():
    from spotkit.sim.simulate import _match_neighbours

    def greedy(a, b):  # the plain loop the vectorised matching must equal
        code = np.where(a, 0, np.where(b, 1, -1))
        out, s = np.full(a.size, -1), 0
        while s < a.size - 1:
            if code[s] >= 0 and code[s + 1] >= 0 and code[s] != code[s + 1]:
                out[s] = out[s + 1] = s if code[s] == 0 else s + 1
                s += 2
            else:
                s += 1
        return out

    rng = np.random.default_rng(0)
    for _ in range(300):
        n = int(rng.integers(2, 40))
        on, ant = rng.random(n) < 0.8, rng.random(n) < 0.5
        np.testing.assert_array_equal(_match_neighbours(on & ant, on & ~ant),
                                      greedy(on & ant, on & ~ant))


def test_alternating_random_block_schedule_pairs_both_orders():
    # A then B and B then A in random order within blocks of two slots
    start = pd.Timestamp("2026-03-02", tz="UTC")
    rng = np.random.default_rng(1)
    first = rng.random(360) < 0.5
    ant = np.where(np.repeat(first, 2), ["A", "B"] * 360, ["B", "A"] * 360)
    t = start + pd.to_timedelta(np.arange(720) * 2, unit="min")
    sched = pd.DataFrame({"start": t, "end": t + pd.Timedelta(minutes=2), "antenna": ant})
    sim = simulate_spots("alternating", seed=2, schedule=sched, start=start, **SMALL)
    tr = sim.truth.pairs
    idx = ((tr[C.SLOT] - start) / pd.Timedelta(minutes=2)).astype(int).to_numpy()
    assert (ant[idx] == "A").all()  # the pair's slot is A's
    assert (idx % 2 == 0).any() and (idx % 2 == 1).any()  # both orders occur


def test_vertical_pattern_over_real_ground():
    # a ground-mounted vertical over average ground has its main lobe at about 20-30 deg and
    # a null at the horizon; over sea water the lobe comes down towards the horizon (ARRL
    # Antenna Book, chapter on ground effects - from memory; tolerance: the stated range)
    el = np.arange(0.0, 90.01, 0.5)
    f = band_frequency_hz("20m")
    peak = {g: el[np.argmax(quarter_wave_vertical_gain(el, f, g, 0.0))]
            for g in ("sea", "wet", "average", "dry")}
    assert 20.0 <= peak["average"] <= 30.0
    assert peak["sea"] < peak["wet"] < peak["average"] < peak["dry"]
    assert quarter_wave_vertical_gain(0.0, f, "average") < -40
    # ground loss: 36.6 ohm radiation resistance plus 36.6 ohm loss halves the power (-3 dB)
    g0 = quarter_wave_vertical_gain(20.0, f, "average", loss_ohm=0.0)
    g1 = quarter_wave_vertical_gain(20.0, f, "average", loss_ohm=73.13 / 2)
    assert g0 - g1 == pytest.approx(3.01, abs=0.01)


def test_gain_table_frame_is_the_table_gain_db_interpolates():
    # the DataFrame view of a band's gain table holds the values gain_db returns at the
    # table's own grid points (rows elevation, columns bearing)
    ant = vertical_antenna(("20m",))
    frame = ant.table_frame("20m")
    el, br = np.meshgrid(frame.index.to_numpy(), frame.columns.to_numpy(), indexing="ij")
    np.testing.assert_allclose(ant.gain_db("20m", el, br, np.full(el.shape, 1000.0)),
                               frame.to_numpy(), atol=1e-9)
    with pytest.raises(ValueError, match="no gain table"):
        ant.table_frame("40m")


# --- more antennas ------------------------------------------------------------------------------
def test_more_antennas_in_each_design():
    import numpy as np

    from spotkit import columns as C
    from spotkit.compare.pairing import schedule_antennas
    from spotkit.sim.simulate import simulate_spots

    kw = dict(days=0.1, n_receivers=30, n_transmitters=30, bands=("20m",), difference_db=1.0,
              more_antennas=[3.0, -1.0], seed=2)
    sim = simulate_spots("simultaneous", **kw)
    assert sim.params["calls"] == ["Q1ABC", "Q1ABD", "Q1ABE", "Q1ABF"]
    assert sim.params["truth_vs_a"] == [0.0, 1.0, 3.0, -1.0]
    assert set(sim.spots[C.TX_CALL].astype(str)) >= {"Q1ABC", "Q1ABD", "Q1ABE", "Q1ABF"}
    # same receivers, same slots: C's mean SNR over reports heard by both A and C is about
    # 3 dB above A's (fast fading 1-2 dB per report, a few hundred reports)
    s = sim.spots.pivot_table(index=[C.RX_CALL, C.SLOT], columns=C.TX_CALL, values=C.SNR,
                              observed=True)
    both = s[["Q1ABC", "Q1ABE"]].dropna()
    assert (both["Q1ABE"] - both["Q1ABC"]).mean() == pytest.approx(3.0, abs=0.5)
    rec = simulate_spots("receive", **kw)
    assert set(rec.spots[C.RX_CALL].astype(str)) == {"Q1ABC", "Q1ABD", "Q1ABE", "Q1ABF"}
    alt = simulate_spots("alternating", **kw)
    assert alt.params["labels"] == ["A", "B", "C", "D"]
    # every report sits in a slot of the round robin A, B, C, D
    t = alt.spots[C.SLOT]
    code = schedule_antennas(t, ["20m"] * len(t), "even-odd", alt.params["labels"])
    idx = ((t - t.dt.normalize()) // np.timedelta64(2, "m")).to_numpy() % 4
    assert (code == idx).all()
    with pytest.raises(UsageError, match="finite"):
        simulate_spots("simultaneous", **{**kw, "more_antennas": [float("nan")]})
