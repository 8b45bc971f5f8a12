"""A programmable AC source: voltage and frequency setpoints, output, current protection.

Setpoints are checked for sense here (finite, not negative); the bay's limits are the safety
layer's job, before anything reaches this class.

A three-phase source (``phases: 3`` in its profile) is one source with three phases: the
voltage setpoint is the line-to-neutral rms voltage of all three (balanced, positive sequence);
``measured_voltage``/``measured_current`` give the largest phase, ``measured_voltages``/
``measured_currents`` each phase.
"""

from __future__ import annotations

from pathlib import Path

from drivers.errors import ProtocolError
from drivers.numbers import check_reading, parse_number
from drivers.profile import AcSourceProfile, Profile
from drivers.scpi import ScpiInstrument, require_finite
from drivers.transport import Transport


class AcSource(ScpiInstrument):
    KIND = "ac_source"
    profile: AcSourceProfile

    def __init__(self, transport: Transport, name: str, profile: Profile | str | Path = "generic"):
        super().__init__(transport, name, profile)
        p = self.profile
        self._on, self._off = p.words.enabled, p.words.disabled
        self.phases: int = p.phases

    def _word(self, on: bool) -> str:
        return self._on if on else self._off

    # --- setpoints

    def set_voltage(self, volts: float) -> None:
        """The rms voltage setpoint; the source slews to it at its own rate."""
        value = require_finite(volts, "the voltage setpoint")
        self.configure(self._template("set_voltage").format(value=value))

    def voltage_setpoint(self) -> float:
        return self._query_number(self._template("voltage_setpoint"), "voltage setpoint")

    def set_frequency(self, hertz: float) -> None:
        value = require_finite(hertz, "the frequency setpoint", minimum=None)
        if value <= 0:
            raise ValueError(f"the frequency setpoint must be positive, got {value:g}")
        self.configure(self._template("set_frequency").format(value=value))

    def frequency_setpoint(self) -> float:
        return self._query_number(self._template("frequency_setpoint"), "frequency setpoint")

    def set_slew(self, volts_per_second: float) -> None:
        """The maximum rate the output voltage may change (a ramp limit kept by the source)."""
        value = require_finite(volts_per_second, "the slew rate")
        if value == 0:
            raise ValueError("the slew rate must be positive")
        self.configure(self._template("set_slew").format(value=value))

    def slew(self) -> float:
        return self._query_number(self._template("slew"), "slew rate")

    # --- output

    def set_output(self, on: bool) -> None:
        self.configure(self._template("set_output").format(state=self._word(bool(on))))

    def output_is_on(self) -> bool:
        return self._query_bool(self._template("output_state"))

    # --- current protection

    def set_current_protection(self, amps: float) -> None:
        """The protection level; the protection is switched on when the profile can."""
        value = require_finite(amps, "the current protection level")
        if value == 0:
            raise ValueError("the current protection level must be positive")
        self.configure(self._template("set_current_protection").format(value=value))
        state = self._cmd["set_current_protection_state"]
        if state is not None:
            self.configure(state.format(state=self._on))

    def current_protection(self) -> float:
        return self._query_number(self._template("current_protection"), "current protection level")

    def protection_tripped(self) -> bool:
        return self._query_bool(self._template("protection_tripped"))

    # --- the source's own readback, where it has one

    @property
    def has_readback(self) -> bool:
        return self._cmd["measured_voltage"] is not None

    def measured_voltage(self) -> float | None:
        command = self._cmd["measured_voltage"]
        return None if command is None else self._query_number(command, "output voltage")

    def measured_current(self) -> float | None:
        command = self._cmd["measured_current"]
        return None if command is None else self._query_number(command, "output current")

    def measured_voltages(self) -> tuple[float, ...] | None:
        """Each phase's line-to-neutral rms voltage (a three-phase source), None without."""
        return self._per_phase("measured_voltages", "output voltage")

    def measured_currents(self) -> tuple[float, ...] | None:
        """Each phase's line current, None without per-phase readback."""
        return self._per_phase("measured_currents", "output current")

    def _per_phase(self, operation: str, quantity: str) -> tuple[float, ...] | None:
        command = self._cmd[operation]
        if command is None:
            return None
        reply = self._query(command)
        tokens = reply.split(",")
        if len(tokens) != self.phases:
            raise ProtocolError(f"expected {self.phases} comma-separated values for the {quantity} per phase, "
                                f"got '{reply}'", self.name, command)
        try:
            values = tuple(parse_number(t) for t in tokens)
        except ValueError as exc:
            raise ProtocolError(f"{quantity} per phase unreadable: {exc}", self.name, command) from None
        return tuple(check_reading(v, f"{quantity} of phase {k}", self.name, command)
                     for k, v in enumerate(values, start=1))

    # --- communication watchdog

    @property
    def has_watchdog(self) -> bool:
        return self._cmd["set_watchdog_timeout"] is not None

    def set_watchdog(self, seconds: float | None) -> None:
        """Arm the watchdog: with the output on and no command for ``seconds``, the source drops
        to zero and turns off. ``None`` disarms it."""
        if seconds is None:
            self.configure(self._template("set_watchdog_state").format(state=self._off))
            return
        value = require_finite(seconds, "the watchdog timeout")
        if value == 0:
            raise ValueError("the watchdog timeout must be positive (None disarms it)")
        self.configure(self._template("set_watchdog_timeout").format(value=value))
        self.configure(self._template("set_watchdog_state").format(state=self._on))
