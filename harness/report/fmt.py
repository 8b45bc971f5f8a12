"""Numbers and verdicts as a reader sees them: the same text in the tables, the figures and tests."""

from __future__ import annotations

import math
from typing import Any

DASH = "—"
SIGNIFICANT = 4

# Engineering prefixes for impedances, whose values span micro-ohms to mega-ohms.
_PREFIXES = ((1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"))


def is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def num(value: Any, digits: int = SIGNIFICANT) -> str:
    """``value`` with ``digits`` significant digits in fixed notation; a dash when not a number."""
    if not is_number(value):
        return DASH if value is None else str(value)
    if value == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(value)))
    if magnitude >= 7 or magnitude < -5:
        return f"{value:.{digits - 1}e}"
    decimals = max(0, digits - 1 - magnitude)
    return f"{round(value, decimals):.{decimals}f}"


def eng(value: Any, unit: str, digits: int = SIGNIFICANT) -> str:
    """``value`` with an engineering prefix: 0.01234 ohm -> '12.34 mΩ'."""
    if not is_number(value):
        return DASH
    for scale, prefix in _PREFIXES:
        if abs(value) >= scale:
            return f"{num(value / scale, digits)} {prefix}{unit}"
    return f"{num(value / 1e-6, digits)} µ{unit}"


def with_unit(value: Any, unit: str, digits: int = SIGNIFICANT) -> str:
    return DASH if not is_number(value) else f"{num(value, digits)} {unit}".rstrip()


def verdict(passed: Any) -> str:
    """Pass or fail in words and a symbol, so it reads without colour."""
    if passed is True:
        return "✔ PASS"
    if passed is False:
        return "✘ FAIL"
    return "– not checked"


def verdict_class(passed: Any) -> str:
    return {True: "pass", False: "fail"}.get(passed, "none") if isinstance(passed, bool) else "none"


def limit_text(limit: Any, unit: str) -> str:
    """An upper limit, or a [low, high] band."""
    if isinstance(limit, (list, tuple)) and len(limit) == 2:
        low, high = limit
        return f"{num(low)} … {num(high)} {unit}".rstrip()
    if isinstance(limit, dict):
        return limit_text([limit.get("low"), limit.get("high")], unit)
    return with_unit(limit, unit) if is_number(limit) else (DASH if limit is None else str(limit))
