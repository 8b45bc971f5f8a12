"""Readings of three-phase units: one mean value or a list of three, and the star-equivalent basis.

Kept apart from the record model so the evaluation (and later perturbation of inputs) can use
the same few helpers on plain floats.
"""

from __future__ import annotations

import math
from typing import Any, Annotated, Union

from pydantic import BeforeValidator, PlainSerializer, WithJsonSchema

from harness.common.units import to_si

SQRT3 = math.sqrt(3.0)

PhaseValue = Union[float, tuple[float, float, float]]


def _phase_values(unit: str):
    def parse(value: Any) -> PhaseValue:
        if isinstance(value, (list, tuple)):
            if len(value) != 3:
                raise ValueError(f"give one value or a list of three (one per phase), not {len(value)}")
            return tuple(_one(v, unit, f"phase {k + 1}: ") for k, v in enumerate(value))  # type: ignore[return-value]
        return _one(value, unit, "")
    return parse


def _one(value: Any, unit: str, where: str) -> float:
    try:
        return to_si(value, unit)
    except ValueError as exc:
        raise ValueError(f"{where}{exc}") from exc


def phase_quantity(unit: str) -> Any:
    """A field type: a number or string with units, or (three-phase) a list of three of them."""
    return Annotated[
        PhaseValue,
        BeforeValidator(_phase_values(unit)),
        PlainSerializer(lambda v: list(v) if isinstance(v, tuple) else v),
        WithJsonSchema({"anyOf": [{"type": "number"}, {"type": "string"},
                                  {"type": "array", "minItems": 3, "maxItems": 3,
                                   "items": {"anyOf": [{"type": "number"}, {"type": "string"}]}}],
                        "description": f"a value in {unit} (number or string with units), "
                                       "or for three-phase units a list of three"}),
    ]


PhaseVoltage = phase_quantity("V")
PhaseCurrent = phase_quantity("A")
PhaseResistance = phase_quantity("ohm")
PhaseAngle = phase_quantity("rad")


def values_of(value: PhaseValue) -> tuple[float, ...]:
    return value if isinstance(value, tuple) else (value,)


def mean(value: PhaseValue) -> float:
    """Arithmetic mean of the three phases, as the test codes ask for line values."""
    items = values_of(value)
    return sum(items) / len(items)


def spread_pct(value: PhaseValue) -> float | None:
    """(max - min) / mean of the three phases in %, or None when one mean value was recorded."""
    if not isinstance(value, tuple):
        return None
    return 100.0 * (max(value) - min(value)) / mean(value)


def phase_voltage(line_voltage: float, phases: int) -> float:
    """Star-equivalent phase voltage from the line-to-line value (three-phase) or as is."""
    return line_voltage / SQRT3 if phases == 3 else line_voltage


def apparent_power(voltage: float, current: float, phases: int) -> float:
    """U*I, or sqrt(3)*U*I from line values."""
    return (SQRT3 if phases == 3 else 1.0) * voltage * current


def phase_resistance(line_to_line: float, connection: str) -> float:
    """The resistance of one phase winding from the d.c. resistance measured between two line
    terminals of a balanced winding: star (and zigzag), two phases in series, R_LL = 2 R_ph; delta,
    one phase in parallel with the other two in series, R_LL = 2/3 R_ph (circuit theory)."""
    return line_to_line / 2.0 if connection in ("star", "zigzag") else 1.5 * line_to_line


def rated_current(rated_power: float, rated_voltage: float, phases: int) -> float:
    return rated_power / apparent_power(rated_voltage, 1.0, phases)
