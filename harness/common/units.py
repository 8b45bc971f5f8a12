"""Quantities written with units ("6.6 kV", "25 degC", "2.2 %") parsed once into SI floats.

One pint registry for the product. A plain number is taken as already in the field's unit
(SI: V, A, W, VA, Hz, ohm, s, rad; temperatures in degC, percentages in %).

pint is imported, and its registry built, only when the first string with units is read (a plain
number never needs it), and the registry's parsed definitions are kept in pint's own cache folder
(``HARNESS_UNIT_CACHE``, or the user's cache folder; ``none`` turns the cache off): building the
registry from its definitions file costs about ten times as much as loading the cached one.

The common case - a number with the field's own unit, that unit with an SI prefix (``6.6 kV``,
``50 kVA``, ``16 kJ/K``, ``4 %``), minutes and hours for a time, degrees for an angle - is read
without pint (``_plain``): that
saves its import (about 0.2 s of CPU, with the optional packages it probes) for a command that
only validates a sequence. Anything else goes to pint, which stays the one authority on units.
"""

from __future__ import annotations

import math
import os
import re
from functools import lru_cache
from typing import TYPE_CHECKING, Annotated, Any

from pydantic import BeforeValidator, PlainSerializer, WithJsonSchema

if TYPE_CHECKING:
    import pint

CACHE_ENV = "HARNESS_UNIT_CACHE"

_NUMBER_UNIT = re.compile(r"\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(\S*)\s*")
_PREFIXES = {"": 1.0, "k": 1e3, "M": 1e6, "m": 1e-3, "u": 1e-6, "µ": 1e-6}
_PREFIXED = {"V", "A", "W", "VA", "Hz", "ohm", "s", "J/K"}  # units that take an SI prefix here
_ALIASES = {"percent": {"%": 1.0}, "s": {"min": 60.0, "h": 3600.0}, "rad": {"deg": math.pi / 180}}

# What each field unit accepts, with a word for error messages. Angles and percentages are
# both dimensionless to pint, so they are told apart by the units allowed.
_KINDS: dict[str, str] = {
    "V": "a voltage", "A": "a current", "W": "a power", "VA": "an apparent power",
    "Hz": "a frequency", "ohm": "a resistance", "degC": "a temperature", "K": "a temperature difference",
    "s": "a time", "percent": "a percentage", "rad": "an angle", "V/s": "a voltage rate",
    "A/s": "a current rate", "1/K": "a temperature coefficient", "dimensionless": "a plain number",
}
_ANGLE_UNITS = {"radian", "milliradian", "microradian", "centiradian", "degree", "arcminute", "arcsecond"}
_RATIO_UNITS = {"percent", "ppm", "permille", "dimensionless"}


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The product's one unit registry, built on first use from pint's cache when it can be."""
    import pint

    folder = os.environ.get(CACHE_ENV) or ":auto:"
    options: dict[str, Any] = {"autoconvert_offset_to_baseunit": True}
    if folder.lower() != "none":
        options["cache_folder"] = folder
    try:
        return pint.UnitRegistry(**options)
    except OSError:  # an unwritable cache folder: build it from the definitions instead
        options.pop("cache_folder", None)
        return pint.UnitRegistry(**options)


def __getattr__(name: str) -> Any:
    if name == "UREG":  # the registry under its former module-level name
        return registry()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def _unit_names(q: pint.Quantity) -> set[str]:
    return {str(name) for name in q.unit_items() for name in [name[0]]} or {"dimensionless"}


@lru_cache(maxsize=4096)
def _parse(text: str) -> pint.Quantity:
    return registry().Quantity(text)


def _plain(text: str, unit: str) -> float | None:
    """``text`` in ``unit`` when it is a number with that unit, an SI prefix of it or an alias
    (see the module's note); None when pint must read it."""
    found = _NUMBER_UNIT.fullmatch(text)
    if found is None:
        return None
    number, written = found.groups()
    if not written or written == unit:
        return float(number)
    factor = _ALIASES.get(unit, {}).get(written)
    if factor is None and unit in _PREFIXED and written.endswith(unit):
        factor = _PREFIXES.get(written[: -len(unit)])
    return None if factor is None else float(number) * factor


def to_si(value: Any, unit: str) -> float:
    """Convert ``value`` (a number or a string with units) to a float in ``unit``.

    Raises ``ValueError`` with a sentence a user can act on.
    """
    kind = _KINDS.get(unit, unit)
    if isinstance(value, bool) or value is None:
        raise ValueError(f"expected {kind} ({unit}), got {value!r}")
    if isinstance(value, (int, float)):
        number = float(value)
    elif isinstance(value, str) and (plain := _plain(value, unit)) is not None:
        number = plain
    elif isinstance(value, str):
        import tokenize

        import pint

        try:
            q = _parse(value.strip())
        except (pint.errors.PintError, ValueError, TypeError, AttributeError, SyntaxError, KeyError, IndexError,
                tokenize.TokenError) as exc:  # pint's tokenizer raises TokenError on an unbalanced ')'

            raise ValueError(f"cannot read '{value}' as {kind} ({unit})") from exc
        if not isinstance(q, pint.Quantity):
            number = float(q)
        else:
            names = _unit_names(q)
            if unit == "rad" and not names <= _ANGLE_UNITS | {"dimensionless"}:
                raise ValueError(f"'{value}' is not {kind}; write e.g. '1.5 arcmin' or '0.2 crad'")
            if unit == "percent" and not names <= _RATIO_UNITS:
                raise ValueError(f"'{value}' is not {kind}; write e.g. '4.5 %'")
            try:
                number = float(q.to(unit).magnitude)
            except pint.errors.DimensionalityError as exc:
                raise ValueError(f"'{value}' is not {kind} ({unit})") from exc
    else:
        raise ValueError(f"expected {kind} ({unit}), got {type(value).__name__}")
    if not math.isfinite(number):
        raise ValueError(f"{kind} must be a finite number, got {value!r}")
    return number


def quantity(unit: str) -> Any:
    """A pydantic field type: accepts a number or a string with units, holds a float in ``unit``."""
    kind = _KINDS.get(unit, unit)
    return Annotated[
        float,
        BeforeValidator(lambda v: to_si(v, unit)),
        PlainSerializer(lambda v: v, return_type=float),
        WithJsonSchema({"anyOf": [{"type": "number"}, {"type": "string"}],
                        "description": f"{kind}: a number in {unit} or a string with units"}),
    ]


Voltage = quantity("V")
Current = quantity("A")
Power = quantity("W")
ApparentPower = quantity("VA")
Frequency = quantity("Hz")
Resistance = quantity("ohm")
Temperature = quantity("degC")
TemperatureDifference = quantity("K")
Duration = quantity("s")
Percent = quantity("percent")
Angle = quantity("rad")
VoltageRate = quantity("V/s")
CurrentRate = quantity("A/s")
