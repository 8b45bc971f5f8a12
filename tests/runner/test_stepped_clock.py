"""``--stepped-clock``: the built-in simulated bay's time moves only while the runner waits, so a
run gives the same readings every time, whatever the host's load; the report says how bay time
ran; a bay served by another process (a station file) keeps its own clock and is refused."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from harness.common.errors import InputError
from harness.report.certificate import time_scale_text
from harness.runner.prepare import RunOptions, prepare
from harness.runner.run import execute
from harness.runner.sim_station import sim_station_text
from harness.store import Store
from tests.runner.conftest import ROUTINE, SHORT, harness

COLUMNS = ("step_index", "t", "u_rms", "u_mean", "i_rms", "p", "setpoint")


def test_two_runs_give_the_same_readings_and_results(tmp_path: Path) -> None:
    runs = []
    for k in range(2):
        with Store(tmp_path / f"data-{k}") as store:
            outcome = execute(RunOptions(SHORT, yes=True, quiet=True, stepped_clock=True), store)
            assert outcome.status == "passed", outcome.trip
            runs.append((outcome, store.samples(outcome.run_id, COLUMNS), store.run(outcome.run_id)))
    (first, a, stored), (second, b, _) = runs
    assert a["t"].size > 50 and first.samples == second.samples
    for column in COLUMNS:
        assert np.array_equal(a[column], b[column]), column
    assert first.results == second.results
    assert stored["simulated"]["time_scale"] == "stepped"


def test_the_report_says_the_clock_was_stepped() -> None:
    text = time_scale_text("stepped")
    assert text is not None and "stepped clock" in text and "bay's seconds" in text
    assert "20 × real time" in (time_scale_text(20.0) or "")


def test_a_station_file_is_refused(tmp_path: Path) -> None:
    station = tmp_path / "station.yaml"
    station.write_text(sim_station_text(), encoding="utf-8")
    with pytest.raises(InputError, match="--stepped-clock is for the built-in simulated bay only"):
        prepare(RunOptions(ROUTINE, station, stepped_clock=True))


def test_stepped_clock_and_time_scale_exclude_each_other(tmp_path: Path) -> None:
    proc = harness("run", str(ROUTINE), "--yes", "--stepped-clock", "--time-scale", "5", data=tmp_path)
    assert proc.returncode == 2 and "not allowed with argument --stepped-clock" in proc.stderr
    assert "Traceback" not in proc.stderr
