"""A simulated unit and bay built from a nameplate and its guarantees: any sequence can be rehearsed.

The unit's losses, impedance and no-load current are its guaranteed values at the reference
temperature (sinusoidal rated conditions, as ``truth`` computes them); what a nameplate does not
say is split by the rules below, each stated with where it comes from. The bay's source,
analyser (and instrument transformers for a large unit), resistance meter and thermometer are
sized for the unit and for the limits the sequence asks of the bay.

The rules (``RULES`` holds their text; ``harness sim scenario`` writes them beside the values):

- Load loss = I²R of both windings + additional (stray and eddy) loss; the additional loss is
  10 % of the load loss at the reference temperature (common practice, no source; distribution
  units are usually 5..15 %).
- The I²R loss is split equally between the two windings, and so is the leakage reactance
  (referred to one side): a design near its optimum puts about equal copper loss in each
  winding, and terminal measurements cannot separate the leakage reactance (common practice, no
  source).
- Rk = load loss / (rated power) in %, Xk = sqrt(Zk² - Rk²); a guarantee with Zk below Rk is
  refused.
- Resistances are stated at 20 degC, converted from the reference temperature with the
  material's constant (235 copper, 225 aluminium; IEC 60076-1, as the scenario model does).
- The core: magnetising (quadrature) current sqrt(I0² - Ic²) with Ic = P0/U, the knee of the
  built-in scenarios (30 % of the peak current at rated flux from a 15th-power term, so the
  magnetising current about doubles from 100 % to 110 % voltage; common practice, no source),
  hysteresis half of the loss (the 50/50 split the IEC 60076-1 waveform correction assumes),
  Steinmetz exponent 1.8 (common practice, no source). Core loss and magnetising current are then
  trimmed so the model's own no-load truth gives the guarantees exactly.
- Thermal: winding time constant 7 min and oil time constant 3 h, of the order IEC 60076-7
  suggests for oil-immersed distribution and medium units (recalled from memory, not checked);
  heat capacities such that rated load loss heats the winding 65 K and the total loss the oil
  60 K above ambient at steady state (the IEC 60076-2 limits of an ONAN unit, recalled from
  memory), so a long load-loss step warms the winding as a real one would.
- Without a guarantee a typical value is used and the scenario's description says so:
  impedance 4 % up to 630 kVA, else 6 %; load loss 2 % of the rating up to 100 kVA, 1.2 % up
  to 1 MVA, else 0.8 %; no-load loss a fifth of the load loss; no-load current 2 % up to
  100 kVA, else 1 % (common practice, no source).
- The bay: the source gives the higher of the sequence's own limits and 115 % of what the unit
  needs (rated LV voltage for the no-load test, the impedance voltage at rated current for the
  load-loss test; at least three times the no-load current, for an excitation sweep past the
  knee), rounded up to a 1-1.2-1.5-2-2.5-3-4-5-6-8 step; its output impedance is
  0.1 % + j0.2 % of its rating's V/A, its slew a tenth of its voltage rating per second, its
  distortion 0.3 % of 5th harmonic (a linear amplifier; common practice, no source). Above
  1000 V or 50 A (the direct inputs of the built-in analyser) a VT to 100 V and a CT to 5 A sit
  ahead of the analyser, with the ratio of the next step above the source's rating. The
  resistance meter's test current is about a tenth of each winding's rated current, within
  10 mA..10 A (common practice, no source).
"""

from __future__ import annotations

import math
import zlib
from dataclasses import dataclass, field
from typing import Any

from pydantic import ValidationError

from harness.common.yamlio import load_text, validate
from harness.sim import connections
from harness.sim.scenario import Scenario

NAME = "nameplate"
SCENARIO_FILE = "<scenario built from the nameplate>"

