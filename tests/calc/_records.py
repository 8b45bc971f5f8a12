"""Records for the calculation tests, built from plain data as a YAML file would give them."""

from __future__ import annotations

from typing import Any

from harness.calc.record import Record


def single_phase(rated_power: Any, hv: Any, lv: Any, frequency: Any = "50 Hz", **sections: Any) -> Record:
    transformer = {"rated_power": rated_power, "phases": 1, "frequency": frequency,
                   "hv": {"rated_voltage": hv}, "lv": {"rated_voltage": lv}}
    return Record.model_validate({"transformer": transformer, **sections})


def three_phase(rated_power: Any, hv: Any, lv: Any, hv_connection: str = "delta", lv_connection: str = "star",
                frequency: Any = "50 Hz", **sections: Any) -> Record:
    transformer = {"rated_power": rated_power, "phases": 3, "frequency": frequency,
                   "hv": {"rated_voltage": hv, "connection": hv_connection},
                   "lv": {"rated_voltage": lv, "connection": lv_connection}}
    return Record.model_validate({"transformer": transformer, **sections})


def reading(winding: str, voltage: Any, current: Any, power: Any, **extra: Any) -> dict[str, Any]:
    return {"winding": winding, "voltage": voltage, "current": current, "power": power, **extra}


def regulation_row(results, pf: float, lagging: bool, load_pu: float = 1.0):
    return next(r for r in results.regulation
                if r.power_factor == pf and r.lagging is lagging and r.load_pu == load_pu)


def efficiency_row(results, pf: float, load_pu: float):
    return next(r for r in results.efficiency if r.power_factor == pf and r.load_pu == load_pu)
