"""A stored run read for its report from a SQLite store, through Python's ``sqlite3`` alone.

``harness report`` only reads, and on SQLite the store's statements run on the driver's own
connection anyway (:mod:`harness.store.connection`); SQLAlchemy is there to write each back
end's SQL, create and migrate the layout. Importing it costs a report 27 MB of its peak memory and
0.15 s, so a report of a SQLite store whose layout is current reads through :class:`RunReader`;
any other store (a server, a layout to migrate, a URL with options) opens as :class:`Store`.

The rows come back exactly as :class:`Store` gives them (the shared conversions are in
:mod:`harness.store.rows`); ``tests/store/test_store_reader.py`` compares the two on one run.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path
from typing import Any, Iterable, Iterator

import numpy as np

from harness.store import journal, rows
from harness.store.database import BUSY_TIMEOUT_S
from harness.store.errors import StoreError
from harness.store.paths import run_folder
from harness.store.version import SCHEMA_VERSION

SAMPLE_CHUNK = 4096  # as Store.sample_chunks
_PREFIX = "sqlite:///"


def open_reader(url: str, folder: Path | None = None) -> RunReader | None:
    """A reader of the SQLite store at ``url`` (see :func:`harness.store.store_url`), or None
    where :class:`Store` must open it: a server, an option in the URL, no such file, a layout
    that is not this harness's current one, a file that is not a store."""
    if not url.startswith(_PREFIX) or any(c in url for c in "?%#"):
        return None
    path = Path(url[len(_PREFIX):])
    if not path.is_file():
        return None
    try:
        db = sqlite3.connect(path, timeout=BUSY_TIMEOUT_S)
    except sqlite3.Error:
        return None
    try:
        found = db.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
    except sqlite3.Error:
        found = None
    if found is None or found[0] != str(SCHEMA_VERSION):
        db.close()
        return None
    return RunReader(db, path, path.parent if folder is None else folder, url)


class RunReader:
    """The reading half of :class:`Store` that a run's report needs, on one SQLite connection."""

    def __init__(self, db: sqlite3.Connection, path: Path, folder: Path, url: str):
        self._db, self.path, self.folder, self.url = db, path, folder, url

    def __enter__(self) -> RunReader:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        self._db.close()

    def run_folder(self, run_id: str) -> Path:
        return run_folder(run_id, self.folder)

    def journal(self, run_id: str) -> Path | None:
        return journal.find_journal(run_id, self.folder)

    def resolve(self, run_id_or_prefix: str) -> str:
        key = rows.run_key(run_id_or_prefix)
        found = [r["run_id"] for r in self._dicts(
            "SELECT run_id FROM runs WHERE substr(run_id, 1, ?) = ? ORDER BY run_id LIMIT 6", (len(key), key))]
        return rows.chosen_run(key, found, self.path)

    def run(self, run_id_or_prefix: str) -> dict[str, Any]:
        run_id = self.resolve(run_id_or_prefix)
        found = rows.run_row(self._dicts("SELECT * FROM runs WHERE run_id = ?", (run_id,))[0])
        found.update(steps=self.steps(run_id), events=self.events(run_id),
                     instruments=self.instruments(run_id), readings=self.readings(run_id))
        return found

    def steps(self, run_id: str) -> list[dict[str, Any]]:
        return self._dicts("SELECT step_index, kind, name, started, finished, status FROM steps "
                           "WHERE run_id = ? ORDER BY step_index", (self.resolve(run_id),))

    def events(self, run_id: str) -> list[dict[str, Any]]:
        found = self._dicts("SELECT id, t, wall, kind, text, data FROM events WHERE run_id = ? ORDER BY id",
                            (self.resolve(run_id),))
        return [rows.event_row(e) for e in found]

    def instruments(self, run_id: str) -> list[dict[str, Any]]:
        return self._dicts(f"SELECT {', '.join(rows.INSTRUMENT_FIELDS)} FROM instruments WHERE run_id = ? "
                           "ORDER BY role", (self.resolve(run_id),))

    def readings(self, run_id: str) -> list[dict[str, Any]]:
        found = self._dicts("SELECT * FROM readings WHERE run_id = ? ORDER BY id", (self.resolve(run_id),))
        return [rows.reading_row(r) for r in found]

    def approvals(self, run_id: str) -> dict[str, Any]:
        now = self._dicts("SELECT results FROM runs WHERE run_id = ?", (run_id,))
        found = self._dicts("SELECT approved, name, role, note, results_sha256 FROM approvals "
                            "WHERE run_id = ? ORDER BY id", (run_id,))
        return rows.approval_summary(now[0]["results"] if now else None, bool(now), found)

    def sample_chunks(self, run_id: str, columns: Iterable[str] | None = None,
                      chunk: int = SAMPLE_CHUNK) -> Iterator[dict[str, np.ndarray]]:
        """As :meth:`Store.sample_chunks`: numpy columns, ``chunk`` rows at a time in id order,
        each page one short query (keyset paging on the clustered key)."""
        names = rows.sample_column_names(columns)
        if type(chunk) is not int or chunk < 1:
            raise StoreError(f"a chunk is a whole number of rows >= 1, got {chunk!r}")
        numeric = tuple(n for n in names if n != "tag")
        read = numeric if "id" in numeric else ("id", *numeric)
        run_id = self.resolve(run_id)
        page_sql = f"SELECT {', '.join(read)} FROM samples WHERE run_id = ? AND id > ? ORDER BY id LIMIT ?"
        tags_sql = ("SELECT id, tag FROM samples WHERE run_id = ? AND id >= ? AND id <= ? AND tag IS NOT NULL "
                    "ORDER BY id")
        key, last = read.index("id"), -1
        while True:
            page = self._rows(page_sql, (run_id, last, chunk))
            if not page:
                return
            last = page[-1][key]
            found = rows.numeric_columns(page, read)
            if "tag" in names:
                ids = found["id"]
                found["tag"] = rows.tag_column(len(ids), ids, self._rows(tags_sql, (run_id, int(ids[0]), int(ids[-1]))))
            yield {name: found[name] for name in names}
            if len(page) < chunk:
                return

    def _rows(self, sql: str, params: tuple[Any, ...]) -> list[Any]:
        try:
            return self._db.execute(sql, params).fetchall()
        except sqlite3.Error as exc:
            raise StoreError(f"{self.path}: {exc}") from exc

    def _dicts(self, sql: str, params: tuple[Any, ...]) -> list[dict[str, Any]]:
        try:
            return rows.dicts(self._db.execute(sql, params))
        except sqlite3.Error as exc:
            raise StoreError(f"{self.path}: {exc}") from exc
