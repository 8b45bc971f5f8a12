"""One family of instrument errors, each naming the instrument and the command."""

from __future__ import annotations


class InstrumentError(Exception):
    """A failure talking to, or reported by, an instrument."""

    def __init__(self, message: str, instrument: str = "?", command: str | None = None):
        self.message = message
        self.instrument = instrument
        self.command = command
        super().__init__(str(self))

    def __str__(self) -> str:
        where = f" after '{self.command}'" if self.command else ""
        return f"{self.instrument}{where}: {self.message}"


class InstrumentTimeout(InstrumentError):
    """No reply within the timeout (a late reply is flushed before the next query)."""


class ConnectionLost(InstrumentError):
    """The link is gone: refused, reset, closed by the peer, or never there."""


class ProtocolError(InstrumentError):
    """A reply that cannot be read: garbled, wrong field count, not a number."""


class InstrumentReportedError(InstrumentError):
    """The instrument's own error queue reported an error (SCPI ``SYSTem:ERRor?``)."""

    def __init__(self, message: str, instrument: str = "?", command: str | None = None,
                 code: int = 0, text: str = ""):
        self.code = code
        self.text = text
        super().__init__(message, instrument, command)


class OverRange(InstrumentError):
    """The instrument answered its overload or not-a-number value (9.9E37, 9.91E37)."""

    def __init__(self, message: str, instrument: str = "?", command: str | None = None,
                 quantity: str = ""):
        self.quantity = quantity
        super().__init__(message, instrument, command)


class NotSupported(InstrumentError):
    """The instrument's profile has no command for the operation asked (e.g. no watchdog)."""


class NotReached(InstrumentError):
    """A commanded move did not end where it was sent: still moving past its time, or stopped on
    another position than the one asked (a tap changer's drive)."""
