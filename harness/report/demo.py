"""An invented run on an invented unit, for looking at the report and for the report's tests.

The lab, the unit, the instruments and every reading are made up. The results are derived from
the invented losses with the textbook formulas so that the page is self-consistent; they are not
a check of the calculation core, which has its own reference tests.
"""

from __future__ import annotations

import cmath
import dataclasses
import math
from typing import Any

from harness.report.bundle import ReportBundle

RATED_VA = 100e3
HV_V, LV_V = 11_000.0, 415.0
P0_MEASURED_W, P0_W = 236.4, 238.1
I0_A = 1.95
TEST_CURRENT_PU = 0.95
PK_TEST_W = 1520.0
PK_REF_W = 1873.6
Z_TEST_PCT = 3.876
STARTED = "2026-11-18T09:12:04+00:00"


def _rated_current(voltage: float) -> float:
    return RATED_VA / (math.sqrt(3) * voltage)


def _no_load() -> dict[str, Any]:
    i_rated = _rated_current(LV_V)
    return {
        "winding": "lv", "voltage_V": 415.1, "loss_measured_W": P0_MEASURED_W, "loss_W": P0_W,
        "current_A": I0_A, "current_pct": 100 * I0_A / i_rated,
        "power_factor": P0_MEASURED_W / (math.sqrt(3) * 415.1 * I0_A), "waveform_deviation_pct": 0.71,
    }


def _load() -> dict[str, Any]:
    loss_rated = PK_TEST_W / TEST_CURRENT_PU**2
    z_rated = Z_TEST_PCT / TEST_CURRENT_PU
    ur, ur_ref = 100 * loss_rated / RATED_VA, 100 * PK_REF_W / RATED_VA
    ux = math.sqrt(z_rated**2 - ur**2)
    return {
        "winding": "hv", "loss_measured_W": PK_TEST_W, "loss_W": loss_rated, "loss_ref_W": PK_REF_W,
        "impedance_measured_pct": Z_TEST_PCT, "impedance_pct": z_rated,
        "impedance_ref_pct": math.hypot(ur_ref, ux), "resistance_pct": ur_ref, "reactance_pct": ux,
        "test_current_pu": TEST_CURRENT_PU, "temperature_C": 21.6, "reference_temperature_C": 75.0,
    }


def _circuit(load: dict[str, Any]) -> dict[str, dict[str, float]]:
    """Star-equivalent per-phase values; the shunt branch from the LV test, the series from the HV."""
    i_core = P0_W / (math.sqrt(3) * LV_V)
    rc_lv = LV_V**2 / P0_W
    xm_lv = (LV_V / math.sqrt(3)) / math.sqrt(I0_A**2 - i_core**2)
    z_base_hv = HV_V**2 / RATED_VA
    req_hv, xeq_hv = load["resistance_pct"] / 100 * z_base_hv, load["reactance_pct"] / 100 * z_base_hv
    a2 = (HV_V / LV_V) ** 2
    return {
        "hv": {"Rc_ohm": rc_lv * a2, "Xm_ohm": xm_lv * a2, "Req_ohm": req_hv, "Xeq_ohm": xeq_hv},
        "lv": {"Rc_ohm": rc_lv, "Xm_ohm": xm_lv, "Req_ohm": req_hv / a2, "Xeq_ohm": xeq_hv / a2},
    }


def _efficiency(n: float, pf: float) -> float:
    output = n * RATED_VA * pf
    return 100 * output / (output + P0_W + n**2 * PK_REF_W)


def _regulation(n: float, pf: float, lagging: bool, ur: float, ux: float) -> dict[str, Any]:
    phi = math.acos(pf) * (1 if lagging else -1)
    v_in = 1 + n * cmath.exp(-1j * phi) * complex(ur, ux) / 100
    sin_phi = math.sin(phi)
    drop = n * (ur * pf + ux * sin_phi) + (n * (ux * pf - ur * sin_phi)) ** 2 / 200
    return {"load_pu": n, "power_factor": pf, "lagging": lagging,
            "regulation_pct": 100 * (abs(v_in) - 1), "voltage_drop_pct": drop}


