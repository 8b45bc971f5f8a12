"""harness sync: journals replayed into their store, runs forwarded to a lab database, each
exactly once however often sync runs or wherever it was cut short."""

from __future__ import annotations

import sqlite3
import tempfile

import pytest
from store_helpers import add, begin, committed

from harness.cli import main
from harness.runner.recorder import Recorder, StoreFault
from harness.store import Store, StoreError
from harness.store.sync import sync


@pytest.fixture(autouse=True)
def own_temp_folder(tmp_path, monkeypatch):
    """A journal that falls back to the temp folder lands in this test's own."""
    folder = tmp_path / "temp"
    folder.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(folder))


def _finished_run(store: Store, samples: int = 30) -> str:
    run_id = begin(store)
    store.set_instruments(run_id, [{"role": "analyser", "serial": "A-77"}])
    store.begin_step(run_id, 0, "measure", "no-load")
    add(store, run_id, samples)
    store.add_reading(run_id, 0, "no-load", 0, samples - 1, {"count": samples, "stable": True, "p_mean": 160.0})
    store.end_step(run_id, 0, "passed")
    store.add_event(run_id, 1.5, "note", "first", {"n": 1})
    store.finish_run(run_id, "passed", 0, None, {"record": 1}, {"results": 2})
    return run_id


def _recording(store: Store, samples: int) -> tuple[str, Recorder]:
    """A run recorded through the runner's recorder: one no-load step, ``samples`` samples committed."""
    run_id = begin(store)
    recorder = Recorder(store, run_id)
    recorder.begin_step(run_id, 0, "measure", "no-load")
    for i in range(samples):
        recorder.add_sample(run_id, 0, 0.1 * i, 0, 415.0 + i, 414.0, 2.1, 160.0, 50.0, 415.0)
    store.flush()
    return run_id, recorder


def _whole(store: Store, run_id: str) -> dict:
    run = store.run(run_id)
    for event in run["events"]:
        event.pop("id")
    for reading in run["readings"]:
        reading.pop("id")
    return {**run, "ids": store.samples(run_id)["id"].tolist(), "u": store.samples(run_id)["u_rms"].tolist()}


def test_finished_runs_are_forwarded_whole_and_only_once(tmp_path, open_store):
    with Store(tmp_path / "station") as local, open_store() as lab:
        done = _finished_run(local)
        running = begin(local)
        add(local, running, 5)
        assert sorted((d["run_id"], d["action"]) for d in sync(local, lab)) == sorted([
            (done, "forwarded"), (running, "still running: left for the next sync")])
        assert _whole(lab, done) == _whole(local, done)
        assert [r["run_id"] for r in lab.runs()] == [done]
        assert [d["action"] for d in sync(local, lab)] == ["still running: left for the next sync"]
        local.finish_run(running, "aborted", 4, None, None, None)
        local.amend_outcome(done, "failed", 1, {"cause": "report failed"})
        assert sorted(d["run_id"] for d in sync(local, lab)) == sorted([done, running])
        assert _whole(lab, done) == _whole(local, done) and lab.run(done)["status"] == "failed"
        assert committed(lab, "SELECT COUNT(*) FROM samples") == 35
        assert committed(lab, "SELECT COUNT(*) FROM events") == 1 and len(lab.readings(done)) == 1


def test_a_forward_cut_short_leaves_no_part_of_the_run_and_is_run_again(tmp_path, open_store, monkeypatch):
    with Store(tmp_path / "station") as local, open_store() as lab:
        run_id = _finished_run(local, samples=50)

        def server_gone(*args):
            raise sqlite3.OperationalError("server closed the connection unexpectedly")

        monkeypatch.setattr(lab._conn, "insert_rows", server_gone)
        with pytest.raises(StoreError, match="could not be forwarded.*run `harness sync` again"):
            sync(local, lab)
        monkeypatch.undo()
        assert lab.runs() == [] and committed(lab, "SELECT COUNT(*) FROM steps") == 0
        sync(local, lab)
        assert _whole(lab, run_id) == _whole(local, run_id)


