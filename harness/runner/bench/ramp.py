"""A current ramp on the simulated bay against the slew-limited bound and the physical floor.

The bound is V/slew + tau: the source slewing at the bay's rate to the volts that give the target,
then one time constant. The floor is the least time any controller could take without overshoot:
the source slews at its maximum rate and lags by slew*tau behind its setpoint, an error that
decays as exp(-t/tau), so it is inside the band tol*V after V/slew + tau*ln(slew*tau/(tol*V)).

Three units: the demo unit, one of half its impedance (low: more current per volt, a smaller
voltage, so less slewing) and one of two and a half times it (high). The baseline is a
proportional controller a lab would write: move the setpoint by a share of the error divided by
the nameplate's gain, wait for the source to slew there and a quarter second more, read again;
stop when three readings in a row are in the band. It
runs as the sequence's second ramp, in place of the product's fixed-increment method.

The bay runs at real time by default, as a bay does: the floor is bay time, and a faster
simulated clock multiplies the host's own delays (a reading served late by a busy host, the
controller's work between readings) by its scale, which no real bay sees. ``--time-scale 5``
gives a quicker look (about 17 s against 75 s) with those delays five times larger.
"""

from __future__ import annotations

import contextlib
import math
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any
from unittest import mock

import numpy as np
import yaml

from harness.runner.bench import verdict

TOLERANCE_PCT = 0.3
TIME_SCALE = 1.0
UNITS = {"default": 1.0, "low-impedance": 0.5, "high-impedance": 2.5}
# Goals: within 10 % of the floor on every unit, and no reading past the band's top (overshoot);
# the bound's figure is kept for comparison with the baseline.
TARGETS = {"ratio_to_floor": 1.10, "overshoot_pct": 0.0}
P_PERIOD_S = 0.25
P_SHARE = 0.6

_SEQUENCE = """\
spec: 1
name: ramp benchmark
unit: {{serial: BENCH-{name}}}
transformer:
  rated_power: {power} VA
  phases: 1
  frequency: 50 Hz
  hv: {{rated_voltage: {hv} V}}
  lv: {{rated_voltage: {lv} V}}
  winding_material: copper
guarantees: {{impedance: {z_pct} %}}
limits: {{voltage: 900 V, current: 12 A, power: 8 kW, energised_time: 30 min}}
steps:
  - {{kind: prompt, text: fit the link, wiring: {{fed: hv, other: short}}}}
  - {{kind: ramp, name: learned, current: rated, tolerance: {tol} %, method: learned}}
  - {{kind: hold, name: watch learned, duration: 4 s, interval: 0.2 s}}
  - {{kind: switch-off}}
  - {{kind: wait, duration: 5 s}}
  - {{kind: ramp, name: baseline, current: rated, tolerance: {tol} %, method: fixed-increment}}
  - {{kind: hold, name: watch baseline, duration: 4 s, interval: 0.2 s}}
  - {{kind: switch-off}}
"""


def floor_s(volts: float, slew: float, tau: float, tol: float) -> float:
    """Least settling time without overshoot: slewing, then the first-order lag's tail into the band."""
    lag = slew * tau / (tol * volts)
    return volts / slew + (tau * math.log(lag) if lag > 1 else 0.0)


def bound_s(volts: float, slew: float, tau: float) -> float:
    return volts / slew + tau


def _number(text: Any) -> float:
    return float(str(text).split()[0])


def _scaled_scenario(folder: Path, name: str, factor: float) -> tuple[Path, dict[str, Any]]:
    """The demo scenario with its windings' resistance and leakage reactance scaled by ``factor``."""
    from harness.sim.scenario import SIM_CONFIGS

    data = yaml.safe_load((SIM_CONFIGS / "default.yaml").read_text(encoding="utf-8"))
    data["name"] = name
    for side in ("hv", "lv"):
        for key in ("resistance", "leakage_reactance"):
            data["transformer"][side][key] = f"{_number(data['transformer'][side][key]) * factor!r} ohm"
    path = folder / f"{name}.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path, data


