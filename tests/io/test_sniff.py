"""Sniffing a spot file: heading words onto the glossary, units from the values.

The reading of whole files (layouts, encodings, headerless files) is tested through
:func:`spotkit.io.ingest.read_spots` in tests/test_ingest.py.
"""
from __future__ import annotations

import pytest

from spotkit import columns as C
from spotkit.errors import InputError
from spotkit.io.sniff import infer_frequency_unit, infer_power_unit, match_headings
from spotkit.io.sniff import infer_power_unit as reexported


def test_public_names_still_importable_from_ingest():
    assert reexported is infer_power_unit


# --- mapping ----------------------------------------------------------------------------------
def test_headings_matched_by_generic_words():
    heads = ["Date Time UTC", "sender", "senderGrid", "reporter", "reporter square", "QRG",
             "S/N", "txPower", "drift"]
    fields, problems = match_headings(heads)
    assert not problems
    assert fields == {C.TIME: [0], C.TX_CALL: [1], C.TX_LOCATOR: [2], C.RX_CALL: [3],
                      C.RX_LOCATOR: [4], C.FREQ: [5], C.SNR: [6], C.POWER: [7], C.DRIFT: [8]}


# --- units ------------------------------------------------------------------------------------
@pytest.mark.parametrize("values,unit", [
    ([14097100.0, 7038650.0], "Hz"), ([14097.1, 7038.65], "kHz"), ([14.0971, 7.03865], "MHz"),
    ([144.4901, 50.294], "MHz"),  # 2 m and 6 m in MHz; as kHz they are in no band
])
def test_frequency_unit_inferred(values, unit):
    assert infer_frequency_unit(values) == unit


def test_frequency_unit_refused_when_ambiguous():
    # half kHz-like, half MHz-like values: two units fit -> refuse
    with pytest.raises(InputError, match="frequency unit"):
        infer_frequency_unit([14097.1, 14.0971, 7038.6, 7.0386])
    with pytest.raises(InputError, match="frequency unit"):
        infer_frequency_unit([1.0, 2.0, 3.0])  # no unit puts them in a band


@pytest.mark.parametrize("values,unit", [
    ([23, 30, 37, 0], "dBm"), ([0.2, 1, 5], "W"), ([200, 1000, 5000], "mW"),
])
def test_power_unit_inferred(values, unit):
    assert infer_power_unit(values) == unit


def test_power_unit_refused_when_ambiguous():
    with pytest.raises(InputError, match="power unit"):
        infer_power_unit([5, 10, 100])  # whole numbers 61..1500: W or mW?


@pytest.mark.parametrize("gz", [False, True])
@pytest.mark.parametrize("tail, expected", [
    ("Zürich".encode(), "utf-8"),      # valid UTF-8 after the first 8 MB block
    ("Zürich".encode("latin-1"), "latin-1"),  # a byte that is not UTF-8 there
    ("ü".encode()[:1], "latin-1"),     # a sequence cut off by the end of the file
])
def test_encoding_found_beyond_the_first_block(tmp_path, gz, tail, expected):
    # the whole file is checked, not just its head: an ASCII first block (8 MB) and then
    # one non-ASCII text; "é" written in two bytes must straddle the block boundary too
    import gzip

    from spotkit.io.sniff import _detect_encoding

    block = 1 << 23
    line = b"2026-03-01 10:00,Q1ABC,JN58td,Q2XYZ,IO91lk,14.0971,-12,23,0\n"
    body = line * (block // len(line)) + b"x" * (block % len(line) - 1)
    body += "é".encode() + b"\n" + tail + b"\n"  # the "é" starts at block - 1
    path = tmp_path / ("s.csv.gz" if gz else "s.csv")
    with (gzip.open(path, "wb") if gz else open(path, "wb")) as fh:
        fh.write(body)
    assert _detect_encoding(path, "gzip" if gz else None, body[:100]) == expected


# --- encodings and delimiters from the first bytes ----------------------------------------------
@pytest.mark.parametrize("data, expected", [
    ("time,snr\n".encode("utf-16"), "utf-16"),  # with byte-order mark
    ("time,snr\n".encode("utf-16-le") * 4, "utf-16-le"),  # a zero in every odd byte
    ("time,snr\n".encode("utf-16-be") * 4, "utf-16-be"),
    ("time,snr\n".encode("utf-32"), "utf-32"),
    (b"time,snr\n" * 4, None), (b"time,snr\x00\n" * 4, None),  # a few NULs: 8-bit text
])
def test_wide_encodings_found_from_the_zero_bytes(data, expected):
    from spotkit.io.sniff import _wide_encoding

    assert _wide_encoding(data) == expected


def test_mixed_delimiters_refused_and_one_delimiter_kept():
    from spotkit.io.sniff import _sniff_sep

    rows = ["a,b,c,d", "1,2,3,4", "1;2;3;4", "1,2,3,4", "1;2;3;4"]
    with pytest.raises(InputError, match="mixed delimiters.*',' in 60 %.*';' in 40 %"):
        _sniff_sep(rows, "auto")
    # one wide row in a small file: the comma is still the delimiter
    assert _sniff_sep(["a,b,c,d", "1,2,3,4", "1,2,3,4,5", "1,2,3,4", "1,2,3,4"], "auto") == ","


@pytest.mark.parametrize("gz", [False, True])
def test_utf8_sequence_cut_off_at_the_very_end_is_latin1(tmp_path, gz):
    import gzip

    from spotkit.io.sniff import _detect_encoding

    body = b"2026-03-01 10:00,Q1ABC,JN58td,Q2XYZ,IO91lk,14.0971,-12,23,0\n" + "ü".encode()[:1]
    path = tmp_path / ("s.csv.gz" if gz else "s.csv")
    path.write_bytes(gzip.compress(body) if gz else body)
    assert _detect_encoding(path, "gzip" if gz else None, body[:100]) == "latin-1"
