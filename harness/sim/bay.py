"""The simulated test bay: source, transformer, wiring, instruments and faults on one clock.

Physics is advanced lazily: every command or query first brings the state to ``clock.now()``.
Between events the source follows its closed-form trajectory and the thermal nodes take exact
first-order steps (at most ``MAX_STEP`` bay seconds each, heating averaged over the step), so
any time scale gives the same physics. The analyser's readings are captured at its update
instants. One lock serialises the instruments' threads.
"""

from __future__ import annotations

import math
import threading
from typing import Iterable

import numpy as np

from harness.common.clock import Clock
from harness.common.errors import UsageError
from harness.sim.analyser import Analyser, ChannelValues, phase_angle
from harness.sim.faults import THREE_PHASE_ONLY, FaultSpec, FaultState, fault_spec
from harness.sim.meters import ResistanceMeter, Thermometer
from harness.sim.scenario import Scenario
from harness.sim.scpi_tree import OVERLOAD
from harness.sim.source import Source, step
from harness.sim import three_phase
from harness.sim.three_phase import BayFaults, ThreePhasePoint, ThreePhaseTransformer
from harness.sim.transformer import (
    FirstOrder, OperatingPoint, SourceImpedance, Transformer, Wiring, solve,
)

Point = OperatingPoint | ThreePhasePoint

MAX_STEP = 2.0                 # bay seconds per thermal step
SHORTED_TURN_MULTIPLE = 10.0   # no-load current with a shorted turn, times the healthy one
SHORTED_TURN_ANGLE = -math.pi / 4
LIVE_VOLTAGE = 1.0             # V at the terminals: above this the bay counts as live
TRIP_SEARCH_STEPS = 40


class BayConflict(Exception):
    """An action the bay refuses in its present state (e.g. rewiring while live)."""


