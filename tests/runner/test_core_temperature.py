"""The runner takes the core temperature of the no-load test from the run's events."""

from __future__ import annotations

from harness.runner.record import core_temperature


def _e(kind, data):
    return {"kind": kind, "data": data}


def test_oil_read_during_the_no_load_reading_wins():
    events = [_e("temperature", {"ambient": 18.0, "oil": 21.0}), _e("core-temperature", {"temperature_C": 23.5}),
              _e("reading", {"test": "no-load"}), _e("temperature", {"oil": 30.0})]
    assert core_temperature(events) == 23.5


def test_thermometer_step_before_the_reading_otherwise():
    events = [_e("temperature", {"oil": 21.0}), _e("reading", {"test": "no-load"}),
              _e("temperature", {"oil": 30.0}), _e("reading", {"test": "load-loss"})]
    assert core_temperature(events) == 21.0


def test_none_without_an_oil_reading():
    assert core_temperature([_e("temperature", {"ambient": 18.0}), _e("reading", {"test": "no-load"})]) is None
    assert core_temperature([_e("temperature", {"oil": 21.0})]) is None
