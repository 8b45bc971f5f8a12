"""Writing a run's report files into its run folder."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from harness.report.bundle import ReportBundle, ReportError
from harness.report.html import render_html
from harness.report.json_out import results_json

REPORT_HTML = "report.html"
RESULTS_JSON = "results.json"


def write_reports(folder: str | os.PathLike[str], bundle: ReportBundle) -> dict[str, Path]:
    """Write ``report.html`` and ``results.json`` into ``folder``; return their paths by kind.

    Both are rendered before either is written, and each is written whole or not at all, so a
    failure (or a kill) never leaves a half-written report beside the raw data.
    """
    target = Path(folder)
    html, document = render_html(bundle), results_json(bundle)
    try:
        target.mkdir(parents=True, exist_ok=True)
        paths = {"json": _write_whole(target / RESULTS_JSON, document), "html": _write_whole(target / REPORT_HTML, html)}
    except OSError as exc:
        raise ReportError(f"cannot write the report into {target}: {exc.strerror or exc}") from exc
    return paths


def _write_whole(path: Path, text: str) -> Path:
    handle, temporary = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(handle, "w", encoding="utf-8", newline="\n") as stream:
            stream.write(text)
        os.chmod(temporary, 0o644)  # a report is for filing and sharing, unlike mkstemp's private default
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return path
