"""The certificate parts of the report: the summary page, test conditions (winding resistances,
temperatures), the load-loss series, calibration of the instruments, the approval block, and the
page footer of the printed copy.

Reads the bundle's ``certificate`` mapping (filled by ``harness.runner.certificate``) and the
results; everything may be missing, as for the rest of the report.
"""

from __future__ import annotations

from typing import Any

from markupsafe import Markup

from harness.report import fmt, tables
from harness.report.bundle import ReportBundle
from harness.report.figures import load_series_figure

# The routine tests the harness performs and where the test code describes them
# (IEC 60076-1:2011 clause numbers, recalled from memory; IEEE C57.12.90 sections likewise).
ROUTINE_TESTS = (
    ("resistance", "Measurement of winding resistance", "IEC 60076-1, 11.2", "IEEE C57.12.90, 5"),
    ("ratio", "Measurement of voltage ratio and check of phase displacement", "IEC 60076-1, 11.3",
     "IEEE C57.12.90, 6"),
    ("no_load", "Measurement of no-load loss and current", "IEC 60076-1, 11.5", "IEEE C57.12.90, 8"),
    ("load", "Measurement of short-circuit impedance and load loss", "IEC 60076-1, 11.4", "IEEE C57.12.90, 9"),
)

# The sign-off a routine-test certificate carries besides the operator's (common practice, no source).
SIGN_OFF_ROLES = ("checked", "approved")


def certificate_context(bundle: ReportBundle, standard_key: str, nameplate: list[tuple[str, str]]
                        ) -> dict[str, Any]:
    """Everything the certificate blocks of the template show, as text."""
    cert = bundle.certificate
    results = bundle.results
    return {
        "tests": tests_performed(bundle, standard_key),
        "nameplate": summary_nameplate(bundle.unit, nameplate),
        "headline": tables.main_rows(results),
        "resistances": resistance_rows(cert.get("resistances") or []),
        "resistance_basis": _resistance_basis(cert.get("resistances") or []),
        "temperatures": temperature_rows(cert.get("temperatures") or []),
        "load_series": load_series_rows(results.get("load_series") or []),
        "load_series_figure": _markup(load_series_figure(results.get("load_series") or [])),
        "calibration": calibration_rows(cert.get("calibration") or []),
        "approval": approval_rows(cert.get("approval")),
        "time_scale": time_scale_text(cert.get("time_scale")),
        "footer_css": footer_css(bundle),
    }


def summary_nameplate(unit: dict[str, Any], nameplate: list[tuple[str, str]]) -> list[tuple[str, str]]:
    """The nameplate rows but those the identity table above already shows, and empty ones."""
    shown = {"Description", "Serial number"}
    return [(label, value) for label, value in nameplate if label not in shown and value != fmt.DASH]


def tests_performed(bundle: ReportBundle, standard_key: str) -> list[dict[str, str]]:
    """Each routine test: performed or not in this run, with the clause that describes it."""
    done = {"resistance": bool(bundle.certificate.get("resistances")),
            "ratio": bool(bundle.results.get("ratio")),
            "no_load": bool(bundle.results.get("no_load")), "load": bool(bundle.results.get("load"))}
    return [{"name": name, "clause": ieee if standard_key == "ieee" else iec,
             "done": "performed" if done[key] else "not performed in this run"}
            for key, name, iec, ieee in ROUTINE_TESTS]


def resistance_rows(rows: list[dict[str, Any]]) -> list[dict[str, str]]:
    return [{"winding": str(r.get("winding") or fmt.DASH), "terminals": str(r.get("terminals") or "—"),
             "ohm": fmt.num(r.get("ohm"), 6), "temperature": fmt.fixed(r.get("temperature_C"), 1),
             "ohm_ref": fmt.num(r.get("ohm_ref"), 6), "reference": fmt.fixed(r.get("reference_C"), 0)} for r in rows]


def _resistance_basis(rows: list[dict[str, Any]]) -> str:
    if not rows:
        return ""
    first = rows[0]
    if first.get("constant") is None:
        return ("Not converted: the nameplate gives no winding material, so the temperature constant "
                "is not known.")
    return (f"Converted with R₂ = R₁ (C + θ₂) / (C + θ₁), C = {fmt.num(first['constant'])} for "
            f"{first.get('material')} windings, to {fmt.fixed(first.get('reference_C'), 0)} °C.")


def temperature_rows(rows: list[dict[str, Any]]) -> list[dict[str, str]]:
    return [{"when": str(r.get("when") or fmt.DASH), "ambient": fmt.fixed(r.get("ambient"), 1),
             "oil": fmt.fixed(r.get("oil"), 1), "winding": fmt.fixed(r.get("winding"), 1)} for r in rows]


