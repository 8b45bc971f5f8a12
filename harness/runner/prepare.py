"""Before anything is energised: load sequence and station, cross-check them, refuse what
only the simulated bay may do."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any, Callable

from harness.common.errors import InputError, InputErrors
from drivers.profile import load_profile
from harness.common.yamlio import LoadedYaml, load_file, load_text, validate
from harness.config.checks import check
from harness.config.sequence import Sequence
from harness.config.station import Station
from harness.runner import steps as _steps  # noqa: F401 - a step model without an executor fails here, before check passes
from harness.config.station_checks import calibration_errors, calibration_lines, check_station
from harness.runner.sim_station import PLACEHOLDER, SIM_STATION_FILE, sim_station


@dataclass
class RunOptions:
    sequence: Path
    station: Path | None = None
    scenario: str | None = None
    """The simulated unit (without a station): a scenario's name or file, or 'nameplate'; None:
    the sequence's own ``rehearse.scenario``, else the built-in default."""
    faults: tuple[str, ...] = ()
    time_scale: float | None = None
    stepped_clock: bool = False
    """The built-in simulated bay on a stepped clock: bay time moves only while the runner waits,
    so a run takes what the host needs to compute it and gives the same readings every time."""
    yes: bool = False
    quiet: bool = False
    defer_stopped_report: bool = False
    """A run that stopped hands the prompt back at once and leaves its report to the caller."""
    allow_mismatch: bool = False
    """Run on a simulated unit whose nameplate differs from the sequence's, on purpose."""
    today: dt.date | None = None
    """The test date calibrations are judged on (None: today, UTC)."""
    pdf: bool = False
    """Also print the report to PDF."""


@dataclass
class Prepared:
    sequence: Sequence
    sequence_text: str
    station: Station
    station_text: str
    station_file: str
    scenario: Any = None
    scenario_name: str | None = None
    scenario_text: str | None = None
    """The scenario file built from the nameplate (``--sim nameplate``); None for a named one."""
    serve: Callable[[dict[str, str]], tuple[Station, str]] | None = None
    """The station of the simulated bay once it is served on these resources; None on a real bay."""
    calibration: list[str] = field(default_factory=list)
    """Each instrument's calibration state on the test date and the serial *IDN? must give."""


def prepare(options: RunOptions) -> Prepared:
    """Load and cross-check sequence and station; nothing is touched on the bay."""
    scenario = scenario_name = scenario_text = serve = None
    loaded = load_file(options.sequence)
    _not_a_record(loaded)
    sequence = validate(Sequence, loaded)
    if options.station is None:
        from harness.runner import rehearsal
        scenario_name = rehearsal.scenario_choice(sequence, options.sequence, options.scenario)
        scenario, scenario_text = rehearsal.load_for(sequence, loaded, scenario_name)
        if not options.allow_mismatch:
            rehearsal.refuse_mismatch(sequence, loaded, scenario, scenario_name)
        station, station_text = sim_station(scenario=scenario)
        station_file = SIM_STATION_FILE
        st_loaded = load_text(station_text, station_file)
        serve = partial(sim_station, scenario=scenario)
    else:
        st_loaded = load_file(options.station)
        station, station_text, station_file = validate(Station, st_loaded), st_loaded.text, str(options.station)
        if options.scenario is not None:
            # The lab's station served by the simulated bay: the lab's file is checked as it is first.
            from harness.runner import rehearsal, station_rehearsal
            check_station(station, st_loaded, load_profile)
            scenario_name = rehearsal.scenario_choice(sequence, options.sequence, options.scenario)
            scenario, scenario_text = rehearsal.load_for(sequence, loaded, scenario_name)
            if not options.allow_mismatch:
                rehearsal.refuse_mismatch(sequence, loaded, scenario, scenario_name)
            scenario = station_rehearsal.fit_to_station(scenario, station)
            phases, lab_file = sequence.transformer.phases, st_loaded
            serve = partial(station_rehearsal.served_station, lab_file, phases=phases)
            station, station_text = serve(PLACEHOLDER)
            station_file = f"{options.station} (served by the simulated bay)"
            st_loaded = load_text(station_text, station_rehearsal.SERVED_FILE)
    check_station(station, st_loaded, load_profile)
    today = dt.datetime.now(dt.timezone.utc).date() if options.today is None else options.today
    expired = calibration_errors(station, st_loaded, today)
    if expired:
        raise InputErrors(expired)
    check(sequence, station, loaded, load_profile)
    if options.yes and not station.simulated:
        raise InputError("--yes answers prompts only on the simulated bay; a real bay needs its operator",
                         station_file, 1, 1)
    if options.time_scale not in (None, 1.0) and not station.simulated:
        raise InputError("--time-scale is for the simulated bay only; a real bay runs in real time", station_file, 1, 1)
    if options.stepped_clock and serve is None:
        raise InputError("--stepped-clock is for the built-in simulated bay only: a bay served by another process "
                         "keeps its own clock", station_file, 1, 1)
    return Prepared(sequence, loaded.text, station, station_text, station_file, scenario, scenario_name,
                    scenario_text, serve, calibration_lines(station, today))


def _not_a_record(loaded: LoadedYaml) -> None:
    data = loaded.data
    if isinstance(data, dict) and "steps" not in data and ("no_load" in data or "load" in data):
        raise loaded.error((), "this is a record of readings, not a test sequence: evaluate it with "
                               "'harness evaluate'")




