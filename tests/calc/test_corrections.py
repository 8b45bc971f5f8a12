"""Measurement-chain corrections against a worked case built from first principles with phasors.

The worked case: true primary phasors U_p = U at 0 and I_p = I at -phi (the current lags); the
instrument transformers return K_n X_s = X_p (1 + eps) e^{j delta} with the IEC 61869 definitions
(ratio error eps = (K_n X_s - X_p)/X_p; phase displacement delta positive when the secondary leads),
recalled from IEC 61869-2/-3, not re-read. The analyser multiplies what it is given:
P_m = Re(U_m conj(I_m)). The correction must give back Re(U_p conj(I_p)).
"""

from __future__ import annotations

import cmath
import math

import pytest

from harness.calc import evaluate
from harness.calc.chain import ratio_correction_factor
from harness.calc.corrections import (ChannelErrors, correct_readings, corrected_power, first_order_power,
                                      reactive_power)
from harness.common.units import to_si
from tests.calc._records import reading, single_phase


def _through_chain(x: complex, eps_pct: float, delta: float) -> complex:
    """What K_n * secondary reads for a primary phasor x (IEC 61869 definitions)."""
    return x * (1 + eps_pct / 100) * cmath.exp(1j * delta)


def _worked_case(pf: float, errors: ChannelErrors, u: float = 400.0, i: float = 10.0):
    phi = math.acos(pf)
    u_p, i_p = complex(u, 0), cmath.rect(i, -phi)
    u_m = _through_chain(u_p, errors.voltage_ratio_error_pct, errors.voltage_displacement_rad)
    i_m = _through_chain(i_p, errors.current_ratio_error_pct, errors.current_displacement_rad)
    p_true = (u_p * i_p.conjugate()).real
    p_m = (u_m * i_m.conjugate()).real
    return p_true, p_m, abs(u_m) * abs(i_m), abs(u_m), abs(i_m)


@pytest.mark.parametrize("pf", [0.9, 0.3, 0.05, 0.01])
def test_correction_recovers_the_true_power_of_the_phasor_case(pf):
    errors = ChannelErrors(voltage_ratio_error_pct=0.12, current_ratio_error_pct=-0.25,
                           voltage_displacement_rad=to_si("2 arcmin", "rad"),
                           current_displacement_rad=to_si("0.3 crad", "rad"))
    p_true, p_m, s_m, _, _ = _worked_case(pf, errors)
    assert corrected_power(p_m, s_m, errors) == pytest.approx(p_true, rel=1e-12)


def test_secondary_leading_current_reads_high_at_lagging_power_factor():
    # delta_I > 0 shrinks the measured angle: more power is seen than flows; the correction lowers it.
    errors = ChannelErrors(current_displacement_rad=1e-3)
    p_true, p_m, s_m, _, _ = _worked_case(0.1, errors)
    assert p_m > p_true
    assert corrected_power(p_m, s_m, errors) < p_m
    assert errors.net_displacement_rad == pytest.approx(1e-3)


def test_voltage_displacement_enters_with_the_opposite_sign():
    e_u, e_i = ChannelErrors(voltage_displacement_rad=1e-3), ChannelErrors(current_displacement_rad=1e-3)
    assert e_u.net_displacement_rad == -e_i.net_displacement_rad


def test_first_order_form_agrees_to_second_order():
    # Pc = Pm - delta Qm drops terms of order delta^2 S (IEC TS 60076-19 form, recalled, not re-read).
    delta = 1e-3
    errors = ChannelErrors(current_displacement_rad=delta)
    p_true, p_m, s_m, _, _ = _worked_case(0.05, errors)
    approx = first_order_power(p_m, reactive_power(p_m, s_m), delta)
    assert abs(approx - p_true) < delta**2 * s_m


