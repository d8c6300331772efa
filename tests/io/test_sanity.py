"""Column sanity before rows (spotkit.io.sanity): a column that does not hold what it is
mapped to stops the run, naming the column, a sample and the likely fix; small files and
columns with a few bad cells are left to the row checks."""
from __future__ import annotations

import pandas as pd
import pytest

from spotkit import columns as C
from spotkit.errors import InputError
from spotkit.io.ingest import read_spots
from spotkit.io.sanity import MIN_SHARE, MIN_UNIT_VALUES, MIN_VALUES

HEAD = "time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm\n"
SNRS = [-12, 14, -21, 1, 7, -3, 10, 3, 14, -8, 28, 1, -25, -17, 2, -9, 5, -30, 21, -14]


def _file(tmp_path, n, head=HEAD, time=None, tx="Q1ABC", txloc="JO62qm", rxloc="JN58td",
          freq="14.0971", snr=None, power="37", name="s.csv"):
    """n rows; each of the column arguments is a value or a function of the row number."""
    def val(x, i, default):
        return default(i) if x is None else (x(i) if callable(x) else x)

    rows = [",".join(str(v) for v in (
        val(time, i, lambda i: f"2024-03-01 {10 + i // 30}:{2 * (i % 30):02d}:00"),
        val(tx, i, None), val(txloc, i, None), f"Q{i % 9 + 2}XY", val(rxloc, i, None),
        val(freq, i, None), val(snr, i, lambda i: SNRS[i % len(SNRS)]), val(power, i, None)))
        for i in range(n)]
    p = tmp_path / name
    p.write_text(head + "\n".join(rows) + "\n")
    return p


def test_snr_under_a_frequency_heading_stops_the_run(data_dir):
    # the case: SNRs of 14, 7, 28, 1.9... taken as MHz land in bands and were kept
    # as 20 m, 40 m, 10 m, 160 m spots with exit 0 on main
    with pytest.raises(InputError) as exc:
        read_spots(data_dir / "hostile_snr_under_frequency.csv")
    msg = str(exc.value)
    assert "hostile_snr_under_frequency.csv" in msg
    assert "column 'frequency MHz' (mapped to frequency)" in msg
    assert "looks like SNRs" in msg and "check --map frequency=" in msg
    assert "'-12'" in msg  # a sample of the values
    # and the SNR column, which holds the frequencies, is named too
    assert "column 'snr' (mapped to snr)" in msg and "frequencies in MHz" in msg


def test_khz_under_a_mhz_heading_names_the_unit(tmp_path):
    with pytest.raises(InputError, match=r"look like kHz, not MHz: use --unit frequency=kHz"):
        read_spots(_file(tmp_path, 30, freq="14097.1"))
    # said so, the file is read
    res = read_spots(_file(tmp_path, 30, freq="14097.1"), units={"frequency": "kHz"})
    assert res.summary.accepted == 30


def test_small_files_are_left_to_the_row_checks(tmp_path):
    # fewer than MIN_VALUES cells: no column verdict, every row rejected on its own
    res = read_spots(_file(tmp_path, MIN_VALUES - 1, freq=lambda i: SNRS[i] - 40))
    assert res.summary.accepted == 0
    assert res.summary.rejected_by_reason == {
        "frequency not in an amateur band": MIN_VALUES - 1}
    with pytest.raises(InputError, match="mapped to frequency"):
        read_spots(_file(tmp_path, MIN_VALUES, freq=lambda i: SNRS[i] - 40))


@pytest.mark.parametrize("bad, stops", [(20, False), (21, True)])
def test_share_threshold_is_exact(tmp_path, bad, stops):
    # 100 rows, `bad` of them out of band: 80 % plausible passes, 79 % stops
    assert MIN_SHARE[C.FREQ] == 0.8
    p = _file(tmp_path, 100, freq=lambda i: "3.3" if i < bad else "14.0971")
    if stops:
        with pytest.raises(InputError, match="79 % of its 100 non-empty cells"):
            read_spots(p)
    else:
        res = read_spots(p)
        assert res.summary.accepted == 80
        assert res.summary.rejected_by_reason == {"frequency not in an amateur band": 20}


def test_a_few_bad_cells_cost_their_rows_only(tmp_path):
    # typical real files: a few junk locators and out-of-band frequencies
    p = _file(tmp_path, 60, rxloc=lambda i: "XX99" if i % 7 == 0 else "JN58td",
              freq=lambda i: "15.5" if i % 11 == 0 else "14.0971")
    res = read_spots(p)
    assert res.summary.accepted + res.summary.rejected == 60
    assert res.summary.rejected == 9 + 6 - 1  # rows 0, 7, ..., 56 and 0, 11, ..., 55


def test_powers_under_an_snr_heading(tmp_path):
    with pytest.raises(InputError, match="looks like powers in dBm"):
        read_spots(_file(tmp_path, 30, snr=lambda i: (23, 30, 37, 27)[i % 4]))


