"""Step executors, registered by the YAML ``kind`` they run.

To add a step kind: a model in ``harness/config/steps.py`` and a module here whose executor is
decorated with ``@register("kind")``; a duplicate registration fails at import.
"""

from __future__ import annotations

from typing import Any, Callable, TypeVar

Executor = Callable[[Any, Any], None]
E = TypeVar("E", bound=Callable[..., None])
REGISTRY: dict[str, Executor] = {}


def register(kind: str) -> Callable[[E], E]:
    """Register ``executor(step: TheStepModel, run: Run)`` as the one that runs steps of ``kind``."""
    def add(executor: E) -> E:
        if kind in REGISTRY:
            raise RuntimeError(f"step kind '{kind}' registered twice")
        REGISTRY[kind] = executor
        return executor
    return add


def execute(step: Any, run: Any) -> None:
    REGISTRY[step.kind](step, run)


def step_kinds() -> set[str]:
    """Every kind a sequence may name: the ``kind`` literals of the step models' union."""
    from typing import get_args

    from harness.config.steps import AnyStep
    union = get_args(AnyStep)[0]
    return {kind for model in get_args(union) for kind in get_args(model.model_fields["kind"].annotation)}


def check_registry(registry: dict[str, Executor]) -> None:
    """A step model without an executor would pass ``check`` and fail mid-run, after energising:
    refuse it at import instead (and an executor without a model is dead code)."""
    models = step_kinds()
    if set(registry) != models:
        missing, extra = sorted(models - set(registry)), sorted(set(registry) - models)
        raise RuntimeError(f"step kinds without an executor: {missing or 'none'}; "
                           f"executors without a step model: {extra or 'none'}")


from harness.runner.steps import (  # noqa: E402,F401  - importing registers the kinds
    hold, measure, off, prompt, ramp, ratio, repeat, resistance, sweep, temperature,
)

check_registry(REGISTRY)