def load_series_rows(series: list[dict[str, Any]]) -> list[dict[str, str]]:
    """Only a repeated load-loss reading makes a series worth showing."""
    if len(series) < 2:
        return []
    return [{"reading": str(p.get("reading", k + 1)), "temperature": fmt.fixed(p.get("winding_temperature_C"), 1),
             "current": fmt.num(p.get("current_A"), 5), "power": fmt.num(p.get("power_W"), 5),
             "loss": fmt.num(p.get("loss_W"), 5), "loss_ref": fmt.num(p.get("loss_ref_W"), 5)}
            for k, p in enumerate(series)]


def calibration_rows(rows: list[dict[str, Any]]) -> list[dict[str, str]]:
    def state(r: dict[str, Any]) -> str:
        if not r.get("due"):
            return "no calibration date given by the station"
        if r.get("expired"):
            return f"EXPIRED {r['due']}; allowed by the station: {r.get('allowed') or '(no reason)'}"
        return f"due {r['due']}"

    def serial(r: dict[str, Any]) -> str:
        given, idn = r.get("serial"), r.get("idn_serial")
        if not given:
            return f"{idn or fmt.DASH} (*IDN?; the station names none)"
        return f"{given} (matches *IDN?)" if given == idn else f"{given} (station); *IDN? gave {idn or fmt.DASH}"

    return [{"role": str(r.get("role", "")).replace("_", " "), "state": state(r),
             "certificate": str(r.get("certificate") or fmt.DASH), "serial": serial(r),
             "expired": bool(r.get("expired"))} for r in rows]


def approval_rows(approval: Any) -> dict[str, Any]:
    approval = approval if isinstance(approval, dict) else {}
    rows = [{"role": str(a.get("role") or fmt.DASH), "name": str(a.get("name") or fmt.DASH),
             "when": fmt.when_text(a.get("approved")), "note": str(a.get("note") or ""),
             "hash": str(a.get("results_sha256") or "")[:16],
             "valid": bool(a.get("results_match")), "open": False} for a in approval.get("rows") or []]
    given = {r["role"].lower() for r in rows if r["valid"]}
    missing = [role for role in SIGN_OFF_ROLES if role not in given]
    return {"tested_by": str(approval.get("tested_by") or fmt.DASH), "tested": fmt.when_text(approval.get("tested")),
            "rows": _sign_off_order(rows), "missing": missing,
            "approved": bool(approval.get("approved")) and "approved" not in missing,
            "changed_after": bool(approval.get("changed_after")),
            "results_hash": str(approval.get("results_sha256") or "")}


def _sign_off_order(rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Checked, then approved (an open row where there is none yet), then any other role and any
    approval of other results, each in the order given."""
    ordered: list[dict[str, Any]] = []
    for role in SIGN_OFF_ROLES:
        mine = [r for r in rows if r["valid"] and r["role"].lower() == role]
        ordered += mine or [{"role": role, "name": "not yet", "when": "", "note": "", "hash": "", "valid": True,
                             "open": True}]
    return ordered + [r for r in rows if r not in ordered]


def time_scale_text(scale: Any) -> str | None:
    if scale == "stepped":
        return ("Simulated bay on a stepped clock: bay time moved only while the runner waited, so every time "
                "shown (event log, trace axes) is in the bay's seconds and none is the run's duration.")
    if not fmt.is_number(scale):
        return None
    return (f"Simulated bay run at {fmt.num(scale)} × real time: every time shown (event log, trace axes) "
            f"is in the bay's seconds.")


FOOTER_FONT = 'font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; font-size: 8pt; color: #333;'


def footer_css(bundle: ReportBundle) -> Markup:
    """The printed copy's running footer: serial and run id at the left, page x of y at the right
    (CSS page-margin boxes, which Chromium prints)."""
    serial = bundle.unit.get("serial") or "serial not given"
    text = f"Serial {serial} · run {bundle.run.get('run_id')}"
    left = f'@bottom-left {{ content: "{_css_string(text)}"; {FOOTER_FONT} }}'
    right = f'@bottom-right {{ content: "page " counter(page) " of " counter(pages); {FOOTER_FONT} }}'
    return Markup(f"@page {{ {left} {right} }}")


def _css_string(text: str) -> str:
    """Text inside a CSS double-quoted string in a <style> element: escape what could end it."""
    out = []
    for ch in str(text):
        if ch in '"\\<>&' or ord(ch) < 0x20:
            out.append(f"\\{ord(ch):x} ")
        else:
            out.append(ch)
    return "".join(out)


def _markup(svg: str | None) -> Markup | None:
    return Markup(svg) if svg else None
