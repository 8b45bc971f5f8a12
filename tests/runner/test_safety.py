"""The supervisor's checks and the safe-state procedure, on fakes (the whole flow is tested
against the simulated bay in tests/runner/test_faults.py)."""

from __future__ import annotations

import math

import pytest

from harness.common.clock import Clock, SteppedClock
from harness.common.reading import Phase, Sample, combine
from harness.config.checks import EffectiveLimits
from harness.config.station import ReadingChecks, SafeState
from harness.safety import LimitTrip, ReadingFault, Supervisor, make_safe

LIMITS = EffectiveLimits(voltage=500.0, current=10.0, power=2000.0, energised_time=60.0, winding_temperature=90.0)


def reading(u: float, um: float, i: float, p: float, t: float = 1.0) -> Sample:
    return combine(0, t, (Phase(u, um, i, p),), 50.0, 0.0)


def three(phases: list[tuple[float, float, float, float]], t: float = 1.0) -> Sample:
    return combine(0, t, tuple(Phase(*ph) for ph in phases), 50.0, 0.0)


def supervisor() -> Supervisor:
    return Supervisor(LIMITS, ReadingChecks(), SteppedClock(), step="test")


def test_setpoint_above_limit_trips_before_it_is_sent() -> None:
    with pytest.raises(LimitTrip) as info:
        supervisor().check_setpoint(500.1)
    assert (info.value.quantity, info.value.limit) == ("voltage", 500.0)


@pytest.mark.parametrize("bad", [math.nan, math.inf, -1.0])
def test_invalid_setpoints_trip(bad: float) -> None:
    with pytest.raises(LimitTrip):
        supervisor().check_setpoint(bad)


@pytest.mark.parametrize("values,quantity", [
    ((501.0, 400.0, 1.0, 10.0), "voltage"),
    ((400.0, 501.0, 1.0, 10.0), "voltage"),      # the mean-value voltage counts too
    ((400.0, 400.0, 10.5, 10.0), "current"),
    ((400.0, 400.0, 5.0, -2100.0), "power"),     # a reversed power reading is still power
])
def test_reading_beyond_a_limit_trips(values: tuple[float, ...], quantity: str) -> None:
    with pytest.raises(LimitTrip) as info:
        supervisor().check_reading(reading(*values), age=0.0)
    assert info.value.quantity == quantity


def test_every_phase_is_guarded_and_the_phase_is_named() -> None:
    """A current limit is a limit on each line current: one phase over it trips although the
    mean of the three is well inside (common practice, no source)."""
    ok, high = (400.0, 400.0, 5.0, 100.0), (400.0, 400.0, 10.5, 100.0)
    with pytest.raises(LimitTrip) as info:
        supervisor().check_reading(three([ok, high, ok]), age=0.0)
    assert (info.value.quantity, info.value.phase) == ("current", "L2")
    assert "on phase L2" in info.value.sentence()
    with pytest.raises(LimitTrip, match="voltage limit on phase L3"):
        supervisor().check_reading(three([ok, ok, (400.0, 501.0, 5.0, 100.0)]), age=0.0)


def test_three_phase_power_limit_is_on_the_total_and_nan_names_the_phase() -> None:
    each = (400.0, 400.0, 5.0, 700.0)  # 3 x 700 W = 2100 W > 2000 W
    with pytest.raises(LimitTrip) as info:
        supervisor().check_reading(three([each, each, each]), age=0.0)
    assert (info.value.quantity, info.value.value, info.value.phase) == ("power", 2100.0, None)
    with pytest.raises(ReadingFault, match="phase L1"):
        supervisor().check_reading(three([(400.0, math.nan, 5.0, 1.0), each, each]), age=0.0)


def test_three_phase_setpoint_is_checked_as_the_line_voltage() -> None:
    s = supervisor()
    s.setpoint_factor = math.sqrt(3)  # a three-phase source set line-to-neutral
    s.check_setpoint(288.0)  # 498.8 V line-to-line
    with pytest.raises(LimitTrip) as info:
        s.check_setpoint(289.0)  # 500.6 V line-to-line
    assert info.value.value == pytest.approx(289.0 * math.sqrt(3))


def test_not_a_number_and_late_readings_are_faults() -> None:
    with pytest.raises(ReadingFault):
        supervisor().check_reading(reading(math.nan, 1, 1, 1, t=1.0), age=0.0)
    with pytest.raises(ReadingFault, match="late"):
        supervisor().check_reading(reading(1, 1, 1, 1, t=1.0), age=5.0)


def test_energised_time_and_stale_readings() -> None:
    s = supervisor()
    s.energised_since = 0.0
    with pytest.raises(LimitTrip, match="energised time"):
        s.check_reading(reading(1, 1, 1, 1, t=61.0), age=0.0)
    s = supervisor()
    s.energised_since = 0.0
    s.check_reading(reading(1, 1, 1, 1, t=1.0), age=0.0)
    with pytest.raises(ReadingFault, match="stale"):
        s.check_reading(reading(1, 1, 1, 1, t=7.0), age=0.0)


def test_winding_temperature_limit() -> None:
    with pytest.raises(LimitTrip, match="winding temperature"):
        supervisor().check_temperature(91.0)


class FakeSource:
    def __init__(self, stuck: bool = False, broken: bool = False):
        self.volts, self.on, self.stuck, self.broken = 400.0, True, stuck, broken

    def set_voltage(self, v: float) -> None:
        if self.broken:
            raise OSError("link down")
        if not self.stuck:
            self.volts = v

    def set_output(self, on: bool) -> None:
        if not self.stuck:
            self.on = on

    def live(self) -> tuple[float, float]:
        return (self.volts if self.on else 0.0, 0.0)


def test_safe_state_confirmed_by_measurement() -> None:
    src = FakeSource()
    out = make_safe(src, [("analyser", src.live)], SafeState(), SteppedClock())
    assert out.confirmed and out.method == "analyser" and not src.on


def test_stuck_output_is_not_confirmed() -> None:
    src = FakeSource(stuck=True)
    out = make_safe(src, [("analyser", src.live)], SafeState(confirm_timeout=1.0), SteppedClock())
    assert not out.confirmed and out.voltage == 400.0


def test_failed_probe_falls_back_to_the_next() -> None:
    src = FakeSource()

    def silent() -> tuple[float, float]:
        raise TimeoutError("analyser silent")
    out = make_safe(src, [("analyser", silent), ("source readback", src.live)], SafeState(), SteppedClock())
    assert out.confirmed and out.method == "source readback"
    assert any("analyser silent" in n for n in out.notes)


def test_every_step_is_attempted_when_the_source_fails() -> None:
    src = FakeSource(broken=True)
    out = make_safe(src, [("analyser", src.live)], SafeState(), SteppedClock())
    assert not src.on                                # output off still tried after the setpoint failed
    assert out.confirmed and any("set voltage to zero" in n for n in out.notes)
