"""When samples reach the disk: cadence, step ends, events, signal handlers, and SIGKILL."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest
from store_helpers import add, begin, committed

from harness.store import Store, StoreError

REPO = Path(__file__).resolve().parents[2]
unix_only = pytest.mark.skipif(not hasattr(signal, "SIGKILL") or not hasattr(signal, "setitimer"),
                               reason="needs POSIX signals")


# Real seconds that only a stuck flusher or a stuck child process reaches.
GUARD_S = 30.0


def _seen_within(store: Store, count: int, seconds: float = GUARD_S) -> bool:
    """True once another connection sees ``count`` samples; False if it never does."""
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if committed(store) >= count:
            return True
        time.sleep(0.01)
    return False


class _SteppedMonotonic:
    """Stands for the ``time`` module in the store: ``monotonic`` moves only when told to."""

    def __init__(self) -> None:
        self.now = 1000.0

    def monotonic(self) -> float:
        return self.now

    def time(self) -> float:
        return time.time()


def test_flush_commits_at_once(tmp_path, open_store):
    with open_store(background_flush=False) as store:
        run_id = begin(store)
        add(store, run_id, 20)
        assert committed(store) == 0
        store.flush()
        assert committed(store) == 20


def test_the_flusher_commits_buffered_samples_with_no_other_call(tmp_path, open_store):
    # How soon is the commit interval, a real-time cadence: no test times it (see the guide).
    with open_store() as store:
        run_id = begin(store)
        add(store, run_id, 20)
        assert _seen_within(store, 20)


def test_without_the_flusher_add_sample_commits_once_the_interval_has_passed(tmp_path, monkeypatch, open_store):
    clock = _SteppedMonotonic()
    monkeypatch.setattr("harness.store.store.time", clock)
    with open_store(commit_interval_s=0.2, background_flush=False) as store:
        run_id = begin(store)
        add(store, run_id, 5)
        clock.now += 0.19
        add(store, run_id, 1, start=5)
        assert committed(store) == 0
        clock.now += 0.01
        add(store, run_id, 1, start=6)
        assert committed(store) == 7
        assert not [t for t in threading.enumerate() if t.name == "harness-store-flusher"]


def test_step_end_and_events_commit_the_samples_before_them(tmp_path, open_store):
    with open_store(background_flush=False) as store:
        run_id = begin(store)
        store.begin_step(run_id, 0, "measure", "no-load at rated voltage")
        add(store, run_id, 7)
        store.end_step(run_id, 0, "done")
        assert committed(store) == 7
        add(store, run_id, 4, start=7)
        store.add_event(run_id, 1.1, "trip", "current above limit", {"value": 3.2, "limit": 2.5})
        assert committed(store) == 11
        assert committed(store, "SELECT COUNT(*) FROM events") == 1


def test_the_flusher_stops_when_the_store_closes(tmp_path, open_store):
    store = open_store()
    add(store, begin(store), 3)
    store.close()
    assert committed(store) == 3
    assert not [t for t in threading.enumerate() if t.name == "harness-store-flusher"]


def test_the_sample_count_matches_the_rows(tmp_path, open_store):
    with open_store() as store:
        run_id = begin(store)
        ids = add(store, run_id, 1234)
        assert ids == list(range(1234))
        store.flush()
        assert store.runs()[0]["samples"] == 1234 == committed(store)


@unix_only
def test_flush_from_a_signal_handler_at_any_moment(tmp_path, open_store):
    handled, busy = [], []
    with open_store(commit_interval_s=0.01) as store:
        run_id = begin(store)
        store.begin_step(run_id, 0, "hold", "hold")

        def handler(signum, frame):
            # A tick that strikes inside this handler's own flush returns at once: on a busy host
            # a flush can outlast the 0.3 ms interval, and nesting handlers would then recurse
            # without end. Ticks still strike anywhere in the test's own calls (their flushes too).
            if busy:
                return
            busy.append(signum)
            try:
                handled.append(signum)
                store.flush()
            finally:
                busy.clear()

        previous = signal.signal(signal.SIGALRM, handler)
        signal.setitimer(signal.ITIMER_REAL, 0.0003, 0.0003)
        try:
            for block in range(30):
                add(store, run_id, 500, start=block * 500)
                store.add_event(run_id, block * 50.0, "note", f"block {block}")
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
            signal.signal(signal.SIGALRM, previous)
        store.end_step(run_id, 0, "done")
        ids = store.samples(run_id)["id"]
        assert np.array_equal(ids, np.arange(15000)) and store.runs()[0]["samples"] == 15000
        assert len(store.events(run_id)) == 30
    assert len(handled) > 20


class _Interrupt(BaseException):
    """Stands for KeyboardInterrupt: raised by a signal handler between two bytecodes."""


_STORE_CODE = str(REPO / "harness" / "store")


def _in_store_code(frame) -> bool:
    """The interrupted bytecode is the store's own, not a library's it called (an import the store
    makes on first use, say: an exception thrown into the import machinery is not what a Ctrl-C
    between two of the store's statements is, and on a fresh checkout, compiling as it imports,
    a tick lands there often enough to matter)."""
    return frame is not None and frame.f_code.co_filename.startswith(_STORE_CODE)


@unix_only
def test_a_handler_that_raises_mid_commit_loses_no_sample(tmp_path):
    # SQLite only: its driver works in C, so a handler's exception lands between two of the
    # store's own bytecodes. A server's driver (psycopg) runs Python in its wait loops and
    # finalisers, where an exception thrown at any bytecode may be one Python can only report
    # as unraisable; the store's recovery on every back end is the test below.
    returned: list[int] = []
    ticks, raised, busy = [], [], []
    with Store(tmp_path, commit_interval_s=0.01) as store:
        run_id = begin(store)

        def handler(signum, frame):
            # Raised only inside the store's code (mid-commit, mid-append), where the test's
            # own try below catches it; elsewhere it would escape the test loop itself.
            if busy:  # the next tick struck inside this handler's own flush
                return
            busy.append(signum)
            try:
                ticks.append(signum)
                store.flush()
            finally:
                busy.clear()
            if len(ticks) % 2 == 0 and _in_store_code(frame):
                raised.append(frame.f_code.co_name)
                raise _Interrupt

        previous = signal.signal(signal.SIGALRM, handler)
        signal.setitimer(signal.ITIMER_REAL, 0.0005, 0.0005)
        try:
            i = -1
            # at least 20 000 samples, and on until three interrupts have struck inside the store's
            # code: how many timer ticks land there depends on the host, the count of samples not
            while (i := i + 1) < 20000 or (len(raised) < 3 and i < 1_000_000):
                try:
                    returned.append(store.add_sample(run_id, 0, i * 0.01, 0, 1.0, 1.0, 0.1, 0.1, 50.0, 1.0))
                    if i % 500 == 0:
                        store.flush()
                except _Interrupt:
                    pass
        finally:
            signal.setitimer(signal.ITIMER_REAL, 0)
            signal.signal(signal.SIGALRM, previous)
        store.flush()
        ids = store.samples(run_id)["id"]
        assert set(returned) <= set(ids.tolist()) and len(set(ids.tolist())) == len(ids)
        assert store.runs()[0]["samples"] == len(ids) == committed(store)
    assert len(raised) >= 3, raised


# -- SIGKILL ---------------------------------------------------------------------------------

# The child adds samples as fast as it can, flushes every 2000 and reports each flushed
# count on stdout; the background flusher commits in between, so the kill lands anywhere.
_CHILD = """
import sys
from pathlib import Path
from harness.store import Store, StoreError
store = Store(Path(sys.argv[1]), commit_interval_s=0.05)
run_id = store.begin_run(unit="NT-0412", lab="Northfield Test Bay", station_name="bay-2",
                         sequence_text="steps: []", station_text=None, software_version="0.1.0", simulated=None)
