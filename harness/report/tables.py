"""The report's tables as rows of text, built from the plain dicts of a bundle.

Everything here tolerates missing keys: a tripped run may have only part of the results.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from harness.report import fmt

# Unit of a results key, read from its suffix (the results contract names SI units in the key).
_SUFFIX_UNITS = (
    ("_pct", "%"), ("_pu", "p.u."), ("_ohm", "Ω"), ("_VA", "VA"), ("_Hz", "Hz"), ("_W", "W"),
    ("_A", "A"), ("_V", "V"), ("_C", "°C"), ("_s", "s"),
)


@dataclass(frozen=True)
class MainRow:
    """One line of the results table: a quantity through its corrections to its verdict."""

    quantity: str
    unit: str
    measured: str
    corrected: str
    at_reference: str
    guaranteed: str
    limit: str
    verdict: str
    verdict_class: str
    checked: int | None = None
    """Which value column (0 measured, 1 corrected, 2 at reference) was compared with the guarantee."""
    note: str = ""
    source: str = ""
    """Where the tolerance comes from (a clause, or "record")."""


@dataclass(frozen=True)
class _RowSpec:
    label: str
    unit: str
    section: str
    measured: str | tuple[str, ...] | None
    corrected: str | tuple[str, ...] | None
    at_reference: str | tuple[str, ...] | None
    check_names: tuple[str, ...]
    checked: int


# Which results keys fill which column. "Corrected" is the waveform correction for no-load loss
# and the scaling to rated current for load loss and impedance.
_ROWS = (
    _RowSpec("No-load loss", "W", "no_load", "loss_measured_W", ("loss_waveform_corrected_W", "loss_W"), "loss_ref_W",
             ("no_load_loss", "no_load_loss_W"), 1),
    _RowSpec("No-load current", "%", "no_load", "current_pct", None, None,
             ("no_load_current", "no_load_current_pct"), 0),
    _RowSpec("Load loss", "W", "load", "loss_measured_W", "loss_W", "loss_ref_W",
             ("load_loss", "load_loss_W", "load_loss_ref_W"), 2),
    _RowSpec("Short-circuit impedance", "%", "load", "impedance_measured_pct", "impedance_pct",
             "impedance_ref_pct", ("impedance", "impedance_pct", "short_circuit_impedance"), 2),
    _RowSpec("Total losses", "W", "total", None, "loss_W", "loss_ref_W", ("total_loss", "total_loss_W", "total_losses"), 2),
)


def unit_of(key: str) -> str:
    for suffix, unit in _SUFFIX_UNITS:
        if key.endswith(suffix):
            return unit
    return ""


# Words for the stems whose plain reading would be cryptic.
_LABELS = {
    "loss_measured": "loss, measured", "loss": "loss, corrected", "loss_ref": "loss at reference temperature",
    "impedance_measured": "impedance, measured",
    "impedance": "impedance at rated current", "impedance_ref": "impedance at reference temperature",
    "resistance": "resistance", "resistance_ref": "resistance at reference temperature", "reactance": "reactance",
    "temperature": "winding temperature during the test", "test_temperature": "winding temperature during the test",
    "test_current": "test current", "loss_waveform_corrected": "loss, waveform-corrected",
    "loss_current": "loss component of the current", "magnetising_current": "magnetising current",
    "voltage_mean": "voltage, mean-value reading scaled to rms", "voltage_spread": "voltage spread between phases",
    "current_spread": "current spread between phases", "impedance_voltage": "impedance voltage at rated current",
    "i2r_loss": "I²R loss", "additional_loss": "additional loss", "i2r_loss_ref": "I²R loss at reference temperature",
    "additional_loss_ref": "additional loss at reference temperature", "waveform_form": "waveform correction form",
    "winding": "energised winding", "waveform_deviation": "waveform deviation (mean-value vs rms)",
    "load_loss_ref": "load loss at reference temperature",
}


def label_of(key: str) -> str:
    """'loss_ref_W' -> 'Loss at reference temperature'; unknown keys read as words."""
    stem = key
    for suffix, _ in _SUFFIX_UNITS:
        if key.endswith(suffix):
            stem = key[: -len(suffix)]
            break
    words = _LABELS.get(stem, stem.replace("_", " ").strip())
    return words[:1].upper() + words[1:]


def _checks_by_name(results: Mapping[str, Any]) -> dict[str, dict[str, Any]]:
    return {str(c.get("quantity")): dict(c) for c in results.get("checks", []) or [] if isinstance(c, Mapping)}


def _cells(spec: _RowSpec, section: Mapping[str, Any], check: Mapping[str, Any]) -> tuple[list[str], int]:
    """The three value cells and which one the check compared.

    The compared column is the one holding the check's value (for IEEE that is the no-load loss
    at reference temperature, for IEC the waveform-corrected one); when none does, the row's
    usual column, filled with the check's value if the section lacks it.
    """
    raw = [_first(section, keys) for keys in (spec.measured, spec.corrected, spec.at_reference)]
    cells = [fmt.num(v) for v in raw]
    value = check.get("value")
    matches = [i for i, v in enumerate(raw) if fmt.is_number(v) and fmt.is_number(value) and math.isclose(v, value, rel_tol=1e-9)]
    if matches:
        return cells, matches[-1]
    if cells[spec.checked] == fmt.DASH and fmt.is_number(value):
        cells[spec.checked] = fmt.num(value)
    return cells, spec.checked


def _first(section: Mapping[str, Any], keys: str | tuple[str, ...] | None) -> Any:
    """The first of ``keys`` that the section holds a value for (None when it holds none)."""
    names = (keys,) if isinstance(keys, str) else keys or ()
    return next((section[k] for k in names if section.get(k) is not None), None)


def _find_check(checks: dict[str, dict[str, Any]], names: tuple[str, ...]) -> dict[str, Any] | None:
    return next((checks.pop(n) for n in names if n in checks), None)


def _main_row(spec: _RowSpec, results: Mapping[str, Any], checks: dict[str, dict[str, Any]]) -> MainRow | None:
    section = results.get(spec.section) or {}
    check = _find_check(checks, spec.check_names)
    keys = (spec.measured, spec.corrected, spec.at_reference)
    if check is None and not any(fmt.is_number(_first(section, k)) for k in keys):
        return None
    check = check or {}
    cells, checked = _cells(spec, section, check)
    return MainRow(
        spec.label, spec.unit, *cells,
        fmt.num(check.get("guaranteed")), fmt.limit_text(check.get("limit"), ""),
        fmt.verdict(check.get("passed")), fmt.verdict_class(check.get("passed")),
        checked if check else None, str(check.get("note") or ""), str(check.get("source") or ""),
    )


def _extra_row(name: str, check: Mapping[str, Any]) -> MainRow:
    """A check the table has no line for: its value is the one compared."""
    return MainRow(
        label_of(name), str(check.get("unit") or unit_of(name)), fmt.DASH, fmt.num(check.get("value")), fmt.DASH,
        fmt.num(check.get("guaranteed")), fmt.limit_text(check.get("limit"), ""),
        fmt.verdict(check.get("passed")), fmt.verdict_class(check.get("passed")), 1, str(check.get("note") or ""),
        str(check.get("source") or ""),
    )


def main_rows(results: Mapping[str, Any]) -> list[MainRow]:
    checks = _checks_by_name(results)
    rows = [row for spec in _ROWS if (row := _main_row(spec, results, checks)) is not None]
    return rows + [_extra_row(name, check) for name, check in checks.items()]


def compliance_rows(results: Mapping[str, Any]) -> list[dict[str, str]]:
    """The efficiency-regulation checks: rule, quantity, value, limit, margin, verdict, source."""
    rows = []
    for c in results.get("compliance", []) or []:
        if not isinstance(c, Mapping):
            continue
        unit = str(c.get("unit") or "")
        rows.append({"rule": str(c.get("rule") or ""), "quantity": str(c.get("quantity") or ""),
                     "value": fmt.with_unit(c.get("value"), unit), "limit": fmt.limit_text(c.get("limit"), unit),
                     "margin": fmt.with_unit(c.get("margin"), unit), "verdict": fmt.verdict(c.get("passed")),
                     "verdict_class": fmt.verdict_class(c.get("passed")), "source": str(c.get("source") or ""),
                     "note": str(c.get("note") or "")})
    return rows


def detail_rows(section: Mapping[str, Any] | None) -> list[tuple[str, str, str]]:
    """Every scalar of a results section as (label, value, unit), in the order calc gave them."""
    if not isinstance(section, Mapping):
        return []
    return [(label_of(k), _winding_name(k, v), unit_of(k)) for k, v in section.items() if _is_scalar(v)]


def _winding_name(key: str, value: Any) -> str:
    # Windings are named HV and LV in the trade's writing; the record keys them in lower case.
    return str(value).upper() if key == "winding" and isinstance(value, str) else _scalar_text(value)


def _is_scalar(value: Any) -> bool:
    return value is None or isinstance(value, (int, float, str, bool))


def _scalar_text(value: Any, digits: int = fmt.SIGNIFICANT) -> str:
    if isinstance(value, bool):
        return "yes" if value else "no"
    return fmt.num(value, digits)


def efficiency_table(points: list[Mapping[str, Any]]) -> tuple[list[str], list[tuple[str, list[str]]]]:
    """Efficiency in % with one column per power factor and one row per load."""
    pfs = sorted({p.get("power_factor") for p in points if fmt.is_number(p.get("power_factor"))}, reverse=True)
    loads = sorted({p.get("load_pu") for p in points if fmt.is_number(p.get("load_pu"))})
    value = {(p.get("load_pu"), p.get("power_factor")): p.get("efficiency_pct") for p in points}
    rows = [(fmt.num(n * 100, 3), [fmt.fixed(value.get((n, pf)), 3) for pf in pfs]) for n in loads]
    return [fmt.fixed(pf, 2) for pf in pfs], rows


def regulation_rows(points: list[Mapping[str, Any]]) -> list[tuple[str, str, str, str, str]]:
    def sense(p: Mapping[str, Any]) -> str:
        if p.get("power_factor") == 1:
            return "unity"
        return {True: "lagging", False: "leading"}.get(p.get("lagging"), fmt.DASH)

    return [
        (fmt.num(_pct(p.get("load_pu")), 3), fmt.fixed(p.get("power_factor"), 2), sense(p),
         fmt.num(p.get("regulation_pct")), fmt.num(p.get("voltage_drop_pct")))
        for p in points
    ]


def _pct(per_unit: Any) -> Any:
    return per_unit * 100 if fmt.is_number(per_unit) else per_unit


def circuit_rows(circuit: Mapping[str, Any]) -> list[tuple[str, list[str]]]:
    """Equivalent-circuit values with one column per winding they are referred to."""
    sides = [s for s in ("hv", "lv") if isinstance(circuit.get(s), Mapping)]
    names = (("Rc_ohm", "Core-loss resistance Rc"), ("Xm_ohm", "Magnetising reactance Xm"),
             ("Req_ohm", "Series resistance Req"), ("Xeq_ohm", "Series reactance Xeq"))
    return [(label, [fmt.eng(circuit[s].get(key), "Ω") for s in sides]) for key, label in names]


ALL_PHASES = "L1–L3"


def reading_rows(readings: list[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """Statistics of the raw samples behind each reading, as text. A three-phase reading has a
    row per phase (``channel`` 1-3: ``phase`` L1-L3) and one of the three together (no channel:
    ALL_PHASES); a single-phase run's rows have no ``phase``."""
    quantities = ("u_rms", "u_mean", "i_rms", "p")
    phased = any(r.get("channel") is not None for r in readings)
    return [
        {
            "tag": str(r.get("tag", fmt.DASH)), "step": fmt.num(r.get("step")) if r.get("step") is not None else fmt.DASH,
            "phase": (f"L{r['channel']}" if r.get("channel") is not None else ALL_PHASES) if phased else None,
            "count": fmt.num(r.get("count")),
            "cells": [(fmt.num((r.get("mean") or {}).get(q)), fmt.num((r.get("std") or {}).get(q), 2)) for q in quantities],
            "stable": _stable_text(r.get("stable")), "stable_class": fmt.verdict_class(r.get("stable")),
        }
        for r in readings
    ]


