"""Every failure of a part of the harness while or after energising ends in the one safe-state
procedure, with exit code, store and report agreeing, and no sample lost silently.

Each failure is injected for real: a full disk (a small tmpfs, when this process may mount one),
a store whose commits fail the way SQLite fails on a full disk, a store file with garbage in its
middle, a report writer, an evaluation and a progress display that raise, and real signals
sent to this process at chosen points of the run.
"""

from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import tempfile
from pathlib import Path
from typing import Any

import pytest

from harness.runner import run as run_module
from harness.runner.context import Run
from harness.runner.prepare import RunOptions
from harness.runner.run import execute
from harness.store import Store
from harness.store.journal import read_journal
from tests.runner.conftest import SHORT, harness


@pytest.fixture(autouse=True)
def own_temp_folder(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A journal that falls back to the temp folder lands in this test's own."""
    folder = tmp_path / "temp"
    folder.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(folder))
    return folder


def run_short(store: Store, **options: Any) -> run_module.RunOutcome:
    return execute(RunOptions(SHORT, yes=True, quiet=True, stepped_clock=True, **options), store)


def journal_ids(path: str | Path) -> list[int]:
    return [e["id"] for e in read_journal(Path(path)) if e["op"] == "sample"]


def committed_ids(database: Path, run_id: str) -> list[int]:
    db = sqlite3.connect(database)
    try:
        return [r[0] for r in db.execute("SELECT id FROM samples WHERE run_id = ? ORDER BY id", (run_id,))]
    finally:
        db.close()


def assert_nothing_lost(outcome: run_module.RunOutcome, stored: list[int]) -> None:
    """Every sample taken is in the store or in the journal: ids 0..n-1 without a gap."""
    assert outcome.journal is not None
    kept = sorted(set(stored) | set(journal_ids(outcome.journal)))
    assert kept == list(range(outcome.samples)) and outcome.samples > 0


class FailingStore(Store):
    """Commits fail after the first few samples, as SQLite's do on a full disk."""

    def __init__(self, folder: Path, fail_after: int):
        super().__init__(folder)
        self.fail_after = fail_after

    def _write_pending(self) -> int:
        if any(row[1] >= self.fail_after for row in self._pending):
            raise sqlite3.OperationalError("database or disk is full")
        return super()._write_pending()


def test_store_failure_while_energised_ends_in_the_safe_state_and_journals_samples(tmp_path: Path) -> None:
    store = FailingStore(tmp_path / "data", fail_after=5)
    try:
        outcome = run_short(store)
    finally:
        with pytest.raises(Exception):
            store.close()  # the store still cannot commit; the outcome stands regardless
    assert (outcome.status, outcome.exit_code) == ("tripped", 3)
    assert outcome.safe_state["confirmed"] is True
    assert "store failure" in outcome.trip["cause"] and "disk is full" in outcome.trip["cause"]
    assert Path(outcome.journal).parent == tmp_path / "data"  # the data folder itself still takes files
    assert_nothing_lost(outcome, committed_ids(tmp_path / "data" / "harness.sqlite", outcome.run_id))
    entries = read_journal(Path(outcome.journal))
    assert [e["status"] for e in entries if e["op"] == "finish"] == ["tripped"]
    assert any(e["op"] == "event" and e["kind"] == "safe-state" for e in entries)
    assert outcome.report is None and any(str(outcome.journal) in note for note in outcome.notes)


def _mount_tmpfs(folder: Path, size: str) -> bool:
    folder.mkdir()
    if os.geteuid() != 0:
        return False
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(folder)],
                          capture_output=True)
    return done.returncode == 0


