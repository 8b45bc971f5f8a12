"""The loss measurement model written out again, formula by formula, for the outside checks.

An independent statement of the model that ``harness.calc.uncertainty`` propagates through the
evaluation's own functions: the test-code formulas (reference notes: scaling to rated current,
the I2R/additional split of IEC 60076-1 Annex E, per-unit impedance, IEC waveform correction
1 + d) and the phasor correction of the measurement chain. Written over a small numeric namespace
so the same text runs on ``uncertainties`` ufloats (linear propagation) and on numpy arrays
(Monte Carlo, JCGM 101).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

C_COPPER = 235.0   # IEC 60076-1, copper
SQRT3 = math.sqrt(3.0)


@dataclass(frozen=True)
class Spec:
    """An input: its value, its standard uncertainty and its distribution."""
    value: float
    u: float
    kind: str  # "normal" or "rectangular"


def _vals(x: Any) -> list[float]:
    return list(x) if isinstance(x, tuple) else [x]


def _rect(bound: float) -> float:
    return bound / math.sqrt(3.0)


def _cert(expanded: float) -> float:
    return expanded / 2.0


def specs(record) -> dict[str, Spec]:
    """The inputs of the model for ``record`` (data-sheet bounds rectangular, certificates normal, k = 2)."""
    chain, n = record.measurement_chain, record.transformer.phases
    out: dict[str, Spec] = {}
    for k in range(n):
        ch = chain.channels[k]
        for kind, it in (("vt", ch.voltage_transformer), ("ct", ch.current_transformer)):
            if it is None:
                continue
            conv = _rect if it.distribution == "rectangular" else _cert
            out[f"{kind}{k}.eps"] = Spec(it.ratio_error, conv(it.ratio_error_uncertainty), it.distribution)
            out[f"{kind}{k}.delta"] = Spec(it.phase_displacement, conv(it.phase_displacement_uncertainty),
                                           it.distribution)
    for name in ("no_load", "load"):
        test = getattr(record, name)
        if test is not None:
            out.update(_test_specs(name, test, chain, n))
    if record.no_load is not None and record.no_load.voltage_mean is not None:
        out["waveform"] = Spec(0.0, _rect(100.0), "rectangular")  # % of the correction
    meter, thermo = chain.resistance_meter, chain.thermometer
    for w in ("hv", "lv"):
        r = getattr(record.winding_resistance, w)
        for j, v in enumerate(_vals(r.resistance)):
            out[f"R{w}{j}"] = Spec(v, _rect(v * meter.reading / 100 + meter.offset), "rectangular")
        out[f"T{w}"] = Spec(r.temperature, _rect(thermo.accuracy), "rectangular")
    out["Tload"] = Spec(record.load.temperature, _rect(thermo.accuracy), "rectangular")
    return out


def _test_specs(name: str, test, chain, n: int) -> dict[str, Spec]:
    out: dict[str, Spec] = {}
    s = test.samples
    for field, sd in (("voltage", s.voltage_sd), ("voltage_mean", s.voltage_mean_sd), ("current", s.current_sd)):
        value = getattr(test, field, None)
        if value is not None:
            for j, v in enumerate(_vals(value)):
                out[f"{name}.{field}{j}"] = Spec(v, sd / math.sqrt(s.count), "normal")
    out[f"{name}.power"] = Spec(test.power, s.power_sd / math.sqrt(s.count), "normal")
    a = chain.analyser
    u_line, i_line = _vals(test.voltage), _vals(test.current)
    star = SQRT3 if n == 3 else 1.0
    for k in range(n):
        ct = chain.channels[k].current_transformer
        ki = ct.ratio if ct else 1.0
        u_sec = (u_line[k] if len(u_line) == n else u_line[0]) / star
        i_sec = (i_line[k] if len(i_line) == n else i_line[0]) / ki
        p_sec = test.power / n / ki
        ur = a.range_in_use("voltage", test.analyser_ranges.voltage)
        ir = a.range_in_use("current", test.analyser_ranges.current)
        # relative errors in % of reading
        out[f"{name}.aU{k}"] = Spec(0.0, _rect((a.voltage.reading * u_sec + a.voltage.range * ur) / u_sec),
                                    "rectangular")
        out[f"{name}.aI{k}"] = Spec(0.0, _rect((a.current.reading * i_sec + a.current.range * ir) / i_sec),
                                    "rectangular")
        out[f"{name}.aP{k}"] = Spec(0.0, _rect((a.power.reading * p_sec + a.power.range * ur * ir) / p_sec),
                                    "rectangular")
        out[f"{name}.aphi{k}"] = Spec(0.0, _rect(a.phase), "rectangular")
    return out


def _channel(x: dict, name: str, field: str, n: int, k: int, err: str):
    key = f"{name}.{field}{k}"
    value = x[key] if key in x else x[f"{name}.{field}0"]
    return value * (1 - x[f"{name}.{err}{k}"] / 100)


def _g(x: dict, key: str) -> Any:
    return x.get(key, 0.0)


def corrected_test(m, x: dict, name: str, n: int) -> dict[str, list]:
    """Per channel: the corrected U (line), U' (line), I and P of one test."""
    star = SQRT3 if n == 3 else 1.0
    out: dict[str, list] = {"u": [], "um": [], "i": [], "p": []}
    for k in range(n):
        u = _channel(x, name, "voltage", n, k, "aU")
        i = _channel(x, name, "current", n, k, "aI")
        p = x[f"{name}.power"] / n * (1 - x[f"{name}.aP{k}"] / 100)
        rcf_u, rcf_i = 1 / (1 + _g(x, f"vt{k}.eps") / 100), 1 / (1 + _g(x, f"ct{k}.eps") / 100)
        delta = _g(x, f"ct{k}.delta") - _g(x, f"vt{k}.delta") + x[f"{name}.aphi{k}"]
        s = u / star * i
        q = m.sqrt(s * s - p * p)
        out["p"].append(rcf_u * rcf_i * (p * m.cos(delta) - q * m.sin(delta)))
        out["u"].append(u * rcf_u)
        out["i"].append(i * rcf_i)
        if f"{name}.voltage_mean0" in x:
            out["um"].append(_channel(x, name, "voltage_mean", n, k, "aU") * rcf_u)
    return out


