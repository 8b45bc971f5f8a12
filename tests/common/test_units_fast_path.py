"""Quantities read without pint must read exactly as pint reads them (pint is the reference)."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harness.common.units import _plain, registry, to_si

UNITS = ["V", "A", "W", "VA", "Hz", "ohm", "s"]


def _pint(text: str, unit: str) -> float:
    return float(registry().Quantity(text.strip()).to(unit).magnitude)


@settings(deadline=None)  # the first example builds pint's registry
@given(number=st.floats(min_value=-1e7, max_value=1e7, allow_nan=False, allow_infinity=False),
       prefix=st.sampled_from(["", "k", "M", "m", "u"]), unit=st.sampled_from(UNITS),
       gap=st.sampled_from(["", " ", "  "]))
def test_a_number_with_the_fields_unit_reads_as_pint_reads_it(number, prefix, unit, gap):
    text = f"{number!r}{gap}{prefix}{unit}"
    assert _plain(text, unit) == _pint(text, unit)


@pytest.mark.parametrize(("text", "unit"), [("4 %", "percent"), ("30 min", "s"), ("2 h", "s"), ("25 degC", "degC"),
                                            ("100 V/s", "V/s"), ("5 K", "K"), (".5 kV", "V"),
                                            ("180 deg", "rad"), ("-37.5 deg", "rad"), ("16 kJ/K", "J/K")])
def test_aliases_and_compound_units(text, unit):
    assert _plain(text, unit) == _pint(text, unit)


@pytest.mark.parametrize(("text", "unit"), [("5 VA", "A"), ("5 K", "degC"), ("3 arcmin", "rad"), ("1 kW/s", "W"),
                                            ("inf V", "V"), ("6.6 kilovolt", "V"), ("5 V", "A")])
def test_anything_else_is_left_to_pint(text, unit):
    assert _plain(text, unit) is None


def test_errors_still_come_from_pint():
    with pytest.raises(ValueError, match="is not a current"):
        to_si("5 V", "A")
