"""The power analyser: ranges, accuracy (% of reading + % of range), noise, overload, updates.

Each quantity's error is a fixed calibration error drawn once within the accuracy band (seeded,
so a scenario always gives the same instrument) plus Gaussian noise drawn once per update.
Readings change only at update instants (every ``update_interval`` bay seconds); between them a
query returns the values of the last update, as an averaging instrument does.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from harness.sim.scenario import AnalyserSpec, ErrorSpec
from harness.sim.scpi_tree import OVERLOAD, ScpiError
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
class _Calibration:
    gain: float       # relative error of reading
    offset: float     # error as a fraction of range


class Analyser:
    def __init__(self, spec: AnalyserSpec, rng: np.random.Generator):
        self.spec = spec
        self.rng = rng
        self.calibration = {
            (q, ch): self._draw_calibration(getattr(spec.accuracy, q))
            for q in QUANTITIES for ch in range(1, spec.channels + 1)
        }
        self.reset()

    def _draw_calibration(self, band: ErrorSpec) -> _Calibration:
        g, o = self.rng.uniform(-1.0, 1.0, 2)
        return _Calibration(g * band.reading / 100.0, o * band.range / 100.0)

    def reset(self) -> None:
        self.voltage_range = self.spec.voltage_ranges[-1]
        self.current_range = self.spec.current_ranges[-1]
        self.update_interval = self.spec.update_interval
        self._cache: tuple[int, tuple[ChannelValues, ...]] | None = None

    # -- settings
    def set_voltage_range(self, volts: float) -> None:
        self.voltage_range = _select(self.spec.voltage_ranges, volts, "V")
        self._cache = None

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
    def snapshot(self, index: int, op: OperatingPoint, freq: float) -> tuple[ChannelValues, ...]:
        """Channel 1 sees the fed winding; the others are not connected (offset and noise only)."""
        if self._cache is None or self._cache[0] != index:
            values = tuple(self._channel(ch, op if ch == 1 else None, freq)
                           for ch in range(1, self.spec.channels + 1))
            self._cache = (index, values)
        return self._cache[1]

    def _channel(self, ch: int, op: OperatingPoint | None, freq: float) -> ChannelValues:
        vt, ct = self.spec.vt_ratio, self.spec.ct_ratio  # the analyser sees the secondaries
        u, um, i, p = (op.u_rms / vt, op.u_mean / vt, op.i_rms / ct, op.power / (vt * ct)) if op else (0.0, 0.0, 0.0, 0.0)
        ranges = {"voltage": self.voltage_range, "current": self.current_range,
                  "power": self.voltage_range * self.current_range}
        read = {q: (lambda true, q=q: self._read(q, ch, true, ranges[q])) for q in QUANTITIES}
        signal = op is not None and u > 0.002 * self.voltage_range
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


def _select(ranges: tuple[float, ...], value: float, unit: str) -> float:
    """The smallest range that holds ``value`` (how range-selecting instruments round)."""
    if not value > 0:
        raise ScpiError(-222, f"range {value:g} {unit} must be positive")
    for r in ranges:
        if value <= r * (1 + 1e-9):
            return r
    raise ScpiError(-222, f"range {value:g} {unit} above the largest, {ranges[-1]:g} {unit}")