ADDITIONAL_LOSS_SHARE = 0.10
KNEE_SHARE, KNEE_EXPONENT = 0.3, 15
HYSTERESIS_FRACTION, STEINMETZ_EXPONENT = 0.5, 1.8
WINDING_TIME_CONSTANT_S, OIL_TIME_CONSTANT_S = 7 * 60.0, 3 * 3600.0
WINDING_RISE_K, OIL_RISE_K = 65.0, 60.0
RESISTANCE_TEMPERATURE_C, AMBIENT_C = 20.0, 20.0
MATERIAL_CONSTANT = {"copper": 235.0, "aluminium": 225.0}
HEADROOM = 1.15
STEPS = (1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0)
DIRECT_MAX_VOLTAGE, DIRECT_MAX_CURRENT = 1000.0, 50.0
VT_SECONDARY, CT_SECONDARY = 100.0, 5.0
TRIM_PASSES = 4

RULES = {
    "additional_loss": "10 % of the load loss (common practice, no source)",
    "split": "I2R loss and leakage reactance split equally between the windings (common practice, no source)",
    "resistance": "d.c. at 20 degC, from the reference temperature with the material's constant (IEC 60076-1)",
    "core": "knee, hysteresis share and Steinmetz exponent of the built-in scenarios (common practice, no "
            "source); loss and magnetising current trimmed to the guarantees",
    "thermal": "time constants of the order IEC 60076-7 suggests, rises 65 K winding / 60 K oil at rated "
               "losses (IEC 60076-2 ONAN limits; both recalled from memory)",
    "source": "115 % of what the unit needs or the sequence's limits, rounded up (common practice, no source)",
    "instrument_transformers": "above 1000 V / 50 A: VT to 100 V, CT to 5 A (common practice, no source)",
}


@dataclass(frozen=True)
class Winding:
    rated_voltage: float                 # line-to-line on a three-phase unit
    connection: str | None = None        # star | delta | zigzag (three-phase)
    neutral: bool = False


@dataclass(frozen=True)
class Nameplate:
    """What a sequence says about its unit, in SI (percentages in %, temperatures in degC)."""

    name: str
    rated_power: float
    phases: int
    frequency: float
    hv: Winding
    lv: Winding
    winding_material: str | None = None
    reference_temperature: float | None = None
    vector_group: str | None = None
    no_load_loss: float | None = None
    load_loss: float | None = None
    impedance: float | None = None
    no_load_current: float | None = None
    taps: dict[str, Any] | None = None
    """The tap range as the scenario takes it: {winding, steps: (lowest, highest), step in %}."""


@dataclass(frozen=True)
class BayNeeds:
    """The highest voltage (line-to-line), line current and power the sequence's limits allow."""

    voltage: float | None = None
    current: float | None = None
    power: float | None = None


@dataclass(frozen=True)
class Built:
    scenario: Scenario
    text: str
    assumed: tuple[str, ...] = field(default=())


def step_up(value: float) -> float:
    """The next 1-1.2-1.5-2-2.5-3-4-5-6-8 step at or above ``value``."""
    decade = 10.0 ** math.floor(math.log10(value))
    for s in STEPS:
        if s * decade >= value * (1 - 1e-9):
            return s * decade
    return 10.0 * decade


def step_down(value: float) -> float:
    decade = 10.0 ** math.floor(math.log10(value))
    return max(s * decade for s in STEPS if s * decade <= value * (1 + 1e-9))


def _guarantees(n: Nameplate) -> tuple[float, float, float, float, tuple[str, ...]]:
    """(P0, Pk, Zk %, I0 %) with a typical value, and a note, for each one not guaranteed."""
    s, assumed = n.rated_power, []
    z = n.impedance
    if z is None:
        z = 4.0 if s <= 630e3 else 6.0
        assumed.append(f"impedance {z:g} % (typical, not guaranteed)")
    pk = n.load_loss
    if pk is None:
        pk = s * (0.02 if s <= 100e3 else 0.012 if s <= 1e6 else 0.008)
        assumed.append(f"load loss {pk:g} W (typical, not guaranteed)")
    p0 = n.no_load_loss
    if p0 is None:
        p0 = pk / 5.0
        assumed.append(f"no-load loss {p0:g} W (typical, not guaranteed)")
    i0 = n.no_load_current
    if i0 is None:
        i0 = 2.0 if s <= 100e3 else 1.0
        assumed.append(f"no-load current {i0:g} % (typical, not guaranteed)")
    return p0, pk, z, i0, tuple(assumed)


