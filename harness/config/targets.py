"""Targets as the trade writes them: 'rated' (of a named winding or the fed one), '110 %' of
rated, or an absolute '415 V'."""

from __future__ import annotations

import re
from typing import Annotated, Any

from pydantic import BeforeValidator, ValidationInfo, WithJsonSchema

from harness.common.units import to_si

_PERCENT = re.compile(r"^\s*([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*%\s*$")
_WINDING = re.compile(r"^(.*?)\s+(?:of\s+)?(hv|lv)\s*$", re.IGNORECASE)


class TargetSpec:
    """A target before the fed winding is known: a fraction of a winding's rating (that winding
    named, or the fed one), or an absolute SI value."""

    __slots__ = ("text", "fraction", "absolute", "winding")

    def __init__(self, text: str, fraction: float | None, absolute: float | None, winding: str | None = None):
        self.text, self.fraction, self.absolute, self.winding = text, fraction, absolute, winding

    def resolve(self, rated: float) -> float:
        """The target on the fed winding, given the fed winding's rating. A fraction of the other
        winding's rated current is the same fraction of the fed winding's (the same per unit)."""
        return self.absolute if self.absolute is not None else rated * (self.fraction or 0.0)

    def __repr__(self) -> str:
        return f"Target({self.text!r})"


def parse_target(value: Any, unit: str) -> TargetSpec:
    """'rated', 'rated lv', '110 %', '110 % of hv', or a value with units ('415 V', '7.5 A')."""
    text = str(value).strip()
    named = _WINDING.match(text) if isinstance(value, str) else None
    core, winding = (named.group(1).strip(), named.group(2).lower()) if named else (text, None)
    if core.lower() == "rated":
        return TargetSpec(text, 1.0, None, winding)
    match = _PERCENT.match(core)
    if match:
        fraction = float(match.group(1)) / 100.0
        if not 0 < fraction <= 1.5:
            raise ValueError(f"'{text}' of rated is outside 0-150 %")
        return TargetSpec(text, fraction, None, winding)
    if winding is not None:
        raise ValueError(f"'{text}': name a winding only with 'rated' or a percentage ('rated {winding}', '100 % {winding}')")
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
    WithJsonSchema({"type": "string", "description": "'rated' or 'rated lv', a percentage of rated ('110 %', '100 % of hv') or a value with units"}),
]