def demo_results() -> dict[str, Any]:
    load = _load()
    loads = [round(0.1 * k, 2) for k in range(1, 13)]
    n_max = math.sqrt(P0_W / PK_REF_W)
    return {
        "rated_current_A": {"hv": _rated_current(HV_V), "lv": _rated_current(LV_V)},
        "no_load": _no_load(),
        "load": load,
        "equivalent_circuit": _circuit(load),
        "efficiency": [{"load_pu": n, "power_factor": pf, "efficiency_pct": _efficiency(n, pf)}
                       for pf in (1.0, 0.9, 0.8) for n in loads],
        "max_efficiency": {"load_pu": n_max, "efficiency_pct": _efficiency(n_max, 1.0)},
        "regulation": [_regulation(n, pf, lag, load["resistance_pct"], load["reactance_pct"])
                       for n in (0.5, 1.0) for pf, lag in ((1.0, True), (0.8, True), (0.8, False))],
        "checks": _checks(load),
        "warnings": ["load-loss test at 95 % of rated current: loss and impedance scaled to rated current"],
        "uncertainty": _uncertainty(),
        "load_series": [{"reading": k + 1, "winding_temperature_C": t, "current_A": 4.986, "power_W": p,
                         "loss_W": p / TEST_CURRENT_PU**2, "loss_ref_W": ref}
                        for k, (t, p, ref) in enumerate(((21.6, 1520.0, 1873.6), (24.9, 1538.2, 1873.1),
                                                         (27.8, 1554.1, 1874.0)))],
    }


def _checks(load: dict[str, Any]) -> list[dict[str, Any]]:
    total = P0_W + PK_REF_W
    return [
        {"quantity": "no_load_loss", "value": P0_W, "guaranteed": 250.0, "limit": 287.5, "passed": True},
        {"quantity": "no_load_current", "value": _no_load()["current_pct"], "guaranteed": 1.5, "limit": 1.95, "passed": True},
        {"quantity": "load_loss", "value": PK_REF_W, "guaranteed": 1800.0, "limit": 2070.0, "passed": True},
        {"quantity": "impedance", "value": load["impedance_ref_pct"], "guaranteed": 4.0, "limit": [3.6, 4.4], "passed": True},
        {"quantity": "total_loss", "value": total, "guaranteed": 2050.0, "limit": 2255.0, "passed": True},
    ]


def _uncertainty() -> dict[str, Any]:
    return {
        "no_load_loss_W": {"standard": 1.42, "expanded": 2.84, "k": 2.0, "budget": [
            {"source": "power analyser, power", "contribution_W": 0.95},
            {"source": "voltage transformer, ratio and phase", "contribution_W": 0.71},
            {"source": "current transformer, ratio and phase", "contribution_W": 0.62},
            {"source": "waveform correction", "contribution_W": 0.41},
        ]},
        "load_loss_ref_W": {"standard": 14.8, "expanded": 29.6, "k": 2.0, "budget": [
            {"source": "phase error at low power factor", "contribution_W": 11.9},
            {"source": "power analyser, power", "contribution_W": 6.1},
            {"source": "winding temperature", "contribution_W": 5.3},
            {"source": "d.c. winding resistance", "contribution_W": 2.2},
        ]},
    }


def _run(status: str = "passed", exit_code: int = 0) -> dict[str, Any]:
    return {
        "run_id": "20261118-091204-nf2", "status": status, "exit_code": exit_code,
        "started": STARTED, "finished": "2026-11-18T09:41:37+00:00",
        "lab": "Northfield Transformer Test Bay", "station": "Bay 2 (simulated)", "operator": "R. Adeyemi",
        "software_version": "0.1.0", "sequence_name": "routine-no-load-and-load-loss",
        "sequence_hash": "sha256:4f1c9a0e7b52d3a8", "station_hash": "sha256:b83e07d1c6a94f20", "standard": "iec",
    }


def _unit() -> dict[str, Any]:
    return {
        "rated_power_VA": RATED_VA, "phases": 3, "frequency_Hz": 50.0,
        "hv": {"rated_voltage_V": HV_V, "connection": "delta"},
        "lv": {"rated_voltage_V": LV_V, "connection": "star"},
        "winding_material": "copper", "serial": "HEW-26-0417",
        "maker": "Harrowgate Electric Works", "description": "100 kVA oil-immersed distribution transformer",
        "cooling": "ONAN", "insulation": "liquid-immersed", "thermal_class": 105, "year_of_manufacture": 2026,
        "standard_edition": "IEC 60076-1:2011",
    }


