"""A whole sequence on the simulated bay: the time the bay was energised against the least the
sequence could take.

Energised time: from each ``energised`` event to the next confirmed switch-off (``off`` or the
final ``safe-state``), in bay seconds. The least time of each energised stretch is what its
steps ask for and physics allows, with no allowance for settling or control:

- every change of the source voltage at the bay's slew rate: from zero to each ramp's end
  voltage, and from one sweep point to the next (the voltages the run actually reached), and
  from zero to the ratio step's voltage on each tap. The slew is the source's own, per phase:
  a three-phase source is set line-to-neutral, so the line-to-line voltages the readings give
  move sqrt 3 times as fast;
- each measuring window the sequence asks for: ``readings`` x ``interval`` of every measure and
  of every sweep point, and every hold's duration;
- the confirmation of de-energisation: one analyser update after the output is off.

The ratio says how much longer the bay stayed live than that; the goal is at most 1.2.
"""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

import numpy as np

from harness.runner.bench import verdict

TARGET_RATIO = 1.2
ENDS = ("off", "safe-state")


def bench_sequence(sequence: Path | str, time_scale: float | None = None) -> dict[str, Any]:
    from harness.common.reading import SQRT3
    from harness.runner.prepare import RunOptions, prepare
    from harness.runner.run import execute
    from harness.store import Store

    options = RunOptions(Path(sequence), yes=True, quiet=True, time_scale=time_scale)
    prepared = prepare(options)
    if prepared.scenario is None:
        raise ValueError("bench sequence runs on the built-in simulated bay")
    # Line volts per second: the readings are line-to-line, a three-phase source slews line-to-neutral.
    slew = prepared.scenario.source.max_slew * (SQRT3 if prepared.sequence.transformer.phases == 3 else 1.0)
    update = prepared.scenario.analyser.update_interval
    by_name = {(s.kind, s.title()): s for s in _flat(prepared.sequence.steps)}
    with tempfile.TemporaryDirectory(prefix="harness-bench-sequence-") as scratch, Store(Path(scratch)) as store:
        outcome = execute(options, store)
        if outcome.status not in ("passed", "failed"):
            raise RuntimeError(f"the sequence ended {outcome.status}: {outcome.trip}")
        events, steps = store.events(outcome.run_id), store.steps(outcome.run_id)
        samples = store.samples(outcome.run_id, ("step_index", "u_rms"))
    stretches = _energised(events)
    floor = 0.0
    parts: dict[str, float] = {"slew_s": 0.0, "windows_s": 0.0, "confirmations_s": 0.0}
    by_step: dict[str, dict[str, float]] = {}  # where the time above the least goes
    for begin, end in stretches:
        level = 0.0
        for st in steps:
            start = _step_start(events, st["step_index"])
            if start is None or not (_step_end(events, start) > begin and start < end):
                continue  # the step did not overlap this energised stretch
            least_before = sum(parts.values())
            step = by_name.get((st["kind"], st["name"]))
            if st["kind"] == "ramp":
                mine = samples["u_rms"][samples["step_index"] == st["step_index"]]
                reached = float(np.median(mine[-5:])) if mine.size else level
                parts["slew_s"] += abs(reached - level) / slew
                level = reached
            elif st["kind"] == "sweep" and step is not None:
                for e in events:
                    if e["kind"] == "sweep" and begin <= (e["t"] or -1) <= end and _in_step(events, e, st["step_index"]):
                        reached = float(e["data"]["mean"]["u_rms"])
                        parts["slew_s"] += abs(reached - level) / slew
                        level = reached
                        parts["windows_s"] += step.readings * step.interval
            elif st["kind"] == "ratio" and step is not None:  # one tap per energised stretch
                for e in events:
                    if e["kind"] == "ratio-reading" and begin <= (e["t"] or -1) <= end and _in_step(events, e, st["step_index"]):
                        reached = float(np.mean(e["data"][e["data"]["fed"]]))
                        parts["slew_s"] += abs(reached - level) / slew
                        level = reached
                        parts["windows_s"] += step.readings * step.interval
            elif st["kind"] == "measure" and step is not None:
                parts["windows_s"] += step.readings * step.interval
            elif st["kind"] == "hold" and step is not None:
                parts["windows_s"] += step.duration
            live = min(_step_end(events, start), end) - max(start, begin)
            entry = by_step.setdefault(f"{st['step_index'] + 1}: {st['name']}", {"bay_s": 0.0, "least_s": 0.0})
            entry["bay_s"] = round(entry["bay_s"] + live, 3)  # a step over several stretches (a ratio step's taps)
            entry["least_s"] = round(entry["least_s"] + sum(parts.values()) - least_before, 3)
        parts["confirmations_s"] += update
    floor = sum(parts.values())
    bay = sum(end - begin for begin, end in stretches)
    ratio = round(bay / floor, 3) if floor else None
    return {"bay_s": round(bay, 3), "floor_s": round(floor, 3), "ratio": ratio,
            "goals": {"ratio": verdict(ratio, TARGET_RATIO, at_most=True)},
            "floor_parts": {k: round(v, 3) for k, v in parts.items()}, "by_step": by_step,
            "energised_stretches": len(stretches),
            "sequence": str(sequence), "time_scale": outcome_scale(options), "target_ratio": TARGET_RATIO}


def outcome_scale(options: Any) -> float:
    from harness.runner.run import DEFAULT_SIM_TIME_SCALE
    return options.time_scale or DEFAULT_SIM_TIME_SCALE


def _flat(steps: list[Any]) -> list[Any]:
    out: list[Any] = []
    for s in steps:
        inner = getattr(s, "steps", None)
        out.extend(_flat(inner) if inner else [s])
    return out


def _energised(events: list[dict[str, Any]]) -> list[tuple[float, float]]:
    stretches, since = [], None
    for e in events:
        if e["kind"] == "energised" and since is None:
            since = e["t"]
        elif e["kind"] in ENDS and since is not None and (e.get("data") or {}).get("confirmed"):
            stretches.append((since, e["t"]))
            since = None
    return stretches


def _step_start(events: list[dict[str, Any]], index: int) -> float | None:
    for e in events:
        if e["kind"] == "step-start" and isinstance(e.get("data"), dict) and e["data"].get("step") == index:
            return float(e["t"])
    return None


def _step_end(events: list[dict[str, Any]], start: float) -> float:
    """When the step that started at ``start`` ended: the next step's start, or the last event."""
    later = [e["t"] for e in events if e["kind"] == "step-start" and (e["t"] or 0) > start]
    return min(later) if later else max(e["t"] or 0 for e in events)


def _in_step(events: list[dict[str, Any]], event: dict[str, Any], index: int) -> bool:
    """Whether ``event`` came after step ``index`` started and before the next step started."""
    start = _step_start(events, index)
    later = [e["t"] for e in events if e["kind"] == "step-start" and (e["t"] or 0) > (start or 0)]
    return start is not None and start <= event["t"] and (not later or event["t"] < min(later))
