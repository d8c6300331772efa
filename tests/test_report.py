"""The HTML report: content, self-containedness, and rendering in a real headless browser."""
from __future__ import annotations

import re
import shutil
import subprocess
import tempfile
from html.parser import HTMLParser
from pathlib import Path

import pytest

from spotkit import columns as C
from spotkit.report import CAUTIONS, JOB, build_report, standard_comparisons, write_report
from spotkit.sim.simulate import simulate_spots


@pytest.fixture(scope="module")
def small_experiment():
    sim = simulate_spots("simultaneous", days=1, n_receivers=80, seed=7)
    results, map_result = standard_comparisons(
        sim.spots, sim.design, sim.a, sim.b,
        breakdowns=(("band",), ("band", "distance"), ("band", "bearing")),
        n_boot=100, map_n_boot=50)
    return sim, results, map_result


@pytest.fixture(scope="module")
def report_html(small_experiment, tmp_path_factory):
    sim, results, map_result = small_experiment
    path = write_report(tmp_path_factory.mktemp("report") / "r.html", sim.spots, results,
                        map_result=map_result)
    return path.read_text(encoding="utf-8")


class _Images(HTMLParser):
    def __init__(self):
        super().__init__()
        self.srcs = []

    def handle_starttag(self, tag, attrs):
        if tag == "img":
            self.srcs.append(dict(attrs).get("src", ""))


def test_report_has_every_section_and_no_external_resources(small_experiment, report_html):
    sim, results, _ = small_experiment
    text = report_html
    assert JOB in text
    for heading in ("Data", "Verdict", "Maps and plots", "Method and assumptions", "Cautions"):
        assert f"<h2>{heading}</h2>" in text
    for caution in CAUTIONS:
        assert caution in text
    # the headline verdict and the overall estimate with its interval
    overall = results[0].overall
    assert f"{overall[C.B_MINUS_A]:+.2f}" in text
    assert f"{overall[C.CI_LOW]:+.2f} to {overall[C.CI_HIGH]:+.2f}" in text
    # every figure is embedded; nothing is fetched from elsewhere
    parser = _Images()
    parser.feed(text)
    assert len(parser.srcs) >= 6
    assert all(s.startswith("data:image/png;base64,") for s in parser.srcs)
    assert not re.search(r"""(src|href)=['"]https?://""", text)
    assert "Not drawn" not in text
    # data summary counts the spots and receivers of the table
    assert f"{len(sim.spots):,}" in text
    assert f"{sim.spots[C.RX_CALL].nunique():,}" in text


def test_report_without_figures_and_ingest_summary(small_experiment):
    sim, results, _ = small_experiment

    class Summary:  # the fields of spotkit.io.ingest.IngestSummary the report shows
        rows_read, accepted, rejected, duplicates = 105, 100, 3, 2
        rejected_by_reason = {"bad locator": 3}

    text = build_report(sim.spots, results[0], ingest_summary=Summary(), figures=False)
    assert "rows set aside" in text and "bad locator: 3" in text
    assert "<img" not in text


def test_empty_results_are_refused(small_experiment):
    sim, _, _ = small_experiment
    with pytest.raises(ValueError, match="at least one"):
        build_report(sim.spots, [])


def _chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


