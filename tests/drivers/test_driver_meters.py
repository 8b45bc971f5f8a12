"""ResistanceMeter, Thermometer and BayControl: dialogues with their pyvisa-sim definitions."""

from __future__ import annotations

import pytest

from drivers import (BayControl, FakeTransport, InstrumentReportedError, OverRange, ProtocolError,
                     ResistanceMeter, Thermometer, open_instrument)

OHMMETER = "TCPIP0::sim-ohmmeter::5025::SOCKET"
THERMOMETER = "TCPIP0::sim-thermometer::5025::SOCKET"
BAY = "TCPIP0::sim-bay::5025::SOCKET"


@pytest.fixture
def meter(sim_rm):
    with open_instrument("resistance_meter", OHMMETER, "generic", "ohmmeter",
                         rm=sim_rm("generic-resistance-meter")) as instrument:
        yield instrument


def test_winding_resistance_with_its_test_current(meter: ResistanceMeter) -> None:
    assert meter.identify().model == "RM-10"
    assert meter.measure(1) == (pytest.approx(1.2345), pytest.approx(0.1))
    assert meter.resistance(2) == pytest.approx(4.56e-3)


def test_open_leads_are_over_range(meter: ResistanceMeter) -> None:
    with pytest.raises(OverRange, match="resistance of channel 3 is over range") as info:
        meter.measure(3)
    assert info.value.command == "MEASure:FRESistance? (@3)" and info.value.instrument == "ohmmeter"


def test_resistance_meter_without_test_current_query() -> None:
    from drivers.profile import ResistanceMeterProfile, load_profile
    generic = load_profile("generic", "resistance_meter")
    assert isinstance(generic, ResistanceMeterProfile)
    plain = generic.model_copy(update={"commands": generic.commands.model_copy(update={"test_current": None})})
    meter = ResistanceMeter(FakeTransport(lambda c: "0.5"), "ohmmeter", plain)
    assert meter.measure(1) == (0.5, None)


@pytest.fixture
def thermometer(sim_rm):
    with open_instrument("thermometer", THERMOMETER, "generic", "thermometer",
                         rm=sim_rm("generic-thermometer")) as instrument:
        yield instrument


def test_temperatures_by_channel(thermometer: Thermometer) -> None:
    assert thermometer.read(1) == 21.5
    assert thermometer.read(2) == 24.25
    assert thermometer.read(3) == 23.0
    assert thermometer.read_channels((1, 2, 3)) == (21.5, 24.25, 23.0)


def test_open_sensor_is_not_a_number(thermometer: Thermometer) -> None:
    with pytest.raises(OverRange, match="temperature of channel 4 is not a number"):
        thermometer.read(4)


def test_garbled_temperature() -> None:
    thermometer = Thermometer(FakeTransport(lambda c: "21.5 C"), "thermometer")
    with pytest.raises(ProtocolError, match="'21.5 C' is not a SCPI number"):
        thermometer.read(1)


@pytest.fixture
def bay(sim_rm):
    with open_instrument("bay_control", BAY, "generic", "bay", rm=sim_rm("generic-bay-control")) as instrument:
        yield instrument


def test_wiring_round_trip(bay: BayControl) -> None:
    assert bay.wiring() == ("lv", "open")
    bay.set_wiring("hv", "short")
    assert bay.wiring() == ("hv", "short")
    bay.set_wiring("lv", "open")
    assert bay.wiring() == ("lv", "open")


def test_wiring_words_are_checked_before_sending(bay: BayControl) -> None:
    with pytest.raises(ValueError, match="'hv' or 'lv'"):
        bay.set_wiring("tertiary", "open")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="'open' or 'short'"):
        bay.set_wiring("hv", "shorted")  # type: ignore[arg-type]


@pytest.mark.parametrize("reply, expected", [("SHOR", "short"), ("short", "short"), ("SHORT", "short"), ("open", "open")])
def test_wiring_reply_short_or_long_any_case(reply: str, expected: str) -> None:
    bay = BayControl(FakeTransport(lambda c: "HV" if c == "WIRing:FED?" else reply), "bay")
    assert bay.wiring() == ("hv", expected)


def test_unknown_wiring_reply() -> None:
    bay = BayControl(FakeTransport(lambda c: "HV" if c == "WIRing:FED?" else "SHUNT"), "bay")
    with pytest.raises(ProtocolError, match="expected one of open, short, got 'SHUNT'"):
        bay.wiring()


def test_bay_reports_a_refused_wiring() -> None:
    errors = ['-113,"Undefined header"']

    def handler(cmd: str) -> str | None:
        if cmd == "SYSTem:ERRor?":
            return errors.pop() if errors else '0,"No error"'
        return None

    with pytest.raises(InstrumentReportedError, match="-113") as info:
        BayControl(FakeTransport(handler), "bay").set_wiring("hv", "short")
    assert info.value.command == "WIRing:FED HV"
