"""Hand-off from the runner to the calculation core."""

from __future__ import annotations

from typing import Any

from pydantic import ValidationError

from harness.calc import Record, evaluate
from harness.runner.context import Run
from harness.runner.record import build_record, load_series


def evaluate_run(run: Run) -> tuple[dict[str, Any] | None, dict[str, Any] | None]:
    """The record and its results; (record, None) with a warning when the readings cannot be evaluated."""
    if not any(r.test in ("no-load", "load-loss") for r in run.readings) and not run.ratio_readings:
        return None, None
    record = build_record(run)
    try:
        results = evaluate(Record.model_validate(record)).to_dict()
    except (ValidationError, ValueError) as exc:
        run.warn(f"the readings could not be evaluated: {_first_error(exc)}")
        return record, None
    series = _load_series(run)
    if len(series) > 1:
        results["load_series"] = series
    results["warnings"] = list(results.get("warnings", [])) + run.warnings
    results["sweep"] = _sweep(run)
    return record, results


def _load_series(run: Run) -> list[dict[str, Any]]:
    """Each load-loss reading evaluated on its own: raw loss drifts as the winding warms."""
    rows = []
    for n, reading in enumerate(load_series(run), start=1):
        try:
            load = evaluate(Record.model_validate(build_record(run, reading))).to_dict()["load"]
        except (ValidationError, ValueError):
            continue
        rows.append({"reading": n, "winding_temperature_C": reading.winding_temperature,
                     "current_A": reading.mean["i_rms"], "power_W": reading.mean["p"],
                     "loss_W": load.get("loss_W"), "loss_ref_W": load.get("loss_ref_W")})
    return rows


def _sweep(run: Run) -> list[dict[str, Any]]:
    return [{"u_V": r.mean["u_rms"], "u_mean_V": r.mean["u_mean"], "i_A": r.mean["i_rms"], "p_W": r.mean["p"],
             "u_pct": r.target_pct} for r in run.readings if r.test.startswith("sweep")]


def _first_error(exc: Exception) -> str:
    if isinstance(exc, ValidationError):
        err = exc.errors(include_url=False)[0]
        return f"{'.'.join(str(p) for p in err['loc'])}: {err['msg']}"
    return str(exc)