def _stable_text(stable: Any) -> str:
    return {True: "✔ stable", False: "✘ not stable"}.get(stable, fmt.DASH) if isinstance(stable, bool) else fmt.DASH


def uncertainty_rows(uncertainty: Mapping[str, Any] | None) -> list[dict[str, Any]]:
    """One block per quantity: its standard and expanded uncertainty and the budget behind them."""
    if not isinstance(uncertainty, Mapping):
        return []
    return [_uncertainty_block(q, u) for q, u in uncertainty.items() if isinstance(u, Mapping)]


def _uncertainty_block(quantity: str, u: Mapping[str, Any]) -> dict[str, Any]:
    budget = [b for b in u.get("budget", []) or [] if isinstance(b, Mapping)]
    columns = list(dict.fromkeys(k for b in budget for k in b if k != "source"))
    return {
        "quantity": label_of(quantity), "unit": unit_of(quantity),
        "standard": fmt.num(u.get("standard"), 3), "expanded": fmt.num(u.get("expanded"), 3),
        "k": fmt.num(u.get("k"), 3), "columns": [label_of(c) + _unit_suffix(c) for c in columns],
        "budget": [(str(b.get("source", fmt.DASH)), [_scalar_text(b.get(c), 3) for c in columns]) for b in budget],
    }


