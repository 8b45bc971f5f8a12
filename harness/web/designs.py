"""Units of one design (same nameplate) side by side: each figure's mean, spread and control limits.

A design is the nameplate of the run's record: phases, rated power, frequency, the windings'
rated voltages and the winding material. Each unit counts once, by its latest finished run
that has results. The control limits are the mean ± 3 standard deviations of the units
(Shewhart's individual-values chart; common practice, no source for the factor 3 in this
setting); a unit outside them is flagged. The figures are read from each run's stored
results, the very numbers its HTML report prints.
"""

from __future__ import annotations

import math
import statistics
from typing import Any

# (key in the page, label, unit, path in the results contract)
FIGURES = (
    ("no_load_loss", "No-load loss", "W", ("no_load", "loss_W")),
    ("load_loss", "Load loss at reference temperature", "W", ("load", "loss_ref_W")),
    ("impedance", "Impedance at reference temperature", "%", ("load", "impedance_ref_pct")),
    ("no_load_current", "No-load current", "%", ("no_load", "current_pct")),
)
SIGMAS = 3.0


def design_key(record: Any) -> str | None:
    """A short text naming the design, from the record's nameplate; None without one."""
    plate = (record or {}).get("transformer") if isinstance(record, dict) else None
    if not isinstance(plate, dict):
        return None
    hv, lv = plate.get("hv") or {}, plate.get("lv") or {}
    parts = (plate.get("phases"), plate.get("rated_power"), plate.get("frequency"), hv.get("rated_voltage"),
             lv.get("rated_voltage"), plate.get("winding_material"))
    if any(p is None for p in parts[:5]):
        return None
    phases, power, frequency, u_hv, u_lv, material = parts
    return (f"{phases}ph-{_number(power / 1000)}kVA-{_number(u_hv)}-{_number(u_lv)}V-{_number(frequency)}Hz"
            f"-{material or 'any'}")


def _number(value: float) -> str:
    return f"{value:g}"


def _figure(results: Any, path: tuple[str, str]) -> float | None:
    section = (results or {}).get(path[0]) if isinstance(results, dict) else None
    value = section.get(path[1]) if isinstance(section, dict) else None
    return float(value) if isinstance(value, (int, float)) and math.isfinite(value) else None


def gather(runs: list[dict[str, Any]]) -> dict[str, list[dict[str, Any]]]:
    """Design key -> its units (latest finished run with results per unit), oldest first.
    ``runs``: full runs (``Store.run``), any order."""
    latest: dict[tuple[str, str], dict[str, Any]] = {}
    for run in sorted(runs, key=lambda r: (r["started"], r["run_id"])):
        key = design_key(run.get("record"))
        if key is None or not run.get("results") or run.get("status") in ("running", "incomplete"):
            continue
        latest[(key, run["unit"])] = run
    designs: dict[str, list[dict[str, Any]]] = {}
    for (key, unit), run in sorted(latest.items(), key=lambda item: item[1]["run_id"]):
        figures = {name: _figure(run["results"], path) for name, _, _, path in FIGURES}
        designs.setdefault(key, []).append({"unit": unit, "run_id": run["run_id"], "started": run["started"],
                                            "station_id": run.get("station_id"), **figures})
    return designs


def statistics_of(units: list[dict[str, Any]]) -> dict[str, dict[str, Any]]:
    """Per figure: n, mean, standard deviation, control limits, and the units outside them."""
    found = {}
    for name, label, unit, _ in FIGURES:
        values = [u[name] for u in units if u[name] is not None]
        entry: dict[str, Any] = {"label": label, "unit": unit, "n": len(values), "mean": None, "std": None,
                                 "lower": None, "upper": None, "outside": []}
        if values:
            mean = statistics.fmean(values)
            std = statistics.stdev(values) if len(values) > 1 else 0.0
            entry.update(mean=mean, std=std, lower=mean - SIGMAS * std, upper=mean + SIGMAS * std)
            if len(values) > 1:
                entry["outside"] = [u["unit"] for u in units
                                    if u[name] is not None and not entry["lower"] <= u[name] <= entry["upper"]]
        found[name] = entry
    return found
