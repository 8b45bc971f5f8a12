"""Stay energised for a time with every reading checked; or wait (reading on if energised)."""

from __future__ import annotations

from harness.config.steps import Hold, Wait
from harness.runner.context import Run
from harness.runner.steps import register


def hold(run: Run, duration: float, interval: float, title: str) -> None:
    end = run.clock.now() + duration
    while (left := end - run.clock.now()) > 0:
        run.clock.sleep(min(interval, left))
        run.read()
        run.progress.stage(title, duration - max(end - run.clock.now(), 0.0), duration)


@register("hold")
def execute_hold(step: Hold, run: Run) -> None:
    if not run.energised:
        run.warn(f"{step.title()}: hold with the output off; nothing to hold")
    hold(run, step.duration, step.interval, step.title())


@register("wait")
def execute_wait(step: Wait, run: Run) -> None:
    if run.energised:
        hold(run, step.duration, 1.0, step.title())
    else:
        run.clock.sleep(step.duration)
