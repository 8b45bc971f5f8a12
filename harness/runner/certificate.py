"""What a routine-test certificate shows beyond the results, gathered from a stored run: the
winding resistances converted to the reference temperature, the temperatures at each test, the
approvals with the hash of the results they approved, and the calibration state of the bay.

Plain dicts for the report bundle (see ``harness.report.bundle``); the conversions are the
calculation core's own (``calc.temperature.resistance_at`` with the standard's constants).
"""

from __future__ import annotations

from typing import Any

from harness.calc.standards import material_constant, reference_temperature
from harness.calc.temperature import resistance_at

PAIRS = ("1-2", "2-3", "3-1")


def resistance_rows(events: list[dict[str, Any]], transformer: dict[str, Any], standard: str) -> list[dict[str, Any]]:
    """One row per winding and measured pair: the measured d.c. resistance, its temperature and
    the value at the reference temperature, R2 = R1 (C + t2) / (C + t1) (IEC 60076-1, 11.2 and
    its Annex E constant C: 235 copper, 225 aluminium). ``transformer`` is the nameplate in SI
    numbers (the record's or the validated sequence's)."""
    standard = standard.lower() if standard in ("iec", "ieee", "IEC", "IEEE") else "iec"
    material = transformer.get("winding_material")
    reference = _reference(standard, transformer.get("reference_temperature"))
    constant = material_constant(standard, material) if material in ("copper", "aluminium") else None
    rows: list[dict[str, Any]] = []
    for event in events:
        data = event.get("data")
        if event.get("kind") != "resistance" or not isinstance(data, dict):
            continue
        values = data.get("values") or [data.get("ohm")]
        labels = PAIRS if len(values) == 3 else ("",)
        temperature = data.get("temperature")
        for pair, ohm in zip(labels, values):
            known = ohm is not None and temperature is not None and reference is not None and constant is not None
            at_ref = resistance_at(ohm, temperature, reference, constant) if known else None  # type: ignore[arg-type]
            rows.append({"winding": str(data.get("winding", "")).upper(), "terminals": pair, "ohm": ohm,
                         "temperature_C": temperature, "ohm_ref": at_ref, "reference_C": reference,
                         "constant": constant, "material": material})
    return rows


def _reference(standard: str, given: Any) -> float | None:
    try:
        return reference_temperature(standard, float(given) if given is not None else None)
    except (TypeError, ValueError, KeyError):
        return None


def temperature_rows(events: list[dict[str, Any]], labels: dict[int, str], record: dict[str, Any]
                     ) -> list[dict[str, Any]]:
    """Ambient, oil and winding temperatures as read during the run, each with the test it
    belongs to: the thermometer steps, the core (oil) temperature of a no-load reading, the
    winding temperature at each resistance measurement, and the mean winding temperature the
    load-loss evaluation used (the record's)."""
    rows: list[dict[str, Any]] = []
    step: str | None = None
    for event in events:
        data: dict[str, Any] = event["data"] if isinstance(event.get("data"), dict) else {}
        kind = event.get("kind")
        if kind == "step-start":
            step = labels.get(data["step"]) if isinstance(data.get("step"), int) else step
        elif kind == "temperature":
            rows.append({"when": step or "thermometer reading", "ambient": data.get("ambient"),
                         "oil": data.get("oil"), "winding": data.get("winding")})
        elif kind == "core-temperature":
            rows.append({"when": step or "no-load reading", "ambient": None,
                         "oil": data.get("temperature_C"), "winding": None})
        elif kind == "resistance":
            rows.append({"when": f"{step or 'resistance'} ({str(data.get('winding', '')).upper()})",
                         "ambient": None, "oil": None, "winding": data.get("temperature")})
    load: dict[str, Any] = record["load"] if isinstance(record.get("load"), dict) else {}
    if load.get("temperature") is not None:
        rows.append({"when": "load-loss test: mean winding temperature, as evaluated", "ambient": None,
                     "oil": None, "winding": load["temperature"]})
    return rows


def approval_block(approvals: list[dict[str, Any]], operator: Any, finished: Any) -> dict[str, Any]:
    """Tested by (the sequence's operator, at the run's end), then each check or approval in order;
    ``approved`` is False until a row of role ``approved`` whose hash matches the results stored
    now exists (a ``checked`` row, or an approval of other results, does not approve)."""
    valid = [a for a in approvals if a.get("results_match") and str(a.get("role", "")).strip().lower() == "approved"]
    return {"tested_by": operator, "tested": finished, "rows": approvals,
            "approved": bool(valid), "changed_after": any(not a.get("results_match") for a in approvals)}


def calibration_rows(station: dict[str, Any], instruments: list[dict[str, Any]], test_date: str | None
                     ) -> list[dict[str, Any]]:
    """Each station instrument's calibration: due date, certificate, station serial against the
    serial it gave to ``*IDN?``, and, when the station let an expired instrument run, its reason."""
    given = (station.get("instruments") or {}) if isinstance(station, dict) else {}
    identity = {i.get("role"): i for i in instruments}
    rows = []
    for role, spec in given.items():
        if not isinstance(spec, dict) or role == "bay_control":
            continue
        idn = identity.get(role) or {}
        due = spec.get("calibration_due")
        rows.append({"role": role, "due": str(due) if due else None, "certificate": spec.get("calibration_certificate"),
                     "serial": spec.get("serial"), "idn_serial": idn.get("serial"),
                     "expired": bool(due and test_date and str(due) < test_date[:10]),
                     "allowed": spec.get("allow_expired_calibration")})
    return rows
