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


def truth(scenario: Scenario) -> dict:
    if scenario.transformer.phases == 3:
        return truth_three_phase(scenario)
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
