"""Instrument-side SCPI: a small command tree, parameter parsing and the IEEE 488.2 status model.

Headers follow the SCPI-1999 conventions: long or short mnemonics in any case, optional nodes in
``[ ]``, a numeric suffix of 1 accepted on any node, ``;``-joined units where a unit without a
leading ``:`` continues from the previous header's path (falling back to the root), and ``*``
common commands anywhere. Errors land in a FIFO error queue with the standard codes.
"""

from __future__ import annotations

import math
import re
from collections import deque
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Callable

# Standard SCPI error codes and texts (SCPI-1999 vol. 2 ch. 21; IEEE 488.2).
ERROR_TEXTS: dict[int, str] = {
    0: "No error",
    -100: "Command error", -102: "Syntax error", -104: "Data type error",
    -108: "Parameter not allowed", -109: "Missing parameter", -113: "Undefined header",
    -114: "Header suffix out of range", -131: "Invalid suffix",
    -200: "Execution error", -221: "Settings conflict", -222: "Data out of range",
    -224: "Illegal parameter value", -241: "Hardware missing",
    -350: "Queue overflow", -410: "Query INTERRUPTED", -420: "Query UNTERMINATED",
}

RESOLVED_CACHE = 1024
OVERLOAD = 9.9e37
NOT_A_NUMBER = 9.91e37

# ESR bits (IEEE 488.2 11.5.1) and STB bits (11.2).
ESR_OPC, ESR_QYE, ESR_DDE, ESR_EXE, ESR_CME, ESR_PON = 1, 4, 8, 16, 32, 128
STB_EAV, STB_MAV, STB_ESB = 4, 16, 32


class ScpiError(Exception):
    """An error the instrument puts in its queue; ``code`` is a standard SCPI code."""

    def __init__(self, code: int, detail: str = ""):
        self.code = code
        self.detail = detail
        super().__init__(f"{code}: {detail or ERROR_TEXTS.get(code, '')}")

    def queue_text(self) -> str:
        base = ERROR_TEXTS.get(self.code, "Error")
        return f"{base};{self.detail}" if self.detail else base


# --------------------------------------------------------------------------- headers

@dataclass(frozen=True)
class Mnemonic:
    long: str
    short: str
    optional: bool

    def accepts(self, word: str) -> bool:
        return word == self.long or word == self.short


_SUFFIX = re.compile(r"^([A-Z_]+?)(\d+)$")


def _mnemonic(text: str, optional: bool) -> Mnemonic:
    short = "".join(ch for ch in text if ch.isupper() or ch.isdigit() or ch == "_")
    return Mnemonic(text.upper(), short, optional)


def compile_pattern(pattern: str) -> tuple[Mnemonic, ...]:
    """``"[SOURce:]VOLTage[:LEVel]"`` -> mnemonics with their optional flags."""
    nodes: list[Mnemonic] = []
    for optional, body in re.findall(r"(\[)?:?([A-Za-z_]+):?\]?", pattern):
        nodes.append(_mnemonic(body, bool(optional)))
    return tuple(nodes)


def split_node(word: str) -> str:
    """Drop a numeric suffix of 1 (the default); other suffixes are out of range here."""
    m = _SUFFIX.match(word)
    if not m:
        return word
    if m.group(2) != "1":
        raise ScpiError(-114, word)
    return m.group(1)


def match_nodes(words: list[str], nodes: tuple[Mnemonic, ...]) -> bool:
    """True when ``words`` spell ``nodes``, skipping optional ones (backtracking)."""
    def walk(i: int, j: int) -> bool:
        if j == len(nodes):
            return i == len(words)
        if i < len(words) and nodes[j].accepts(words[i]) and walk(i + 1, j + 1):
            return True
        return nodes[j].optional and walk(i, j + 1)
    return walk(0, 0)


# --------------------------------------------------------------------------- parameters

