"""SCPI numeric replies: every form read, every special value refused as a reading.

Sources: IEEE 488.2-1992 section 8.7 (NR1, NR2, NR3 response forms) and section 7.7.4
(non-decimal #H, #Q, #B), SCPI-1999 vol. 1 section 7.2.1.5 (INF, NINF, NAN; overload 9.9E37,
not-a-number 9.91E37) -- section numbers recalled from memory, the forms themselves also listed in
the project's reference notes. Python's own float formatting is the reference for the round trip.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from drivers import OverRange, ProtocolError
from drivers.numbers import check_reading, parse_number, reply_number, reply_numbers


@pytest.mark.parametrize("text, value", [
    ("12", 12.0), ("+12", 12.0), ("-12", -12.0), ("0", 0.0),          # NR1
    ("1.5", 1.5), ("-0.25", -0.25), (".5", 0.5), ("5.", 5.0),         # NR2
    ("1.25E+02", 125.0), ("1.25e2", 125.0), ("-4.5E-03", -0.0045),    # NR3
    ("+2.30100E+02", 230.1), ("  230.1 ", 230.1), ("1E3", 1000.0),
    ("#H1F", 31.0), ("#h1f", 31.0), ("#Q17", 15.0), ("#B101", 5.0),   # non-decimal
])
def test_every_scpi_numeric_form(text: str, value: float) -> None:
    assert parse_number(text) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize("text, check", [
    ("INF", lambda v: v == math.inf), ("inf", lambda v: v == math.inf), ("NINF", lambda v: v == -math.inf),
    ("-INF", lambda v: v == -math.inf), ("NAN", math.isnan), ("nan", math.isnan),
])
def test_scpi_words(text: str, check) -> None:
    assert check(parse_number(text))


@pytest.mark.parametrize("text", ["", "abc", "1.2.3", "1,5", "1_000", "0x1F", "#H", "#HZZ", "#X12",
                                  "1E", "E5", "++1", "1 2", "230 V", "infinity"])
def test_not_numbers_are_refused(text: str) -> None:
    with pytest.raises(ValueError, match="not a SCPI"):
        parse_number(text)


@given(st.floats(allow_nan=False, allow_infinity=False, min_value=-1e30, max_value=1e30))
def test_round_trip_of_every_float_format(x: float) -> None:
    for text in (f"{x:+.17E}", f"{x:.17e}", repr(x) if "e" not in repr(x) else f"{x:E}"):
        assert parse_number(text) == float(text)


@given(st.integers(min_value=-10**12, max_value=10**12))
def test_round_trip_of_nr1(n: int) -> None:
    assert parse_number(f"{n:+d}") == n
    if n >= 0:
        assert parse_number(f"#H{n:X}") == n and parse_number(f"#Q{n:o}") == n and parse_number(f"#B{n:b}") == n


@pytest.mark.parametrize("text, words", [
    ("9.9E37", "over range (9.9E37)"), ("+9.90000E+37", "over range (9.9E37)"),
    ("-9.9E37", "over range, negative"), ("9.91E37", "not a number"), ("NAN", "not a number"),
    ("INF", "over range"), ("NINF", "negative"),
])
def test_special_values_raise_over_range(text: str, words: str) -> None:
    with pytest.raises(OverRange) as info:
        reply_number(text, "current", "analyser", "MEAS:CURR:AC?")
    assert words in info.value.message
    assert info.value.quantity == "current"
    assert info.value.instrument == "analyser" and info.value.command == "MEAS:CURR:AC?"


def test_large_but_real_values_pass() -> None:
    # 1E30 is absurd for a bay but not a special value: the limits catch it, not the parser.
    assert check_reading(1e30, "power", "analyser", "X?") == 1e30
    assert check_reading(-8.9e37, "power", "analyser", "X?") == -8.9e37


def test_garbled_reply_is_protocol_error() -> None:
    with pytest.raises(ProtocolError, match="temperature: 'twenty' is not a SCPI number"):
        reply_number("twenty", "temperature", "thermometer", "MEAS:TEMP? (@1)")


def test_channel_list_reply() -> None:
    assert reply_numbers("21.5,+24.25,2.30E+01", 3, "temperature", "t", "X?") == [21.5, 24.25, 23.0]
    with pytest.raises(ProtocolError, match="expected 3 value"):
        reply_numbers("21.5,24.25", 3, "temperature", "t", "X?")
    with pytest.raises(OverRange):
        reply_numbers("21.5,9.91E37,23", 3, "temperature", "t", "X?")
