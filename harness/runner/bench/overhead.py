"""The whole reading loop against a raw pyvisa query-and-parse loop on the same instrument.

The simulated bay runs in its own process, as an instrument would: the two loops then share
nothing but the socket, and the server's work weighs on both alike. The harness side is
``Run.read()`` as every energising step calls it, with the source on at zero volts: analyser
snapshot and parse, wiring ratios, the store (its background commits included), the
supervisor's limit checks, the winding-temperature and source-output watches when due, the
progress display, then the ramp controller's own per-reading work (the measured quantity and its
settling test). The raw side is what a lab script does: ``query`` the same snapshot command and
``float`` the fields. The two take turns in rounds (A B B A A B ...) so that a drift of the
machine's speed weighs on both; the ratio of each pair of neighbouring rounds is one figure, and
the median of those and their spread (largest less smallest) are reported.
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

ROUNDS = 8
READINGS_PER_ROUND = 1000
TARGET_RATIO = 1.05


@contextlib.contextmanager
def served_bay() -> Iterator[dict[str, str]]:
    """The default simulated bay served from a child process; its instruments' resource strings."""
    code = ("from harness.sim.server import serve_forever; from harness.sim.scenario import load_scenario; "
            "serve_forever(load_scenario('default'))")
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True)
    try:
        assert proc.stdout is not None
        resources: dict[str, str] = {}
        for _ in range(5):
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
    from harness.runner.progress import Progress
    from harness.runner.sim_station import sim_station
    from harness.store import Store

    prepared = prepare(RunOptions(examples_folder() / CHECK_SEQUENCE))
    station, station_text = sim_station(resources)
    with Store(folder) as store, Progress(quiet=False) as progress:
        run_id = store.begin_run(unit="bench", lab=station.lab, station_name=station.name, sequence_text="",
                                 station_text=station_text, software_version="bench", simulated=None)
        bay = open_bay(station)
        try:
            run = Run(run_id, prepared.sequence, station, Clock(1.0), bay, store, progress,
                      AnsweringOperator(bay.bay_control))
            store.begin_step(run_id, 0, "hold", "overhead")
            run.step_index, run.step_title = 0, "overhead"
            run.energise()
            yield run
        finally:
            run.make_safe()
            bay.close()


def bench_overhead(rounds: int = ROUNDS, n: int = READINGS_PER_ROUND) -> dict[str, Any]:
    import pyvisa

    from harness.runner.steps.ramp import _settled, measured

    with served_bay() as resources, tempfile.TemporaryDirectory(prefix="harness-bench-overhead-") as scratch, \
            _run_on(resources, Path(scratch)) as run:
        rm = pyvisa.ResourceManager("@py")
        raw = rm.open_resource(resources["analyser"], read_termination="\n", write_termination="\n", timeout=2000)
        query = run.bay.analyser.snapshot_command
        applied: list[tuple[float, float]] = []

        def harness_reading() -> None:
            s = run.read()
            measured(s, "current")
            applied.append((s.t, s.u_rms))
            del applied[:-20]
            _settled(applied, 0.0015, 0.4)

        def raw_reading() -> None:
            [float(v) for v in raw.query(query).replace(",", ";").split(";")]  # type: ignore[attr-defined]

        raw_us, harness_us = _alternating(raw_reading, harness_reading, rounds, n)
        raw.close()
        rm.close()
    ratios = [h / r for r, h in zip(raw_us, harness_us)]
    return {"ratio": round(statistics.median(ratios), 3), "ratio_spread": round(max(ratios) - min(ratios), 3),
            "ratios": [round(x, 3) for x in ratios],
            "raw_pyvisa_us_per_reading": round(statistics.median(raw_us), 1),
            "harness_us_per_reading": round(statistics.median(harness_us), 1),
            "readings_per_second": round(1e6 / statistics.median(harness_us), 1),
            "rounds": rounds, "readings_per_round": n, "target_ratio": TARGET_RATIO,
            "sim_analyser_us_per_update": round(_sim_analyser_us_per_update(), 2)}


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


def _alternating(a: Callable[[], None], b: Callable[[], None], rounds: int, n: int) -> tuple[list[float], list[float]]:
    """Per-call microseconds of a and b in each round, the order alternating round by round."""
    times: dict[str, list[float]] = {"a": [], "b": []}
    for _ in range(50):
        a()
        b()
    for r in range(rounds):
        order = (("a", a), ("b", b)) if r % 2 == 0 else (("b", b), ("a", a))
        for key, fn in order:
            t0 = time.perf_counter()
            for _ in range(n):
                fn()
            times[key].append((time.perf_counter() - t0) / n * 1e6)
    return times["a"], times["b"]
