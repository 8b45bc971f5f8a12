"""D.c. winding resistance with the temperature at which it was taken (output off)."""

from __future__ import annotations

import statistics

from harness.runner.context import Run
from harness.runner.steps import register
from harness.runner.steps.off import switch_off
from harness.safety import ReadingFault


@register("resistance")
def execute(step, run: Run) -> None:
    meter, spec = run.bay.resistance_meter, run.station.instruments.resistance_meter
    if meter is None or spec is None:
        raise ReadingFault("the station has no resistance meter", step=run.step_title)
    if run.energised:
        switch_off(run, "before measuring resistance")
    for winding in step.windings:
        if winding not in spec.channels:
            raise ReadingFault(f"the resistance meter has no channel for the {winding} winding", step=run.step_title)
        values = [meter.measure(spec.channels[winding])[0] for _ in range(step.readings)]
        temperature = run.winding_temperature()
        if temperature is None:
            raise ReadingFault("no thermometer reading for the winding temperature", step=run.step_title)
        ohm = statistics.fmean(values)
        run.resistances[winding] = (ohm, temperature)
        run.event("resistance", f"{winding.upper()} winding {ohm:.6g} ohm at {temperature:.1f} degC",
                  {"winding": winding, "ohm": ohm, "temperature": temperature, "values": values})
