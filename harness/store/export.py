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
    # Floats are written by repr (shortest exact form); NULL (no value, or NaN) as an empty field.
    try:
        with path.open("w", newline="", encoding="utf-8") as handle:
            writer = csv.writer(handle)
            writer.writerow(EXPORT_NAMES)
            writer.writerows(rows)
    except OSError as exc:
        raise StoreError(f"cannot write {path}: {exc.strerror or exc}") from exc
    return path


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
    pq = require_pyarrow()
    import pyarrow as pa

    # One schema for every chunk: a chunk whose tags are all absent must not make the column null.
    kinds = {"id": pa.int64(), "step_index": pa.int64(), "channel": pa.int64(), "tag": pa.string()}
    schema = pa.schema([(name, kinds.get(key, pa.float64())) for name, key in zip(EXPORT_NAMES, SAMPLE_COLUMNS)])
    try:
        with pq.ParquetWriter(path, schema) as writer:
            for columns in chunks:
                writer.write_table(pa.table({name: pa.array(columns[key], type=schema.field(name).type)
                                             for name, key in zip(EXPORT_NAMES, SAMPLE_COLUMNS)}, schema=schema))
    except OSError as exc:
        raise StoreError(f"cannot write {path}: {exc}") from exc
    return path
