"""The per-phase readings of a three-phase record and their spread: a plausibility check.

The test codes evaluate the means of the three line values (IEC 60076-1, recalled), but the
phases themselves say things a mean hides: on a three-limb core the middle limb's shorter
magnetic path gives the middle phase a lower no-load current than the outer two, which is
expected and not a fault (a middle phase at roughly 0.6 to 0.8 of the outer ones is typical:
common practice, recalled, no source); a spread of the load-loss currents or of the per-phase
impedances points at the link or a winding instead.
"""

from __future__ import annotations

from typing import Any

from harness.calc.phases import SQRT3, spread_pct, values_of

MIDDLE_LIMB_NOTE = ("the middle phase draws the least no-load current: on a three-limb core the middle "
                    "limb's magnetic path is the shortest, so this spread is expected, not a fault")


def phase_table(record: Any) -> dict[str, Any] | None:
    """Per-phase U (line-to-line), I (line) and, for the load-loss test, the star-equivalent
    impedance per phase; None for a single-phase record or one given as means only."""
    if record.transformer.phases != 3:
        return None
    table: dict[str, Any] = {}
    if record.no_load is not None and isinstance(record.no_load.current, tuple):
        table["no_load"] = _no_load(record.no_load)
    if record.load is not None and isinstance(record.load.current, tuple):
        table["load"] = _load(record.load)
    return table or None


def _no_load(test: Any) -> dict[str, Any]:
    currents = values_of(test.current)
    middle_lowest = currents[1] < min(currents[0], currents[2])
    return {"voltage_V": list(values_of(test.voltage)), "current_A": list(currents),
            "voltage_spread_pct": spread_pct(test.voltage), "current_spread_pct": spread_pct(test.current),
            "middle_to_outer": currents[1] / ((currents[0] + currents[2]) / 2),
            "note": MIDDLE_LIMB_NOTE if middle_lowest else None}


def _load(test: Any) -> dict[str, Any]:
    voltages, currents = values_of(test.voltage), values_of(test.current)
    voltages = voltages if len(voltages) == 3 else voltages * 3
    impedance = [u / SQRT3 / i for u, i in zip(voltages, currents)]
    return {"voltage_V": list(values_of(test.voltage)), "current_A": list(currents),
            "impedance_star_ohm": impedance, "current_spread_pct": spread_pct(test.current),
            "impedance_spread_pct": 100.0 * (max(impedance) - min(impedance)) / (sum(impedance) / 3)}
