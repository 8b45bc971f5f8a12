"""The results as readable tables on a terminal (rich)."""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from rich.console import Console
from rich.table import Table
from rich.text import Text

from harness.calc.results import Results

_NO_LOAD_ROWS = (
    ("No-load loss", "loss_W", "W"), ("  as measured", "loss_measured_W", "W"),
    ("  waveform correction factor", "waveform_correction_factor", ""),
    ("  mean-value vs rms deviation", "waveform_deviation_pct", "%"),
    ("  temperature correction factor", "temperature_correction_factor", ""),
    ("No-load current", "current_A", "A"), ("  of rated current", "current_pct", "%"),
    ("Power factor", "power_factor", ""),
    ("Spread of line voltages", "voltage_spread_pct", "%"), ("Spread of line currents", "current_spread_pct", "%"),
)
_LOAD_ROWS = (
    ("Test current", "test_current_pu", "p.u."), ("Load loss, as measured", "loss_measured_W", "W"),
    ("Load loss at rated current", "loss_W", "W"), ("  I2R part", "i2r_loss_W", "W"),
    ("  additional part", "additional_loss_W", "W"), ("Load loss at reference temperature", "loss_ref_W", "W"),
    ("Reference temperature", "reference_temperature_C", "degC"),
    ("Winding temperature in the test", "test_temperature_C", "degC"),
    ("Impedance voltage", "impedance_pct", "%"), ("  at reference temperature", "impedance_ref_pct", "%"),
    ("Resistance voltage", "resistance_pct", "%"), ("  at reference temperature", "resistance_ref_pct", "%"),
    ("Reactance voltage", "reactance_pct", "%"), ("Spread of line currents", "current_spread_pct", "%"),
)


def fmt(value: Any) -> str:
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.5g}" if abs(value) < 1e5 else f"{value:.4e}"
    return str(value)


def _table(title: str, columns: Iterable[str], rows: Iterable[Iterable[Any]]) -> Table:
    table = Table(title=title, title_justify="left")
    for i, column in enumerate(columns):
        table.add_column(column, justify="left" if i == 0 else "right")
    for row in rows:
        table.add_row(*(fmt(v) for v in row))
    return table


def _section(title: str, section: dict[str, Any] | None, spec) -> Table | None:
    if section is None:
        return None
    rows = [(label, section.get(key), unit) for label, key, unit in spec if section.get(key) is not None]
    return _table(title, ("quantity", "value", "unit"), rows)


def _circuit(data: dict[str, Any]) -> Table:
    keys = ("Rc_ohm", "Xm_ohm", "Req_ohm", "Xeq_ohm")
    circuit = data["equivalent_circuit"]
    rows = [(w, *(circuit[w][k] for k in keys)) for w in ("hv", "lv")]
    return _table("Equivalent circuit per phase (star-equivalent), ohm", ("referred to", "Rc", "Xm", "Req", "Xeq"),
                  rows)


def _efficiency(data: dict[str, Any]) -> Table:
    rows = [(r["load_pu"], r["power_factor"], r["efficiency_pct"], r["losses_W"]) for r in data["efficiency"]]
    m = data["max_efficiency"]
    if m is not None:
        rows.append((f"max at {fmt(m['load_pu'])}", 1.0, m["efficiency_pct"], None))
        if m["all_day_efficiency_pct"] is not None:
            rows.append(("all day", None, m["all_day_efficiency_pct"], None))
    return _table("Efficiency", ("load, p.u.", "power factor", "efficiency, %", "losses, W"), rows)


def _regulation(data: dict[str, Any]) -> Table:
    rows = [(r["load_pu"], r["power_factor"], "unity" if r["power_factor"] == 1.0 else
             ("lagging" if r["lagging"] else "leading"), r["regulation_pct"], r["voltage_drop_pct"])
            for r in data["regulation"]]
    return _table("Regulation", ("load, p.u.", "power factor", "sense", "exact, %", "IEC 60076-8 drop, %"), rows)


def _checks(data: dict[str, Any]) -> Table:
    rows = [(_CHECK_LABELS.get(c["quantity"], c["quantity"].replace("_", " ").capitalize()), c["value"], c["guaranteed"], _limit(c["limit"]), c["unit"],
             _verdict(c), c.get("source") or "-") for c in data["checks"]]
    source = data.get("tolerance_source")
    title = f"Checks against guarantees ({source} tolerances)" if source else "Checks against guarantees"
    return _table(title, ("quantity", "value", "guaranteed", "limit", "unit", "verdict", "source"), rows)


def _compliance(data: dict[str, Any]) -> Table:
    rows = [(c["rule"], c["quantity"], c["value"], f">= {fmt(c['limit'])}", c["margin"], c["unit"],
             "PASS" if c["passed"] else "FAIL", c["source"]) for c in data["compliance"]]
    return _table("Efficiency regulations", ("rule", "quantity", "value", "limit", "margin", "unit", "verdict",
                                             "source"), rows)


