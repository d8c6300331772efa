"""The report's section for several antennas and for a series of changes (issue 18): what
it shows, that the two-antenna report is unchanged without it, ``spotkit report
--antennas / --periods``, and its layout at 400 px and 1400 px in headless Chromium."""
from __future__ import annotations

import os
import re
import shutil
import subprocess
import tempfile
from pathlib import Path

import pytest

from spotkit import columns as C
from spotkit.cli import main
from spotkit.compare.estimate import compare_antennas
from spotkit.compare.multi import compare_several
from spotkit.report import build_report
from spotkit.sim.simulate import simulate_spots


@pytest.fixture(scope="module")
def three():
    # B 2 dB and C 6 dB above A (the simulator's truth)
    sim = simulate_spots(days=0.25, n_receivers=40, bands=("20m",), difference_db=2.0,
                         more_antennas=[6.0], seed=3)
    ab = compare_antennas(sim.spots, "simultaneous", "Q1ABC", "Q1ABD", by=("band",),
                          n_boot=60)
    multi = compare_several(sim.spots, "simultaneous", sim.params["calls"], n_boot=60)
    return sim, ab, multi


def test_section_shows_ranking_table_and_sentences(three):
    sim, ab, multi = three
    text = build_report(sim.spots, ab, figures=False, several=multi)
    assert text.count("<h2 id='several'>Several antennas</h2>") == 1
    sec = text[text.index("id='several'"):text.index("id='summary'")]
    # after the verdict tables, before the two-antenna paste block
    assert text.index("<h2>Verdict</h2>") < text.index("id='several'")
    assert ("Ranking: Q1ABE &gt; Q1ABD &gt; Q1ABC with 95 % simultaneous confidence."
            in sec)
    cells = re.findall(r"<td[^>]*>([^<]*)</td>", sec)
    for r in multi.contrasts.to_dict("records"):
        i = cells.index(f"{r[C.SECOND]} minus {r[C.FIRST]}")
        assert cells[i + 1] == f"{r[C.B_MINUS_A]:+.1f}"
        assert cells[i + 2] == f"{r[C.CI_SIM_LOW]:+.1f} to {r[C.CI_SIM_HIGH]:+.1f}"
    assert "The 2 intervals hold together with 95 % confidence" in sec
    assert sec.count("<div class='tbl'><table") == sec.count("<table") == 1
    assert "<pre class='paste'>**3 antennas (Q1ABC, Q1ABD, Q1ABE)" in sec


def test_two_antenna_report_unchanged_without_the_section(three):
    sim, ab, _ = three
    plain = build_report(sim.spots, ab, figures=False)
    assert "Several antennas" not in plain and "Series of changes" not in plain
    stamp = re.compile(r"on \d{4}-\d\d-\d\d \d\d:\d\d UTC")
    again = build_report(sim.spots, ab, figures=False, several=None)
    assert stamp.sub("", plain) == stamp.sub("", again)


@pytest.mark.parametrize("argv, message", [
    (["--design", "simultaneous", "--a", "Q1ABC", "--antennas", "Q1ABC,Q1ABD",
      "--periods", "a:2026-03-01,b:2026-03-02"], "not both"),
    (["--design", "alternating", "--a", "Q1ABC", "--antennas", "A,B,C"], "--schedule"),
    (["--design", "before-after", "--a", "Q1ABC", "--antennas", "A,B,C"], "alternating"),
    (["--design", "simultaneous", "--a", "Q1ABC", "--b", "Q1ABD", "--periods",
      "a:2026-03-01,b:2026-03-02"], "before-after"),
    (["--design", "simultaneous", "--a", "Q1ABC", "--b", "Q1ABD", "--all-pairs"],
     "--antennas"),
])
def test_report_usage_errors_exit_2(tmp_path, capsys, argv, message):
    spots = tmp_path / "none.parquet"  # refused before the table is read
    assert main(["report", str(spots), *argv, "-o", str(tmp_path / "r.html")]) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err


@pytest.mark.slow
def test_report_command_with_antennas(three, tmp_path, capsys):
    sim, _, _ = three
    spots = tmp_path / "three.parquet"
    sim.spots.to_parquet(spots)
    out = tmp_path / "r.html"
    rc = main(["report", str(spots), "--design", "simultaneous", "--a", "Q1ABC",
               "--antennas", "Q1ABC,Q1ABD,Q1ABE", "--all-pairs", "--boot", "60", "-o",
               str(out)])
    assert rc == 0
    printed = capsys.readouterr().out
    assert "Ranking: Q1ABE > Q1ABD > Q1ABC" in printed
    text = out.read_text(encoding="utf-8")
    # --b defaulted to the second antenna; the section holds all three pairs
    assert "<h1>Antenna comparison: A = Q1ABC, B = Q1ABD</h1>" in text
    sec = text[text.index("id='several'"):text.index("id='summary'")]
    assert "every pair" in sec and sec.count("Q1ABE minus Q1ABD") >= 1


