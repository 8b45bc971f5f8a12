"""An operator prompt for a connection change: only with the output off and confirmed dead."""

from __future__ import annotations

from harness.config.steps import Prompt
from harness.runner.context import Run
from harness.runner.operators import AnsweringOperator, SimulatedChange
from harness.runner.steps import register
from harness.runner.steps.off import switch_off


class OperatorAbort(Exception):
    """The operator declined a prompt; the run ends as aborted after the safe state."""


def operator_change(run: Run, text: str, on_simulated_bay: SimulatedChange | None = None) -> None:
    """Switch off and confirm, then have the operator make a change (``--yes`` on the simulated
    bay: its bay control makes it, through ``on_simulated_bay``)."""
    switch_off(run, "before the prompt")
    run.event("prompt", text)
    if not run.operator.change(text, on_simulated_bay):
        raise OperatorAbort(f"operator declined: {text}")
    if isinstance(run.operator, AnsweringOperator):
        run.event("prompt-answered", "answered by --yes on the simulated bay")


@register("prompt")
def execute(step: Prompt, run: Run) -> None:
    wiring = step.wiring
    operator_change(run, step.text, None if wiring is None else lambda bc: bc.set_wiring(wiring.fed, wiring.other))
    if step.wiring is not None:
        run.wiring = step.wiring
        run.gains.clear()
        run.event("wiring", f"{step.wiring.fed.upper()} fed, other winding {step.wiring.other}")
