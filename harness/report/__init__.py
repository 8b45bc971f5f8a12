"""Test reports: a self-contained HTML page with figures and a results JSON, for every run.

``write_reports(folder, bundle)`` writes ``report.html`` and ``results.json``; the raw samples
(``samples.csv``) are written beside them by the store.
"""

from harness.report.bundle import BANNER_STATUSES, DEFAULT_CAUTIONS, STATUSES, ReportBundle, ReportError
from harness.report.html import render_html
from harness.report.json_out import results_document, results_json
from harness.report.writer import REPORT_HTML, RESULTS_JSON, write_reports

__all__ = [
    "BANNER_STATUSES",
    "DEFAULT_CAUTIONS",
    "REPORT_HTML",
    "RESULTS_JSON",
    "STATUSES",
    "ReportBundle",
    "ReportError",
    "render_html",
    "results_document",
    "results_json",
    "write_reports",
]
