"""Ramp the source until a *measured* quantity reaches its target, without overshoot.

The controller learns the unit's gain from the readings (measured quantity per applied volt)
and commands the setpoint that the gain predicts; the source slews there at the bay's
maximum rate. Close to the target it trims on the settled reading. For the no-load test the
measured quantity is the mean-value voltage, as the test codes set it.

Safe on any unit: a current ramp's first setpoint assumes the lowest plausible impedance
(``harness.config.reach``), so it stays below the target whatever the unit; from then on the
setpoint follows the gain measured on this unit. A voltage ramp stops before its magnetising
current reaches the step's current limit. A ramp that starts energised (a sweep's next point, a
ramp down) starts from the live reading.
"""

from __future__ import annotations

import math
from collections import deque
from dataclasses import dataclass

from harness.config.reach import (
    FIRST_SETPOINT_SHARE,
    FIXED_INCREMENT_S,
    band_top,
    current_per_volt,
    fixed_increment_volts,
)
from harness.config.steps import Ramp
from harness.runner.context import Run, Sample
from harness.runner.steps import register
from harness.runner.steps.diagnosis import excess_magnetising, open_circuit
from harness.runner.steps.source_tail import SettlingTail
from harness.safety import LimitTrip, Trip, unbalance

RAMP_FLOOR_REAL_S = 10.0
RAMP_AVERAGING_S = 0.05     # analyser update interval while ramping (bay seconds)
SETTLED_READINGS = 3        # distinct readings within half the tolerance band count as settled ...
SETTLED_WINDOW_FACTOR = 2   # ... over at least this many of the analyser's measuring intervals
K_RANGE = (0.8, 1.25)       # plausible applied/set ratios; outside, the source is still moving
LEARN_FROM = 0.05          # learn the gain once the applied voltage passes 5 % of the goal
FIRST_VOLTAGE_SHARE = 0.95  # a voltage ramp's first setpoint before its gain is known: room for a
#                             mean-value voltage a few % above the rms one (a flat-topped supply)
GAIN_READINGS = 5           # readings the gain is fitted over
NOISE_SHARE = 0.25          # a wanted move below this share of the band is taken for reading noise
#                             (a low test voltage on a low-impedance unit reads noisily on its range)
GUARD_STEPS = 2             # voltage steps like the last one looked ahead: the next reading may come late
GUARD_MIN_RISE = 0.002      # readings closer than this in voltage give no usable exponent (noise)
# A current below this share of the step's limit sits at the noise floor of a range opened to
# that limit (a ratio test at a few % of rated voltage draws milliamps): the ratio of two such
# readings says nothing about the exponent, and the limit is far off (the supervisor still checks
# every reading).
GUARD_FLOOR_SHARE = 0.01


@dataclass
class RampResult:
    reached: float
    seconds: float
    start: float
    """The first reading: below the target for a ramp up, above it for a ramp down."""
    furthest: float
    """The reading furthest along the direction of travel: the highest going up, the lowest going down."""

    def overshoot(self, target: float, tolerance_pct: float) -> bool:
        """Past the band in the direction of travel (never the starting side of a ramp down)."""
        if not math.isfinite(self.furthest):
            return False
        if self.start <= target:
            return self.furthest > band_top(target, tolerance_pct)
        return self.furthest < target * (1 - tolerance_pct / 100)


def measured(sample: Sample, quantity: str) -> float:
    return sample.u_mean if quantity == "voltage" else sample.i_rms


def first_gain(run: Run, quantity: str) -> float:
    """Measured quantity per volt of setpoint before any reading of this ramp: learned on this
    wiring when an earlier ramp measured it; else the line voltage per source volt for voltage
    and, for current, the most current a volt can
    drive (the lowest plausible impedance, whatever the guarantee says: a wrong or missing
    guarantee must not make the first setpoint overshoot)."""
    if quantity in run.gains:
        return run.gains[quantity]
    factor = run.supervisor.setpoint_factor  # line volts per source volt: sqrt 3 for a three-phase source
    if quantity == "voltage":
        return factor
    return factor * current_per_volt(run.rated("voltage"), run.rated("current"), None)


