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
    """``value`` rounded to ``digits`` significant digits, trailing zeros dropped; a dash when absent.

    Integers (counts, step numbers) are written as they are.
    """
    if isinstance(value, str):
        return value
    if not is_number(value):
        return DASH  # None, NaN, infinity: a quantity that was not obtained
    if isinstance(value, int) or value == 0:
        return str(int(value))
    magnitude = math.floor(math.log10(abs(value)))
    if magnitude >= 7 or magnitude < -5:
        return f"{value:.{digits - 1}e}"
    decimals = max(0, digits - 1 - magnitude)
    return _trim(f"{round(value, decimals):.{decimals}f}")


def _trim(text: str) -> str:
    return text.rstrip("0").rstrip(".") if "." in text else text


def fixed(value: Any, decimals: int) -> str:
    """A fixed number of decimals, for columns that read better aligned (power factor, time)."""
    return f"{value:.{decimals}f}" if is_number(value) else DASH


def angle(degrees: Any, decimals: int = 1) -> str:
    """An angle in 0 .. 360 degrees as it rounds: a lag of 359.99 degrees reads 0.0, not 360.0."""
    return fixed(round(degrees, decimals) % 360.0, decimals) if is_number(degrees) else DASH


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


def when_text(iso: Any) -> str:
    """'2026-11-18T09:12:04.25+00:00' -> '2026-11-18 09:12:04 UTC'; anything else as given."""
    if not isinstance(iso, str) or "T" not in iso:
        return DASH if iso in (None, "") else str(iso)
    date, _, rest = iso.partition("T")
    for sign in ("+", "-", "Z"):
        if sign in rest:
            clock, _, zone = rest.partition(sign)
            clock = clock.split(".")[0]  # whole seconds: the event log orders by t_s anyway
            utc = sign == "Z" or zone in ("00:00", "0000")
            return f"{date} {clock} {'UTC' if utc else sign + zone}"
    return f"{date} {rest.split('.')[0]}"