def _unit_suffix(key: str) -> str:
    unit = unit_of(key)
    return f" ({unit})" if unit else ""


_PHASE_QUANTITIES = (("no_load", "no-load", (("voltage_V", "U, V", "voltage_spread_pct"), ("current_A", "I, A", "current_spread_pct"))),
                     ("load", "load loss", (("voltage_V", "U, V", None), ("current_A", "I, A", "current_spread_pct"),
                                            ("impedance_star_ohm", "Z, ohm", "impedance_spread_pct"))))


def phase_rows(phases: Mapping[str, Any] | None) -> list[dict[str, Any]]:
    """Rows of the per-phase table of a three-phase run: test, quantity, L1..L3, spread."""
    rows: list[dict[str, Any]] = []
    for key, test, quantities in _PHASE_QUANTITIES:
        section = (phases or {}).get(key)
        if not section:
            continue
        for name, label, spread in quantities:
            values = section.get(name)
            if isinstance(values, list) and len(values) == 3:
                rows.append({"test": test, "quantity": label, "cells": [_scalar_text(v) for v in values],
                             "spread": _scalar_text(section.get(spread)) if spread else ""})
    return rows


def phase_notes(phases: Mapping[str, Any] | None) -> list[str]:
    note = ((phases or {}).get("no_load") or {}).get("note")
    return [note] if note else []


