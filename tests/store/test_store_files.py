"""The store's file: data folder, WAL journal, schema version, foreign files."""

from __future__ import annotations

import sqlite3

import pytest
from store_helpers import begin, committed

from harness.common.errors import HarnessError
from harness.store import SCHEMA_VERSION, Store, StoreError, data_dir, run_folder


def test_wal_journal_is_on(tmp_path):
    # SQLite documents the WAL journal mode as persistent: a fresh connection reports it.
    with Store(tmp_path):
        assert committed(tmp_path / "harness.sqlite", "PRAGMA journal_mode") == "wal"


def test_schema_version_is_kept_in_meta(tmp_path):
    with Store(tmp_path):
        pass
    version = committed(tmp_path / "harness.sqlite", "SELECT value FROM meta WHERE key = 'schema_version'")
    assert int(version) == SCHEMA_VERSION


def test_a_newer_schema_is_refused_clearly(tmp_path):
    with Store(tmp_path):
        pass
    with sqlite3.connect(tmp_path / "harness.sqlite") as conn:
        conn.execute("UPDATE meta SET value = ? WHERE key = 'schema_version'", (str(SCHEMA_VERSION + 1),))
    conn.close()
    with pytest.raises(StoreError, match="newer harness"):
        Store(tmp_path)


def test_reopening_keeps_the_runs(tmp_path):
    with Store(tmp_path) as store:
        run_id = begin(store)
    with Store(tmp_path) as store:
        assert [r["run_id"] for r in store.runs()] == [run_id]


def test_a_foreign_sqlite_file_is_refused(tmp_path):
    conn = sqlite3.connect(tmp_path / "harness.sqlite")
    conn.execute("CREATE TABLE other (x)")
    conn.commit()
    conn.close()
    with pytest.raises(StoreError, match="not a harness store"):
        Store(tmp_path)


def test_a_file_that_is_not_a_database_is_refused(tmp_path):
    (tmp_path / "harness.sqlite").write_bytes(b"these are not the pages of a database\n" * 200)
    with pytest.raises(StoreError, match="cannot open the store"):
        Store(tmp_path)


def test_harness_data_names_the_data_folder(tmp_path, monkeypatch):
    folder = tmp_path / "lab" / "data"
    monkeypatch.setenv("HARNESS_DATA", str(folder))
    assert data_dir() == folder and folder.is_dir()
    with Store() as store:
        assert store.path == folder / "harness.sqlite"
        run_id = begin(store)
        assert store.run_folder(run_id) == folder / run_id
    assert (folder / "harness.sqlite").is_file()
    assert run_folder(run_id) == folder / run_id and (folder / run_id).is_dir()


def test_the_default_data_folder_is_runs_in_the_working_folder(tmp_path, monkeypatch):
    monkeypatch.delenv("HARNESS_DATA", raising=False)
    monkeypatch.chdir(tmp_path)
    assert data_dir() == tmp_path / "runs" and (tmp_path / "runs").is_dir()
    monkeypatch.setenv("HARNESS_DATA", "  ")
    assert data_dir() == tmp_path / "runs"


def test_a_data_folder_that_cannot_be_made_is_a_clear_error(tmp_path, monkeypatch):
    (tmp_path / "plain-file").write_text("x")
    monkeypatch.setenv("HARNESS_DATA", str(tmp_path / "plain-file" / "data"))
    with pytest.raises(StoreError, match="cannot create the folder"):
        data_dir()


def test_run_folder_takes_only_run_ids(tmp_path):
    with pytest.raises(StoreError, match="not a run id"):
        run_folder("../../etc", tmp_path)


def test_store_errors_are_harness_errors():
    assert issubclass(StoreError, HarnessError)