class Unbuildable(ValueError):
    """Guarantees (or windings) no unit can have; ``field`` names the guarantee at fault."""

    def __init__(self, message: str, field: str | None = None):
        super().__init__(message)
        self.field = field


def _refuse(message: str, field: str | None = None) -> None:
    raise Unbuildable(message, field)


def _vector_group(n: Nameplate) -> tuple[dict[str, Any], str | None]:
    """The three-phase winding fields: the sequence's vector group or connections, else Dyn11."""
    if n.vector_group:
        return {"vector_group": n.vector_group}, None
    hv, lv = n.hv.connection, n.lv.connection
    if hv is None or lv is None:
        return {"vector_group": "Dyn11"}, "vector group Dyn11 (typical of distribution units; not on the nameplate)"
    for clock in (11, 1, 0, 5, 6, 7):
        try:
            connections.arrangements(hv, lv, clock)
        except ValueError:
            continue
        return {"clock": clock}, f"clock {clock} (not on the nameplate)"
    _refuse(f"no clock number fits {hv}/{lv} windings")
    raise AssertionError


def _windings(n: Nameplate, pk: float, z: float, theta_ref: float, c: float) -> dict[str, dict[str, Any]]:
    """Each winding's resistance at 20 degC and leakage reactance (per winding phase as connected)."""
    s, phases = n.rated_power, n.phases
    r_pct = 100.0 * pk / s
    if z <= r_pct:
        _refuse(f"the guaranteed impedance {z:g} % is not above the resistive part {r_pct:.3g} % that the "
                f"load loss gives; no unit has both", "impedance")
    x_pct = math.sqrt(z * z - r_pct * r_pct)
    i2r = (1.0 - ADDITIONAL_LOSS_SHARE) * pk
    to_20 = (c + RESISTANCE_TEMPERATURE_C) / (c + theta_ref)
    out = {}
    for side in ("hv", "lv"):
        w = n.hv if side == "hv" else n.lv
        conn = w.connection if phases == 3 else None
        line_current = s / (math.sqrt(3.0) * w.rated_voltage if phases == 3 else w.rated_voltage)
        base_star = (w.rated_voltage ** 2 / s)            # star-equivalent ohms of 1 pu (also single-phase)
        factor = connections.star_equivalent_factor(conn) if phases == 3 else 1.0
        r_star = (i2r / 2.0) / (phases * line_current ** 2)
        entry: dict[str, Any] = {"rated_voltage": w.rated_voltage, "resistance": r_star / factor * to_20,
                                 "leakage_reactance": 0.5 * x_pct / 100.0 * base_star / factor}
        if phases == 3:
            if w.connection is not None:
                entry["connection"] = w.connection
            if w.neutral:
                entry["neutral"] = True
        out[side] = entry
    return out


