"""What ``check`` refuses about a ratio step before anything is energised, at its place in the
file: a tap the nameplate does not have, the other winding not open, a station whose analyser
has no channel on the open winding, and a current target."""

from __future__ import annotations

from pathlib import Path

import pytest

from harness.common.errors import InputError, InputErrors
from harness.runner.prepare import RunOptions, prepare

ROOT = Path(__file__).resolve().parents[2]
ROUTINE = ROOT / "sequences" / "routine_single_phase.yaml"
RATIO = "    taps: all\n"
WIRING = "    wiring: {fed: hv, other: open}\n  - kind: ratio\n"


def refusals(tmp_path: Path, old: str, new: str, scenario: str = "default") -> list[InputError]:
    text = ROUTINE.read_text(encoding="utf-8")
    assert old in text, old
    path = tmp_path / "seq.yaml"
    path.write_text(text.replace(old, new, 1), encoding="utf-8")
    with pytest.raises((InputError, InputErrors)) as caught:
        prepare(RunOptions(path, scenario=scenario))
    errors = caught.value.errors if isinstance(caught.value, InputErrors) else [caught.value]
    return errors


def test_the_routine_sequence_with_its_ratio_step_passes_check() -> None:
    assert prepare(RunOptions(ROUTINE)).sequence.steps[3].kind == "ratio"


def test_a_tap_off_the_nameplate_is_refused(tmp_path) -> None:
    found = refusals(tmp_path, RATIO, "    taps: [0, 3]\n")
    assert len(found) == 1 and "tap 3 is not on the nameplate" in found[0].message and found[0].line > 1


def test_a_ratio_step_with_the_other_winding_shorted_is_refused(tmp_path) -> None:
    found = refusals(tmp_path, WIRING, "    wiring: {fed: hv, other: short}\n  - kind: ratio\n")
    assert any("needs the other winding open" in e.message for e in found)


def test_a_current_target_is_refused(tmp_path) -> None:
    found = refusals(tmp_path, "    voltage: 400 V               # about 6 %", "    current: 1 A                 # about 6 %")
    assert any("takes 'voltage'" in e.message for e in found)


def test_a_station_without_open_winding_channels_is_refused(tmp_path) -> None:
    scenario = (ROOT / "sim_configs" / "default.yaml").read_text(encoding="utf-8")
    path = tmp_path / "no-open.yaml"
    path.write_text(scenario.replace("  open_winding: [2]", "  # open_winding: [2]"), encoding="utf-8")
    found = refusals(tmp_path, RATIO, RATIO, scenario=str(path))
    assert any("'open_winding'" in e.message for e in found)


def test_an_analyser_profile_without_the_ratio_commands_is_refused(tmp_path) -> None:
    station = tmp_path / "station.yaml"
    from harness.runner.sim_station import sim_station_text
    station.write_text(sim_station_text().replace("profile: generic-power-analyser", "profile: compact-power-analyser"),
                       encoding="utf-8")
    text = ROUTINE.read_text(encoding="utf-8")
    path = tmp_path / "seq.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises((InputError, InputErrors)) as caught:
        prepare(RunOptions(path, station=station))
    errors = caught.value.errors if isinstance(caught.value, InputErrors) else [caught.value]
    assert any("compact-power-analyser' has no set_channel_voltage_range, voltages, phase_angle" in e.message
               for e in errors)
