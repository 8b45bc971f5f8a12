"""The uncertainty budget: type A and type B evaluation, sensitivities, budgets, flagged checks, table."""

from __future__ import annotations

import math

import pytest
from rich.console import Console

from harness.calc import evaluate
from harness.calc.chain import standard_uncertainty
from harness.calc.table import render_results_dict
from harness.calc.uncertainty import uncertainty
from tests.calc._records import reading, single_phase

RATED = ("25 kVA", "6.35 kV", "240 V")
I_RATED_LV = 25000 / 240
I_RATED_HV = 25000 / 6350


def _no_load(**extra):
    return reading("lv", "240 V", "0.9 A", "75.4 W", **extra)


def _load(**extra):
    return reading("hv", "246 V", "3.8 A", "360 W", **extra)


def _chain(ct=None, **rest):
    channel = {"current_transformer": {"ratio": 1, **ct}} if ct else {}
    return {"channels": [channel], **rest}


def test_type_a_is_the_standard_uncertainty_of_the_mean():
    # GUM 4.2.3: u = s / sqrt(n).
    samples = {"count": 20, "current_sd": "0.002 A"}
    budgets, _ = uncertainty(single_phase(*RATED, no_load=_no_load(samples=samples), measurement_chain=_chain()))
    b = budgets["no_load_current_pct"]
    u_mean = 0.002 / math.sqrt(20)
    assert b.standard == pytest.approx(100 * u_mean / I_RATED_LV, rel=1e-6)
    (entry,) = b.budget
    assert entry.standard_uncertainty == pytest.approx(u_mean)
    assert entry.distribution == "type A" and "n = 20" in entry.source


@pytest.mark.parametrize("distribution, divisor", [("rectangular", math.sqrt(3.0)), ("normal", 2.0)])
def test_type_b_rectangular_bound_or_certificate(distribution, divisor):
    # GUM 4.3.7 (a / sqrt 3) for a bound; GUM 4.3.3 (U / k, k = 2) for a certificate.
    ct = {"ratio_error_uncertainty": "0.1 %", "distribution": distribution}
    budgets, _ = uncertainty(single_phase(*RATED, load=_load(), measurement_chain=_chain(ct)))
    entry = next(c for c in budgets["load_loss_W"].budget if "ratio error" in c.source)
    assert entry.standard_uncertainty == pytest.approx(0.1 / divisor)
    assert standard_uncertainty(0.1, distribution) == pytest.approx(0.1 / divisor)


def test_phase_sensitivity_is_minus_tan_phi_relative():
    # A net displacement delta moves P by -delta Qm, i.e. relatively by -delta tan(phi)
    # (reference notes on low power factor; IEC TS 60076-19, recalled, not re-read).
    ct = {"phase_displacement_uncertainty": "1 arcmin"}
    budgets, _ = uncertainty(single_phase(*RATED, load=_load(), measurement_chain=_chain(ct)))
    b = budgets["load_loss_W"]
    entry = next(c for c in b.budget if "phase displacement" in c.source)
    tan_phi = math.tan(math.acos(360 / (246 * 3.8)))
    assert entry.sensitivity / b.value == pytest.approx(-tan_phi, rel=1e-6)


def test_winding_temperature_sensitivity_follows_the_annex_e_split():
    # From P_ref = P_R(theta) k + (P_k - P_R(theta)) / k, k = (C + t_ref)/(C + theta), P_R ~ (C + theta):
    # dP_ref/dtheta = (P_k - 2 P_R(theta)) / (C + t_ref)  (derived from the IEC 60076-1 Annex E form).
    record = single_phase(*RATED, load=_load(temperature="20 degC"),
                          winding_resistance={"hv": {"resistance": "12 ohm", "temperature": "20 degC"},
                                              "lv": {"resistance": "0.0165 ohm", "temperature": "20 degC"}},
                          measurement_chain=_chain(thermometer={"accuracy": "0.5 K"}))
    budgets, _ = uncertainty(record)
    p_k = 360 / (3.8 / I_RATED_HV) ** 2
    p_r = I_RATED_HV**2 * 12 + I_RATED_LV**2 * 0.0165
    entry = next(c for c in budgets["load_loss_ref_W"].budget if "winding temperature" in c.source)
    assert entry.sensitivity == pytest.approx((p_k - 2 * p_r) / (235 + 75), rel=1e-6)
    assert entry.standard_uncertainty == pytest.approx(0.5 / math.sqrt(3))


