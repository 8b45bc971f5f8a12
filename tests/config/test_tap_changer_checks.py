"""What ``check`` refuses about an on-load tap changer before anything is energised, each at its
place in the file: a nameplate whose changer is on-load on a station without a tap changer's
drive, and a drive whose profile is for another kind, whose resource pyvisa cannot parse, or
whose move timeout is not a duration. An off-circuit unit on a station with a drive passes
(its taps stay at the prompts)."""

from __future__ import annotations

from pathlib import Path

import pytest

from harness.common.errors import InputError, InputErrors
from harness.runner.prepare import RunOptions, prepare
from harness.runner.sim_station import sim_station_text
from harness.sim.scenario import load_scenario
from tests.config.test_station_checks import position
from tests.runner.conftest import harness

ROOT = Path(__file__).resolve().parents[2]
ROUTINE = ROOT / "sequences" / "routine_three_phase.yaml"
OFF_CIRCUIT = "  taps: {winding: hv, steps: [-2, 2], step: 2.5 %}"
ON_LOAD = "  taps: {winding: hv, steps: [-2, 2], step: 2.5 %, changer: on-load}"
STATION = sim_station_text(scenario=load_scenario("three-phase"))
DRIVE = "profile: generic-tap-changer, timeout: 2 s, move_timeout: 6 s"


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def on_load_sequence(tmp_path: Path) -> Path:
    text = ROUTINE.read_text(encoding="utf-8")
    assert OFF_CIRCUIT in text
    return write(tmp_path, "seq.yaml", text.replace(OFF_CIRCUIT, ON_LOAD, 1))


def refusals(sequence: Path, station: Path) -> list[InputError]:
    with pytest.raises(InputError) as caught:
        prepare(RunOptions(sequence, station))
    return caught.value.errors if isinstance(caught.value, InputErrors) else [caught.value]


def without_drive(text: str) -> str:
    return "\n".join(line for line in text.splitlines() if "tap_changer:" not in line) + "\n"


def test_the_built_in_station_names_the_drive_and_both_changers_pass(tmp_path: Path) -> None:
    assert DRIVE in STATION
    station = write(tmp_path, "station.yaml", STATION)
    assert prepare(RunOptions(on_load_sequence(tmp_path), station)).station.instruments.tap_changer is not None
    assert prepare(RunOptions(ROUTINE, station)).sequence.transformer.taps.changer == "off-circuit"


def test_an_on_load_unit_on_a_station_without_a_drive_is_refused_at_the_changer(tmp_path: Path) -> None:
    sequence = on_load_sequence(tmp_path)
    found = refusals(sequence, write(tmp_path, "station.yaml", without_drive(STATION)))
    assert len(found) == 1 and found[0].file == str(sequence)
    assert (found[0].line, found[0].column) == position(sequence.read_text(), "changer: |on-load")
    assert "changer: on-load needs the station's instruments.tap_changer" in found[0].message


def test_an_off_circuit_unit_needs_no_drive(tmp_path: Path) -> None:
    prepare(RunOptions(ROUTINE, write(tmp_path, "station.yaml", without_drive(STATION))))


CASES = {
    "profile of another kind": (DRIVE, DRIVE.replace("generic-tap-changer", "generic-thermometer"),
                                "generic-thermometer, timeout: 2 s, move", "for kind 'thermometer', not 'tap_changer'"),
    "missing profile": (DRIVE, DRIVE.replace("generic-tap-changer", "lab-drive"), "lab-drive",
                        "no profile 'lab-drive' for kind 'tap_changer'"),
    "move timeout of zero": (DRIVE, DRIVE.replace("6 s", "0 s"), "0 s}", "must be above 0"),
    "move timeout in volts": (DRIVE, DRIVE.replace("6 s", "6 V"), "6 V}", "6 V"),
}


@pytest.mark.parametrize("case", CASES, ids=list(CASES))
def test_a_drive_problem_is_refused_at_its_place(case: str, tmp_path: Path) -> None:
    old, new, at, words = CASES[case]
    text = STATION.replace(old, new, 1)
    station = write(tmp_path, "station.yaml", text)
    found = refusals(on_load_sequence(tmp_path), station)
    assert len(found) == 1 and found[0].file == str(station), [str(e) for e in found]
    assert (found[0].line, found[0].column) == position(text, at), str(found[0])
    assert words in found[0].message, str(found[0])


def test_a_drive_resource_pyvisa_cannot_parse_is_refused(tmp_path: Path) -> None:
    line = next(l for l in STATION.splitlines() if "tap_changer:" in l)
    text = STATION.replace(line, line.replace("TCPIP0::127.0.0.1::5030::SOCKET", "drive-on-port-5030"), 1)
    found = refusals(on_load_sequence(tmp_path), write(tmp_path, "station.yaml", text))
    assert len(found) == 1 and "instruments.tap_changer.resource" in found[0].message
    assert "not a VISA resource string" in found[0].message


def test_check_prints_the_refusal_as_file_line_column(tmp_path: Path) -> None:
    sequence = on_load_sequence(tmp_path)
    station = write(tmp_path, "station.yaml", without_drive(STATION))
    proc = harness("check", str(sequence), "--station", str(station), data=tmp_path, timeout=60)
    line, column = position(sequence.read_text(), "changer: |on-load")
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert f"{sequence}:{line}:{column}: changer: on-load needs" in proc.stderr + proc.stdout
