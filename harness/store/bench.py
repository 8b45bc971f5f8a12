"""Throughput of the store: raw samples per second through add_sample and the commits."""

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


def bench_store(n: int = 100_000) -> dict[str, Any]:
    """Time ``n`` add_sample calls and the flush that commits the last of them, in a scratch store."""
    if type(n) is not int or n < 1:
        raise StoreError(f"the store benchmark needs a whole number of samples >= 1, got {n!r}")
    with tempfile.TemporaryDirectory(prefix="harness-bench-") as scratch:
        with Store(Path(scratch)) as store:
            run_id = store.begin_run(unit="bench", lab="bench", station_name="bench", sequence_text="",
                                     station_text=None, software_version="bench", simulated=None)
            store.begin_step(run_id, 0, "measure", "bench")
            start = time.perf_counter()
            _fill(store, run_id, n)
            added = time.perf_counter()
            store.flush()
            done = time.perf_counter()
            stored = store.runs()[-1]["samples"]
        size = _database_bytes(Path(scratch))
    return {"samples": n, "stored": stored, "seconds": done - start, "samples_per_s": n / (done - start),
            "add_sample_us": (added - start) / n * 1e6, "final_flush_s": done - added,
            "bytes_per_sample": size / n}
