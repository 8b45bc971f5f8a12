"""An analyser overload while the ranges hold the step's limits is that limit's trip.

Which of the two a fast-rising current shows first, a reading above the limit or an overloaded
input, depends on how far the bay moved between two readings, i.e. on the host's timing. The
reading loop makes both the same trip, so the outcome does not.
"""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from drivers import FakeTransport, OverRange, PowerAnalyser
from harness.common.clock import SteppedClock
from harness.common.yamlio import load_file, validate
from harness.config.sequence import Sequence
from harness.runner.context import Run, Sample
from harness.runner.sim_station import sim_station
from harness.safety import LimitTrip
from tests.runner.conftest import ROUTINE

OVERLOAD = "9.9E37"


class _Analyser:
    """The analyser's side of the dialogue: ranges are accepted, the snapshot reply is set."""

    def __init__(self) -> None:
        self.reply = "230.0;229.0;1.0;100.0;50.0"

    def __call__(self, command: str) -> str | None:
        if command.startswith("SYSTem:ERRor"):
            return '0,"No error"'
        if command.startswith("MEASure"):
            return self.reply
        return None


def _run() -> tuple[Run, _Analyser]:
    answer = _Analyser()
    analyser = PowerAnalyser(FakeTransport(answer, "analyser"), "analyser")
    station, _ = sim_station()
    sequence = validate(Sequence, load_file(ROUTINE))
    run = Run("test", sequence, station, SteppedClock(), SimpleNamespace(analyser=analyser), store=None,
              progress=None)
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
    run.fit_ranges(Sample(0, 0.0, 230.0, 229.0, 1.0, 100.0, 50.0, 230.0))   # 1.3 A asked, limit 6 A
    answer.reply = f"230.0;229.0;{OVERLOAD};{OVERLOAD};50.0"
    with pytest.raises(OverRange):
        run.read()


def test_overload_before_any_range_was_asked_stays_an_instrument_fault() -> None:
    run, answer = _run()
    answer.reply = f"230.0;229.0;{OVERLOAD};{OVERLOAD};50.0"
    with pytest.raises(OverRange):
        run.read()