def test_a_real_full_disk_mid_run(tmp_path: Path, own_temp_folder: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    data = tmp_path / "small-disk"
    if not _mount_tmpfs(data, "4m"):
        pytest.skip("cannot mount a tmpfs here (needs root); the failing-store test covers the same path")
    try:
        store = Store(data)
        energise = Run.energise

        def energise_then_fill_the_disk(run: Run) -> None:
            energise(run)
            with open(data / "filler", "wb") as filler:
                try:
                    while True:
                        filler.write(b"\0" * 65536)
                        filler.flush()
                except OSError:
                    pass

        monkeypatch.setattr(Run, "energise", energise_then_fill_the_disk)
        try:
            outcome = run_short(store)
        finally:
            try:
                store.close()
            except Exception:  # noqa: BLE001 - the disk is still full
                pass
        assert (outcome.status, outcome.exit_code) == ("tripped", 3), outcome.trip
        assert outcome.safe_state["confirmed"] is True
        assert "full" in outcome.trip["cause"]
        assert Path(outcome.journal).parent == own_temp_folder  # the full disk could not take it
        (data / "filler").unlink()
        assert_nothing_lost(outcome, committed_ids(data / "harness.sqlite", outcome.run_id))
    finally:
        subprocess.run(["umount", "-l", str(data)], capture_output=True)


def _corrupt_samples_table(database: Path) -> None:
    """Garbage over the root page of the samples table: the header and the runs table stay readable."""
    db = sqlite3.connect(database)
    page_size = db.execute("PRAGMA page_size").fetchone()[0]
    root = db.execute("SELECT rootpage FROM sqlite_master WHERE name = 'samples'").fetchone()[0]
    db.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    db.close()
    with open(database, "r+b") as f:
        f.seek((root - 1) * page_size)
        f.write(bytes(range(256)) * (page_size // 256))


def test_a_corrupt_store_file_mid_run_through_the_cli(tmp_path: Path) -> None:
    with Store(tmp_path) as store:  # an earlier run, so the file has a samples table with pages
        earlier = store.begin_run(unit="U", lab="L", station_name="S", sequence_text="x", station_text=None,
                                  software_version="0")
        for k in range(2000):
            store.add_sample(earlier, 0, k, 1, 1.0, 1.0, 1.0, 1.0, 50.0, 0.0)
        store.finish_run(earlier, "passed", 0, None, None, None)
    _corrupt_samples_table(tmp_path / "harness.sqlite")
    proc = harness("run", str(SHORT), "--yes", "--stepped-clock", data=tmp_path)
    assert proc.returncode == 3, proc.stderr + proc.stdout
    assert "Traceback" not in proc.stderr
    assert "malformed" in proc.stdout and "journal" in proc.stdout
    listed = harness("runs", "--json", data=tmp_path)
    assert listed.returncode == 0, listed.stderr
    assert '"journal": "' in listed.stdout  # the run whose samples went to the journal says so
    run_id = [r for r in json.loads(listed.stdout) if r["journal"]][0]["run_id"]
    report = harness("report", run_id, data=tmp_path)
    assert report.returncode == 2 and "Traceback" not in report.stderr
    assert "harness-journal-" in report.stderr and "malformed" in report.stderr


def test_report_writer_failure_ends_tripped_with_store_and_report_agreeing(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from harness.runner import reporting
    write = reporting.write_run_reports
    calls: list[int] = []

    def fails_once(store: Any, run_id: str) -> Path:
        calls.append(1)
        if len(calls) == 1:
            raise OSError(28, "No space left on device")
        return write(store, run_id)

    monkeypatch.setattr(reporting, "write_run_reports", fails_once)
    with Store(tmp_path) as store:
        outcome = run_short(store)
        stored = store.run(outcome.run_id)
    assert (outcome.status, outcome.exit_code) == ("tripped", 3)
    assert (stored["status"], stored["exit_code"]) == ("tripped", 3)
    assert "report could not be written" in stored["trip"]["text"]
    html = Path(outcome.report).read_text(encoding="utf-8")
    assert "report could not be written" in html and outcome.safe_state["confirmed"]


def test_evaluation_failure_ends_tripped_not_in_a_traceback(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    def broken(run: Any) -> Any:
        raise ZeroDivisionError("a bug in the evaluation")

    monkeypatch.setattr(run_module, "evaluate_run", broken)
    with Store(tmp_path) as store:
        outcome = run_short(store)
        stored = store.run(outcome.run_id)
    assert (outcome.status, outcome.exit_code, stored["status"]) == ("tripped", 3, "tripped")
    assert "evaluation failed" in outcome.trip["text"] and Path(outcome.report).is_file()


def test_progress_display_failure_while_energised_trips_safely(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from harness.runner.progress import Progress

    def broken(self: Any, sample: Any, limits: Any) -> None:
        raise BrokenPipeError(32, "Broken pipe")

    monkeypatch.setattr(Progress, "sample", broken)
    with Store(tmp_path) as store:
        outcome = run_short(store)
        stored = store.run(outcome.run_id)
    assert (outcome.status, outcome.exit_code, stored["status"]) == ("tripped", 3, "tripped")
    assert "progress display failed" in outcome.trip["text"] and outcome.safe_state["confirmed"]
    assert Path(outcome.report).is_file()


def test_signals_during_the_safe_state_are_held_and_the_run_ends_aborted(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    energise, make_safe = Run.energise, Run.make_safe

    def energise_then_ctrl_c(run: Run) -> None:
        energise(run)
        os.kill(os.getpid(), signal.SIGINT)

    def make_safe_under_fire(run: Run) -> Any:
        for sig in (signal.SIGTERM, signal.SIGINT, signal.SIGTERM):
            os.kill(os.getpid(), sig)
        return make_safe(run)

    monkeypatch.setattr(Run, "energise", energise_then_ctrl_c)
    monkeypatch.setattr(Run, "make_safe", make_safe_under_fire)
    with Store(tmp_path) as store:
        outcome = run_short(store)
        stored = store.run(outcome.run_id)
    assert (outcome.status, outcome.exit_code, stored["status"], stored["exit_code"]) == ("aborted", 4, "aborted", 4)
    assert outcome.safe_state["confirmed"] is True and Path(outcome.report).is_file()
    assert any("held" in note for note in outcome.safe_state["notes"])


def test_ctrl_c_after_completion_leaves_a_passed_run_passed(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from harness.runner import reporting
    write = reporting.write_run_reports

    def ctrl_c_while_reporting(store: Any, run_id: str) -> Path:
        os.kill(os.getpid(), signal.SIGINT)
        return write(store, run_id)

    monkeypatch.setattr(reporting, "write_run_reports", ctrl_c_while_reporting)
    with Store(tmp_path) as store:
        outcome = run_short(store)
        stored = store.run(outcome.run_id)
    assert outcome.exit_code in (0, 1) and stored["exit_code"] == outcome.exit_code
    assert stored["status"] == outcome.status and Path(outcome.report).is_file()
    assert any("after the steps had ended" in note for note in outcome.notes)