def _bay(n: Nameplate, z: float, i0: float, needs: BayNeeds) -> dict[str, Any]:
    s, phases = n.rated_power, n.phases
    line = math.sqrt(3.0) if phases == 3 else 1.0
    i_hv, i_lv = s / (line * n.hv.rated_voltage), s / (line * n.lv.rated_voltage)
    v_need = max(HEADROOM * n.lv.rated_voltage, HEADROOM * z / 100.0 * n.hv.rated_voltage, needs.voltage or 0.0)
    i_need = max(HEADROOM * i_hv, 3.0 * i0 / 100.0 * i_lv, needs.current or 0.0)
    v_src = step_up(v_need / line)                      # per phase, line-to-neutral on a three-phase bay
    i_src = step_up(i_need)
    if needs.power and phases * v_src * i_src < needs.power:
        i_src = step_up(needs.power / (phases * v_src))
    base = v_src / i_src
    analyser: dict[str, Any] = {"channels": 3}
    v_line, direct_v = v_src * line, v_src * line <= DIRECT_MAX_VOLTAGE
    if direct_v:
        analyser["voltage_ranges"] = [15.0, 30.0, 60.0, 150.0, 300.0, 600.0, 1000.0]
    else:
        analyser["voltage_ranges"] = [15.0, 30.0, 60.0, 150.0]       # the VT gives at most 100 V
        analyser["vt_ratio"] = step_up(v_line) / VT_SECONDARY
    if i_src <= DIRECT_MAX_CURRENT:
        analyser["current_ranges"] = [0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0]
    else:
        analyser["current_ranges"] = [0.1, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0]
        analyser["ct_ratio"] = step_up(i_src) / CT_SECONDARY
    analyser.update({
        "accuracy": {q: {"reading": a, "range": r} for q, a, r in
                     (("voltage", 0.02, 0.02), ("current", 0.02, 0.02), ("power", 0.03, 0.01))},
        "noise": {q: {"reading": a, "range": r} for q, a, r in
                  (("voltage", 0.02, 0.005), ("current", 0.03, 0.005), ("power", 0.05, 0.005))},
        "update_interval": 0.2, "overload_factor": 1.2})
    if phases == 3:
        analyser["connection"] = "three-wattmeter"
    # the other winding's voltage on spare channels, for a ratio step (the built-in scenarios' wiring)
    analyser["channels"] = 6 if phases == 3 else 3
    analyser["open_winding"] = [4, 5, 6] if phases == 3 else [2]
    source = {
        "max_voltage": v_src, "max_current": i_src, "max_slew": step_up(v_src / 10.0),
        "settling_time_constant": 0.2,
        "min_frequency": min(45.0, 0.9 * n.frequency), "max_frequency": max(65.0, 1.1 * n.frequency),
        "output_resistance": 0.001 * base, "output_reactance": 0.002 * base,
        "harmonics": [{"order": 5, "amplitude": 0.3, "phase": 0.0}], "readback_noise": 0.05,
    }
    tests = {side: min(10.0, max(0.01, step_down(i / 10.0))) for side, i in (("hv", i_hv), ("lv", i_lv))}
    meter = {"channels": ({"hv": [1, 2, 3], "lv": [4, 5, 6]} if phases == 3 else {"hv": 1, "lv": 2}),
             "test_current": tests, "accuracy": 0.02, "noise": 0.005}
    return {"source": source, "analyser": analyser, "resistance_meter": meter}