store.begin_step(run_id, 0, "hold", "energised hold")
print(run_id, flush=True)
n = 0
while True:
    store.add_sample(run_id, 0, n * 0.001, 0, 415.0, 414.0, 2.1, 160.0, 50.0, 415.0)
    n += 1
    if n % 2000 == 0:
        store.flush()
        print(n, flush=True)
"""


@pytest.mark.parametrize("where", ["before the samples", "after the samples", "after the count"])
def test_an_interruption_at_any_point_of_a_commit_loses_and_doubles_nothing(open_store, monkeypatch, where):
    with open_store(background_flush=False) as store:
        run_id = begin(store)
        add(store, run_id, 40)
        store.flush()
        add(store, run_id, 25, start=40)
        real_insert, real_execute = store._conn.insert_rows, store._conn.execute

        def insert_rows(*args):
            if where == "before the samples":
                raise KeyboardInterrupt
            added = real_insert(*args)
            if where == "after the samples":
                raise KeyboardInterrupt
            return added

        def execute(statement):
            cursor = real_execute(statement)
            if where == "after the count":
                raise KeyboardInterrupt
            return cursor

        monkeypatch.setattr(store._conn, "insert_rows", insert_rows)
        monkeypatch.setattr(store._conn, "execute", execute)
        with pytest.raises(KeyboardInterrupt):
            store.flush()
        monkeypatch.undo()
        assert len(store.uncommitted(run_id)) == 25  # still buffered: nothing is dropped unwritten
        store.flush()
        assert store.uncommitted(run_id) == []
        assert store.samples(run_id)["id"].tolist() == list(range(65))
        assert store.runs()[0]["samples"] == 65 == committed(store)


def _start_child(folder: Path) -> subprocess.Popen[str]:
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), os.environ.get("PYTHONPATH", "")])}
    return subprocess.Popen([sys.executable, "-c", _CHILD, str(folder)], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=env)


def _read_reports(child: subprocess.Popen[str], until: int) -> tuple[str, int]:
    assert child.stdout is not None
    run_id = child.stdout.readline().strip()
    reported = 0
    while reported < until:
        line = child.stdout.readline()
        assert line, f"the child stopped: {child.stderr.read() if child.stderr else ''}"
        reported = int(line)
    return run_id, reported


def _listed_status(folder: Path, seconds: float = GUARD_S) -> str:
    """The run's listed status once the kill has taken effect (the child may still be a zombie)."""
    deadline = time.monotonic() + seconds
    with Store(folder) as store:
        while True:
            status = str(store.runs()[0]["status"])
            if status != "running" or time.monotonic() > deadline:
                return status
            time.sleep(0.01)


