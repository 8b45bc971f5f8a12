"""Every fault injected for real through the simulated bay ends as the safety model says."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest

from tests.runner.conftest import ROUTINE, run_json

CASES = [
    # fault, exit code, status, words in the trip, the step it trips in
    ("shorted-turn", 3, "tripped", "current limit", "to rated voltage"),
    ("missing-link", 3, "tripped", "short-circuit link fitted", "to rated current"),
    ("analyser-silent", 3, "tripped", "no reply", None),
    ("overrange", 3, "tripped", "over range", None),
    ("garbage-reply", 3, "tripped", "unreadable", None),
    ("dropped-connection", 3, "tripped", "closed the connection", None),
    ("stuck-output", 5, "unsafe", "not confirmed", None),
]


@pytest.mark.parametrize("fault,code,status,words,step", CASES, ids=[c[0] for c in CASES])
def test_fault_ends_as_stated(tmp_path: Path, fault: str, code: int, status: str, words: str, step: str | None) -> None:
    exit_code, doc, stderr = run_json(str(ROUTINE), "--yes", "--stepped-clock", "--fault", fault, data=tmp_path)
    assert (exit_code, doc["status"], doc["exit_code"]) == (code, status, code)
    trip = doc["trip"]
    assert words in trip["text"]
    if step:
        assert trip["step"] == step
    assert doc["samples"] > 0
    db = sqlite3.connect(doc["database"])
    kept = db.execute("SELECT COUNT(*) FROM samples WHERE run_id = ?", (doc["run_id"],)).fetchone()[0]
    kinds = [k for (k,) in db.execute("SELECT kind FROM events WHERE run_id = ? ORDER BY id", (doc["run_id"],))]
    assert kept == doc["samples"] and "trip" in kinds and kinds[-1] in ("safe-state", "unsafe")
    if status == "unsafe":
        assert doc["safe_state"]["confirmed"] is False
        assert "MAY STILL BE LIVE" in stderr
    else:
        assert doc["safe_state"]["confirmed"] is True
        assert abs(doc["safe_state"]["voltage_V"]) < 5.0
