"""Targets as the trade writes them: 'rated', '110 %' of rated, or an absolute '415 V'."""

from __future__ import annotations

import re
from typing import Annotated, Any

from pydantic import BeforeValidator, ValidationInfo, WithJsonSchema

from harness.common.units import to_si

_PERCENT = re.compile(r"^\s*([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*%\s*$")


class TargetSpec:
    """A target before the winding is known: a fraction of rated, or an absolute SI value."""

    __slots__ = ("text", "fraction", "absolute")

    def __init__(self, text: str, fraction: float | None, absolute: float | None):
        self.text, self.fraction, self.absolute = text, fraction, absolute

    def resolve(self, rated: float) -> float:
        return self.absolute if self.absolute is not None else rated * (self.fraction or 0.0)

    def __repr__(self) -> str:
        return f"Target({self.text!r})"

    def __eq__(self, other: object) -> bool:
        return isinstance(other, TargetSpec) and (self.fraction, self.absolute) == (other.fraction, other.absolute)

    def __hash__(self) -> int:
        return hash((self.fraction, self.absolute))


def parse_target(value: Any, unit: str) -> TargetSpec:
    if isinstance(value, TargetSpec):
        return value
    text = str(value).strip()
    if text.lower() == "rated":
        return TargetSpec(text, 1.0, None)
    match = _PERCENT.match(text)
    if match:
        fraction = float(match.group(1)) / 100.0
        if not 0 < fraction <= 1.5:
            raise ValueError(f"'{text}' of rated is outside 0-150 %")
        return TargetSpec(text, fraction, None)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        raise ValueError(f"write the target with its unit ('{value} {unit}'), 'rated' or a percentage")
    absolute = to_si(text, unit)
    if absolute <= 0:
        raise ValueError("a target must be positive")
    return TargetSpec(text, None, absolute)


def _check(value: Any, info: ValidationInfo) -> str:
    unit = "A" if info.field_name == "current" else "V"
    return parse_target(value, unit).text


# Held as the text the engineer wrote, checked on load; resolved against a winding's rating
# with ``parse_target(text, unit).resolve(rated)`` once the fed winding is known.
Target = Annotated[
    str,
    BeforeValidator(_check),
    WithJsonSchema({"type": "string", "description": "'rated', a percentage of rated ('110 %') or a value with units"}),
]
