"""The analyser's ratio-test commands and bay control's tap, against the generic profiles: what
goes on the wire, and replies that cannot be a reading raise the driver's errors."""

from __future__ import annotations

import pytest

from drivers.bay_control import BayControl
from drivers.errors import NotSupported, OverRange, ProtocolError
from drivers.power_analyser import PowerAnalyser
from drivers.transport import FakeTransport


def analyser(replies: dict[str, str]) -> tuple[PowerAnalyser, FakeTransport]:
    fake = FakeTransport(lambda c: replies.get(c.split(" ")[0].rstrip("?") + ("?" if "?" in c else ""),
                                                  '0,"No error"' if c.startswith("SYST") else None))
    return PowerAnalyser(fake, "analyser", "generic"), fake


def test_voltages_of_a_channel_list_in_one_query() -> None:
    pa, fake = analyser({"MEASure:VOLTage:AC?": "400.1,15.27"})
    assert pa.voltages((1, 4)) == (400.1, 15.27)
    assert fake.sent[-1] == "MEASure:VOLTage:AC? (@1,4)"


@pytest.mark.parametrize("reply, error", [("400.1", ProtocolError), ("400.1,9.9E37", OverRange),
                                          ("400.1,abc", ProtocolError)])
def test_voltages_that_are_not_readings_raise(reply, error) -> None:
    pa, _ = analyser({"MEASure:VOLTage:AC?": reply})
    with pytest.raises(error):
        pa.voltages((1, 4))


def test_phase_angle_and_channel_range() -> None:
    pa, fake = analyser({"MEASure:VOLTage:PHASe?": "30.0"})
    assert pa.phase_angle(1, 4) == 30.0 and fake.sent[-1] == "MEASure:VOLTage:PHASe? (@1,4)"
    pa.set_channel_voltage_range(15.0, (4, 5, 6))
    assert "SENSe:VOLTage:RANGe 15.0,(@4,5,6)" in fake.sent


def test_a_phase_angle_outside_a_turn_is_refused() -> None:
    pa, _ = analyser({"MEASure:VOLTage:PHASe?": "390"})
    with pytest.raises(ProtocolError, match="-180..180"):
        pa.phase_angle(1, 4)


def test_the_compact_profile_has_no_ratio_commands() -> None:
    pa = PowerAnalyser(FakeTransport(lambda c: None), "analyser", "compact-power-analyser")
    with pytest.raises(NotSupported):
        pa.voltages((1, 2))


def test_bay_control_moves_the_tap() -> None:
    fake = FakeTransport(lambda c: '0,"No error"' if c.startswith("SYST") else "2" if c == "TAP:POSition?" else None)
    control = BayControl(fake, "bay", "generic-bay-control")
    control.set_tap(-2)
    assert "TAP:POSition -2" in fake.sent and control.tap() == 2
    with pytest.raises(ValueError):
        control.set_tap(1.5)  # type: ignore[arg-type]
