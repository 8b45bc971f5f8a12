"""The self-contained HTML report: jinja2 templates, one inline stylesheet, figures as inline SVG.

Nothing is loaded from outside the file, so it opens offline and archives as one document.
"""

from __future__ import annotations

from importlib import resources
from typing import Any

import jinja2
from markupsafe import Markup

from harness.report import fmt, tables
from harness.report.banner import banner
from harness.report.certificate import certificate_context
from harness.report.bundle import ReportBundle
from harness.report.figures import circuit_figure, efficiency_figure, excitation_figure, ratio_figure, trace_figure

STANDARDS = {"iec": "IEC 60076-1", "ieee": "IEEE C57.12.90"}

STATUS_TEXT = {
    "passed": ("✔", "PASSED", "the run completed and every check passed"),
    "failed": ("✘", "FAILED", "the run completed but the unit is outside a tolerance"),
    "tripped": ("⚠", "TRIPPED", "a limit or fault stopped the run; safe state confirmed"),
    "aborted": ("■", "ABORTED", "the operator stopped the run; safe state confirmed"),
    "unsafe": ("⚠", "UNSAFE", "safe state NOT confirmed: the bay may still be live"),
    "evaluated": ("ℹ", "EVALUATED", "results evaluated from a hand-entered record"),
    "incomplete": ("⚠", "INCOMPLETE", "the run stopped before its end; the record is partial"),
}


def render_html(bundle: ReportBundle) -> str:
    """The report page of ``bundle`` as one HTML document."""
    template = _environment().get_template("report.html.j2")
    return template.render(**context(bundle))


def _environment() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.PackageLoader("harness.report", "templates"),
        autoescape=True, undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True,
    )
    env.filters["num"] = fmt.num
    env.filters["when"] = fmt.when_text
    return env


def stylesheet() -> str:
    return resources.files("harness.report").joinpath("templates", "report.css").read_text(encoding="utf-8")


def context(bundle: ReportBundle) -> dict[str, Any]:
    """Everything the template shows, as text and rows; the template only lays it out."""
    results = bundle.results
    symbol, word, meaning = STATUS_TEXT[bundle.status]
    return {
        "run": _run_fields(bundle.run), "status": {"symbol": symbol, "word": word, "meaning": meaning, "key": bundle.status},
        "banner": banner(bundle), "cautions": bundle.cautions, "css": Markup(stylesheet()),
        "title": _title(bundle), "unit_name": _text(bundle.unit.get("description")), "serial": _text(bundle.unit.get("serial")), "nameplate": nameplate_rows(bundle.unit), "instruments": instrument_rows(bundle.instruments),
        "standard": _standard(bundle.run, results), "main_rows": tables.main_rows(results),
        "tolerance_source": results.get("tolerance_source"), "compliance": tables.compliance_rows(results),
        "phase_rows": tables.phase_rows(results.get("phases")), "phase_notes": tables.phase_notes(results.get("phases")),
        "no_load": tables.detail_rows(results.get("no_load")), "load": tables.detail_rows(results.get("load")),
        "rated_current": tables.detail_rows(_rated_currents(results)),
        "circuit": tables.circuit_rows(results.get("equivalent_circuit") or {}),
        "circuit_sides": [s.upper() for s in ("hv", "lv") if isinstance((results.get("equivalent_circuit") or {}).get(s), dict)],
        "efficiency": tables.efficiency_table(results.get("efficiency") or []),
        "max_efficiency": _max_efficiency(results.get("max_efficiency")),
        "all_day_efficiency": _all_day(results.get("max_efficiency")),
        "regulation": tables.regulation_rows(results.get("regulation") or []),
        "readings": tables.reading_rows(bundle.readings), "events": _event_rows(bundle.events),
        "warnings": bundle.all_warnings(), "uncertainty": tables.uncertainty_rows(results.get("uncertainty")),
        "figures": _figures(bundle), "has_sweep": bool(bundle.sweep),
        "cert": certificate_context(bundle, _standard_key(bundle.run, results), nameplate_rows(bundle.unit)),
        "ratio_rows": tables.ratio_rows(results.get("ratio")), "ratio_note": tables.ratio_note(results.get("ratio")),
    }


def _title(bundle: ReportBundle) -> str:
    unit = bundle.unit
    name = unit.get("description") or "transformer"
    serial = unit.get("serial")
    return f"Routine test report: {name}" + (f", serial {serial}" if serial else "")


def _run_fields(run: dict[str, Any]) -> dict[str, str]:
    keys = ("run_id", "lab", "station", "operator", "software_version", "sequence_name", "sequence_hash", "station_hash")
    fields = {k: fmt.DASH if run.get(k) in (None, "") else str(run[k]) for k in keys}
    fields.update(started=fmt.when_text(run.get("started")), finished=fmt.when_text(run.get("finished")),
                  exit_code=fmt.DASH if run.get("exit_code") is None else str(run["exit_code"]))
    return fields


