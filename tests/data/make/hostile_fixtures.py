"""Writes the invented hostile fixtures of tests/io/test_hostile_files.py (Q-prefix calls).

Run ``python tests/data/make/hostile_fixtures.py`` to write them again.
"""
import gzip
import pathlib

D = pathlib.Path(__file__).resolve().parents[1]
H = "time,tx call,tx locator,rx call,rx locator,frequency MHz,snr,power dBm,drift"
SNRS = [-12, 14, -21, 1, 7, -3, 10, 3, 14, -8, 28, 1, -25, -17, 2, -9, 5, -30, 21, -14, 7, -6,
        -11, -19]
RX = ["Q2XY", "Q3DEF", "Q4GH", "Q5JK", "Q6LM", "Q7NP"]
LOC = ["JN58td", "IO91lk", "FN31pr", "JO62qm", "KP20le", "IO83qm"]


def rows(n=24, snr=None, freq="14.0971", when="2024-03-01 10:{m:02d}:00", drift="0"):
    out = []
    for i in range(n):
        s = SNRS[i % len(SNRS)] if snr is None else snr(i)
        out.append(f"{when.format(m=2 * i % 60)},Q1ABC,JO62qm,{RX[i % 6]},{LOC[i % 6]},"
                   f"{freq},{s},37,{drift}")
    return out


def write(name, lines, enc="utf-8"):
    (D / name).write_bytes(("\n".join(lines) + "\n").encode(enc))


def main():
    # SNR, power and drift with the Unicode minus sign (U+2212) on every negative value
    write("hostile_unicode_minus.csv",
          [H] + [r.replace(",-", ",\u2212") for r in rows(drift="-1")])
    # the SNR column under the frequency heading and the frequency under the SNR heading
    write("hostile_snr_under_frequency.csv",
          [H] + [f"2024-03-01 10:{2 * i % 60:02d}:00,Q1ABC,JO62qm,{RX[i % 6]},{LOC[i % 6]},"
                 f"{s},14.0971,37,0" for i, s in enumerate(SNRS)])
    # epoch milliseconds under a plain "epoch" heading (2024-03-01 10:00 UTC = 1709287200 s)
    write("hostile_epoch_ms.csv",
          ["epoch" + H[4:]] + [r.replace(r.split(",")[0], str(1709287200000 + 120000 * i), 1)
                               for i, r in enumerate(rows())])
    # UTF-16 little-endian with byte-order mark (as some spreadsheet programs save "Unicode text")
    write("hostile_utf16.csv", [H] + rows(), "utf-16")
    # a first line "sep=;" and semicolons
    write("hostile_sep_line.csv", ["sep=;", H.replace(",", ";")] + [r.replace(",", ";")
                                                                    for r in rows()])
    # a NUL byte in the first data row (in the transmitter's call)
    write("hostile_nul_top.csv", [H] + [rows()[0].replace("Q1ABC", "Q1A\x00BC")] + rows()[1:])
    # rows 3 and 7 with one field too many and too few
    r = rows()
    r[2] += ",surplus"
    r[6] = ",".join(r[6].split(",")[:4])
    write("hostile_wrong_width.csv", [H] + r)
    # 10-character locators
    write("hostile_locator10.csv", [H] + [x.replace("JN58td", "JN58td25kx") for x in rows()])
    # a gzip file cut in the middle
    data = gzip.compress(("\n".join([H] + rows() * 400) + "\n").encode(), mtime=0)
    (D / "hostile_truncated.csv.gz").write_bytes(data[: len(data) * 3 // 4])


if __name__ == "__main__":
    main()
