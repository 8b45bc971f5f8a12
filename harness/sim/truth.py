"""The model's true values: what ideal instruments would read under sinusoidal rated conditions.

Computed from the scenario's own parameters with the model's circuit (never through
``harness.calc``): the no-load test on the LV winding at rated voltage with the HV open, from
an ideal sinusoidal source; the series branch at the reference temperature for the load figures.

A three-phase unit gives the same keys as star-equivalent per-phase values (line-to-neutral
voltage, line current, a third of the total power; a delta winding's phase impedance over 3;
the spread phases averaged), as the results contract refers them; losses are totals, the
no-load current the mean of the three line currents. Besides them: the rated line currents,
the no-load current in % and a ``phases`` section (each line current at no-load, showing the
middle limb lower; each winding's phase and line-to-line resistances; the clock number).
"""

from __future__ import annotations

import cmath
import math

from harness.sim import connections, three_phase
from harness.sim.scenario import Scenario
from harness.sim.transformer import SourceImpedance, Transformer, Wiring, solve

NO_LOAD_SIDE = "lv"


def no_load_point(scenario: Scenario) -> tuple[float, float, float]:
    """(voltage, current, loss) at the LV terminals, rated voltage, HV open, winding at ambient."""
    tf = Transformer(scenario.transformer)
    u_r = scenario.transformer.lv.rated_voltage
    op = solve(tf, Wiring(NO_LOAD_SIDE, "open"), (complex(u_r),), (1,), scenario.transformer.frequency,
               scenario.bay.ambient_temperature, SourceImpedance(0.0, 0.0))
    return op.u_rms, op.i_rms, op.power


def series_branch(scenario: Scenario, side: str) -> tuple[float, float]:
    """(Req at the reference temperature, Xeq) referred to ``side``."""
    tf = Transformer(scenario.transformer)
    ref = scenario.transformer.reference_temperature
    to_side = {side: 1.0, ("lv" if side == "hv" else "hv"): tf.referral(side)}
    r = sum((tf.r_dc(s, ref) + tf.r_additional(s, ref)) * k for s, k in to_side.items())
    x = sum(scenario.transformer.winding(s).leakage_reactance * k for s, k in to_side.items())
    return r, x


RATIO_TEST_PU = 0.02   # the HV fed at 2 % of its rated voltage for the true ratio


def ratio_truth(scenario: Scenario) -> dict | None:
    """Per tap: the turns ratio (the declared ratio) and the open-circuit HV/LV voltage ratio per
    phase pair with the LV's lag in degrees, the HV fed at 2 % of rated from an ideal sinusoidal
    source, the LV open, winding at ambient: the ratio a ratio test reads, with the small drop of
    the magnetising current in the HV winding's leakage impedance."""
    spec = scenario.transformer
    taps = spec.taps
    positions = range(taps.steps[0], taps.steps[1] + 1) if taps else range(0, 1)
    rows = {}
    for tap in positions:
        hv, lv = _open_circuit_voltages(scenario, tap)
        factor = taps.factor(tap) if taps else 1.0
        turns = spec.hv.rated_voltage / spec.lv.rated_voltage * (factor if taps and taps.winding == "hv"
                                                                    else 1.0 / factor)
        rows[str(tap)] = {"turns_ratio": turns, "ratio": [abs(a) / abs(b) for a, b in zip(hv, lv)],
                          "lag_deg": [math.degrees(cmath.phase(a / b)) % 360.0 for a, b in zip(hv, lv)]}
    return {"fed": "hv", "test_voltage_pu": RATIO_TEST_PU, "tapped_winding": taps.winding if taps else None,
            "step_pct": taps.step if taps else None, "clock": spec.clock_number if spec.phases == 3 else 0,
            "taps": rows}


def _open_circuit_voltages(scenario: Scenario, tap: int) -> tuple[list[complex], list[complex]]:
    """Fundamental HV and LV voltages (line-to-line pairs for three-phase) with the HV fed."""
    spec, theta, ideal = scenario.transformer, scenario.bay.ambient_temperature, SourceImpedance(0.0, 0.0)
    if spec.phases == 3:
        tf = three_phase.ThreePhaseTransformer(spec)
        tf.set_turns(tap)
        u = RATIO_TEST_PU * spec.hv.rated_voltage / math.sqrt(3.0)
        op = three_phase.solve(tf, Wiring("hv", "open"), three_phase.phase_emfs((complex(u),), (1,)), (1,),
                               spec.frequency, theta, ideal)
        pairs = connections.terminal_pairs()
        return ([op.line_to_line(a, b)[0] for a, b in pairs],
                [op.other_terminal[a][0] - op.other_terminal[b][0] for a, b in pairs])
    tf = Transformer(spec)
    tf.set_turns(tap)
    op = solve(tf, Wiring("hv", "open"), (complex(RATIO_TEST_PU * spec.hv.rated_voltage),), (1,), spec.frequency,
               theta, ideal)
    return [op.voltage[0]], [op.other_voltage[0]]


