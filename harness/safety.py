"""Limits on every setpoint and reading, and the one safe-state procedure for every cause.

The software is not a protective device: hardware interlocks, the source's own current
protection and an emergency stop must act independently of it. This module is the harness's
own layer on top of them.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field
from typing import Any, Callable

from harness.common.clock import Clock
from harness.common.errors import HarnessError
from harness.common.reading import Phase, Sample, phase_name
from harness.config.checks import EffectiveLimits
from harness.config.station import ReadingChecks, SafeState

_UNITS = {"voltage": "V", "current": "A", "power": "W", "energised_time": "s", "winding_temperature": "degC"}


class Trip(HarnessError):
    """A reason to stop now and make the bay safe; carries what the report's banner shows."""

    def __init__(self, cause: str, quantity: str | None = None, value: float | None = None,
                 limit: float | None = None, step: str | None = None, time: float | None = None,
                 phase: str | None = None):
        self.cause, self.quantity, self.value, self.limit = cause, quantity, value, limit
        self.step, self.time, self.phase = step, time, phase
        self.wall = dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds")
        super().__init__(self.sentence())

    def sentence(self) -> str:
        if self.quantity and self.value is not None and self.limit is not None:
            unit = _UNITS.get(self.quantity, "")
            return f"{self.cause}: {self.quantity} {self.value:.4g} {unit} against the limit of {self.limit:.4g} {unit}"
        return self.cause

    def as_dict(self) -> dict[str, Any]:
        return {"cause": self.cause, "quantity": self.quantity, "value": self.value, "limit": self.limit,
                "step": self.step, "t_s": self.time, "time": self.wall, "phase": self.phase, "text": self.sentence()}


class LimitTrip(Trip):
    """A setpoint or reading beyond a limit."""


class ReadingFault(Trip):
    """A reading that cannot be trusted: not a number, late, missing, stale or over-range."""


@dataclass
class Supervisor:
    """Checks against the effective limits of the step being run."""
    limits: EffectiveLimits
    checks: ReadingChecks
    clock: Clock
    step: str = ""
    energised_since: float | None = None
    setpoint_factor: float = 1.0
    _last_values: tuple[Phase, ...] | None = None
    _last_change: float = 0.0

    def trip(self, quantity: str, value: float, limit: float, phase: str = "") -> LimitTrip:
        on = f" on phase {phase}" if phase else ""
        return LimitTrip(f"{quantity.replace('_', ' ')} limit{on}", quantity, value, limit, self.step,
                         self.clock.now(), phase or None)

    @property
    def setpoint_limit(self) -> float:
        """The voltage limit in the source's own terms (the highest setpoint it may be sent)."""
        return self.limits.voltage / self.setpoint_factor

    def check_setpoint(self, volts: float) -> None:
        """``volts`` in the source's own terms; ``setpoint_factor`` turns them into the line
        voltage the limits are given in (sqrt 3 for a three-phase source set line-to-neutral)."""
        line = volts * self.setpoint_factor
        if not math.isfinite(volts) or volts < 0:
            raise LimitTrip("invalid setpoint", "voltage", volts, self.limits.voltage, self.step, self.clock.now())
        if line > self.limits.voltage:
            raise LimitTrip("voltage limit: setpoint refused before it was sent", "voltage", line,
                            self.limits.voltage, self.step, self.clock.now())

    def check_reading(self, sample: Sample, age: float) -> None:
        """Every phase against the limits (a current limit is a limit on each line current), the
        total power, the energised time; ``age`` is how long the query took (bay s)."""
        t, phases = sample.t, sample.phases
        n = len(phases)
        isfinite = math.isfinite
        for k, ph in enumerate(phases):
            if not (isfinite(ph.u_rms) and isfinite(ph.u_mean) and isfinite(ph.i_rms) and isfinite(ph.p)):
                name = phase_name(k, n)
                raise ReadingFault("reading is not a number" + (f" on phase {name}" if name else ""),
                                   step=self.step, time=t, phase=name or None)
        if age > self.checks.late_after:
            raise ReadingFault("reading late", "time", age, self.checks.late_after, self.step, t)
        limits = self.limits
        voltage, current = limits.voltage, limits.current
        for k, ph in enumerate(phases):
            u, i = max(ph.u_rms, ph.u_mean), abs(ph.i_rms)
            if u > voltage or i > current:  # the trip, named by phase
                self._check_bounds(u, i, phase_name(k, n))
        if abs(sample.p) > limits.power:
            raise self.trip("power", abs(sample.p), limits.power)
        self._check_time(t)
        self._check_stale(phases, t)

    def _check_bounds(self, u: float, i: float, phase: str) -> None:
        if u > self.limits.voltage:
            raise self.trip("voltage", u, self.limits.voltage, phase)
        if i > self.limits.current:
            raise self.trip("current", i, self.limits.current, phase)

    def _check_time(self, t: float) -> None:
        if self.energised_since is not None and t - self.energised_since > self.limits.energised_time:
            raise self.trip("energised_time", t - self.energised_since, self.limits.energised_time)

    def _check_stale(self, values: tuple[Phase, ...], t: float) -> None:
        if values != self._last_values:
            self._last_values, self._last_change = values, t
        elif self.energised_since is not None and t - self._last_change > self.checks.stale_after:
            raise ReadingFault("readings stale (identical)", "time", t - self._last_change,
                               self.checks.stale_after, self.step, t)

    def check_temperature(self, degc: float) -> None:
        if not math.isfinite(degc):
            raise ReadingFault("winding temperature is not a number", step=self.step, time=self.clock.now())
        if degc > self.limits.winding_temperature:
            raise self.trip("winding_temperature", degc, self.limits.winding_temperature)


