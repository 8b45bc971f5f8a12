"""The SCPI base on the function fake: identity, common commands, the error queue.

Forms from IEEE 488.2-1992 (``*IDN?`` four fields, ``*OPC?`` answers 1) and SCPI-1999 vol. 2
(``SYSTem:ERRor?`` answers ``<code>,"<text>"``, ``0,"No error"`` when empty; -222 "Data out of
range", -113 "Undefined header"), recalled from memory.
"""

from __future__ import annotations

from collections import deque

import pytest

from drivers import (AcSource, ConnectionLost, FakeTransport, Identity, InstrumentError,
                     InstrumentReportedError, InstrumentTimeout, ProtocolError, Thermometer, load_profile)
from drivers.scpi import channel_list, parse_error, parse_identity

IDN = "Invented Instruments,ACS-300,SN0001,1.0.0"


class Scripted:
    """A fake instrument: fixed replies, an error queue, and a log of what was sent."""

    def __init__(self, replies: dict[str, str], errors: list[str] | None = None):
        self.replies = {"*IDN?": IDN, "*OPC?": "1", **replies}
        self.errors: deque[str] = deque(errors or [])

    def __call__(self, command: str) -> str | None:
        if command == "SYSTem:ERRor?":
            return self.errors.popleft() if self.errors else '0,"No error"'
        return self.replies.get(command)


def source_with(replies: dict[str, str] | None = None, errors: list[str] | None = None) -> tuple[AcSource, FakeTransport]:
    fake = FakeTransport(Scripted(replies or {}, errors))
    return AcSource(fake, "source"), fake


def test_identify_parses_the_four_fields() -> None:
    source, _ = source_with()
    assert source.identify() == Identity("Invented Instruments", "ACS-300", "SN0001", "1.0.0")


@pytest.mark.parametrize("reply", ["Invented Instruments,ACS-300,SN0001", "", "a,b,c,d,e", ",ACS,1,2"])
def test_identify_refuses_a_malformed_reply(reply: str) -> None:
    with pytest.raises(ProtocolError, match="maker,model,serial,firmware") as info:
        parse_identity(reply, "source")
    assert info.value.instrument == "source" and info.value.command == "*IDN?"


def test_identify_checks_what_the_profile_expects() -> None:
    fake = FakeTransport(Scripted({}))
    from drivers import PowerAnalyser
    analyser = PowerAnalyser(fake, "analyser", "compact-power-analyser")
    with pytest.raises(InstrumentError, match="is for maker 'Invented Instruments'|is for models"):
        fake.handler.replies["*IDN?"] = "Other Maker,PA-C3,1,1"  # type: ignore[attr-defined]
        analyser.identify()
    fake.handler.replies["*IDN?"] = "Invented Instruments,PA-X9,1,1"  # type: ignore[attr-defined]
    with pytest.raises(InstrumentError, match="is for models 'PA-C"):
        analyser.identify()
    fake.handler.replies["*IDN?"] = "invented instruments,PA-C12,7,2.0"  # type: ignore[attr-defined]
    assert analyser.identify().model == "PA-C12"


def test_reset_waits_and_checks_the_queue() -> None:
    source, fake = source_with()
    source.reset()
    assert fake.sent == ["*RST", "*OPC?", "SYSTem:ERRor?"]
    source.clear()
    assert fake.sent[-1] == "*CLS"


def test_opc_must_answer_one() -> None:
    source, _ = source_with({"*OPC?": "0"})
    with pytest.raises(ProtocolError, match="expected 1"):
        source.wait_complete()


def test_configuration_errors_are_drained_and_raised() -> None:
    source, fake = source_with(errors=['-222,"Data out of range"', '-113,"Undefined header"'])
    with pytest.raises(InstrumentReportedError) as info:
        source.set_voltage(999)
    error = info.value
    assert (error.code, error.text) == (-222, "Data out of range")
    assert error.instrument == "source" and error.command == "SOURce:VOLTage 999.0"
    assert '-113,"Undefined header"' in error.message  # every queued error is listed
    assert fake.sent == ["SOURce:VOLTage 999.0"] + ["SYSTem:ERRor?"] * 3


