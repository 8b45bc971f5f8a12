"""Run a block of steps N times (e.g. repeated ramps to rated current)."""

from __future__ import annotations

from harness.runner.steps import register


@register("repeat")
def execute(step, run) -> None:
    from harness.runner.sequencer import run_steps
    for n in range(step.times):
        run.event("repeat", f"{step.title()}: pass {n + 1} of {step.times}")
        run_steps(step.steps, run)