# --------------------------------------------------------------------------- ratio test

def ratio_rows(ratio: Mapping[str, Any] | None) -> list[dict[str, str]]:
    """One row per tap and phase pair: declared and measured ratio, deviation against its limit,
    the LV lag and its clock number, the verdict."""
    rows: list[dict[str, str]] = []
    for tap in (ratio or {}).get("taps") or []:
        for k, phase in enumerate(tap.get("phases") or []):
            passed = phase.get("passed") and phase.get("clock_passed") is not False
            rows.append({
                "tap": _tap_text(tap.get("tap")) if k == 0 else "",
                "voltage": fmt.num(tap.get("tapped_voltage_V")) if k == 0 else "",
                "phase": str(phase.get("phase") or "-"), "declared": fmt.num(phase.get("declared"), 6),
                "measured": fmt.num(phase.get("measured"), 6), "deviation": fmt.fixed(phase.get("deviation_pct"), 3),
                "limit": "±" + fmt.fixed(phase.get("limit_pct"), 3), "lag": fmt.angle(phase.get("phase_displacement_deg")),
                "clock": fmt.num(phase.get("clock")), "verdict": fmt.verdict(passed), "verdict_class": fmt.verdict_class(passed)})
    return rows


def ratio_note(ratio: Mapping[str, Any] | None) -> str:
    """Where the tolerance came from and what the clock is checked against."""
    if not ratio:
        return ""
    basis = {"measured": "1/10 of the impedance measured in this run", "declared": "1/10 of the guaranteed impedance",
             "record": "the tolerance the sequence or record gives", "none": "no impedance known: 0.5 % only"}
    z = ratio.get("impedance_pct")
    impedance = f" ({fmt.num(z)} %)" if fmt.is_number(z) and ratio.get("impedance_basis") != "record" else ""
    return (f"{str(ratio.get('fed_winding', '')).upper()} fed, the other winding open. Tolerance: the lower of 0.5 % "
            f"and {basis.get(str(ratio.get('impedance_basis')), '-')}{impedance} (IEC 60076-1 Table 1); other taps "
            f"the same. Lag: the LV voltage behind the HV one, degrees; declared clock {ratio.get('declared_clock')}.")


def _tap_text(tap: Any) -> str:
    return "-" if not fmt.is_number(tap) else "0" if tap == 0 else f"{int(tap):+d}"
