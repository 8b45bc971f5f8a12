"""The drivers against the simulated bay over loopback sockets, as they would meet hardware.

Each generic profile's dialogue with the bay's own command tree, and each link failure the bay
can act out, arriving as its InstrumentError. The bay runs threads in-process on a stepped clock:
its time moves only when a test waits, so what a test sees does not depend on how fast the host
runs it. Every driver setting is a write followed by an error-queue query on the same
connection, so it is applied before the clock moves.
"""

from __future__ import annotations

import math
from typing import Iterator

import pytest

from drivers import (AcSource, ChannelReading, ConnectionLost, InstrumentReportedError, InstrumentTimeout, OverRange, PowerAnalyser,
                     ProtocolError, ScpiInstrument, open_instrument)
from harness.common.clock import SteppedClock
from harness.sim.bay import Bay
from harness.sim.faults import FaultSpec
from harness.sim.scenario import load_scenario
from harness.sim.server import SimServer

# Reply timeouts (real seconds) only guard against a stuck instrument; the short one is for the
# faults whose outcome is the timeout itself.
GUARD_TIMEOUT_S = 5.0
FAULT_TIMEOUT_S = 0.5


class BayInstruments:
    def __init__(self, faults: tuple[FaultSpec, ...] = (), scenario: str = "default",
                 analyser_timeout_s: float = GUARD_TIMEOUT_S):
        self.scenario = load_scenario(scenario)
        self.clock = SteppedClock()
        self.bay = Bay(self.scenario, self.clock, faults)
        self.server = SimServer(self.bay)
        res = self.server.start()
        self.opened: list[ScpiInstrument] = []
        self.source: AcSource = self._open("ac_source", res["source"], "source", GUARD_TIMEOUT_S)  # type: ignore[assignment]
        self.analyser: PowerAnalyser = self._open("power_analyser", res["analyser"], "analyser", analyser_timeout_s)  # type: ignore[assignment]
        self.ohmmeter = self._open("resistance_meter", res["resistance_meter"], "ohmmeter", GUARD_TIMEOUT_S)
        self.thermometer = self._open("thermometer", res["thermometer"], "thermometer", GUARD_TIMEOUT_S)
        self.bay_control = self._open("bay_control", res["bay_control"], "bay", GUARD_TIMEOUT_S)

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
        self.clock.sleep(seconds)

    def settle_at(self, volts: float) -> ChannelReading:
        """Set the source, wait for its slew (100 V/s set by energise) and settling, then read."""
        before = self.source.voltage_setpoint()
        self.source.set_voltage(volts)
        self.wait_bay_seconds(abs(volts - before) / 100 + 3)
        return self.analyser.snapshot().channels[0]

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


def test_short_mnemonics_reach_the_bay(bay: BayInstruments, tmp_path) -> None:
    from drivers.profile import PROFILE_DIR
    path = tmp_path / "short-ac-source.yaml"
    path.write_text((PROFILE_DIR / "generic-ac-source.yaml").read_text().replace("mnemonics: long", "mnemonics: short"))
    source = open_instrument("ac_source", bay.server.resources()["source"], path, "short source")
    try:
        assert source._template("set_frequency") == "SOUR:FREQ {value}"  # what goes on the wire
        source.set_frequency(60)
        assert source.frequency_setpoint() == 60.0
        source.set_voltage(12.5)
        assert bay.source.voltage_setpoint() == 12.5  # the long-form session sees the same source
    finally:
        source.close()


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
    bay = BayInstruments(faults=(FaultSpec(name=fault),), analyser_timeout_s=FAULT_TIMEOUT_S)
    try:
        bay.energise(20)
        bay.wait_bay_seconds(5.0)   # energised past every default trigger (2, 3 and 5 bay s)
        with pytest.raises(error) as info:
            bay.analyser.snapshot()
        assert info.value.instrument == "analyser"
        assert info.value.command == bay.analyser.snapshot_command
    finally:
        bay.source.set_voltage(0)
        bay.source.set_output(False)
        bay.close()


def test_dropped_connection_is_followed_by_a_fresh_session() -> None:
    bay = BayInstruments(faults=(FaultSpec(name="dropped-connection"),), analyser_timeout_s=FAULT_TIMEOUT_S)
    try:
        bay.energise(20)
        bay.wait_bay_seconds(3.0)   # energised past the default trigger (3 bay s)
        with pytest.raises(ConnectionLost):
            bay.analyser.snapshot()
        assert bay.analyser.snapshot().channels[0].u_rms == pytest.approx(20, rel=0.02)
    finally:
        bay.source.set_voltage(0)
        bay.source.set_output(False)
        bay.close()


# --- physics, seen through the drivers alone ---------------------------------------------------


def test_no_load_current_rises_steeply_above_rated_voltage() -> None:
    bay = BayInstruments()
    try:
        rated = bay.scenario.transformer.lv.rated_voltage
        bay.analyser.set_ranges(600, 20)  # past the knee the current is several times its rated value
        bay.energise(0)
        currents = [bay.settle_at(rated * pu).i_rms for pu in (0.9, 1.0, 1.1, 1.2)]
        steps = [b - a for a, b in zip(currents, currents[1:])]
        # Beyond about 1.1 pu flux the magnetising current rises steeply (common practice, no source).
        assert steps[1] > 2 * steps[0] and steps[2] > 2 * steps[1]
    finally:
        bay.source.set_output(False)
        bay.close()


def test_load_current_is_proportional_to_voltage() -> None:
    bay = BayInstruments()
    try:
        bay.bay_control.set_wiring("hv", "short")
        bay.analyser.set_ranges(300, 10)
        bay.energise(0)
        admittances = [(r.i_rms / r.u_rms) for r in (bay.settle_at(v) for v in (60.0, 120.0, 180.0))]
        # A short-circuited unit is a linear series impedance: I/U constant (textbook relation Z = U/I).
        assert max(admittances) / min(admittances) < 1.01
    finally:
        bay.source.set_output(False)
        bay.close()


def test_winding_warms_during_a_long_load_test() -> None:
    bay = BayInstruments()
    try:
        tf = bay.scenario.transformer
        rated_current = tf.rated_power / tf.hv.rated_voltage
        bay.bay_control.set_wiring("hv", "short")
        bay.analyser.set_ranges(600, 20)
        bay.energise(0)
        # Impedance voltage of a distribution unit is a few per cent (common practice, no source).
        reading = bay.settle_at(0.03 * tf.hv.rated_voltage)
        bay.settle_at(0.03 * tf.hv.rated_voltage * rated_current / reading.i_rms)
        start = bay.thermometer.read(3)
        bay.wait_bay_seconds(300)
        assert bay.thermometer.read(3) - start > 2.0  # five bay minutes near rated current
    finally:
        bay.source.set_output(False)
        bay.close()


def test_mean_and_rms_voltage_differ_under_distortion() -> None:
    bay = BayInstruments(scenario="aluminium-distorted")
    try:
        bay.analyser.set_ranges(600, 5)
        bay.energise(0)
        reading = bay.settle_at(bay.scenario.transformer.lv.rated_voltage)
        # A sine has U_mean (rms-scaled) = U_rms; harmonics make them differ (IEC 60076-1 waveform
        # correction, recalled from memory). The scenario's supply is distorted by a few per cent.
        assert not math.isclose(reading.u_mean, reading.u_rms, rel_tol=0.01)
    finally:
        bay.source.set_output(False)
        bay.close()
