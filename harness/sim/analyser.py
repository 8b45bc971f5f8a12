"""The power analyser: ranges, accuracy (% of reading + % of range), noise, overload, updates.

Each quantity's error is a fixed calibration error drawn once within the accuracy band (seeded,
so a scenario always gives the same instrument) plus Gaussian noise drawn once per update.
Readings change only at update instants (every ``update_interval`` bay seconds); between them a
query returns the values of the last update, as an averaging instrument does.

What each channel's measuring element sees (``elements``): on a single-phase unit channel 1
sees the fed winding and the others nothing. On a three-phase unit the three channels sit on the
fed winding's line terminals. Three-wattmeter connection (the default): element k takes line
current k and the voltage of terminal k to the analyser's artificial star point (the centroid
of the three terminal voltages), so P1 + P2 + P3 is the total power of a three-wire circuit;
channel k reports the line-to-line voltage U12, U23, U31, as the analyser computes it from its
sampled phase voltages. Two-wattmeter connection: element 1 takes U13 and I1, element 2 U23 and
I2 (their sum is the total power, and one reads negative below a power factor of 0.5 on a
balanced load, common knowledge of the two-wattmeter method); channel 3 reports U12, the
magnitude of I3 = -(I1 + I2) and no power.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass

import numpy as np

from harness.sim.scenario import AnalyserSpec, ErrorSpec
from harness.sim.scpi_tree import OVERLOAD, ScpiError
from harness.sim import waveform
from harness.sim.three_phase import ThreePhasePoint
from harness.sim.transformer import OperatingPoint

QUANTITIES = ("voltage", "current", "power")


@dataclass(frozen=True)
class ChannelValues:
    u_rms: float
    u_mean: float
    i_rms: float
    p: float
    freq: float


@dataclass(frozen=True)
class Element:
    """True values at one channel's inputs, ahead of any instrument transformer; ``u_phasor`` the
    fundamental of the voltage it shows (its phase angle against another channel's)."""

    u_rms: float
    u_mean: float
    i_rms: float
    p: float
    u_phasor: complex = 0j


def elements(op: OperatingPoint | ThreePhasePoint, connection: str, channels: int,
             open_winding: tuple[int, ...] = ()) -> tuple[Element | None, ...]:
    """What each channel's element sees for the operating point ``op`` (None: not connected);
    the ``open_winding`` channels see the other winding's voltage (line-to-line for three-phase)."""
    if isinstance(op, ThreePhasePoint):
        seen = _two_wattmeter(op) if connection == "two-wattmeter" else _three_wattmeter(op)
        other = tuple(_voltage_only(op.orders, tuple(a - b for a, b in zip(op.other_terminal[k],
                                                                         op.other_terminal[(k + 1) % 3])))
                      for k in range(3))
    else:
        seen = (Element(op.u_rms, op.u_mean, op.i_rms, op.power, _fundamental(op.orders, op.voltage)),)
        other = (_voltage_only(op.orders, op.other_voltage or tuple(0j for _ in op.orders)),)
    found: list[Element | None] = list(seen) + [None] * (channels - len(seen))
    for ch, element in zip(open_winding, other):
        found[ch - 1] = element
    return tuple(found)


def _fundamental(orders: tuple[int, ...], wave: tuple[complex, ...]) -> complex:
    return wave[orders.index(1)] if 1 in orders else 0j


def _voltage_only(orders: tuple[int, ...], u: tuple[complex, ...]) -> Element:
    """A voltage input with no current: the open winding's voltage in a ratio test."""
    return Element(waveform.rms(u), waveform.mean_rectified_scaled(orders, u), 0.0, 0.0, _fundamental(orders, u))


def _element(op: ThreePhasePoint, u_shown: tuple[complex, ...], u_element: tuple[complex, ...],
             i: tuple[complex, ...], metered: bool = True) -> Element:
    p = sum((u * c.conjugate()).real for u, c in zip(u_element, i)) if metered else 0.0
    return Element(waveform.rms(u_shown), waveform.mean_rectified_scaled(op.orders, u_shown), waveform.rms(i), p,
                   _fundamental(op.orders, u_shown))


def _three_wattmeter(op: ThreePhasePoint) -> tuple[Element, ...]:
    return tuple(_element(op, op.line_to_line(k, (k + 1) % 3), op.to_centroid(k), op.current[k]) for k in range(3))


def _two_wattmeter(op: ThreePhasePoint) -> tuple[Element, ...]:
    i3 = tuple(-(a + b) for a, b in zip(op.current[0], op.current[1]))
    return (_element(op, op.line_to_line(0, 2), op.line_to_line(0, 2), op.current[0]),
            _element(op, op.line_to_line(1, 2), op.line_to_line(1, 2), op.current[1]),
            _element(op, op.line_to_line(0, 1), op.line_to_line(0, 1), i3, metered=False))


@dataclass(frozen=True)
class _Calibration:
    gain: float       # relative error of reading
    offset: float     # error as a fraction of range


class Analyser:
    def __init__(self, spec: AnalyserSpec, rng: np.random.Generator):
        self.spec = spec
        self.rng = rng
        # Channels past the third draw after the first three's: a scenario that adds channels
        # (the open winding's) keeps the calibration of the ones it had.
        first = min(spec.channels, 3)
        self.calibration = {(q, ch): self._draw_calibration(getattr(spec.accuracy, q))
                            for chs in (range(1, first + 1), range(first + 1, spec.channels + 1))
                            for q in QUANTITIES for ch in chs}
        self.reset()

    def _draw_calibration(self, band: ErrorSpec) -> _Calibration:
        g, o = self.rng.uniform(-1.0, 1.0, 2)
        return _Calibration(g * band.reading / 100.0, o * band.range / 100.0)

    def reset(self) -> None:
        self.voltage_range = self.spec.voltage_ranges[-1]
        self.current_range = self.spec.current_ranges[-1]
        self.channel_voltage_range: dict[int, float] = {}
        self.update_interval = self.spec.update_interval
        self._cache: tuple[int, tuple[ChannelValues, ...]] | None = None

    # -- settings
    def set_voltage_range(self, volts: float, channels: list[int] | None = None) -> None:
        """Every channel's voltage range, or (a channel list) only those channels' ranges."""
        chosen = _select(self.spec.voltage_ranges, volts, "V")
        if channels is None:
            self.voltage_range = chosen
            self.channel_voltage_range.clear()
        else:
            self.channel_voltage_range.update({ch: chosen for ch in channels})
        self._cache = None

    def voltage_range_of(self, ch: int) -> float:
        return self.channel_voltage_range.get(ch, self.voltage_range)

    def set_current_range(self, amps: float) -> None:
        self.current_range = _select(self.spec.current_ranges, amps, "A")
        self._cache = None

    def set_update_interval(self, seconds: float) -> None:
        if not 0.01 <= seconds <= 60.0:
            raise ScpiError(-222, f"averaging time {seconds:g} s outside 0.01..60 s")
        self.update_interval = seconds
        self._cache = None

    def update_index(self, now: float) -> int:
        return int(now // self.update_interval)

    # -- readings
    def snapshot(self, index: int, op: OperatingPoint | ThreePhasePoint, freq: float) -> tuple[ChannelValues, ...]:
        """Each channel from its element (``elements``); one not connected reads offset and noise."""
        if self._cache is None or self._cache[0] != index:
            seen = elements(op, self.spec.connection, self.spec.channels, self.spec.open_winding)
            values = tuple(self._channel(ch, seen[ch - 1], freq) for ch in range(1, self.spec.channels + 1))
            self._cache = (index, values)
        return self._cache[1]

    def _channel(self, ch: int, op: Element | None, freq: float) -> ChannelValues:
        vt, ct = self.spec.vt_ratio, self.spec.ct_ratio  # the analyser sees the secondaries
        u, um, i, p = (op.u_rms / vt, op.u_mean / vt, op.i_rms / ct, op.p / (vt * ct)) if op else (0.0, 0.0, 0.0, 0.0)
        u_range = self.voltage_range_of(ch)
        ranges = {"voltage": u_range, "current": self.current_range, "power": u_range * self.current_range}
        read = {q: (lambda true, q=q: self._read(q, ch, true, ranges[q])) for q in QUANTITIES}
        signal = op is not None and u > 0.002 * u_range
        return ChannelValues(read["voltage"](u), read["voltage"](um), read["current"](i),
                             read["power"](p), freq if signal else 0.0)

    def _read(self, quantity: str, ch: int, true: float, range_: float) -> float:
        if abs(true) > self.spec.overload_factor * range_:
            return OVERLOAD
        cal = self.calibration[(quantity, ch)]
        band = getattr(self.spec.noise, quantity)
        sigma = abs(true) * band.reading / 100.0 + range_ * band.range / 100.0
        noise = float(self.rng.normal(0.0, sigma)) if sigma > 0 else 0.0
        return float(true * (1.0 + cal.gain) + cal.offset * range_ + noise)


def phase_angle(op: OperatingPoint | ThreePhasePoint, spec: AnalyserSpec, reference: int, channel: int) -> float:
    """Degrees by which ``channel``'s voltage fundamental leads ``reference``'s, in (-180, 180];
    the simulated analyser has no phase error. A channel without signal is an execution error."""
    seen = elements(op, spec.connection, spec.channels, spec.open_winding)
    a, b = seen[reference - 1], seen[channel - 1]
    if a is None or b is None or abs(a.u_phasor) < 1e-9 or abs(b.u_phasor) < 1e-9:
        raise ScpiError(-200, "no voltage on a channel of the phase measurement")
    angle = math.degrees(cmath.phase(b.u_phasor / a.u_phasor))
    return 180.0 if angle <= -180.0 else angle


def _select(ranges: tuple[float, ...], value: float, unit: str) -> float:
    """The smallest range that holds ``value`` (how range-selecting instruments round)."""
    if not value > 0:
        raise ScpiError(-222, f"range {value:g} {unit} must be positive")
    for r in ranges:
        if value <= r * (1 + 1e-9):
            return r
    raise ScpiError(-222, f"range {value:g} {unit} above the largest, {ranges[-1]:g} {unit}")
