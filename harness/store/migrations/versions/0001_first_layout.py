"""Schema version 1: runs, steps, raw samples, events, instruments, readings.

The layout of the stores written before migrations existed, frozen here as it was (not taken
from harness.store.schema, which follows the newest layout).

Revision ID: 0001
Revises:
"""

import sqlalchemy as sa
from alembic import op

from harness.store.migrate import set_version

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None

_STATUSES = "status IN ('running','passed','failed','tripped','aborted','unsafe')"


def _run_ref() -> sa.Column:
    return sa.Column("run_id", sa.Text, sa.ForeignKey("runs.run_id"), nullable=False)


def upgrade() -> None:
    op.create_table("meta", sa.Column("key", sa.Text, primary_key=True), sa.Column("value", sa.Text, nullable=False))
    op.create_table(
        "runs",
        sa.Column("run_id", sa.Text, primary_key=True),
        sa.Column("status", sa.Text, sa.CheckConstraint(_STATUSES), nullable=False),
        sa.Column("exit_code", sa.Integer), sa.Column("started", sa.Text, nullable=False),
        sa.Column("finished", sa.Text), sa.Column("pid", sa.Integer), sa.Column("host", sa.Text),
        sa.Column("process_token", sa.Text), sa.Column("unit", sa.Text, nullable=False),
        sa.Column("lab", sa.Text, nullable=False), sa.Column("station_name", sa.Text, nullable=False),
        sa.Column("sequence_text", sa.Text, nullable=False), sa.Column("sequence_sha256", sa.Text, nullable=False),
        sa.Column("station_text", sa.Text), sa.Column("station_sha256", sa.Text),
        sa.Column("software_version", sa.Text, nullable=False), sa.Column("simulated", sa.Text),
        sa.Column("samples", sa.Integer, nullable=False, server_default="0"),
        sa.Column("trip", sa.Text), sa.Column("record", sa.Text), sa.Column("results", sa.Text))
    op.create_table(
        "steps", _run_ref(), sa.Column("step_index", sa.Integer, nullable=False),
        sa.Column("kind", sa.Text, nullable=False), sa.Column("name", sa.Text, nullable=False),
        sa.Column("started", sa.Text, nullable=False), sa.Column("finished", sa.Text), sa.Column("status", sa.Text),
        sa.PrimaryKeyConstraint("run_id", "step_index"), sqlite_with_rowid=False)
    op.create_table(
        "samples", _run_ref(), sa.Column("id", sa.Integer, nullable=False, autoincrement=False),
        sa.Column("step_index", sa.Integer, nullable=False), sa.Column("t", sa.Float, nullable=False),
        sa.Column("wall", sa.Float, nullable=False), sa.Column("channel", sa.Integer, nullable=False),
        *(sa.Column(name, sa.Float) for name in ("u_rms", "u_mean", "i_rms", "p", "freq", "setpoint")),
        sa.Column("tag", sa.Text), sa.PrimaryKeyConstraint("run_id", "id"), sqlite_with_rowid=False)
    op.create_table(
        "events", sa.Column("id", sa.Integer, primary_key=True), _run_ref(), sa.Column("t", sa.Float),
        sa.Column("wall", sa.Float, nullable=False), sa.Column("kind", sa.Text, nullable=False),
        sa.Column("text", sa.Text, nullable=False), sa.Column("data", sa.Text))
    op.create_index("events_by_run", "events", ["run_id", "id"])
    op.create_table(
        "instruments", _run_ref(), sa.Column("role", sa.Text, nullable=False),
        *(sa.Column(name, sa.Text) for name in ("maker", "model", "serial", "firmware", "resource", "profile",
                                                 "calibration_due")),
        sa.PrimaryKeyConstraint("run_id", "role"), sqlite_with_rowid=False)
    op.create_table(
        "readings", sa.Column("id", sa.Integer, primary_key=True), _run_ref(),
        sa.Column("step_index", sa.Integer, nullable=False), sa.Column("tag", sa.Text, nullable=False),
        sa.Column("channel", sa.Integer), sa.Column("first_id", sa.Integer, nullable=False),
        sa.Column("last_id", sa.Integer, nullable=False), sa.Column("count", sa.Integer, nullable=False),
        *(sa.Column(f"{q}_{s}", sa.Float) for q in ("u_rms", "u_mean", "i_rms", "p", "freq") for s in ("mean", "std")),
        sa.Column("stable", sa.Integer, nullable=False))
    op.create_index("readings_by_run", "readings", ["run_id", "id"])
    op.execute(sa.text("INSERT INTO meta (key, value) VALUES ('application', 'transformer-test-harness')"))
    set_version(1)
