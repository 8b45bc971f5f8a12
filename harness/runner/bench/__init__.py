"""Benchmarks: each prints figures against its goal; nothing here is a pass/fail test.

- startup: ``harness --help``, ``check`` and ``evaluate`` as whole processes against a bare interpreter.
- report: a stored run of N raw samples, its report's wall time and peak memory.
- overhead: the whole reading loop against a raw pyvisa query-and-parse loop, the bay in its own process.
- ramp: settling time of a current ramp against the slew-limited bound and the no-overshoot floor,
  on three units, with a proportional controller as the baseline.
- sequence: a whole sequence on the simulated bay against the least time it could take.
- reduce, store: the reduction of raw samples and the store's sample writes.
"""

from __future__ import annotations

import importlib
from typing import Any

# name -> (module, function); modules are imported only for the benchmark asked for
_BENCHMARKS = {
    "startup": ("harness.runner.bench.startup", "bench_startup"),
    "report": ("harness.runner.bench.report", "bench_report"),
    "overhead": ("harness.runner.bench.overhead", "bench_overhead"),
    "ramp": ("harness.runner.bench.ramp", "bench_ramp"),
    "sequence": ("harness.runner.bench.sequence", "bench_sequence"),
    "reduce": ("harness.calc.reduce", "bench"),
    "store": ("harness.store.bench", "bench_store"),
}
NAMES = tuple(_BENCHMARKS)


def run_benchmark(name: str, **options: Any) -> dict[str, Any]:
    """Run one benchmark with the options it takes (others given as None are left out)."""
    module, function = _BENCHMARKS[name]
    given = {k: v for k, v in options.items() if v is not None}
    figures: dict[str, Any] = getattr(importlib.import_module(module), function)(**given)
    return figures


def verdict(value: float | None, goal: float, at_most: bool = False) -> str:
    """A figure against its goal (under it; ``at_most``: not over it), said plainly."""
    if value is None:
        return "not measured"
    met = value <= goal if at_most else value < goal
    return f"{value:g} against {'≤' if at_most else '<'} {goal:g}: {'met' if met else 'NOT met'}"
