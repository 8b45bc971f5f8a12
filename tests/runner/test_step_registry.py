"""Every step kind a sequence may name has an executor, checked when the runner is imported
(so `harness check` fails before a run could energise and then meet an unknown kind)."""

from __future__ import annotations

import pytest

from harness.runner import steps


def test_every_step_model_has_exactly_one_executor() -> None:
    assert set(steps.REGISTRY) == steps.step_kinds()
    assert "ramp" in steps.step_kinds() and "switch-off" in steps.step_kinds()


def test_a_step_model_without_an_executor_is_refused() -> None:
    registry = {k: v for k, v in steps.REGISTRY.items() if k != "hold"}
    with pytest.raises(RuntimeError, match=r"without an executor: \['hold'\]"):
        steps.check_registry(registry)


def test_an_executor_without_a_step_model_is_refused() -> None:
    with pytest.raises(RuntimeError, match=r"without a step model: \['dance'\]"):
        steps.check_registry({**steps.REGISTRY, "dance": lambda step, run: None})