@unix_only
def test_a_run_killed_with_sigkill_leaves_a_consistent_store(tmp_path):
    child = _start_child(tmp_path)
    watchdog = threading.Timer(60, child.kill)
    watchdog.start()
    try:
        run_id, reported = _read_reports(child, until=20000)
        child.send_signal(signal.SIGKILL)
        assert _listed_status(tmp_path) == "incomplete"  # before the child is reaped: a zombie
    finally:
        watchdog.cancel()
        child.kill()
        child.wait()
        child.stdout.close()
        child.stderr.close()
    assert child.returncode == -signal.SIGKILL
    conn = sqlite3.connect(tmp_path / "harness.sqlite")
    try:
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        count, top = conn.execute("SELECT COUNT(*), MAX(id) FROM samples WHERE run_id = ?", (run_id,)).fetchone()
        kept = conn.execute("SELECT samples FROM runs WHERE run_id = ?", (run_id,)).fetchone()[0]
    finally:
        conn.close()
    assert count >= reported and count == kept == top + 1  # everything committed, nothing torn
    with Store(tmp_path) as store:
        run = store.run(run_id)
        assert run["status"] == "incomplete" and run["samples"] == count
        assert [(s["step_index"], s["finished"]) for s in run["steps"]] == [(0, None)]
        assert len(store.samples(run_id)["id"]) == count


def test_a_failed_background_commit_reaches_the_runner_and_loses_nothing(tmp_path, monkeypatch, open_store):
    with open_store(commit_interval_s=0.05) as store:
        run_id = begin(store)
        real_write = store._write_pending

        def disk_full() -> int:
            raise sqlite3.OperationalError("database or disk is full")

        monkeypatch.setattr(store, "_write_pending", disk_full)
        add(store, run_id, 10)
        deadline = time.monotonic() + GUARD_S
        while store.flush_error is None and time.monotonic() < deadline:
            time.sleep(0.01)
        with pytest.raises(StoreError, match="disk is full"):
            add(store, run_id, 1, start=10)
        monkeypatch.setattr(store, "_write_pending", real_write)
        assert _seen_within(store, 11) and store.flush_error is None
        assert store.samples(run_id)["id"].tolist() == list(range(11))


def test_a_sample_after_close_is_refused(tmp_path, open_store):
    store = open_store()
    run_id = begin(store)
    store.close()
    with pytest.raises(StoreError, match="closed"):
        add(store, run_id, 1)
