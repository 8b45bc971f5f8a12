"""Steps in order, each under its own effective limits, each started and ended in the store."""

from __future__ import annotations

from typing import Any

from harness.runner.context import Run
from harness.runner.steps import execute


def run_steps(steps: list[Any], run: Run, limits=None) -> None:
    outer = limits or run.base_limits
    for step in steps:
        run.step_index += 1
        index = run.step_index
        title = step.title()
        run.step_title = title
        run.use_limits(outer.tightened(step.limits), title)
        run.store.begin_step(run.run_id, index, step.kind, title)
        run.progress.step(index, step.kind, title)
        status = "failed"
        try:
            execute(step, run)
            status = "done"
        finally:
            run.store.end_step(run.run_id, index, status)
