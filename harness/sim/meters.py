"""The d.c. resistance meter and the thermometer: a fixed calibration error plus noise."""

from __future__ import annotations

import numpy as np

from harness.sim.scenario import ResistanceMeterSpec, ThermometerSpec


class ResistanceMeter:
    def __init__(self, spec: ResistanceMeterSpec, rng: np.random.Generator):
        self.spec = spec
        self.rng = rng
        self.gain = {side: float(rng.uniform(-1, 1)) * spec.accuracy / 100.0 for side in ("hv", "lv")}
        self.last_side = "hv"

    def side(self, channel: int) -> str | None:
        return self.terminals(channel)[0]

    def terminals(self, channel: int) -> tuple[str | None, int | None]:
        """(winding, line-to-line pair 0..2 or None on a single-phase unit) of ``channel``."""
        for side, ch in self.spec.channels.items():
            if ch == channel:
                return side, None
            if isinstance(ch, tuple) and channel in ch:
                return side, ch.index(channel)
        return None, None

    def default_channel(self, side: str) -> int:
        ch = self.spec.channels[side]
        return ch if isinstance(ch, int) else ch[0]

    def measure(self, side: str, true_ohm: float) -> float:
        self.last_side = side
        noise = float(self.rng.normal(0.0, self.spec.noise / 100.0)) if self.spec.noise else 0.0
        return true_ohm * (1.0 + self.gain[side] + noise)

    def test_current(self) -> float:
        return self.spec.test_current[self.last_side]


class Thermometer:
    def __init__(self, spec: ThermometerSpec, rng: np.random.Generator):
        self.spec = spec
        self.rng = rng
        self.offset = {p: float(rng.uniform(-1, 1)) * spec.accuracy for p in ("ambient", "oil", "winding")}

    def point(self, channel: int) -> str | None:
        return next((p for p, ch in self.spec.channels.items() if ch == channel), None)

    def read(self, point: str, true_c: float) -> float:
        noise = float(self.rng.normal(0.0, self.spec.noise)) if self.spec.noise else 0.0
        return true_c + self.offset[point] + noise
