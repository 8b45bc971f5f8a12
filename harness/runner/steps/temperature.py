"""Read every named thermometer channel into the run and the event log."""

from __future__ import annotations

from harness.config.steps import Temperature
from harness.runner.context import Run
from harness.runner.steps import register
from harness.safety import ReadingFault


@register("temperature")
def execute(step: Temperature, run: Run) -> None:
    spec = run.station.instruments.thermometer
    if run.bay.thermometer is None or spec is None:
        raise ReadingFault("the station has no thermometer", step=run.step_title)
    values = {name: run.read_temperature(name) for name in spec.channels}
    if values.get("oil") is not None:
        run.oil_temperature = values["oil"]
    run.event("temperature", ", ".join(f"{k} {v:.1f} degC" for k, v in values.items()), values)
