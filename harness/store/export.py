"""Raw samples out of the store: CSV always, Parquet when pyarrow is installed.

Both files are written from the same chunks of numpy columns (``Store.sample_chunks``), a chunk
at a time, so memory stays bounded whatever the run's length. With pyarrow each chunk becomes
one Arrow table (built on the numpy buffers, no copy) that goes to both files: Arrow writes CSV
in C++ and formats each float in its shortest exact form (``270`` for 270.0, ``0.05``), many
times faster than Python's ``csv`` module, which is the fallback without pyarrow (``repr``, the
same values: ``270.0``). A chunk is written on a thread of its own while the next is read: the
writers release the interpreter's lock, so reading and writing share the two cores.

NULL (no value) and NaN are both an empty CSV field and a null in Parquet: SQLite keeps a NaN
as NULL, so the store does not tell them apart.
"""

from __future__ import annotations

import csv
import os
from concurrent.futures import Future, ThreadPoolExecutor
from pathlib import Path
from typing import Any, Iterable

import numpy as np

from harness.store.errors import StoreError
from harness.store.paths import ensure_folder
from harness.store.rows import SAMPLE_COLUMNS

# Column names with their SI unit, as the results contract writes keys. The setpoint is the
# AC source's voltage setpoint: current targets are reached by setting the source voltage.
EXPORT_NAMES = ("id", "step_index", "t_s", "wall_s", "channel", "u_rms_V", "u_mean_V", "i_rms_A", "p_W",
                "freq_Hz", "setpoint_V", "tag")
_WHOLE = ("id", "step_index", "channel")
_REPEATING = ("step_index", "channel", "tag")


def target(path: str | Path, run_id: str, suffix: str) -> Path:
    """The file to write: ``path`` itself, or ``<run_id>-samples.<suffix>`` inside a folder."""
    path = Path(path)
    if path.is_dir():
        path = path / f"{run_id}-samples.{suffix}"
    ensure_folder(path.parent)
    return path


def pyarrow_or_none() -> Any:
    """The pyarrow module, or None when it is not installed.

    Arrow's buffers come from the C library's allocator, not Arrow's own jemalloc pool: the
    chunks here are small and short-lived, and the pool's arenas alone cost about 10 MB of
    resident memory (measured on ``harness report``).
    """
    # Said before the first import too: jemalloc is set up when pyarrow loads, unless told not to.
    os.environ.setdefault("ARROW_DEFAULT_MEMORY_POOL", "system")
    try:
        import pyarrow
    except ImportError:
        return None
    pyarrow.set_memory_pool(pyarrow.system_memory_pool())
    return pyarrow


def require_pyarrow() -> Any:
    if pyarrow_or_none() is None:
        raise StoreError("Parquet export needs pyarrow, which is not installed (pip install pyarrow); "
                         "CSV export works without it")
    import pyarrow.parquet as pq
    return pq


def write_samples(chunks: Iterable[dict[str, np.ndarray]], *, csv_path: Path | None = None,
                  parquet_path: Path | None = None) -> None:
    """Write chunks of sample columns (see ``Store.sample_chunks``) to a CSV file, a Parquet
    file (one row group per chunk) or both; a run without samples gets files with the columns
    and no rows."""
    with SampleFiles(csv_path=csv_path, parquet_path=parquet_path) as files:
        for columns in chunks:
            files.add(columns)


class SampleFiles:
    """samples.csv and/or samples.parquet written a chunk of numpy columns at a time.

    ``add`` hands the chunk to a writing thread and returns once the chunk before it is
    written: at most two chunks are held, and a failure to write comes out of the next ``add``
    or of ``close``.
    """

    def __init__(self, *, csv_path: Path | None = None, parquet_path: Path | None = None):
        self._pa = pyarrow_or_none()
        if parquet_path is not None:
            require_pyarrow()
        self._sinks: list[Any] = []
        try:
            if csv_path is not None:
                self._sinks.append(_arrow_csv(csv_path, self._pa) if self._pa else _PythonCsv(csv_path))
            if parquet_path is not None:
                self._sinks.append(_parquet(parquet_path, self._pa))
        except BaseException:
            self._close_sinks()
            raise
        self._pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="harness-export")
        self._pending: Future[None] | None = None

    def add(self, columns: dict[str, np.ndarray]) -> None:
        self._wait()
        self._pending = self._pool.submit(self._write, columns)

    def _write(self, columns: dict[str, np.ndarray]) -> None:
        table = arrow_table(self._pa, columns) if self._pa else None
        for sink in self._sinks:
            sink.add(table if sink.takes_arrow else columns)

    def _wait(self) -> None:
        pending, self._pending = self._pending, None
        if pending is not None:
            pending.result()

    def close(self) -> None:
        try:
            self._wait()
        finally:
            self._pool.shutdown(wait=True)
            self._close_sinks()

    def _close_sinks(self) -> None:
        for sink in self._sinks:
            sink.close()

    def __enter__(self) -> SampleFiles:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def arrow_schema(pa: Any) -> Any:
    """One schema for every chunk: a chunk whose tags are all absent must not make the column null."""
    kinds = {"id": pa.int64(), "step_index": pa.int64(), "channel": pa.int64(), "tag": pa.string()}
    return pa.schema([(name, kinds.get(key, pa.float64())) for name, key in zip(EXPORT_NAMES, SAMPLE_COLUMNS)])


