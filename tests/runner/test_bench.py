"""The benchmarks' own arithmetic: the ramp's floor, the sequence's energised stretches."""

from __future__ import annotations

import math

import numpy as np
import pytest

from harness.runner.bench.ramp import bound_s, floor_s
from harness.runner.bench.sequence import _energised


@pytest.mark.parametrize(("volts", "slew", "tau", "tol"), [(264.0, 100.0, 0.2, 0.003), (130.0, 100.0, 0.2, 0.003),
                                                          (640.0, 200.0, 0.5, 0.01)])
def test_floor_is_when_a_slewed_first_order_lag_enters_the_band(volts, slew, tau, tol):
    """First-order lag driven by a ramp at the slew rate, integrated numerically (textbook
    first-order system response, recalled from memory): the output lags slew*tau behind the
    ramp and then decays exponentially; the floor is the last time it is outside the band."""
    dt = 1e-4
    t = np.arange(0.0, volts / slew + 12 * tau, dt)
    command = np.minimum(slew * t, volts)
    out = np.zeros_like(t)
    for k in range(1, len(t)):
        out[k] = out[k - 1] + (command[k - 1] - out[k - 1]) * dt / tau
    outside = np.abs(out - volts) > tol * volts
    last = t[outside].max()
    assert floor_s(volts, slew, tau, tol) == pytest.approx(last, abs=5 * dt + 1e-3)
    assert floor_s(volts, slew, tau, tol) >= volts / slew and bound_s(volts, slew, tau) == volts / slew + tau


def test_floor_without_a_tail_is_the_slewing_alone():
    # a band wider than the lag: the output is inside it as the slew ends
    assert floor_s(100.0, 100.0, 0.1, 0.5) == pytest.approx(1.0)
    assert math.isfinite(floor_s(100.0, 100.0, 0.2, 0.2))


def test_energised_stretches_run_from_energising_to_a_confirmed_off():
    events = [
        {"t": 1.0, "kind": "off", "data": {"confirmed": True}},  # before anything was energised
        {"t": 2.0, "kind": "energised", "data": None},
        {"t": 9.0, "kind": "off", "data": {"confirmed": True}},
        {"t": 10.0, "kind": "energised", "data": None},
        {"t": 14.0, "kind": "off", "data": {"confirmed": False}},  # not confirmed: still live
        {"t": 15.5, "kind": "safe-state", "data": {"confirmed": True}},
    ]
    assert _energised(events) == [(2.0, 9.0), (10.0, 15.5)]


def test_a_benchmark_away_from_a_checkout_says_so_without_a_traceback(monkeypatch, capsys):
    """An installed package has no example sequences beside it: a one-line error, exit 2."""
    from harness import cli
    from harness.runner.bench import startup

    monkeypatch.setattr(startup, "CHECK_SEQUENCE", "not-a-sequence.yaml")
    assert cli.main(["bench", "startup"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("harness: the example sequences are not in ") and "Traceback" not in err


def test_overhead_sides_alternate_in_blocks_and_the_commit_counts_whole(monkeypatch):
    """bench overhead's arithmetic on a clock moved only by the sides themselves (no host timing):
    turns reverse (A B B A ...), a side's figure is its median block, and the harness's closing
    commit is added to its round whole."""
    from harness.runner.bench import overhead

    now = [0.0]
    monkeypatch.setattr(overhead.time, "perf_counter", lambda: now[0])
    calls: list[str] = []

    def side(name: str, cost: float):
        def fn() -> None:
            calls.append(name)
            now[0] += cost
        return fn

    def commit() -> None:
        calls.append("commit")
        now[0] += 40.0

    us = overhead._alternating({"raw": (side("raw", 1.0), None), "harness": (side("harness", 2.0), commit)},
                               rounds=3, n=20, block=5)
    assert us["raw"] == [1e6] * 3                           # 1 s per reading, every round
    assert us["harness"] == [(2.0 * 5 + 40.0 / 4) / 5 * 1e6] * 3  # its blocks plus the commit spread over them
    timed = [c for c in calls[100:] if c != "commit"]       # after the 50 warm-up pairs
    assert timed[:20] == ["raw"] * 5 + ["harness"] * 10 + ["raw"] * 5
    assert calls.count("commit") == 3 and len(timed) == 3 * 4 * 2 * 5


def test_the_overhead_benchmarks_bay_serves_every_instrument_the_station_names():
    """bench overhead opens the simulated station: every role it names must be listening."""
    from harness.runner.bench.overhead import served_bay
    from harness.runner.sim_station import sim_station
    from harness.sim.server import ROLES

    with served_bay() as resources:
        assert set(resources) == set(ROLES)
        station, _ = sim_station(resources)
        named = {role for role, spec in station.instruments if spec is not None}
        assert named <= set(resources)
