"""The supervisor's checks and the safe-state procedure, on fakes (the whole flow is tested
against the simulated bay in tests/runner/test_faults.py)."""

from __future__ import annotations

import math

import pytest

from harness.common.clock import SteppedClock
from harness.config.checks import EffectiveLimits
from harness.config.station import ReadingChecks, SafeState
from harness.safety import LimitTrip, ReadingFault, Supervisor, make_safe

LIMITS = EffectiveLimits(voltage=500.0, current=10.0, power=2000.0, energised_time=60.0, winding_temperature=90.0)


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


@pytest.mark.parametrize("reading,quantity", [
    ((501.0, 400.0, 1.0, 10.0), "voltage"),
    ((400.0, 501.0, 1.0, 10.0), "voltage"),      # the mean-value voltage counts too
    ((400.0, 400.0, 10.5, 10.0), "current"),
    ((400.0, 400.0, 5.0, -2100.0), "power"),     # a reversed power reading is still power
])
def test_reading_beyond_a_limit_trips(reading: tuple[float, ...], quantity: str) -> None:
    with pytest.raises(LimitTrip) as info:
        supervisor().check_reading(*reading, t=1.0, age=0.0)
    assert info.value.quantity == quantity


def test_not_a_number_and_late_readings_are_faults() -> None:
    with pytest.raises(ReadingFault):
        supervisor().check_reading(math.nan, 1, 1, 1, t=1.0, age=0.0)
    with pytest.raises(ReadingFault, match="late"):
        supervisor().check_reading(1, 1, 1, 1, t=1.0, age=5.0)


def test_energised_time_and_stale_readings() -> None:
    s = supervisor()
    s.energised_since = 0.0
    with pytest.raises(LimitTrip, match="energised time"):
        s.check_reading(1, 1, 1, 1, t=61.0, age=0.0)
    s = supervisor()
    s.energised_since = 0.0
    s.check_reading(1, 1, 1, 1, t=1.0, age=0.0)
    with pytest.raises(ReadingFault, match="stale"):
        s.check_reading(1, 1, 1, 1, t=7.0, age=0.0)


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
