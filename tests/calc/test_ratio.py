"""Voltage ratio and phase displacement against outside sources.

Sources: the ratio tolerance is IEC 60076-1 Table 1 item 2 (read in a public copy of the
1993+A1:1999 table: on the principal tap the lower of +/-0.5 % of the declared ratio and +/-1/10
of the actual percentage impedance; on other taps "to be agreed, but not less than the lesser" of
those); the clock numbers are IEC 60076-1 Annex D (recalled, not re-read: the LV lag behind the HV
in 30-degree steps; Dyn11 LV leads by 30 degrees, YNd1 LV lags by 30 degrees, Yzn5 lags by 150);
the arithmetic is worked by hand below.
"""

from __future__ import annotations

import math

import pytest

from harness.calc import evaluate
from harness.calc.ratio import (
    clock_number, declared_ratio, deviation_pct, displacement_error_deg, ratio_limit_pct, tap_factor,
)
from harness.calc.record import record_from_text
from harness.common.errors import InputError
from harness.sim import three_phase
from harness.sim.scenario import load_scenario
from harness.sim.transformer import SourceImpedance, Wiring


def test_declared_ratio_and_deviation_by_hand() -> None:
    # 11 kV / 420 V: 11000 / 420 = 26.190476...; tap +1 at 2.5 % on the HV: 11275 / 420 = 26.845238...
    assert declared_ratio(11000.0, 420.0, None, 0.0, 0) == pytest.approx(26.190476190, rel=1e-9)
    assert declared_ratio(11000.0, 420.0, "hv", 2.5, 1) == pytest.approx(26.845238095, rel=1e-9)
    # An LV tap divides: 11000 / (420 x 0.95) = 27.568922...
    assert declared_ratio(11000.0, 420.0, "lv", 2.5, -2) == pytest.approx(27.568922306, rel=1e-9)
    # Measured 26.20 against 26.190476: (26.20 - 26.190476) / 26.190476 = +0.036364 %
    assert deviation_pct(26.20, 11000.0 / 420.0) == pytest.approx(0.0363636, abs=1e-6)
    assert tap_factor(2.5, -2) == pytest.approx(0.95)


@pytest.mark.parametrize("impedance, limit", [
    (4.0, 0.4),    # 1/10 of 4 % is below 0.5 %: IEC 60076-1 Table 1 item 2
    (6.0, 0.5),    # 1/10 of 6 % is above 0.5 %: the 0.5 % bound holds
    (None, 0.5),   # no impedance known: only the 0.5 % bound can be applied
])
def test_ratio_tolerance_is_the_lower_of_half_a_percent_and_a_tenth_of_the_impedance(impedance, limit) -> None:
    assert ratio_limit_pct(impedance) == pytest.approx(limit)


@pytest.mark.parametrize("lag, clock", [(330.0, 11), (344.9, 11), (345.1, 0), (30.0, 1), (150.0, 5), (0.0, 0),
                                        (359.9, 0), (180.0, 6)])
def test_clock_number_is_the_nearest_30_degree_step(lag, clock) -> None:
    assert clock_number(lag) == clock


def test_displacement_error_wraps_around_zero() -> None:
    assert displacement_error_deg(359.0, 0) == pytest.approx(-1.0)
    assert displacement_error_deg(331.0, 11) == pytest.approx(1.0)


def _three_phase_unit(group: str, hv: tuple[str, bool], lv: tuple[str, bool]):
    base = load_scenario("three-phase").transformer
    return base.model_copy(update={
        "vector_group": group,
        "hv": base.hv.model_copy(update={"connection": hv[0], "neutral": hv[1]}),
        "lv": base.lv.model_copy(update={"connection": lv[0], "neutral": lv[1]})})


