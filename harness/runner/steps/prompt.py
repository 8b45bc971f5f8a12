"""An operator prompt for a connection change: only with the output off and confirmed dead."""

from __future__ import annotations

from harness.config.steps import Prompt
from harness.runner.context import Run
from harness.runner.operators import AnsweringOperator
from harness.runner.steps import register
from harness.runner.steps.off import switch_off


class OperatorAbort(Exception):
    """The operator declined a prompt; the run ends as aborted after the safe state."""


@register("prompt")
def execute(step: Prompt, run: Run) -> None:
    switch_off(run, "before the prompt")
    run.event("prompt", step.text)
    if not run.operator.connect(step.text, step.wiring):
        raise OperatorAbort(f"operator declined: {step.text}")
    if isinstance(run.operator, AnsweringOperator):
        run.event("prompt-answered", "answered by --yes on the simulated bay")
    if step.wiring is not None:
        run.wiring = step.wiring
        run.gains.clear()
        run.event("wiring", f"{step.wiring.fed.upper()} fed, other winding {step.wiring.other}")
