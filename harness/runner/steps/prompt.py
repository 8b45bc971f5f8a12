"""An operator prompt for a connection change: only with the output off and confirmed dead."""

from __future__ import annotations

import sys
from typing import Any, Callable

from harness.runner.context import Run
from harness.runner.steps import register
from harness.runner.steps.off import switch_off


class OperatorAbort(Exception):
    """The operator declined a prompt; the run ends as aborted after the safe state."""


def ask(text: str) -> bool:
    sys.stderr.write(f"\nOPERATOR: {text}\n  The output is off and confirmed de-energised. Earth the terminals before "
                     "touching them.\n  Type 'done' when finished, anything else to abort: ")
    sys.stderr.flush()
    answer = sys.stdin.readline()
    return answer.strip().lower() == "done"


def operator_change(run: Run, text: str, on_simulated_bay: Callable[[Any], None] | None = None) -> None:
    """Switch off and confirm, then have the operator make a change (``--yes`` on the simulated
    bay: its bay control makes it, through ``on_simulated_bay``)."""
    switch_off(run, "before the prompt")
    run.event("prompt", text)
    if run.yes:
        if on_simulated_bay is not None and run.bay.bay_control is not None:
            on_simulated_bay(run.bay.bay_control)
        run.event("prompt-answered", "answered by --yes on the simulated bay")
    elif not ask(text):
        raise OperatorAbort(f"operator declined: {text}")


@register("prompt")
def execute(step, run: Run) -> None:
    wiring = step.wiring
    operator_change(run, step.text, None if wiring is None else lambda bc: bc.set_wiring(wiring.fed, wiring.other))
    if step.wiring is not None:
        run.wiring = step.wiring
        run.gains.clear()
        run.event("wiring", f"{step.wiring.fed.upper()} fed, other winding {step.wiring.other}")
