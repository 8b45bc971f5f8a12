"""Schema version 3 adds the append-only approvals table (migration 0003): a version-1 store
(the fixture written by the harness before migrations existed) gains it when opened and keeps
its runs; on every back end the database itself refuses to change or remove an approval."""

from __future__ import annotations

import shutil
import sqlite3
from pathlib import Path

import pytest

from harness.store import SCHEMA_VERSION, Store, StoreError

FIXTURE = Path(__file__).parent / "fixtures" / "schema-v1.sqlite"


def _finished_run(store: Store) -> str:
    run_id = store.begin_run(unit="U-1", lab="Lab", station_name="Bay", sequence_text="x", station_text=None,
                             software_version="0")
    with pytest.raises(StoreError, match="has not finished"):
        store.approve(run_id, name="A", role="approved")
    store.finish_run(run_id, "passed", 0, None, None, {"load": {"loss_W": 1.0}})
    return run_id


def test_a_version_1_store_gains_approvals_and_keeps_its_runs(tmp_path: Path) -> None:
    shutil.copy(FIXTURE, tmp_path / "harness.sqlite")
    store = Store(tmp_path, background_flush=False)
    try:
        before = [r["run_id"] for r in store.runs()]
        assert before, "the fixture holds runs"
        run_id = _finished_run(store)
        row = store.approve(run_id, name="A. Approver", role="approved")
        assert store.approvals(run_id) == {"results_sha256": row["results_sha256"],
                                           "rows": [{**{k: row[k] for k in ("approved", "name", "role", "note",
                                                                          "results_sha256")}, "results_match": True}]}
        assert [r["run_id"] for r in store.runs()] == before + [run_id]
    finally:
        store.close()
    with sqlite3.connect(tmp_path / "harness.sqlite") as conn:
        assert conn.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()[0] == str(SCHEMA_VERSION)


def test_approvals_cannot_be_changed_or_removed(open_store) -> None:
    with open_store() as store:
        run_id = _finished_run(store)
        store.approve(run_id, name="A. Approver", role="approved")
        for statement in ("UPDATE approvals SET name = 'someone else'", "DELETE FROM approvals"):
            with pytest.raises(StoreError, match="append-only"):
                with store._transaction() as conn:  # the database's own refusal, not the store's API
                    conn.execute(_text(statement))
        assert [r["name"] for r in store.approvals(run_id)["rows"]] == ["A. Approver"]


def test_a_results_change_after_approval_is_detected(open_store) -> None:
    with open_store() as store:
        run_id = _finished_run(store)
        store.approve(run_id, name="A. Approver", role="approved")
        with store._transaction() as conn:
            conn.execute(_text(f"UPDATE runs SET results = '{{\"load\": {{\"loss_W\": 2.0}}}}' WHERE run_id = '{run_id}'"))
        approvals = store.approvals(run_id)
    assert approvals["rows"][0]["results_match"] is False
    assert approvals["results_sha256"] != approvals["rows"][0]["results_sha256"]


def _text(statement: str):
    from sqlalchemy import text
    return text(statement)


def test_sync_forwards_approvals_and_an_approved_run_is_never_replaced(tmp_path: Path, store_url: str) -> None:
    """A station's run synced to the lab database, approved at the station afterwards, synced
    again: the approval arrives once, and a later re-copy of the run keeps the lab's approvals."""
    with Store(tmp_path / "station", background_flush=False) as station, \
            Store(tmp_path / "lab", url=store_url) as lab:
        run_id = _finished_run(station)
        assert station.copy_run_to(lab, run_id) is not None
        station.approve(run_id, name="A. Approver", role="approved")
        assert station.copy_run_to(lab, run_id) == 0  # the approval went across, nothing else
        assert station.copy_run_to(lab, run_id) is None  # and only once
        lab.approve(run_id, name="B. Checker", role="checked")
        station.amend_outcome(run_id, "tripped", 3, {"cause": "amended"})
        station.copy_run_to(lab, run_id)  # a changed run is copied again, its approvals kept
        assert [r["name"] for r in lab.approvals(run_id)["rows"]] == ["A. Approver", "B. Checker"]
        assert lab.run(run_id)["status"] == "tripped"
