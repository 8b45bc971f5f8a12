"""The simulated bay served in its own process (`harness sim serve`) and driven through a
station file, as a lab's bay is: the same drivers, over sockets, with no in-process shortcut."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from tests.runner.conftest import ROOT, ROUTINE, run_json

SCALE = "20"


def test_run_against_a_served_bay_through_its_station_file(tmp_path: Path) -> None:
    env = {**os.environ, "HARNESS_DATA": str(tmp_path)}
    server = subprocess.Popen([sys.executable, "-m", "harness.cli", "sim", "serve", "default", "--time-scale", SCALE],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env, cwd=ROOT)
    try:
        lines = []
        while not lines or not lines[-1].startswith("readings:"):
            line = server.stdout.readline()  # type: ignore[union-attr]
            assert line, server.stderr.read()  # type: ignore[union-attr]
            lines.append(line.rstrip("\n"))
        station = tmp_path / "station.yaml"
        station.write_text("\n".join(lines) + "\n", encoding="utf-8")
        assert "TCPIP0::127.0.0.1::" in station.read_text()
        code, doc, err = run_json(str(ROUTINE), "--station", str(station), "--yes", "--time-scale", SCALE, data=tmp_path)
        assert (code, doc["status"]) == (0, "passed"), (doc["trip"], err)
        assert doc["results"]["no_load"]["loss_W"] > 0
    finally:
        server.terminate()
        server.communicate(timeout=10)
    assert server.returncode == 0


def test_check_against_a_station_file(tmp_path: Path) -> None:
    from harness.runner.sim_station import sim_station_text
    station = tmp_path / "station.yaml"
    station.write_text(sim_station_text(), encoding="utf-8")
    env = {**os.environ, "HARNESS_DATA": str(tmp_path)}
    proc = subprocess.run([sys.executable, "-m", "harness.cli", "check", str(ROUTINE), "--station", str(station)],
                          capture_output=True, text=True, env=env, cwd=ROOT)
    assert proc.returncode == 0 and "nothing was energised" in proc.stdout, proc.stderr
    assert json.loads(subprocess.run([sys.executable, "-m", "harness.cli", "runs", "--json"], capture_output=True,
                                     text=True, env=env, cwd=ROOT).stdout) == []
