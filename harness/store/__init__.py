"""The store: runs, raw samples, events and results in one SQLite database (WAL journal).

The database is ``harness.sqlite`` in the data folder (``./runs``, or ``HARNESS_DATA``); each
run also has a folder ``<data>/<run_id>/`` for its reports and exports.
"""

from harness.store.bench import bench_store
from harness.store.errors import AmbiguousRunError, StoreError, UnknownRunError
from harness.store.paths import DATA_ENV, DATABASE_NAME, data_dir, run_folder
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
    "AmbiguousRunError",
    "Store",
    "StoreError",
    "UnknownRunError",
    "bench_store",
    "data_dir",
    "run_folder",
]
