"""The state of one run and the reading loop every energising step goes through.

snapshot -> wiring ratios -> store -> limit checks -> progress. The sample that trips is kept
too; nothing reaches a controller that has not passed the supervisor.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Any, Callable

from drivers.errors import InstrumentReportedError, OverRange
from harness.common.clock import Clock
from harness.common.reading import SQRT3, Phase, Sample, combine
from harness.config.checks import EffectiveLimits, rated_current, rated_voltage, resolve_target
from harness.config.sequence import Sequence
from harness.config.station import Station
from harness.config.steps import Wiring
from harness.runner.bay import Bay
from harness.runner.operators import TerminalOperator
from harness.runner.seams import Display, Operator, RunStore
from harness.safety import unbalance, LimitTrip, ReadingFault, SafeOutcome, Supervisor, make_safe

# Host jitter does not scale with the simulated bay's clock: a reading counts as late only past
# this many real seconds as well as past the station's bay-time threshold. A simulated bay's
# replies come from this same busy host, so there only a stall as long as a stuck process's
# counts (the floor of the other guards); a real bay keeps the short floor.
LATE_FLOOR_REAL_S = 0.25
SIMULATED_LATE_FLOOR_REAL_S = 2.0
RANGE_HEADROOM = 1.3  # range chosen for 130 % of the reading: room for drift below the overload point
# The analyser inputs whose overload can stand for a reading beyond a limit (see Run.read).
_OVERLOADED = {"u_rms": "voltage", "u_mean": "voltage", "i_rms": "current"}
_UNIT = {"voltage": "V", "current": "A"}


STANDING_OUT = 1.5  # a line current this many times the others' mean is the phase a protection saw


def _standing_out(samples: list[Sample]) -> tuple[str | None, str]:
    """The phase whose line current stood far above the others in the last readings before the
    source switched itself off (a shorted turn on one limb, say), and a clause saying so; none
    when the currents were alike (the protection cannot then be put on one phase)."""
    if not samples or len(samples[0].phases) != 3:
        return None, ""
    last = max(samples, key=lambda s: max(ph.i_rms for ph in s.phases))
    currents = [ph.i_rms for ph in last.phases]
    top = max(range(3), key=lambda k: currents[k])
    others = (sum(currents) - currents[top]) / 2
    if others <= 0 or currents[top] < STANDING_OUT * others:
        return None, ""
    listed = ", ".join(f"{i:.4g}" for i in currents)
    return f"L{top + 1}", f"; the line currents before it were {listed} A: phase L{top + 1} stood out"


@dataclass
class MeasuredReading:
    """The averaged result of a measure step: what the record is built from."""
    test: str
    label: str
    step: int
    winding: str
    count: int
    mean: dict[str, float]
    std: dict[str, float]
    stable: bool
    winding_temperature: float | None
    target_pct: float | None = None
    ranges: tuple[float, float] | None = None
    """The analyser ranges requested for the reading (V, A at its inputs); it uses the smallest that holds them."""
    core_temperature: float | None = None
    """No-load readings: the oil temperature during the reading (else the last one read before),
    taken as the core temperature (IEEE corrects the no-load loss to 20 degC with it)."""
    phase_mean: tuple[dict[str, float], ...] = ()
    phase_std: tuple[dict[str, float], ...] = ()
    """Per phase (channel) of a three-phase reading: the same statistics as ``mean``/``std``."""

    @property
    def phases(self) -> int:
        return len(self.phase_mean) or 1

    def per_phase(self, quantity: str, statistic: str = "mean") -> float | list[float]:
        """One value (single-phase) or the three phases' values, as the record takes them."""
        table = self.phase_mean if statistic == "mean" else self.phase_std
        whole = self.mean if statistic == "mean" else self.std
        return [row[quantity] for row in table] if len(table) == 3 else whole[quantity]


