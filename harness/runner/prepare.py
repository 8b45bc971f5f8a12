"""Before anything is energised: load sequence and station, cross-check them, refuse what
only the simulated bay may do."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from harness.common.errors import InputError, UsageError
from drivers.profile import load_profile
from harness.common.yamlio import LoadedYaml, load_file, load_text, validate
from harness.config.checks import check
from harness.config.sequence import Sequence
from harness.config.station import Station
from harness.runner import steps as _steps  # noqa: F401 - a step model without an executor fails here, before check passes
from harness.config.station_checks import check_station
from harness.runner.sim_station import SIM_STATION_FILE, sim_station


@dataclass
class RunOptions:
    sequence: Path
    station: Path | None = None
    scenario: str = "default"
    faults: tuple[str, ...] = ()
    time_scale: float | None = None
    yes: bool = False
    quiet: bool = False
    defer_stopped_report: bool = False
    """A run that stopped hands the prompt back at once and leaves its report to the caller."""


@dataclass
class Prepared:
    sequence: Sequence
    sequence_text: str
    station: Station
    station_text: str
    station_file: str
    scenario: Any = None


def prepare(options: RunOptions) -> Prepared:
    """Load and cross-check sequence and station; nothing is touched on the bay."""
    scenario = None
    loaded = load_file(options.sequence)
    _not_a_record(loaded)
    sequence = validate(Sequence, loaded)
    if options.station is None:
        from harness.sim.scenario import load_scenario
        try:
            scenario = load_scenario(options.scenario)
        except InputError as exc:
            if exc.line or Path(options.scenario).suffix in (".yaml", ".yml"):
                raise  # a scenario file's own error, at its place in the file
            raise UsageError(f"--sim: {exc.message}") from exc
        station, station_text = sim_station(scenario=scenario)
        station_file = SIM_STATION_FILE
        st_loaded = load_text(station_text, station_file)
    else:
        st_loaded = load_file(options.station)
        station, station_text, station_file = validate(Station, st_loaded), st_loaded.text, str(options.station)
    check_station(station, st_loaded, load_profile)
    check(sequence, station, loaded, load_profile)
    if options.yes and not station.simulated:
        raise InputError("--yes answers prompts only on the simulated bay; a real bay needs its operator",
                         station_file, 1, 1)
    if options.time_scale not in (None, 1.0) and not station.simulated:
        raise InputError("--time-scale is for the simulated bay only; a real bay runs in real time", station_file, 1, 1)
    return Prepared(sequence, loaded.text, station, station_text, station_file, scenario)


def _not_a_record(loaded: LoadedYaml) -> None:
    data = loaded.data
    if isinstance(data, dict) and "steps" not in data and ("no_load" in data or "load" in data):
        raise loaded.error((), "this is a record of readings, not a test sequence: evaluate it with "
                               "'harness evaluate'")




