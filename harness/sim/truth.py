"""The model's true values: what ideal instruments would read under sinusoidal rated conditions.

Computed from the scenario's own parameters with the model's circuit (never through
``harness.calc``): the no-load test on the LV winding at rated voltage with the HV open, from
an ideal sinusoidal source; the series branch at the reference temperature for the load figures.
"""

from __future__ import annotations

import math

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
