"""Bring a store's layout up to this harness's (alembic migrations, in order, in place).

``meta.schema_version`` holds the store's version number; alembic's ``alembic_version`` the
revision of the newest migration applied (revision ``000N`` is version N). A store written
before migrations existed (version 1, no ``alembic_version``) is stamped at ``0001`` and
upgraded from there. Opening a store that is already at this version costs one query and does
not import alembic. A store of a newer version is refused: an older harness cannot know what
the newer layout means.

The whole check-and-upgrade is one transaction that holds the database's write lock (SQLite's
``BEGIN IMMEDIATE``; a transaction-scoped advisory lock on PostgreSQL), so two stations opening
a new or old store at once do not both change it; a failed migration leaves it as it was.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from sqlalchemy import inspect, select, text

from harness.store import schema
from harness.store.errors import StoreError

MIGRATIONS = Path(__file__).with_name("migrations")
_LOCK_KEY = 0x7472616E  # any fixed number: the advisory lock the harness's schema changes take


def revision(version: int) -> str:
    return f"{version:04d}"


def ensure_schema(engine: Any, where: str) -> None:
    """Create the store, or upgrade it to ``schema.SCHEMA_VERSION``; a clear error otherwise."""
    with engine.connect().execution_options(immediate=True) as conn, conn.begin():
        if conn.dialect.name == "postgresql":
            conn.execute(text("SELECT pg_advisory_xact_lock(:key)"), {"key": _LOCK_KEY})
        version = stored_version(conn, where)
        if version == schema.SCHEMA_VERSION:
            return
        if version is not None and version > schema.SCHEMA_VERSION:
            raise StoreError(f"{where}: the store has schema version {version}, written by a newer harness; "
                             f"this one reads up to version {schema.SCHEMA_VERSION}; upgrade the harness")
        upgrade(conn, version)


def stored_version(conn: Any, where: str) -> int | None:
    names = set(inspect(conn).get_table_names())
    if "meta" not in names:
        if names - {"alembic_version"}:
            raise StoreError(f"{where}: this database is not a harness store (no meta table)")
        return None
    value = conn.execute(select(schema.meta.c.value).where(schema.meta.c.key == "schema_version")).scalar()
    try:
        version = int(value)
    except (TypeError, ValueError) as exc:
        raise StoreError(f"{where}: the store's meta table has no valid schema_version") from exc
    if version < 1:
        raise StoreError(f"{where}: schema version {version} is older than any this harness knows")
    return version


def upgrade(conn: Any, version: int | None) -> None:
    """Apply every migration after ``version`` (all of them for a new store) on ``conn``, in
    the transaction the caller holds."""
    from alembic import command
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS))
    config.attributes["connection"] = conn
    if version is not None and "alembic_version" not in inspect(conn).get_table_names():
        command.stamp(config, revision(version))  # written before migrations: it is at its version
    command.upgrade(config, revision(schema.SCHEMA_VERSION))


def set_version(version: int) -> None:
    """Called by each migration: the store's version number in ``meta``."""
    from alembic import op

    op.execute(schema.meta.delete().where(schema.meta.c.key == "schema_version"))
    op.execute(schema.meta.insert().values(key="schema_version", value=str(version)))