_NUMBER = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*([A-Za-z]*)$")
_MULTIPLIERS = {"": 1.0, "MA": 1e6, "K": 1e3, "M": 1e-3, "U": 1e-6, "N": 1e-9}
_KEYWORD_NUMBERS = {"INF": math.inf, "NINF": -math.inf, "NAN": math.nan}


def parse_number(text: str, unit: str = "", keywords: dict[str, float] | None = None) -> float:
    """A decimal numeric program data (NR1/NR2/NR3), an optional unit suffix, or a keyword.

    ``keywords`` maps MINimum/MAXimum/DEFault (upper-case long forms) to values.
    """
    word = text.strip().upper()
    for long, value in (keywords or {}).items():
        if word in (long, long[:3]):
            return value
    if word in _KEYWORD_NUMBERS:
        return _KEYWORD_NUMBERS[word]
    m = _NUMBER.match(text.strip())
    if not m:
        raise ScpiError(-104, f"not a number: {text.strip()!r}")
    return float(m.group(1)) * _suffix_factor(m.group(2).upper(), unit.upper())


def _suffix_factor(suffix: str, unit: str) -> float:
    if not suffix:
        return 1.0
    if unit and suffix.endswith(unit):
        prefix = suffix[: len(suffix) - len(unit)]
        if prefix in _MULTIPLIERS:
            return _MULTIPLIERS[prefix]
    raise ScpiError(-131, suffix)


def parse_bool(text: str) -> bool:
    word = text.strip().upper()
    if word in ("ON", "1"):
        return True
    if word in ("OFF", "0"):
        return False
    try:
        return round(float(word)) != 0
    except ValueError:
        raise ScpiError(-224, f"expected ON|OFF|1|0, got {text.strip()!r}") from None


def parse_choice(text: str, choices: tuple[str, ...]) -> str:
    """A character program data against long forms like ``("OPEN", "SHORt")``."""
    word = text.strip().upper()
    for choice in choices:
        m = _mnemonic(choice, False)
        if word in (m.long, m.short):
            return m.long
    raise ScpiError(-224, f"expected one of {'|'.join(choices)}, got {text.strip()!r}")


def parse_channels(text: str, valid: range) -> list[int]:
    """A channel list ``(@1)``, ``(@1,2,3)`` or ``(@1:3)``."""
    return list(_channels(text.strip(), valid))


@lru_cache(maxsize=256)
def _channels(text: str, valid: range) -> tuple[int, ...]:
    m = re.fullmatch(r"\(@([\d,:\s]+)\)", text.strip())
    if not m:
        raise ScpiError(-104, f"expected a channel list like (@1), got {text.strip()!r}")
    channels: list[int] = []
    for part in m.group(1).split(","):
        lo, _, hi = part.strip().partition(":")
        if not lo.strip().isdigit() or (hi and not hi.strip().isdigit()):
            raise ScpiError(-104, f"bad channel list {text.strip()!r}")
        channels.extend(range(int(lo), int(hi or lo) + 1))
    bad = [c for c in channels if c not in valid]
    if bad or not channels:
        raise ScpiError(-222, f"channel {bad[0] if bad else '?'} does not exist")
    return tuple(channels)


def format_number(value: float) -> str:
    """NR3, with the SCPI overload and not-a-number values for the non-finite."""
    if math.isnan(value):
        value = NOT_A_NUMBER
    elif math.isinf(value):
        value = math.copysign(OVERLOAD, value)
    return f"{value:.7E}"


def split_units(message: str) -> list[str]:
    """Split a program message on ``;`` outside quotes and parentheses."""
    if '"' not in message and "'" not in message and "(" not in message:
        return message.split(";")
    return list(_split_units(message))


@lru_cache(maxsize=512)
def _split_units(message: str) -> tuple[str, ...]:
    units, depth, quote, start = [], 0, "", 0
    for i, ch in enumerate(message):
        if quote:
            quote = "" if ch == quote else quote
        elif ch in "\"'":
            quote = ch
        elif ch == "(":
            depth += 1
        elif ch == ")":
            depth = max(depth - 1, 0)
        elif ch == ";" and depth == 0:
            units.append(message[start:i])
            start = i + 1
    units.append(message[start:])
    return tuple(units)


