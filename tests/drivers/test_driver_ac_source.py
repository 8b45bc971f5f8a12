"""AcSource: command formatting on the fake, and its dialogue with the pyvisa-sim definition.

The pyvisa-sim device matches commands byte for byte, so a passing dialogue shows the driver
sends exactly the generic profile's SCPI-1999 forms (SOURce:VOLTage, OUTPut:STATe, ...).
"""

from __future__ import annotations

import math

import pytest

from drivers import AcSource, FakeTransport, InstrumentReportedError, NotSupported, load_profile, open_instrument
from drivers.profile import PROFILE_DIR

RESOURCE = "TCPIP0::sim-source::5025::SOCKET"


def _recording_source() -> tuple[AcSource, FakeTransport]:
    def handler(cmd: str) -> str | None:
        if cmd == "SYSTem:ERRor?":
            return '0,"No error"'
        return {"OUTPut:STATe?": "1", "SOURce:VOLTage?": "+2.300000E+02",
                "MEASure:VOLTage:AC?": "229.9", "MEASure:CURRent:AC?": "0.5"}.get(cmd)

    fake = FakeTransport(handler)
    return AcSource(fake, "source"), fake


def test_commands_sent_for_each_operation() -> None:
    source, fake = _recording_source()
    source.set_voltage(230)
    source.set_frequency(50)
    source.set_slew(20.5)
    source.set_output(True)
    source.set_output(False)
    source.set_current_protection(2.5)
    source.set_watchdog(3)
    source.set_watchdog(None)
    settings = [c for c in fake.sent if c != "SYSTem:ERRor?"]
    assert settings == [
        "SOURce:VOLTage 230.0", "SOURce:FREQuency 50.0", "SOURce:VOLTage:SLEW 20.5",
        "OUTPut:STATe ON", "OUTPut:STATe OFF",
        "SOURce:CURRent:PROTection 2.5", "SOURce:CURRent:PROTection:STATe ON",
        "SYSTem:WATChdog:TIMeout 3.0", "SYSTem:WATChdog:STATe ON", "SYSTem:WATChdog:STATe OFF",
    ]
    # every setting is followed by one error-queue read
    assert fake.sent.count("SYSTem:ERRor?") == len(settings)


def test_readbacks() -> None:
    source, _ = _recording_source()
    assert source.output_is_on() is True
    assert source.voltage_setpoint() == 230.0
    assert (source.measured_voltage(), source.measured_current()) == (229.9, 0.5)
    assert source.has_readback and source.has_watchdog


@pytest.mark.parametrize("call, value, message", [
    ("set_voltage", math.nan, "finite"), ("set_voltage", math.inf, "finite"), ("set_voltage", -1, "at least 0"),
    ("set_frequency", 0, "positive"), ("set_slew", 0, "positive"), ("set_current_protection", 0, "positive"),
    ("set_watchdog", 0, "positive"), ("set_current_protection", -2, "at least 0"),
])
def test_nonsense_setpoints_are_never_sent(call: str, value: float, message: str) -> None:
    source, fake = _recording_source()
    with pytest.raises(ValueError, match=message):
        getattr(source, call)(value)
    assert fake.sent == []


def test_profile_without_readback_or_watchdog(tmp_path) -> None:
    text = "\n".join(line for line in (PROFILE_DIR / "generic-ac-source.yaml").read_text().splitlines()
                     if "measured_" not in line and "watchdog" not in line)
    path = tmp_path / "plain-ac-source.yaml"
    path.write_text(text)
    source = AcSource(FakeTransport(lambda c: None), "source", load_profile(path, "ac_source"))
    assert source.measured_voltage() is None and source.measured_current() is None
    assert not source.has_readback and not source.has_watchdog
    with pytest.raises(NotSupported, match="no 'set_watchdog_timeout'"):
        source.set_watchdog(5)


# --- dialogue with the pyvisa-sim definition --------------------------------------------------


@pytest.fixture
def sim_source(sim_rm):
    source = open_instrument("ac_source", RESOURCE, "generic", "source", rm=sim_rm("generic-ac-source"))
    yield source
    source.close()


def test_sim_identify_and_common_commands(sim_source: AcSource) -> None:
    identity = sim_source.identify()
    assert (identity.maker, identity.model) == ("Invented Instruments", "ACS-300")
    sim_source.reset()
    sim_source.clear()


def test_sim_setpoints_round_trip(sim_source: AcSource) -> None:
    sim_source.set_voltage(115.25)
    assert sim_source.voltage_setpoint() == 115.25  # answered in NR3, "+1.152500E+02"
    sim_source.set_frequency(60)
    assert sim_source.frequency_setpoint() == 60.0
    sim_source.set_slew(25)
    assert sim_source.slew() == 25.0
    sim_source.set_current_protection(4.5)
    assert sim_source.current_protection() == 4.5
    assert sim_source.protection_tripped() is False


def test_sim_output_on_and_off(sim_source: AcSource) -> None:
    assert sim_source.output_is_on() is False
    sim_source.set_output(True)
    assert sim_source.output_is_on() is True
    sim_source.set_output(False)
    assert sim_source.output_is_on() is False


def test_sim_readback_and_watchdog(sim_source: AcSource) -> None:
    assert sim_source.measured_voltage() == pytest.approx(229.87)
    assert sim_source.measured_current() == pytest.approx(0.125)
    sim_source.set_watchdog(2.5)
    sim_source.set_watchdog(None)


def test_sim_setting_outside_the_instrument_range_is_reported(sim_source: AcSource) -> None:
    sim_source.set_voltage(100)
    with pytest.raises(InstrumentReportedError) as info:
        sim_source.set_voltage(450)
    assert info.value.code == -222 and info.value.command == "SOURce:VOLTage 450.0"
    assert info.value.instrument == "source"
    assert sim_source.voltage_setpoint() == 100.0  # the instrument kept its old setpoint
    assert sim_source.read_errors() == []  # drained


def test_sim_unanswered_query_times_out_and_recovers(sim_rm) -> None:
    from drivers import InstrumentTimeout, PyvisaTransport
    # pyvisa-sim checks the timeout between the bytes of a reply as well: long enough that a busy
    # host cannot cut the '1' short, since the unanswered query waits it out anyway.
    transport = PyvisaTransport(RESOURCE, rm=sim_rm("generic-ac-source"), timeout_s=1.0, name="source")
    try:
        with pytest.raises(InstrumentTimeout) as info:
            transport.query("SOURce:POWer?")  # not in the definition: no reply
        assert info.value.command == "SOURce:POWer?"
        assert transport.query("*OPC?") == "1"
    finally:
        transport.close()
