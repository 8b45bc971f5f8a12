"""One run of a sequence: validate, open the bay, run the steps, make safe, evaluate, report.

Every way out of the steps - completion, a trip, an instrument fault, an exception, the
operator's abort, Ctrl-C or SIGTERM - passes through the same safe-state procedure.
"""

from __future__ import annotations

import contextlib
import signal
import traceback
from dataclasses import dataclass, field
from typing import Any, Iterator

from drivers.errors import InstrumentError, InstrumentReportedError
from harness import __version__
from harness.common.clock import Clock
from harness.runner.sim_station import sim_station
from harness.config.station import Station
from harness.runner.bay import open_bay
from harness.runner.context import Run
from harness.runner.evaluation import evaluate_run
from harness.runner.prepare import Prepared, RunOptions, prepare
from harness.runner.progress import Progress
from harness.runner.sequencer import run_steps
from harness.runner.steps.off import NotConfirmed
from harness.runner.steps.prompt import OperatorAbort
from harness.safety import Trip

EXIT = {"passed": 0, "failed": 1, "tripped": 3, "aborted": 4, "unsafe": 5}
DEFAULT_SIM_TIME_SCALE = 20.0
WATCHDOG_FLOOR_REAL_S = 3.0  # the source's watchdog never fires on a host stall shorter than this


class Terminated(Exception):
    """SIGTERM arrived: handled like Ctrl-C."""


@contextlib.contextmanager
def simulated_bay(prepared: Prepared, options: RunOptions, clock: Clock) -> Iterator[tuple[Station, str]]:
    from harness.sim.bay import Bay as SimBay
    from harness.sim.server import SimServer

    scenario = prepared.scenario
    with SimServer(SimBay(scenario, clock, faults=options.faults)) as server:
        yield sim_station(server.resources(), scenario)


@contextlib.contextmanager
def signals_raise() -> Iterator[None]:
    """SIGTERM raises like Ctrl-C while the steps run."""
    def on_term(signum: int, frame: Any) -> None:
        raise Terminated("terminated by SIGTERM")
    previous = signal.signal(signal.SIGTERM, on_term)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


@contextlib.contextmanager
def signals_held() -> Iterator[list[int]]:
    """While the bay is made safe, Ctrl-C and SIGTERM are noted, not obeyed."""
    arrived: list[int] = []
    handlers = {s: signal.signal(s, lambda signum, frame: arrived.append(signum)) for s in (signal.SIGINT, signal.SIGTERM)}
    try:
        yield arrived
    finally:
        for s, h in handlers.items():
            signal.signal(s, h)


@dataclass
class RunOutcome:
    run_id: str
    status: str
    exit_code: int
    trip: dict[str, Any] | None
    results: dict[str, Any] | None
    report: str | None
    database: str
    folder: str
    safe_state: dict[str, Any] | None
    warnings: list[str] = field(default_factory=list)
    samples: int = 0

    def as_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


def execute(options: RunOptions, store: Any) -> RunOutcome:
    prepared = prepare(options)
    simulated = options.station is None
    scale = options.time_scale or (DEFAULT_SIM_TIME_SCALE if prepared.station.simulated else 1.0)
    clock = Clock(scale)
    with contextlib.ExitStack() as stack:
        station, station_text = prepared.station, prepared.station_text
        if simulated:
            station, station_text = stack.enter_context(simulated_bay(prepared, options, clock))
        run_id = store.begin_run(
            unit=prepared.sequence.unit.serial, lab=station.lab, station_name=station.name,
            sequence_text=prepared.sequence_text, station_text=station_text, software_version=__version__,
            simulated={"scenario": options.scenario, "faults": list(options.faults), "time_scale": scale} if station.simulated else None)
        progress = stack.enter_context(Progress(quiet=options.quiet))
        return _run_on_bay(run_id, prepared, station, clock, store, progress, options)