class Bay:
    def __init__(self, scenario: Scenario, clock: Clock, faults: Iterable[str | FaultSpec] = ()):
        self.scenario = scenario
        self.clock = clock
        self.lock = threading.RLock()
        seeds = np.random.SeedSequence(scenario.seed).spawn(4)
        rngs = [np.random.default_rng(s) for s in seeds]
        spec = scenario.transformer
        self.three_phase = spec.phases == 3
        self.transformer = ThreePhaseTransformer(spec) if self.three_phase else Transformer(spec)
        self.source = Source(scenario.source, spec.frequency)
        self.source_impedance = SourceImpedance(scenario.source.output_resistance, scenario.source.output_reactance)
        self.analyser = Analyser(scenario.analyser, rngs[0])
        self.resistance_meter = ResistanceMeter(scenario.resistance_meter, rngs[1])
        self.thermometer = Thermometer(scenario.thermometer, rngs[2])
        self._readback_rng = rngs[3]
        ambient = scenario.bay.ambient_temperature
        self.winding = FirstOrder(spec.winding_thermal.heat_capacity, spec.winding_thermal.time_constant,
                                  ambient + scenario.bay.initial_winding_rise)
        self.oil = FirstOrder(spec.oil_thermal.heat_capacity, spec.oil_thermal.time_constant,
                              ambient + scenario.bay.initial_oil_rise)
        self.wiring = Wiring(scenario.bay.wiring.fed, scenario.bay.wiring.other)
        self.faults = self._fault_states(list(scenario.faults) + [fault_spec(f) for f in faults])
        self.tap = scenario.bay.tap
        self.tap_move: tuple[int, float] | None = None  # the drive's move under way: (tap it ends on, bay time)
        self._turns_key: tuple | None = None
        self.t = clock.now()
        self.energised_s = 0.0
        self.analyser_queries = 0
        self.last_source_command = self.t
        self._op_key: tuple | None = None
        self._op: Point = (ThreePhasePoint if self.three_phase else OperatingPoint).zero(self.source.orders)
        self._analyser_op: tuple[int, Point, float] = (-1, self._op, 0.0)
        self._update_faults()

    def _fault_states(self, specs: list[FaultSpec]) -> dict[str, FaultState]:
        if not self.three_phase:
            for spec in specs:
                if spec.name in THREE_PHASE_ONLY:
                    raise UsageError(f"fault '{spec.name}' needs a three-phase unit; "
                                     f"scenario '{self.scenario.name}' is single-phase")
        taps = self.scenario.transformer.taps
        for spec in specs:
            if spec.name == "wrong-tap" and (taps is None or not taps.steps[0] <= spec.tap <= taps.steps[1]):
                raise UsageError(f"fault 'wrong-tap' needs tap {spec.tap} on the unit; scenario "
                                 f"'{self.scenario.name}' has " + (f"taps {taps.steps[0]} to {taps.steps[1]}"
                                                                  if taps else "no tap changer"))
            if spec.name == "tap-changer-stuck" and taps is None:
                raise UsageError(f"fault 'tap-changer-stuck' needs a unit with taps; scenario "
                                 f"'{self.scenario.name}' has no tap changer")
        return {s.name: FaultState(s) for s in specs}

    # ------------------------------------------------------------------ faults
    def fault_active(self, name: str) -> bool:
        state = self.faults.get(name)
        return state is not None and state.active

    def _update_faults(self) -> None:
        for state in self.faults.values():
            state.update(self.t, self.energised_s, self.source.output, self.analyser_queries)

    def link_action(self, role: str, is_query: bool) -> str | None:
        """What a link fault does to this message of ``role``: silent, drop, garbage or None."""
        with self.lock:
            self.advance()
            for name, action in (("analyser-silent", "silent"), ("dropped-connection", "drop"),
                                 ("garbage-reply", "garbage")):
                state = self.faults.get(name)
                if state is None or state.spec.instrument != role or not state.active:
                    continue
                if action == "silent" or (is_query and state.consume()):
                    return action
            return None

    # ------------------------------------------------------------------ time and physics
    def advance(self) -> None:
        """Bring the physics to ``clock.now()``, capturing the analyser's last update on the way."""
        with self.lock:
            target = self.clock.now()
            interval = self.analyser.update_interval
            update_at = math.floor(target / interval) * interval
            if update_at > self.t:
                self._advance_to(update_at)
                self._capture_analyser(self.analyser.update_index(update_at + 1e-9 * interval))
            self._advance_to(target)

    def _advance_to(self, target: float) -> None:
        while self.t < target:
            end = min(target, self.t + MAX_STEP)
            due = self._watchdog_due()
            if due is not None and self.t <= due < end:
                end = max(due, self.t)
            if self.tap_move is not None and self.t <= self.tap_move[1] < end:
                end = max(self.tap_move[1], self.t)
            self._step(end - self.t)
            if due is not None and self.t >= due:
                self._watchdog_expire()
            self._end_tap_move()
        self._end_tap_move()

    def _end_tap_move(self) -> None:
        """The drive's move ends at its time: the tap is then in circuit (a stuck drive has not
        moved; it stays on the tap it was on)."""
        if self.tap_move is not None and self.t >= self.tap_move[1]:
            if not self.fault_active("tap-changer-stuck"):
                self.tap = self.tap_move[0]
            self.tap_move = None

    def _step(self, dt: float) -> None:
        before = self.operating_point()
        pre = self.source.state.copy()
        was_on = self.source.output_on and self.source.output > 0
        self.source.advance(dt)
        after = self.operating_point()
        if self._protection_trips(after):
            dt_trip = self._trip_time(pre, dt)
            self.source.state = step(pre, dt_trip, self.source.slew, self.source.spec.settling_time_constant)
            after = self.operating_point()
            self.source.trip()
        self._heat(dt, before, after)
        self.energised_s += dt if (was_on or self.source.output > 0) else 0.0
        self.t += dt
        self._update_faults()

    def _heat(self, dt: float, before: Point, after: Point) -> None:
        ambient = self.scenario.bay.ambient_temperature
        winding_loss = 0.5 * (before.winding_loss + after.winding_loss)
        total = winding_loss + 0.5 * (before.core_loss + after.core_loss)
        self.winding.step(dt, winding_loss, ambient)
        self.oil.step(dt, total, ambient)

    def _protection_trips(self, op: Point) -> bool:
        if self.fault_active("stuck-output") or not self.source.output_on:
            return False
        return op.i_rms > self._current_limit()

    def _current_limit(self) -> float:
        limit = self.source.spec.max_current
        return min(limit, self.source.protection_level) if self.source.protection_on else limit

    def _trip_time(self, pre, dt: float) -> float:
        """First instant in the step where the current passes the limit (monotone: bisection)."""
        lo, hi = 0.0, dt
        tau = self.source.spec.settling_time_constant
        for _ in range(TRIP_SEARCH_STEPS):
            mid = 0.5 * (lo + hi)
            level = step(pre, mid, self.source.slew, tau).output
            if self._solve(level).i_rms > self._current_limit():
                hi = mid
            else:
                lo = mid
        return hi

    def _watchdog_due(self) -> float | None:
        src = self.source
        if not (src.watchdog_on and src.output_on) or self.fault_active("stuck-output"):
            return None
        return self.last_source_command + src.watchdog_timeout

    def _watchdog_expire(self) -> None:
        self.source.set_voltage(0.0)
        self.source.switch(False)

    # ------------------------------------------------------------------ the circuit
    def effective_wiring(self) -> Wiring:
        if self.wiring.other == "short" and self.fault_active("missing-link"):
            return Wiring(self.wiring.fed, "open")
        return self.wiring

    def _fault_admittance(self) -> complex:
        if not self.fault_active("shorted-turn"):
            return 0j
        spec = self.scenario.transformer
        i0 = math.hypot(spec.core.magnetising_current / 100.0, spec.core.loss / spec.rated_power)
        return SHORTED_TURN_MULTIPLE * i0 * complex(math.cos(SHORTED_TURN_ANGLE), math.sin(SHORTED_TURN_ANGLE))

    def _phase_faults(self) -> BayFaults:
        """The active faults that act on one phase of a three-phase unit."""
        def phase(name: str) -> int | None:
            return self.faults[name].spec.phase - 1 if self.fault_active(name) else None
        shorted = phase("shorted-turn")
        return BayFaults(shorted, self._fault_admittance() if shorted is not None else 0j,
                         phase("open-link-phase"), phase("dead-source-phase"))

    def _solve(self, level: float) -> Point:
        self._apply_turns()
        if isinstance(self.transformer, ThreePhaseTransformer):
            faults = self._phase_faults()
            emf = three_phase.phase_emfs(self.source.emf(level), self.source.orders, faults.dead_source_phase)
            return three_phase.solve(self.transformer, self.effective_wiring(), emf, self.source.orders,
                                     self.source.frequency, self.winding.temperature, self.source_impedance, faults)
        return solve(self.transformer, self.effective_wiring(), self.source.emf(level), self.source.orders,
                     self.source.frequency, self.winding.temperature, self.source_impedance,
                     self._fault_admittance())

    def wired_tap(self) -> int:
        """The tap whose turns are in circuit: the position set, or the next one up for a tap the
        wrong-tap fault has wired to the wrong lead."""
        fault = self.faults.get("wrong-tap")
        return self.tap + 1 if fault is not None and fault.active and fault.spec.tap == self.tap else self.tap

    def _apply_turns(self) -> tuple:
        """Put the wired tap and the windings' connection into the model (when they changed)."""
        wrong = self.fault_active("wrong-vector-group")
        key = (self.wired_tap(), wrong)
        if key != self._turns_key:
            self.transformer.set_turns(key[0], -1.0 if wrong and not self.three_phase else 1.0)
            if isinstance(self.transformer, ThreePhaseTransformer):
                self.transformer.connect_for_another_clock(wrong)
            self._turns_key = key
        return key

    def operating_point(self) -> Point:
        """The steady state now (cached while nothing that matters has changed)."""
        level = self.source.output
        key = (level, self._apply_turns(), self.source.frequency, self.effective_wiring(), round(self.winding.temperature, 3),
               self._fault_admittance(), self._phase_faults() if self.three_phase else None)
        if key != self._op_key:
            self._op, self._op_key = self._solve(level), key
        return self._op

    def _capture_analyser(self, index: int) -> None:
        freq = self.source.frequency if self.source.output_on else 0.0
        self._analyser_op = (index, self.operating_point(), freq)

    # ------------------------------------------------------------------ instrument queries
    def analyser_snapshot(self) -> tuple[ChannelValues, ...]:
        with self.lock:
            self.advance()
            index = self.analyser.update_index(self.t)
            if self._analyser_op[0] != index:
                self._capture_analyser(index)
            _, op, freq = self._analyser_op
            if self.source.output_on:
                self.analyser_queries += 1
                self._update_faults()
            values = self.analyser.snapshot(index, op, freq)
            return self._overrange(values) if self._overrange_now() else values

    def analyser_phase(self, reference: int, channel: int) -> float:
        """The analyser's phase angle between two channels' voltages at its last update."""
        with self.lock:
            self.advance()
            index = self.analyser.update_index(self.t)
            if self._analyser_op[0] != index:
                self._capture_analyser(index)
            return phase_angle(self._analyser_op[1], self.analyser.spec, reference, channel)

    def _overrange_now(self) -> bool:
        return self.fault_active("overrange") and self.source.output_on

    @staticmethod
    def _overrange(values: tuple[ChannelValues, ...]) -> tuple[ChannelValues, ...]:
        first = values[0]
        hit = ChannelValues(first.u_rms, first.u_mean, OVERLOAD, OVERLOAD, first.freq)
        return (hit,) + values[1:]

    def source_readback(self) -> tuple[float, float]:
        """The source's own rms voltage and current at its terminals, with its noise."""
        with self.lock:
            self.advance()
            op = self.operating_point()
            sigma = self.source.spec.readback_noise / 100.0
            noise = self._readback_rng.normal(0.0, sigma, 2) if sigma else (0.0, 0.0)
            return op.u_rms * (1 + float(noise[0])), op.i_rms * (1 + float(noise[1]))

    def source_phase_readback(self) -> tuple[tuple[float, ...], tuple[float, ...]]:
        """Each phase's rms voltage (to the source's star point) and line current, with noise;
        one phase of each on a single-phase bay."""
        with self.lock:
            self.advance()
            op = self.operating_point()
            volts, amps = ((op.phase_voltages, op.phase_currents) if isinstance(op, ThreePhasePoint)
                           else ((op.u_rms,), (op.i_rms,)))
            sigma = self.source.spec.readback_noise / 100.0
            noise = self._readback_rng.normal(0.0, sigma, 2 * len(volts)) if sigma else [0.0] * (2 * len(volts))
            n = len(volts)
            return (tuple(v * (1 + float(e)) for v, e in zip(volts, noise[:n])),
                    tuple(i * (1 + float(e)) for i, e in zip(amps, noise[n:])))

    def is_live(self) -> bool:
        with self.lock:
            self.advance()
            return self.source.output_on or self.operating_point().u_rms > LIVE_VOLTAGE

    def winding_resistance(self, side: str, pair: int | None = None) -> float:
        """The meter's reading of the d.c. resistance of ``side`` at the present temperature;
        on a three-phase unit between the line terminals of ``pair`` (0: U-V, 1: V-W, 2: W-U)."""
        with self.lock:
            if self.is_live():
                raise BayConflict("the unit is energised; switch the output off to measure resistance")
            if isinstance(self.transformer, ThreePhaseTransformer):
                true = self.transformer.line_resistances(side, self.winding.temperature)[pair or 0]
            else:
                true = self.transformer.r_dc(side, self.winding.temperature)
            return self.resistance_meter.measure(side, true)

    def temperature(self, point: str) -> float:
        with self.lock:
            self.advance()
            true = {"ambient": self.scenario.bay.ambient_temperature, "oil": self.oil.temperature,
                    "winding": self.winding.temperature}[point]
            return self.thermometer.read(point, true)

    def bay_time(self) -> float:
        with self.lock:
            self.advance()
            return self.t

    # ------------------------------------------------------------------ commands
    def set_wiring(self, fed: str | None = None, other: str | None = None) -> None:
        """Move the leads or fit/remove the link; refused while the bay is live."""
        if fed not in (None, "hv", "lv") or other not in (None, "open", "short"):
            raise ValueError("fed must be 'hv' or 'lv' and other 'open' or 'short'")
        with self.lock:
            if self.is_live():
                raise BayConflict("the bay is live; switch the output off before changing connections")
            self.wiring = Wiring(fed or self.wiring.fed, other or self.wiring.other)

    def tap_range(self) -> tuple[int, int]:
        taps = self.scenario.transformer.taps
        if taps is None:
            raise ValueError("the unit has no tap changer")
        return taps.steps

    def _check_tap(self, tap: int) -> None:
        taps = self.scenario.transformer.taps
        if taps is None or not taps.steps[0] <= tap <= taps.steps[1]:
            span = f"{taps.steps[0]} to {taps.steps[1]}" if taps else "none: the unit has no tap changer"
            raise ValueError(f"tap {tap} is not a tap of the unit (taps {span})")

    def set_tap(self, tap: int) -> None:
        """Move the off-circuit tap changer by hand; refused while the bay is live, while the
        drive is moving, or off the range."""
        self._check_tap(tap)
        with self.lock:
            if self.is_live():
                raise BayConflict("the bay is live; switch the output off before moving the off-circuit tap changer")
            if self.tap_move is not None:
                raise BayConflict("the tap changer's drive is moving")
            self.tap = tap

    def drive_tap(self, tap: int) -> None:
        """Start the on-load drive towards ``tap`` (live or not): it takes ``tap_change_time``
        per step, then the tap is in circuit; a second move while one runs is refused."""
        self._check_tap(tap)
        with self.lock:
            self.advance()
            if self.tap_move is not None:
                raise BayConflict("the tap changer's drive is still moving")
            if tap != self.tap:
                self.tap_move = (tap, self.t + abs(tap - self.tap) * self.scenario.bay.tap_change_time)

    def tap_moving(self) -> bool:
        with self.lock:
            self.advance()
            return self.tap_move is not None

    def tap_position(self) -> int:
        with self.lock:
            self.advance()
            return self.tap

    def source_command(self, action: str, value: float | bool | None = None) -> None:
        """Apply one source command at ``now`` (the stuck-output fault swallows the unsafe ones)."""
        with self.lock:
            self.advance()
            self.last_source_command = self.t
            stuck = self.fault_active("stuck-output")
            if action == "voltage" and not (stuck and value == 0):
                self.source.set_voltage(float(value))
            elif action == "output" and not (stuck and not value):
                if bool(value) != self.source.output_on:
                    self.source.switch(bool(value))
            elif action == "frequency":
                self.source.frequency = float(value)
            elif action == "slew":
                self.source.set_slew(float(value))
            elif action == "reset" and not stuck:
                self.source.reset()
            elif action == "touch":
                pass
            self._update_faults()

    def configure_source(self, **settings: float | bool) -> None:
        """Protection and watchdog settings (no effect on the output by themselves)."""
        with self.lock:
            self.advance()
            self.last_source_command = self.t
            for name, value in settings.items():
                setattr(self.source, name, value)