def scenario_document(n: Nameplate, needs: BayNeeds = BayNeeds()) -> tuple[dict[str, Any], tuple[str, ...]]:
    """The scenario's values (SI) before the core is trimmed, and the values assumed."""
    p0, pk, z, i0, assumed = _guarantees(n)
    material = n.winding_material or "copper"
    if n.winding_material is None:
        assumed += ("copper windings (no material on the nameplate)",)
    theta_ref = 75.0 if n.reference_temperature is None else n.reference_temperature
    c = MATERIAL_CONSTANT[material]
    s = n.rated_power
    ic_pct = 100.0 * p0 / s
    if i0 <= ic_pct:
        _refuse(f"the guaranteed no-load current {i0:g} % is not above its loss component {ic_pct:.3g} % "
                f"(no-load loss over rated power); no core has both", "no_load_current")
    transformer: dict[str, Any] = {"name": n.name, "phases": n.phases, "rated_power": s, "frequency": n.frequency,
                                   "winding_material": material}
    if n.phases == 3:
        fields, note = _vector_group(n)
        transformer.update(fields)
        if note:
            assumed += (note,)
    if n.taps is not None:
        transformer["taps"] = dict(n.taps)
    transformer.update(_windings(n, pk, z, theta_ref, c))
    transformer.update({
        "resistance_temperature": RESISTANCE_TEMPERATURE_C, "reference_temperature": theta_ref,
        "additional_loss": ADDITIONAL_LOSS_SHARE * pk,
        "core": {"loss": p0, "hysteresis_fraction": HYSTERESIS_FRACTION, "steinmetz_exponent": STEINMETZ_EXPONENT,
                 "magnetising_current": math.sqrt(i0 * i0 - ic_pct * ic_pct),
                 "knee_share": KNEE_SHARE, "knee_exponent": KNEE_EXPONENT},
        "winding_thermal": {"heat_capacity": pk * WINDING_TIME_CONSTANT_S / WINDING_RISE_K,
                            "time_constant": WINDING_TIME_CONSTANT_S},
        "oil_thermal": {"heat_capacity": (p0 + pk) * OIL_TIME_CONSTANT_S / OIL_RISE_K,
                        "time_constant": OIL_TIME_CONSTANT_S},
    })
    bay = _bay(n, z, i0, needs)
    r_short = min(transformer[side]["resistance"] for side in ("hv", "lv"))
    transformer["link_resistance"] = 0.002 * r_short
    description = (f"Built from the nameplate of {n.name}: {s / 1e3:g} kVA, {n.hv.rated_voltage:g}/"
                   f"{n.lv.rated_voltage:g} V, {n.frequency:g} Hz, {'three' if n.phases == 3 else 'single'}-phase, "
                   f"at its guarantees (no-load loss {p0:g} W, load loss {pk:g} W, impedance {z:g} %, no-load "
                   f"current {i0:g} %) at {theta_ref:g} degC, on a bay sized for it.")
    if assumed:
        description += " Assumed: " + "; ".join(assumed) + "."
    document = {"spec": 1, "kind": "scenario", "name": NAME, "description": description,
                "seed": zlib.crc32(n.name.encode()) % 1_000_000 + 1, "transformer": transformer,
                **bay, "bay": {"ambient_temperature": AMBIENT_C, "wiring": {"fed": "lv", "other": "open"}}}
    return document, assumed


def _trim(document: dict[str, Any], p0: float, i0_pct: float) -> dict[str, Any]:
    """Scale the core's loss and magnetising current until the model's no-load truth meets them."""
    from harness.sim.truth import truth
    core = document["transformer"]["core"]
    for _ in range(TRIM_PASSES):
        scenario = Scenario.model_validate(document)
        no_load = truth(scenario)["no_load"]
        i_pct = 100.0 * no_load["current_A"] / scenario.transformer.rated_current("lv")
        core["loss"] *= p0 / no_load["loss_W"]
        # the quadrature part carries the difference, so that sqrt(Im^2 + Ic^2) moves to I0
        i_m = core["magnetising_current"]
        core["magnetising_current"] = math.sqrt(max(i_m * i_m + i0_pct * i0_pct - i_pct * i_pct, 1e-6 * i_m * i_m))
    return document


def build(n: Nameplate, needs: BayNeeds = BayNeeds()) -> Built:
    """The scenario of a nameplate; ``Unbuildable`` for what no unit or bay can have."""
    document, assumed = scenario_document(n, needs)
    p0, _, _, i0, _ = _guarantees(n)
    try:
        _trim(document, p0, i0)
    except ValidationError as exc:   # e.g. a bay beyond the plausible bounds the sequence's limits ask for
        first = exc.errors()[0]
        _refuse(f"{'.'.join(str(p) for p in first['loc'])}: {first['msg']}")
    text = scenario_yaml(document)
    return Built(validate(Scenario, load_text(text, SCENARIO_FILE)), text, assumed)


