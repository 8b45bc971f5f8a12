"""Take N readings at an interval until they are stable, and keep their statistics.

Stability: the relative standard deviation of U, I and P over the last N readings is within
the step's criterion. Readings go on (a sliding window) up to ``max_readings``; a window that
never settles is kept with a warning, since an unstable reading is a finding in itself.
"""

from __future__ import annotations

import numpy as np

from harness.config.steps import Measure
from harness.calc.reduce import window_stats
from harness.common.clock import Cadence
from harness.common.reading import QUANTITIES, Sample
from harness.runner.context import MeasuredReading, Run
from harness.runner.steps import register



def measure(run: Run, test: str, label: str, readings: int, interval: float, stability_pct: float,
            max_readings: int, target_pct: float | None = None) -> MeasuredReading:
    window: list[Sample] = []
    temps: list[float] = []
    core: list[float] = []
    mean: dict[str, float] = {}
    std: dict[str, float] = {}
    spread = float("inf")
    run.use_averaging(run.measure_averaging)
    if run.last_sample is not None:
        run.fit_ranges(run.last_sample)
    cadence = Cadence(run.clock, interval)  # readings `interval` apart, start to start
    for _ in range(max_readings):
        cadence.wait()
        window.append(run.read(tag=test))
        if test == "load-loss":
            t = run.winding_temperature()
            if t is not None:
                temps.append(t)
        elif test == "no-load":
            t = run.read_temperature("oil")
            if t is not None:
                core.append(t)
        window = window[-readings:]
        if len(window) == readings:
            mean, std, spread = _stats(window)
            if spread <= stability_pct:
                break
    stable = spread <= stability_pct
    if not stable:
        run.warn(f"{label}: readings not stable within {stability_pct:g} % after {max_readings} readings")
    phase_mean, phase_std = _phase_stats(window)
    result = MeasuredReading(test, label, run.step_index, run.fed, len(window), mean, std, stable,
                             float(np.mean(temps[-readings:])) if temps else None, target_pct, run.ranges,
                             phase_mean=phase_mean, phase_std=phase_std)
    _store(run, label, window, result)
    run.readings.append(result)
    if core:
        result.core_temperature = float(np.mean(core[-readings:]))
        run.event("core-temperature", f"{label}: oil {result.core_temperature:.1f} degC during the reading "
                  "(taken as the core temperature)", {"step": run.step_index, "temperature_C": result.core_temperature})
    elif test == "no-load":
        result.core_temperature = run.oil_temperature
    return result


def _store(run: Run, label: str, window: list[Sample], r: MeasuredReading) -> None:
    """The reading's own values (channel empty) and, for three phases, one row per channel."""
    rows = [(None, r.mean, r.std)] + ([(k + 1, m, s) for k, (m, s) in enumerate(zip(r.phase_mean, r.phase_std))]
                                      if r.phases == 3 else [])
    for channel, mean, std in rows:
        stats = {f"{q}_{kind}": values[q] for kind, values in (("mean", mean), ("std", std)) for q in QUANTITIES}
        run.store.add_reading(run.run_id, run.step_index, label, window[0].id, window[-1].last_id,
                              {**stats, "count": r.count, "stable": r.stable, "channel": channel})


def _phase_stats(window: list[Sample]) -> tuple[tuple[dict[str, float], ...], tuple[dict[str, float], ...]]:
    """Means and standard deviations per phase over the window (the same reduction per channel)."""
    means, stds = [], []
    for k in range(len(window[0].phases)):
        reduced = {q: window_stats(np.fromiter((getattr(s.phases[k], q) for s in window), float, len(window)))
                   for q in QUANTITIES}
        means.append({q: r["mean"] for q, r in reduced.items()})
        stds.append({q: r["std"] for q, r in reduced.items()})
    return tuple(means), tuple(stds)


def _stats(window: list[Sample]) -> tuple[dict[str, float], dict[str, float], float]:
    """Means and standard deviations of the window, and the largest relative s.d. of U, I, P in %."""
    columns = {q: np.fromiter((getattr(s, q) for s in window), float, len(window)) for q in QUANTITIES}
    reduced = {q: window_stats(values) for q, values in columns.items()}
    mean = {q: r["mean"] for q, r in reduced.items()}
    std = {q: r["std"] for q, r in reduced.items()}
    spread = max(abs(std[q]) / abs(mean[q]) * 100 if mean[q] else float("inf") for q in ("u_rms", "i_rms", "p"))
    return mean, std, spread


@register("measure")
def execute(step: Measure, run: Run) -> None:
    label = step.label or {"no-load": "no-load", "load-loss": "load loss", "none": "reading"}[step.test]
    r = measure(run, step.test, label, step.readings, step.interval, step.stability, step.max_readings)
    m = r.mean
    run.event("reading", f"{label}: U {m['u_rms']:.5g} V, U' {m['u_mean']:.5g} V, I {m['i_rms']:.5g} A, "
                         f"P {m['p']:.5g} W ({r.count} readings, {'stable' if r.stable else 'NOT stable'})",
              {"mean": m, "std": r.std, "test": step.test})