# The checks' quantities in the words the report uses ("No-load loss", with its hyphen).
_CHECK_LABELS = {"no_load_loss": "No-load loss", "no_load_current": "No-load current", "load_loss": "Load loss",
                 "total_loss": "Total losses", "impedance": "Short-circuit impedance"}


def _ratio(ratio: dict[str, Any]) -> Table:
    rows = [(f"{t['tap']:+d}" if t["tap"] else "0", p["phase"] or "-", f"{p['declared']:.6g}", f"{p['measured']:.6g}",
             f"{p['deviation_pct']:+.3f}", f"±{p['limit_pct']:.3g}", p["phase_displacement_deg"], p["clock"],
             "PASS" if p["passed"] and p["clock_passed"] is not False else "FAIL")
            for t in ratio["taps"] for p in t["phases"]]
    return _table(f"Voltage ratio ({str(ratio['fed_winding']).upper()} fed; deviation and limit in %, LV lag in degrees)",
                  ("tap", "phases", "declared", "measured", "deviation", "limit", "lag", "clock", "verdict"), rows)


def _verdict(check: dict[str, Any]) -> str:
    verdict = "PASS" if check["passed"] else "FAIL"
    return f"{verdict} (uncertain)" if check.get("uncertain") else verdict


_UNCERTAINTY_LABELS = {"no_load_loss_W": ("No-load loss", "W"), "no_load_current_pct": ("No-load current", "%"),
                       "load_loss_ref_W": ("Load loss at reference temperature", "W"),
                       "load_loss_W": ("Load loss at rated current", "W"), "total_loss_W": ("Total losses", "W"),
                       "impedance_ref_pct": ("Impedance at reference temperature", "%"),
                       "impedance_pct": ("Impedance at rated current", "%")}


def _uncertainty(data: dict[str, Any]) -> Table:
    rows = []
    for key, u in data["uncertainty"].items():
        label, unit = _UNCERTAINTY_LABELS.get(key, (key, ""))
        top = u["budget"][0] if u["budget"] else None
        largest = f"{top['source']} ({top['share_pct']:.0f} %)" if top else "-"
        rows.append((label, u["value"], f"± {u['expanded']:.3g}", unit, f"{u['relative_expanded_pct']:.3g}", largest))
    return _table("Corrected values and expanded uncertainties (k = 2)",
                  ("quantity", "value", "U", "unit", "U, %", "largest contributor"), rows)


def _corrections(data: dict[str, Any]) -> Table:
    keys = (("voltage_ratio_correction_factor", "voltage ratio correction"),
            ("current_ratio_correction_factor", "current ratio correction"),
            ("net_phase_displacement_rad", "net phase displacement, rad"), ("power_read_W", "power read, W"),
            ("power_corrected_W", "power corrected, W"), ("power_correction_pct", "power correction, %"))
    tests = [t for t in ("no_load", "load") if t in data["corrections"]]
    rows = [(label, *(data["corrections"][t][k] for t in tests)) for k, label in keys]
    return _table("Measurement-chain corrections", ("quantity", *(t.replace("_", "-") + " test" for t in tests)), rows)


def _limit(limit: Any) -> str:
    return f"{fmt(limit[0])} .. {fmt(limit[1])}" if isinstance(limit, list) else f"<= {fmt(limit)}"


def render_results(results: Results, console: Console) -> None:
    """Print every part of the results that the evaluation produced, then the warnings."""
    render_results_dict(results.to_dict(), console)


def render_results_dict(data: dict[str, Any], console: Console) -> None:
    """The same from the results contract as plain data (as stored with a run)."""
    rated = data["rated_current_A"]
    console.print(f"Rated current: hv {fmt(rated['hv'])} A, lv {fmt(rated['lv'])} A")
    tables = [_section("No-load test", data["no_load"], _NO_LOAD_ROWS),
              _section("Load-loss test", data["load"], _LOAD_ROWS), _circuit(data)]
    tables += [t for t, present in ((_efficiency(data), data["efficiency"]),
                                    (_regulation(data), data["regulation"]), (_checks(data), data["checks"]))
               if present]
    if data.get("ratio"):
        tables.append(_ratio(data["ratio"]))
    if data.get("compliance"):
        tables.append(_compliance(data))
    if data.get("corrections"):
        tables.append(_corrections(data))
    if data.get("uncertainty"):
        tables.append(_uncertainty(data))
    for table in tables:
        if table is not None:
            console.print(table)
    for warning in data["warnings"]:
        console.print(Text.assemble(("warning: ", "bold"), warning))
