"""Run a block of steps N times (e.g. repeated ramps to rated current)."""

from __future__ import annotations

from harness.config.steps import Repeat
from harness.runner.context import Run
from harness.runner.steps import register


@register("repeat")
def execute(step: Repeat, run: Run) -> None:
    from harness.runner.sequencer import run_steps
    for n in range(step.times):
        # the event's kind already says "repeat": an unnamed block does not say it twice
        run.event("repeat", f"{step.name}: pass {n + 1} of {step.times}" if step.name else f"pass {n + 1} of {step.times}")
        run_steps(step.steps, run)
