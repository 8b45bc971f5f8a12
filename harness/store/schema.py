"""The database layout, one for every back end (SQLAlchemy Core), and its version.

Times: ``runs`` and ``steps`` keep ISO 8601 UTC text (read by people); ``samples`` and
``events`` keep wall time as Unix seconds (a float, cheap on the hot path) beside ``t``, the
bay time in seconds of the shared clock. Quantities are SI (V, A, W, Hz). A not-a-number is
kept as NULL on every back end (SQLite does so itself), so a NaN reading reads back as NaN in
arrays and None in dicts.

The tables here are the newest layout; a store written by an older harness is brought up to
it by the ordered migrations in ``harness/store/migrations/versions`` (see
:mod:`harness.store.migrate`). A change of layout is a new migration and a change here, in the
same commit, and ``SCHEMA_VERSION`` is the number of the newest migration.
"""

from __future__ import annotations

from sqlalchemy import (CheckConstraint, Column, Float, ForeignKey, Index, Integer, MetaData, PrimaryKeyConstraint,
                        Table, Text)

from harness.store.version import SCHEMA_VERSION as SCHEMA_VERSION  # raised there with each migration

APPLICATION = "transformer-test-harness"
STATUSES = ("running", "passed", "failed", "tripped", "aborted", "unsafe")

metadata = MetaData()


def _run_ref() -> Column:
    return Column("run_id", Text, ForeignKey("runs.run_id"), nullable=False)


meta = Table("meta", metadata,
             Column("key", Text, primary_key=True),
             Column("value", Text, nullable=False))

runs = Table(
    "runs", metadata,
    Column("run_id", Text, primary_key=True),
    Column("status", Text, CheckConstraint(f"status IN ({','.join(repr(s) for s in STATUSES)})"), nullable=False),
    Column("exit_code", Integer),
    Column("started", Text, nullable=False),
    Column("finished", Text),
    Column("pid", Integer),
    Column("host", Text),
    Column("process_token", Text),
    Column("unit", Text, nullable=False),
    Column("lab", Text, nullable=False),
    Column("station_name", Text, nullable=False),
    Column("sequence_text", Text, nullable=False),
    Column("sequence_sha256", Text, nullable=False),
    Column("station_text", Text),
    Column("station_sha256", Text),
    Column("software_version", Text, nullable=False),
    Column("simulated", Text),
    Column("samples", Integer, nullable=False, server_default="0"),
    Column("trip", Text),
    Column("record", Text),
    Column("results", Text),
    # Schema version 2: the identity of the station (the bay's computer) that ran it.
    Column("station_id", Text),
)
Index("runs_by_station", runs.c.station_id, runs.c.started)
Index("runs_by_unit", runs.c.unit)

steps = Table(
    "steps", metadata,
    _run_ref(),
    Column("step_index", Integer, nullable=False),
    Column("kind", Text, nullable=False),
    Column("name", Text, nullable=False),
    Column("started", Text, nullable=False),
    Column("finished", Text),
    Column("status", Text),
    PrimaryKeyConstraint("run_id", "step_index"),
    sqlite_with_rowid=False,
)

# Clustered by (run_id, id) on SQLite: a run's samples sit together and appends go to the end.
samples = Table(
    "samples", metadata,
    _run_ref(),
    Column("id", Integer, nullable=False, autoincrement=False),
    Column("step_index", Integer, nullable=False),
    Column("t", Float, nullable=False),
    Column("wall", Float, nullable=False),
    Column("channel", Integer, nullable=False),
    Column("u_rms", Float),
    Column("u_mean", Float),
    Column("i_rms", Float),
    Column("p", Float),
    Column("freq", Float),
    Column("setpoint", Float),
    Column("tag", Text),
    PrimaryKeyConstraint("run_id", "id"),
    sqlite_with_rowid=False,
)

events = Table(
    "events", metadata,
    Column("id", Integer, primary_key=True),
    _run_ref(),
    Column("t", Float),
    Column("wall", Float, nullable=False),
    Column("kind", Text, nullable=False),
    Column("text", Text, nullable=False),
    Column("data", Text),
)
Index("events_by_run", events.c.run_id, events.c.id)

instruments = Table(
    "instruments", metadata,
    _run_ref(),
    Column("role", Text, nullable=False),
    Column("maker", Text),
    Column("model", Text),
    Column("serial", Text),
    Column("firmware", Text),
    Column("resource", Text),
    Column("profile", Text),
    Column("calibration_due", Text),
    PrimaryKeyConstraint("run_id", "role"),
    sqlite_with_rowid=False,
)

_STAT_COLUMNS = [Column(f"{q}_{s}", Float) for q in ("u_rms", "u_mean", "i_rms", "p", "freq") for s in ("mean", "std")]
readings = Table(
    "readings", metadata,
    Column("id", Integer, primary_key=True),
    _run_ref(),
    Column("step_index", Integer, nullable=False),
    Column("tag", Text, nullable=False),
    Column("channel", Integer),
    Column("first_id", Integer, nullable=False),
    Column("last_id", Integer, nullable=False),
    Column("count", Integer, nullable=False),
    *_STAT_COLUMNS,
    Column("stable", Integer, nullable=False),
)
Index("readings_by_run", readings.c.run_id, readings.c.id)

# Schema version 3. Append-only: who checked or approved a finished run, when, and the SHA-256 of
# the results text they approved; the database itself refuses any change or removal of a row
# (triggers, made by the migration for each back end).
approvals = Table(
    "approvals", metadata,
    Column("id", Integer, primary_key=True),
    _run_ref(),
    Column("approved", Text, nullable=False),
    Column("name", Text, nullable=False),
    Column("role", Text, nullable=False),
    Column("note", Text),
    Column("results_sha256", Text, nullable=False),
)
Index("approvals_by_run", approvals.c.run_id, approvals.c.id)