def arrow_table(pa: Any, columns: dict[str, np.ndarray]) -> Any:
    """One chunk of sample columns as an Arrow table under :func:`arrow_schema`'s names.

    Built with ``Array.from_buffers`` on the numpy memory: ``pa.array`` on a numpy array would
    import pandas, which costs about 50 MB and a quarter of a second.
    """
    arrays = []
    for key in SAMPLE_COLUMNS:
        values = columns[key]
        if key == "tag":
            arrays.append(_text_array(pa, values))
        elif key in _WHOLE:
            arrays.append(pa.Array.from_buffers(pa.int64(), len(values),
                                                [None, pa.py_buffer(np.ascontiguousarray(values, dtype=np.int64))]))
        else:
            numbers = np.ascontiguousarray(values, dtype=np.float64)
            missing = np.isnan(numbers)
            valid = pa.py_buffer(np.packbits(~missing, bitorder="little")) if missing.any() else None
            arrays.append(pa.Array.from_buffers(pa.float64(), len(numbers), [valid, pa.py_buffer(numbers)]))
    return pa.Table.from_arrays(arrays, schema=arrow_schema(pa))


def _text_array(pa: Any, values: np.ndarray) -> Any:
    """An Arrow string array of text or None (offsets and bytes built here, as for the numbers)."""
    present = np.not_equal(values, None)
    encoded = [v.encode("utf-8") for v in values[present]]
    lengths = np.zeros(len(values), dtype=np.int64)
    lengths[present] = [len(b) for b in encoded]
    offsets = np.concatenate([[0], np.cumsum(lengths)])
    if offsets[-1] >= 2**31:
        raise StoreError("the tags of one chunk of samples exceed 2 GiB")
    valid = None if present.all() else pa.py_buffer(np.packbits(present, bitorder="little"))
    return pa.Array.from_buffers(pa.string(), len(values),
                                 [valid, pa.py_buffer(offsets.astype(np.int32)), pa.py_buffer(b"".join(encoded))])


class _ArrowFile:
    """A CSV or Parquet file written by Arrow, one table per chunk."""

    takes_arrow = True

    def __init__(self, path: Path, open_writer: Any):
        self.path = path
        try:
            self._writer = open_writer(str(path))
        except OSError as exc:
            raise StoreError(f"cannot write {path}: {exc}") from exc

    def add(self, table: Any) -> None:
        try:
            self._writer.write_table(table)
        except OSError as exc:
            raise StoreError(f"cannot write {self.path}: {exc}") from exc

    def close(self) -> None:
        self._writer.close()


def _arrow_csv(path: Path, pa: Any) -> _ArrowFile:
    import pyarrow.csv as pcsv

    return _ArrowFile(path, lambda where: pcsv.CSVWriter(where, arrow_schema(pa)))


def _parquet(path: Path, pa: Any) -> _ArrowFile:
    import pyarrow.parquet as pq

    # dictionary encoding only where values repeat: on measured floats it costs time and size
    return _ArrowFile(path, lambda where: pq.ParquetWriter(where, arrow_schema(pa), use_dictionary=list(_REPEATING)))


class _PythonCsv:
    """The CSV without pyarrow: Python's ``csv`` module, floats by ``repr`` (shortest exact form)."""

    takes_arrow = False

    def __init__(self, path: Path):
        self.path = path
        try:
            self._handle = path.open("w", newline="", encoding="utf-8")
            self._writer = csv.writer(self._handle, lineterminator="\n")
            self._writer.writerow(EXPORT_NAMES)
        except OSError as exc:
            raise StoreError(f"cannot write {path}: {exc.strerror or exc}") from exc

    def add(self, columns: dict[str, np.ndarray]) -> None:
        lists = []
        for key in SAMPLE_COLUMNS:
            values = columns[key]
            if key not in _WHOLE and key != "tag" and np.isnan(values).any():
                values = np.where(np.isnan(values), None, values.astype(object))
            lists.append(values.tolist())
        try:
            self._writer.writerows(zip(*lists))
        except OSError as exc:
            raise StoreError(f"cannot write {self.path}: {exc.strerror or exc}") from exc

    def close(self) -> None:
        self._handle.close()
