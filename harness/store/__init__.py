"""The store: runs, raw samples, events and results, in SQLite (WAL) or a lab's PostgreSQL database.

The store is named by a URL (``--store``, ``HARNESS_STORE``; by default the SQLite file
``harness.sqlite`` in the data folder, ``./runs`` or ``HARNESS_DATA``); each run also has a
local folder ``<data>/<run_id>/`` for its reports and exports. Callers use it through the
:class:`RunStore` protocol.
"""

from harness.store.bench import bench_store
from harness.store.database import STORE_ENV, store_url
from harness.store.errors import AmbiguousRunError, StoreError, UnknownRunError
from harness.store.paths import DATA_ENV, DATABASE_NAME, data_dir, run_folder
from harness.store.protocol import RunStore
from harness.store.rows import FINAL_STATUSES, QUANTITIES, READING_KEYS, SAMPLE_COLUMNS
from harness.store.schema import SCHEMA_VERSION
from harness.store.store import Store

__all__ = [
    "DATABASE_NAME",
    "DATA_ENV",
    "FINAL_STATUSES",
    "QUANTITIES",
    "READING_KEYS",
    "SAMPLE_COLUMNS",
    "SCHEMA_VERSION",
    "STORE_ENV",
    "AmbiguousRunError",
    "RunStore",
    "Store",
    "StoreError",
    "UnknownRunError",
    "bench_store",
    "data_dir",
    "run_folder",
    "store_url",
]
