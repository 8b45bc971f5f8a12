"""The exported CSV and Parquet files carry every stored sample exactly, whichever writer wrote them.

The reference is the store itself, read row by row (``Store.sample_pages``: the database driver's
own values), not the numpy columns the exporters are fed. Floats are compared bit for bit
(``struct``), so a value that only prints alike, or a lost sign of zero, fails. The values include
the awkward ends of IEEE 754 binary64 (subnormals, the largest finite, -0.0, infinities) and
tags that need CSV quoting (RFC 4180: comma, quote, line break).
"""

from __future__ import annotations

import csv
import importlib.util
import math
import struct
import sys
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from store_helpers import begin

from harness.store import SAMPLE_COLUMNS
from harness.store.export import EXPORT_NAMES, write_samples

HAS_PYARROW = importlib.util.find_spec("pyarrow") is not None
AWKWARD = [0.0, -0.0, 5e-324, 2.2250738585072014e-308, 1.7976931348623157e308, -1.7976931348623157e308,
           math.inf, -math.inf, 0.1, 0.30000000000000004, 1e-7, 1e21, 123456789012345678.0, 415.0, 2.0 ** 53 + 2]
TAGS = ["start", "a,b", 'he said "on"', "line\nbreak", "Ω-winding", " leading space"]
CHUNK = 97  # several chunks and a short last one
WHOLE = ("id", "step_index", "channel")