def ramp_to(run: Run, quantity: str, target: float, tolerance_pct: float, method: str = "learned") -> RampResult:
    run.range_for_limits()
    run.use_averaging(RAMP_AVERAGING_S)
    run.energise()
    if method == "fixed-increment":
        return _fixed_increment(run, quantity, target, tolerance_pct)
    return _learned(run, quantity, target, tolerance_pct)


def _first_setpoint(run: Run, quantity: str, aim: float, k: float) -> None:
    """From zero: a setpoint below the target on any plausible unit. (Already energised, none: the
    first reading gives the live gain and the loop commands from it.)"""
    if quantity == "current":
        share = FIRST_SETPOINT_SHARE
    else:
        share = 0.98 if quantity in run.gains else FIRST_VOLTAGE_SHARE
    run.send_setpoint(min(share * aim / first_gain(run, quantity) / k, run.supervisor.setpoint_limit))


def _learned(run: Run, quantity: str, target: float, tolerance_pct: float) -> RampResult:
    start = run.clock.now()
    band = tolerance_pct / 100
    # Applied volts per volt of setpoint (the source's output impedance, the wiring): learned from
    # a settled reading, kept for the next ramp on the same wiring. Until it is known, a current
    # ramp (where the load current makes the drop matter) aims high in the tolerance band, at 3/4
    # of its upper half: a drop of up to 1.75 band widths still lands inside, no drop at all lands
    # below the band's top, and the first-order tail enters the band sooner than from a centred
    # aim. A voltage ramp (no-load: a small current, a negligible drop) aims at the target itself,
    # since the no-load loss follows the square of where it lands.
    k = run.gains.get("drop")
    aim = target * (1 + 0.75 * band) if quantity == "current" and not k else target
    # Until then, the drop is read off the source's settling tail as soon as the tail shows it
    # (a quarter band's agreement: a misjudged drop may use a quarter of the band's upper half).
    tail = None if k else SettlingTail(run.station.limits.slew, run.update_interval, run.setpoint, run.clock.now())
    k = k or 1.0
    live = run.setpoint > 0 and run.last_sample is not None
    if not live:
        _first_setpoint(run, quantity, aim, k)
        if tail is not None:
            tail.command(run.clock.now(), run.setpoint, trim=False)
    moved_at = run.clock.now()
    count = 0
    points: deque[tuple[float, float]] = deque(maxlen=GAIN_READINGS)
    applied: list[tuple[float, float]] = []
    first: float | None = None
    furthest = math.nan
    previous: Sample | None = None
    deadline = start + _time_allowed(run, run.supervisor.setpoint_limit)
    while True:
        run.clock.sleep(run.update_interval)
        s = run.read()
        y = measured(s, quantity)
        first = y if first is None else first
        furthest = y if math.isnan(furthest) else (max(furthest, y) if first <= target else min(furthest, y))
        if quantity == "voltage":
            _stop_before_current_limit(run, previous, s, target, target * (1 + band))
        elif run.wiring is not None and run.wiring.other == "short" and (cause := open_circuit(run, s)) is not None:
            raise Trip(cause, step=run.step_title, time=run.clock.now())
        previous = s
        if not applied or s.u_source != applied[-1][1]:
            applied.append((s.t, s.u_source))  # a repeated value is the same analyser update, not a settled source
        settled = _settled(applied, band / 2, SETTLED_WINDOW_FACTOR * run.measure_averaging)
        if settled and abs(y - target) <= band * target:
            run.gains[quantity] = y / s.u_source
            return RampResult(y, run.clock.now() - start, first, furthest)
        # The drop only from a source that stands still: the first reading of a ramp that starts
        # energised, or settled readings taken after the setpoint last moved (one taken while the
        # source still follows a move would blame the move on the wiring).
        count += 1
        steady = (live and count == 1) or (settled and sum(1 for t, _ in applied if t > moved_at) >= SETTLED_READINGS)
        if steady and K_RANGE[0] <= s.u_source / run.setpoint <= K_RANGE[1]:
            k, aim, tail = s.u_source / run.setpoint, target, None
            run.gains["drop"] = k
        elif tail is not None:
            tail.add(s.t, s.u_source)
            rest = tail.rest_share(band / 4)
            if rest is not None and K_RANGE[0] <= rest <= K_RANGE[1]:
                k, aim, tail = rest, target, None   # the settled reading still confirms it later
        if y > 0 and s.u_source > LEARN_FROM * run.setpoint:
            points.append((s.u_source, y))
            wanted = aim / _gain(points) / k
            if abs(wanted - run.setpoint) > NOISE_SHARE * band * wanted:  # below that, reading noise
                real = abs(wanted - run.setpoint) > band / 2 * wanted
                if real:
                    applied.clear()  # a real move: the source must settle again
                _send_explained(run, wanted, s, quantity)
                moved_at = s.t
                if tail is not None:
                    tail.command(run.clock.now(), run.setpoint, trim=not real)
        if run.clock.now() > deadline:
            raise Trip(f"ramp did not reach {target:.4g} within tolerance", quantity, y, target, run.step_title, run.clock.now())


