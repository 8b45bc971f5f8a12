"""The report printed to PDF (headless Chromium) and its pages turned into PNG images (pypdfium2):
A4 pages, the summary alone on the first page, serial, run id and "page x of y" in every footer,
figures whole on one page.

Debian's ``chromium`` is installed by ``.ci/run``; without it these tests are skipped with a reason.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import matplotlib.image
import numpy as np
import pytest

from harness.report import write_reports
from harness.report.demo import demo_bundle
from harness.report.pdf import print_pdf
from tests.runner.conftest import ROUTINE, run_json

pdfium = pytest.importorskip("pypdfium2", reason="pypdfium2 (a test extra) turns the PDF's pages into images")
pytestmark = pytest.mark.skipif(shutil.which("chromium") is None and shutil.which("chromium-browser") is None,
                                reason="Debian's chromium is not installed: nothing prints the PDF")

# A4 in points: 210 mm x 297 mm = 595.28 pt x 841.89 pt (ISO 216).
A4_PT = (595.28, 841.89)
MM = 72 / 25.4
FOOTER_MM = 16  # the bottom page margin of report.css
FAIL_RED = (0x9B, 0x00, 0x00)  # --fail in report.css: the NOT YET APPROVED mark


@pytest.fixture(scope="module")
def demo_pdf(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("pdf")
    return print_pdf(Path(write_reports(folder, demo_bundle())["html"]))


def page_texts(pdf: Path) -> tuple[list[str], list[str]]:
    """Each page's whole text and its footer band's text."""
    document = pdfium.PdfDocument(str(pdf))
    whole, footers = [], []
    for page in document:
        width, height = page.get_size()
        assert (width, height) == pytest.approx(A4_PT, abs=1.0)
        text = page.get_textpage()
        whole.append(text.get_text_range())
        footers.append(text.get_text_bounded(0, 0, width, FOOTER_MM * MM))
    return whole, footers


def page_png(pdf: Path, index: int, folder: Path) -> np.ndarray:
    png = folder / f"page-{index + 1}.png"
    pdfium.PdfDocument(str(pdf))[index].render(scale=2).to_pil().save(png)
    return np.round(matplotlib.image.imread(png)[..., :3] * 255).astype(np.uint8)


def test_every_page_is_a4_with_serial_run_and_page_number_in_its_footer(demo_pdf):
    _, footers = page_texts(demo_pdf)
    assert len(footers) >= 4
    for k, footer in enumerate(footers, start=1):
        flat = " ".join(footer.split())
        assert "Serial HEW-26-0417 · run 20261118-091204-nf2" in flat, (k, flat)
        assert f"page {k} of {len(footers)}" in flat, (k, flat)


def test_the_summary_page_stands_alone_first(demo_pdf):
    pages, _ = page_texts(demo_pdf)
    first = " ".join(pages[0].split())
    for text in ("Routine test report", "PASSED", "Nameplate", "ONAN", "Routine tests", "Results against guarantees",
                 "Overall: PASSED", "Tested, checked and approved", "NOT YET APPROVED"):
        assert text in first, text
    assert "Cautions" not in first
    assert "Cautions" in pages[1]


def test_figures_are_kept_whole_with_their_captions(demo_pdf):
    pages, _ = page_texts(demo_pdf)
    # (text drawn inside the figure, text of its caption)
    for inside, caption in (("load-loss reading", "Each load-loss reading at rated current"),
                            ("applied voltage (% of rated)", "No-load current and no-load loss against applied voltage"),
                            ("supply terminals", "Approximate equivalent circuit per phase")):
        holding = [k for k, text in enumerate(pages) if inside in text]
        captioned = [k for k, text in enumerate(pages) if caption in " ".join(text.split())]
        assert holding and captioned and set(captioned) <= set(holding), (inside, holding, captioned)


def test_pages_as_images_are_inked_and_show_the_approval_mark(demo_pdf, tmp_path):
    first = page_png(demo_pdf, 0, tmp_path)
    assert first.shape[0] > first.shape[1]  # portrait
    inked = float((first.min(axis=2) < 200).mean())
    assert inked > 0.03, f"only {inked:.1%} of the first page is inked"
    red = np.all(np.abs(first.astype(int) - FAIL_RED) < 40, axis=2)
    rows = np.nonzero(red.any(axis=1))[0]
    assert red.sum() > 500 and rows.min() > first.shape[0] // 2, "the NOT YET APPROVED mark is not on the page's lower half"
    band = int(FOOTER_MM * MM * 2)
    for index in range(len(pdfium.PdfDocument(str(demo_pdf)))):
        page = page_png(demo_pdf, index, tmp_path)
        assert (page[-band:].min(axis=2) < 160).any(), f"page {index + 1} has no footer"


def test_a_run_with_pdf_prints_every_certificate_section(tmp_path):
    code, doc, err = run_json(str(ROUTINE), "--yes", "--stepped-clock", "--pdf", data=tmp_path)
    assert (code, doc["status"]) == (0, "passed"), (doc["trip"], err)
    pdf = Path(doc["folder"]) / "report.pdf"
    pages, footers = page_texts(pdf)
    whole = " ".join(" ".join(pages).split())
    for text in ("Nameplate", "ONAN", "105 °C (IEC 60085)", "IEC 60076-1:2011", "Results against guarantees",
                 "NOT YET APPROVED", "Calibration of the instruments", "(matches *IDN?)", "Winding resistance",
                 "At reference temperature (Ω)", "Temperatures", "ambient and oil before the test",
                 "on a stepped clock", "Excitation curve", "Event log"):
        assert text in whole, text
    assert all(f"run {doc['run_id']}" in " ".join(f.split()) for f in footers)
