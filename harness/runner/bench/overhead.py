"""The whole reading loop against a raw pyvisa query-and-parse loop on the same instrument.

The simulated bay runs in its own process, as an instrument would: the loops then share nothing
but the socket, and the server's work weighs on each alike. The harness side is ``Run.read()``
as every energising step calls it, on the ramp's analyser settings with the source on at zero
volts, and with the parts a run gives it (the store behind the run's ``Recorder``, the progress
display behind ``GuardedDisplay``): analyser snapshot and parse, wiring ratios, the store, the
supervisor's limit checks on every phase, the winding-temperature and source-output watches
when due, the progress display, then the ramp controller's own per-reading work (the measured
quantity, the no-load current guard, the settling test). Each harness round ends by committing
its samples, inside its time, so its store work is counted in it and never in a neighbour's.

The raw side is what a lab script does: pyvisa's ``query`` of the same snapshot command and
``float`` of the fields, on the driver's own session (the same connection: see ``_series``). A third side, the harness's driver alone (``snapshot()``: its
transport and its parse, with the special-value checks), splits the harness's time into the
instrument's and the loop's own (``loop_us_per_reading``). A fourth, the driver followed by
5 us of busy work, shows what the host charges for any work at all between two queries
(``any_work_ratio``): on a loopback socket the simulated instrument's thread, given a gap, falls
asleep and must be woken (tens of microseconds on a virtual machine), a cost no loop that does
something per reading avoids and that a real instrument's millisecond replies would hide.
A second, shorter series (raw and harness only) serves the bay with each instrument answering
a millisecond after a query, as a fast LAN analyser does (``instrument_ratio``): the loop's own
work against a real instrument's round trip. Last, ``Run.read()`` alone with the bay in its own
process and served from threads of the run's own process, as ``harness run`` serves it
(``in_process_ratio``): whether those threads hold a run back.

Within each round the sides take turns in blocks of a few dozen readings, the order reversed
every turn, so that a change of the machine's load (a shared host) weighs on all alike; the
figure of a side in a round is its median block (a stall of the shared host falls on one block),
plus, for the harness, its commit of the round's samples whole. The ratio of the harness's figure
to the raw loop's in a round is one figure, and the median of the rounds' figures, their spread
(largest less smallest) and their interquartile range are reported.
"""

from __future__ import annotations

import contextlib
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any, Callable, Iterator

from harness.runner.bench import verdict

ROUNDS = 20
READINGS_PER_ROUND = 2000
BLOCK = 50  # readings per turn of a side within a round
ANY_WORK_S = 5e-6  # the "any work" side: this much busy work between two queries
TARGET_RATIO = 1.05
INSTRUMENT_REPLY_S = 0.001  # a fast LAN power analyser's time to answer a snapshot (recalled, no source)


@contextlib.contextmanager
def served_bay(reply_delay: float = 0.0) -> Iterator[dict[str, str]]:
    """The default simulated bay served from a child process, each instrument answering
    ``reply_delay`` real seconds after a query; its instruments' resource strings."""
    from harness.sim.server import ROLES

    code = ("from harness.sim.server import serve_forever; from harness.sim.scenario import load_scenario; "
            f"serve_forever(load_scenario('default'), reply_delay={float(reply_delay)!r})")
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True)
    try:
        assert proc.stdout is not None
        resources: dict[str, str] = {}
        for _ in ROLES:  # one line per instrument the bay serves
            role, resource = proc.stdout.readline().split()[:2]
            resources[role] = resource
        yield resources
    finally:
        proc.terminate()
        proc.communicate(timeout=10)


@contextlib.contextmanager
def _run_on(resources: dict[str, str], folder: Path) -> Iterator[Any]:
    """A run of the demo sequence on the served bay, in its first step, the source on at zero."""
    from harness.common.clock import Clock
    from harness.runner.bay import open_bay
    from harness.runner.bench.startup import CHECK_SEQUENCE, examples_folder
    from harness.runner.context import Run
    from harness.runner.operators import AnsweringOperator
    from harness.runner.prepare import RunOptions, prepare
    from harness.runner.progress import GuardedDisplay, Progress
    from harness.runner.recorder import Recorder
    from harness.runner.steps.ramp import RAMP_AVERAGING_S
    from harness.runner.sim_station import sim_station
    from harness.store import Store

    prepared = prepare(RunOptions(examples_folder() / CHECK_SEQUENCE))
    station, station_text = sim_station(resources)
    with Store(folder) as store, Progress(quiet=False) as progress:
        run_id = store.begin_run(unit="bench", lab=station.lab, station_name=station.name, sequence_text="",
                                 station_text=station_text, software_version="bench", simulated=None)
        recorder = Recorder(store, run_id)
        bay = open_bay(station)
        try:
            run = Run(run_id, prepared.sequence, station, Clock(1.0), bay, recorder, GuardedDisplay(progress),
                      AnsweringOperator(bay.bay_control))
            recorder.begin_step(run_id, 0, "ramp", "overhead")
            run.step_index, run.step_title = 0, "overhead"
            run.range_for_limits()
            run.use_averaging(RAMP_AVERAGING_S)
            run.energise()
            yield run
        finally:
            run.make_safe()
            bay.close()
            recorder.close()


