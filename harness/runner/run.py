"""One run of a sequence: validate, open the bay, run the steps, make safe, evaluate, report.

Every way out of the steps - completion, a trip, an instrument fault, an exception, the
operator's abort, Ctrl-C or SIGTERM - passes through the same safe-state procedure.
"""

from __future__ import annotations

import contextlib
import traceback
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Iterator

from drivers.errors import InstrumentError, InstrumentReportedError
from harness import __version__
from harness.common.clock import Clock, SteppedClock
from harness.config.station import Station
from harness.runner.bay import open_bay
from harness.runner.context import Run
from harness.runner.evaluation import evaluate_run
from harness.runner.prepare import Prepared, RunOptions, prepare
from harness.runner.operators import AnsweringOperator, TerminalOperator
from harness.runner.progress import GuardedDisplay, Progress
from harness.runner.recorder import Recorder
from harness.runner.signals import StopSignals, Terminated
from harness.runner.sequencer import run_steps
from harness.runner.steps.off import NotConfirmed
from harness.runner.steps.prompt import OperatorAbort
from harness.safety import SafeOutcome, Trip

if TYPE_CHECKING:
    from harness.store.protocol import RunStore

EXIT = {"passed": 0, "failed": 1, "tripped": 3, "aborted": 4, "unsafe": 5}
STOPPED = ("tripped", "aborted", "unsafe")
DEFAULT_SIM_TIME_SCALE = 20.0
WATCHDOG_FLOOR_REAL_S = 3.0  # the source's watchdog never fires on a host stall shorter than this


@contextlib.contextmanager
def simulated_bay(prepared: Prepared, options: RunOptions, clock: Clock) -> Iterator[tuple[Station, str]]:
    from harness.sim.bay import Bay as SimBay
    from harness.sim.server import SimServer

    assert prepared.serve is not None
    with SimServer(SimBay(prepared.scenario, clock, faults=options.faults)) as server:
        yield prepared.serve(server.resources())


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
    journal: str | None = None
    """Where the samples and events the store could not take went (None: the store took everything)."""
    notes: list[str] = field(default_factory=list)

    def as_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


def execute(options: RunOptions, store: RunStore, signals: StopSignals | None = None) -> RunOutcome:
    """Run a sequence. Ctrl-C and SIGTERM stop the steps and are held everywhere else; give
    ``signals`` to hold them also while the caller prints the outcome."""
    with contextlib.ExitStack() as stack:
        if signals is None:
            signals = stack.enter_context(StopSignals())
        with signals.obeyed():  # nothing is begun or energised yet: a stop simply stops
            prepared = prepare(options)
            scale = options.time_scale or (DEFAULT_SIM_TIME_SCALE if prepared.station.simulated else 1.0)
            clock = SteppedClock() if options.stepped_clock else Clock(scale)
            pace: float | str = "stepped" if options.stepped_clock else scale
            station, station_text = prepared.station, prepared.station_text
            if prepared.serve is not None:
                station, station_text = stack.enter_context(simulated_bay(prepared, options, clock))
        run_id = store.begin_run(
            unit=prepared.sequence.unit.serial, lab=station.lab, station_name=station.name,
            sequence_text=prepared.sequence_text, station_text=station_text, software_version=__version__,
            simulated={"scenario": prepared.scenario_name, "faults": list(options.faults), "time_scale": pace}
            if station.simulated else None)
        progress = GuardedDisplay(stack.enter_context(Progress(quiet=options.quiet)))
        recorder = Recorder(store, run_id)
        try:
            return _run_on_bay(run_id, prepared, station, clock, recorder, progress, options, signals)
        finally:
            recorder.close()


def _run_on_bay(run_id: str, prepared: Prepared, station: Station, clock: Clock, recorder: Recorder,
                progress: GuardedDisplay, options: RunOptions, signals: StopSignals) -> RunOutcome:
    never = {"confirmed": True, "method": "never energised", "notes": []}
    try:
        with signals.obeyed():
            taps = prepared.sequence.transformer.taps
            bay = open_bay(station, phases=prepared.sequence.transformer.phases, clock=clock,
                           taps=taps.steps if taps is not None and taps.changer == "on-load" else None)
    except InstrumentError as exc:
        fault = Trip(f"instrument fault before energising: {exc}").as_dict()
        return _finish(recorder, run_id, "tripped", fault, None, None, never, [], signals, options.defer_stopped_report)
    except (KeyboardInterrupt, Terminated) as exc:
        return _finish(recorder, run_id, "aborted", None, None, None, never, [f"{exc or 'interrupted by Ctrl-C'}"],
                       signals, options.defer_stopped_report)
    recorder.set_instruments(run_id, bay.identities)
    operator = AnsweringOperator(bay.bay_control) if options.yes else TerminalOperator()
    run = Run(run_id, prepared.sequence, station, clock, bay, recorder, progress, operator)
    try:
        status, trip = _steps(run, signals)
        safe = _final_safe_state(run, signals)
    finally:
        bay.close()
    if not safe.confirmed:
        status = "unsafe"
        run.event("unsafe", "DE-ENERGISATION NOT CONFIRMED: THE BAY MAY STILL BE LIVE. Treat it as live; "
                            "isolate and earth it by hand before anyone approaches.", safe.as_dict())
    status, trip = _late_faults(run, status, trip)
    record, results, status, trip = _evaluate(run, status, trip)
    if status == "passed" and results and not all(c["passed"] for c in results.get("checks", []) + results.get("compliance", [])):
        status = "failed"
    return _finish(recorder, run_id, status, trip, record, results, safe.as_dict(), run.warnings, signals,
                   options.defer_stopped_report)


