"""Several targets with a measure at each: the excitation curve (e.g. 90/100/110 % voltage)."""

from __future__ import annotations

from harness.config.steps import Sweep
from harness.runner.context import Run
from harness.runner.steps import register
from harness.runner.steps.measure import measure
from harness.runner.steps.ramp import ramp_to


@register("sweep")
def execute(step: Sweep, run: Run) -> None:
    unit = "V" if step.quantity == "voltage" else "A"
    rated = run.rated(step.quantity)
    for index, text in enumerate(step.targets):
        target = run.target_value(step, text)
        run.progress.stage(f"{step.title()}: point {index + 1} of {len(step.targets)}, {text}", index, len(step.targets))
        ramp_to(run, step.quantity, target, step.tolerance)
        pct = 100 * target / rated
        label = f"{'excitation' if step.test == 'no-load' else 'sweep'} at {pct:.0f} %"
        r = measure(run, "sweep-" + step.test, label, step.readings, step.interval, step.stability,
                    max(step.readings * 4, 20), pct)
        run.event("sweep", f"{label}: U' {r.mean['u_mean']:.5g} V, I {r.mean['i_rms']:.5g} A, P {r.mean['p']:.5g} W",
                  {"target": target, "unit": unit, "mean": r.mean, "pct": pct})