def split_params(text: str) -> list[str]:
    """Split program data on ``,`` outside parentheses (channel lists keep their commas)."""
    if not text.strip():
        return []
    params, depth, start = [], 0, 0
    for i, ch in enumerate(text):
        depth += ch == "("
        depth -= ch == ")"
        if ch == "," and depth == 0:
            params.append(text[start:i].strip())
            start = i + 1
    params.append(text[start:].strip())
    return params


# --------------------------------------------------------------------------- the tree

Setter = Callable[[list[str]], None]
Getter = Callable[[list[str]], str]


@dataclass(frozen=True)
class Command:
    pattern: str
    nodes: tuple[Mnemonic, ...]
    setter: Setter | None
    getter: Getter | None


@dataclass
class StatusModel:
    """IEEE 488.2 event status, enable registers and the error queue."""

    queue_size: int = 10
    esr: int = ESR_PON
    ese: int = 0
    sre: int = 0
    errors: deque = field(default_factory=deque)

    def push(self, error: ScpiError) -> None:
        self.esr |= _esr_bit(error.code)
        if len(self.errors) >= self.queue_size:
            self.errors[-1] = (-350, ERROR_TEXTS[-350])
            return
        self.errors.append((error.code, error.queue_text()))

    def pop(self) -> str:
        code, text = self.errors.popleft() if self.errors else (0, ERROR_TEXTS[0])
        return f'{code:+d},"{text}"' if code else '0,"No error"'

    def stb(self) -> int:
        value = STB_EAV if self.errors else 0
        value |= STB_ESB if self.esr & self.ese else 0
        return value | (64 if value & self.sre else 0)

    def clear(self) -> None:
        self.errors.clear()
        self.esr = 0


def _esr_bit(code: int) -> int:
    if -199 <= code <= -100:
        return ESR_CME
    if -299 <= code <= -200:
        return ESR_EXE
    if -399 <= code <= -300:
        return ESR_DDE
    return ESR_QYE if -499 <= code <= -400 else ESR_DDE


