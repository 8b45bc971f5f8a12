"""The database layout and opening it: WAL journal, full sync, foreign keys, version check.

Times: ``runs`` and ``steps`` keep ISO 8601 UTC text (read by people); ``samples`` and
``events`` keep wall time as Unix seconds (REAL, cheap on the hot path) beside ``t``, the
bay time in seconds of the shared clock. Quantities are SI (V, A, W, Hz). SQLite stores a
not-a-number as NULL, so a NaN reading reads back as NaN in arrays and None in dicts.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

from harness.store.errors import StoreError

SCHEMA_VERSION = 2
"""1: runs, steps, samples, events, instruments, readings. 2: adds ``approvals`` (append-only
sign-off rows of a finished run); a version-1 store gains the table when it is opened."""
APPLICATION = "transformer-test-harness"
BUSY_TIMEOUT_S = 10.0

# Schema version 2. Append-only: who checked or approved a finished run, when, and the SHA-256 of
# the results text they approved; the triggers refuse any change or removal of a row.
APPROVALS_TABLE = """CREATE TABLE IF NOT EXISTS approvals (
        id INTEGER PRIMARY KEY,
        run_id TEXT NOT NULL REFERENCES runs(run_id),
        approved TEXT NOT NULL,
        name TEXT NOT NULL,
        role TEXT NOT NULL,
        note TEXT,
        results_sha256 TEXT NOT NULL)"""
APPROVALS_APPEND_ONLY = (
    "CREATE TRIGGER IF NOT EXISTS approvals_no_update BEFORE UPDATE ON approvals "
    "BEGIN SELECT RAISE(ABORT, 'approvals are append-only'); END",
    "CREATE TRIGGER IF NOT EXISTS approvals_no_delete BEFORE DELETE ON approvals "
    "BEGIN SELECT RAISE(ABORT, 'approvals are append-only'); END",
)

TABLES = (
    "CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
    """CREATE TABLE IF NOT EXISTS runs (
        run_id TEXT PRIMARY KEY,
        status TEXT NOT NULL CHECK (status IN ('running','passed','failed','tripped','aborted','unsafe')),
        exit_code INTEGER,
        started TEXT NOT NULL,
        finished TEXT,
        pid INTEGER,
        host TEXT,
        process_token TEXT,
        unit TEXT NOT NULL,
        lab TEXT NOT NULL,
        station_name TEXT NOT NULL,
        sequence_text TEXT NOT NULL,
        sequence_sha256 TEXT NOT NULL,
        station_text TEXT,
        station_sha256 TEXT,
        software_version TEXT NOT NULL,
        simulated TEXT,
        samples INTEGER NOT NULL DEFAULT 0,
        trip TEXT,
        record TEXT,
        results TEXT)""",
    """CREATE TABLE IF NOT EXISTS steps (
        run_id TEXT NOT NULL REFERENCES runs(run_id),
        step_index INTEGER NOT NULL,
        kind TEXT NOT NULL,
        name TEXT NOT NULL,
        started TEXT NOT NULL,
        finished TEXT,
        status TEXT,
        PRIMARY KEY (run_id, step_index)) WITHOUT ROWID""",
    # Clustered by (run_id, id): a run's samples sit together and appends go to the end.
    """CREATE TABLE IF NOT EXISTS samples (
        run_id TEXT NOT NULL REFERENCES runs(run_id),
        id INTEGER NOT NULL,
        step_index INTEGER NOT NULL,
        t REAL NOT NULL,
        wall REAL NOT NULL,
        channel INTEGER NOT NULL,
        u_rms REAL,
        u_mean REAL,
        i_rms REAL,
        p REAL,
        freq REAL,
        setpoint REAL,
        tag TEXT,
        PRIMARY KEY (run_id, id)) WITHOUT ROWID""",
    """CREATE TABLE IF NOT EXISTS events (
        id INTEGER PRIMARY KEY,
        run_id TEXT NOT NULL REFERENCES runs(run_id),
        t REAL,
        wall REAL NOT NULL,
        kind TEXT NOT NULL,
        text TEXT NOT NULL,
        data TEXT)""",
    "CREATE INDEX IF NOT EXISTS events_by_run ON events (run_id, id)",
    """CREATE TABLE IF NOT EXISTS instruments (
        run_id TEXT NOT NULL REFERENCES runs(run_id),
        role TEXT NOT NULL,
        maker TEXT,
        model TEXT,
        serial TEXT,
        firmware TEXT,
        resource TEXT,
        profile TEXT,
        calibration_due TEXT,
        PRIMARY KEY (run_id, role)) WITHOUT ROWID""",
    """CREATE TABLE IF NOT EXISTS readings (
        id INTEGER PRIMARY KEY,
        run_id TEXT NOT NULL REFERENCES runs(run_id),
        step_index INTEGER NOT NULL,
        tag TEXT NOT NULL,
        channel INTEGER,
        first_id INTEGER NOT NULL,
        last_id INTEGER NOT NULL,
        count INTEGER NOT NULL,
        u_rms_mean REAL, u_rms_std REAL,
        u_mean_mean REAL, u_mean_std REAL,
        i_rms_mean REAL, i_rms_std REAL,
        p_mean REAL, p_std REAL,
        freq_mean REAL, freq_std REAL,
        stable INTEGER NOT NULL)""",
    "CREATE INDEX IF NOT EXISTS readings_by_run ON readings (run_id, id)",
    APPROVALS_TABLE,
)


def connect(path: Path) -> sqlite3.Connection:
    """Open (creating if need be) the store at ``path``; every failure is a :class:`StoreError`."""
    try:
        conn = sqlite3.connect(path, timeout=BUSY_TIMEOUT_S, check_same_thread=False)
    except sqlite3.Error as exc:
        raise StoreError(f"{path}: cannot open the store: {exc}") from exc
    try:
        _configure(conn, path)
        _ensure_schema(conn, path)
    except BaseException as exc:
        conn.close()
        if isinstance(exc, sqlite3.Error):
            raise StoreError(f"{path}: cannot open the store: {exc}") from exc
        raise
    return conn


def _configure(conn: sqlite3.Connection, path: Path) -> None:
    mode = conn.execute("PRAGMA journal_mode=WAL").fetchone()[0]
    if str(mode).lower() != "wal":
        raise StoreError(f"{path}: the store needs SQLite's WAL journal, but the folder allows only "
                         f"'{mode}' (a network drive?); put the data folder on a local disk")
    # Commits happen about twice a second, so a sync at each one costs little and keeps
    # committed samples through a power cut, not only through a crash of the process.
    conn.execute("PRAGMA synchronous=FULL")
    conn.execute("PRAGMA foreign_keys=ON")


def _ensure_schema(conn: sqlite3.Connection, path: Path) -> None:
    conn.execute("BEGIN IMMEDIATE")  # two processes opening a new store at once must not both create it
    try:
        version = _stored_version(conn, path)
        if version is None:
            _create(conn)
        elif version > SCHEMA_VERSION:
            raise StoreError(f"{path}: the store has schema version {version}, written by a newer "
                             f"harness; this one reads up to version {SCHEMA_VERSION}; upgrade the harness")
        elif version == 1:
            _upgrade_from_1(conn)
        elif version < SCHEMA_VERSION:
            raise StoreError(f"{path}: schema version {version} is older than any this harness knows")
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise


def _stored_version(conn: sqlite3.Connection, path: Path) -> int | None:
    names = {row[0] for row in conn.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    if "meta" not in names:
        if names:
            raise StoreError(f"{path}: this SQLite file is not a harness store (no meta table)")
        return None
    row = conn.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
    try:
        return int(row[0])
    except (TypeError, ValueError) as exc:
        raise StoreError(f"{path}: the store's meta table has no valid schema_version") from exc


def _upgrade_from_1(conn: sqlite3.Connection) -> None:
    """Version 1 to 2: the approvals table; nothing else changes."""
    for statement in (APPROVALS_TABLE, *APPROVALS_APPEND_ONLY):
        conn.execute(statement)
    conn.execute("UPDATE meta SET value = ? WHERE key = 'schema_version'", (str(SCHEMA_VERSION),))


def _create(conn: sqlite3.Connection) -> None:
    for statement in (*TABLES, *APPROVALS_APPEND_ONLY):
        conn.execute(statement)
    conn.executemany("INSERT INTO meta (key, value) VALUES (?, ?)",
                     [("schema_version", str(SCHEMA_VERSION)), ("application", APPLICATION)])
