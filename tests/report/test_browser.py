"""The HTML report opens in a real browser: headless Chromium renders it to a screenshot.

Needs `/usr/bin/chromium` (Debian package `chromium`); skipped with the reason when it is absent.
Manual check, same thing: `chromium --headless --no-sandbox --disable-gpu --screenshot=shot.png
--window-size=1200,3000 file:///path/report.html`, then look at shot.png.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import matplotlib.image
import numpy as np
import pytest

from benchlog.cli import main

from . import runfiles

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser") or (
    "/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)


@pytest.mark.skipif(CHROMIUM is None, reason="headless Chromium not installed (apt-get install chromium)")
def test_report_renders_in_headless_chromium(tmp_path):
    run = runfiles.hostile_run(tmp_path)
    out = tmp_path / "r.html"
    assert main(["report", str(run), "--spec", str(runfiles.spec_file(tmp_path)), "-o", str(out)]) == 0
    shot = tmp_path / "shot.png"
    proc = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
         # no network at all: a page that needed one would render without it
         "--proxy-server=127.0.0.1:9", "--proxy-bypass-list=<-loopback>",
         "--user-data-dir=" + str(tmp_path / "profile"), "--window-size=1200,4000",
         f"--screenshot={shot}", out.as_uri()],
        capture_output=True, text=True, timeout=180,
    )
    assert proc.returncode == 0, proc.stderr[-2000:]
    image = matplotlib.image.imread(shot)
    assert image.shape[0] == 4000 and image.shape[1] == 1200
    grey = image[..., :3].mean(axis=2)
    # something was drawn: text, tables and the figures' lines darken a real share of the page
    assert (grey < 0.5).mean() > 0.01
    # the figures are drawn: rows with long dark runs (axes frames) exist below the tables
    assert np.count_nonzero((grey < 0.3).sum(axis=1) > 400) >= 4


def _rows_with(image, rgb_hex: str) -> np.ndarray:
    """Screen rows where at least 40 pixels have exactly this colour (a box background)."""
    want = np.array([int(rgb_hex[i:i + 2], 16) for i in (1, 3, 5)]) / 255.0
    hit = np.all(np.abs(image[..., :3] - want) < 1.5 / 255.0, axis=2)
    return np.flatnonzero(hit.sum(axis=1) >= 40)


@pytest.mark.skipif(CHROMIUM is None, reason="headless Chromium not installed (apt-get install chromium)")
def test_verdict_is_on_the_first_screen_above_the_first_table(tmp_path):
    run = runfiles.pfet_run(tmp_path)
    out = tmp_path / "r.html"
    assert main(["report", str(run), "--spec", str(runfiles.spec_file(tmp_path)), "-o", str(out)]) == 0
    shot = tmp_path / "first.png"
    proc = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
         "--proxy-server=127.0.0.1:9", "--proxy-bypass-list=<-loopback>",
         "--user-data-dir=" + str(tmp_path / "profile"), "--window-size=1200,3000",
         f"--screenshot={shot}", out.as_uri()],
        capture_output=True, text=True, timeout=180,
    )
    assert proc.returncode == 0, proc.stderr[-2000:]
    image = matplotlib.image.imread(shot)
    # box colours from the report's own style sheet (htmlfile.CSS): verdict backgrounds and table headers
    verdict = np.concatenate([_rows_with(image, c) for c in ("#e8f4e8", "#fbe4e4", "#fff4d6")])
    header_rows = _rows_with(image, "#eeeeee")
    assert verdict.size, "no verdict box drawn"
    assert verdict.min() < 800  # on the first screen of a laptop
    assert header_rows.size and verdict.min() < header_rows.min()


@pytest.mark.skipif(CHROMIUM is None, reason="headless Chromium not installed (apt-get install chromium)")
def test_a_lot_reports_dom_as_the_browser_builds_it_leads_with_the_verdict(tmp_path):
    """The DOM after Chromium parsed and laid out the page (--dump-dom): the lot's verdict box comes before the
    first table, and the one-row-per-run summary is there with a row per run."""
    from html.parser import HTMLParser

    root = Path(__file__).resolve().parents[2]
    runs = sorted((root / "sample_runs" / "lot-demo-07").glob("*.run"))[:6]
    spec = root / "benchlog" / "demo" / "specs" / "demo-pfet-10m.toml"
    out = tmp_path / "lot.html"
    assert main(["report", *map(str, runs), "--spec", str(spec), "-o", str(out)]) == 0
    proc = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--proxy-server=127.0.0.1:9",
         "--proxy-bypass-list=<-loopback>", "--user-data-dir=" + str(tmp_path / "profile"), "--dump-dom",
         out.as_uri()], capture_output=True, text=True, timeout=180)
    assert proc.returncode == 0, proc.stderr[-2000:]

    class Order(HTMLParser):
        def __init__(self):
            super().__init__()
            self.seen: list[str] = []
            self.caption = False
            self.summary_rows = None

        def handle_starttag(self, tag, attrs):
            classes = (dict(attrs).get("class") or "").split()
            if "verdict" in classes:
                self.seen.append("verdict")
            elif tag == "table":
                self.seen.append("table")
            elif tag == "caption":
                self.caption = True
            elif tag == "tr" and self.summary_rows is not None:
                self.summary_rows += 1

        def handle_endtag(self, tag):
            if tag == "caption":
                self.caption = False
            elif tag == "table" and self.summary_rows is not None and self.summary_rows >= 0:
                self.seen.append(f"summary:{self.summary_rows - 1}")  # less the header row
                self.summary_rows = -10**6

        def handle_data(self, data):
            if self.caption and data.startswith("One row per run"):
                self.summary_rows = 0

    order = Order()
    order.feed(proc.stdout)
    assert "verdict" in order.seen and "table" in order.seen
    assert order.seen.index("verdict") < order.seen.index("table")
    assert f"summary:{len(runs)}" in order.seen
