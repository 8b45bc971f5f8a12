"""Step executors, registered by the YAML ``kind`` they run.

To add a step kind: a model in ``harness/config/steps.py`` and a module here whose executor is
decorated with ``@register("kind")``; a duplicate registration fails at import.
"""

from __future__ import annotations

from typing import Any, Callable

Executor = Callable[[Any, Any], None]
REGISTRY: dict[str, Executor] = {}


def register(kind: str) -> Callable[[Executor], Executor]:
    def add(executor: Executor) -> Executor:
        if kind in REGISTRY:
            raise RuntimeError(f"step kind '{kind}' registered twice")
        REGISTRY[kind] = executor
        return executor
    return add


def execute(step: Any, run: Any) -> None:
    REGISTRY[step.kind](step, run)


from harness.runner.steps import (  # noqa: E402,F401  - importing registers the kinds
    hold, measure, off, prompt, ramp, repeat, resistance, sweep, temperature,
)
