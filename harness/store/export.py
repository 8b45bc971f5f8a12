"""Raw samples out of the store: CSV always, Parquet when pyarrow is installed."""

from __future__ import annotations

import csv
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


def target(path: str | Path, run_id: str, suffix: str) -> Path:
    """The file to write: ``path`` itself, or ``<run_id>-samples.<suffix>`` inside a folder."""
    path = Path(path)
    if path.is_dir():
        path = path / f"{run_id}-samples.{suffix}"
    ensure_folder(path.parent)
    return path


def write_csv(rows: Iterable[tuple[Any, ...]], path: Path) -> Path:
    with CsvSamples(path) as sink:
        sink.add(rows)
    return path


class CsvSamples:
    """A CSV file of raw samples written as the rows come (rows of SAMPLE_COLUMNS).

    Floats are written by repr (shortest exact form); NULL (no value, or NaN) as an empty field.
    """

    def __init__(self, path: Path):
        self.path = path
        try:
            self._handle = path.open("w", newline="", encoding="utf-8")
            self._writer = csv.writer(self._handle)
            self._writer.writerow(EXPORT_NAMES)
        except OSError as exc:
            raise StoreError(f"cannot write {path}: {exc.strerror or exc}") from exc

    def add(self, rows: Iterable[tuple[Any, ...]]) -> None:
        try:
            self._writer.writerows(rows)
        except OSError as exc:
            raise StoreError(f"cannot write {self.path}: {exc.strerror or exc}") from exc

    def close(self) -> None:
        self._handle.close()

    def __enter__(self) -> CsvSamples:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def require_pyarrow() -> Any:
    try:
        import pyarrow.parquet as pq
    except ImportError as exc:
        raise StoreError("Parquet export needs pyarrow, which is not installed (pip install pyarrow); "
                         "CSV export works without it") from exc
    return pq


def write_parquet(chunks: Iterable[dict[str, np.ndarray]], path: Path) -> Path:
    """Write chunks of sample columns (see ``Store.sample_chunks``) as one Parquet file, one row
    group per chunk; a run without samples gets a file with the columns and no rows."""
    with ParquetSamples(path) as sink:
        for columns in chunks:
            sink.add(columns)
    return path


class ParquetSamples:
    """A Parquet file of raw samples written a chunk of numpy columns at a time (one row group
    each); needs pyarrow."""

    def __init__(self, path: Path):
        pq = require_pyarrow()
        import pyarrow as pa

        self.path, self._pa = path, pa
        # One schema for every chunk: a chunk whose tags are all absent must not make the column null.
        kinds = {"id": pa.int64(), "step_index": pa.int64(), "channel": pa.int64(), "tag": pa.string()}
        self._schema = pa.schema([(name, kinds.get(key, pa.float64())) for name, key in zip(EXPORT_NAMES, SAMPLE_COLUMNS)])
        try:
            self._writer = pq.ParquetWriter(path, self._schema)
        except OSError as exc:
            raise StoreError(f"cannot write {path}: {exc}") from exc

    def add(self, columns: dict[str, np.ndarray]) -> None:
        pa, schema = self._pa, self._schema
        table = pa.table({name: pa.array(columns[key], type=schema.field(name).type)
                          for name, key in zip(EXPORT_NAMES, SAMPLE_COLUMNS)}, schema=schema)
        try:
            self._writer.write_table(table)
        except OSError as exc:
            raise StoreError(f"cannot write {self.path}: {exc}") from exc

    def close(self) -> None:
        self._writer.close()

    def __enter__(self) -> ParquetSamples:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()