def _impedance_pct(data: dict[str, Any]) -> float:
    t = data["transformer"]
    hv, lv, power = _number(t["hv"]["rated_voltage"]), _number(t["lv"]["rated_voltage"]), _number(t["rated_power"]) * 1e3
    a2 = (hv / lv) ** 2
    r = _number(t["hv"]["resistance"]) + _number(t["lv"]["resistance"]) * a2
    x = _number(t["hv"]["leakage_reactance"]) + _number(t["lv"]["leakage_reactance"]) * a2
    return math.hypot(r, x) / (hv * hv / power) * 100


def _nameplate_gain(run: Any, quantity: str) -> float:
    """What a lab's controller would take from the nameplate: measured quantity per volt of
    setpoint, the current through the guaranteed impedance (6 % when none is given)."""
    factor = run.supervisor.setpoint_factor
    if quantity == "voltage":
        return float(factor)
    from harness.config.reach import current_per_volt
    z_pct = getattr(run.sequence.guarantees, "impedance", None) or 6.0
    return float(factor) * current_per_volt(run.rated("voltage"), run.rated("current"), z_pct)


def _proportional(run: Any, quantity: str, target: float, tolerance_pct: float) -> Any:
    """The baseline: a proportional step on the setpoint from the nameplate's gain, read every
    P_PERIOD_S, done after three readings in a row inside the band."""
    from harness.runner.steps.ramp import RampResult, _time_allowed, measured
    from harness.safety import Trip

    start = run.clock.now()
    gain = _nameplate_gain(run, quantity)
    deadline = start + _time_allowed(run, run.supervisor.setpoint_limit)
    inside, peak, first = 0, 0.0, None
    slew = run.station.limits.slew
    wait = P_PERIOD_S
    run.send_setpoint(min(P_SHARE * target / gain, run.supervisor.setpoint_limit))
    wait += run.setpoint / slew
    while True:
        run.clock.sleep(wait)  # the source's slew to the new setpoint, then a reading period
        s = run.read()
        y = measured(s, quantity)
        peak, first = max(peak, y), y if first is None else first
        inside = inside + 1 if abs(y - target) <= tolerance_pct / 100 * target else 0
        if inside >= 3:
            return RampResult(y, run.clock.now() - start, first, peak)
        before = run.setpoint
        wanted = before + P_SHARE * (target - y) / gain
        run.send_setpoint(min(max(wanted, 0.0), run.supervisor.setpoint_limit))
        wait = P_PERIOD_S + abs(run.setpoint - before) / slew
        if run.clock.now() > deadline:
            raise Trip("proportional ramp did not reach its target", quantity, y, target, run.step_title)


@contextlib.contextmanager
def _proportional_baseline() -> Iterator[None]:
    from harness.runner.steps import ramp
    with mock.patch.object(ramp, "_fixed_increment", _proportional):
        yield


def _one_unit(folder: Path, name: str, factor: float, tol_pct: float, time_scale: float) -> dict[str, Any]:
    from harness.runner.prepare import RunOptions
    from harness.runner.run import execute
    from harness.store import Store

    scenario_path, data = _scaled_scenario(folder, name, factor)
    t = data["transformer"]
    sequence = folder / f"ramp-{name}.yaml"
    sequence.write_text(_SEQUENCE.format(name=name, power=_number(t["rated_power"]) * 1e3, hv=_number(t["hv"]["rated_voltage"]),
                                         lv=_number(t["lv"]["rated_voltage"]), z_pct=round(_impedance_pct(data), 2),
                                         tol=tol_pct), encoding="utf-8")
    with Store(folder / f"data-{name}") as store, _proportional_baseline():
        outcome = execute(RunOptions(sequence, scenario=str(scenario_path), yes=True, time_scale=time_scale, quiet=True), store)
        if outcome.status not in ("passed", "failed"):
            raise RuntimeError(f"the benchmark run on the {name} unit ended {outcome.status}: {outcome.trip}")
        samples = store.samples(outcome.run_id, ("step_index", "t", "u_rms", "i_rms"))
        events = store.events(outcome.run_id)
    target = _number(t["rated_power"]) * 1e3 / _number(t["hv"]["rated_voltage"])
    slew, tau = _number(data["source"]["max_slew"]), _number(data["source"]["settling_time_constant"])
    learned = _settle(samples, events, "learned", "watch learned", target, tol_pct, slew, tau)
    baseline = _settle(samples, events, "baseline", "watch baseline", target, tol_pct, slew, tau)
    return {"impedance_pct": round(_impedance_pct(data), 2), "target_A": round(target, 4), **learned,
            "baseline_settle_s": baseline["settle_s"], "baseline_ratio_to_bound": baseline["ratio_to_bound"],
            "baseline_ratio_to_floor": baseline["ratio_to_floor"], "baseline_overshoot_pct": baseline["overshoot_pct"]}


