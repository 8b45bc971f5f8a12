"""Ctrl-C and SIGTERM mid-run end in the safe state with exit 4; SIGKILL leaves a consistent
store with the run listed as not completed."""

from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from tests.runner.conftest import ROOT, ROUTINE, harness


def start_run(data: Path) -> subprocess.Popen[str]:
    env = {**os.environ, "HARNESS_DATA": str(data)}
    return subprocess.Popen([sys.executable, "-m", "harness.cli", "run", str(ROUTINE), "--yes", "--json",
                             "--time-scale", "5"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env=env, cwd=ROOT)


def wait_until_energised(data: Path, proc: subprocess.Popen[str], timeout: float = 120) -> None:
    """Poll the store (as another process would) until the source is on and samples are kept.
    The timeout is real time and only guards against a run that never gets there."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        assert proc.poll() is None, proc.communicate()
        try:
            db = sqlite3.connect(data / "harness.sqlite", timeout=1)
            energised = db.execute("SELECT COUNT(*) FROM events WHERE kind = 'energised'").fetchone()[0]
            samples = db.execute("SELECT COUNT(*) FROM samples").fetchone()[0]
            db.close()
            if energised and samples > 5:
                return
        except sqlite3.OperationalError:
            pass
        time.sleep(0.1)
    raise AssertionError("the run never energised")


@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM], ids=["ctrl-c", "sigterm"])
def test_stop_signal_mid_run_is_abort_with_safe_state(tmp_path: Path, sig: int) -> None:
    proc = start_run(tmp_path)
    wait_until_energised(tmp_path, proc)
    proc.send_signal(sig)
    out, err = proc.communicate(timeout=120)
    doc = json.loads(out)
    assert (proc.returncode, doc["status"]) == (4, "aborted"), err
    assert doc["safe_state"]["confirmed"] is True
    assert doc["samples"] > 5
    assert "Traceback" not in err


def test_sigkill_leaves_a_consistent_store(tmp_path: Path) -> None:
    proc = start_run(tmp_path)
    wait_until_energised(tmp_path, proc)   # more than 5 samples already committed: another process saw them
    proc.kill()
    proc.communicate(timeout=30)
    db = sqlite3.connect(tmp_path / "harness.sqlite")
    assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    stored = db.execute("SELECT COUNT(*) FROM samples").fetchone()[0]
    assert stored > 5
    runs = json.loads(harness("runs", "--json", data=tmp_path).stdout)
    assert runs[0]["status"] == "incomplete" and runs[0]["samples"] == stored
    db.close()
    rebuilt = harness("report", runs[0]["run_id"], data=tmp_path)
    assert rebuilt.returncode == 0, rebuilt.stderr
    assert Path(rebuilt.stdout.strip()).is_file()
