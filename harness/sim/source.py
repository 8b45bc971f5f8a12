"""The programmable AC source: setpoint slewing at a rate, first-order settling, distortion.

The output follows a ramp toward the setpoint (at the programmed slew, at most the source's
maximum) through a first-order lag. Both pieces have closed forms, so the state can be stepped
by any interval exactly: a ramp r(t) = r0 + d s t into a lag of time constant tau gives
y(t) = r(t) - d s tau + (y0 - r0 + d s tau) exp(-t / tau).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from harness.sim import waveform
from harness.sim.scenario import SourceSpec


@dataclass
class SourceState:
    setpoint: float = 0.0
    ramp: float = 0.0       # the slewing reference
    output: float = 0.0     # the emf (rms) after the settling lag

    def copy(self) -> "SourceState":
        return SourceState(self.setpoint, self.ramp, self.output)


class Source:
    def __init__(self, spec: SourceSpec, rated_frequency: float):
        self.spec = spec
        self.rated_frequency = rated_frequency
        self.orders: tuple[int, ...] = (1,) + tuple(h.order for h in spec.harmonics)
        self.shape = waveform.shape(
            self.orders,
            (1.0,) + tuple(h.amplitude / 100.0 for h in spec.harmonics),
            (0.0,) + tuple(h.phase for h in spec.harmonics),
        )
        self.reset()

    def reset(self) -> None:
        self.state = SourceState()
        self.slew = self.spec.max_slew
        self.frequency = self.rated_frequency
        self.output_on = False
        self.protection_level = self.spec.max_current
        self.protection_on = True
        self.tripped = False
        self.watchdog_timeout = 10.0
        self.watchdog_on = False

    # -- commands
    def set_voltage(self, volts: float) -> None:
        self.state.setpoint = volts

    def set_slew(self, rate: float) -> None:
        self.slew = min(rate, self.spec.max_slew)

    def switch(self, on: bool) -> None:
        """Output relay: on starts from zero and slews up to the setpoint; off drops to zero."""
        self.output_on = on
        self.state.ramp = 0.0
        self.state.output = 0.0
        if on:
            self.tripped = False

    def trip(self) -> None:
        self.switch(False)
        self.tripped = True

    # -- dynamics
    def advance(self, dt: float) -> None:
        if self.output_on:
            self.state = step(self.state, dt, self.slew, self.spec.settling_time_constant)

    def peek(self, dt: float) -> float:
        """The output emf ``dt`` bay seconds ahead, without changing the state."""
        if not self.output_on:
            return 0.0
        return step(self.state.copy(), dt, self.slew, self.spec.settling_time_constant).output

    def settled_in(self) -> float:
        """Bay seconds until the ramp reaches the setpoint (0 when it has)."""
        if not self.output_on:
            return 0.0
        return abs(self.state.setpoint - self.state.ramp) / self.slew

    def emf(self, output: float | None = None) -> tuple[complex, ...]:
        level = self.state.output if output is None else output
        return tuple(level * p for p in self.shape)

    @property
    def output(self) -> float:
        return self.state.output if self.output_on else 0.0


def step(state: SourceState, dt: float, slew: float, tau: float) -> SourceState:
    """Advance ramp and lag by ``dt`` exactly (piecewise: ramping, then holding)."""
    s = state.copy()
    while dt > 0:
        gap = s.setpoint - s.ramp
        if gap != 0 and slew > 0:
            span = min(dt, abs(gap) / slew)
            rate = math.copysign(slew, gap)
            s.output = _lag_on_ramp(s.output, s.ramp, rate, tau, span)
            s.ramp = s.setpoint if span * slew >= abs(gap) else s.ramp + rate * span
            dt -= span
            continue
        s.output = s.ramp + (s.output - s.ramp) * (math.exp(-dt / tau) if tau > 0 else 0.0)
        dt = 0.0
    return s


def _lag_on_ramp(y0: float, r0: float, rate: float, tau: float, t: float) -> float:
    if tau <= 0:
        return r0 + rate * t
    return r0 + rate * t - rate * tau + (y0 - r0 + rate * tau) * math.exp(-t / tau)
