"""Efficiency-regulation checks against the regulation's own text (10 CFR 431.196, eCFR).

The tables below are the rows as printed in 10 CFR 431.196(a)(2) and (b)(2) (eCFR, Title 10,
Part 431, Subpart K, § 431.196, read in its markdown mirror), written out here as text so the
harness's tables are checked against the printed rows, not against themselves.
"""

from __future__ import annotations

import pytest

from harness.calc import compliance, evaluate
from harness.calc.record import record_from_text

# 10 CFR 431.196(b)(2) table, liquid-immersed, 2016 (kVA efficiency pairs as printed).
CFR_B2_SINGLE = "10 98.70 15 98.82 25 98.95 37.5 99.05 50 99.11 75 99.19 100 99.25 167 99.33 250 99.39 333 99.43 " \
                "500 99.49 667 99.52 833 99.55"
CFR_B2_THREE = "15 98.65 30 98.83 45 98.92 75 99.03 112.5 99.11 150 99.16 225 99.23 300 99.27 500 99.35 750 99.40 " \
               "1000 99.43 1500 99.48 2000 99.51 2500 99.53"
# 10 CFR 431.196(a)(2) table, low-voltage dry-type, 2016.
CFR_A2_SINGLE = "15 97.70 25 98.00 37.5 98.20 50 98.30 75 98.50 100 98.60 167 98.70 250 98.80 333 98.90"
CFR_A2_THREE = "15 97.89 30 98.23 45 98.40 75 98.60 112.5 98.74 150 98.83 225 98.94 300 99.02 500 99.14 750 99.23 " \
               "1000 99.28"


def _pairs(text: str) -> tuple[tuple[float, float], ...]:
    v = [float(x) for x in text.split()]
    return tuple(zip(v[0::2], v[1::2]))


@pytest.mark.parametrize("table, phases, printed", [
    (compliance.DOE_2016_LIQUID_IMMERSED, 1, CFR_B2_SINGLE), (compliance.DOE_2016_LIQUID_IMMERSED, 3, CFR_B2_THREE),
    (compliance.DOE_2016_LOW_VOLTAGE_DRY, 1, CFR_A2_SINGLE), (compliance.DOE_2016_LOW_VOLTAGE_DRY, 3, CFR_A2_THREE),
])
def test_tables_match_the_printed_rows(table, phases, printed):
    assert tuple((float(k), e) for k, e in table[phases]) == _pairs(printed)


def test_a_row_is_its_own_value():
    assert compliance.interpolated(compliance.DOE_2016_LIQUID_IMMERSED[1], 50) == 99.11


def test_linear_interpolation_between_the_rows_immediately_above_and_below():
    # 10 CFR 431.196(b)(2): 60 kVA lies between 50 kVA (99.11 %) and 75 kVA (99.19 %);
    # by hand: 99.11 + (99.19 - 99.11) * (60 - 50) / (75 - 50) = 99.11 + 0.08 * 0.4 = 99.142
    assert compliance.interpolated(compliance.DOE_2016_LIQUID_IMMERSED[1], 60) == pytest.approx(99.142, abs=1e-9)
    # Three-phase low-voltage dry-type, 100 kVA between 75 (98.60) and 112.5 (98.74):
    # 98.60 + 0.14 * 25 / 37.5 = 98.69333...
    assert compliance.interpolated(compliance.DOE_2016_LOW_VOLTAGE_DRY[3], 100) == pytest.approx(98.693333, abs=1e-6)


def test_outside_the_table_the_rule_sets_no_minimum():
    assert compliance.interpolated(compliance.DOE_2016_LIQUID_IMMERSED[1], 5) is None
    assert compliance.interpolated(compliance.DOE_2016_LIQUID_IMMERSED[1], 1000) is None


