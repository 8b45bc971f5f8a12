"""PowerAnalyser: one snapshot query per reading, in any layout a profile describes.

Overload 9.9E37 and not-a-number 9.91E37 are SCPI-1999 vol. 1 special values (recalled from
memory); they must raise OverRange naming the quantity and channel, never pass as readings.
"""

from __future__ import annotations

import pytest

from drivers import (ChannelReading, FakeTransport, InstrumentReportedError, OverRange, PowerAnalyser,
                     ProtocolError, Snapshot, open_instrument)

GENERIC = "TCPIP0::sim-analyser::5025::SOCKET"
OVERLOADED = "TCPIP0::sim-overloaded::5025::SOCKET"
COMPACT = "TCPIP0::sim-compact::5025::SOCKET"
ONE = ("MEASure:VOLTage:AC? (@1);:MEASure:VOLTage:MEAN? (@1);:MEASure:CURRent:AC? (@1);"
       ":MEASure:POWer:AC? (@1);:MEASure:FREQuency? (@1)")


def _analyser(reply: str, channels=(1,), profile: str = "generic") -> tuple[PowerAnalyser, FakeTransport]:
    fake = FakeTransport(lambda cmd: reply if "?" in cmd else None)
    return PowerAnalyser(fake, "analyser", profile, channels=channels), fake


def test_snapshot_is_one_query_of_the_agreed_form() -> None:
    analyser, fake = _analyser("230.1;229.5;0.512;38.7;50.0")
    snapshot = analyser.snapshot()
    assert fake.sent == [ONE]
    assert snapshot == Snapshot((ChannelReading(230.1, 229.5, 0.512, 38.7, 50.0),), "230.1;229.5;0.512;38.7;50.0")