@pytest.mark.browser
@pytest.mark.slow
def test_report_renders_with_its_images_in_headless_chromium(report_html, tmp_path):
    browser = _chromium()
    if browser is None:
        pytest.skip("no Chromium on this machine (make test installs Debian's chromium as "
                    "root; it could not be installed here)")
    text = report_html
    # a copy with a probe script that counts the images the browser actually decoded
    probe = ("<script>window.addEventListener('load',()=>{const ok=[...document.images]"
             ".filter(i=>i.complete&&i.naturalWidth>0).length;"
             "document.body.setAttribute('data-images-ok',ok);"
             "document.body.setAttribute('data-images-all',document.images.length);});"
             "</script></body>")
    page = tmp_path / "probe.html"
    page.write_text(text.replace("</body>", probe), encoding="utf-8")
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update",
             "--disable-sync", f"--user-data-dir={tempfile.mkdtemp()}",
             "--virtual-time-budget=10000"]
    dom = subprocess.run([browser, *flags, "--dump-dom", page.as_uri()],
                         capture_output=True, text=True, timeout=120).stdout
    ok = re.search(r'data-images-ok="(\d+)"', dom)
    total = re.search(r'data-images-all="(\d+)"', dom)
    assert ok and total, "the page's load event did not run"
    assert int(total.group(1)) >= 6
    assert int(ok.group(1)) == int(total.group(1))
    # and a screenshot is not blank
    shot = tmp_path / "shot.png"
    subprocess.run([browser, *flags, "--window-size=1100,2000", f"--screenshot={shot}",
                    page.as_uri()], capture_output=True, timeout=120)
    from matplotlib.image import imread

    img = imread(shot)
    assert img.shape[0] >= 1000 and img[..., :3].std() > 0.05
    Path(shot).unlink()


def test_verdict_table_prints_p_floor_and_refuses_thin_verdicts():
    """p below double precision's floor shows as "< 1e-16", never "0"; a group carried by
    one receiver gets "too little data", not "B is N dB better" (issue 15, item 6)."""
    import pandas as pd

    from spotkit.compare.estimate import ComparisonResult
    from spotkit.report import verdict_table

    base = {C.B_MINUS_A: 8.0, C.CI_LOW: 7.1, C.CI_HIGH: 8.9, C.PAIRS: 900, C.BOTH: 800,
            C.ONLY_A: 40, C.ONLY_B: 60, C.BOTH_HEARD: 7.5, C.P_ADJUSTED: 0.0,
            C.CLUSTERS: 30, C.NOTE: "", C.METHOD: "m"}
    groups = pd.DataFrame([dict(base, **{C.BAND: "20m"}),
                           dict(base, **{C.BAND: "10m", C.CLUSTERS: 1, C.P_ADJUSTED: 3e-4})])
    res = ComparisonResult(overall=base, groups=groups, pairs=pd.DataFrame([]),
                           design="simultaneous", a="Q1ABC", b="Q1ABD", by=("band",))
    t = verdict_table(res)
    assert t["p (adjusted)"].tolist() == ["< 1e-16", "< 1e-16", "0.0003"]
    assert t["verdict"].iloc[1].startswith("B is 8.0 dB better than A on 20 m")
    assert t["verdict"].iloc[2].startswith("too little data on 10 m")
    assert "only 1 receiver" in t["verdict"].iloc[2]


#: measures the report inside a frame of the screen's size and sends the figures to the host
#: page (headless Chromium will not make a window narrower than 500 px, a frame it will)
_FIT_PROBE = (
    "<script>window.addEventListener('load',()=>{const d=document.documentElement,"
    "v=document.getElementById('verdict').getBoundingClientRect();"
    "parent.postMessage({'scroll-width':d.scrollWidth,'inner-width':window.innerWidth,"
    "'inner-height':window.innerHeight,'verdict-bottom':Math.ceil(v.bottom),"
    "'verdict-right':Math.ceil(v.right)},'*');});</script></body>")
_FIT_HOST = (
    "<!DOCTYPE html><html><body style='margin:0'><iframe src='{src}' width='{w}' "
    "height='{h}' style='border:0;display:block'></iframe><script>"
    "addEventListener('message',e=>{{for(const[k,v]of Object.entries(e.data))"
    "document.body.setAttribute('data-'+k,v);}});</script></body></html>")


@pytest.fixture(scope="module")
def labelled_report(small_experiment, tmp_path_factory):
    """The small experiment's report with the antennas named, as a user would write it."""
    import dataclasses

    sim, results, map_result = small_experiment
    named = [dataclasses.replace(r, label_a="vertical", label_b="dipole") for r in results]
    path = write_report(tmp_path_factory.mktemp("phone") / "r.html", sim.spots, named,
                        map_result=map_result)
    return path


