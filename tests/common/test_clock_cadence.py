"""Readings at an interval, start to start, on the stepped clock (bay time moves only when slept)."""

from __future__ import annotations

from harness.common.clock import Cadence, SteppedClock


def _starts(work: list[float], interval: float) -> list[float]:
    clock = SteppedClock()
    clock.sleep(3.0)  # a cadence begins wherever the clock stands
    cadence = Cadence(clock, interval)
    starts = []
    for seconds in work:
        cadence.wait()
        starts.append(round(clock.now() - 3.0, 9))
        clock.sleep(seconds)  # the reading's own time: queries, the store, the checks
    return starts


def test_a_readings_own_time_comes_out_of_the_interval():
    assert _starts([0.1, 0.1, 0.1, 0.1], 0.5) == [0.5, 1.0, 1.5, 2.0]


def test_an_overrun_is_followed_at_once_and_never_caught_up_with_a_burst():
    # the second reading takes 0.7 s, longer than its 0.5 s slot: the third starts as it ends
    # (1.7 s), the fourth a whole interval later, not at once to make up for the lost slot
    assert _starts([0.1, 0.7, 0.1, 0.1], 0.5) == [0.5, 1.0, 1.7, 2.2]


def test_readings_that_take_no_time_come_at_the_interval():
    assert _starts([0.0, 0.0, 0.0], 0.25) == [0.25, 0.5, 0.75]