def _send_explained(run: Run, wanted: float, s: Sample, quantity: str) -> None:
    """Send the ramp's next setpoint; a setpoint refused in a load-loss ramp is explained by an open
    short-circuit circuit when the last reading says so (the refusal stands either way)."""
    try:
        run.send_setpoint(wanted)
    except LimitTrip as refused:
        shorted = run.wiring is not None and run.wiring.other == "short"
        if quantity == "current" and shorted:
            open_phase = unbalance(s, run.supervisor.limits, True, run.step_title, refused=True)
            if open_phase is not None:  # one phase of the circuit open: the others carry what current flows
                raise open_phase from refused
        cause = open_circuit(run, s, judge_from=0.0) if quantity == "current" and shorted else None
        if cause is None:
            raise
        raise Trip(f"{cause} (the next setpoint, {wanted:.4g} V, was refused: {refused.sentence()})",
                   step=run.step_title, time=run.clock.now()) from refused


def _gain(points: deque[tuple[float, float]]) -> float:
    """Measured quantity per applied volt: the least-squares line through the origin of the last
    few (applied volts, reading) points. The unit's gain holds while the source moves, so every
    reading counts; weighting by the volts keeps the noisy first readings near zero from counting
    much, and a few readings together halve the noise that a low test voltage on a wide range reads."""
    return sum(u * y for u, y in points) / sum(u * u for u, _ in points)


def _stop_before_current_limit(run: Run, previous: Sample | None, s: Sample, target: float, ceiling: float) -> None:
    """A no-load ramp's magnetising current grows much faster than the voltage near the core's
    knee. From the last two readings, the local exponent n of I ~ U**n; when the voltage, rising
    by GUARD_STEPS more steps like its last but no higher than the top of the target's band (the
    ramp commands no more), would bring the current to the step's current limit, stop raising
    before a reading crosses it. (Readings that come sparsely, on a busy host or a fast simulated
    clock, make the last step large: without the ceiling the guard would foresee voltages the ramp
    never asks for.)"""
    if previous is None or previous.u_mean < LEARN_FROM * target or s.u_mean >= target:
        return
    i_now, i_before = highest_current(s), highest_current(previous)  # the outer limbs of a three-phase core draw most
    if i_before <= 0 or i_now <= i_before or s.u_mean <= previous.u_mean * (1 + GUARD_MIN_RISE):
        return
    if i_now < GUARD_FLOOR_SHARE * run.supervisor.limits.current:
        return
    exponent = math.log(i_now / i_before) / math.log(s.u_mean / previous.u_mean)
    reach = min(s.u_mean * (1 + GUARD_STEPS * (s.u_mean / previous.u_mean - 1)), ceiling)
    ahead = i_now * (reach / s.u_mean) ** exponent
    limit = run.supervisor.limits.current
    if ahead >= limit:
        phase = f"L{[ph.i_rms for ph in s.phases].index(i_now) + 1}" if len(s.phases) == 3 else None
        where = f" on phase {phase}" if phase else ""
        likely = excess_magnetising(run, s, i_now)
        raise Trip(f"no-load ramp stopped at {s.u_mean:.4g} V before {target:.4g} V: the magnetising current{where} "
                   f"{i_now:.4g} A, rising as the {exponent:.1f}th power of the voltage, would reach the step's "
                   f"current limit within {GUARD_STEPS} more readings" + (f"; {likely}" if likely else ""),
                   "current", ahead, limit, run.step_title, run.clock.now(), phase)