def _certificate() -> dict[str, Any]:
    """Resistances (line-to-line, converted with C = 235 to 75 degC), temperatures, calibration, one check."""
    def resistance(winding: str, pair: str, ohm: float, t: float) -> dict[str, Any]:
        return {"winding": winding, "terminals": pair, "ohm": ohm, "temperature_C": t,
                "ohm_ref": ohm * (235.0 + 75.0) / (235.0 + t), "reference_C": 75.0, "constant": 235.0,
                "material": "copper"}

    def calibration(role: str, due: str | None, cert: str | None, serial: str) -> dict[str, Any]:
        return {"role": role, "due": due, "certificate": cert, "serial": serial, "idn_serial": serial,
                "expired": False, "allowed": None}

    return {
        "resistances": [resistance("HV", pair, ohm, 20.4) for pair, ohm in (("1-2", 12.84), ("2-3", 12.91), ("3-1", 12.87))]
        + [resistance("LV", pair, ohm, 20.4) for pair, ohm in (("1-2", 0.01532), ("2-3", 0.01541), ("3-1", 0.01536))],
        "temperatures": [{"when": "1: ambient and oil before the test", "ambient": 19.8, "oil": 20.3, "winding": 20.4},
                         {"when": "3: no-load at rated voltage", "ambient": None, "oil": 20.5, "winding": None},
                         {"when": "load-loss test: mean winding temperature, as evaluated", "ambient": None,
                          "oil": None, "winding": 21.6}],
        "calibration": [calibration("source", "2027-04-30", "BW-CAL-26-118", "BW30-1187"),
                        calibration("analyser", "2027-02-28", "CM-CAL-26-0412", "CM73-00912"),
                        calibration("resistance_meter", "2027-02-28", "CM-CAL-26-0413", "CMR-3301"),
                        calibration("thermometer", None, None, "BWT-0442")],
        "approval": {"tested_by": "R. Adeyemi", "tested": "2026-11-18T09:41:37+00:00",
                     "rows": [{"approved": "2026-11-18T11:05:12+00:00", "name": "J. Okafor", "role": "checked",
                               "note": "", "results_sha256": "5d0c2f6a9be14c73" + "0" * 48, "results_match": True}],
                     "approved": False, "changed_after": False, "results_sha256": "5d0c2f6a9be14c73" + "0" * 48},
    }


def _instruments() -> list[dict[str, Any]]:
    def one(role: str, maker: str, model: str, serial: str, port: int, profile: str, due: str | None) -> dict[str, Any]:
        return {"role": role, "identity": {"maker": maker, "model": model, "serial": serial, "firmware": "2.04"},
                "resource": f"TCPIP::127.0.0.1::{port}::SOCKET", "profile": profile, "calibration_due": due}

    return [
        one("source", "Brightwater Instruments", "BW-PS30", "BW30-1187", 5025, "generic-ac-source", "2027-04-30"),
        one("analyser", "Corvid Metrology", "CM-7300", "CM73-00912", 5026, "generic-power-analyser", "2027-02-28"),
        one("resistance_meter", "Corvid Metrology", "CM-R10", "CMR-3301", 5027, "generic-resistance-meter", "2027-02-28"),
        one("thermometer", "Brightwater Instruments", "BW-T4", "BWT-0442", 5028, "generic-thermometer", None),
    ]


def _readings() -> list[dict[str, Any]]:
    def one(tag: str, step: int, mean: tuple[float, ...], std: tuple[float, ...], stable: bool = True) -> dict[str, Any]:
        keys = ("u_rms", "u_mean", "i_rms", "p")
        return {"tag": tag, "step": step, "count": 20, "mean": dict(zip(keys, mean)), "std": dict(zip(keys, std)), "stable": stable}

    return [
        one("no-load at rated voltage", 2, (415.1, 412.2, I0_A, P0_MEASURED_W), (0.21, 0.19, 0.0042, 0.38)),
        one("load at test current", 5, (426.4, 425.9, 4.986, PK_TEST_W), (0.33, 0.31, 0.0061, 1.9)),
        one("load, first attempt", 5, (421.7, 421.0, 4.931, 1486.0), (2.9, 2.8, 0.034, 21.0), stable=False),
    ]


def _ramp(duration_s: float, hold_s: float, peak: float) -> tuple[list[float], list[float]]:
    t = [round(0.5 * k, 2) for k in range(int((duration_s + hold_s) / 0.5) + 1)]
    return t, [peak * min(1.0, x / duration_s) for x in t]


