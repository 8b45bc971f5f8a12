"""Small helpers shared by the store tests."""

from __future__ import annotations

import sqlite3
from pathlib import Path
from typing import Any

from harness.store import Store
from harness.store.connection import Connection
from harness.store.database import create

RUN_FIELDS: dict[str, Any] = {
    "unit": "NT-0412 (50 kVA, 6600/415 V)", "lab": "Northfield Test Bay", "station_name": "bay-2",
    "sequence_text": "format: 1\nsteps: []\n", "station_text": "format: 1\nname: bay-2\n",
    "software_version": "0.1.0", "simulated": {"scenario": "routine", "fault": None},
}


def begin(store: Store, **changes: Any) -> str:
    return store.begin_run(**{**RUN_FIELDS, **changes})


def add(store: Store, run_id: str, n: int, *, step: int = 0, start: int = 0) -> list[int]:
    """Add n plausible no-load samples; return their ids."""
    return [store.add_sample(run_id, step, 0.1 * (start + i), 0, 415.0 + i, 414.2, 2.1, 160.0, 50.0, 415.0)
            for i in range(n)]


def committed(where: Store | Path, sql: str = "SELECT COUNT(*) FROM samples", params: tuple[Any, ...] = ()) -> Any:
    """What another connection (another process, say) sees in the store now: a SQLite file's
    path, or a store of any back end (SQL written with ``?`` marks)."""
    if isinstance(where, Path):
        reader = sqlite3.connect(where)
        try:
            return reader.execute(sql, params).fetchone()[0]
        finally:
            reader.close()
    return execute(where, sql, params)


def execute(store: Store, sql: str, params: tuple[Any, ...] = ()) -> Any:
    """Run one statement on a connection of its own, committed; the first value it returns."""
    engine = create(store.url)
    conn = Connection(engine)
    try:
        cursor = conn.run(sql if conn.dialect_name == "sqlite" else sql.replace("?", "%s"), params)
        row = cursor.fetchone() if cursor.description else None
        conn.commit()
        return None if row is None else row[0]
    finally:
        conn.close()
        engine.dispose()