def _fill(store: Any, *, drawn_plain: bool = False) -> str:
    """A run of 1000 samples on 3 steps and 3 channels, awkward values in every float column
    (only in the columns the figures do not draw when ``drawn_plain``)."""
    rng = np.random.default_rng(20240611)
    run_id = begin(store)
    n = 1000
    values = rng.standard_normal((n, 6)) * 10.0 ** rng.integers(-12, 12, size=(n, 6))
    awkward_columns = (1, 4, 5) if drawn_plain else range(6)  # u_mean, freq, setpoint: not drawn
    for k in range(n):
        row: list[Any] = values[k].tolist()
        if drawn_plain:
            row[0], row[2], row[3] = 415.0 + k % 5, 2.0 + 0.01 * (k % 7), 160.0 + k % 3
        column = tuple(awkward_columns)[k % len(awkward_columns)]
        row[column] = AWKWARD[k % len(AWKWARD)]
        if k % 7 == 3:
            row[tuple(awkward_columns)[(k // 7) % len(awkward_columns)]] = None  # the instrument gives no value
        tag = TAGS[k % len(TAGS)] if k % 13 == 0 else None
        store.add_sample(run_id, k // 400, 0.05 * k, k % 3, *row, tag)
    return run_id


@pytest.fixture
def awkward_run(open_store):
    with open_store() as store:
        yield store, _fill(store)


def _stored(store: Any, run_id: str) -> list[tuple[Any, ...]]:
    """Every sample as the store holds it (a NaN the server kept counts as no value, as exported)."""
    rows = [row for page in store.sample_pages(run_id) for row in page]
    return [tuple(None if isinstance(v, float) and math.isnan(v) else v for v in row) for row in rows]


def _same(expected: tuple[Any, ...], found: tuple[Any, ...]) -> bool:
    def bits(v: Any) -> Any:
        return struct.pack("<d", v) if isinstance(v, float) else v
    return [bits(v) for v in expected] == [bits(v) for v in found]


def _read_csv(path: Path) -> list[tuple[Any, ...]]:
    with path.open(newline="", encoding="utf-8") as handle:
        reader = csv.reader(handle)
        assert tuple(next(reader)) == EXPORT_NAMES
        table = []
        for fields in reader:
            row: list[Any] = []
            for name, text in zip(SAMPLE_COLUMNS, fields):
                if name in WHOLE:
                    row.append(int(text))
                elif name == "tag":
                    row.append(text or None)
                else:
                    row.append(float(text) if text else None)
            table.append(tuple(row))
    return table


def _check_every_sample(expected: list[tuple[Any, ...]], found: list[tuple[Any, ...]]) -> None:
    assert len(found) == len(expected)
    wrong = [(e, f) for e, f in zip(expected, found) if not _same(e, f)]
    assert not wrong, f"{len(wrong)} samples differ, first: {wrong[0]}"


@pytest.mark.skipif(not HAS_PYARROW, reason="needs pyarrow")
def test_csv_and_parquet_written_by_arrow_carry_every_sample(awkward_run, tmp_path, monkeypatch):
    import pyarrow.parquet as pq

    monkeypatch.setenv("ARROW_DEFAULT_MEMORY_POOL", "system")
    store, run_id = awkward_run
    expected = _stored(store, run_id)
    csv_path, parquet_path = tmp_path / "s.csv", tmp_path / "s.parquet"
    write_samples(store.sample_chunks(run_id, chunk=CHUNK), csv_path=csv_path, parquet_path=parquet_path)
    _check_every_sample(expected, _read_csv(csv_path))
    table = pq.read_table(parquet_path)
    assert table.column_names == list(EXPORT_NAMES)
    columns = table.to_pydict()
    _check_every_sample(expected, list(zip(*(columns[name] for name in EXPORT_NAMES))))


def test_csv_without_pyarrow_carries_every_sample(awkward_run, tmp_path, monkeypatch):
    # pyarrow made unimportable, whether or not the machine has it: the csv module writes the file
    monkeypatch.setenv("ARROW_DEFAULT_MEMORY_POOL", "system")
    for name in ("pyarrow", "pyarrow.csv", "pyarrow.parquet"):
        monkeypatch.setitem(sys.modules, name, None)
    store, run_id = awkward_run
    path = store.export_csv(run_id, tmp_path / "s.csv")
    _check_every_sample(_stored(store, run_id), _read_csv(path))


@pytest.mark.skipif(not HAS_PYARROW, reason="needs pyarrow")
def test_the_report_exports_every_sample(open_store, monkeypatch):
    import pyarrow.parquet as pq

    from harness.runner.reporting import write_run_reports

    monkeypatch.setenv("ARROW_DEFAULT_MEMORY_POOL", "system")
    with open_store() as store:
        run_id = _fill(store, drawn_plain=True)
        for index in range(3):
            store.begin_step(run_id, index, "hold", f"hold {index + 1}")
            store.end_step(run_id, index, "passed")
        store.finish_run(run_id, "passed", 0, None, None, {})
        write_run_reports(store, run_id)
        folder = store.run_folder(run_id)
        expected = _stored(store, run_id)
        _check_every_sample(expected, _read_csv(folder / "samples.csv"))
        columns = pq.read_table(folder / "samples.parquet").to_pydict()
        _check_every_sample(expected, list(zip(*(columns[name] for name in EXPORT_NAMES))))


@pytest.mark.skipif(not HAS_PYARROW, reason="needs pyarrow")
def test_arrow_tables_are_built_without_pandas(tmp_path):
    # pa.array on a numpy array would import pandas (about 50 MB of a report's memory); in a
    # process of its own, where pyarrow has not looked for pandas yet, pandas is made unimportable
    import subprocess

    script = (
        "import sys; sys.modules['pandas'] = None\n"
        "import numpy as np\n"
        "from harness.store.export import pyarrow_or_none, arrow_table\n"
        "n = 5\n"
        "columns = {'id': np.arange(n), 'step_index': np.zeros(n, dtype=np.int64), 't': np.arange(n) * 0.5,\n"
        "           'wall': np.full(n, 1.7e9), 'channel': np.zeros(n, dtype=np.int64), 'u_rms': np.full(n, np.nan),\n"
        "           'u_mean': np.ones(n), 'i_rms': np.ones(n), 'p': np.ones(n), 'freq': np.full(n, 50.0),\n"
        "           'setpoint': np.ones(n), 'tag': np.array(['a', None, 'b', None, None], dtype=object)}\n"
        "table = arrow_table(pyarrow_or_none(), columns)\n"
        "print(table.num_rows, table.column('u_rms_V').null_count, table.column('tag').to_pylist())\n"
    )
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True, timeout=120,
                          cwd=Path(__file__).resolve().parents[2])
    assert done.returncode == 0, done.stderr
    assert done.stdout.split("\n")[0] == "5 5 ['a', None, 'b', None, None]"


def test_a_run_without_samples_gets_the_columns_and_no_rows(open_store, tmp_path):
    with open_store() as store:
        run_id = begin(store)
        path = store.export_csv(run_id, tmp_path / "s.csv")
        assert _read_csv(path) == []
        if HAS_PYARROW:
            import pyarrow.parquet as pq
            table = pq.read_table(store.export_parquet(run_id, tmp_path / "s.parquet"))
            assert table.column_names == list(EXPORT_NAMES) and table.num_rows == 0