def test_budget_is_ordered_and_its_shares_add_up():
    ct = {"ratio_error_uncertainty": "0.05 %", "phase_displacement_uncertainty": "1 arcmin"}
    analyser = {"power": {"reading": "0.03 %", "range": "0.01 %"}, "phase": "0.1 mrad"}
    record = single_phase(*RATED, load=_load(samples={"count": 10, "power_sd": "1 W"}),
                          measurement_chain=_chain(ct, analyser=analyser))
    b = uncertainty(record)[0]["load_loss_W"]
    contributions = [c.contribution for c in b.budget]
    assert contributions == sorted(contributions, reverse=True)
    assert sum(c.share_pct for c in b.budget) == pytest.approx(100.0)
    assert math.sqrt(sum(c.contribution**2 for c in b.budget)) == pytest.approx(b.standard)
    assert all(c.contribution == pytest.approx(abs(c.sensitivity) * c.standard_uncertainty) for c in b.budget)
    assert (b.k, b.expanded) == (2.0, pytest.approx(2 * b.standard))


def test_without_a_chain_there_is_no_uncertainty():
    data = evaluate(single_phase(*RATED, no_load=_no_load(), load=_load())).to_dict()
    assert data["uncertainty"] == {} and data["corrections"] is None
    assert all(c["uncertain"] is None for c in data["checks"])


def test_missing_samples_and_ranges_are_said():
    _, warnings = uncertainty(single_phase(*RATED, load=_load(), measurement_chain=_chain()))
    assert any("no type A part" in w for w in warnings)
    assert any("understates" in w for w in warnings)


def test_percent_of_range_uses_the_range_in_use():
    # 200 V requested on ranges of 150/300 V: the analyser uses 300 V.
    analyser = {"voltage": {"range": "0.1 %"}, "voltage_ranges": ["150 V", "300 V"]}
    record = single_phase(*RATED, load=_load(analyser_ranges={"voltage": "200 V", "current": "5 A"}),
                          measurement_chain=_chain(analyser=analyser))
    entry = next(c for c in uncertainty(record)[0]["impedance_pct"].budget if "analyser U" in c.source)
    assert entry.standard_uncertainty == pytest.approx(0.1 * 300 / 246 / math.sqrt(3))
    assert entry.unit == "% of reading"


def _guaranteed(load_loss_W: str):
    ct = {"phase_displacement_uncertainty": "5 arcmin"}
    return evaluate(single_phase(*RATED, load=_load(), measurement_chain=_chain(ct),
                                 guarantees={"load_loss": load_loss_W}))


def test_a_check_within_the_expanded_uncertainty_of_its_limit_says_so():
    first = _guaranteed("400 W")
    u = first.uncertainty["load_loss_W"].expanded
    value = first.load.loss_W
    near = _guaranteed(f"{(value - u / 2) / 1.15} W")  # limit = 1.15 x guarantee, half a U below the value
    (check,) = near.checks
    assert (check.passed, check.uncertain) == (False, True)
    assert check.expanded_uncertainty == pytest.approx(u)
    assert any("could flip" in w for w in near.warnings)
    far = _guaranteed(f"{(value + 3 * u) / 1.15} W")
    assert (far.checks[0].passed, far.checks[0].uncertain) == (True, False)


