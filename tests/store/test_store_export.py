"""Raw samples out: arrays, CSV, Parquet; and the throughput benchmark."""

from __future__ import annotations

import csv
import importlib.util
import math
import sys

import numpy as np
import pytest
from store_helpers import begin

from harness.store import SAMPLE_COLUMNS, StoreError, UnknownRunError, bench_store
from harness.store.export import EXPORT_NAMES

HAS_PYARROW = importlib.util.find_spec("pyarrow") is not None
# u_rms, u_mean, i_rms, p, freq, setpoint; None = the analyser gives no mean-rectified value.
VALUES = [
    (0, 0.0, 0, 0.0, 0.0, 0.0, 0.0, 50.0, 0.0, "start"),
    (0, 0.5, 0, 207.5, None, 1.05, 40.25, 50.0, 210.0, None),
    (1, 1.0, 1, 415.1, 414.3, 2.1, 160.0, 49.98, 415.0, "no_load_rated"),
    (1, 1.5, 0, float("nan"), 414.2, 2.1, 160.2, 50.01, 415.0, "overrange"),
]


@pytest.fixture
def filled(tmp_path, open_store):
    with open_store() as store:
        run_id = begin(store)
        for step, t, channel, *rest in VALUES:
            store.add_sample(run_id, step, t, channel, *rest)
        yield store, run_id


def test_samples_come_back_as_columns(filled):
    store, run_id = filled
    columns = store.samples(run_id[:12])
    assert tuple(columns) == SAMPLE_COLUMNS
    assert columns["id"].tolist() == [0, 1, 2, 3] and columns["id"].dtype == np.int64
    assert columns["step_index"].tolist() == [0, 0, 1, 1] and columns["channel"].tolist() == [0, 0, 1, 0]
    assert columns["u_rms"][2] == 415.1 and math.isnan(columns["u_rms"][3])
    assert math.isnan(columns["u_mean"][1]) and columns["freq"].tolist() == [50.0, 50.0, 49.98, 50.01]
    assert columns["tag"].tolist() == ["start", None, "no_load_rated", "overrange"]
    assert np.all(np.diff(columns["wall"]) >= 0)


def test_an_empty_run_has_empty_columns(tmp_path, open_store):
    with open_store() as store:
        columns = store.samples(begin(store))
    assert all(len(c) == 0 for c in columns.values()) and columns["t"].dtype == float


def test_csv_export_round_trips_every_value(filled, tmp_path):
    store, run_id = filled
    path = store.export_csv(run_id, tmp_path / "out" / "samples.csv")
    with path.open(newline="", encoding="utf-8") as handle:
        table = list(csv.DictReader(handle))
    assert list(table[0]) == list(EXPORT_NAMES)
    assert [row["tag"] for row in table] == ["start", "", "no_load_rated", "overrange"]
    for row, (step, t, channel, u_rms, u_mean, i_rms, p, freq, setpoint, _tag) in zip(table, VALUES):
        expected = [step, t, channel, u_rms, u_mean, i_rms, p, freq, setpoint]
        names = ["step_index", "t_s", "channel", "u_rms_V", "u_mean_V", "i_rms_A", "p_W", "freq_Hz", "setpoint_V"]
        read = [float(row[n]) if row[n] else None for n in names]
        assert read == [None if v is None or v != v else float(v) for v in expected]


def test_csv_export_into_a_folder_names_the_file_by_run(filled, tmp_path):
    store, run_id = filled
    assert store.export_csv(run_id, tmp_path) == tmp_path / f"{run_id}-samples.csv"


def test_exporting_an_unknown_run_is_a_clear_error(filled, tmp_path):
    store, _ = filled
    with pytest.raises(UnknownRunError):
        store.export_csv("20990101-000000-0000", tmp_path / "x.csv")


def test_parquet_without_pyarrow_is_a_clear_error(filled, tmp_path, monkeypatch):
    # pyarrow made unimportable here, whether or not the machine has it (None in sys.modules
    # makes the import fail), so the outcome does not depend on what is installed meanwhile.
    monkeypatch.setitem(sys.modules, "pyarrow", None)
    monkeypatch.setitem(sys.modules, "pyarrow.parquet", None)
    store, run_id = filled
    with pytest.raises(StoreError, match="pip install pyarrow"):
        store.export_parquet(run_id, tmp_path / "x.parquet")
    assert not (tmp_path / "x.parquet").exists()


@pytest.mark.skipif(not HAS_PYARROW, reason="needs pyarrow")
def test_parquet_export_round_trips(filled, tmp_path):
    import pyarrow.parquet as pq

    store, run_id = filled
    table = pq.read_table(store.export_parquet(run_id, tmp_path / "x.parquet")).to_pydict()
    assert table["u_rms_V"][2] == 415.1 and table["tag"][1] is None and table["id"] == [0, 1, 2, 3]


def test_bench_store_counts_what_it_stored():
    figures = bench_store(3000)
    assert figures["stored"] == figures["samples"] == 3000
    assert figures["samples_per_s"] > 0 and figures["bytes_per_sample"] > 0


def test_bench_store_takes_a_whole_number():
    with pytest.raises(StoreError, match="whole number"):
        bench_store(0)


def test_chunks_of_any_size_give_the_same_columns(filled):
    store, run_id = filled
    whole = store.samples(run_id)
    for size in (1, 3, 4, 100):
        chunks = list(store.sample_chunks(run_id, chunk=size))
        assert [len(c["id"]) for c in chunks] == [min(size, 4 - k * size) for k in range(len(chunks))]
        joined = {name: np.concatenate([c[name] for c in chunks]) for name in SAMPLE_COLUMNS}
        for name in SAMPLE_COLUMNS:
            assert joined[name].dtype == whole[name].dtype
            assert joined[name].tolist() == whole[name].tolist() or name in ("u_rms", "u_mean")
        np.testing.assert_array_equal(joined["u_rms"], whole["u_rms"])  # NaN where NaN


def test_chosen_columns_and_counts_per_step(filled):
    store, run_id = filled
    columns = store.samples(run_id, ("t", "i_rms"))
    assert tuple(columns) == ("t", "i_rms") and columns["i_rms"].tolist() == [0.0, 1.05, 2.1, 2.1]
    assert store.sample_counts(run_id) == {(0, 0): 2, (1, 0): 1, (1, 1): 1}  # (step, channel) as filled
    with pytest.raises(StoreError, match="unknown sample column"):
        store.samples(run_id, ("t", "volts"))
    with pytest.raises(StoreError, match="whole number"):
        list(store.sample_chunks(run_id, chunk=0))


@pytest.mark.skipif(not HAS_PYARROW, reason="needs pyarrow")
def test_parquet_keeps_one_schema_over_chunks(filled, tmp_path):
    import pyarrow.parquet as pq

    from harness.store.export import write_samples

    store, run_id = filled
    # the second chunk's tag is absent only: it must still be a text column, not a null one
    chunks = list(store.sample_chunks(run_id, chunk=1))
    path = tmp_path / "x.parquet"
    write_samples(iter(chunks[1:2] + chunks), parquet_path=path)
    table = pq.read_table(path)
    assert str(table.schema.field("tag").type) == "string" and table.num_rows == 5
    assert table.to_pydict()["tag"] == [None, "start", None, "no_load_rated", "overrange"]
