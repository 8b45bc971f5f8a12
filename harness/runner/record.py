"""From the measured steps to the record of the contract, for the calculation core."""

from __future__ import annotations

import math
from typing import Any

from harness.runner.context import MeasuredReading, Run


def _last(run: Run, test: str) -> MeasuredReading | None:
    found = [r for r in run.readings if r.test == test]
    return found[-1] if found else None


def samples_of(r: MeasuredReading, mean_value: bool) -> dict[str, Any]:
    """The raw-sample statistics behind the reading (type A), and the analyser ranges it was read on."""
    extra: dict[str, Any] = {}
    if r.count >= 2:
        extra["samples"] = {"count": r.count, "voltage_sd": r.per_phase("u_rms", "std"),
                            "current_sd": r.per_phase("i_rms", "std"), "power_sd": r.std["p"],
                            **({"voltage_mean_sd": r.per_phase("u_mean", "std")} if mean_value else {})}
    if r.ranges is not None:
        extra["analyser_ranges"] = {"voltage": r.ranges[0], "current": r.ranges[1]}
    return extra


def no_load_section(r: MeasuredReading) -> dict[str, Any]:
    section = {"winding": r.winding, "voltage": r.per_phase("u_rms"), "voltage_mean": r.per_phase("u_mean"),
               "current": r.per_phase("i_rms"), "power": r.mean["p"], **samples_of(r, True)}
    if r.core_temperature is not None:
        section["temperature"] = r.core_temperature
    return section


def load_section(r: MeasuredReading) -> dict[str, Any]:
    section = {"winding": r.winding, "voltage": r.per_phase("u_rms"), "current": r.per_phase("i_rms"),
               "power": r.mean["p"], **samples_of(r, False)}
    if r.winding_temperature is not None:
        section["temperature"] = r.winding_temperature
    return section


def ratio_section(run: Run) -> dict[str, Any]:
    """The ratio test: per tap both windings' voltages and the LV lag (rad, the record's unit)."""
    return {"winding": run.ratio_readings[-1]["fed"], "readings": [
        {"tap": r["tap"], "hv": _one_or_three(r["hv"]), "lv": _one_or_three(r["lv"]),
         "displacement": _one_or_three([math.radians(a) for a in r["lag_deg"]])} for r in run.ratio_readings]}


def _one_or_three(values: list[float]) -> float | list[float]:
    return values[0] if len(values) == 1 else values


def build_record(run: Run, load: MeasuredReading | None = None) -> dict[str, Any]:
    """The record as plain data (SI numbers); the calculation core validates it. The no-load
    section carries the core temperature: IEEE and the efficiency rules correct the no-load
    loss to 20 degC with it."""
    seq = run.sequence
    record: dict[str, Any] = {"standard": seq.standard,
                              "transformer": seq.transformer.model_dump(mode="json", exclude_none=True)}
    no_load = _last(run, "no-load")
    load = load or _last(run, "load-loss")
    if no_load:
        record["no_load"] = no_load_section(no_load)
    if load:
        record["load"] = load_section(load)
    if run.ratio_readings:
        record["ratio"] = ratio_section(run)
    if run.resistances:
        record["winding_resistance"] = {w: {"resistance": ohm, "temperature": t} for w, (ohm, t) in run.resistances.items()}
    if run.station.measurement_chain is not None:
        record["measurement_chain"] = run.station.measurement_chain.model_dump(mode="json", exclude_none=True)
    for key in ("guarantees", "tolerances", "waveform"):
        value = getattr(seq, key)
        if value is not None:
            record[key] = value.model_dump(mode="json", exclude_none=True)
    if seq.compliance is not None:
        record["compliance"] = list(seq.compliance)
    return record


def load_series(run: Run) -> list[MeasuredReading]:
    return [r for r in run.readings if r.test == "load-loss"]
