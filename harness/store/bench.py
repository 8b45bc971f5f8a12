"""Throughput of the store: raw samples per second through add_sample and the commits.

By default a scratch SQLite store; ``store=URL`` measures that store (a PostgreSQL lab database,
say), into which it writes one finished run of the unit ``store benchmark``: use a scratch
database where that matters.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path
from typing import Any

from harness.store.errors import StoreError
from harness.store.store import Store


def _fill(store: Store, run_id: str, n: int) -> None:
    for i in range(n):
        store.add_sample(run_id, 0, i * 0.02, 0, 230.1, 229.4, 1.25, 151.0, 50.0, 231.0)


def _database_bytes(folder: Path) -> int:
    return sum(p.stat().st_size for p in folder.glob("harness.sqlite*"))


def _measure(store: Store, n: int) -> dict[str, Any]:
    run_id = store.begin_run(unit="store benchmark", lab="bench", station_name="bench", sequence_text="",
                             station_text=None, software_version="bench", simulated=None)
    store.begin_step(run_id, 0, "measure", "bench")
    start = time.perf_counter()
    _fill(store, run_id, n)
    added = time.perf_counter()
    store.flush()
    done = time.perf_counter()
    store.end_step(run_id, 0, "done")
    store.finish_run(run_id, "passed", 0, None, None, None)
    stored = store.run(run_id)["samples"]
    return {"store": str(store.path), "samples": n, "stored": stored, "seconds": done - start,
            "samples_per_s": n / (done - start), "add_sample_us": (added - start) / n * 1e6,
            "final_flush_s": done - added}


def bench_store(n: int = 100_000, store: str | None = None) -> dict[str, Any]:
    """Time ``n`` add_sample calls and the flush that commits the last of them."""
    if type(n) is not int or n < 1:
        raise StoreError(f"the store benchmark needs a whole number of samples >= 1, got {n!r}")
    with tempfile.TemporaryDirectory(prefix="harness-bench-") as scratch:
        if store is not None:
            with Store(Path(scratch), url=store) as opened:
                return _measure(opened, n)
        with Store(Path(scratch)) as opened:
            figures = _measure(opened, n)
        return {**figures, "bytes_per_sample": _database_bytes(Path(scratch)) / n}
