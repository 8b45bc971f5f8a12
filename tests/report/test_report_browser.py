"""The report as a browser shows it: headless Chromium renders the page, the test reads the pixels.

Debian's ``chromium`` is installed by ``.ci/run``; without it these tests are skipped with a reason.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from pathlib import Path

import matplotlib.image
import numpy as np
import pytest

from harness.report import write_reports
from harness.report.demo import demo_bundle, demo_tripped_bundle

CHROMIUM = shutil.which("chromium") or ("/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None)
pytestmark = pytest.mark.skipif(CHROMIUM is None, reason="Debian's chromium is not installed (/usr/bin/chromium)")

FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--disable-quic")
BANNER_BACKGROUND = (0xFF, 0xF1, 0xD6)  # .banner background in report.css
# A4 in points: 210 mm x 297 mm = 595.28 pt x 841.89 pt (ISO 216).
A4_PT = (595.28, 841.89)


def chromium(tmp_path: Path, *args: str) -> str:
    profile = tmp_path / f"profile-{len(list(tmp_path.iterdir()))}"
    command = [str(CHROMIUM), *FLAGS, f"--user-data-dir={profile}", *args]
    try:
        done = subprocess.run(command, capture_output=True, text=True, timeout=90, check=False)
    except subprocess.TimeoutExpired:
        pytest.fail("chromium did not finish within 90 s")
    assert done.returncode == 0, done.stderr[-2000:]
    return done.stdout


def read_png(path: Path) -> np.ndarray:
    """The page as an array of 8-bit RGB pixels, height x width x 3."""
    image = matplotlib.image.imread(path)  # PNG: floats in 0..1
    return np.round(image[..., :3] * 255).astype(np.uint8)


@pytest.fixture(scope="module")
def report_dir(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("report")
    write_reports(folder / "passed", demo_bundle())
    write_reports(folder / "tripped", demo_tripped_bundle())
    return folder


def screenshot(tmp_path: Path, html: Path) -> np.ndarray:
    png = tmp_path / "page.png"
    chromium(tmp_path, f"--screenshot={png}", "--window-size=1200,3000", html.as_uri())
    return read_png(png)


def test_page_renders_and_is_not_blank(tmp_path, report_dir):
    page = screenshot(tmp_path, report_dir / "passed" / "report.html")
    assert page.shape == (3000, 1200, 3)
    inked = float((page.min(axis=2) < 200).mean())
    # Text, tables and figures: a blank page, or one whose styles or figures failed, has next to no ink.
    assert inked > 0.02, f"only {inked:.1%} of the page is inked"
    colours = np.unique(page.reshape(-1, 3).astype(np.uint32) @ np.array([65536, 256, 1], dtype=np.uint32))
    assert colours.size > 50, "too few colours for text, tables and figures"
    # Each third of the first screen carries something: the layout did not collapse to the top.
    for band in np.array_split(page[:2400], 3):
        assert (band.min(axis=2) < 200).mean() > 0.005


def test_tripped_page_shows_the_banner(tmp_path, report_dir):
    page = screenshot(tmp_path, report_dir / "tripped" / "report.html")
    banner = int(np.all(page == np.array(BANNER_BACKGROUND, dtype=np.uint8), axis=2).sum())
    assert banner > 20_000, "the banner's background is not on the screen"
    rows = np.nonzero(np.all(page == np.array(BANNER_BACKGROUND, dtype=np.uint8), axis=2).any(axis=1))[0]
    assert rows.min() < 400, "the banner does not open the page"


def test_figures_have_size_in_the_browser(tmp_path, report_dir):
    # A copy of the page with a measuring script; the report itself carries no script.
    probe = ("<script>document.body.setAttribute('data-figures', JSON.stringify("
             "[...document.querySelectorAll('svg.figure-svg')].map(s => {const r = s.getBoundingClientRect();"
             " return [r.width, r.height];})));</script>")
    page = (report_dir / "passed" / "report.html").read_text(encoding="utf-8").replace("</body>", probe + "</body>")
    copy = tmp_path / "probe.html"
    copy.write_text(page, encoding="utf-8")
    dom = chromium(tmp_path, "--window-size=1200,3000", "--dump-dom", copy.as_uri())
    found = re.search(r'data-figures="([^"]*)"', dom)
    assert found, "the measuring script did not run"
    sizes = json.loads(found.group(1).replace("&quot;", '"'))
    assert len(sizes) >= 3
    for width, height in sizes:
        assert width > 300 and height > 100, sizes


def test_print_layout_is_a4_pages(tmp_path, report_dir):
    pdf = tmp_path / "report.pdf"
    chromium(tmp_path, "--no-pdf-header-footer", f"--print-to-pdf={pdf}", (report_dir / "passed" / "report.html").as_uri())
    data = pdf.read_bytes()
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    assert len(boxes) >= 2, "expected a multi-page print"
    for width, height in boxes:
        assert abs(float(width) - A4_PT[0]) < 1.5 and abs(float(height) - A4_PT[1]) < 1.5