def bench_overhead(rounds: int = ROUNDS, n: int = READINGS_PER_ROUND) -> dict[str, Any]:
    us = _series(0.0, rounds, n, ("raw", "harness", "driver", "any_work"))
    ratios = [h / r for r, h in zip(us["raw"], us["harness"])]
    quartiles = statistics.quantiles(ratios, n=4) if len(ratios) > 1 else [ratios[0]] * 3
    harness_us, driver_us = statistics.median(us["harness"]), statistics.median(us["driver"])
    # The same loop against an instrument that takes INSTRUMENT_REPLY_S to answer, as a fast
    # LAN analyser does: the loop's own work against a real instrument's round trip.
    slow = _series(INSTRUMENT_REPLY_S, max(2, rounds // 2), max(BLOCK, n // 5), ("raw", "harness"))
    slow_ratios = [h / r for r, h in zip(slow["raw"], slow["harness"])]
    ratio, instrument_ratio = round(statistics.median(ratios), 3), round(statistics.median(slow_ratios), 4)
    return {"ratio": ratio, "ratio_spread": round(max(ratios) - min(ratios), 3),
            "ratio_iqr": round(quartiles[2] - quartiles[0], 3), "ratios": [round(x, 3) for x in ratios],
            "raw_pyvisa_us_per_reading": round(statistics.median(us["raw"]), 1),
            "harness_us_per_reading": round(harness_us, 1),
            "driver_us_per_reading": round(driver_us, 1),
            "loop_us_per_reading": round(harness_us - driver_us, 1),
            "any_work_ratio": round(statistics.median(a / r for r, a in zip(us["raw"], us["any_work"])), 3),
            "readings_per_second": round(1e6 / harness_us, 1),
            "instrument_reply_ms": INSTRUMENT_REPLY_S * 1e3,
            "instrument_ratio": instrument_ratio,
            "instrument_ratio_spread": round(max(slow_ratios) - min(slow_ratios), 4),
            "goals": {"ratio": verdict(ratio, TARGET_RATIO, at_most=True),
                      "instrument_ratio": verdict(instrument_ratio, TARGET_RATIO, at_most=True)},
            **_bay_placement(),
            "rounds": rounds, "readings_per_round": n, "target_ratio": TARGET_RATIO,
            "sim_analyser_us_per_update": round(_sim_analyser_us_per_update(), 2)}


def _series(reply_delay: float, rounds: int, n: int, wanted: tuple[str, ...]) -> dict[str, list[float]]:
    """Per-reading microseconds of the ``wanted`` sides in each round, on a bay whose instruments
    answer ``reply_delay`` real seconds after a query."""
    from harness.runner.steps.ramp import SETTLED_WINDOW_FACTOR, _settled, _stop_before_current_limit, measured

    with served_bay(reply_delay) as resources, tempfile.TemporaryDirectory(prefix="harness-bench-overhead-") as scratch, \
            _run_on(resources, Path(scratch)) as run:
        analyser = run.bay.analyser
        # The raw side queries through plain pyvisa on the driver's own session: the same socket
        # and the same thread of the simulated instrument. On a loopback socket a connection's
        # round trip is about 50 or about 120 us depending on where the host happens to run the
        # instrument's thread for it (measured here: two connections side by side kept 51 and
        # 117 us medians); two connections would measure that placement, not the loop.
        raw = analyser.transport.visa_resource
        query = analyser.snapshot_command
        applied: list[tuple[float, float]] = []
        previous: list[Any] = [None]
        target = 0.5 * run.supervisor.limits.voltage
        window = SETTLED_WINDOW_FACTOR * run.measure_averaging  # the ramp's own settling window

        def harness_reading() -> None:
            s = run.read()
            measured(s, "voltage")
            _stop_before_current_limit(run, previous[0], s, target, target)
            previous[0] = s
            if not applied or s.u_source != applied[-1][1]:
                applied.append((s.t, s.u_source))
            del applied[:-20]
            _settled(applied, 0.0015, window)

        def raw_reading() -> None:
            [float(v) for v in raw.query(query).replace(",", ";").split(";")]

        def any_work_reading() -> None:  # the driver, then a few microseconds of work before the next query
            analyser.snapshot()
            until = time.perf_counter() + ANY_WORK_S
            while time.perf_counter() < until:
                pass

        sides: dict[str, Side] = {"raw": (raw_reading, None), "harness": (harness_reading, run.store.flush),
                                  "driver": (analyser.snapshot, None), "any_work": (any_work_reading, None)}
        return _alternating({name: sides[name] for name in wanted}, rounds, n)


def _bay_placement(blocks: int = 20, block: int = 200) -> dict[str, float]:
    """``Run.read()`` per reading with the simulated bay in its own process and with it served
    from threads of the run's own process (as ``harness run`` serves it): whether those threads
    hold a run back. Median of ``blocks`` blocks, own process before and after in-process."""
    from harness.common.clock import Clock
    from harness.sim.bay import Bay
    from harness.sim.scenario import load_scenario
    from harness.sim.server import SimServer

    def per_reading(resources: dict[str, str]) -> float:
        with tempfile.TemporaryDirectory(prefix="harness-bench-overhead-") as scratch, \
                _run_on(resources, Path(scratch)) as run:
            return _alternating({"read": (run.read, None)}, 1, blocks * block, block)["read"][0]

    with served_bay() as resources:
        before = per_reading(resources)
    with SimServer(Bay(load_scenario("default"), Clock(1.0))) as server:
        in_process = per_reading(server.resources())
    with served_bay() as resources:
        after = per_reading(resources)
    own = (before + after) / 2
    return {"read_us_bay_own_process": round(own, 1), "read_us_bay_in_process": round(in_process, 1),
            "in_process_ratio": round(in_process / own, 3)}


def _sim_analyser_us_per_update(n: int = 300) -> float:
    """The simulated analyser's own work per snapshot when every query brings a new update (the
    costly case), without sockets: the bay's share of the raw figure."""
    from harness.common.clock import SteppedClock
    from harness.sim.bay import Bay
    from harness.sim.devices import analyser_device
    from harness.sim.scenario import load_scenario

    clock = SteppedClock()
    bay = Bay(load_scenario("default"), clock)
    device = analyser_device(bay)
    bay.source_command("output", True)
    bay.source_command("voltage", 415.0)
    clock.sleep(10.0)
    text = ("MEAS:VOLT:AC? (@1);:MEAS:VOLT:MEAN? (@1);:MEAS:CURR:AC? (@1);:MEAS:POW:AC? (@1);"
            ":MEAS:FREQ? (@1)")
    began = time.perf_counter()
    for _ in range(n):
        clock.sleep(0.2)   # past the next update instant
        device.handle(text)
    return (time.perf_counter() - began) / n * 1e6


Side = tuple[Callable[[], Any], Callable[[], None] | None]


def _alternating(sides: dict[str, Side], rounds: int, n: int, block: int = BLOCK) -> dict[str, list[float]]:
    """Per-reading microseconds of each side in each round. Within a round the sides take turns
    in blocks of ``block`` readings, the order reversed every turn (A B C C B A ...), so that a
    change of the machine's load falls on every side alike; a side's figure for the round is its
    median block, so that a stall of the shared host (another process holding the core for tens
    of milliseconds) falls on one block and not on the figure. A side's closing call (the
    harness's commit of the round's samples) is added to its round whole, never thinned."""
    times: dict[str, list[float]] = {name: [] for name in sides}
    for _ in range(50):
        for fn, _close in sides.values():
            fn()
    order = list(sides.items())
    clock = time.perf_counter
    turns = max(1, n // block)
    for _ in range(rounds):
        blocks: dict[str, list[float]] = {name: [] for name in sides}
        for turn in range(turns):
            for name, (fn, _close) in (order if turn % 2 == 0 else order[::-1]):
                t0 = clock()
                for _ in range(block):
                    fn()
                blocks[name].append(clock() - t0)
        for name, (_fn, close) in order:
            closing = 0.0
            if close is not None:
                t0 = clock()
                close()
                closing = clock() - t0
            times[name].append((statistics.median(blocks[name]) + closing / turns) / block * 1e6)
    return times