def test_worked_efficiency_at_half_load():
    # 50 kVA, P0 = 80 W (20 degC), Pk = 480 W (55 degC), unity power factor, P = 0.5:
    # eta = 0.5 * 50000 / (0.5 * 50000 + 80 + 0.5^2 * 480) = 25000 / 25200 = 99.20635 %
    assert compliance.efficiency_pct(0.5, 50e3, 80.0, 480.0) == pytest.approx(100 * 25000 / 25200, rel=1e-12)


def _inputs(**changes) -> compliance.DoeInputs:
    base = dict(rated_power_VA=50e3, phases=1, frequency_Hz=60.0, insulation="liquid-immersed", voltage_class=None,
                no_load_loss_20C_W=80.0, no_load_loss_measured_W=81.0, load_loss_at={55.0: 480.0, 75.0: 510.0},
                load_loss_uncorrected_W=450.0)
    return compliance.DoeInputs(**{**base, **changes})


def test_liquid_immersed_uses_half_load_20C_and_55C():
    (check,), warnings = compliance.us_doe_2016(_inputs())
    assert warnings == []
    assert check.value == pytest.approx(100 * 25000 / 25200)
    assert check.limit == 99.11 and check.passed
    assert check.margin == pytest.approx(100 * 25000 / 25200 - 99.11)
    assert "431.196(b)(2)" in check.source


def test_low_voltage_dry_type_uses_35_percent_load_and_75C():
    (check,), _ = compliance.us_doe_2016(_inputs(insulation="dry-type", voltage_class="low-voltage"))
    # 0.35 * 50000 / (17500 + 80 + 0.35^2 * 510), against 98.30 % (50 kVA single-phase, (a)(2))
    assert check.value == pytest.approx(100 * 17500 / (17500 + 80 + 0.1225 * 510))
    assert check.limit == 98.30


def test_what_the_rule_cannot_judge_is_said_not_guessed():
    for inputs, says in ((_inputs(insulation=None), "insulation"),
                         (_inputs(insulation="dry-type", voltage_class="medium-voltage"), "BIL"),
                         (_inputs(rated_power_VA=5e3), "outside")):
        checks, warnings = compliance.us_doe_2016(inputs)
        assert checks == [] and says in warnings[0]


RECORD = """
standard: ieee
transformer:
  rated_power: 50 kVA
  phases: 1
  frequency: 60 Hz
  hv: {rated_voltage: 7.2 kV}
  lv: {rated_voltage: 240 V}
  winding_material: copper
  insulation: liquid-immersed
compliance: [us-doe-2016]
no_load: {winding: lv, voltage: 240 V, current: 0.9 A, power: 80 W, temperature: 30 degC}
load: {winding: hv, voltage: 118 V, current: 6.9 A, power: 400 W, temperature: 25 degC}
winding_resistance:
  hv: {resistance: 3.6 ohm, temperature: 25 degC}
  lv: {resistance: 0.0039 ohm, temperature: 25 degC}
"""


def test_record_is_judged_from_the_corrected_results_by_hand():
    results = evaluate(record_from_text(RECORD)).to_dict()
    (check,) = results["compliance"]
    # No-load loss to 20 degC (IEEE C57.12.90 form, 0.00065 per degC): 80 * (1 + 10 * 0.00065) = 80.52 W.
    p0 = 80 * (1 + (30 - 20) * 0.00065)
    # Load loss at rated current 50000/7200 A, split at 25 degC and corrected to 55 degC (234.5 copper).
    ir = 50e3 / 7200
    pk25 = 400 * (ir / 6.9) ** 2
    i2r = ir**2 * 3.6 + (50e3 / 240) ** 2 * 0.0039
    k = (234.5 + 55) / (234.5 + 25)
    pk55 = i2r * k + (pk25 - i2r) / k
    assert check["value"] == pytest.approx(100 * 25e3 / (25e3 + p0 + 0.25 * pk55), rel=1e-12)
    assert check["limit"] == 99.11 and check["source"].startswith("10 CFR 431.196(b)(2)")
