"""The store: runs, raw samples, events and results, in SQLite (WAL) or a lab's PostgreSQL database.

The store is named by a URL (``--store``, ``HARNESS_STORE``; by default the SQLite file
``harness.sqlite`` in the data folder, ``./runs`` or ``HARNESS_DATA``); each run also has a
local folder ``<data>/<run_id>/`` for its reports and exports. Callers use it through the
:class:`RunStore` protocol.

The names below are imported on first use: ``harness report`` reads a SQLite store without
SQLAlchemy (:mod:`harness.store.reader`), which importing :class:`Store` would load.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from harness.store.bench import bench_store
    from harness.store.database import STORE_ENV, store_url
    from harness.store.errors import AmbiguousRunError, StoreError, UnknownRunError
    from harness.store.paths import DATA_ENV, DATABASE_NAME, data_dir, run_folder
    from harness.store.protocol import RunStore
    from harness.store.rows import FINAL_STATUSES, QUANTITIES, READING_KEYS, SAMPLE_COLUMNS
    from harness.store.store import Store
    from harness.store.version import SCHEMA_VERSION

_WHERE = {
    "bench_store": "bench", "STORE_ENV": "database", "store_url": "database",
    "AmbiguousRunError": "errors", "StoreError": "errors", "UnknownRunError": "errors",
    "DATA_ENV": "paths", "DATABASE_NAME": "paths", "data_dir": "paths", "run_folder": "paths",
    "RunStore": "protocol", "FINAL_STATUSES": "rows", "QUANTITIES": "rows", "READING_KEYS": "rows",
    "SAMPLE_COLUMNS": "rows", "Store": "store", "SCHEMA_VERSION": "version",
}

__all__ = sorted(_WHERE)


def __getattr__(name: str) -> Any:
    module = _WHERE.get(name)
    if module is None:
        raise AttributeError(f"module 'harness.store' has no attribute {name!r}")
    value = getattr(importlib.import_module(f"harness.store.{module}"), name)
    globals()[name] = value
    return value
