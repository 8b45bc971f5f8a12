"""After a run that stopped, the operator gets the outcome at once and the report follows from a
process of its own; a completed run, and every run for a script, has its report written before
the outcome is given."""

from __future__ import annotations

from pathlib import Path

from harness.runner.prepare import RunOptions
from harness.runner.reporting import write_in_background
from harness.runner.run import execute
from harness.store import Store
from tests.runner.conftest import SHORT


def test_a_stopped_run_hands_back_before_its_report_which_is_still_written(tmp_path: Path) -> None:
    with Store(tmp_path) as store:
        outcome = execute(RunOptions(SHORT, faults=("shorted-turn",), yes=True, quiet=True, stepped_clock=True,
                                     defer_stopped_report=True), store)
        assert (outcome.status, outcome.report) == ("tripped", None)
        assert store.run(outcome.run_id)["status"] == "tripped"  # the outcome is in the store already
    report, process = write_in_background(store, outcome.run_id)
    assert process.wait(timeout=240) == 0, (report.parent / "report.log").read_text()
    html = report.read_text(encoding="utf-8")
    assert "TRIPPED" in html and "current limit" in html


def test_a_completed_run_has_its_report_before_the_outcome(tmp_path: Path) -> None:
    with Store(tmp_path) as store:
        outcome = execute(RunOptions(SHORT, yes=True, quiet=True, stepped_clock=True, defer_stopped_report=True), store)
    assert outcome.exit_code in (0, 1) and Path(outcome.report).is_file()