def _steps(run: Run, signals: StopSignals) -> tuple[str, dict[str, Any] | None]:
    try:
        with signals.obeyed():
            run.raise_pending()
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


def _late_faults(run: Run, status: str, trip: dict[str, Any] | None) -> tuple[str, dict[str, Any] | None]:
    """A part that failed while the bay was made safe (the store, the display) after steps that
    completed: the run cannot stand as completed."""
    try:
        run.raise_pending()
    except Trip as exc:
        if status == "passed":
            return "tripped", _trip(run, exc)
        run.event("error", f"also: {exc.sentence()}")
    return status, trip


def _evaluate(run: Run, status: str, trip: dict[str, Any] | None) -> tuple[Any, Any, str, dict[str, Any] | None]:
    """The evaluation runs after the bay is safe; its failure ends the run as tripped, not as a traceback."""
    try:
        record, results = evaluate_run(run)
        return record, results, status, trip
    except Exception as exc:  # noqa: BLE001 - a bug of ours in the evaluation: the run still ends cleanly
        run.event("error", traceback.format_exc(limit=8))
        if status == "passed":
            status, trip = "tripped", _trip(run, Trip(f"the evaluation failed: {exc!r}", step="evaluation"))
        return None, None, status, trip


def _start_at_zero(run: Run) -> None:
    """The source's output off and its setpoint at zero, confirmed, before the first step."""
    source = run.bay.source
    phases = run.sequence.transformer.phases
    if getattr(source, "phases", 1) != phases:
        raise Trip(f"the source has {getattr(source, 'phases', 1)} phase(s); this {phases}-phase unit needs a "
                   f"{phases}-phase source", step="start")
    source.set_output(False)
    source.set_voltage(0.0)
    source.set_frequency(run.sequence.transformer.frequency)  # both tests run at rated frequency
    if source.output_is_on() or source.voltage_setpoint() != 0.0:
        raise Trip("the source did not confirm output off at zero volts before the run", step="start")
    _arm_source_protection(run)
    run.update_interval = run.measure_averaging = run.bay.analyser.averaging()
    simulated = (f"; simulated bay {run.clock.pace()}: every time shown is in the bay's seconds"
                 if run.station.simulated else "")
    run.event("ready", f"instruments identified; source output off at zero volts; analyser updates every "
                       f"{run.update_interval:g} s{simulated}")


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


def _final_safe_state(run: Run, signals: StopSignals) -> SafeOutcome:
    before = len(signals.arrived)
    outcome = run.make_safe()  # stop signals are held here: never obeyed while the bay is made safe
    if len(signals.arrived) > before:
        outcome.notes.append("a stop signal arrived while the bay was made safe; it was held until now")
    run.event("safe-state", "source set to zero and output off; de-energisation "
              + ("confirmed" if outcome.confirmed else "NOT confirmed")
              + f" by {outcome.method}", outcome.as_dict())
    return outcome


def _finish(recorder: Recorder, run_id: str, status: str, trip: dict[str, Any] | None, record: dict[str, Any] | None,
            results: dict[str, Any] | None, safe: dict[str, Any] | None, warnings: list[str],
            signals: StopSignals, defer_report: bool = False) -> RunOutcome:
    """Record the run's end and write its report; a report that cannot be written ends the run as
    tripped, so the exit code, the store and the report always agree. ``defer_report``: a run that
    stopped leaves its report to the caller (written after the outcome is shown, see the CLI)."""
    recorder.finish_run(run_id, status, EXIT[status], trip, record, results)
    report = None
    if not recorder.failed and not (defer_report and status in STOPPED):
        report, status, trip = _report(recorder, run_id, status, trip)
    notes = [recorder.where()] if recorder.failed else []
    if signals.held_after_steps:
        notes.append(f"a stop signal ({', '.join(signals.names())}) arrived after the steps had ended; it was held")
    return RunOutcome(run_id, status, EXIT[status], trip, results, str(report) if report else None,
                      str(recorder.path), str(recorder.run_folder(run_id)), safe, warnings, _samples(recorder, run_id),
                      str(recorder.journal.path) if recorder.journal.path else None, notes)


def _report(recorder: Recorder, run_id: str, status: str, trip: dict[str, Any] | None
            ) -> tuple[Path | None, str, dict[str, Any] | None]:
    from harness.runner.reporting import write_run_reports
    store = recorder.store
    try:
        return write_run_reports(store, run_id), status, trip
    except Exception as exc:  # noqa: BLE001 - the report writer failed: said in the store, the exit code and a new try
        failure = Trip(f"the report could not be written: {exc!r}", step="report")
        if status in ("passed", "failed"):
            status, trip = "tripped", failure.as_dict()
        try:
            store.add_event(run_id, None, "error", failure.sentence() + "\n" + traceback.format_exc(limit=8))
            store.amend_outcome(run_id, status, EXIT[status], trip)
            return write_run_reports(store, run_id), status, trip
        except Exception:  # noqa: BLE001 - it failed twice: the outcome printed is all there is
            return None, status, trip


def _samples(recorder: Recorder, run_id: str) -> int:
    if recorder.failed:
        return recorder.samples_taken
    try:
        return int(recorder.store.run(run_id)["samples"])
    except Exception:  # noqa: BLE001 - the count is for the message only
        return recorder.samples_taken