@pytest.mark.parametrize("pf", [0.2, 0.05, 0.01])
def test_phase_error_costs_delta_tan_phi(pf):
    # Relative power error ~ delta * tan(phi); at PF 0.01, 100 urad costs about 1 %
    # (reference notes on loss measurement at low power factor; IEC TS 60076-19, recalled, not re-read).
    delta = 100e-6
    p_true, p_m, _, _, _ = _worked_case(pf, ChannelErrors(current_displacement_rad=delta))
    rule = delta * math.tan(math.acos(pf))
    assert (p_m - p_true) / p_true == pytest.approx(rule, rel=0.01)
    if pf == 0.01:
        assert 100 * (p_m - p_true) / p_true == pytest.approx(1.0, abs=0.01)


def test_one_arcminute_in_microradians():
    # 1' = pi/10 800 rad = 290.9 urad (definition of the minute of arc, SI Brochure Table 8).
    assert to_si("1 arcmin", "rad") * 1e6 == pytest.approx(290.9, abs=0.05)
    assert to_si("0.2 crad", "rad") == pytest.approx(0.002)


def test_ratio_correction_factor_recovers_the_primary_value():
    # eps = (K_n X_s - X_p)/X_p (IEC 61869-1 definition, recalled): a +0.1 % CT reads 0.1 % high.
    x_p = 10.0
    read = x_p * 1.001
    assert read * ratio_correction_factor(0.1) == pytest.approx(x_p, rel=1e-12)


def test_three_channels_recover_the_true_total_of_a_balanced_system():
    per_channel = [ChannelErrors(0.05, -0.1, 1e-4, 8e-4), ChannelErrors(-0.02, -0.2, 0.0, 1.2e-3),
                   ChannelErrors(0.0, 0.1, -2e-4, 5e-4)]
    cases = [_worked_case(0.25, e, u=230.0, i=20.0) for e in per_channel]
    p_true = sum(c[0] for c in cases)
    u_ll = tuple(c[3] * math.sqrt(3) for c in cases)
    i_l = tuple(c[4] for c in cases)
    corrected = correct_readings(u_ll, None, i_l, sum(c[1] for c in cases), per_channel)
    # The total is shared equally between channels: exact to second order in the errors.
    assert corrected.power == pytest.approx(p_true, rel=1e-5)
    assert corrected.current == pytest.approx(tuple(20.0 for _ in range(3)), rel=1e-12)


def _chain(ct: dict) -> dict:
    return {"channels": [{"current_transformer": {"ratio": 1, **ct}}]}


def test_evaluate_applies_the_chain_and_reports_the_correction():
    ct = {"ratio_error": "-0.1 %", "phase_displacement": "3 arcmin"}
    load = reading("hv", "246 V", "3.8 A", "360 W")
    plain = evaluate(single_phase("25 kVA", "6.35 kV", "240 V", load=load))
    chained = evaluate(single_phase("25 kVA", "6.35 kV", "240 V", load=load, measurement_chain=_chain(ct)))
    corr = chained.corrections["load"]
    e = ChannelErrors(current_ratio_error_pct=-0.1, current_displacement_rad=to_si("3 arcmin", "rad"))
    expected = corrected_power(360.0, 246 * 3.8, e)
    assert corr["power_corrected_W"] == pytest.approx(expected, rel=1e-12)
    assert corr["current_ratio_correction_factor"] == pytest.approx(1 / 0.999)
    # The scaled loss follows the corrected power and the corrected current.
    assert chained.load.loss_W == pytest.approx(plain.load.loss_W * expected / 360 / (1 / 0.999) ** 2, rel=1e-12)
    assert plain.corrections is None and chained.to_dict()["corrections"]["load"] == corr


def test_a_three_phase_record_needs_three_channels():
    from pydantic import ValidationError
    from tests.calc._records import three_phase
    with pytest.raises(ValidationError, match="three analyser channels"):
        three_phase("400 kVA", "11 kV", "420 V", load=reading("hv", "476 V", "20 A", "4 kW"),
                    measurement_chain=_chain({}))
