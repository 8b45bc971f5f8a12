"""Who changes the connections at a prompt (see harness.runner.seams.Operator)."""

from __future__ import annotations

import sys

from drivers.bay_control import BayControl
from harness.config.steps import Wiring


class TerminalOperator:
    """The operator at the terminal: the prompt on stderr, the answer on stdin."""

    def connect(self, text: str, wiring: Wiring | None) -> bool:
        sys.stderr.write(f"\nOPERATOR: {text}\n  The output is off and confirmed de-energised. Earth the terminals "
                         "before touching them.\n  Type 'done' when finished, anything else to abort: ")
        sys.stderr.flush()
        return sys.stdin.readline().strip().lower() == "done"


class AnsweringOperator:
    """``--yes`` on the simulated bay: every prompt answered, the wiring changed by the bay's control."""

    def __init__(self, bay_control: BayControl | None):
        self.bay_control = bay_control

    def connect(self, text: str, wiring: Wiring | None) -> bool:
        if wiring is not None and self.bay_control is not None:
            self.bay_control.set_wiring(wiring.fed, wiring.other)
        return True
