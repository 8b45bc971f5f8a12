"""An operator prompt for a connection change: only with the output off and confirmed dead."""

from __future__ import annotations

import sys

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


@register("prompt")
def execute(step, run: Run) -> None:
    switch_off(run, "before the prompt")
    run.event("prompt", step.text)
    if run.yes:
        if step.wiring is not None and run.bay.bay_control is not None:
            run.bay.bay_control.set_wiring(step.wiring.fed, step.wiring.other)
        run.event("prompt-answered", "answered by --yes on the simulated bay")
    elif not ask(step.text):
        raise OperatorAbort(f"operator declined: {step.text}")
    if step.wiring is not None:
        run.wiring = step.wiring
        run.gains.clear()
        run.event("wiring", f"{step.wiring.fed.upper()} fed, other winding {step.wiring.other}")
