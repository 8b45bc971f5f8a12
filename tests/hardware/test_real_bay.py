"""Checks on a lab's real bay, skipped unless the lab asks for them.

Set HARNESS_HARDWARE=1 and HARNESS_STATION=path/to/station.yaml. These tests never energise:
they identify the instruments, confirm the source's output is off at zero volts, and read the
analyser and thermometers once. Energised tests on hardware are run by people, with the bay's
own interlocks in place, through `harness run`.
"""

from __future__ import annotations

import math
import os
from pathlib import Path

import pytest

from harness.common.yamlio import load_model
from harness.config.station import Station
from harness.runner.bay import open_bay

pytestmark = [
    pytest.mark.hardware,
    pytest.mark.skipif(os.environ.get("HARNESS_HARDWARE") != "1" or not os.environ.get("HARNESS_STATION"),
                       reason="real-bay checks: set HARNESS_HARDWARE=1 and HARNESS_STATION=<station.yaml>"),
]


@pytest.fixture
def bay():
    station = load_model(Station, Path(os.environ["HARNESS_STATION"]))
    opened = open_bay(station)
    try:
        yield station, opened
    finally:
        opened.close()


def test_every_instrument_identifies_itself(bay) -> None:
    station, opened = bay
    roles = {i["role"] for i in opened.identities}
    assert {"source", "analyser"} <= roles
    assert all(i["maker"] and i["model"] for i in opened.identities)


def test_source_is_off_at_zero_and_the_analyser_reads_dead(bay) -> None:
    station, opened = bay
    opened.source.set_voltage(0.0)
    opened.source.set_output(False)
    assert opened.source.output_is_on() is False
    reading = opened.analyser.snapshot().channels[0]
    assert math.isfinite(reading.u_rms) and abs(reading.u_rms) * station.measurement.vt_ratio < station.safe_state.deenergised_voltage
