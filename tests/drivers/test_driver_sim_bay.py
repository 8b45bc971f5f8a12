"""The drivers against the simulated bay over loopback sockets, as they would meet hardware.

Each generic profile's dialogue with the bay's own command tree, and each link failure the bay
can act out, arriving as its InstrumentError. The bay runs threads in-process, its clock well
above real time.
"""

from __future__ import annotations

import time
from typing import Iterator

import pytest

from drivers import (AcSource, ConnectionLost, InstrumentReportedError, InstrumentTimeout, OverRange, PowerAnalyser,
                     ProtocolError, ScpiInstrument, open_instrument)
from harness.common.clock import Clock
from harness.sim.bay import Bay
from harness.sim.faults import FaultSpec
from harness.sim.scenario import load_scenario
from harness.sim.server import SimServer

TIME_SCALE = 100.0


class BayInstruments:
    def __init__(self, faults: tuple[FaultSpec, ...] = (), timeout_s: float = 1.0):
        self.scenario = load_scenario("default")
        self.bay = Bay(self.scenario, Clock(TIME_SCALE), faults)
        self.server = SimServer(self.bay)
        res = self.server.start()
        self.opened: list[ScpiInstrument] = []
        self.source: AcSource = self._open("ac_source", res["source"], "source", timeout_s)  # type: ignore[assignment]
        self.analyser: PowerAnalyser = self._open("power_analyser", res["analyser"], "analyser", timeout_s)  # type: ignore[assignment]
        self.ohmmeter = self._open("resistance_meter", res["resistance_meter"], "ohmmeter", timeout_s)
        self.thermometer = self._open("thermometer", res["thermometer"], "thermometer", timeout_s)
        self.bay_control = self._open("bay_control", res["bay_control"], "bay", timeout_s)

    def _open(self, kind: str, resource: str, name: str, timeout_s: float) -> ScpiInstrument:
        instrument = open_instrument(kind, resource, "generic", name, timeout_s=timeout_s)
        self.opened.append(instrument)
        return instrument

    def energise(self, volts: float) -> None:
        self.source.set_frequency(50)
        self.source.set_slew(100)
        self.source.set_voltage(volts)
        self.source.set_output(True)
        self.wait_bay_seconds(volts / 100 + 2)

    def wait_bay_seconds(self, seconds: float) -> None:
        time.sleep(seconds / TIME_SCALE)

    def close(self) -> None:
        for instrument in self.opened:
            instrument.close()
        self.server.stop()


@pytest.fixture
def bay() -> Iterator[BayInstruments]:
    instruments = BayInstruments()
    yield instruments
    instruments.close()


def test_every_instrument_identifies_and_configures(bay: BayInstruments) -> None:
    for instrument in bay.opened:
        identity = instrument.identify()
        assert identity.maker and identity.model
        instrument.reset()
        instrument.clear()
    bay.source.set_current_protection(10)
    bay.source.set_watchdog(30)
    bay.source.set_watchdog(None)
    bay.analyser.set_ranges(600, 5)
    bay.analyser.set_averaging(0.2)
    assert bay.analyser.ranges() == (600.0, 5.0)
    assert bay.analyser.averaging() == pytest.approx(0.2)


def test_wiring_resistance_and_temperatures(bay: BayInstruments) -> None:
    bay.bay_control.set_wiring("hv", "short")
    assert bay.bay_control.wiring() == ("hv", "short")
    bay.bay_control.set_wiring("lv", "open")
    assert bay.bay_control.wiring() == ("lv", "open")
    ohm, amps = bay.ohmmeter.measure(1)
    hv = bay.scenario.transformer.hv
    # Copper, R(theta) = R20 (235 + theta)/(235 + 20), IEC 60076-1 (recalled), at about 21 degC ambient.
    assert ohm == pytest.approx(hv.resistance * (235 + 21) / (235 + 20), rel=0.01)
    assert amps == pytest.approx(1.0)
    ambient, oil, winding = bay.thermometer.read_channels((1, 2, 3))
    assert ambient == pytest.approx(21, abs=0.5) and oil == pytest.approx(21, abs=0.5)


def test_source_and_analyser_see_the_same_voltage(bay: BayInstruments) -> None:
    bay.analyser.set_ranges(600, 5)
    bay.energise(200)
    try:
        assert bay.source.output_is_on() and bay.source.voltage_setpoint() == 200.0
        reading = bay.analyser.snapshot().channels[0]
        assert reading.u_rms == pytest.approx(200, rel=0.01)
        assert bay.source.measured_voltage() == pytest.approx(reading.u_rms, rel=0.01)
        assert reading.freq == pytest.approx(50, rel=1e-3) and reading.i_rms > 0 and reading.p > 0
    finally:
        bay.source.set_voltage(0)
        bay.source.set_output(False)
    assert bay.source.output_is_on() is False


def test_out_of_range_setting_is_reported_by_the_bay(bay: BayInstruments) -> None:
    with pytest.raises(InstrumentReportedError) as info:
        bay.analyser.set_ranges(current=10_000)
    assert info.value.code == -222 and info.value.command == "SENSe:CURRent:RANGe 10000.0"
    assert bay.analyser.read_errors() == []


def test_wiring_refused_while_live_is_reported(bay: BayInstruments) -> None:
    bay.energise(20)
    try:
        with pytest.raises(InstrumentReportedError):
            bay.bay_control.set_wiring("hv", "short")
    finally:
        bay.source.set_voltage(0)
        bay.source.set_output(False)


@pytest.mark.parametrize("fault, error", [
    ("overrange", OverRange),
    ("garbage-reply", ProtocolError),
    ("dropped-connection", ConnectionLost),
    ("analyser-silent", InstrumentTimeout),
])
def test_link_faults_arrive_as_instrument_errors(fault: str, error: type) -> None:
    bay = BayInstruments(faults=(FaultSpec(name=fault),), timeout_s=0.3)
    try:
        bay.energise(20)
        with pytest.raises(error) as info:
            for _ in range(5):
                bay.analyser.snapshot()
        assert info.value.instrument == "analyser"
        assert info.value.command == bay.analyser.snapshot_command
    finally:
        bay.source.set_voltage(0)
        bay.source.set_output(False)
        bay.close()


def test_dropped_connection_is_followed_by_a_fresh_session() -> None:
    bay = BayInstruments(faults=(FaultSpec(name="dropped-connection"),), timeout_s=0.3)
    try:
        bay.energise(20)
        with pytest.raises(ConnectionLost):
            bay.analyser.snapshot()
        assert bay.analyser.snapshot().channels[0].u_rms == pytest.approx(20, rel=0.02)
    finally:
        bay.source.set_voltage(0)
        bay.source.set_output(False)
        bay.close()