def test_read_errors_returns_all_and_empties_the_queue() -> None:
    source, _ = source_with(errors=['+100,"Device specific"', '-350,"Queue overflow"'])
    assert source.read_errors() == [(100, "Device specific"), (-350, "Queue overflow")]
    assert source.read_errors() == []


def test_a_queue_that_never_empties_is_a_fault() -> None:
    fake = FakeTransport(lambda cmd: '-100,"Command error"' if cmd == "SYSTem:ERRor?" else None)
    with pytest.raises(ProtocolError, match="did not empty"):
        AcSource(fake, "source").read_errors()


@pytest.mark.parametrize("reply, parsed", [
    ('0,"No error"', (0, "No error")), ('-222,"Data out of range"', (-222, "Data out of range")),
    ('+0,"No error"', (0, "No error")), ('-113, "Undefined header"', (-113, "Undefined header")),
    ("-410,Query INTERRUPTED", (-410, "Query INTERRUPTED")),
])
def test_error_replies(reply: str, parsed: tuple[int, str]) -> None:
    assert parse_error(reply) == parsed


@pytest.mark.parametrize("reply", ["No error", "", "x,\"y\""])
def test_malformed_error_reply(reply: str) -> None:
    with pytest.raises(ProtocolError, match="error-queue reply"):
        parse_error(reply, "source", "SYSTem:ERRor?")


def test_profile_without_error_queue_sends_no_error_query(tmp_path) -> None:
    from drivers.profile import PROFILE_DIR
    path = tmp_path / "plain-thermometer.yaml"
    path.write_text((PROFILE_DIR / "generic-thermometer.yaml").read_text()
                    .replace('error_query: "SYSTem:ERRor?"', "error_query: null"))
    fake = FakeTransport(lambda cmd: None if "?" not in cmd else "1" if cmd == "*OPC?" else "21.5")
    thermometer = Thermometer(fake, "thermometer", str(path))
    thermometer.reset()
    assert thermometer.read(1) == 21.5
    assert fake.sent == ["*RST", "*OPC?", "MEASure:TEMPerature? (@1)"]


def test_a_setting_without_error_queue_is_confirmed_before_the_call_returns(tmp_path) -> None:
    # Writes on different connections are not ordered: a setting must be in force before the
    # next command to another instrument, so it is waited for with *OPC? (IEEE 488.2).
    from drivers import AcSource
    from drivers.profile import PROFILE_DIR
    path = tmp_path / "plain-source.yaml"
    path.write_text((PROFILE_DIR / "generic-ac-source.yaml").read_text()
                    .replace('error_query: "SYSTem:ERRor?"', "error_query: null"))
    fake = FakeTransport(lambda cmd: "1" if cmd == "*OPC?" else None)
    AcSource(fake, "source", str(path)).set_output(False)
    assert fake.sent[-1] == "*OPC?" and fake.sent[-2].startswith("OUTPut")


def test_transport_errors_carry_the_instrument_name() -> None:
    def handler(cmd: str) -> str:
        raise ConnectionResetError(104, "reset")

    source = AcSource(FakeTransport(handler, name="link"), "ac source")
    with pytest.raises(ConnectionLost) as info:
        source.voltage_setpoint()
    assert info.value.instrument == "ac source" and info.value.command == "SOURce:VOLTage?"
    with pytest.raises(InstrumentTimeout) as info2:
        AcSource(FakeTransport(lambda c: None), "ac source").output_is_on()
    assert info2.value.instrument == "ac source" and info2.value.command == "OUTPut:STATe?"


@pytest.mark.parametrize("channels, text", [((1,), "(@1)"), ((1, 2, 3), "(@1,2,3)"), ([4], "(@4)")])
def test_channel_lists(channels, text: str) -> None:
    assert channel_list(channels) == text


@pytest.mark.parametrize("channels", [(), (0,), (-1,), (1.5,), (True,)])
def test_bad_channel_lists(channels) -> None:
    with pytest.raises(ValueError):
        channel_list(channels)


def test_profile_of_another_kind_is_refused() -> None:
    with pytest.raises(ValueError, match="is for kind 'thermometer'"):
        AcSource(FakeTransport(lambda c: None), "source", load_profile("generic", "thermometer"))