def _standard_key(run: dict[str, Any], results: dict[str, Any]) -> str:
    return str(run.get("standard") or results.get("standard") or "").lower()


def _standard(run: dict[str, Any], results: dict[str, Any]) -> str:
    key = _standard_key(run, results)
    return STANDARDS.get(key, key.upper() or fmt.DASH)


def _rated_currents(results: dict[str, Any]) -> dict[str, Any]:
    rated = results.get("rated_current_A") or {}
    return {f"{side.upper()} winding_A": value for side, value in rated.items()} if isinstance(rated, dict) else {}


def _max_efficiency(maximum: Any) -> str | None:
    if not isinstance(maximum, dict) or not fmt.is_number(maximum.get("efficiency_pct")):
        return None
    load = maximum.get("load_pu")
    at = f" at {fmt.num(load * 100, 3)} % of rated load" if fmt.is_number(load) else ""
    return f"{fmt.num(maximum['efficiency_pct'], 5)} %{at} (unity power factor)"


def _all_day(maximum: Any) -> str | None:
    value = maximum.get("all_day_efficiency_pct") if isinstance(maximum, dict) else None
    return f"{fmt.num(value, 5)} %" if fmt.is_number(value) else None


def nameplate_rows(unit: dict[str, Any]) -> list[tuple[str, str]]:
    rows = [
        ("Maker", _text(unit.get("maker"))), ("Description", _text(unit.get("description"))),
        ("Serial number", _text(unit.get("serial"))), ("Rated power", fmt.eng(unit.get("rated_power_VA"), "VA")),
        ("Phases", _text(unit.get("phases"))), ("Rated frequency", fmt.with_unit(unit.get("frequency_Hz"), "Hz")),
        ("HV winding", _winding(unit.get("hv"))), ("LV winding", _winding(unit.get("lv"))),
        ("Winding material", _text(unit.get("winding_material"))),
    ]
    if unit.get("vector_group"):
        rows.insert(rows.index(("Phases", _text(unit.get("phases")))) + 1, ("Vector group", str(unit["vector_group"])))
    return rows + _rating_plate_rows(unit)


def _rating_plate_rows(unit: dict[str, Any]) -> list[tuple[str, str]]:
    """The certificate's rating-plate fields, those the sequence gives."""
    thermal = unit.get("thermal_class")
    fields = (("Cooling", unit.get("cooling")), ("Insulation", unit.get("insulation")),
              ("Thermal class", f"{thermal} °C (IEC 60085)" if thermal else None),
              ("Year of manufacture", unit.get("year_of_manufacture")),
              ("Standard and edition", unit.get("standard_edition")))
    return [(label, str(value)) for label, value in fields if value not in (None, "")]


def _winding(winding: Any) -> str:
    if not isinstance(winding, dict):
        return fmt.DASH
    text = fmt.eng(winding.get("rated_voltage_V", winding.get("rated_voltage")), "V")
    if not winding.get("connection"):
        return text
    return f"{text}, {winding['connection']}" + (" with neutral brought out" if winding.get("neutral") else "")


def _text(value: Any) -> str:
    return fmt.DASH if value in (None, "") else str(value)


def instrument_rows(instruments: list[dict[str, Any]]) -> list[dict[str, str]]:
    def row(inst: dict[str, Any]) -> dict[str, str]:
        identity = inst.get("identity") or {}
        idn = ", ".join(str(identity.get(k) or fmt.DASH) for k in ("maker", "model", "serial", "firmware"))
        due = inst.get("calibration_due")
        return {"role": _text(inst.get("role")).replace("_", " "), "idn": idn, "resource": _text(inst.get("resource")),
                "profile": _text(inst.get("profile")), "due": str(due) if due else "not given by the station"}

    return [row(i) for i in instruments]


def _event_rows(events: list[dict[str, Any]]) -> list[tuple[str, str, str, str]]:
    return [(fmt.fixed(e.get("t_s"), 1), fmt.when_text(e.get("time")),
             _text(e.get("kind")), _text(e.get("text"))) for e in events]


def _figures(bundle: ReportBundle) -> dict[str, Any]:
    results = bundle.results
    voltages = {s: (bundle.unit.get(s) or {}).get("rated_voltage_V") for s in ("hv", "lv")}
    traces = [(t, trace_figure(t, i, bundle.trip)) for i, t in enumerate(bundle.traces)]
    return {
        "circuit": _markup(circuit_figure(results.get("equivalent_circuit") or {}, voltages)),
        "efficiency": _markup(efficiency_figure(results.get("efficiency") or [], results.get("max_efficiency"))),
        "excitation": _markup(excitation_figure(bundle.sweep)),
        "ratio": _markup(ratio_figure(results.get("ratio"))),
        "traces": [(_text(t.get("tag")), _text(t.get("step")), _markup(svg)) for t, svg in traces if svg],
    }


def _markup(svg: str | None) -> Markup | None:
    # The SVG comes from matplotlib, with our text escaped by its writer: safe to insert as is.
    return Markup(svg) if svg else None
