"""The example station file of a real bay: `check --station` accepts it, and the same station
served by the simulated bay rehearses a sequence with the station's ranges, VT/CT and channels."""

from __future__ import annotations

from pathlib import Path

import pytest

from harness.runner.prepare import RunOptions, prepare
from tests.runner.conftest import ROOT, harness, run_json

STATION = ROOT / "stations" / "example-lab-bay.yaml"
SEQUENCE = ROOT / "sequences" / "routine_10kva_11kv_single_phase.yaml"


def test_check_accepts_the_example_station(tmp_path: Path) -> None:
    proc = harness("check", str(SEQUENCE), "--station", str(STATION), data=tmp_path)
    assert proc.returncode == 0, proc.stderr
    text = STATION.read_text()
    # the three kinds of resource string side by side
    assert "::SOCKET" in text and "GPIB0::" in text and "USB0::" in text


def test_the_simulated_bay_takes_the_station_as_it_says() -> None:
    prepared = prepare(RunOptions(SEQUENCE, STATION, "nameplate"))
    station, scenario = prepared.station, prepared.scenario
    assert station.simulated and station.instruments.bay_control is not None
    assert {i.resource for i in (station.instruments.source, station.instruments.analyser)} <= {
        "TCPIP0::127.0.0.1::5025::SOCKET", "TCPIP0::127.0.0.1::5026::SOCKET"}
    # the lab's own limits, VT/CT, ranges and calibration data are kept
    assert (station.limits.voltage, station.limits.current) == (1000.0, 25.0)
    assert (station.measurement.vt_ratio, station.measurement.ct_ratio) == (10.0, 5.0)
    assert station.measurement_chain.channels[0].voltage_transformer.ratio_error == pytest.approx(-0.05)
    assert str(station.instruments.analyser.calibration_due) == "2027-03-31"
    # and the simulated bay is built to them
    assert (scenario.source.max_voltage, scenario.source.max_current, scenario.source.max_slew) == (1000.0, 25.0, 100.0)
    assert (scenario.analyser.vt_ratio, scenario.analyser.ct_ratio) == (10.0, 5.0)
    assert scenario.analyser.current_ranges == (0.5, 1.0, 2.0, 5.0, 10.0)
    assert scenario.transformer.rated_power == 10e3       # the unit of the sequence's nameplate


def test_rehearse_the_station(tmp_path: Path) -> None:
    code, doc, _ = run_json(str(SEQUENCE), "--station", str(STATION), "--sim", "nameplate", "--yes",
                            "--stepped-clock", data=tmp_path)
    assert (code, doc["status"]) == (0, "passed"), doc["trip"]
    r = doc["results"]
    assert r["no_load"]["loss_W"] == pytest.approx(60.0, rel=0.01)
    assert r["load"]["loss_ref_W"] == pytest.approx(250.0, rel=0.01)
    assert r["load"]["impedance_ref_pct"] == pytest.approx(4.0, rel=0.02)
    assert r["uncertainty"], "the station's measurement chain gives the uncertainty budget"


def test_without_sim_the_station_is_a_real_bay(tmp_path: Path) -> None:
    proc = harness("run", str(SEQUENCE), "--station", str(STATION), "--yes", data=tmp_path)
    assert proc.returncode == 2 and "--yes answers prompts only on the simulated bay" in proc.stderr