@pytest.mark.browser
@pytest.mark.slow
@pytest.mark.parametrize("width", [400, 1400])
def test_report_fits_phone_and_desktop_screens_in_headless_chromium(labelled_report,
                                                                    tmp_path, width):
    """At 400 px (a phone) and 1400 px (a desktop): no horizontal page overflow (wide tables
    scroll inside their own box), and the verdict is in the first screen. Screenshots are
    saved for a person to look at ($SPOTKIT_SCREENSHOTS, else the test's tmp folder)."""
    import os

    browser = _chromium()
    if browser is None:
        pytest.skip("no Chromium on this machine (make browser installs Debian's chromium "
                    "as root; it could not be installed here)")
    text = labelled_report.read_text(encoding="utf-8")
    assert "name='viewport'" in text
    page = tmp_path / "probe.html"
    page.write_text(text.replace("</body>", _FIT_PROBE), encoding="utf-8")
    height = 900
    host = tmp_path / "host.html"
    host.write_text(_FIT_HOST.format(src=page.name, w=width, h=height), encoding="utf-8")
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
             "--no-first-run", "--disable-background-networking",
             "--disable-component-update", "--disable-sync", "--allow-file-access-from-files",
             f"--user-data-dir={tempfile.mkdtemp()}", "--virtual-time-budget=10000",
             f"--window-size={max(width, 500) + 20},{height + 40}"]
    dom = subprocess.run([browser, *flags, "--dump-dom", host.as_uri()],
                         capture_output=True, text=True, timeout=120).stdout

    def attr(name):
        m = re.search(rf'data-{name}="(\d+)"', dom)
        assert m, f"the probe did not report {name}"
        return int(m.group(1))

    assert attr("inner-width") == width  # the page really was laid out at this width
    assert attr("scroll-width") <= width, "the page is wider than the screen"
    assert attr("verdict-bottom") <= attr("inner-height"), "the verdict is below the fold"
    assert attr("verdict-right") <= width
    folder = Path(os.environ.get("SPOTKIT_SCREENSHOTS") or tmp_path)
    folder.mkdir(parents=True, exist_ok=True)
    shot = folder / f"report_{width}px.png"
    flags[-1] = f"--window-size={width},{height}"
    subprocess.run([browser, *flags, f"--screenshot={shot}", labelled_report.as_uri()],
                   capture_output=True, timeout=120)
    from matplotlib.image import imread

    img = imread(shot)
    assert img.shape[1] == width and img[..., :3].std() > 0.05


def test_report_is_built_for_small_screens_and_print(small_experiment, report_html):
    """Viewport, every table in its own scrolling box, the headline before the "where" grids
    and both before the data, a print stylesheet, and the paste block (issue 16)."""
    sim, results, _ = small_experiment
    text = report_html
    assert "<meta name='viewport' content='width=device-width, initial-scale=1'>" in text
    assert "@media print" in text and "beforeprint" in text
    assert text.count("<table") == text.count("<div class='tbl'><table")
    head = text.index("id='verdict'")
    where = text.index("id='where'")
    assert head < where < text.index("<h2>Data</h2>")
    assert f"Where {sim.b} is better or worse" in text
    assert text.count("<table class='grid") == 2  # band x distance and band x bearing
    paste = text[text.index("<pre class='paste'>"):text.index("</pre>")]
    assert "| band |" in paste and "<button" not in text


def test_report_maps_the_coverage_of_a_and_b_side_by_side(small_experiment, report_html):
    # the report's coverage map draws each antenna's own spots (not both pooled), and says so
    assert "(A) and" in report_html and "(B) side by side on one scale" in report_html
    assert "pooled" not in report_html.split("Coverage by band", 1)[1][:300]