def _mean(items: list) -> Any:
    return sum(items) / len(items)


def outputs(m, x: dict, record) -> dict[str, Any]:
    """No-load loss (IEC waveform correction), no-load current, load loss at 75 degC, impedance, total."""
    t, n = record.transformer, record.transformer.phases
    s_r = t.rated_power
    ir = {w: s_r / ((SQRT3 if n == 3 else 1.0) * getattr(t, w).rated_voltage) for w in ("hv", "lv")}
    nl, ld = corrected_test(m, x, "no_load", n), corrected_test(m, x, "load", n)
    u, um = _mean(nl["u"]), _mean(nl["um"])
    f = 1 + (um - u) / um
    p0 = sum(nl["p"]) * (1 + (f - 1) * (1 + x["waveform"] / 100))
    i0_pct = 100 * _mean(nl["i"]) / ir["lv"]
    n_t = _mean(ld["i"]) / ir["hv"]
    pk, uk = sum(ld["p"]) / n_t**2, _mean(ld["u"]) / n_t
    z, ur = 100 * uk / t.hv.rated_voltage, 100 * pk / s_r
    ux = m.sqrt(z * z - ur * ur)
    theta, c, k_res = x["Tload"], C_COPPER, 1.5 if n == 3 else 1.0
    nr = {w: len(_vals(getattr(record.winding_resistance, w).resistance)) for w in ("hv", "lv")}
    r_at = {w: _mean([x[f"R{w}{j}"] for j in range(nr[w])]) * (c + theta) / (c + x[f"T{w}"]) for w in ("hv", "lv")}
    pr = sum(k_res * ir[w] ** 2 * r_at[w] for w in ("hv", "lv"))
    kt = (c + 75.0) / (c + theta)
    p_ref = pr * kt + (pk - pr) / kt
    z_ref = m.sqrt((100 * p_ref / s_r) ** 2 + ux * ux)
    return {"no_load_loss_W": p0, "no_load_current_pct": i0_pct, "load_loss_ref_W": p_ref,
            "impedance_ref_pct": z_ref, "total_loss_W": p0 + p_ref}
