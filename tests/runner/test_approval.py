"""`harness approve`: append-only approvals in the store with the hash of the results approved;
the report's sign-off block follows them, and a change of the results after approval shows."""

from __future__ import annotations

import shutil
import sqlite3
from pathlib import Path

import pytest

from tests.runner.conftest import harness


@pytest.fixture()
def stored_run(tmp_path: Path, demo_run) -> tuple[str, Path]:
    """A copy of the demo run's store, so changing it here leaves the shared run alone."""
    _, document, data = demo_run
    copy = tmp_path / "data"
    shutil.copytree(data, copy)
    return document["run_id"], copy


def first_page(run_id: str, data: Path) -> str:
    done = harness("report", run_id, data=data)
    assert done.returncode == 0, done.stderr
    html = (data / run_id / "report.html").read_text(encoding="utf-8")
    return html[html.index('<div class="first-page">'):html.index('id="cautions"')]


def test_approvals_change_the_report_and_a_later_change_of_results_is_detected(stored_run):
    run_id, data = stored_run
    assert "NOT YET APPROVED" in first_page(run_id, data)

    checked = harness("approve", run_id[:15], "--by", "J. Okafor", "--role", "checked", data=data)
    assert checked.returncode == 0, checked.stderr
    assert f"run {run_id}: checked by J. Okafor" in checked.stdout
    page = first_page(run_id, data)
    assert "J. Okafor" in page and "NOT YET APPROVED" in page  # checked is not approved

    approved = harness("approve", run_id, "--by", "M. Lindqvist", "--role", "approved", "--note", "routine test",
                       data=data)
    assert approved.returncode == 0, approved.stderr
    page = first_page(run_id, data)
    assert "M. Lindqvist" in page and "routine test" in page
    assert "NOT YET APPROVED" not in page and "approval-stale" not in page

    # Change one stored result by hand: both approvals no longer cover what is stored.
    with sqlite3.connect(data / "harness.sqlite") as conn:
        text = conn.execute("SELECT results FROM runs WHERE run_id = ?", (run_id,)).fetchone()[0]
        conn.execute("UPDATE runs SET results = ? WHERE run_id = ?", (text.replace('"load_loss"', '"load_loss" ', 1),
                                                                     run_id))
    page = first_page(run_id, data)
    assert page.count("does not match the results now stored") == 2
    assert "NOT YET APPROVED: the results changed after they were approved" in page


def test_approvals_are_append_only(stored_run):
    run_id, data = stored_run
    for role in ("approved", "approved"):
        assert harness("approve", run_id, "--by", "M. Lindqvist", "--role", role, data=data).returncode == 0
    with sqlite3.connect(data / "harness.sqlite") as conn:
        assert conn.execute("SELECT count(*) FROM approvals WHERE run_id = ?", (run_id,)).fetchone()[0] == 2
        for statement in ("UPDATE approvals SET name = 'someone else'", "DELETE FROM approvals"):
            with pytest.raises(sqlite3.IntegrityError, match="append-only"):
                conn.execute(statement)


def test_approving_an_unknown_run_or_without_a_name_is_a_clear_error(stored_run):
    _, data = stored_run
    unknown = harness("approve", "19990101-000000-0000", "--by", "X", "--role", "approved", data=data)
    assert unknown.returncode == 2 and "no run '19990101-000000-0000'" in unknown.stderr
    blank = harness("approve", stored_run[0], "--by", "  ", "--role", "approved", data=data)
    assert blank.returncode == 2 and "approver's name must be non-empty" in blank.stderr
    assert "Traceback" not in unknown.stderr + blank.stderr