# -- the scenario as a commented file a lab can tune

_UNITS = {
    "rated_power": "VA", "frequency": "Hz", "rated_voltage": "V", "resistance": "ohm", "leakage_reactance": "ohm",
    "resistance_temperature": "degC", "reference_temperature": "degC", "additional_loss": "W", "loss": "W",
    "magnetising_current": "%", "heat_capacity": "J/K", "time_constant": "s", "link_resistance": "ohm",
    "max_voltage": "V", "max_current": "A", "max_slew": "V/s", "settling_time_constant": "s",
    "min_frequency": "Hz", "max_frequency": "Hz", "output_resistance": "ohm", "output_reactance": "ohm",
    "amplitude": "%", "readback_noise": "%", "reading": "%", "range": "%", "update_interval": "s",
    "voltage_ranges": "V", "current_ranges": "A", "ambient_temperature": "degC", "test_current": "A",
    "accuracy": "%", "noise": "%", "phase": "deg",
}

_COMMENTS = {
    ("transformer",): "the unit: losses, impedance and no-load current at the guarantees",
    ("transformer", "hv"): RULES["split"] + "; " + RULES["resistance"],
    ("transformer", "additional_loss"): RULES["additional_loss"],
    ("transformer", "core"): RULES["core"],
    ("transformer", "winding_thermal"): RULES["thermal"],
    ("transformer", "link_resistance"): "the short-circuit link: 0.2 % of the lower winding resistance",
    ("source",): RULES["source"],
    ("analyser",): RULES["instrument_transformers"] + "; replace with the lab's own accuracy",
    ("resistance_meter",): "test current about a tenth of rated current (common practice, no source)",
}


def _scalar(key: str, value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if key in ("spec", "seed", "phases", "channels", "order", "clock", "knee_exponent", "hv", "lv"):
        return str(value)
    unit = _UNITS.get(key)
    text = f"{value:.7g}"
    return f"{text} {unit}" if unit else text


def _emit(data: dict[str, Any], path: tuple[str, ...], indent: int, lines: list[str]) -> None:
    pad = "  " * indent
    for key, value in data.items():
        here = path + (key,)
        comment = _COMMENTS.get(here)
        if comment:
            lines.append(f"{pad}# {comment}")
        unit_key = path[-1] if path and path[-1] in ("test_current", "accuracy", "noise") and indent > 0 else key
        if key == "phase":
            value_text = f"{math.degrees(value):.7g} deg"
            lines.append(f"{pad}{key}: {value_text}")
        elif isinstance(value, dict):
            lines.append(f"{pad}{key}:")
            _emit(value, here, indent + 1, lines)
        elif isinstance(value, list) and value and isinstance(value[0], dict):
            lines.append(f"{pad}{key}:")
            for item in value:
                body = ", ".join(f"{k}: {_item(k, v)}" for k, v in item.items())
                lines.append(f"{pad}  - {{{body}}}")
        elif isinstance(value, list):
            lines.append(f"{pad}{key}: [{', '.join(_scalar(unit_key, v) for v in value)}]")
        else:
            lines.append(f"{pad}{key}: {_scalar(unit_key, value)}")


def _item(key: str, value: Any) -> str:
    return f"{math.degrees(value):.7g} deg" if key == "phase" else _scalar(key, value)


def scenario_yaml(document: dict[str, Any]) -> str:
    """The scenario as a commented YAML file (values with units), readable by ``load_scenario``."""
    lines = ["# Simulated unit and bay built from a sequence's nameplate and guarantees.",
             "# Tune it to the lab's own unit and bay (its measured values, its instruments' accuracy)",
             "# and run a sequence on it with: harness run SEQUENCE --sim THIS_FILE",
             "# Values take units; plain numbers are SI. Schema: harness.sim.scenario.Scenario."]
    _emit(document, (), 0, lines)
    return "\n".join(lines) + "\n"
