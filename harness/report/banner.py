"""The banner that opens the report of a run that did not end as planned.

It says what happened, when, at what value against which limit, and, when the safe state was not
confirmed, that the bay may still be live. Plain sentences: the banner must read in black and white.
"""

from __future__ import annotations

from typing import Any

from harness.report import fmt
from harness.report.bundle import ReportBundle

_QUANTITY_UNITS = {"voltage": "V", "current": "A", "power": "W", "energised_time": "s", "temperature": "°C"}

_HEADLINES = {
    "tripped": "RUN TRIPPED",
    "aborted": "RUN ABORTED BY THE OPERATOR",
    "unsafe": "SAFE STATE NOT CONFIRMED — THE BAY MAY STILL BE LIVE",
    "incomplete": "RUN INCOMPLETE",
}

_CLOSING = {
    "tripped": "The safe-state procedure ran: source at zero, output off, de-energisation confirmed by measurement.",
    "aborted": "The safe-state procedure ran: source at zero, output off, de-energisation confirmed by measurement.",
    "unsafe": ("The safe-state procedure could not confirm de-energisation. Do not enter the bay or touch any "
               "connection until the supply is isolated, absence of voltage is verified with a proven tester "
               "and earths are fitted."),
    "incomplete": ("The program stopped before the end of the run; whether the bay was left de-energised is not "
                   "recorded. Verify absence of voltage before entering the bay."),
}


def banner(bundle: ReportBundle) -> dict[str, Any] | None:
    """Headline and sentences of the banner, or None for a run that ended as planned."""
    if not bundle.needs_banner:
        return None
    lines = [_what(bundle), _when(bundle), _value(bundle.trip)]
    lines = [line for line in lines if line] + [_CLOSING[bundle.status]]
    return {"headline": _HEADLINES[bundle.status], "lines": lines, "status": bundle.status}


def _what(bundle: ReportBundle) -> str:
    trip = bundle.trip or {}
    cause = trip.get("cause")
    step = f" in step {trip['step']}" if trip.get("step") is not None else ""
    if cause:
        return f"What happened: {cause}{step}."
    return {"aborted": f"What happened: the operator stopped the run{step}.",
            "incomplete": "What happened: the run ended without a closing record."}.get(
        bundle.status, f"What happened: no cause was recorded{step}.")


def _when(bundle: ReportBundle) -> str:
    trip = bundle.trip or {}
    when = trip.get("time") or bundle.run.get("finished") or _last_event_time(bundle)
    return f"When: {_plain_time(when)}." if when else "When: not recorded."


def _last_event_time(bundle: ReportBundle) -> Any:
    return bundle.events[-1].get("time") if bundle.events else None


def _plain_time(when: Any) -> str:
    return fmt.when_text(when)


def _value(trip: dict[str, Any] | None) -> str | None:
    if not trip or (trip.get("value") is None and trip.get("limit") is None):
        return None
    quantity = str(trip.get("quantity") or "value")
    unit = trip.get("unit") or _QUANTITY_UNITS.get(quantity, "")
    value = fmt.with_unit(trip.get("value"), unit) if fmt.is_number(trip.get("value")) else _raw(trip.get("value"))
    limit = fmt.with_unit(trip.get("limit"), unit) if fmt.is_number(trip.get("limit")) else _raw(trip.get("limit"))
    return f"Value against limit: {quantity} {value} against the limit {limit}."


def _raw(value: Any) -> str:
    return "not recorded" if value is None else str(value)
