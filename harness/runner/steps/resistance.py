"""D.c. winding resistance with the temperature at which it was taken (output off).

A three-phase winding is measured between its line terminals, 1-2, 2-3 and 3-1 (the station
names three meter channels for it); the record keeps the three line-to-line values, from which
the evaluation takes the I²R loss (1.5·I²·R_LL for star and delta alike) and the report the
phase resistances.
"""

from __future__ import annotations

import statistics

from harness.config.steps import Resistance
from harness.calc.phases import phase_resistance
from harness.runner.context import Run
from harness.runner.steps import register
from harness.runner.steps.off import switch_off
from harness.safety import ReadingFault


@register("resistance")
def execute(step: Resistance, run: Run) -> None:
    meter, spec = run.bay.resistance_meter, run.station.instruments.resistance_meter
    if meter is None or spec is None:
        raise ReadingFault("the station has no resistance meter", step=run.step_title)
    if run.energised:
        switch_off(run, "before measuring resistance")
    for winding in step.windings:
        channels = _channels(run, spec.channels.get(winding), winding)
        values = [statistics.fmean(meter.measure(channel)[0] for _ in range(step.readings)) for channel in channels]
        temperature = run.winding_temperature()
        if temperature is None:
            raise ReadingFault("no thermometer reading for the winding temperature", step=run.step_title)
        ohm = values[0] if len(values) == 1 else values
        run.resistances[winding] = (ohm, temperature)
        run.event("resistance", _text(run, winding, values, temperature),
                  {"winding": winding, "ohm": ohm, "temperature": temperature, "values": values,
                   **_phase_values(run, winding, values)})


def _channels(run: Run, given: int | list[int] | None, winding: str) -> list[int]:
    wanted = run.sequence.transformer.phases
    channels = [given] if isinstance(given, int) else list(given or [])
    if len(channels) != wanted:
        raise ReadingFault(f"the resistance meter has {len(channels)} channel(s) for the {winding} winding; "
                           f"a {wanted}-phase unit needs {wanted}", step=run.step_title)
    return channels


def _phase_values(run: Run, winding: str, values: list[float]) -> dict[str, list[float]]:
    connection = getattr(run.sequence.transformer, winding).connection
    if connection is None:
        return {}
    return {"phase_ohm": [phase_resistance(v, connection) for v in values]}


def _text(run: Run, winding: str, values: list[float], temperature: float) -> str:
    if len(values) == 1:
        return f"{winding.upper()} winding {values[0]:.6g} ohm at {temperature:.1f} degC"
    pairs = ", ".join(f"{p} {v:.6g}" for p, v in zip(("1-2", "2-3", "3-1"), values))
    return f"{winding.upper()} winding line-to-line {pairs} ohm at {temperature:.1f} degC"