def test_frequencies_under_a_power_heading(tmp_path):
    # the power unit would be taken as W (fractions, none above 1500)
    head = HEAD.replace("power dBm", "power")
    with pytest.raises(InputError, match="mapped to power.*looks like frequencies in MHz"):
        read_spots(_file(tmp_path, 30, head=head, power=lambda i: (14.0971, 7.0386)[i % 2]))


def test_calls_under_a_locator_heading(tmp_path):
    with pytest.raises(InputError, match=r"'tx locator' \(mapped to tx_locator\).*callsigns"):
        read_spots(_file(tmp_path, 30, txloc=lambda i: f"Q{i % 9}ABC"))


def test_locators_typed_with_digit_zero_say_which_character(tmp_path):
    """'J062qm' also looks like a callsign; the message names the digit 0 typed for O."""
    with pytest.raises(InputError, match=r"'tx locator'.*'J062qm': 2nd character '0' is the "
                       r"digit 0 where the letter O belongs"):
        read_spots(_file(tmp_path, 30, txloc="J062qm"))


def test_numbers_under_a_call_heading(tmp_path):
    with pytest.raises(InputError, match="mapped to tx_call"):
        read_spots(_file(tmp_path, 30, tx=lambda i: str(100 + i)))


def test_a_file_dated_in_the_future(tmp_path):
    with pytest.raises(InputError, match="more than a day after now"):
        read_spots(_file(tmp_path, 30, time=lambda i: f"2099-03-01 10:{2 * i:02d}:00"))


def test_date_and_clock_columns_are_judged_together(tmp_path):
    head = "date,time" + HEAD[len("time"):]
    p = _file(tmp_path, 30, head=head, time=lambda i: f"2024-03-01,10:{2 * i:02d}")
    res = read_spots(p)
    assert res.summary.accepted == 30
    p = _file(tmp_path, 30, head=head, time=lambda i: f"2099-03-01,10:{2 * i:02d}")
    with pytest.raises(InputError, match="'date'\\+'time'"):
        read_spots(p)


def test_several_failing_columns_in_one_message(tmp_path):
    p = _file(tmp_path, 30, txloc=lambda i: f"Q{i % 9}ABC", freq="14097.1")
    with pytest.raises(InputError) as exc:
        read_spots(p)
    lines = str(exc.value).splitlines()
    assert len(lines) == 3 and "s.csv" in lines[0]


def test_plain_good_file_passes_and_times_are_kept(tmp_path):
    res = read_spots(_file(tmp_path, 40))
    assert res.summary.accepted == 40
    assert res.spots[C.TIME].min() == pd.Timestamp("2024-03-01 10:00", tz="UTC")


# --- units that do not fit (issue 17): stop and name the option, small files too ----------
@pytest.mark.parametrize("n", [MIN_UNIT_VALUES, MIN_VALUES + 5])
@pytest.mark.parametrize("column, units, option", [
    # MHz values told kHz (the README's --unit copied onto MHz data)
    (dict(freq="14.0971"), {"frequency": "kHz"}, "--unit frequency=MHz"),
    # Hz values told MHz: 14 097 100 MHz is no band
    (dict(freq="14097100"), {"frequency": "MHz"}, "--unit frequency=Hz"),
    # mW values told dBm (5000 mW = 37 dBm; 5000 dBm is out of range)
    (dict(power="5000"), {"power": "dBm"}, "--unit power=mW"),
    # epoch milliseconds told seconds (1.7e12 s is after 2100)
    (dict(time=lambda i: str(1_709_287_200_000 + 120_000 * i)), {"time": "epoch-s"},
     "--unit time=epoch-ms"),
])
def test_a_unit_that_does_not_fit_stops_naming_the_option(tmp_path, n, column, units, option):
    head = HEAD.replace("frequency MHz", "frequency").replace("power dBm", "power")
    with pytest.raises(InputError, match="nothing was read") as exc:
        read_spots(_file(tmp_path, n, head=head, **column), units=units)
    assert option in str(exc.value) and "s.csv" in str(exc.value)


def test_a_unit_that_fits_is_not_questioned(tmp_path):
    # dBm values read as W still fit (37 W = 45.7 dBm): nothing to tell them apart
    res = read_spots(_file(tmp_path, 6), units={"power": "W"})
    assert res.summary.accepted == 6


def test_too_few_numbers_are_left_to_the_row_checks(tmp_path):
    # MIN_UNIT_VALUES - 1 rows in kHz told MHz: each row rejected, no stop
    n = MIN_UNIT_VALUES - 1
    res = read_spots(_file(tmp_path, n, freq="14097.1"), units={"frequency": "MHz"})
    assert res.summary.rejected == n
    assert set(res.rejects[C.REJECT_REASON]) == {"frequency not in an amateur band"}


def test_cli_unit_hint_exit_1(tmp_path, capsys):
    from spotkit.cli import main

    src = _file(tmp_path, MIN_UNIT_VALUES)
    assert main(["ingest", str(src), "-o", str(tmp_path / "o.parquet"), "--unit",
                 "frequency=kHz"]) == 1
    assert "use --unit frequency=MHz" in capsys.readouterr().err