def highest_current(s: Sample) -> float:
    return max(ph.i_rms for ph in s.phases)


def _settled(applied: list[tuple[float, float]], spread: float, window: float) -> bool:
    """The applied voltage has stayed within ``spread`` (relative) over the last ``window`` bay
    seconds and at least SETTLED_READINGS distinct readings. A window much shorter than the
    source's settling would take the slow end of its approach for a settled value; when readings
    come sparsely (a fast simulated clock on a busy host) the last few readings serve, spanning
    more than the window."""
    if len(applied) < SETTLED_READINGS or applied[-1][0] - applied[0][0] < window:
        return False
    t_last = applied[-1][0]
    in_window = sum(1 for t, _ in applied if t >= t_last - window)
    recent = [u for _, u in applied[-max(in_window, SETTLED_READINGS):]]
    return (max(recent) - min(recent)) <= spread * max(recent)


def _time_allowed(run: Run, goal_volts: float) -> float:
    """Time for a ramp: five times the slew-limited time plus ten seconds, and never less than
    RAMP_FLOOR_REAL_S of real time (a host stall must not pass for a ramp that cannot settle)."""
    slew = run.station.limits.slew
    bay = 10.0 + 5.0 * min(goal_volts, run.supervisor.setpoint_limit) / slew
    return run.clock.at_least_real(bay, RAMP_FLOOR_REAL_S)


def _fixed_increment(run: Run, quantity: str, target: float, tolerance_pct: float) -> RampResult:
    """The baseline: equal setpoint steps at the slew rate until the reading reaches the target."""
    start = run.clock.now()
    step_v = fixed_increment_volts(run.station.limits.slew)
    deadline = start + _time_allowed(run, run.supervisor.setpoint_limit)
    first: float | None = None
    while True:
        run.clock.sleep(FIXED_INCREMENT_S)
        s = run.read()
        y = measured(s, quantity)
        first = y if first is None else first
        if y >= target * (1 - tolerance_pct / 100):
            return RampResult(y, run.clock.now() - start, first, y)
        run.send_setpoint(run.setpoint + step_v)
        if run.clock.now() > deadline:
            raise Trip("fixed-increment ramp did not reach its target", quantity, y, target, run.step_title)


@register("ramp")
def execute(step: Ramp, run: Run) -> None:
    target = run.target_value(step, step.target)
    result = ramp_to(run, step.quantity, target, step.tolerance, step.method)
    unit = "V" if step.quantity == "voltage" else "A"
    run.event("ramp", f"reached {result.reached:.4g} {unit} (target {target:.4g} {unit}) in {result.seconds:.1f} s",
              {"target": target, "reached": result.reached, "seconds": result.seconds, "start": result.start,
               "furthest": result.furthest, "quantity": step.quantity, "method": step.method})
    if result.overshoot(target, step.tolerance):
        direction = "peak" if result.start <= target else "lowest"
        run.warn(f"ramp overshot: {direction} {result.furthest:.4g} {unit} against target {target:.4g} {unit} "
                 f"± {step.tolerance:g} %")
