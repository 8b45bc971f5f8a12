"""Ramp the source until a *measured* quantity reaches its target, without overshoot.

The controller learns the unit's gain from the readings (measured quantity per applied volt)
and commands the setpoint that the gain predicts; the source slews there at the bay's
maximum rate. Close to the target it trims on the settled reading. For the no-load test the
measured quantity is the mean-value voltage, as the test codes set it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from harness.runner.context import Run, Sample
from harness.runner.steps import register
from harness.safety import Trip

RAMP_FLOOR_REAL_S = 10.0
RAMP_AVERAGING_S = 0.05     # analyser update interval while ramping (bay seconds)
SETTLED_READINGS = 3        # distinct readings within half the tolerance band count as settled ...
SETTLED_WINDOW_FACTOR = 2   # ... over at least this many of the analyser's measuring intervals
K_RANGE = (0.8, 1.25)       # plausible applied/set ratios; outside, the source is still moving
LEARN_FROM = 0.05          # learn the gain once the applied voltage passes 5 % of the goal


@dataclass
class RampResult:
    reached: float
    seconds: float
    peak: float


def measured(sample: Sample, quantity: str) -> float:
    return sample.u_mean if quantity == "voltage" else sample.i_rms


def initial_gain(run: Run, quantity: str) -> float:
    """Measured quantity per volt of setpoint before any reading: for voltage the line voltage per
    source volt (sqrt 3 for a three-phase source set line-to-neutral), for current 1/Z of the
    star-equivalent phase from the nameplate."""
    factor = run.supervisor.setpoint_factor
    if quantity == "voltage":
        return run.gains.get("voltage", factor)
    if "current" in run.gains:
        return run.gains["current"]
    g = run.sequence.guarantees
    z_pct = getattr(g, "impedance", None) if g is not None else None
    z_ohm = (z_pct or 6.0) / 100 * run.rated("voltage") / factor / run.rated("current")
    return 1.0 / z_ohm


def ramp_to(run: Run, quantity: str, target: float, tolerance_pct: float, method: str = "learned") -> RampResult:
    run.range_for_limits()
    run.use_averaging(RAMP_AVERAGING_S)
    run.energise()
    if method == "fixed-increment":
        return _fixed_increment(run, quantity, target, tolerance_pct)
    return _learned(run, quantity, target, tolerance_pct)


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
    k = k or 1.0
    gain = initial_gain(run, quantity)
    first = aim / gain / k
    cap = run.supervisor.limits.voltage / run.supervisor.setpoint_factor
    run.send_setpoint(min(first * 0.5, cap) if quantity == "current" else first * 0.98)
    applied: list[tuple[float, float]] = []
    peak = 0.0
    deadline = start + _time_allowed(run, first)
    while True:
        run.clock.sleep(run.update_interval)
        s = run.read()
        y = measured(s, quantity)
        peak = max(peak, y)
        if not applied or s.u_source != applied[-1][1]:
            applied.append((s.t, s.u_source))  # a repeated value is the same analyser update, not a settled source
        settled = _settled(applied, band / 2, SETTLED_WINDOW_FACTOR * run.measure_averaging)
        if settled and abs(y - target) <= band * target:
            run.gains[quantity] = y / s.u_source
            return RampResult(y, run.clock.now() - start, peak)
        if settled and K_RANGE[0] <= s.u_source / run.setpoint <= K_RANGE[1]:
            k, aim = s.u_source / run.setpoint, target
            run.gains["drop"] = k
        if y > 0 and s.u_source > LEARN_FROM * run.setpoint:
            wanted = aim / (y / s.u_source) / k
            if abs(wanted - run.setpoint) > band / 10 * wanted:  # below that, reading noise
                if abs(wanted - run.setpoint) > band / 2 * wanted:
                    applied.clear()  # a real move: the source must settle again
                run.send_setpoint(wanted)
        if run.clock.now() > deadline:
            raise Trip(f"ramp did not reach {target:.4g} within tolerance", quantity, y, target, run.step_title, run.clock.now())


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
    bay = 10.0 + 5.0 * min(goal_volts, run.supervisor.limits.voltage) / slew
    return run.clock.at_least_real(bay, RAMP_FLOOR_REAL_S)


def _fixed_increment(run: Run, quantity: str, target: float, tolerance_pct: float) -> RampResult:
    """The baseline: equal setpoint steps at the slew rate until the reading reaches the target."""
    start = run.clock.now()
    step_v = run.station.limits.slew * 0.5
    deadline = start + _time_allowed(run, run.supervisor.limits.voltage)
    peak = 0.0
    while True:
        run.clock.sleep(0.5)
        s = run.read()
        y = measured(s, quantity)
        peak = max(peak, y)
        if y >= target * (1 - tolerance_pct / 100):
            return RampResult(y, run.clock.now() - start, peak)
        run.send_setpoint(run.setpoint + step_v)
        if run.clock.now() > deadline:
            raise Trip("fixed-increment ramp did not reach its target", quantity, y, target, run.step_title)


@register("ramp")
def execute(step, run: Run) -> None:
    target = run.target_value(step, step.target)
    result = ramp_to(run, step.quantity, target, step.tolerance, step.method)
    unit = "V" if step.quantity == "voltage" else "A"
    run.event("ramp", f"reached {result.reached:.4g} {unit} (target {target:.4g} {unit}) in {result.seconds:.1f} s",
              {"target": target, "reached": result.reached, "seconds": result.seconds, "peak": result.peak,
               "quantity": step.quantity, "method": step.method})
    if math.isfinite(result.peak) and result.peak > target * (1 + step.tolerance / 100):
        run.warn(f"ramp overshot: peak {result.peak:.4g} {unit} against target {target:.4g} {unit}")
