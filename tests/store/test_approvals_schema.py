"""Schema version 2 adds the append-only approvals table; a version-1 store gains it on opening."""

from __future__ import annotations

import sqlite3

import pytest

from harness.store import SCHEMA_VERSION, Store, StoreError
from harness.store.schema import APPLICATION, TABLES


def test_a_version_1_store_is_upgraded_and_keeps_its_runs(tmp_path):
    path = tmp_path / "harness.sqlite"
    with sqlite3.connect(path) as conn:
        for statement in TABLES:
            if "approvals" not in statement:
                conn.execute(statement)
        conn.executemany("INSERT INTO meta (key, value) VALUES (?, ?)",
                         [("schema_version", "1"), ("application", APPLICATION)])
    store = Store(tmp_path, background_flush=False)
    try:
        run_id = store.begin_run(unit="U-1", lab="Lab", station_name="Bay", sequence_text="x", station_text=None,
                                 software_version="0")
        with pytest.raises(StoreError, match="has not finished"):
            store.approve(run_id, name="A", role="approved")
        store.finish_run(run_id, "passed", 0, None, None, {"load": {"loss_W": 1.0}})
        row = store.approve(run_id, name="A. Approver", role="approved")
        assert store.approvals(run_id) == {"results_sha256": row["results_sha256"],
                                           "rows": [{**{k: row[k] for k in ("approved", "name", "role", "note",
                                                                          "results_sha256")}, "results_match": True}]}
    finally:
        store.close()
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()[0] == str(SCHEMA_VERSION)
