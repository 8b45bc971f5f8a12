"""SCPI numbers in replies: every IEEE 488.2 / SCPI-1999 numeric form, and the special values.

Replies may be NR1 (``+12``), NR2 (``-1.5``), NR3 (``1.25E+02``), the words ``INF``, ``NINF``,
``NAN`` (SCPI-1999 vol. 1, 7.2.1.5), or non-decimal ``#H1F``, ``#Q17``, ``#B101``. An overload is
answered as ``9.9E37`` (``-9.9E37`` negative), not-a-number as ``9.91E37``. Those values are
over-range conditions, never readings: :func:`check_reading` turns them into :class:`OverRange`.
"""

from __future__ import annotations

import math
import re

from drivers.errors import OverRange, ProtocolError

OVERLOAD = 9.9e37
NOT_A_NUMBER = 9.91e37
# Anything this large is one of the special values (no real quantity comes near it).
SPECIAL_THRESHOLD = 9.0e37

_DECIMAL = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_WORDS = {"INF": math.inf, "+INF": math.inf, "NINF": -math.inf, "-INF": -math.inf, "NAN": math.nan}
_RADIX = {"H": 16, "Q": 8, "B": 2}


def parse_number(text: str) -> float:
    """Read one SCPI number; raise ``ValueError`` naming the text when it is not one."""
    token = text.strip()
    if _DECIMAL.fullmatch(token):
        return float(token)
    word = token.upper()
    if word in _WORDS:
        return _WORDS[word]
    if len(word) > 2 and word[0] == "#" and word[1] in _RADIX:
        return float(_non_decimal(word))
    raise ValueError(f"'{text}' is not a SCPI number")


def _non_decimal(word: str) -> int:
    try:
        return int(word[2:], _RADIX[word[1]])
    except ValueError:
        raise ValueError(f"'{word}' is not a SCPI non-decimal number") from None


def is_special(value: float) -> bool:
    """True for the overload and not-a-number values, infinities and NaN."""
    return not -SPECIAL_THRESHOLD < value < SPECIAL_THRESHOLD


def describe_special(value: float) -> str:
    """Words for a special value, for the OverRange message."""
    if math.isnan(value) or abs(value - NOT_A_NUMBER) < 1e35:
        return "not a number (9.91E37)"
    if value < 0:
        return "over range, negative (-9.9E37)"
    return "over range (9.9E37)"


def check_reading(value: float, quantity: str, instrument: str, command: str) -> float:
    """Pass ``value`` through, or raise :class:`OverRange` when it is a special value."""
    if not -SPECIAL_THRESHOLD < value < SPECIAL_THRESHOLD:
        raise OverRange(f"{quantity} is {describe_special(value)}", instrument, command,
                        quantity=quantity)
    return value


def reply_number(reply: str, quantity: str, instrument: str, command: str) -> float:
    """Parse a one-number reply and check it; garbled text becomes :class:`ProtocolError`."""
    try:
        value = parse_number(reply)
    except ValueError as exc:
        raise ProtocolError(f"{quantity}: {exc}", instrument, command) from None
    return check_reading(value, quantity, instrument, command)


def reply_numbers(reply: str, count: int, quantity: str, instrument: str, command: str) -> list[float]:
    """Parse a comma list of ``count`` numbers (one per channel of a channel list)."""
    parts = reply.split(",")
    if len(parts) != count:
        raise ProtocolError(f"{quantity}: expected {count} value(s), got {len(parts)} in '{reply}'",
                            instrument, command)
    return [reply_number(p, quantity, instrument, command) for p in parts]
