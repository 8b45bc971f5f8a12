"""The report's reader of a SQLite store gives a run exactly as the store does, without SQLAlchemy.

Common practice, no source: a second read path is held to the first by comparing the two on the
same stored run, field by field and array by array.
"""

from __future__ import annotations

import filecmp
import json
import shutil
import sqlite3
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from store_helpers import begin

from harness.store import Store, StoreError, UnknownRunError
from harness.store.database import sqlite_url
from harness.store.reader import open_reader

REPO = Path(__file__).resolve().parents[2]


def _fill(store: Store) -> str:
    """A finished run of two steps, three channels, tags, missing values, events, instruments,
    a reading, results and an approval."""
    run_id = begin(store)
    store.set_instruments(run_id, [{"role": "analyser", "maker": "Northfield", "model": "PA-3", "serial": "0417",
                                    "firmware": "1.2", "resource": "TCPIP::127.0.0.1::5025::SOCKET",
                                    "profile": "pa3", "calibration_due": "2027-02-28"}])
    for step, kind in enumerate(("ramp", "measure")):
        store.begin_step(run_id, step, kind, f"{kind} {step + 1}")
        store.add_event(run_id, 10.0 * step, "step-start", f"step {step + 1}",
                        {"step": step, "limits": {"voltage_V": 520.0, "current_A": 12.0}})
        for k in range(300):
            u = None if k % 11 == 5 else 400.0 + 0.25 * k
            store.add_sample(run_id, step, 10.0 * step + 0.05 * k, k % 3, u, 399.0, 7.5, 1010.0, 50.0, 410.0,
                             "mark, one" if k % 97 == 1 else None)
        store.end_step(run_id, step, "passed")
    store.add_reading(run_id, 1, "load-loss", 300, 599, {"count": 300, "stable": True, "channel": 0,
                                                         "u_rms_mean": 400.0, "u_rms_std": 0.4})
    store.add_event(run_id, 20.0, "warning", "a warning", None)
    store.finish_run(run_id, "passed", 0, None, {"standard": "iec"}, {"loss_W": 1010.0, "warnings": []})
    store.approve(run_id, name="A. Tester", role="tested by")
    return run_id


def _same_columns(a: dict[str, np.ndarray], b: dict[str, np.ndarray]) -> bool:
    return list(a) == list(b) and all(a[k].dtype == b[k].dtype and (
        np.array_equal(a[k], b[k], equal_nan=True) if a[k].dtype != object else a[k].tolist() == b[k].tolist())
        for k in a)


def test_the_reader_gives_the_run_as_the_store_gives_it(tmp_path):
    with Store(tmp_path, background_flush=False) as store:
        run_id = _fill(store)
        other = begin(store)
        store.finish_run(other, "aborted", 3, {"reason": "stopped"}, None, None)
        common = next(i for i, (a, b) in enumerate(zip(run_id, other)) if a != b)  # ids differ from here on
        expected = {"run": store.run(run_id[:common + 1]), "approvals": store.approvals(run_id),
                    "other": store.run(other), "journal": store.journal(run_id)}
        chunks = {(cols, n): list(store.sample_chunks(run_id, cols, n))
                  for cols in (None, ("t", "u_rms", "tag"), ("step_index", "channel"))
                  for n in (4096, 7)}
    with open_reader(sqlite_url(tmp_path / "harness.sqlite")) as reader:
        assert reader.folder == tmp_path and reader.run_folder(run_id) == store.run_folder(run_id)
        assert reader.run(run_id[:common + 1]) == expected["run"] and reader.run(other) == expected["other"]
        assert reader.approvals(run_id) == expected["approvals"] and expected["approvals"]["rows"]
        assert reader.journal(run_id) == expected["journal"]
        for (cols, n), stored in chunks.items():
            read = list(reader.sample_chunks(run_id, cols, n))
            assert len(read) == len(stored) and all(_same_columns(a, b) for a, b in zip(stored, read))
        with pytest.raises(UnknownRunError):
            reader.resolve("19990101")
        with pytest.raises(StoreError):
            reader.resolve(run_id[:common])  # both runs begin so: ambiguous, as the store says
        with pytest.raises(StoreError):
            next(reader.sample_chunks(run_id, ("t", "no such column")))


def test_the_store_opens_what_the_reader_does_not(tmp_path):
    with Store(tmp_path, background_flush=False) as store:
        begin(store)
    url = sqlite_url(tmp_path / "harness.sqlite")
    assert open_reader("postgresql://harness@localhost/lab") is None
    assert open_reader(url + "?mode=ro") is None
    assert open_reader(sqlite_url(tmp_path / "none.sqlite")) is None
    (tmp_path / "plain.sqlite").write_bytes(b"")
    assert open_reader(sqlite_url(tmp_path / "plain.sqlite")) is None  # not a store
    with sqlite3.connect(tmp_path / "harness.sqlite") as db:
        db.execute("UPDATE meta SET value = '2' WHERE key = 'schema_version'")  # a layout to migrate
    assert open_reader(url) is None


def test_harness_report_reads_sqlite_without_sqlalchemy_and_writes_the_same_files(tmp_path):
    data = tmp_path / "data"
    with Store(data, background_flush=False) as store:
        run_id = _fill(store)
        from harness.runner.reporting import write_run_reports
        write_run_reports(store, run_id)  # through the store, as after a run
    folder = data / run_id
    through_store = tmp_path / "through-store"
    shutil.copytree(folder, through_store)
    shutil.rmtree(folder)
    child = ("import sys; from harness.cli import main; code = main(['report', sys.argv[1]]); "
             "print(sorted(m for m in sys.modules if m.split('.')[0] in ('sqlalchemy', 'pandas'))); sys.exit(code)")
    done = subprocess.run([sys.executable, "-c", child, run_id], capture_output=True, text=True, timeout=120,
                          cwd=REPO, env={"PATH": "/usr/bin:/bin", "PYTHONPATH": str(REPO), "HARNESS_DATA": str(data)})
    assert done.returncode == 0, done.stderr
    assert done.stdout.splitlines()[-1] == "[]"
    for name in ("samples.csv", "samples.parquet", "results.json"):
        assert filecmp.cmp(folder / name, through_store / name, shallow=False), name
    assert json.loads((folder / "results.json").read_text()) == json.loads((through_store / "results.json").read_text())
    assert (folder / "report.html").read_text() == (through_store / "report.html").read_text()


def test_the_report_pauses_the_cycle_collector_only_while_it_reads(tmp_path, monkeypatch):
    """The pause is given back after the read, also when the read fails, and a collector the
    caller had paused stays paused."""
    import gc

    from harness.runner import reporting

    with Store(tmp_path, background_flush=False) as store:
        run_id = _fill(store)
    seen: list[bool] = []
    real = reporting._thin

    def watching(*args):
        seen.append(gc.isenabled())
        return real(*args)

    monkeypatch.setattr(reporting, "_thin", watching)
    with open_reader(sqlite_url(tmp_path / "harness.sqlite")) as reader:
        assert gc.isenabled()
        reporting.write_run_reports(reader, run_id)
        assert seen and not any(seen) and gc.isenabled()

        def failing(*args):
            raise RuntimeError("a chunk that cannot be thinned")

        monkeypatch.setattr(reporting, "_thin", failing)
        with pytest.raises(RuntimeError):
            reporting.write_run_reports(reader, run_id)
        assert gc.isenabled()
        gc.disable()
        try:
            monkeypatch.setattr(reporting, "_thin", real)
            reporting.write_run_reports(reader, run_id)
            assert not gc.isenabled()
        finally:
            gc.enable()
