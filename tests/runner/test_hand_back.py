"""After a run: the outcome first, then the report (now, or left to `harness report`)."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import pytest

from harness.runner import reporting


@pytest.fixture
def written(monkeypatch):
    calls: list[str] = []

    def fake(store, run_id):
        calls.append(run_id)
        return Path("/data") / run_id / "report.html"
    monkeypatch.setattr(reporting, "write_run_reports", fake)
    return calls


@pytest.mark.parametrize("status", ["tripped", "aborted", "unsafe"])
def test_a_stopped_run_at_a_terminal_hands_back_at_once(written, status):
    outcome = SimpleNamespace(run_id="20261118-091204-ab12", status=status, report=None)
    note = reporting.hand_back(object(), outcome, interactive=True)
    assert written == [] and outcome.report is None
    assert "harness report 20261118-091204-ab12" in note


@pytest.mark.parametrize(("status", "interactive"), [("passed", True), ("failed", True), ("tripped", False)])
def test_completed_runs_and_scripts_get_the_report_now(written, status, interactive):
    outcome = SimpleNamespace(run_id="20261118-091204-ab12", status=status, report=None)
    note = reporting.hand_back(object(), outcome, interactive=interactive)
    assert written == ["20261118-091204-ab12"] and outcome.report.endswith("report.html") and outcome.report in note


def test_ctrl_c_while_the_report_is_written_stops_only_the_report(monkeypatch):
    def interrupted(store, run_id):
        raise KeyboardInterrupt
    monkeypatch.setattr(reporting, "write_run_reports", interrupted)
    outcome = SimpleNamespace(run_id="20261118-091204-ab12", status="passed", report=None)
    assert "harness report 20261118-091204-ab12" in reporting.hand_back(object(), outcome, interactive=True)