# A three-phase bay's phases that part this far are a fault of the connections, not of the unit
# (common practice, no source): the line-to-line voltages of any test, and the line currents of a
# load-loss test (the no-load currents differ by design on a three-limb core). They are judged
# once the readings stand well above what the analyser's %-of-range error can make of them on
# ranges opened to the limits: from 5 % of the limits. Lower, a few % of spread is the
# instrument's; but when a load-loss ramp's next setpoint is refused (the unit drew far less
# current than its impedance allows, as with an open link phase, whose first readings stay low),
# a spread of UNBALANCE_REFUSED_PCT or more - an open phase gives 100 % - says why, at any level.
UNBALANCE_LIMIT_PCT = 10.0
UNBALANCE_REFUSED_PCT = 30.0
UNBALANCE_VOLTAGE_FROM = 0.05
UNBALANCE_CURRENT_FROM = 0.05


def unbalance(sample: Sample, limits: EffectiveLimits, load_test: bool, step: str = "",
              refused: bool = False) -> ReadingFault | None:
    """A three-phase reading whose phases part beyond UNBALANCE_LIMIT_PCT, naming the phase: a
    dead source phase (the two line-to-line voltages through it drop) or an open link phase."""
    if len(sample.phases) != 3:
        return None
    u = [ph.u_rms for ph in sample.phases]
    if sample.u_rms > UNBALANCE_VOLTAGE_FROM * limits.voltage and _spread(u) > UNBALANCE_LIMIT_PCT:
        highest = u.index(max(u))  # the pair that does not run through the odd phase: 1-2, 2-3, 3-1
        phase = f"L{(highest + 2) % 3 + 1}"
        return ReadingFault(f"line-to-line voltages unbalanced ({', '.join(f'{v:.4g}' for v in u)} V for 1-2, "
                            f"2-3, 3-1): the two through phase {phase} are low - a source phase or lead missing?",
                            step=step, time=sample.t, phase=phase)
    i = [abs(ph.i_rms) for ph in sample.phases]
    judged = _spread(i) > UNBALANCE_REFUSED_PCT if refused else (
        sample.i_rms > UNBALANCE_CURRENT_FROM * limits.current and _spread(i) > UNBALANCE_LIMIT_PCT)
    if load_test and judged:
        odd = max(range(3), key=lambda k: abs(i[k] - (sum(i) - i[k]) / 2))
        phase = f"L{odd + 1}"
        return ReadingFault(f"line currents of the load-loss test unbalanced ({', '.join(f'{v:.4g}' for v in i)} A): "
                            f"phase {phase} stands out - a phase of the short-circuit link open or loose?",
                            step=step, time=sample.t, phase=phase)
    return None


def _spread(values: list[float]) -> float:
    mean = sum(values) / len(values)
    return 100.0 * (max(values) - min(values)) / mean if mean > 0 else 0.0


@dataclass
class SafeOutcome:
    confirmed: bool
    method: str
    voltage: float | None = None
    current: float | None = None
    notes: list[str] = field(default_factory=list)

    def as_dict(self) -> dict[str, Any]:
        return {"confirmed": self.confirmed, "method": self.method, "voltage_V": self.voltage,
                "current_A": self.current, "notes": self.notes}


Probe = Callable[[], tuple[float, float]]

# The confirmation waits at least this much real time, whatever the simulated clock's speed.
CONFIRM_FLOOR_REAL_S = 2.0


def make_safe(source: Any, probes: list[tuple[str, Probe]], config: SafeState, clock: Clock) -> SafeOutcome:
    """Source to zero, output off, then confirm de-energisation by measurement.

    ``probes`` are tried in order (the analyser first, the source's own readback when the
    analyser is what failed); each returns (voltage, current). Every step is attempted even
    when an earlier one fails, because the aim is to remove energy by any means left.
    """
    notes: list[str] = []
    for action, call in (("set voltage to zero", lambda: source.set_voltage(0.0)),
                         ("turn output off", lambda: source.set_output(False))):
        try:
            call()
        except Exception as exc:  # noqa: BLE001 - every failure is noted, none may stop the procedure
            notes.append(f"could not {action}: {exc}")
    return _confirm(probes, config, clock, notes)


def _confirm(probes: list[tuple[str, Probe]], config: SafeState, clock: Clock, notes: list[str]) -> SafeOutcome:
    deadline = clock.now() + clock.at_least_real(config.confirm_timeout, CONFIRM_FLOOR_REAL_S)
    probes = list(probes)
    last: tuple[float, float] | None = None
    method = "none"
    while probes:
        name, probe = probes[0]
        try:
            last, method = probe(), name
        except Exception as exc:  # noqa: BLE001 - a failed probe is dropped, the next one tried
            notes.append(f"{name} could not confirm: {exc}")
            probes.pop(0)
            continue
        if _is_dead(last, config):
            return SafeOutcome(True, method, last[0], last[1], _unique(notes))
        if clock.now() >= deadline:
            break
        clock.sleep(min(0.2, config.confirm_timeout / 10))
    return SafeOutcome(False, method, last[0] if last else None, last[1] if last else None, _unique(notes))


def _is_dead(reading: tuple[float, float], config: SafeState) -> bool:
    u, i = reading
    return math.isfinite(u) and math.isfinite(i) and abs(u) < config.deenergised_voltage and abs(i) < config.deenergised_current


def _unique(notes: list[str]) -> list[str]:
    return list(dict.fromkeys(notes))
