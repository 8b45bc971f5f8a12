"""The model's truth against a direct calculation from the scenario's parameters."""

from __future__ import annotations

import json
import math

import pytest

from harness.sim.scenario import load_scenario, scenario_names
from harness.sim.truth import truth

KEYS = {
    "equivalent_circuit": {"hv": {"Rc_ohm", "Xm_ohm", "Req_ohm", "Xeq_ohm"},
                           "lv": {"Rc_ohm", "Xm_ohm", "Req_ohm", "Xeq_ohm"}},
    "no_load": {"loss_W", "current_A"},
    "load": {"loss_ref_W", "impedance_ref_pct"},
    "ratio": {"fed", "test_voltage_pu", "tapped_winding", "step_pct", "clock", "taps"},
}


@pytest.mark.parametrize("name", ["default", "large", "aluminium-distorted"])
def test_truth_matches_a_hand_calculation(name):
    s = load_scenario(name)
    tf = s.transformer
    c = 235.0 if tf.winding_material == "copper" else 225.0   # IEC 60076-1 [S: reference notes]
    a2 = (tf.hv.rated_voltage / tf.lv.rated_voltage) ** 2
    to_ref = (c + tf.reference_temperature) / (c + tf.resistance_temperature)
    i_hv = tf.rated_power / tf.hv.rated_voltage
    # Series branch referred to HV: R = R1 + a^2 R2 (+ stray loss as a resistance), X = X1 + a^2 X2
    # (textbook equivalent circuit; stray loss at the reference temperature by definition).
    req = (tf.hv.resistance + a2 * tf.lv.resistance) * to_ref + tf.additional_loss / i_hv ** 2
    xeq = tf.hv.leakage_reactance + a2 * tf.lv.leakage_reactance
    got = truth(s)
    assert got["equivalent_circuit"]["hv"]["Req_ohm"] == pytest.approx(req, rel=1e-9)
    assert got["equivalent_circuit"]["hv"]["Xeq_ohm"] == pytest.approx(xeq, rel=1e-9)
    assert got["equivalent_circuit"]["lv"]["Req_ohm"] == pytest.approx(req / a2, rel=1e-9)
    assert got["load"]["loss_ref_W"] == pytest.approx(i_hv ** 2 * req, rel=1e-9)
    z_pct = 100 * i_hv * math.hypot(req, xeq) / tf.hv.rated_voltage
    assert got["load"]["impedance_ref_pct"] == pytest.approx(z_pct, rel=1e-9)
    # No-load at rated LV voltage: the shunt carries the stated core loss and magnetising current;
    # the small series drop of the LV winding moves them by well under 0.1 %.
    u = tf.lv.rated_voltage
    i_r = tf.rated_power / u
    i_m = tf.core.magnetising_current / 100 * i_r
    assert got["no_load"]["loss_W"] == pytest.approx(tf.core.loss, rel=1e-3)
    assert got["no_load"]["current_A"] == pytest.approx(math.hypot(i_m, tf.core.loss / u), rel=1e-3)
    # Shunt branch from the open-circuit test: Rc = U^2/P, Xm = U/Im (reference notes).
    assert got["equivalent_circuit"]["lv"]["Rc_ohm"] == pytest.approx(u ** 2 / tf.core.loss, rel=2e-3)
    assert got["equivalent_circuit"]["lv"]["Xm_ohm"] == pytest.approx(u / i_m, rel=2e-3)
    assert got["equivalent_circuit"]["hv"]["Xm_ohm"] == pytest.approx(a2 * u / i_m, rel=2e-3)


def test_truth_has_exactly_the_contract_keys_and_is_json():
    got = json.loads(json.dumps(truth(load_scenario("default"))))
    assert set(got) == set(KEYS)
    for group, keys in KEYS.items():
        if isinstance(keys, dict):
            assert {k: set(v) for k, v in got[group].items()} == keys
        else:
            assert set(got[group]) == keys


@pytest.mark.parametrize("name", ["default", "large", "aluminium-distorted"])
def test_rated_tests_fit_the_bay_source(name):
    s = load_scenario(name)
    got = truth(s)
    tf = s.transformer
    # No-load up to 110 % on LV, and the load test at rated HV current, inside the source ratings.
    assert 1.1 * tf.lv.rated_voltage < s.source.max_voltage
    assert 3 * got["no_load"]["current_A"] < s.source.max_current
    assert tf.rated_current("hv") < s.source.max_current
    assert got["load"]["impedance_ref_pct"] / 100 * tf.hv.rated_voltage * 1.1 < s.source.max_voltage


def test_the_three_scenarios_are_listed():
    assert {"default", "large", "aluminium-distorted"} <= set(scenario_names())