def test_a_journal_is_replayed_into_its_store_exactly_once(tmp_path, open_store, monkeypatch):
    with open_store(background_flush=False) as store:
        run_id, recorder = _recording(store, 10)
        real = store._write_pending

        def server_gone() -> int:
            raise sqlite3.OperationalError("terminating connection due to administrator command")

        monkeypatch.setattr(store, "_write_pending", server_gone)
        for i in range(10, 25):
            try:
                recorder.add_sample(run_id, 0, 0.1 * i, 0, 415.0 + i, 414.0, 2.1, 160.0, 50.0, 415.0)
            except StoreFault:  # what the runner trips on; the sample is in the journal
                pass
        recorder.add_event(run_id, 2.5, "trip", "store failure")
        recorder.end_step(run_id, 0, "tripped")
        recorder.finish_run(run_id, "tripped", 3, {"cause": "store failure"}, None, None)
        recorder.close()
        monkeypatch.setattr(store, "_write_pending", real)
        store._pending.clear()  # what the failed commits held is in the journal: the process ends here
        assert store.journal(run_id) is not None and store.run(run_id)["samples"] == 10

        assert [(d["run_id"], d["samples"]) for d in sync(store)] == [(run_id, 15)]
        assert sync(store) == [] and store.journal(run_id) is None
        run = store.run(run_id)
        assert (run["status"], run["exit_code"], run["samples"]) == ("tripped", 3, 25)
        assert store.samples(run_id)["id"].tolist() == list(range(25))
        assert store.samples(run_id)["u_rms"].tolist() == [415.0 + i for i in range(25)]
        assert [e["text"] for e in run["events"]] == ["store failure"]
        assert [(s["status"], s["finished"] is not None) for s in run["steps"]] == [("tripped", True)]


def test_sync_on_the_command_line(tmp_path, open_store, store_url, capsys, monkeypatch):
    monkeypatch.setenv("HARNESS_DATA", str(tmp_path / "station"))
    monkeypatch.delenv("HARNESS_STORE", raising=False)
    with Store() as local:
        run_id = _finished_run(local)
    assert main(["sync", "--to", store_url]) == 0
    assert f"{run_id}: forwarded (30 samples)" in capsys.readouterr().out
    assert main(["sync", "--to", store_url]) == 0
    assert "0 run(s) touched" in capsys.readouterr().out
    with open_store() as lab:
        assert [r["run_id"] for r in lab.runs()] == [run_id]
    assert main(["sync", "--store", store_url, "--to", store_url]) == 2
    assert "--to names the store sync reads from" in capsys.readouterr().err


def test_a_lab_database_connection_lost_mid_run_loses_nothing_and_sync_completes_the_run(postgres_schema, tmp_path):
    """The server ends the store's connection mid-run (as when it is stopped): the run's writes go
    to the journal from there (the runner trips on the fault), and sync writes them back once."""
    import psycopg

    with Store(tmp_path, url=postgres_schema, background_flush=False) as store:
        run_id, recorder = _recording(store, 20)
        backend = store._conn._raw.info.backend_pid  # the store's own server process
        with psycopg.connect(postgres_schema, autocommit=True) as admin:
            assert admin.execute("SELECT pg_terminate_backend(%s)", (backend,)).fetchone()[0] is True
        faults = 0
        for i in range(20, 32):
            try:
                recorder.add_sample(run_id, 0, 0.1 * i, 0, 415.0 + i, 414.0, 2.1, 160.0, 50.0, 415.0)
            except StoreFault:
                faults += 1
        recorder.add_event(run_id, 3.2, "trip", "store failure")
        recorder.end_step(run_id, 0, "tripped")
        recorder.finish_run(run_id, "tripped", 3, {"cause": "store failure"}, None, None)
        recorder.close()
        assert recorder.failed and faults <= 1
        store._pending.clear()  # the process ends here: what the store held is in the journal
    with Store(tmp_path, url=postgres_schema) as lab:  # the server is back: a station runs sync
        assert lab.run(run_id)["samples"] == 20 and lab.journal(run_id) is not None
        assert [d["samples"] for d in sync(lab)] == [12]
        assert sync(lab) == []
        run = lab.run(run_id)
        assert (run["status"], run["samples"]) == ("tripped", 32)
        assert lab.samples(run_id)["id"].tolist() == list(range(32))