def _settle(samples: dict[str, np.ndarray], events: list[dict[str, Any]], ramp: str, watch: str, target: float,
            tol_pct: float, slew: float, tau: float) -> dict[str, float]:
    """Settling time from the ramp's start: the last time the current was outside the tolerance.
    Overshoot: how far the highest reading passed the band's top (a reading above the target but
    inside the band is where a ramp aiming high in its band lands; ``peak_above_target_pct`` shows it)."""
    from harness.config.reach import band_top

    steps = {e["text"].split(": ", 1)[1]: e for e in events if e["kind"] == "step-start"}
    first, second = steps[ramp]["data"]["step"], steps[watch]["data"]["step"]
    start = steps[ramp]["t"]
    mask = (samples["step_index"] == first) | (samples["step_index"] == second)
    t, i, u = samples["t"][mask], samples["i_rms"][mask], samples["u_rms"][mask]
    outside = np.abs(i - target) > tol_pct / 100 * target
    last_out = t[outside].max() if outside.any() else start
    later = t[t > last_out]
    settle = float(later.min() if later.size else t.max()) - start
    volts = float(np.median(u[-5:]))
    bound, floor = bound_s(volts, slew, tau), floor_s(volts, slew, tau, tol_pct / 100)
    return {"settle_s": round(settle, 3), "bound_s": round(bound, 3), "floor_s": round(floor, 3),
            "ratio_to_bound": round(settle / bound, 3), "ratio_to_floor": round(settle / floor, 3),
            "overshoot_pct": round(max(0.0, float(i.max() - band_top(target, tol_pct)) / target * 100), 3),
            "peak_above_target_pct": round(float(i.max() - target) / target * 100, 3)}


def bench_ramp(tolerance_pct: float = TOLERANCE_PCT, time_scale: float = TIME_SCALE) -> dict[str, Any]:
    with tempfile.TemporaryDirectory(prefix="harness-bench-ramp-") as scratch:
        units = {name: _one_unit(Path(scratch), name, factor, tolerance_pct, time_scale) for name, factor in UNITS.items()}
    demo = units["default"]
    return {"ratio_to_bound": demo["ratio_to_bound"], "ratio_to_floor": demo["ratio_to_floor"],
            "overshoot_pct": demo["overshoot_pct"], "baseline_ratio_to_bound": demo["baseline_ratio_to_bound"],
            "baseline_ratio_to_floor": demo["baseline_ratio_to_floor"],
            "worst_ratio_to_floor": max(u["ratio_to_floor"] for u in units.values()),
            "worst_overshoot_pct": max(u["overshoot_pct"] for u in units.values()),
            "goals": {f"{key} {name}": verdict(unit[key], TARGETS[key], at_most=True)
                      for name, unit in units.items() for key in ("ratio_to_floor", "overshoot_pct")},
            "units": units, "tolerance_pct": tolerance_pct, "time_scale": time_scale,
            "baseline": f"proportional: setpoint += {P_SHARE} x error / nameplate gain, read after the slew + {P_PERIOD_S} s",
            "targets": TARGETS}
