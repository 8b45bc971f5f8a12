"""Cross-checks of a sequence against its station, before anything is energised.

Each problem is reported at the place in the sequence file that causes it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Iterator

from harness.calc.phases import rated_current as rated_line_current
from harness.common.errors import InputError, InputErrors
from harness.common.yamlio import LoadedYaml
from harness.config.sequence import Sequence
from harness.config.station import Limits, Station
from harness.config.steps import Measure, Prompt, Ramp, Ratio, Repeat, Resistance, Sweep, TargetStep, Wiring
from harness.config.reach import current_per_volt, fixed_increment_volts, magnetising_current, ramp_reach
from harness.config.targets import parse_target

_LIMIT_UNITS = {"voltage": "V", "current": "A", "power": "W", "energised_time": "s", "winding_temperature": "degC"}


@dataclass(frozen=True)
class EffectiveLimits:
    """The tightest of station, sequence and step: what the supervisor enforces."""
    voltage: float
    current: float
    power: float
    energised_time: float
    winding_temperature: float

    def tightened(self, limits: Limits) -> "EffectiveLimits":
        values = {k: min(getattr(self, k), v) for k, v in _given(limits)}
        return EffectiveLimits(**{**self.__dict__, **values})


def _given(limits: Limits) -> Iterator[tuple[str, float]]:
    for key in _LIMIT_UNITS:
        value = getattr(limits, key)
        if value is not None:
            yield key, value


def station_limits(station: Station) -> EffectiveLimits:
    s = station.limits
    return EffectiveLimits(s.voltage, s.current, s.power, s.energised_time, s.winding_temperature)


def rated_voltage(sequence: Sequence, winding: str) -> float:
    return getattr(sequence.transformer, winding).rated_voltage


def rated_current(sequence: Sequence, winding: str) -> float:
    t = sequence.transformer
    return rated_line_current(t.rated_power, rated_voltage(sequence, winding), t.phases)


def resolve_target(sequence: Sequence, step: TargetStep | Sweep, text: str, winding: str) -> float:
    """A target as an absolute primary value in V or A."""
    quantity = step.quantity
    rated = rated_voltage(sequence, winding) if quantity == "voltage" else rated_current(sequence, winding)
    return parse_target(text, "V" if quantity == "voltage" else "A").resolve(rated)


class _Checker:
    def __init__(self, sequence: Sequence, station: Station, loaded: LoadedYaml, load_profile: Any = None):
        self.sequence, self.station, self.loaded = sequence, station, loaded
        self.load_profile = load_profile
        self.errors: list[InputError] = []

    def fail(self, path: tuple[Any, ...], message: str) -> None:
        self.errors.append(self.loaded.error(path, message))

    def limits_inside(self, limits: Limits, outer: EffectiveLimits, path: tuple[Any, ...], whose: str) -> None:
        for key, value in _given(limits):
            bound = getattr(outer, key)
            if value > bound:
                unit = _LIMIT_UNITS[key]
                self.fail(path + (key,), f"{key} limit {value:g} {unit} is above the {whose} limit of {bound:g} {unit}; "
                                         "a sequence can only tighten limits")

    def run(self) -> list[InputError]:
        seq = self.sequence
        outer = station_limits(self.station)
        self.limits_inside(seq.limits, outer, ("limits",), "station's hard")
        self.walk(seq.steps, ("steps",), outer.tightened(seq.limits), None)
        return self.errors

    def walk(self, steps: list[Any], path: tuple[Any, ...], limits: EffectiveLimits, wiring: Wiring | None) -> Wiring | None:
        for index, step in enumerate(steps):
            here = path + (index,)
            self.limits_inside(step.limits, limits, here + ("limits",), "sequence's (or station's)")
            step_limits = limits.tightened(step.limits)
            if isinstance(step, Prompt) and step.wiring is not None:
                wiring = step.wiring
            elif isinstance(step, Repeat):
                wiring = self.walk(step.steps, here + ("steps",), step_limits, wiring)
            elif isinstance(step, (Ramp, Sweep, Ratio)):
                self.targets(step, here, step_limits, wiring)
                if isinstance(step, Ratio):
                    self.ratio_setup(step, here, wiring)
            elif isinstance(step, Measure):
                self.measure_wiring(step, here, wiring)
            elif isinstance(step, Resistance):
                self.resistance_channels(step, here)
        return wiring

    def resistance_channels(self, step: Resistance, path: tuple[Any, ...]) -> None:
        """Each winding needs one meter channel per line-to-line pair a phase count asks for."""
        meter = self.station.instruments.resistance_meter
        phases = self.sequence.transformer.phases
        for i, winding in enumerate(step.windings):
            given = meter.channels.get(winding) if meter is not None else None
            count = 0 if given is None else 1 if isinstance(given, int) else len(given)
            if count != phases:
                self.fail(path + ("windings", i), f"the station's resistance meter has {count} channel(s) for the "
                                                  f"{winding} winding; a {phases}-phase unit needs {phases}")

    def targets(self, step: Ramp | Sweep | Ratio, path: tuple[Any, ...], limits: EffectiveLimits, wiring: Wiring | None) -> None:
        if wiring is None:
            self.fail(path, f"{step.kind} before any prompt declares the wiring (which winding is fed)")
            return
        texts = step.targets if isinstance(step, Sweep) else [step.target]
        for i, text in enumerate(texts):
            where = path + (step.quantity,) + ((i,) if isinstance(step, Sweep) else ())
            named = parse_target(text, "V" if step.quantity == "voltage" else "A").winding
            if step.quantity == "voltage" and named not in (None, wiring.fed):
                self.fail(where, f"a voltage target of the {named.upper()} winding while the {wiring.fed.upper()} "
                                 "winding is fed: the source sets the fed winding's voltage")
                continue
            value = resolve_target(self.sequence, step, text, wiring.fed)
            self.reachable(step.quantity, value, where, limits, wiring)
            method = step.method if isinstance(step, Ramp) else "learned"
            self.inside_limit(step.quantity, value, step.tolerance, method, where, limits, wiring)
            if step.quantity == "voltage" and wiring.other == "open":
                self.magnetising_inside(value, step.tolerance, method, where, limits, wiring)

    def reachable(self, quantity: str, value: float, path: tuple[Any, ...], limits: EffectiveLimits, wiring: Wiring) -> None:
        if quantity == "current":
            needed = self.expected_voltage(value, wiring.fed)
            if needed is not None and needed > limits.voltage:
                self.fail(path, f"target {value:g} A needs about {needed:g} V at the guaranteed impedance, "
                                f"above the voltage limit of {limits.voltage:g} V")
        if quantity == "voltage" and wiring.other == "short":
            self.fail(path, "a voltage target with the other winding shorted: that is a load-loss test, ramp on current")

    def increment_reach(self, quantity: str, wiring: Wiring) -> float:
        """What one setpoint increment of the fixed-increment method adds to the ramped quantity."""
        volts = fixed_increment_volts(self.station.limits.slew)
        if quantity == "voltage":
            return volts
        fed = wiring.fed
        return volts * current_per_volt(rated_voltage(self.sequence, fed), rated_current(self.sequence, fed),
                                        self.guaranteed("impedance"))

    def inside_limit(self, quantity: str, value: float, tolerance: float, method: str, path: tuple[Any, ...],
                     limits: EffectiveLimits, wiring: Wiring) -> None:
        """The highest reading the ramp may take (band top plus the method's overshoot) strictly
        below the step's effective limit of that quantity."""
        limit, unit = getattr(limits, quantity), _LIMIT_UNITS[quantity]
        extra = self.increment_reach(quantity, wiring) if method == "fixed-increment" else 0.0
        reach = ramp_reach(value, tolerance, method, extra)
        if reach < limit:
            return
        overshoot = f" plus one {extra:.3g} {unit} increment of the fixed-increment method" if extra else ""
        highest = (limit - extra) / (1 + tolerance / 100)
        advice = (f"lower the target or the tolerance to leave at least {reach - value:.3g} {unit} between target "
                  f"and limit (at ± {tolerance:g} % the target must stay below {highest:.4g} {unit})"
                  if highest > 0 else "use the learned method")
        self.fail(path, f"target {value:.4g} {unit} ± {tolerance:g} %{overshoot} reaches {reach:.4g} {unit}, "
                        f"not below the step's {quantity} limit of {limit:g} {unit}; {advice}")

    def magnetising_inside(self, value: float, tolerance: float, method: str, path: tuple[Any, ...],
                           limits: EffectiveLimits, wiring: Wiring) -> None:
        """A no-load ramp's magnetising current, predicted from the guaranteed no-load current,
        strictly below the step's current limit."""
        i0_pct = self.guaranteed("no_load_current")
        if i0_pct is None:
            return
        fed = wiring.fed
        u_rated, i_rated = rated_voltage(self.sequence, fed), rated_current(self.sequence, fed)
        extra = self.increment_reach("voltage", wiring) if method == "fixed-increment" else 0.0
        pu = ramp_reach(value, tolerance, method, extra) / u_rated
        predicted = magnetising_current(i0_pct, i_rated, pu)
        if predicted < limits.current:
            return
        self.fail(path, f"a no-load ramp to {value:.4g} V ({100 * value / u_rated:.0f} % of rated, up to {100 * pu:.1f} % "
                        f"with its tolerance) is predicted to draw about {predicted:.3g} A (guaranteed no-load current "
                        f"{i0_pct:g} % of {i_rated:.4g} A, in proportion to the voltage and doubled for every 10 % above "
                        f"rated), not below the step's current limit of {limits.current:g} A; lower the target or give "
                        "the step a current limit that fits (within the sequence's and station's)")

    def guaranteed(self, name: str) -> float | None:
        g = self.sequence.guarantees
        return getattr(g, name, None) if g is not None else None

    def ratio_setup(self, step: Ratio, path: tuple[Any, ...], wiring: Wiring | None) -> None:
        """The other winding open, the analyser's open-winding channels (one per phase) and taps
        the nameplate has."""
        if wiring is not None and wiring.other != "open":
            self.fail(path, "a ratio step needs the other winding open; declare it in a prompt's wiring before")
        phases = self.sequence.transformer.phases
        given = self.station.instruments.analyser.channels.get(OPEN_WINDING)
        count = 0 if given is None else 1 if isinstance(given, int) else len(given)
        if count != phases:
            self.fail(path, f"the station's analyser has {count} channel(s) named '{OPEN_WINDING}' (the other "
                            f"winding's voltage); a {phases}-phase unit needs {phases}")
        missing = self.ratio_commands_missing()
        if missing:
            self.fail(path, f"the analyser's command profile '{self.station.instruments.analyser.profile}' has no "
                            f"{', '.join(missing)}: a ratio step reads the open winding's voltages and phase angles")
        taps = self.sequence.transformer.taps
        known = taps.positions() if taps is not None else (0,)
        for i, tap in enumerate(step.taps if isinstance(step.taps, list) else ()):
            if tap not in known:
                self.fail(path + ("taps", i), f"tap {tap} is not on the nameplate (taps {known[0]} to {known[-1]})")
        self.changer_in_station()

    def changer_in_station(self) -> None:
        """An on-load tap changer is moved by the station's drive between readings; without one
        the ratio step could only ask for moves at prompts, which an on-load unit does not need
        and the sequence did not ask for. Said once, at the nameplate's ``changer``."""
        taps = self.sequence.transformer.taps
        if taps is None or taps.changer != "on-load" or self.station.instruments.tap_changer is not None:
            return
        path = ("transformer", "taps", "changer")
        message = ("changer: on-load needs the station's instruments.tap_changer (the drive that moves the "
                   "taps between readings); this station has none: name it there, or declare the unit's "
                   "changer off-circuit to move the taps at operator prompts")
        if not any(e.message == message for e in self.errors):
            self.fail(path, message)

    def ratio_commands_missing(self) -> list[str]:
        """The analyser operations a ratio step needs that its profile lacks (none checked without
        a profile loader; a profile that does not load is the station check's to report)."""
        if self.load_profile is None:
            return []
        try:
            commands = self.load_profile(self.station.instruments.analyser.profile, "power_analyser").commands
        except Exception:  # noqa: BLE001 - reported by the station check, at the station's line
            return []
        return [op for op in RATIO_OPERATIONS if getattr(commands, op, None) is None]

    def expected_voltage(self, current: float, winding: str) -> float | None:
        impedance = self.guaranteed("impedance")
        if impedance is None:
            return None
        return impedance / 100 * rated_voltage(self.sequence, winding) * current / rated_current(self.sequence, winding)

    def measure_wiring(self, step: Measure, path: tuple[Any, ...], wiring: Wiring | None) -> None:
        wanted = {"no-load": "open", "load-loss": "short"}.get(step.test)
        if wanted and (wiring is None or wiring.other != wanted):
            self.fail(path + ("test",), f"a {step.test} measure needs the other winding {wanted}; "
                                        "declare it in a prompt's wiring before")


OPEN_WINDING = "open_winding"
RATIO_OPERATIONS = ("set_channel_voltage_range", "voltages", "phase_angle")


def check(sequence: Sequence, station: Station, loaded: LoadedYaml, load_profile: Any = None) -> None:
    """Raise :class:`InputErrors` listing every problem, or return when the pair is sound.
    ``load_profile`` (``(name, kind) -> profile``, the drivers' loader) lets the check see what the
    instruments' command profiles offer."""
    errors = _Checker(sequence, station, loaded, load_profile).run()
    if errors:
        raise InputErrors(errors)
