"""Benchmarks on the simulated bay: each returns figures; nothing here is a pass/fail test.

- overhead: per-reading cost of the harness path (snapshot query, parse, checks) against a raw
  pyvisa query loop on the same simulated analyser, interleaved in one run; and the simulated
  analyser's own work per update, without sockets.
- ramp: a ramp to rated current, time to settle against the slew-limited lower bound and the
  overshoot, for the learned ramp and for a fixed-increment baseline.
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

import numpy as np

ROUNDS = 7
READINGS_PER_ROUND = 2000


def bench_overhead(rounds: int = ROUNDS, n: int = READINGS_PER_ROUND) -> dict[str, Any]:
    """The simulated bay runs in its own process, as an instrument would: the two loops then
    share nothing but the socket, and the server's work weighs on both alike."""
    import pyvisa

    from drivers import open_instrument
    from harness.common.clock import Clock
    from harness.config.checks import station_limits
    from harness.runner.sim_station import sim_station
    from harness.safety import Supervisor

    clock = Clock(1.0)
    with _served_bay() as resources:
        station, _ = sim_station(resources)
        analyser = open_instrument("power_analyser", resources["analyser"], "generic-power-analyser", "analyser")
        rm = pyvisa.ResourceManager("@py")
        raw = rm.open_resource(resources["analyser"], read_termination="\n", write_termination="\n", timeout=2000)
        supervisor = Supervisor(station_limits(station), station.readings, clock)
        query = analyser.snapshot_command

        def harness_reading() -> None:
            ch = analyser.snapshot().channels[0]
            supervisor.check_reading(ch.u_rms, ch.u_mean, ch.i_rms, ch.p, clock.now(), 0.0)

        def raw_reading() -> None:
            raw.query(query)

        raw_us, harness_us = _interleaved(raw_reading, harness_reading, rounds, n)
        raw.close()
        rm.close()
        analyser.close()
    return {"raw_pyvisa_us_per_reading": round(raw_us, 2), "harness_us_per_reading": round(harness_us, 2),
            "ratio": round(harness_us / raw_us, 3), "readings_per_second": round(1e6 / harness_us, 1),
            "rounds": rounds, "readings_per_round": n, "target_ratio": 1.10,
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


@contextlib.contextmanager
def _served_bay() -> Iterator[dict[str, str]]:
    code = ("from harness.sim.server import serve_forever; from harness.sim.scenario import load_scenario; "
            "serve_forever(load_scenario('default'))")
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True)
    try:
        resources = dict(proc.stdout.readline().split() for _ in range(5))  # type: ignore[union-attr]
        yield resources
    finally:
        proc.terminate()
        proc.communicate(timeout=10)


def _interleaved(a: Callable[[], None], b: Callable[[], None], rounds: int, n: int) -> tuple[float, float]:
    """Median per-call microseconds of a and b, alternating rounds so drift hits both alike."""
    times: dict[str, list[float]] = {"a": [], "b": []}
    for _ in range(20):
        a(), b()
    for r in range(rounds):
        order = (("a", a), ("b", b)) if r % 2 == 0 else (("b", b), ("a", a))
        for key, fn in order:
            t0 = time.perf_counter()
            for _ in range(n):
                fn()
            times[key].append((time.perf_counter() - t0) / n * 1e6)
    return statistics.median(times["a"]), statistics.median(times["b"])


_RAMP_SEQUENCE = """\
spec: 1
name: ramp benchmark
unit: {{serial: BENCH}}
transformer:
  rated_power: 50 kVA
  phases: 1
  frequency: 50 Hz
  hv: {{rated_voltage: 6.6 kV}}
  lv: {{rated_voltage: 415 V}}
  winding_material: copper
guarantees: {{impedance: 4 %}}
limits: {{voltage: 400 V, current: 12 A, power: 5 kW, energised_time: 30 min}}
steps:
  - {{kind: prompt, text: fit the link, wiring: {{fed: hv, other: short}}}}
  - {{kind: ramp, name: learned, current: rated, tolerance: {tol} %, method: learned}}
  - {{kind: hold, name: watch learned, duration: 4 s, interval: 0.2 s}}
  - {{kind: switch-off}}
  - {{kind: wait, duration: 5 s}}
  - {{kind: ramp, name: fixed, current: rated, tolerance: {tol} %, method: fixed-increment}}
  - {{kind: hold, name: watch fixed, duration: 4 s, interval: 0.2 s}}
  - {{kind: switch-off}}
"""


