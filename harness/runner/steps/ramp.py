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

SETTLED_CHANGE = 0.001     # spread of the last applied-voltage readings that counts as settled
SETTLED_READINGS = 3
LEARN_FROM = 0.05          # learn the gain once the applied voltage passes 5 % of the goal


@dataclass
class RampResult:
    reached: float
    seconds: float
    peak: float


def measured(sample: Sample, quantity: str) -> float:
    return sample.u_mean if quantity == "voltage" else sample.i_rms


def initial_gain(run: Run, quantity: str) -> float:
    """Measured quantity per volt before any reading: 1 for voltage, 1/Z from the nameplate for current."""
    if quantity == "voltage":
        return run.gains.get("voltage", 1.0)
    if "current" in run.gains:
        return run.gains["current"]
    g = run.sequence.guarantees
    z_pct = getattr(g, "impedance", None) if g is not None else None
    z_ohm = (z_pct or 6.0) / 100 * run.rated("voltage") / run.rated("current")
    return 1.0 / z_ohm


def ramp_to(run: Run, quantity: str, target: float, tolerance_pct: float, method: str = "learned") -> RampResult:
    run.range_for_limits()
    run.energise()
    run.bay.source.set_slew(run.station.limits.slew)
    if method == "fixed-increment":
        return _fixed_increment(run, quantity, target, tolerance_pct)
    return _learned(run, quantity, target, tolerance_pct)


def _learned(run: Run, quantity: str, target: float, tolerance_pct: float) -> RampResult:
    start = run.clock.now()
    tol = tolerance_pct / 100 * target
    # Until the source's own drop (output impedance, wiring) is learned from a settled reading,
    # aim in the upper half of the tolerance band, so that the unknown drop lands inside it.
    aim = target + tol / 2
    gain = initial_gain(run, quantity)
    goal = aim / gain
    run.send_setpoint(min(goal * 0.5, run.supervisor.limits.voltage) if quantity == "current" else goal * 0.98)
    applied: list[float] = []
    peak = 0.0
    deadline = start + _time_allowed(run, goal)
    while True:
        run.clock.sleep(run.update_interval)
        s = run.read()
        y = measured(s, quantity)
        peak = max(peak, y)
        if not applied or s.u_rms != applied[-1]:
            applied.append(s.u_rms)  # a repeated value is the same analyser update, not a settled source
        settled = _settled(applied)
        if settled and abs(y - target) <= tol:
            run.gains[quantity] = y / s.u_rms
            return RampResult(y, run.clock.now() - start, peak)
        wanted = _trim(run.setpoint, y, target) if settled else _aim(s, y, aim)
        if wanted is not None and _worth_sending(run.setpoint, wanted):
            run.send_setpoint(wanted)
            applied.clear()
        if run.clock.now() > deadline:
            raise Trip(f"ramp did not reach {target:.4g} within tolerance", quantity, y, target, run.step_title, run.clock.now())


def _aim(s: Sample, y: float, aim: float) -> float | None:
    """While the source moves: the applied voltage the learned gain (y per applied volt) asks for."""
    if y <= 0 or s.u_rms <= 0 or s.setpoint <= 0 or s.u_rms < LEARN_FROM * s.setpoint:
        return None
    return aim / (y / s.u_rms)


def _trim(setpoint: float, y: float, target: float) -> float | None:
    """Settled but outside the band: scale the setpoint by the remaining ratio (gain and drop together)."""
    return setpoint * target / y if y > 0 else None


def _settled(applied: list[float]) -> bool:
    """The last SETTLED_READINGS distinct readings of the applied voltage agree within SETTLED_CHANGE."""
    if len(applied) < SETTLED_READINGS:
        return False
    last = applied[-SETTLED_READINGS:]
    return (max(last) - min(last)) <= SETTLED_CHANGE * max(last)


def _worth_sending(current: float, wanted: float) -> bool:
    return abs(wanted - current) > 0.0002 * max(wanted, 1e-9)


def _time_allowed(run: Run, goal_volts: float) -> float:
    slew = run.station.limits.slew
    return 10.0 + 5.0 * min(goal_volts, run.supervisor.limits.voltage) / slew


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
