"""`harness check --station` validates everything about a station that is known without
energising, each problem at its own place in the station file.

The stations are the built-in simulated bay's station file with one value changed.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from drivers.profile import load_profile
from harness.common.errors import InputError, InputErrors
from harness.common.yamlio import load_text
from harness.config.station_checks import EXTRA_LOW_VOLTAGE_AC_V, check_station, resource_problem
from harness.runner.prepare import RunOptions, prepare
from harness.runner.sim_station import SIM_STATION_FILE, sim_station
from harness.runner.sim_station import sim_station_text
from harness.sim.scenario import load_scenario, scenario_names

ROOT = Path(__file__).resolve().parents[2]
ROUTINE = ROOT / "sequences" / "routine_single_phase.yaml"
BASE = sim_station_text()
SOURCE = "profile: generic-ac-source, timeout: 2 s"
SAFE = "safe_state: {deenergised_voltage: 5 V, deenergised_current: 0.05 A, confirm_timeout: 5 s}"
READINGS = "readings: {late_after: 1 s, stale_after: 5 s, temperature_interval: 2 s}"


def position(text: str, needle: str) -> tuple[int, int]:
    """1-based line and column of ``needle`` in ``text``; with 'key: |value', of the value."""
    prefix, _, value = needle.rpartition("|")
    index = text.index(prefix + value) + len(prefix)
    return text.count("\n", 0, index) + 1, index - (text.rfind("\n", 0, index) + 1) + 1


def errors_of(tmp_path: Path, text: str) -> list[InputError]:
    station = tmp_path / "station.yaml"
    station.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as caught:
        prepare(RunOptions(ROUTINE, station))
    found = caught.value.errors if isinstance(caught.value, InputErrors) else [caught.value]
    assert all(e.file == str(station) for e in found)
    return found


# (old, new, the written value the error points at, words of the message)
CASES = {
    "blank profile": (SOURCE, "profile: '', timeout: 2 s", "''", "at least 1 character"),
    "profile '50 kV'": (SOURCE, "profile: 50 kV, timeout: 2 s", "50 kV", "no profile '50 kV' for kind 'ac_source'"),
    "misspelt profile": (SOURCE, "profile: generic-ac-sorce, timeout: 2 s", "generic-ac-sorce", "no profile"),
    "profile of another kind": (SOURCE, "profile: generic-thermometer, timeout: 2 s", "generic-thermometer",
                                "for kind 'thermometer', not 'ac_source'"),
    "resource '-10 %'": ('"TCPIP0::127.0.0.1::5025::SOCKET"', '"-10 %"', '"-10 %"', "not a VISA resource string"),
    "empty resource": ('"TCPIP0::127.0.0.1::5025::SOCKET"', '""', '""', "at least 1 character"),
    "port out of range": ("5025::SOCKET", "70000::SOCKET", '"TCPIP0::127.0.0.1::70000', "not a TCP port"),
    "spec: true": ("spec: 1", "spec: true", "true", "whole number"),
    "spec: 1.0": ("spec: 1", "spec: 1.0", "1.0", "whole number"),
    "2^70 A hard limit": ("  current: 20 A", f"  current: {2**70} A", f"{2**70} A", "must be at most 200000"),
    "reply timeout 1e308 s": (SOURCE, "profile: generic-ac-source, timeout: 1e308 s", "1e308 s", "at most 600"),
    "slew 1e-9 V/s": ("slew: 100 V/s", "slew: 1e-9 V/s", "1e-9 V/s", "at least 0.1"),
    "de-energised at the hard voltage": (SAFE, SAFE.replace("5 V", "1 kV"), "deenergised_voltage: |1 kV", "not extra-low voltage"),
    "de-energised at 50 V": (SAFE, SAFE.replace("5 V", "50 V"), "deenergised_voltage: |50 V", "not extra-low voltage"),
    "de-energised current 10 A of 20 A": (SAFE, SAFE.replace("0.05 A", "10 A"), "deenergised_current: |10 A", "more than 5% of the bay's"),
    "calibration date as a number": (SOURCE, SOURCE + ", calibration_due: 20270101", "20270101", "YYYY-MM-DD"),
    "calibration date that does not exist": (SOURCE, SOURCE + ", calibration_due: 2027-02-30", "2027-02-30", "date"),
    "read-back slower than the watchdog allows": (READINGS, READINGS.replace("2 s}", "2 s, source_check_interval: 20 s}"),
                                                  "20 s}", "at most 1/2 of safe_state.source_watchdog"),
    "resistance channel not a winding": ("{hv: 1, lv: 2}", "{hv: 1, LV: 2}", "channels: |{hv: 1, LV", "named by winding"),
    "two channels on one number": ("{ambient: 1, oil: 2, winding: 3}", "{ambient: 1, oil: 2, winding: 2}",
                                   "{ambient: 1, oil: 2, winding: 2}", "share one channel"),
    "channel number true": ("{hv: 1, lv: 2}", "{hv: 1, lv: true}", "true}", "valid integer"),
}


@pytest.mark.parametrize("case", CASES, ids=list(CASES))
def test_station_problem_is_refused_at_its_place(case: str, tmp_path: Path) -> None:
    old, new, at, words = CASES[case]
    assert old in BASE, old
    text = BASE.replace(old, new, 1)
    found = errors_of(tmp_path, text)
    assert len(found) == 1, [str(e) for e in found]
    assert (found[0].line, found[0].column) == position(text, at), str(found[0])
    assert words in found[0].message, str(found[0])


def test_a_fraction_of_a_small_bays_hard_limit_is_refused_below_extra_low_voltage(tmp_path: Path) -> None:
    text = BASE.replace("  voltage: 1000 V", "  voltage: 200 V").replace(SAFE, SAFE.replace("5 V", "20 V"))
    (error,) = errors_of(tmp_path, text)
    assert "more than 5% of the bay's hard limit (200 V)" in error.message
    assert (error.line, error.column) == position(text, "deenergised_voltage: |20 V")


def test_the_extra_low_voltage_bound_is_50_volts_ac() -> None:
    # IEC 61140 ELV band: not exceeding 50 V a.c. (IEC terms database, IEC 62257-7-1, 3.55).
    assert EXTRA_LOW_VOLTAGE_AC_V == 50.0


def test_several_problems_are_reported_together(tmp_path: Path) -> None:
    text = (BASE.replace(SOURCE, "profile: generic-ac-sorce, timeout: 2 s")
            .replace('"TCPIP0::127.0.0.1::5026::SOCKET"', '"-10 %"').replace(SAFE, SAFE.replace("0.05 A", "10 A")))
    assert len(errors_of(tmp_path, text)) == 3


@pytest.mark.parametrize("good", [
    BASE,
    BASE.replace(SOURCE, SOURCE + ", calibration_due: 2027-03-01"),
    BASE.replace(SAFE, SAFE.replace("}", ", source_watchdog: null}")).replace(
        READINGS, READINGS.replace("2 s}", "2 s, source_check_interval: 20 s}")),
], ids=["as built", "with a calibration date", "watchdog disarmed"])
def test_a_sound_station_passes(good: str, tmp_path: Path) -> None:
    station = tmp_path / "station.yaml"
    station.write_text(good, encoding="utf-8")
    assert prepare(RunOptions(ROUTINE, station)).station.name == "Simulated bay"


@pytest.mark.parametrize("name", scenario_names())
def test_every_built_in_stations_passes_the_checks(name: str) -> None:
    station, text = sim_station(scenario=load_scenario(name))
    check_station(station, load_text(text, SIM_STATION_FILE), load_profile)


@pytest.mark.parametrize("resource", ["TCPIP0::10.0.0.5::5025::SOCKET", "GPIB0::12::INSTR", "ASRL1::INSTR",
                                      "TCPIP::10.0.0.5::INSTR", "USB0::0x1234::0x5678::SN01::INSTR"])
def test_resource_strings_pyvisa_parses_are_accepted(resource: str) -> None:
    assert resource_problem(resource) is None


def test_a_misspelt_profile_fails_check_with_one_line_at_the_station(tmp_path: Path) -> None:
    station = tmp_path / "station.yaml"
    text = BASE.replace(SOURCE, "profile: generic-ac-sorce, timeout: 2 s")
    station.write_text(text, encoding="utf-8")
    env = {**os.environ, "HARNESS_DATA": str(tmp_path)}
    proc = subprocess.run([sys.executable, "-m", "harness.cli", "check", str(ROUTINE), "--station", str(station)],
                          capture_output=True, text=True, env=env, timeout=60, cwd=ROOT)
    line, column = position(text, "generic-ac-sorce")
    assert proc.returncode == 2 and proc.stdout == "", proc.stderr
    assert proc.stderr.strip().splitlines() == [proc.stderr.strip()]
    assert proc.stderr.startswith(f"{station}:{line}:{column}: instruments.source.profile: no profile 'generic-ac-sorce'")
    assert "site-packages" not in proc.stderr