def bench_ramp(tolerance_pct: float = 0.3, time_scale: float = 5.0) -> dict[str, Any]:
    from harness.runner.prepare import RunOptions
    from harness.runner.run import execute
    from harness.sim.scenario import load_scenario
    from harness.store import Store

    scenario = load_scenario("default")
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "ramp.yaml"
        path.write_text(_RAMP_SEQUENCE.format(tol=tolerance_pct), encoding="utf-8")
        with Store(Path(folder) / "data") as store:
            outcome = execute(RunOptions(path, yes=True, time_scale=time_scale, quiet=True), store)
            if outcome.status not in ("passed", "failed"):
                raise RuntimeError(f"the benchmark run ended {outcome.status}: {outcome.trip}")
            samples, events = store.samples(outcome.run_id), store.events(outcome.run_id)
    target = scenario.transformer.rated_power / scenario.transformer.hv.rated_voltage
    tau = scenario.source.settling_time_constant
    slew = scenario.source.max_slew
    learned = _settle(samples, events, "learned", "watch learned", target, tolerance_pct, slew, tau)
    fixed = _settle(samples, events, "fixed", "watch fixed", target, tolerance_pct, slew, tau)
    return {"target_A": round(target, 4), "tolerance_pct": tolerance_pct,
            "bound_s": learned["bound_s"], "settle_s": learned["settle_s"],
            "ratio_to_bound": learned["ratio"], "overshoot_pct": learned["overshoot_pct"],
            "baseline_settle_s": fixed["settle_s"], "baseline_ratio_to_bound": fixed["ratio"],
            "baseline_overshoot_pct": fixed["overshoot_pct"], "targets": {"ratio_to_bound": 1.3, "overshoot_pct": 0.5},
            "time_scale": time_scale}


def _settle(samples: dict[str, np.ndarray], events: list[dict[str, Any]], ramp: str, watch: str, target: float,
            tol_pct: float, slew: float, tau: float) -> dict[str, float]:
    """Settling time from the ramp's start: the last time the current was outside the tolerance."""
    steps = {e["text"].split(": ", 1)[1]: e for e in events if e["kind"] == "step-start"}
    first, second = steps[ramp]["data"]["step"], steps[watch]["data"]["step"]
    start = steps[ramp]["t"]
    mask = (samples["step_index"] == first) | (samples["step_index"] == second)
    t, i, u = samples["t"][mask], samples["i_rms"][mask], samples["u_rms"][mask]
    outside = np.abs(i - target) > tol_pct / 100 * target
    last_out = t[outside].max() if outside.any() else start
    later = t[t > last_out]
    settle = (later.min() if later.size else t.max()) - start
    source_volts = float(np.median(u[-5:]))
    bound = source_volts / slew + tau
    return {"settle_s": round(settle, 3), "bound_s": round(bound, 3), "ratio": round(settle / bound, 3),
            "overshoot_pct": round(max(0.0, (i.max() - target) / target * 100), 3)}


def bench_reduce() -> dict[str, Any]:
    from harness.calc.reduce import bench
    return bench()


def bench_store() -> dict[str, Any]:
    from harness.store import bench_store as run
    return run()


BENCHMARKS: dict[str, Callable[[], dict[str, Any]]] = {
    "overhead": bench_overhead, "ramp": bench_ramp, "reduce": bench_reduce, "store": bench_store,
}
