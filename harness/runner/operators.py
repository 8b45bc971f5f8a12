"""Who makes a change at a prompt — the connections, a tap — with the bay de-energised and
confirmed (see harness.runner.seams.Operator)."""

from __future__ import annotations

import sys
from typing import TYPE_CHECKING, Callable

if TYPE_CHECKING:
    from drivers.bay_control import BayControl

SimulatedChange = Callable[["BayControl"], None]
"""What the simulated bay's control does for a prompt answered with ``--yes`` (rewire, move the tap)."""


class TerminalOperator:
    """The operator at the terminal: the prompt on stderr, the answer on stdin."""

    def change(self, text: str, on_simulated_bay: SimulatedChange | None = None) -> bool:
        sys.stderr.write(f"\nOPERATOR: {text}\n  The output is off and confirmed de-energised. Earth the terminals "
                         "before touching them.\n  Type 'done' when finished, anything else to abort: ")
        sys.stderr.flush()
        return sys.stdin.readline().strip().lower() == "done"


class AnsweringOperator:
    """``--yes`` on the simulated bay: every prompt answered, the change made by the bay's control."""

    def __init__(self, bay_control: BayControl | None):
        self.bay_control = bay_control

    def change(self, text: str, on_simulated_bay: SimulatedChange | None = None) -> bool:
        if on_simulated_bay is not None and self.bay_control is not None:
            on_simulated_bay(self.bay_control)
        return True