def test_readings_are_immutable() -> None:
    import dataclasses
    reading = ChannelReading(1.0, 2.0, 3.0, 4.0, 5.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        reading.p = 9.0  # type: ignore[misc]
    assert (reading.u_rms, reading.u_mean, reading.i_rms, reading.p, reading.freq) == (1.0, 2.0, 3.0, 4.0, 5.0)
    assert reading == ChannelReading(1.0, 2.0, 3.0, 4.0, 5.0) and hash(reading) == hash(ChannelReading(1.0, 2.0, 3.0, 4.0, 5.0))
    assert not hasattr(reading, "__dict__")


def test_three_channels_by_quantity() -> None:
    reply = "230.1,230.4,229.9;229.5,229.9,229.4;0.512,0.498,0.505;38.7,37.9,38.2;50,50,50"
    analyser, fake = _analyser(reply, channels=(1, 2, 3))
    channels = analyser.snapshot().channels
    assert fake.sent[0].count("(@1,2,3)") == 5
    assert channels[1] == ChannelReading(230.4, 229.9, 0.498, 37.9, 50.0)
    assert [c.p for c in channels] == [38.7, 37.9, 38.2]


def test_compact_profile_by_channel_with_a_skipped_field() -> None:
    reply = "38.7,230.1,229.5,0.512,50.0,OK;37.9,230.4,229.9,0.498,50.0,OK"
    analyser, fake = _analyser(reply, channels=(1, 2), profile="compact-power-analyser")
    channels = analyser.snapshot().channels
    assert fake.sent == ["FETC:ARR? (@1,2)"]
    assert channels == (ChannelReading(230.1, 229.5, 0.512, 38.7, 50.0), ChannelReading(230.4, 229.9, 0.498, 37.9, 50.0))


@pytest.mark.parametrize("reply, quantity, words", [
    ("230.1;229.5;9.9E37;38.7;50.0", "i_rms of channel 1", "over range (9.9E37)"),
    ("230.1;229.5;0.5;9.91E+37;50.0", "p of channel 1", "not a number"),
    ("-9.9E37;229.5;0.5;38.7;50.0", "u_rms of channel 1", "negative"),
    ("230.1;229.5;0.5;38.7;NAN", "freq of channel 1", "not a number"),
    ("230.1;NINF;0.5;38.7;50", "u_mean of channel 1", "negative"),  # only the strict parser reads NINF
])
def test_special_values_raise_over_range(reply: str, quantity: str, words: str) -> None:
    analyser, _ = _analyser(reply)
    with pytest.raises(OverRange) as info:
        analyser.snapshot()
    assert info.value.quantity == quantity and words in info.value.message
    assert info.value.instrument == "analyser" and info.value.command == ONE


def test_over_range_on_a_later_channel_names_it() -> None:
    reply = "230,230,230;229,229,229;0.5,0.5,0.5;38,9.91E37,38;50,50,50"
    analyser, _ = _analyser(reply, channels=(1, 2, 3))
    with pytest.raises(OverRange, match="p of channel 2 is not a number"):
        analyser.snapshot()


@pytest.mark.parametrize("reply, why", [
    ("230.1;229.5;0.512;38.7", "expected 5 group"),
    ("230.1;229.5;0.512;38.7;50.0;1", "expected 5 group"),
    ("230.1;229.5;0.5x12;38.7;50.0", "not a SCPI number"),
    ("230.1;229.5;0.512;38.7;5_0", "'_' is not part of a SCPI number"),
    ("", "expected 5 group"),
    ("230.1;229.5;0.512;38.7;50.0,50.0", "not a SCPI number"),
])
def test_garbled_replies_are_protocol_errors(reply: str, why: str) -> None:
    analyser, _ = _analyser(reply)
    with pytest.raises(ProtocolError, match=why):
        analyser.snapshot()


def test_garbled_channel_lists_are_protocol_errors() -> None:
    analyser, _ = _analyser("230,230;229,229,229;0.5,0.5,0.5;38,38,38;50,50,50", channels=(1, 2, 3))
    with pytest.raises(ProtocolError, match="expected 3 value"):
        analyser.snapshot()


def test_every_numeric_form_in_a_snapshot() -> None:
    analyser, _ = _analyser("+2.301E+02;229;#H1;.5;50.")
    assert analyser.snapshot().channels[0] == ChannelReading(230.1, 229.0, 1.0, 0.5, 50.0)


def test_ranges_and_averaging_commands() -> None:
    fake = FakeTransport(lambda cmd: '0,"No error"' if cmd == "SYSTem:ERRor?" else None)
    analyser = PowerAnalyser(fake, "analyser")
    analyser.set_ranges(voltage=600, current=5)
    analyser.set_ranges(current=0.5)
    analyser.set_averaging(0.25)
    assert [c for c in fake.sent if c != "SYSTem:ERRor?"] == [
        "SENSe:VOLTage:RANGe 600.0", "SENSe:CURRent:RANGe 5.0", "SENSe:CURRent:RANGe 0.5", "SENSe:AVERage:TIME 0.25"]
    with pytest.raises(ValueError):
        analyser.set_averaging(0)


# --- dialogues with the pyvisa-sim definitions ------------------------------------------------


def test_sim_generic_analyser(sim_rm) -> None:
    rm = sim_rm("generic-power-analyser")
    with open_instrument("power_analyser", GENERIC, "generic", "analyser", rm=rm) as analyser:
        assert analyser.identify().model == "PA-3000"
        assert analyser.snapshot().channels == (ChannelReading(230.1, 229.5, 0.512, 38.7, 50.0),)
        analyser.set_ranges(300, 2)
        assert analyser.ranges() == (300.0, 2.0)
        analyser.set_averaging(1.5)
        assert analyser.averaging() == 1.5
        with pytest.raises(InstrumentReportedError) as info:
            analyser.set_ranges(current=500)
        assert info.value.code == -222 and info.value.command == "SENSe:CURRent:RANGe 500.0"
        assert analyser.ranges() == (300.0, 2.0)


def test_sim_generic_analyser_three_channels(sim_rm) -> None:
    rm = sim_rm("generic-power-analyser")
    with open_instrument("power_analyser", GENERIC, "generic", "analyser", rm=rm, channels=(1, 2, 3)) as analyser:
        channels = analyser.snapshot().channels
        assert [c.u_rms for c in channels] == [230.1, 230.4, 229.9]
        assert [c.i_rms for c in channels] == [0.512, 0.498, 0.505]


@pytest.mark.parametrize("channels, message", [
    ((1,), "i_rms of channel 1 is over range (9.9E37)"),
    ((2,), "u_rms of channel 2 is over range, negative"),
    ((1, 2, 3), "p of channel 2 is not a number"),
])
def test_sim_analyser_that_answers_over_range(sim_rm, channels, message: str) -> None:
    rm = sim_rm("generic-power-analyser")
    with open_instrument("power_analyser", OVERLOADED, "generic", "analyser", rm=rm, channels=channels) as analyser:
        with pytest.raises(OverRange, match=message.replace("(", r"\(").replace(")", r"\)")):
            analyser.snapshot()


def test_sim_compact_analyser(sim_rm) -> None:
    rm = sim_rm("compact-power-analyser")
    with open_instrument("power_analyser", COMPACT, "compact-power-analyser", "analyser", rm=rm,
                         channels=(1, 2, 3)) as analyser:
        assert analyser.identify().model == "PA-C3"  # matches the profile's expect
        channels = analyser.snapshot().channels
        assert channels[0] == ChannelReading(230.1, 229.5, 0.512, 38.7, 50.0)
        assert channels[2].p == 38.2
        analyser.set_ranges(250, 1.5)
        assert analyser.ranges() == (250.0, 1.5)
        with pytest.raises(InstrumentReportedError, match='-222,"Data out of range"'):
            analyser.set_averaging(100)
    with open_instrument("power_analyser", COMPACT, "compact-power-analyser", "analyser", rm=rm,
                         channels=(2,)) as analyser:
        with pytest.raises(OverRange, match="i_rms of channel 2"):
            analyser.snapshot()
