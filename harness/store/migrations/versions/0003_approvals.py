"""Schema version 3: approvals, append-only sign-off rows of a finished run.

Each row keeps who checked or approved the run, in what role, when, and the SHA-256 of the
results as they were stored then, so a later change of the results is provable. The database
refuses to change or remove a row: triggers on SQLite, a trigger function on PostgreSQL.

Revision ID: 0003
Revises: 0002
"""

import sqlalchemy as sa
from alembic import op

from harness.store.migrate import set_version

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None

_REFUSAL = "approvals are append-only"


def upgrade() -> None:
    op.create_table(
        "approvals",
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("run_id", sa.Text, sa.ForeignKey("runs.run_id"), nullable=False),
        sa.Column("approved", sa.Text, nullable=False),
        sa.Column("name", sa.Text, nullable=False),
        sa.Column("role", sa.Text, nullable=False),
        sa.Column("note", sa.Text),
        sa.Column("results_sha256", sa.Text, nullable=False),
    )
    op.create_index("approvals_by_run", "approvals", ["run_id", "id"])
    if op.get_bind().dialect.name == "postgresql":
        op.execute(sa.text(f"CREATE FUNCTION approvals_append_only() RETURNS trigger LANGUAGE plpgsql AS "
                           f"$$ BEGIN RAISE EXCEPTION '{_REFUSAL}'; END $$"))
        op.execute(sa.text("CREATE TRIGGER approvals_no_change BEFORE UPDATE OR DELETE ON approvals "
                           "FOR EACH ROW EXECUTE FUNCTION approvals_append_only()"))
    else:
        for action in ("UPDATE", "DELETE"):
            op.execute(sa.text(f"CREATE TRIGGER approvals_no_{action.lower()} BEFORE {action} ON approvals "
                               f"BEGIN SELECT RAISE(ABORT, '{_REFUSAL}'); END"))
    set_version(3)