@pytest.mark.slow
def test_report_command_with_antennas_alternating(tmp_path, capsys):
    # one call, three antennas on a schedule with labels A, B, C (B 2 dB and C 5 dB above
    # A): the A/B part compares A with B (the reference with the next label), the
    # section all three
    from spotkit.plan.schedule import make_schedule, write_schedule

    table = make_schedule("2026-03-02", days=0.25, bands="20m", antennas="A,B,C", seed=3)
    sim = simulate_spots("alternating", days=0.25, n_receivers=40, bands=("20m",),
                         difference_db=2.0, more_antennas=[5.0], seed=6, schedule=table)
    spots, sched = tmp_path / "alt.parquet", tmp_path / "schedule.csv"
    sim.spots.to_parquet(spots)
    write_schedule(table, sched)
    out = tmp_path / "r.html"
    rc = main(["report", str(spots), "--design", "alternating", "--a", "Q1ABC",
               "--antennas", "A,B,C", "--schedule", str(sched), "--window", "5",
               "--boot", "40", "-o", str(out)])
    assert rc == 0
    printed = capsys.readouterr().out
    first = printed.splitlines()[0]
    assert first.startswith("B is ") and " better than A " in first
    est = float(first.split("B is ")[1].split(" dB")[0])
    assert est == pytest.approx(2.0, abs=0.7)
    assert "Ranking: C > B > A" in printed
    text = out.read_text(encoding="utf-8")
    sec = text[text.index("id='several'"):text.index("id='summary'")]
    assert ">C minus A<" in sec and ">B minus A<" in sec


@pytest.mark.slow
def test_report_command_with_periods(tmp_path, capsys):
    sim = simulate_spots("before-after", days=6, n_receivers=40, bands=("20m",),
                         difference_db=2.0, more_antennas=[5.0],
                         change_at=["2026-03-04", "2026-03-06"], seed=2)
    spots = tmp_path / "series.parquet"
    sim.spots.to_parquet(spots)
    out = tmp_path / "r.html"
    rc = main(["report", str(spots), "--design", "before-after", "--a", "Q1ABC",
               "--periods", "old:2026-03-02,new:2026-03-04,newer:2026-03-06",
               "--boot", "40", "-o", str(out)])
    assert rc == 0
    printed = capsys.readouterr().out
    assert "Steps: new is " in printed
    # the A/B part is old against new, on the reports before 'newer' began (truth: the
    # step old -> new is 2 dB; with 'newer' (5 dB) counted as after it was about 3.5)
    first = printed.splitlines()[0]
    assert "new (B)" in first and "old (A)" in first
    est = float(first.split(" is ")[1].split(" dB")[0])
    assert est == pytest.approx(2.0, abs=0.8)
    text = out.read_text(encoding="utf-8")
    sec = text[text.index("<h2 id='series'>Series of changes</h2>"):text.index("id='summary'")]
    assert "Q1ABC: old from 2026-03-02 00:00 UTC" in sec
    for name in ("new minus old", "newer minus old", "newer minus new"):
        assert f">{name}<" in sec


_PROBE = (
    "<script>window.addEventListener('load',()=>{const d=document.documentElement,"
    "s=document.getElementById('several').getBoundingClientRect();"
    "parent.postMessage({'scroll-width':d.scrollWidth,'inner-width':window.innerWidth,"
    "'section-right':Math.ceil(s.right)},'*');});</script></body>")
_HOST = (
    "<!DOCTYPE html><html><body style='margin:0'><iframe src='{src}' width='{w}' "
    "height='900' style='border:0;display:block'></iframe><script>"
    "addEventListener('message',e=>{{for(const[k,v]of Object.entries(e.data))"
    "document.body.setAttribute('data-'+k,v);}});</script></body></html>")


@pytest.mark.browser
@pytest.mark.slow
@pytest.mark.parametrize("width", [400, 1400])
def test_section_fits_phone_and_desktop(three, tmp_path, width):
    """No horizontal page overflow with the section (its table scrolls in its own box);
    a screenshot of the section is saved ($SPOTKIT_SCREENSHOTS, else the tmp folder)."""
    browser = next((shutil.which(n) for n in ("chromium", "chromium-browser",
                                                "google-chrome") if shutil.which(n)), None)
    if browser is None:
        pytest.skip("no Chromium on this machine")
    sim, ab, multi = three
    text = build_report(sim.spots, ab, figures=False, several=multi)
    (tmp_path / "probe.html").write_text(text.replace("</body>", _PROBE), encoding="utf-8")
    (tmp_path / "r.html").write_text(text, encoding="utf-8")
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
             "--no-first-run", "--disable-background-networking",
             "--disable-component-update", "--disable-sync", "--allow-file-access-from-files",
             f"--user-data-dir={tempfile.mkdtemp()}", "--virtual-time-budget=10000",
             f"--window-size={max(width, 500) + 20},940"]
    host = tmp_path / "host.html"
    host.write_text(_HOST.format(src="probe.html", w=width), encoding="utf-8")
    dom = subprocess.run([browser, *flags, "--dump-dom", host.as_uri()],
                         capture_output=True, text=True, timeout=120).stdout

    def attr(name):
        m = re.search(rf'data-{name}="(\d+)"', dom)
        assert m, f"the probe did not report {name}"
        return int(m.group(1))

    assert attr("inner-width") == width
    assert attr("scroll-width") <= width, "the page is wider than the screen"
    assert attr("section-right") <= width
    folder = Path(os.environ.get("SPOTKIT_SCREENSHOTS") or tmp_path)
    folder.mkdir(parents=True, exist_ok=True)
    shot = folder / f"report_several_{width}px.png"
    host.write_text(_HOST.format(src="r.html#several", w=width), encoding="utf-8")
    flags[-1] = f"--window-size={max(width, 500)},900"
    subprocess.run([browser, *flags, f"--screenshot={shot}", host.as_uri()],
                   capture_output=True, timeout=120)
    from matplotlib.image import imread

    img = imread(shot)
    assert img[..., :3].std() > 0.05
