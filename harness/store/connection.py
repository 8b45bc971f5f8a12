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
        if self.dialect_name == "sqlite":
            self._raw.isolation_level = ""  # the driver begins a transaction before the first write

    def sql(self, statement: Any) -> tuple[str, list[Any]]:
        """The statement's SQL for this back end and its parameters in order."""
        compiled = statement.compile(dialect=self._dialect)
        return str(compiled), [compiled.params[name] for name in (compiled.positiontup or ())]

    def execute(self, statement: Any) -> Any:
        """Run a Core statement; the driver's cursor."""
        text, params = self.sql(statement)
        return self.run(text, params)

    def run(self, text: str, params: Any = ()) -> Any:
        cursor = self._raw.cursor()
        cursor.execute(text, params)
        return cursor

    def run_many(self, text: str, rows: list[tuple[Any, ...]]) -> int:
        """``text`` once per row; how many rows it changed."""
        cursor = self._raw.cursor()
        cursor.executemany(text, rows)
        return int(cursor.rowcount)

    def dicts(self, statement: Any) -> list[dict[str, Any]]:
        cursor = self.execute(statement)
        names = [d[0] for d in cursor.description]
        return [dict(zip(names, row)) for row in cursor.fetchall()]

    def tuples(self, statement: Any) -> Iterator[tuple[Any, ...]]:
        return iter(self.execute(statement).fetchall())

    def commit(self) -> None:
        self._raw.commit()

    def rollback(self) -> None:
        if not self._dropped():
            self._raw.rollback()

    def close(self) -> None:
        try:
            self._pooled.close()
        except self.errors:
            pass  # a server gone away: nothing more to say to it

    def _dropped(self) -> bool:
        return bool(getattr(self._raw, "closed", False)) or getattr(self._raw, "broken", False) is True

    def begin(self) -> None:
        """Before a transaction's first statement: a connection the server dropped is opened anew."""
        if self._dropped():
            self._pooled.invalidate()
            self._open()
