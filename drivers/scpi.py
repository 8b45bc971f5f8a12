"""The SCPI base of every instrument class: identity, common commands, the error queue.

Configuration commands are followed by draining ``SYSTem:ERRor?`` (when the profile has an error
queue), so an instrument that refused a setting is reported at once, as an
:class:`InstrumentReportedError`, instead of running on with its old value.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from drivers.errors import InstrumentError, InstrumentReportedError, NotSupported, ProtocolError
from drivers.numbers import reply_number
from drivers.profile import Profile, load_profile
from drivers.transport import Transport

# A queue that never empties is a fault of its own (SCPI queues hold a few tens of entries).
MAX_QUEUED_ERRORS = 32
_ERROR_REPLY = re.compile(r'\s*([+-]?\d+)\s*,\s*"?(.*?)"?\s*')


@dataclass(frozen=True, slots=True)
class Identity:
    """The four fields of an IEEE 488.2 ``*IDN?`` reply."""

    maker: str
    model: str
    serial: str
    firmware: str

    def __str__(self) -> str:
        return f"{self.maker} {self.model} (serial {self.serial}, firmware {self.firmware})"


def parse_identity(reply: str, instrument: str = "?", command: str = "*IDN?") -> Identity:
    fields = [f.strip() for f in reply.split(",")]
    if len(fields) != 4 or not fields[0] or not fields[1]:
        raise ProtocolError(f"*IDN? reply is not maker,model,serial,firmware: '{reply}'",
                            instrument, command)
    return Identity(*fields)


def parse_error(reply: str, instrument: str = "?", command: str | None = None) -> tuple[int, str]:
    """``<code>,"<text>"`` of ``SYSTem:ERRor?`` as (code, text)."""
    match = _ERROR_REPLY.fullmatch(reply)
    if match is None:
        raise ProtocolError(f"error-queue reply is not <code>,\"<text>\": '{reply}'", instrument, command)
    return int(match.group(1)), match.group(2)


def parse_bool(reply: str, instrument: str, command: str) -> bool:
    """A SCPI boolean reply: ``1``/``0`` (also ``ON``/``OFF``, which some instruments answer)."""
    word = reply.strip().upper()
    if word in ("1", "ON", "+1"):
        return True
    if word in ("0", "OFF", "+0"):
        return False
    raise ProtocolError(f"expected a boolean 1|0, got '{reply}'", instrument, command)


def matches_word(reply: str, word: str) -> bool:
    """A character-data reply matches the long or the short form of ``word`` (any case)."""
    answer = reply.strip().upper()
    short = "".join(c for c in word if c.isupper() or c.isdigit()) or word.upper()
    return answer in (word.upper(), short.upper())


class ScpiInstrument:
    """An instrument over a transport, driven by a command profile of its class."""

    KIND = ""

    def __init__(self, transport: Transport, name: str, profile: Profile | str | Path = "generic"):
        self.name = name
        self.transport = transport
        self.profile = profile if isinstance(profile, Profile) else load_profile(profile, self.KIND)
        if self.profile.kind != self.KIND:
            raise ValueError(f"profile '{self.profile.name}' is for kind '{self.profile.kind}', not '{self.KIND}'")
        common = self.profile.common
        self._idn = self.profile.send_form(common.identify)
        self._rst = self.profile.send_form(common.reset)
        self._cls = self.profile.send_form(common.clear)
        self._opc = self.profile.send_form(common.operation_complete)
        eq = self.profile.error_query
        self._error_query = None if eq is None else self.profile.send_form(eq)
        commands = self.profile.commands  # type: ignore[attr-defined]
        self._cmd = {op: self.profile.command(op) for op in type(commands).SPECS}

    def _template(self, operation: str) -> str:
        template = self._cmd[operation]
        if template is None:
            raise NotSupported(f"profile '{self.profile.name}' has no '{operation}'", self.name, None)
        return template

    # --- the two primitives: every failure leaves labelled with this instrument's name

    def _query(self, command: str) -> str:
        try:
            return self.transport.query(command)
        except InstrumentError as exc:
            exc.instrument = self.name
            raise

    def _write(self, command: str) -> None:
        try:
            self.transport.write(command)
        except InstrumentError as exc:
            exc.instrument = self.name
            raise

    def _query_number(self, command: str, quantity: str) -> float:
        return reply_number(self._query(command), quantity, self.name, command)

    def _query_bool(self, command: str) -> bool:
        return parse_bool(self._query(command), self.name, command)

    def configure(self, command: str) -> None:
        """Send a setting, then report any error the instrument queued for it.

        Either query returns only once the instrument has taken the setting, so a setting is in
        force before the next command to any instrument (writes on different connections are
        not ordered otherwise). Without an error queue, ``*OPC?`` does the waiting.
        """
        self._write(command)
        if self._error_query is None:
            self.wait_complete()
        self.check_errors(command)

    # --- IEEE 488.2 common commands and the error queue

    def identify(self) -> Identity:
        identity = parse_identity(self._query(self._idn), self.name, self._idn)
        self._check_expected(identity)
        return identity

    def _check_expected(self, identity: Identity) -> None:
        expect = self.profile.expect
        if expect is None:
            return
        if expect.maker is not None and identity.maker.casefold() != expect.maker.casefold():
            raise InstrumentError(f"identifies as {identity}, but profile '{self.profile.name}' "
                                  f"is for maker '{expect.maker}'", self.name, self._idn)
        if expect.model is not None and re.fullmatch(expect.model, identity.model) is None:
            raise InstrumentError(f"identifies as {identity}, but profile '{self.profile.name}' "
                                  f"is for models '{expect.model}'", self.name, self._idn)

    def reset(self) -> None:
        """``*RST``, waited for with ``*OPC?``, then the error queue checked."""
        self._write(self._rst)
        self.wait_complete()
        self.check_errors(self._rst)

    def clear(self) -> None:
        """``*CLS``: clears the status registers and the error queue."""
        self._write(self._cls)

    def wait_complete(self) -> None:
        """``*OPC?``: returns when the instrument has finished pending operations."""
        reply = self._query(self._opc)
        if reply.strip() not in ("1", "+1"):
            raise ProtocolError(f"*OPC? answered '{reply}', expected 1", self.name, self._opc)

    def read_errors(self) -> list[tuple[int, str]]:
        """Drain the error queue: every (code, text) until ``0,"No error"``."""
        if self._error_query is None:
            return []
        errors: list[tuple[int, str]] = []
        for _ in range(MAX_QUEUED_ERRORS):
            code, text = parse_error(self._query(self._error_query), self.name, self._error_query)
            if code == 0:
                return errors
            errors.append((code, text))
        raise ProtocolError(f"the error queue did not empty after {MAX_QUEUED_ERRORS} reads",
                            self.name, self._error_query)

    def check_errors(self, command: str | None = None) -> None:
        """Raise :class:`InstrumentReportedError` for the first queued error (all are listed)."""
        errors = self.read_errors()
        if errors:
            code, text = errors[0]
            listed = "; ".join(f"{c},\"{t}\"" for c, t in errors)
            raise InstrumentReportedError(f"the instrument reported {listed}", self.name, command,
                                          code=code, text=text)

    def close(self) -> None:
        self.transport.close()

    def __enter__(self) -> ScpiInstrument:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"{type(self).__name__}({self.name!r}, profile={self.profile.name!r})"


def require_finite(value: float, what: str, minimum: float | None = 0.0) -> float:
    """Refuse a setpoint that no instrument should be sent (NaN, infinite, below ``minimum``)."""
    number = float(value)
    if number != number or number in (float("inf"), float("-inf")):
        raise ValueError(f"{what} must be a finite number, got {value!r}")
    if minimum is not None and number < minimum:
        raise ValueError(f"{what} must be at least {minimum:g}, got {number:g}")
    return number


def channel_list(channels: tuple[int, ...] | list[int]) -> str:
    """A SCPI channel list: ``(@1)``, ``(@1,2,3)``."""
    if not channels:
        raise ValueError("at least one channel is needed")
    for ch in channels:
        if isinstance(ch, bool) or not isinstance(ch, int) or ch < 1:
            raise ValueError(f"a channel is a positive whole number, got {ch!r}")
    return "(@" + ",".join(str(c) for c in channels) + ")"
