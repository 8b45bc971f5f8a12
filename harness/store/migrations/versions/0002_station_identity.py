"""Schema version 2: the identity of the station that ran each run; runs found by station and unit.

``runs.station_id`` names the bay's computer (``HARNESS_STATION_ID``, else its host name), so
a lab database that gathers the runs of several stations tells them apart. Runs written
before it take their host name.

Revision ID: 0002
Revises: 0001
"""

import sqlalchemy as sa
from alembic import op

from harness.store.migrate import set_version

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.add_column("runs", sa.Column("station_id", sa.Text))
    op.execute(sa.text("UPDATE runs SET station_id = host WHERE station_id IS NULL"))
    op.create_index("runs_by_station", "runs", ["station_id", "started"])
    op.create_index("runs_by_unit", "runs", ["unit"])
    set_version(2)
