"""Sequence and station files: validation, positions of errors, limits that cannot be raised."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from harness.common.errors import InputError
from harness.runner.prepare import RunOptions, prepare

ROOT = Path(__file__).resolve().parents[2]
ROUTINE = ROOT / "sequences" / "routine_single_phase.yaml"


def write(tmp_path: Path, text: str, name: str = "seq.yaml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def routine_with(tmp_path: Path, old: str, new: str) -> Path:
    text = ROUTINE.read_text(encoding="utf-8")
    assert old in text, old
    return write(tmp_path, text.replace(old, new, 1))


def error_of(path: Path, station: Path | None = None) -> InputError:
    with pytest.raises(InputError) as info:
        prepare(RunOptions(path, station))
    return info.value


def line_of(path: Path, needle: str) -> int:
    for n, line in enumerate(path.read_text().splitlines(), start=1):
        if needle in line:
            return n
    raise AssertionError(needle)


@pytest.mark.parametrize("name", ["routine_single_phase.yaml", "repeated_load_ramps.yaml"])
def test_example_sequences_validate(name: str) -> None:
    prepared = prepare(RunOptions(ROOT / "sequences" / name))
    assert prepared.station.simulated


def test_sequence_cannot_raise_a_station_limit(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "  voltage: 520 V", "  voltage: 5 kV")
    err = error_of(path)
    assert (err.line, err.column) == (line_of(path, "voltage: 5 kV"), 12)
    assert "above the station's hard limit of 1000 V" in str(err)


def test_step_cannot_raise_the_sequence_limit(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "limits: {current: 6 A}", "limits: {current: 20 A}")
    err = error_of(path)
    assert err.line == line_of(path, "current: 20 A")
    assert "above the sequence's (or station's) limit of 12 A" in str(err)


def test_unreachable_target_is_refused(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "voltage: [90 %, 100 %, 105 %, 110 %]", "voltage: [90 %, 100 %, 130 %]")
    err = error_of(path)
    assert err.line == line_of(path, "130 %")
    assert "not below the step's voltage limit of 520 V" in str(err)


def test_load_target_needing_too_much_voltage_is_refused(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "  impedance: 4 %", "  impedance: 9 %")
    err = error_of(path)
    assert "needs about 594 V at the guaranteed impedance" in str(err)


def test_unknown_key_points_at_the_key(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "    name: to rated voltage\n", "    name: to rated voltage\n    speed: fast\n")
    err = error_of(path)
    assert (err.line, err.column) == (line_of(path, "speed: fast"), 5)
    assert "unknown key 'speed'" in str(err)


def test_wrong_unit_is_located(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "rated_power: 50 kVA", "rated_power: 50 kV")
    err = error_of(path)
    assert err.line == line_of(path, "rated_power: 50 kV")
    assert "apparent power" in str(err)


def test_duplicate_key_is_an_error(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "operator: A. Tester\n", "operator: A. Tester\noperator: B. Tester\n")
    err = error_of(path)
    assert err.line == line_of(path, "operator: B. Tester") and "duplicate key 'operator'" in str(err)


def test_measure_needs_the_right_wiring(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "wiring: {fed: hv, other: short}", "wiring: {fed: hv, other: open}")
    err = error_of(path)
    assert "load-loss measure needs the other winding short" in str(err)


def test_yes_is_refused_on_a_real_station(tmp_path: Path) -> None:
    from harness.runner.sim_station import sim_station_text
    station = write(tmp_path, sim_station_text().replace("simulated: true", "simulated: false")
                    .replace("  bay_control:", "  #bay_control:"), "station.yaml")
    with pytest.raises(InputError) as info:
        prepare(RunOptions(ROUTINE, station, yes=True))
    assert "--yes answers prompts only on the simulated bay" in str(info.value)


def test_check_command_exits_2_without_traceback(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "  current: 12 A", "  current: 12 V")
    proc = subprocess.run([sys.executable, "-m", "harness.cli", "check", str(path)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    assert proc.stderr.startswith(f"{path}:{line_of(path, 'current: 12 V')}:")


def test_rated_current_of_the_other_winding_is_the_same_per_unit(tmp_path: Path) -> None:
    from harness.config.checks import resolve_target
    path = routine_with(tmp_path, "    current: rated\n", "    current: rated lv\n")
    prepared = prepare(RunOptions(path))
    ramp = [s for s in prepared.sequence.steps if s.kind == "ramp" and s.current][0]
    assert resolve_target(prepared.sequence, ramp, ramp.current, "hv") == pytest.approx(50e3 / 6600)


def test_voltage_target_of_the_open_winding_is_refused(tmp_path: Path) -> None:
    path = routine_with(tmp_path, "    voltage: rated\n", "    voltage: rated hv\n")
    err = error_of(path)
    assert err.line == line_of(path, "voltage: rated hv")
    assert "the source sets the fed winding's voltage" in str(err)
