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
        run.raise_pending()
        run.store.begin_step(run.run_id, index, step.kind, title)
        run.progress.step(index, step.kind, title)
        run.raise_pending()
        limits = run.supervisor.limits
        run.store.add_event(run.run_id, run.clock.now(), "step-start", f"{step.kind}: {title}",
                            {"step": index, "kind": step.kind, "limits": {
                                "voltage_V": limits.voltage, "current_A": limits.current, "power_W": limits.power,
                                "energised_time_s": limits.energised_time,
                                "winding_temperature_C": limits.winding_temperature}})
        status = "failed"
        try:
            execute(step, run)
            status = "done"
        finally:
            run.store.end_step(run.run_id, index, status)
            run.store.add_event(run.run_id, run.clock.now(), "step-end", f"{title}: {status}", {"step": index})