@dataclass
class Run:
    run_id: str
    sequence: Sequence
    station: Station
    clock: Clock
    bay: Bay
    store: RunStore
    progress: Display
    operator: Operator = field(default_factory=TerminalOperator)
    supervisor: Supervisor = field(init=False)
    wiring: Wiring | None = None
    energised: bool = False
    setpoint: float = 0.0
    step_index: int = -1
    step_title: str = ""
    last_sample: Sample | None = None
    resistances: dict[str, tuple[float | list[float], float]] = field(default_factory=dict)
    oil_temperature: float | None = None  # the last read by a temperature step
    readings: list[MeasuredReading] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    gains: dict[str, float] = field(default_factory=dict)
    tap: int | None = None  # the tap changer's position once an operator set it (None: not yet known)
    ratio_readings: list[dict[str, Any]] = field(default_factory=list)
    """The ratio test per tap: tap, fed winding, HV and LV voltages and the LV lag (rad) per phase pair."""
    _next_temperature_t: float = 0.0
    _next_source_t: float = 0.0
    _ranges: tuple[float, float] = (0.0, 0.0)
    _refused_ranges: tuple[float, float] = (0.0, 0.0)
    update_interval: float = 0.2
    measure_averaging: float = 0.2

    def __post_init__(self) -> None:
        from harness.config.checks import station_limits
        limits = station_limits(self.station).tightened(self.sequence.limits)
        self.base_limits = limits
        self.supervisor = Supervisor(limits, self.station.readings, self.clock)
        if self.sequence.transformer.phases == 3:
            self.supervisor.setpoint_factor = SQRT3  # a three-phase source is set line-to-neutral
        # What every reading needs and a run does not change: looked up once, not per reading.
        m = self.station.measurement
        self._vt, self._ct = m.vt_ratio, m.ct_ratio
        self._late_floor = SIMULATED_LATE_FLOOR_REAL_S if self.station.simulated else LATE_FLOOR_REAL_S
        self._faults = [part.pending_fault for part in (self.store, self.progress) if hasattr(part, "pending_fault")]

    # -- faults of the run's own parts ------------------------------------------------------------
    def raise_pending(self) -> None:
        """A failure of the store or of the progress display, held where it happened (so that it
        never breaks the safe path), is raised here, at the run's next step forward."""
        for pending in self._faults:
            fault = pending()
            if fault is not None:
                fault.step = fault.step or self.step_title
                fault.time = fault.time if fault.time is not None else self.clock.now()
                raise fault

    # -- limits -----------------------------------------------------------------------------
    def use_limits(self, limits: EffectiveLimits, title: str) -> None:
        self.supervisor.limits = limits
        self.supervisor.step = title

    # -- events -----------------------------------------------------------------------------
    def event(self, kind: str, text: str, data: dict[str, Any] | None = None) -> None:
        self.store.add_event(self.run_id, self.clock.now(), kind, text, data)
        self.progress.event(kind, text)

    def warn(self, text: str) -> None:
        self.warnings.append(text)
        self.event("warning", text)

    # -- the source -------------------------------------------------------------------------
    def send_setpoint(self, volts: float) -> None:
        self.supervisor.check_setpoint(volts)
        self.bay.source.set_voltage(volts)
        self.setpoint = volts

    def energise(self) -> None:
        if self.energised:
            return
        self.send_setpoint(0.0)
        self.bay.source.set_output(True)
        self.energised = True
        self.supervisor.energised_since = self.clock.now()
        self.event("energised", "source output on at zero volts")

    # -- analyser ranges ----------------------------------------------------------------------
    def range_for_limits(self) -> None:
        """While ramping, ranges wide enough to read up to the limits (the supervisor trips there)."""
        m, limits = self.station.measurement, self.supervisor.limits
        self._set_ranges(limits.voltage / m.vt_ratio, limits.current / m.ct_ratio)

    def fit_ranges(self, sample: Sample, headroom: float = RANGE_HEADROOM) -> None:
        """Before a measure, the smallest ranges with headroom: % of range errors stay small."""
        m = self.station.measurement
        u = max(max(ph.u_rms, ph.u_mean) for ph in sample.phases)  # the highest phase must fit
        self._set_ranges(headroom * u / m.vt_ratio, headroom * max(ph.i_rms for ph in sample.phases) / m.ct_ratio)

    def use_averaging(self, seconds: float) -> None:
        """The analyser's update interval: short while ramping (the controller sees the source
        move), the instrument's own (longer, quieter) while measuring."""
        if seconds != self.update_interval:
            self.bay.analyser.set_averaging(seconds)
            self.update_interval = seconds

    @property
    def ranges(self) -> tuple[float, float] | None:
        """The analyser ranges last requested (V, A at its inputs), None before any."""
        return self._ranges if all(self._ranges) else None

    def _set_ranges(self, volts: float, amps: float) -> None:
        if (volts, amps) in (self._ranges, self._refused_ranges):
            return
        try:
            self.bay.analyser.set_ranges(voltage=volts, current=amps)
            self._ranges = (volts, amps)
        except InstrumentReportedError as exc:
            self.warn(f"analyser refused ranges for {volts:.4g} V / {amps:.4g} A ({exc.text}); ranges left as they were")
            self._refused_ranges = (volts, amps)  # asked once; the ranges in force are unchanged

    # -- readings ---------------------------------------------------------------------------
    def read(self, tag: str | None = None) -> Sample:
        self.raise_pending()
        t0 = self.clock.now()
        try:
            snap = self.bay.analyser.snapshot()
        except OverRange as exc:
            trip = self._beyond_limit(exc)
            if trip is None:
                raise
            raise trip from exc
        t1 = self.clock.now()
        vt, ct = self._vt, self._ct
        channels = snap.channels
        if len(channels) == 1:
            ch = channels[0]
            phases: tuple[Phase, ...] = (Phase(ch.u_rms * vt, ch.u_mean * vt, ch.i_rms * ct, ch.p * vt * ct),)
        else:
            phases = tuple(Phase(ch.u_rms * vt, ch.u_mean * vt, ch.i_rms * ct, ch.p * vt * ct) for ch in channels)
        freq = channels[0].freq
        age = t1 - t0 if self.clock.real(t1 - t0) > self._late_floor else 0.0
        first = -1
        add, run_id, index, setpoint = self.store.add_sample, self.run_id, self.step_index, self.setpoint
        for channel, ph in enumerate(phases, start=1):  # every channel kept, the one that trips too
            sid = add(run_id, index, t1, channel, ph.u_rms, ph.u_mean, ph.i_rms, ph.p, freq, setpoint, tag)
            first = sid if first < 0 else first
        sample = combine(first, t1, phases, freq, setpoint)
        before = self.last_sample
        self.supervisor.check_reading(sample, age)
        if len(phases) == 3:
            fault = unbalance(sample, self.supervisor.limits,
                              self.wiring is not None and self.wiring.other == "short", self.step_title)
            if fault is not None:
                raise fault
        self.last_sample = sample
        self._watch_temperature(t1)
        self._watch_source(t1, before)
        self.progress.sample(sample, self.supervisor.limits)
        return sample

    def _beyond_limit(self, exc: OverRange) -> LimitTrip | None:
        """An overload on a range that holds the step's limit, as the limit trip it proves.

        An input overloads only above its range (times the instrument's overload factor, never
        below 1), and the analyser picks a range no smaller than the one asked. While ramping the
        ranges are asked at the limits, so an overloaded voltage or current input there means the
        quantity is past its limit, however far the bay moved between two readings: the trip is
        the limit's, whatever the host's timing. On ranges fitted below the limits (a measure)
        an overload proves nothing about the limit and stays an instrument fault.
        """
        quantity = _OVERLOADED.get(exc.quantity.split(" ", 1)[0])
        if quantity is None or self.ranges is None:
            return None
        m, limits = self.station.measurement, self.supervisor.limits
        held = self._ranges[0] * m.vt_ratio if quantity == "voltage" else self._ranges[1] * m.ct_ratio
        limit = getattr(limits, quantity)
        if held < limit * (1 - 1e-9):   # asked as limit / ratio: allow the rounding of that division
            return None
        channel = re.search(r"of channel (\d+)", exc.quantity)
        phase = f"L{channel.group(1)}" if channel and self.sequence.transformer.phases == 3 else None
        on = f" on phase {phase}" if phase else ""
        return LimitTrip(f"{quantity} limit{on}: the analyser's {quantity} input is over range, on a range "
                         f"that holds the limit of {limit:.4g} {_UNIT[quantity]}",
                         quantity, None, limit, self.supervisor.step, self.clock.now(), phase)

    def _watch_temperature(self, t: float) -> None:
        if not self.energised or t < self._next_temperature_t:
            return
        self._next_temperature_t = t + self.station.readings.temperature_interval
        value = self.read_temperature("winding")
        if value is not None:
            self.supervisor.check_temperature(value)

    def _watch_source(self, t: float, before: Sample | None) -> None:
        """Read the output state back now and then: it feeds the source's watchdog, and an output
        that turned itself off (its protection or watchdog) is a fault, not a reading."""
        if not self.energised or t < self._next_source_t:
            return
        self._next_source_t = t + self.station.readings.source_check_interval
        if not self.bay.source.output_is_on():
            phase, seen = _standing_out([s for s in (before, self.last_sample) if s is not None])  # last: this one
            raise ReadingFault("the source output turned off by itself (its protection or watchdog)" + seen,
                               step=self.step_title, time=t, phase=phase)

    def read_temperature(self, name: str) -> float | None:
        thermometer = self.bay.thermometer
        spec = self.station.instruments.thermometer
        channel = spec.channels.get(name) if spec is not None else None
        if thermometer is None or not isinstance(channel, int):
            return None
        value = thermometer.read(channel)
        if not math.isfinite(value):
            raise ReadingFault(f"thermometer channel '{name}' is not a number", step=self.step_title)
        return value

    def winding_temperature(self) -> float | None:
        """Best available estimate of the mean winding temperature."""
        for name in ("winding", "oil", "ambient"):
            value = self.read_temperature(name)
            if value is not None:
                return value
        return None

    # -- wiring and targets -------------------------------------------------------------------
    @property
    def fed(self) -> str:
        if self.wiring is None:
            raise ReadingFault("no wiring declared before an energising step", step=self.step_title)
        return self.wiring.fed

    def target_value(self, step: Any, text: str) -> float:
        return resolve_target(self.sequence, step, text, self.fed)

    def rated(self, quantity: str) -> float:
        winding = self.fed
        return rated_voltage(self.sequence, winding) if quantity == "voltage" else rated_current(self.sequence, winding)

    # -- safe state -----------------------------------------------------------------------------
    def make_safe(self) -> SafeOutcome:
        self.store.flush()
        outcome = make_safe(self.bay.source, self._probes(), self.station.safe_state, self.clock)
        self.setpoint = 0.0
        if outcome.confirmed:
            self.energised = False
            self.supervisor.energised_since = None
        return outcome

    def _probes(self) -> list[tuple[str, Callable[[], tuple[float, float]]]]:
        m = self.station.measurement

        def analyser() -> tuple[float, float]:  # the highest phase: every one must be dead
            channels = self.bay.analyser.snapshot().channels
            return (max(max(ch.u_rms, ch.u_mean) for ch in channels) * m.vt_ratio,
                    max(ch.i_rms for ch in channels) * m.ct_ratio)

        def source() -> tuple[float, float]:
            u = self.bay.source.measured_voltage()
            i = self.bay.source.measured_current()
            if u is None:
                raise ReadingFault("the source has no voltage readback")
            return u, i if i is not None else 0.0

        return [("power analyser", analyser), ("source readback", source)]