def _run_on_bay(run_id: str, prepared: Prepared, station: Station, clock: Clock, store: Any,
                progress: Progress, options: RunOptions) -> RunOutcome:
    try:
        bay = open_bay(station)
    except InstrumentError as exc:
        return _finish(store, run_id, "tripped", Trip(f"instrument fault before energising: {exc}").as_dict(), None, None,
                       {"confirmed": True, "method": "never energised", "notes": []}, [])
    store.set_instruments(run_id, bay.identities)
    run = Run(run_id, prepared.sequence, station, clock, bay, store, progress, yes=options.yes)
    try:
        status, trip = _steps(run)
        safe = _final_safe_state(run)
    finally:
        bay.close()
    if not safe.confirmed:
        status = "unsafe"
        run.event("unsafe", "DE-ENERGISATION NOT CONFIRMED: THE BAY MAY STILL BE LIVE. Treat it as live; "
                            "isolate and earth it by hand before anyone approaches.", safe.as_dict())
    record, results = evaluate_run(run)
    if status == "passed" and results and not all(c["passed"] for c in results.get("checks", [])):
        status = "failed"
    return _finish(store, run_id, status, trip, record, results, safe.as_dict(), run.warnings)


def _steps(run: Run) -> tuple[str, dict[str, Any] | None]:
    try:
        with signals_raise():
            _start_at_zero(run)
            run_steps(run.sequence.steps, run)
        return "passed", None
    except NotConfirmed as exc:
        return "unsafe", _trip(run, exc)
    except Trip as exc:
        return "tripped", _trip(run, exc)
    except InstrumentError as exc:
        return "tripped", _trip(run, Trip(f"instrument fault: {exc}", step=run.step_title, time=run.clock.now()))
    except (KeyboardInterrupt, Terminated, OperatorAbort) as exc:
        cause = str(exc) or "interrupted by Ctrl-C"
        run.event("abort", cause)
        return "aborted", None
    except Exception as exc:  # noqa: BLE001 - any failure still ends in the safe state
        run.event("error", traceback.format_exc(limit=8))
        return "tripped", _trip(run, Trip(f"internal error: {exc!r}", step=run.step_title, time=run.clock.now()))


def _start_at_zero(run: Run) -> None:
    """The source's output off and its setpoint at zero, confirmed, before the first step."""
    source = run.bay.source
    source.set_output(False)
    source.set_voltage(0.0)
    source.set_frequency(run.sequence.transformer.frequency)  # both tests run at rated frequency
    if source.output_is_on() or source.voltage_setpoint() != 0.0:
        raise Trip("the source did not confirm output off at zero volts before the run", step="start")
    _arm_source_protection(run)
    run.update_interval = run.measure_averaging = run.bay.analyser.averaging()
    run.event("ready", f"instruments identified; source output off at zero volts; analyser updates every "
                       f"{run.update_interval:g} s")


def _arm_source_protection(run: Run) -> None:
    """The source's own protection as a backstop below the software: its current trip at the bay's
    hard current limit, its slew limited to the bay's, and its communication watchdog."""
    source, station = run.bay.source, run.station
    source.set_current_protection(station.limits.current)
    source.set_slew(station.limits.slew)  # the bay's fastest allowed change, for every ramp
    if station.safe_state.source_watchdog is not None and source.has_watchdog:
        seconds = run.clock.at_least_real(station.safe_state.source_watchdog, WATCHDOG_FLOOR_REAL_S)
        try:
            source.set_watchdog(seconds)
        except InstrumentReportedError as exc:
            run.warn(f"the source refused a {seconds:g} s watchdog ({exc.text}); it is left disarmed")


def _trip(run: Run, exc: Trip) -> dict[str, Any]:
    trip = exc.as_dict()
    trip["step"] = trip["step"] or run.step_title
    run.event("trip", exc.sentence(), trip)
    return trip


def _final_safe_state(run: Run):
    with signals_held() as arrived:
        outcome = run.make_safe()
    if arrived:
        outcome.notes.append("a stop signal arrived while the bay was made safe; it was held until now")
    run.event("safe-state", "source set to zero and output off; de-energisation "
              + ("confirmed" if outcome.confirmed else "NOT confirmed")
              + f" by {outcome.method}", outcome.as_dict())
    return outcome


def _finish(store: Any, run_id: str, status: str, trip: dict[str, Any] | None, record: dict[str, Any] | None,
            results: dict[str, Any] | None, safe: dict[str, Any] | None, warnings: list[str]) -> RunOutcome:
    exit_code = EXIT[status]
    store.finish_run(run_id, status, exit_code, trip, record, results)
    # No report here: the caller shows the outcome first, then writes it (runner.reporting.hand_back).
    return RunOutcome(run_id, status, exit_code, trip, results, None,
                      str(store.path), str(store.run_folder(run_id)), safe, warnings, store.run(run_id)["samples"])