def test_the_terminal_table_names_the_largest_contributor():
    ct = {"phase_displacement_uncertainty": "5 arcmin"}
    data = evaluate(single_phase(*RATED, load=_load(), measurement_chain=_chain(ct))).to_dict()
    console = Console(record=True, width=200)
    render_results_dict(data, console)
    text = console.export_text()
    assert "expanded uncertainties (k = 2)" in text and "largest contributor" in text
    assert data["uncertainty"]["load_loss_W"]["largest_contributor"] == "CT ch 1 phase displacement"
    assert "CT ch 1 phase displacement" in text


def test_harness_evaluate_prints_corrected_losses_and_their_uncertainty():
    import os
    import subprocess
    import sys
    from pathlib import Path
    root = Path(__file__).resolve().parents[2]
    record = root / "sequences" / "records" / "three_phase_with_measurement_chain.yaml"
    proc = subprocess.run([sys.executable, "-m", "harness.cli", "evaluate", str(record)], capture_output=True,
                          text=True, cwd=root, env={**os.environ, "COLUMNS": "200"}, timeout=60)
    assert proc.returncode == 0, proc.stderr
    assert "Measurement-chain corrections" in proc.stdout and "largest contributor" in proc.stdout
    assert "PASS (uncertain)" in proc.stdout and "could flip" in proc.stdout


def test_budget_values_are_the_reported_results():
    from pathlib import Path
    from harness.calc import load_record
    record = Path(__file__).resolve().parents[2] / "sequences" / "records" / "three_phase_with_measurement_chain.yaml"
    data = evaluate(load_record(record)).to_dict()
    u, nl, ld = data["uncertainty"], data["no_load"], data["load"]
    assert u["no_load_loss_W"]["value"] == pytest.approx(nl["loss_W"], rel=1e-12)
    assert u["no_load_current_pct"]["value"] == pytest.approx(nl["current_pct"], rel=1e-12)
    assert u["load_loss_ref_W"]["value"] == pytest.approx(ld["loss_ref_W"], rel=1e-12)
    assert u["impedance_ref_pct"]["value"] == pytest.approx(ld["impedance_ref_pct"], rel=1e-12)
    assert u["total_loss_W"]["value"] == pytest.approx(nl["loss_W"] + ld["loss_ref_W"], rel=1e-12)


def test_accuracy_per_range_replaces_the_general_band():
    analyser = {"voltage": {"reading": "0.02 %"}, "voltage_ranges": ["150 V", "300 V"],
                "voltage_range_accuracy": [{"reading": "0.02 %"}, {"reading": "0.5 %"}]}
    record = single_phase(*RATED, load=_load(analyser_ranges={"voltage": "250 V", "current": "5 A"}),
                          measurement_chain=_chain(analyser=analyser))
    entry = next(c for c in uncertainty(record)[0]["impedance_pct"].budget if "analyser U" in c.source)
    assert entry.standard_uncertainty == pytest.approx(0.5 / math.sqrt(3))


def test_accuracy_per_range_needs_one_entry_per_range():
    from pydantic import ValidationError
    analyser = {"voltage_ranges": ["150 V", "300 V"], "voltage_range_accuracy": [{"reading": "0.02 %"}]}
    with pytest.raises(ValidationError, match="one entry per voltage range"):
        single_phase(*RATED, load=_load(), measurement_chain=_chain(analyser=analyser))


def test_effective_degrees_of_freedom_of_a_type_a_only_budget():
    # One type A input alone: nu_eff = n - 1 (GUM G.4.1 with a single term).
    samples = {"count": 8, "current_sd": "0.002 A"}
    budgets, _ = uncertainty(single_phase(*RATED, no_load=_no_load(samples=samples), measurement_chain=_chain()))
    assert budgets["no_load_current_pct"].effective_degrees_of_freedom == pytest.approx(7.0)
    ct = {"ratio_error_uncertainty": "0.1 %"}
    only_b = uncertainty(single_phase(*RATED, load=_load(), measurement_chain=_chain(ct)))
    assert math.isinf(only_b[0]["load_loss_W"].effective_degrees_of_freedom)