@pytest.mark.parametrize("group, hv, lv, clock", [
    ("Dyn11", ("delta", False), ("star", True), 11),
    ("YNd1", ("star", True), ("delta", False), 1),
    ("Yzn5", ("star", False), ("zigzag", True), 5),
])
def test_clock_numbers_from_the_simulated_phasors(group, hv, lv, clock) -> None:
    """The HV fed with a positive-sequence supply, the LV open: the lag of each LV line-to-line
    voltage behind the matching HV one, in the simulated circuit, gives the group's clock number
    (IEC 60076-1 Annex D, recalled)."""
    spec = _three_phase_unit(group, hv, lv)
    tf = three_phase.ThreePhaseTransformer(spec)
    emf = three_phase.phase_emfs((complex(100.0),), (1,))
    op = three_phase.solve(tf, Wiring("hv", "open"), emf, (1,), spec.frequency, 20.0, SourceImpedance(0.0, 0.0))
    for a, b in ((0, 1), (1, 2), (2, 0)):
        u_hv = op.line_to_line(a, b)[0]
        u_lv = op.other_terminal[a][0] - op.other_terminal[b][0]
        lag = math.degrees(math.atan2((u_hv / u_lv).imag, (u_hv / u_lv).real)) % 360.0
        assert clock_number(lag) == clock
        assert abs(displacement_error_deg(lag, clock)) < 0.1


RECORD = """\
transformer:
  rated_power: 400 kVA
  phases: 3
  frequency: 50 Hz
  vector_group: Dyn11
  hv: {rated_voltage: 11 kV, connection: delta}
  lv: {rated_voltage: 420 V, connection: star, neutral: true}
  taps: {winding: hv, steps: [-2, 2], step: 2.5 %}
guarantees: {impedance: 4 %}
ratio:
  winding: hv
  readings:
    - {tap: 0, hv: [400 V, 400 V, 400 V], lv: [15.28 V, 15.27 V, 15.275 V], displacement: [330 deg, 331 deg, 329 deg]}
    - {tap: 1, hv: 400 V, lv: LV1, displacement: LAG1}
"""


def _results(lv_tap1: str = "14.90 V", lag_tap1: str = "330 deg", extra: str = ""):
    return evaluate(record_from_text(_text(lv_tap1, lag_tap1) + extra)).to_dict()


def _text(lv_tap1: str, lag_tap1: str) -> str:
    return RECORD.replace("LV1", lv_tap1).replace("LAG1", lag_tap1)


def _check(results, quantity):
    return next(c for c in results["checks"] if c["quantity"] == quantity)


def test_a_hand_entered_ratio_record_is_judged_per_tap() -> None:
    r = _results()
    # Tap +1: 400 / 14.90 = 26.845638 against 26.845238: +0.0015 %, inside 1/10 of 4 % = 0.4 %.
    tap1 = r["ratio"]["taps"][1]
    assert tap1["phases"][0]["measured"] == pytest.approx(400 / 14.90)
    assert tap1["phases"][0]["deviation_pct"] == pytest.approx(100 * (400 / 14.90 / (11275 / 420) - 1))
    assert tap1["limit_pct"] == pytest.approx(0.4) and r["ratio"]["impedance_basis"] == "declared"
    assert _check(r, "voltage_ratio_tap_0")["passed"] and _check(r, "voltage_ratio_tap_+1")["passed"]
    assert _check(r, "phase_displacement")["passed"]
    assert "IEC 60076-1 Table 1" in _check(r, "voltage_ratio_tap_+1")["source"]


def test_a_tap_off_by_a_step_fails_its_own_check_only() -> None:
    r = _results(lv_tap1="14.55 V")        # 400 / 14.55 = 27.49: the ratio of tap +2 on tap +1
    assert not _check(r, "voltage_ratio_tap_+1")["passed"]
    assert _check(r, "voltage_ratio_tap_0")["passed"]


def test_a_wrong_clock_fails_the_phase_displacement_check() -> None:
    r = _results(lag_tap1="30 deg")       # clock 1 on a Dyn11 unit
    check = _check(r, "phase_displacement")
    assert not check["passed"] and "clock 1" in check["note"]


def test_the_records_tolerance_overrides_the_standards() -> None:
    r = _results(lv_tap1="14.95 V", extra="tolerances: {ratio: 0.5 %}\n")   # -0.33 %: inside 0.5 %
    check = _check(r, "voltage_ratio_tap_+1")
    assert check["passed"] and check["source"] == "record" and r["ratio"]["impedance_basis"] == "record"


def test_a_tap_off_the_nameplate_is_refused_at_its_place() -> None:
    text = _text("14.9 V", "330 deg").replace("- {tap: 1,", "- {tap: 3,")
    with pytest.raises(InputError) as caught:
        record_from_text(text, "r.yaml")
    assert "tap 3 is not on the nameplate" in str(caught.value) and caught.value.line == 14
