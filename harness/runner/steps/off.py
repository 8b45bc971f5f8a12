"""Ramp down, output off, de-energisation confirmed by measurement."""

from __future__ import annotations

from harness.config.steps import Off
from harness.runner.context import Run
from harness.runner.steps import register
from harness.safety import Trip


class NotConfirmed(Trip):
    """The bay could not be shown de-energised: the run must end as unsafe."""

    def sentence(self) -> str:
        if self.value is None:
            return f"{self.cause}: no instrument could measure the bay"
        return f"{self.cause}: {self.value:.4g} V still measured (de-energised means below {self.limit:.4g} V)"


def switch_off(run: Run, why: str) -> None:
    outcome = run.make_safe()
    run.event("off", f"{why}: source set to zero and output off; de-energisation "
              + ("confirmed" if outcome.confirmed else "NOT confirmed"),
              outcome.as_dict())
    if not outcome.confirmed:
        raise NotConfirmed("de-energisation not confirmed after switching off", "voltage", outcome.voltage,
                           run.station.safe_state.deenergised_voltage, run.step_title, run.clock.now())


@register("switch-off")
def execute(step: Off, run: Run) -> None:
    switch_off(run, step.title())
