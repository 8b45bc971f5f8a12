"""The reading loop's decisions that must not depend on the host's timing.

An analyser overload while the ranges hold the step's limits is that limit's trip: which of the
two a fast-rising current shows first, a reading above the limit or an overloaded input, depends
on how far the bay moved between two readings. A reading is late only past the station's bay-time
threshold and a real-time floor, long on a simulated bay whose replies share the busy host.
Time is a stepped clock that the instrument's reply moves.
"""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from drivers import FakeTransport, OverRange, PowerAnalyser
from harness.common.clock import SteppedClock
from harness.common.yamlio import load_file, validate
from harness.config.sequence import Sequence
from harness.common.reading import Phase, combine
from harness.runner.context import Run
from harness.runner.sim_station import sim_station
from harness.safety import LimitTrip, ReadingFault
from tests.runner.conftest import ROUTINE

OVERLOAD = "9.9E37"


class _Analyser:
    """The analyser's side of the dialogue: ranges are accepted, the snapshot reply is set and
    takes ``reply_s`` bay seconds (real seconds too: the clock's scale is 1)."""

    def __init__(self, clock: SteppedClock) -> None:
        self.clock = clock
        self.reply = "230.0;229.0;1.0;100.0;50.0"
        self.reply_s = 0.0

    def __call__(self, command: str) -> str | None:
        if command.startswith("SYSTem:ERRor"):
            return '0,"No error"'
        if command.startswith("MEASure"):
            self.clock.sleep(self.reply_s)
            return self.reply
        return None


def _run(simulated: bool = True) -> tuple[Run, _Analyser]:
    clock = SteppedClock()
    answer = _Analyser(clock)
    analyser = PowerAnalyser(FakeTransport(answer, "analyser"), "analyser")
    station, _ = sim_station()
    station = station.model_copy(update={"simulated": simulated})
    sequence = validate(Sequence, load_file(ROUTINE))
    store = SimpleNamespace(add_sample=lambda *args: 0)
    progress = SimpleNamespace(sample=lambda *args: None)
    run = Run("test", sequence, station, clock, SimpleNamespace(analyser=analyser), store=store,
              progress=progress)
    ramp = next(step for step in sequence.steps if step.name == "to rated voltage")   # current 6 A
    run.use_limits(run.base_limits.tightened(ramp.limits), ramp.name)
    return run, answer


@pytest.mark.parametrize("reply, quantity", [
    (f"230.0;229.0;{OVERLOAD};{OVERLOAD};50.0", "current"),
    (f"{OVERLOAD};{OVERLOAD};1.0;100.0;50.0", "voltage"),
])
def test_overload_on_ranges_asked_at_the_limits_is_the_limit_trip(reply: str, quantity: str) -> None:
    run, answer = _run()
    run.range_for_limits()
    answer.reply = reply
    with pytest.raises(LimitTrip) as info:
        run.read()
    trip = info.value
    assert trip.quantity == quantity and trip.limit == getattr(run.supervisor.limits, quantity)
    assert f"{quantity} limit" in str(trip) and "over range" in str(trip)
    assert trip.step == "to rated voltage"


def test_overload_on_ranges_fitted_below_the_limits_stays_an_instrument_fault() -> None:
    run, answer = _run()
    run.fit_ranges(combine(0, 0.0, (Phase(230.0, 229.0, 1.0, 100.0),), 50.0, 230.0))   # 1.3 A asked, limit 6 A
    answer.reply = f"230.0;229.0;{OVERLOAD};{OVERLOAD};50.0"
    with pytest.raises(OverRange):
        run.read()


def test_overload_before_any_range_was_asked_stays_an_instrument_fault() -> None:
    run, answer = _run()
    answer.reply = f"230.0;229.0;{OVERLOAD};{OVERLOAD};50.0"
    with pytest.raises(OverRange):
        run.read()


@pytest.mark.parametrize("simulated, reply_s, late", [
    (True, 1.5, False),    # past late_after (1 s) but within the simulated floor (2 s real)
    (True, 2.5, True),
    (False, 1.5, True),    # a real bay: late_after decides above the short floor (0.25 s)
    (False, 0.5, False),
])
def test_a_reading_is_late_past_the_threshold_and_the_floor(simulated: bool, reply_s: float, late: bool) -> None:
    run, answer = _run(simulated)
    assert run.station.readings.late_after == 1.0
    answer.reply_s = reply_s
    if late:
        with pytest.raises(ReadingFault, match="late"):
            run.read()
    else:
        assert run.read().u_rms == 230.0