def truth(scenario: Scenario) -> dict:
    if scenario.transformer.phases == 3:
        return {**truth_three_phase(scenario), "ratio": ratio_truth(scenario)}
    spec = scenario.transformer
    tf = Transformer(spec)
    u, i, p = no_load_point(scenario)
    rc_lv = u * u / p
    xm_lv = u / math.sqrt(i * i - (p / u) ** 2)
    to_hv = tf.referral("hv")
    circuit = {}
    for side, factor in (("hv", to_hv), ("lv", 1.0)):
        r, x = series_branch(scenario, side)
        circuit[side] = {"Rc_ohm": rc_lv * factor, "Xm_ohm": xm_lv * factor, "Req_ohm": r, "Xeq_ohm": x}
    r_hv, x_hv = series_branch(scenario, "hv")
    i_r = spec.rated_current("hv")
    return {
        "equivalent_circuit": circuit,
        "no_load": {"loss_W": p, "current_A": i},
        "load": {"loss_ref_W": i_r ** 2 * r_hv,
                 "impedance_ref_pct": 100.0 * i_r * math.hypot(r_hv, x_hv) / spec.hv.rated_voltage},
        "ratio": ratio_truth(scenario),
    }


def three_phase_no_load(scenario: Scenario) -> three_phase.ThreePhasePoint:
    """The LV fed at rated line voltage from an ideal balanced sinusoidal source, HV open."""
    spec = scenario.transformer
    tf = three_phase.ThreePhaseTransformer(spec)
    u_ph = spec.lv.rated_voltage / math.sqrt(3.0)
    return three_phase.solve(tf, Wiring(NO_LOAD_SIDE, "open"), three_phase.phase_emfs((complex(u_ph),), (1,)),
                             (1,), spec.frequency, scenario.bay.ambient_temperature, SourceImpedance(0.0, 0.0))


def star_equivalent_branch(scenario: Scenario, side: str) -> tuple[float, float]:
    """(Req at the reference temperature, Xeq) per phase, star-equivalent, referred to ``side``."""
    spec = scenario.transformer
    tf = three_phase.ThreePhaseTransformer(spec)
    ref = spec.reference_temperature
    r = x = 0.0
    for s in ("hv", "lv"):
        w = spec.winding(s)
        k = connections.star_equivalent_factor(spec.connection(s)) * (1.0 if s == side else tf.referral(side))
        mean_f = sum(w.phase_factor(p) for p in three_phase.PHASES) / 3.0
        r += (tf.r_dc(s, ref) + tf.r_additional(s, ref)) * mean_f * k
        x += w.leakage_reactance * mean_f * k
    return r, x


def truth_three_phase(scenario: Scenario) -> dict:
    spec = scenario.transformer
    tf = three_phase.ThreePhaseTransformer(spec)
    op = three_phase_no_load(scenario)
    currents = op.phase_currents
    u, i, p = spec.lv.rated_voltage / math.sqrt(3.0), sum(currents) / 3.0, op.power / 3.0
    rc_lv, xm_lv = u * u / p, u / math.sqrt(i * i - (p / u) ** 2)
    circuit = {}
    for side, factor in (("hv", tf.referral("hv")), ("lv", 1.0)):
        r, x = star_equivalent_branch(scenario, side)
        circuit[side] = {"Rc_ohm": rc_lv * factor, "Xm_ohm": xm_lv * factor, "Req_ohm": r, "Xeq_ohm": x}
    r_hv, x_hv = star_equivalent_branch(scenario, "hv")
    i_r = spec.rated_current("hv")
    theta = spec.resistance_temperature
    return {
        "equivalent_circuit": circuit,
        "no_load": {"loss_W": op.power, "current_A": i, "current_pct": 100.0 * i / spec.rated_current(NO_LOAD_SIDE)},
        "load": {"loss_ref_W": 3.0 * i_r ** 2 * r_hv,
                 "impedance_ref_pct": 100.0 * i_r * math.hypot(r_hv, x_hv) / (spec.hv.rated_voltage / math.sqrt(3.0))},
        "rated_current_A": {s: spec.rated_current(s) for s in ("hv", "lv")},
        "phases": {
            "vector_group": spec.vector_group_name,
            "clock": spec.clock_number,
            "no_load_line_current_A": list(currents),
            "resistance_temperature_degC": theta,
            "resistance_ohm": {s: {"connection": spec.connection(s),
                                   "phase": [tf.r_phase(s, theta, k) for k in three_phase.PHASES],
                                   "line_to_line": list(tf.line_resistances(s, theta))}
                               for s in ("hv", "lv")},
        },
    }