def _traces() -> list[dict[str, Any]]:
    t0, u0 = _ramp(24.0, 8.0, 415.1)
    i0 = [I0_A * (0.55 * (u / 415.1) + 0.45 * (u / 415.1) ** 7) for u in u0]
    p0 = [P0_MEASURED_W * (u / 415.1) ** 1.9 for u in u0]
    t1, i1 = _ramp(20.0, 8.0, 4.986)
    u1 = [426.4 * i / 4.986 for i in i1]
    p1 = [PK_TEST_W * (i / 4.986) ** 2 for i in i1]
    return [
        {"step": 2, "tag": "no-load ramp to rated voltage", "t_s": t0, "u_V": u0, "i_A": i0, "p_W": p0,
         "limits": {"voltage_V": 456.0, "current_A": 4.0, "power_W": 600.0}},
        {"step": 5, "tag": "load ramp to test current", "t_s": t1, "u_V": u1, "i_A": i1, "p_W": p1,
         "limits": {"voltage_V": 700.0, "current_A": 5.8, "power_W": 2500.0}},
    ]


def _sweep() -> list[dict[str, Any]]:
    points = []
    for pct in range(50, 115, 5):
        x = pct / 100
        points.append({"u_pct": float(pct), "u_V": LV_V * x, "i_A": I0_A * (0.55 * x + 0.45 * x**7),
                       "p_W": P0_W * x**1.9})
    return points


def _events() -> list[dict[str, Any]]:
    rows = [
        (0.0, "09:12:04", "start", "sequence and station validated; instruments identified"),
        (3.1, "09:12:07", "safety", "source output off and setpoint at zero confirmed"),
        (41.8, "09:12:46", "reading", "no-load at rated voltage: 20 samples, stable"),
        (58.2, "09:13:02", "safe-state", "source at zero, output off, de-energisation confirmed (4.1 V)"),
        (60.0, "09:13:04", "prompt", "operator: fit the short-circuit link on the LV terminals"),
        (1604.5, "09:38:48", "prompt", "operator confirmed: link fitted, gate closed"),
        (1651.0, "09:39:35", "reading", "load, first attempt: not stable, repeated"),
        (1683.3, "09:40:07", "reading", "load at test current: 20 samples, stable"),
        (1712.9, "09:40:37", "safe-state", "source at zero, output off, de-energisation confirmed (0.6 V)"),
        (1773.0, "09:41:37", "end", "run complete: all checks passed"),
    ]
    return [{"t_s": t, "time": f"2026-11-18T{clock}+00:00", "kind": kind, "text": text} for t, clock, kind, text in rows]


def demo_bundle() -> ReportBundle:
    """A complete, passed run: every section of the report has something to show."""
    return ReportBundle(
        run=_run(), unit=_unit(), instruments=_instruments(), results=demo_results(), readings=_readings(),
        traces=_traces(), sweep=_sweep(), events=_events(),
        warnings=["thermometer has no calibration due date in the station file"], certificate=_certificate(),
    )


def demo_tripped_bundle(status: str = "tripped", exit_code: int = 3) -> ReportBundle:
    """The same unit tripped on over-current during the no-load ramp: only part of the results."""
    full = demo_bundle()
    trace = dict(full.traces[0])
    cut = next(i for i, t in enumerate(trace["t_s"]) if t >= 19.0)
    for key in ("t_s", "u_V", "i_A", "p_W"):
        trace[key] = trace[key][: cut + 1]
    trace["i_A"] = trace["i_A"][:-2] + [3.6, 4.12]
    trip = {"cause": "current over limit", "quantity": "current", "value": 4.12, "limit": 4.0,
            "step": 2, "time": "2026-11-18T09:12:42+00:00", "t_s": trace["t_s"][-1]}
    events = full.events[:2] + [{"t_s": 38.0, "time": trip["time"], "kind": "trip",
                                 "text": "current 4.12 A over the test limit 4.0 A in step 2"}]
    return dataclasses.replace(
        full, run={**full.run, "status": status, "exit_code": exit_code, "finished": trip["time"]},
        results={"rated_current_A": full.results["rated_current_A"]}, readings=[], traces=[trace], sweep=[],
        events=events, trip=trip, warnings=[],
    )
