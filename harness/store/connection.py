"""The store's one database connection: SQLAlchemy Core statements run on the driver's own
connection, with the transaction in the store's hands.

SQLAlchemy writes the SQL for each back end (its dialects), and creates and migrates the
schema; the statements themselves run on the DBAPI connection (sqlite3, psycopg) with plain
``commit``/``rollback``. The reason: the store is written from a signal handler's reach (an
exception may strike between any two bytecodes of a commit) and SQLAlchemy's own transaction
book-keeping does not survive that, while a driver's connection either is in a transaction
or is not, and ``rollback`` always brings it back (see ``tests/store/test_store_commits.py``).
"""

from __future__ import annotations

import sqlite3
from typing import Any, Iterator

from sqlalchemy.exc import SQLAlchemyError


class Connection:
    """One driver connection of ``engine``, reopened when a server dropped it."""

    def __init__(self, engine: Any):
        self._engine = engine
        self.dialect_name = engine.dialect.name
        # The same dialect with positional parameters: rows go to executemany as tuples.
        self._dialect = type(engine.dialect)(paramstyle="qmark" if self.dialect_name == "sqlite" else "format")
        self.errors: tuple[type[BaseException], ...] = (SQLAlchemyError, sqlite3.Error, engine.dialect.dbapi.Error)
        self._pooled: Any = None
        self._raw: Any = None
        self._open()

    def _open(self) -> None:
        self._pooled = self._engine.raw_connection()
        self._raw = self._pooled.dbapi_connection
        # One cursor for the connection's life: no cursor is left for the garbage collector
        # to finalise in the middle of a commit, where a signal handler's exception would be lost.
        self._cursor = self._raw.cursor()
        self._lost = False
        if self.dialect_name == "sqlite":
            self._raw.isolation_level = ""  # the driver begins a transaction before the first write

    def sql(self, statement: Any) -> tuple[str, list[Any]]:
        """The statement's SQL for this back end and its parameters in order."""
        compiled = statement.compile(dialect=self._dialect)
        return str(compiled), [compiled.params[name] for name in (compiled.positiontup or ())]

    def prepare(self, statement: Any) -> tuple[str, tuple[str, ...], dict[str, Any]]:
        """A statement with named ``bindparam`` values compiled once: its SQL, the names of its
        parameters in order and the values the statement fixed itself (see :meth:`run_prepared`)."""
        compiled = statement.compile(dialect=self._dialect)
        return str(compiled), tuple(compiled.positiontup or ()), dict(compiled.params)

    def run_prepared(self, prepared: tuple[str, tuple[str, ...], dict[str, Any]], **values: Any) -> Any:
        text, names, fixed = prepared
        return self.run(text, [values[name] if name in values else fixed[name] for name in names])

    def execute(self, statement: Any) -> Any:
        """Run a Core statement; the driver's cursor."""
        text, params = self.sql(statement)
        return self.run(text, params)

    def run(self, text: str, params: Any = ()) -> Any:
        self._cursor.execute(text, params)
        return self._cursor

    def insert_rows(self, table: Any, text: str, rows: list[tuple[Any, ...]]) -> int:
        """Insert ``rows`` (all columns of ``table``, in order) with ``text``, the table's one-row
        INSERT that skips rows already there; how many rows went in.

        SQLite takes them through ``executemany`` (one prepared statement, in-process). PostgreSQL
        takes them by COPY into a temporary table of the same columns, then one INSERT ... SELECT
        that skips rows already there: the fast path of the server, and, unlike psycopg's
        pipelined ``executemany``, nothing a signal handler's exception could leave half-unwound
        but the connection itself, which :meth:`rollback` then drops.
        """
        cursor = self._cursor
        if self.dialect_name == "sqlite":
            cursor.executemany(text, rows)
            return int(cursor.rowcount)
        incoming = f"incoming_{table.name}"
        columns = ", ".join(c.name for c in table.columns)
        cursor.execute(f"CREATE TEMPORARY TABLE IF NOT EXISTS {incoming} "
                       f"(LIKE {table.name} INCLUDING DEFAULTS) ON COMMIT DELETE ROWS")
        with cursor.copy(f"COPY {incoming} ({columns}) FROM STDIN") as copy:
            for row in rows:
                copy.write_row(row)
        head = text.partition(" VALUES ")[0]
        cursor.execute(f"{head} SELECT {columns} FROM {incoming} ON CONFLICT DO NOTHING")
        added = int(cursor.rowcount)
        cursor.execute(f"TRUNCATE {incoming}")
        return added

    def dicts(self, statement: Any) -> list[dict[str, Any]]:
        cursor = self.execute(statement)
        names = [d[0] for d in cursor.description]
        return [dict(zip(names, row)) for row in cursor.fetchall()]

    def tuples(self, statement: Any) -> Iterator[tuple[Any, ...]]:
        return iter(self.execute(statement).fetchall())

    def commit(self) -> None:
        self._raw.commit()

    def rollback(self) -> None:
        """Undo the transaction; a connection that cannot (a server gone, a driver left mid-way
        by an interruption) is dropped, and the next transaction opens a new one."""
        if self._dropped():
            return
        try:
            self._raw.rollback()
        except self.errors:
            self._lost = True

    def interrupted(self) -> None:
        """An exception that is not the database's struck in the middle of a transaction (a
        signal handler's): a server's driver may be left mid-exchange, so its connection is let
        go and the next transaction opens a new one. SQLite's driver works in C, between two
        Python bytecodes, so its rollback is enough."""
        if self.dialect_name != "sqlite":
            self._lost = True

    def close(self) -> None:
        try:
            self._pooled.close()
        except self.errors:
            pass  # a server gone away: nothing more to say to it

    def _dropped(self) -> bool:
        return self._lost or bool(getattr(self._raw, "closed", False)) or getattr(self._raw, "broken", False) is True

    def begin(self) -> None:
        """Before a transaction's first statement: a connection the server dropped is opened anew."""
        if self._dropped():
            try:
                self._pooled.invalidate()
            except self.errors:
                pass  # closing a broken connection may fail too; it is let go all the same
            self._open()
