"""A power analyser read with one snapshot query per reading.

The snapshot command is built once, for the configured channels, when the analyser is made;
a reading is then one query, one ``str.split`` per level and ``float`` per value, and a range
check that turns the overload and not-a-number values into :class:`OverRange`.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from drivers.errors import InstrumentError, ProtocolError
from drivers.numbers import check_reading, parse_number
from drivers.profile import QUANTITIES, PowerAnalyserProfile, Profile
from drivers.scpi import ScpiInstrument, channel_list, require_finite
from drivers.transport import Transport



@dataclass(frozen=True, slots=True, init=False)
class ChannelReading:
    """One channel of a snapshot: rms voltage, mean-rectified voltage scaled to rms (V), rms
    current (A), active power (W), frequency (Hz)."""

    u_rms: float
    u_mean: float
    i_rms: float
    p: float
    freq: float

    def __init__(self, u_rms: float, u_mean: float, i_rms: float, p: float, freq: float):
        # A frozen dataclass assigns through object.__setattr__; the slot descriptors do the
        # same in about 60 % of the time, and this runs per channel of every reading.
        _SET_U_RMS(self, u_rms)
        _SET_U_MEAN(self, u_mean)
        _SET_I_RMS(self, i_rms)
        _SET_P(self, p)
        _SET_FREQ(self, freq)


_SET_U_RMS, _SET_U_MEAN, _SET_I_RMS, _SET_P, _SET_FREQ = (
    ChannelReading.__dict__[name].__set__ for name in ("u_rms", "u_mean", "i_rms", "p", "freq"))


@dataclass(frozen=True, slots=True)
class Snapshot:
    """The readings of all configured channels from one query, and the reply as it came."""

    channels: tuple[ChannelReading, ...]
    raw: str


class PowerAnalyser(ScpiInstrument):
    KIND = "power_analyser"
    profile: PowerAnalyserProfile

    def __init__(self, transport: Transport, name: str, profile: Profile | str | Path = "generic",
                 channels: tuple[int, ...] = (1,)):
        super().__init__(transport, name, profile)
        self.channels = tuple(channels)
        fmt = self.profile.snapshot
        self.snapshot_command = self.profile.send_form(fmt.query).format(channels=channel_list(self.channels))
        self._by_channel = fmt.layout == "by_channel"
        self._outer = fmt.channel_separator if self._by_channel else fmt.field_separator
        self._inner = fmt.field_separator if self._by_channel else fmt.channel_separator
        n_fields, n_channels = len(fmt.fields), len(self.channels)
        self._n_outer = n_channels if self._by_channel else n_fields
        self._n_inner = n_fields if self._by_channel else n_channels
        # One channel, reply already in QUANTITIES order: the common case gets a shorter path.
        self._direct = n_channels == 1 and fmt.layout == "by_quantity" and fmt.fields == QUANTITIES
        # Token index of each value, channel after channel in QUANTITIES order.
        self._used = [c * n_fields + fmt.fields.index(q) if self._by_channel
                      else fmt.fields.index(q) * n_channels + c
                      for c in range(n_channels) for q in QUANTITIES]

    # --- the reading

    def snapshot(self) -> Snapshot:
        command = self.snapshot_command
        try:
            reply = self.transport.query(command)
        except InstrumentError as exc:
            exc.instrument = self.name
            raise
        return Snapshot(self.parse_snapshot(reply), reply)

    def parse_snapshot(self, reply: str) -> tuple[ChannelReading, ...]:
        """Readings per channel from a snapshot reply; garbled or special values raise."""
        groups = reply.split(self._outer)
        if self._direct and len(groups) == 5 and "_" not in reply:  # float() takes "1_0" as 10
            try:
                values = list(map(float, groups))
            except ValueError:
                values = self._strict_values(groups, reply)
        else:
            values = self._values(groups, reply)
        for v in values:
            if not -9.0e37 < v < 9.0e37:  # SPECIAL_THRESHOLD, inlined: this runs per value
                self._over_range(values)
        if len(values) == 5:
            return (ChannelReading(*values),)
        return tuple(ChannelReading(*values[k:k + 5]) for k in range(0, len(values), 5))

    def _values(self, groups: list[str], reply: str) -> list[float]:
        """Any layout, channel count and field order (the general, slightly slower path)."""
        if len(groups) != self._n_outer:
            raise self._garbled(reply, f"expected {self._n_outer} group(s) split by '{self._outer}'")
        if "_" in reply:
            raise self._garbled(reply, "'_' is not part of a SCPI number")
        tokens = groups if self._n_inner == 1 else self._split_groups(groups, reply)
        try:
            return [float(tokens[i]) for i in self._used]
        except ValueError:
            return self._strict_values(tokens, reply)

    def _split_groups(self, groups: list[str], reply: str) -> list[str]:
        tokens: list[str] = []
        for group in groups:
            parts = group.split(self._inner)
            if len(parts) != self._n_inner:
                raise self._garbled(reply, f"expected {self._n_inner} value(s) split by '{self._inner}' "
                                           f"in '{group}'")
            tokens.extend(parts)
        return tokens

    def _strict_values(self, tokens: list[str], reply: str) -> list[float]:
        """The strict parser, for what plain ``float`` refuses: ``NINF``, ``#H..``, or garbage."""
        try:
            return [parse_number(tokens[i]) for i in self._used]
        except ValueError as exc:
            raise self._garbled(reply, str(exc)) from None

    def _garbled(self, reply: str, why: str) -> ProtocolError:
        shown = reply if len(reply) <= 200 else reply[:200] + "..."
        return ProtocolError(f"snapshot reply unreadable ({why}): '{shown}'", self.name, self.snapshot_command)

    def _over_range(self, values: list[float]) -> None:
        for k, value in enumerate(values):
            channel, quantity = self.channels[k // 5], QUANTITIES[k % 5]
            check_reading(value, f"{quantity} of channel {channel}", self.name, self.snapshot_command)

    def set_ranges(self, voltage: float | None = None, current: float | None = None) -> None:
        """Fixed ranges (V, A): the instrument picks the smallest range that holds the value."""
        if voltage is not None:
            value = require_finite(voltage, "the voltage range")
            self.configure(self._template("set_voltage_range").format(value=value))
        if current is not None:
            value = require_finite(current, "the current range")
            self.configure(self._template("set_current_range").format(value=value))

    def ranges(self) -> tuple[float, float]:
        return (self._query_number(self._template("voltage_range"), "voltage range"),
                self._query_number(self._template("current_range"), "current range"))

    # --- the ratio test: the open winding's channels and phase angles

    def set_channel_voltage_range(self, volts: float, channels: tuple[int, ...]) -> None:
        """The voltage range of ``channels`` only (the others keep theirs)."""
        value = require_finite(volts, "the voltage range")
        self.configure(self._template("set_channel_voltage_range").format(value=value, channels=channel_list(channels)))

    def voltages(self, channels: tuple[int, ...]) -> tuple[float, ...]:
        """The rms voltages (V at the inputs) of ``channels``, from one query; an overload or a
        not-a-number value raises as in a snapshot."""
        command = self._template("voltages").format(channels=channel_list(channels))
        reply = self._query(command)
        parts = reply.split(",")
        if len(parts) != len(channels):
            raise ProtocolError(f"expected {len(channels)} voltage(s), got '{reply}'", self.name, command)
        try:
            values = tuple(parse_number(p) for p in parts)
        except ValueError as exc:
            raise ProtocolError(f"voltage reply unreadable ({exc}): '{reply}'", self.name, command) from None
        for ch, value in zip(channels, values):
            check_reading(value, f"voltage of channel {ch}", self.name, command)
        return values

    def phase_angle(self, reference: int, channel: int) -> float:
        """Degrees by which ``channel``'s voltage leads ``reference``'s, in (-180, 180]."""
        command = self._template("phase_angle").format(channels=channel_list((reference, channel)))
        angle = self._query_number(command, "phase angle")
        if not -180.0 <= angle <= 180.0:
            raise ProtocolError(f"a phase angle lies in -180..180 degrees, got {angle:g}", self.name, command)
        return angle

    def set_averaging(self, seconds: float) -> None:
        """The averaging time, which is also the interval between fresh readings."""
        value = require_finite(seconds, "the averaging time")
        if value == 0:
            raise ValueError("the averaging time must be positive")
        self.configure(self._template("set_averaging").format(value=value))

    def averaging(self) -> float:
        return self._query_number(self._template("averaging"), "averaging time")
