"""The EU ecodesign rule (Regulation (EU) No 548/2014 as amended by 2019/1783, Tier 2).

What the harness carries is checked against the text it was read from:

* Article 1(1) as replaced by 2019/1783 (legislation.gov.uk/eur/2019/1783/body/data.html): "power
  transformers with a minimum power rating of 1 kVA used in 50 Hz electricity transmission and
  distribution networks or for industrial applications".
* Article 2, 2014 text (legislation.gov.uk/eur/2014/548/article/2/2014-05-21/data.html):
  (2) "'Small power transformer' means a power transformer with a highest voltage for equipment not
  exceeding 1,1 kV." (3) "'Medium power transformer' means a power transformer with a highest
  voltage for equipment higher than 1,1 kV, but not exceeding 36 kV and a rated power equal to or
  higher than 5 kVA but lower than 40 MVA." (4) "'Large power transformer' means a power
  transformer with a highest voltage for equipment exceeding 36 kV and a rated power equal or
  higher than 5 kVA, or a rated power equal to or higher than 40 MVA regardless of the highest
  voltage for equipment."

The Annex I tables (Table I.1, Table I.2, the minimum PEI) could not be retrieved: the rule must
say so in a warning and give no verdict. The PEI form is recalled (not re-read); it is checked by
hand and against a direct numerical maximisation with scipy.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from scipy.optimize import minimize_scalar

from harness.calc import compliance, evaluate, load_record
from harness.calc.record import record_from_text
from harness.common.errors import InputError

EXAMPLE = Path(__file__).resolve().parents[2] / "sequences" / "records" / "eu_ecodesign_three_phase_ground_mount.yaml"


@pytest.mark.parametrize("kva, um_kv, expected", [
    (630, 12, "medium"),         # Art. 2(3): 1.1 kV < Um <= 36 kV, 5 kVA <= Sr < 40 MVA
    (630, 36, "medium"),         # "not exceeding 36 kV": 36 kV itself is medium
    (5, 24, "medium"),           # "equal to or higher than 5 kVA"
    (39_999, 36, "medium"),      # "lower than 40 MVA"
    (40_000, 36, "large"),       # Art. 2(4): "equal to or higher than 40 MVA regardless of" Um
    (40_000, None, "large"),     # ... so Um is not needed there
    (10_000, 52, "large"),       # Art. 2(4): Um "exceeding 36 kV" and Sr >= 5 kVA
    (50, 1.1, "small"),          # Art. 2(2): Um "not exceeding 1,1 kV"
    (4, 12, None),               # Um above 1.1 kV but under 5 kVA: none of the three classes
    (630, None, None),           # below 40 MVA the class needs Um
])
def test_classes_follow_article_2(kva, um_kv, expected):
    um = None if um_kv is None else um_kv * 1e3
    assert compliance.eu_power_class(kva * 1e3, um) == expected


def test_pei_worked_by_hand():
    # PEI = 1 - 2 (P0 + Pc0) / (Sr sqrt((P0 + Pc0) / Pk)).
    # 10 MVA, P0 = 10 kW, Pc0 = 0, Pk = 90 kW: sqrt(10/90) = 1/3;
    # PEI = 1 - 2 * 10 000 / (10 000 000 / 3) = 1 - 0.006 = 0.994.
    assert compliance.peak_efficiency_index(10e3, 90e3, 10e6) == pytest.approx(0.994, abs=1e-12)
    # The cooling's no-load draw adds to P0: P0 = 8 kW and Pc0 = 2 kW give the same 0.994.
    assert compliance.peak_efficiency_index(8e3, 90e3, 10e6, pc0_W=2e3) == pytest.approx(0.994, abs=1e-12)
    # 31.5 MVA, P0 = 16 kW, Pk = 100 kW: sqrt(0.16) = 0.4;
    # PEI = 1 - 32 000 / (31 500 000 * 0.4) = 1 - 32 000 / 12 600 000 = 0.997460317...
    assert compliance.peak_efficiency_index(16e3, 100e3, 31.5e6) == pytest.approx(1 - 32e3 / 12.6e6, abs=1e-12)


@pytest.mark.parametrize("p0, pc0, pk, sr", [(10e3, 0.0, 90e3, 10e6), (16e3, 3e3, 100e3, 31.5e6),
                                             (387.0, 0.0, 3250.0, 400e3), (60e3, 5e3, 400e3, 250e6)])
def test_pei_is_the_highest_index_over_the_load_factor(p0, pc0, pk, sr):
    # By another route (scipy): maximise 1 - (P0 + Pc0 + k^2 Pk) / (k Sr) over the load factor k.
    found = minimize_scalar(lambda k: (p0 + pc0 + k * k * pk) / (k * sr), bounds=(1e-3, 3.0), method="bounded",
                            options={"xatol": 1e-10})
    assert found.success
    assert found.x == pytest.approx(math.sqrt((p0 + pc0) / pk), rel=1e-4)  # load loss equals P0 + Pc0 there
    assert compliance.peak_efficiency_index(p0, pk, sr, pc0_W=pc0) == pytest.approx(1 - found.fun, abs=1e-12)


def test_pei_refuses_losses_it_cannot_use():
    with pytest.raises(ValueError):
        compliance.peak_efficiency_index(0.0, 1e3, 1e6)


def _inputs(**changes) -> compliance.EuInputs:
    base = dict(rated_power_VA=630e3, phases=3, frequency_Hz=50.0, insulation="liquid-immersed",
                highest_voltage_V=12e3, no_load_loss_W=950.0, load_loss_W=6050.0, load_loss_reference_C=75.0)
    return compliance.EuInputs(**{**base, **changes})


def test_a_medium_unit_gets_its_class_and_losses_never_a_verdict():
    checks, (warning,) = compliance.eu_ecodesign_tier2(_inputs())
    assert checks == []
    assert "liquid-immersed medium power transformer" in warning and "Article 2" in warning
    assert "P0 = 950 W" in warning and "Pk at 75 degC = 6050 W" in warning
    assert "Table I.1" in warning and "not carried" in warning and "no verdict" in warning
    (_, (dry,)) = compliance.eu_ecodesign_tier2(_inputs(insulation="dry-type"))
    assert "Table I.2" in dry
    # Table 1 "not applicable to liquid immersed pole-mounted transformers with power ratings between
    # 25 kVA and 315 kVA" (intercom.help/414): the warning names that table too, in that range only.
    (_, (small,)) = compliance.eu_ecodesign_tier2(_inputs(rated_power_VA=250e3))
    assert "pole-mounted table" in small and "pole-mounted" not in warning
    (_, (single,)) = compliance.eu_ecodesign_tier2(_inputs(phases=1, rated_power_VA=100e3))
    assert "single-phase medium power transformers" in single and "Table I.1" not in single


def test_a_large_unit_gets_its_pei_never_a_verdict():
    # 50 MVA (large whatever Um, Art. 2(4)), P0 = 25 kW, Pk = 225 kW: sqrt(1/9) = 1/3,
    # PEI = 1 - 50 000 / (50 000 000 / 3) = 1 - 0.003 = 99.700 %.
    checks, (warning,) = compliance.eu_ecodesign_tier2(_inputs(rated_power_VA=50e6, highest_voltage_V=None,
                                                               no_load_loss_W=25e3, load_loss_W=225e3))
    assert checks == []
    assert "large power transformer" in warning and "PEI = 99.700 %" in warning and "no verdict" in warning


@pytest.mark.parametrize("changes, says", [
    ({"frequency_Hz": 60.0}, "50 Hz"),                       # Article 1(1)
    ({"rated_power_VA": 500.0}, "from 1 kVA"),               # Article 1(1)
    ({"highest_voltage_V": None}, "highest voltage for equipment"),
    ({"rated_power_VA": 4e3}, "neither a medium nor a large"),
    ({"highest_voltage_V": 1e3, "rated_power_VA": 50e3}, "small power transformers are not carried"),
    ({"load_loss_W": None}, "lacks the no-load or the load-loss test"),
])
def test_what_the_rule_cannot_judge_is_said_not_guessed(changes, says):
    checks, (warning,) = compliance.eu_ecodesign_tier2(_inputs(**changes))
    assert checks == [] and says in warning and warning.startswith("eu-ecodesign-tier2: ")


def test_the_example_record_says_class_losses_and_what_is_missing():
    results = evaluate(load_record(EXAMPLE)).to_dict()
    assert results["compliance"] == []
    (warning,) = [w for w in results["warnings"] if w.startswith("eu-ecodesign-tier2")]
    # The losses quoted are the evaluated ones: P0 as evaluated, Pk at the 75 degC reference.
    assert f"P0 = {results['no_load']['loss_W']:.4g} W" in warning
    assert f"Pk at 75 degC = {results['load']['loss_ref_W']:.4g} W" in warning
    assert "liquid-immersed medium power transformer" in warning and "Table I.1" in warning


def test_highest_voltage_below_the_rated_voltage_is_an_error():
    text = EXAMPLE.read_text(encoding="utf-8").replace("highest_voltage: 12 kV", "highest_voltage: 10 kV")
    with pytest.raises(InputError, match=r"eu-example:\d+:\d+: .*highest voltage for equipment \(10000 V\) is below"):
        record_from_text(text, file="eu-example")
