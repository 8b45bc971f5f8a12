"""The report printed to PDF by headless Chromium: the same HTML, laid out for A4 by the
browser engine that also renders it on screen.

Why Chromium: the report's print stylesheet (A4 page, figures and short tables kept whole,
repeated table heads, the running footer with serial, run id and "page x of y" in CSS page-margin
boxes) is printed as a browser shows it, with no second layout engine to keep in step; Debian
packages it (``.ci/run`` installs it). Pure-Python HTML-to-PDF libraries lay out a subset of CSS
and would need their own stylesheet for the same page.
"""

from __future__ import annotations

import shutil
import subprocess
import tempfile
from pathlib import Path

from harness.report.bundle import ReportError

BROWSERS = ("chromium", "chromium-browser")
FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--no-pdf-header-footer")
TIMEOUT_S = 120.0  # guards against a stuck browser only; printing a report takes seconds


def find_chromium() -> str:
    """The Chromium to print with; a clear error when there is none."""
    for name in BROWSERS:
        found = shutil.which(name)
        if found:
            return found
    raise ReportError("printing to PDF needs Chromium, which is not installed "
                      "(Debian: apt-get install chromium); the HTML report is written all the same")


def print_pdf(html: Path, pdf: Path | None = None) -> Path:
    """Print ``html`` to ``pdf`` (default: beside it, ``.pdf``); the PDF's path."""
    html = Path(html).resolve()
    target = (Path(pdf) if pdf is not None else html.with_suffix(".pdf")).resolve()
    browser = find_chromium()
    partial = target.with_name(target.name + ".part")
    with tempfile.TemporaryDirectory(prefix="harness-pdf-") as profile:
        command = [browser, *FLAGS, f"--user-data-dir={profile}", f"--print-to-pdf={partial}", html.as_uri()]
        try:
            done = subprocess.run(command, capture_output=True, text=True, timeout=TIMEOUT_S,
                                  stdin=subprocess.DEVNULL, check=False)
        except subprocess.TimeoutExpired as exc:
            partial.unlink(missing_ok=True)
            raise ReportError(f"Chromium did not print {html.name} within {TIMEOUT_S:g} s") from exc
    if done.returncode != 0 or not partial.is_file() or partial.read_bytes()[:5] != b"%PDF-":
        partial.unlink(missing_ok=True)
        tail = (done.stderr or "").strip().splitlines()[-3:]
        raise ReportError(f"Chromium could not print {html.name} (exit {done.returncode}): {' / '.join(tail)}")
    partial.replace(target)
    return target
