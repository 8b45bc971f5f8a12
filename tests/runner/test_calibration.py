"""Calibration enforced before energising: an instrument past its calibration date stops the run
with exit 2 unless the lab's station allows it with a reason (then the report says so), and the
serial each instrument gives to *IDN? must be the one the station names.

Against the simulated bay served in its own process, through a station file, as a lab runs it.
"""

from __future__ import annotations

import datetime as dt
import os
import re
import subprocess
import sys
from pathlib import Path
from typing import Iterator

import pytest

from tests.runner.conftest import ROOT, ROUTINE, harness, run_json

SCALE = "50"
EXPIRED = "2025-01-31"  # before any date these tests run on


@pytest.fixture(scope="module")
def served_station(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """The station text of a simulated bay served on loopback sockets."""
    data = tmp_path_factory.mktemp("served")
    server = subprocess.Popen([sys.executable, "-m", "harness.cli", "sim", "serve", "default", "--time-scale", SCALE],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                              env={**os.environ, "HARNESS_DATA": str(data)}, cwd=ROOT)
    try:
        lines: list[str] = []
        while not lines or not lines[-1].startswith("readings:"):
            line = server.stdout.readline()  # type: ignore[union-attr]
            assert line, server.stderr.read()  # type: ignore[union-attr]
            lines.append(line.rstrip("\n"))
        yield "\n".join(lines) + "\n"
    finally:
        server.terminate()
        server.communicate(timeout=10)


def with_analyser(station: str, fields: str) -> str:
    """The station with ``fields`` added to the analyser's flow mapping."""
    line = next(ln for ln in station.splitlines() if ln.strip().startswith("analyser: {"))
    return station.replace(line, line.replace("analyser: {", "analyser: {" + fields + ", ", 1))


def write(tmp_path: Path, text: str) -> Path:
    path = tmp_path / "station.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def test_expired_calibration_stops_check_and_run_before_anything_is_stored(tmp_path, served_station):
    station = write(tmp_path, with_analyser(served_station, f"calibration_due: {EXPIRED}"))
    checked = harness("check", str(ROUTINE), "--station", str(station), data=tmp_path)
    assert checked.returncode == 2
    assert re.search(rf"station\.yaml:\d+:\d+: instruments\.analyser\.calibration_due: calibration expired on {EXPIRED}",
                     checked.stderr), checked.stderr
    ran = harness("run", str(ROUTINE), "--station", str(station), "--yes", "--time-scale", SCALE, data=tmp_path)
    assert ran.returncode == 2 and "calibration expired" in ran.stderr, ran.stderr
    assert "Traceback" not in ran.stderr
    assert harness("runs", "--json", data=tmp_path).stdout.strip() == "[]"  # never begun, never energised


def test_calibration_in_date_is_reported_by_check(tmp_path, served_station):
    due = (dt.date.today() + dt.timedelta(days=200)).isoformat()
    station = write(tmp_path, with_analyser(served_station, f"calibration_due: {due}, calibration_certificate: NTW-CAL-0815"))
    checked = harness("check", str(ROUTINE), "--station", str(station), data=tmp_path)
    assert checked.returncode == 0, checked.stderr
    assert f"analyser: calibrated until {due} (certificate NTW-CAL-0815); serial SIM" in checked.stdout


def test_allowed_expired_calibration_runs_and_the_report_says_why(tmp_path, served_station):
    reason = "recalibration booked; cross-checked against the reference analyser on the day"
    station = write(tmp_path, with_analyser(
        served_station, f"calibration_due: {EXPIRED}, allow_expired_calibration: \"{reason}\""))
    checked = harness("check", str(ROUTINE), "--station", str(station), data=tmp_path)
    assert checked.returncode == 0, checked.stderr
    assert f"analyser: calibration EXPIRED {EXPIRED}, allowed by the station: {reason}" in checked.stdout
    code, doc, err = run_json(str(ROUTINE), "--station", str(station), "--yes", "--time-scale", SCALE, data=tmp_path)
    assert (code, doc["status"]) == (0, "passed"), (doc["trip"], err)
    html = (Path(doc["folder"]) / "report.html").read_text(encoding="utf-8")
    conditions = html[html.index('id="conditions"'):html.index('id="results"')]
    assert f"EXPIRED {EXPIRED}; allowed by the station: {reason}" in conditions
    assert "calibration-expired" in conditions
    assert "(matches *IDN?)" in conditions  # the station's serials are the instruments'


def test_a_serial_other_than_the_stations_stops_before_energising(tmp_path, served_station):
    text = served_station.replace(re.search(r'serial: "(SIM\d+-2)"', served_station).group(0), 'serial: "PA-0001"')
    station = write(tmp_path, text)
    code, doc, err = run_json(str(ROUTINE), "--station", str(station), "--yes", "--time-scale", SCALE, data=tmp_path)
    assert (code, doc["status"]) == (3, "tripped"), err
    assert doc["safe_state"]["method"] == "never energised"
    cause = doc["trip"]["cause"]
    assert "analyser: *IDN? gives serial 'SIM" in cause and "the station names 'PA-0001'" in cause, cause