class CommandTree:
    """Registered commands plus the common commands; ``execute(message) -> reply or None``."""

    def __init__(self, identity: str, reset: Callable[[], None] = lambda: None):
        self.identity = identity
        self.status = StatusModel()
        self._commands: list[Command] = []
        self._resolved: dict[tuple, tuple[Command, list[str]]] = {}
        self._reset = reset
        self._common: dict[str, tuple[Setter | None, Getter | None]] = self._common_commands()

    def add(self, pattern: str, setter: Setter | None = None, getter: Getter | None = None) -> None:
        self._commands.append(Command(pattern, compile_pattern(pattern), setter, getter))
        self._resolved.clear()

    def execute(self, message: str) -> str | None:
        """Run one program message; the joined replies of its queries, or None if none."""
        replies: list[str] = []
        path: list[str] = []
        for unit in split_units(message):
            try:
                path = self._unit(unit.strip(), path, replies)
            except ScpiError as err:
                self.status.push(err)
                if -199 <= err.code <= -100:
                    break
        return ";".join(replies) if replies else None

    def _unit(self, unit: str, path: list[str], replies: list[str]) -> list[str]:
        if not unit:
            return path
        header, fixed_params, fixed_words = parse_unit(unit)
        params = list(fixed_params)
        if fixed_words is None:
            self._run_common(header, params, replies)
            return path
        is_query = header.endswith("?")
        words = list(fixed_words)
        if header.startswith(":"):
            path = []
        command, used = self._find(path + words, words)
        self._run(command, is_query, params, replies)
        return used[:-1]

    def _find(self, candidate: list[str], words: list[str]) -> tuple[Command, list[str]]:
        # Instruments see the same few headers over and over: resolve each spelling once.
        key = (tuple(candidate), tuple(words))
        hit = self._resolved.get(key)
        if hit is None:
            hit = self._search(candidate, words)
            if len(self._resolved) < RESOLVED_CACHE:
                self._resolved[key] = hit
        return hit[0], list(hit[1])

    def _search(self, candidate: list[str], words: list[str]) -> tuple[Command, list[str]]:
        for attempt in (candidate, words):
            for command in self._commands:
                if match_nodes(attempt, command.nodes):
                    return command, attempt
        raise ScpiError(-113, ":".join(words))

    def _run(self, command: Command, is_query: bool, params: list[str], replies: list[str]) -> None:
        if is_query:
            if command.getter is None:
                raise ScpiError(-113, f"{command.pattern} is not a query")
            replies.append(command.getter(params))
            return
        if command.setter is None:
            raise ScpiError(-113, f"{command.pattern} is a query only")
        command.setter(params)

    def _run_common(self, header: str, params: list[str], replies: list[str]) -> None:
        name = header.upper()
        is_query = name.endswith("?")
        setter, getter = self._common.get(name.rstrip("?"), (None, None))
        handler = getter if is_query else setter
        if handler is None:
            raise ScpiError(-113, header)
        reply = handler(params)
        if is_query:
            replies.append(str(reply))

    # common commands (IEEE 488.2 ch. 10)
    def _common_commands(self) -> dict[str, tuple]:
        s = self.status
        return {
            "*IDN": (None, lambda p: no_params(p) or self.identity),
            "*RST": (lambda p: no_params(p) or self._reset(), None),
            "*CLS": (lambda p: no_params(p) or s.clear(), None),
            "*OPC": (lambda p: no_params(p) or setattr(s, "esr", s.esr | ESR_OPC), lambda p: no_params(p) or "1"),
            "*WAI": (lambda p: no_params(p), None),
            "*ESR": (None, lambda p: no_params(p) or str(self._read_esr())),
            "*ESE": (lambda p: setattr(s, "ese", _register(p)), lambda p: no_params(p) or str(s.ese)),
            "*SRE": (lambda p: setattr(s, "sre", _register(p)), lambda p: no_params(p) or str(s.sre)),
            "*STB": (None, lambda p: no_params(p) or str(s.stb())),
            "*TST": (None, lambda p: no_params(p) or "0"),
        }

    def _read_esr(self) -> int:
        value, self.status.esr = self.status.esr, 0
        return value


@lru_cache(maxsize=2048)
def parse_unit(unit: str) -> tuple[str, tuple[str, ...], tuple[str, ...] | None]:
    """(header, parameters, header words or None for a common command), parsed once per text."""
    header, rest = _split_header(unit)
    words = None if header.startswith("*") else tuple(_words(header.rstrip("?")))
    return header, tuple(split_params(rest)), words


def _split_header(unit: str) -> tuple[str, str]:
    m = re.match(r"^(\S+?)(\?)?(?:\s+(.*))?$", unit, re.S)
    if not m or not re.fullmatch(r"\*?[A-Za-z0-9_:]+", m.group(1)):
        raise ScpiError(-102, unit)
    return m.group(1) + (m.group(2) or ""), m.group(3) or ""


def _words(header: str) -> list[str]:
    words = [w for w in header.strip(":").upper().split(":")]
    if any(not w for w in words):
        raise ScpiError(-102, header)
    return [split_node(w) for w in words]


def no_params(params: list[str]) -> None:
    """Returns None so handlers can write ``no_params(p) or value``."""
    if params:
        raise ScpiError(-108, ",".join(params))


def one_param(params: list[str]) -> str:
    if not params:
        raise ScpiError(-109)
    if len(params) > 1:
        raise ScpiError(-108, ",".join(params[1:]))
    return params[0]


def _register(params: list[str]) -> int:
    value = parse_number(one_param(params))
    if not 0 <= value <= 255:
        raise ScpiError(-222, f"{value:g} outside 0..255")
    return int(round(value))
