"""The on-load tap changer's driver against the simulated drive on loopback sockets, on a
stepped clock: a move takes its bay time (3 s per step in the scenarios) and the driver's wait
moves only that clock, so nothing here depends on how fast the host runs. Also what is refused
before anything is sent, and replies that cannot be a tap."""

from __future__ import annotations

from typing import Iterator

import pytest

from drivers import InstrumentReportedError, NotReached, ProtocolError, TapChanger, open_instrument
from drivers.profile import load_profile, short_form
from drivers.tap_changer import POLL_INTERVAL_S
from drivers.transport import FakeTransport
from harness.common.clock import SteppedClock
from harness.sim.bay import Bay
from harness.sim.faults import FaultSpec
from harness.sim.scenario import load_scenario
from harness.sim.server import SimServer

GUARD_TIMEOUT_S = 5.0  # real seconds: only a stuck simulated instrument reaches it


class Drive:
    def __init__(self, faults: tuple[FaultSpec, ...] = (), move_timeout_s: float = 30.0,
                 taps: tuple[int, int] | None = (-2, 2)):
        self.clock = SteppedClock()
        self.bay = Bay(load_scenario("three-phase"), self.clock, faults)
        self.server = SimServer(self.bay)
        resource = self.server.start()["tap_changer"]
        self.changer: TapChanger = open_instrument(  # type: ignore[assignment]
            "tap_changer", resource, "generic", "tap changer", timeout_s=GUARD_TIMEOUT_S, clock=self.clock,
            move_timeout_s=move_timeout_s, taps=taps)

    def close(self) -> None:
        self.changer.close()
        self.server.stop()


@pytest.fixture
def drive() -> Iterator[Drive]:
    d = Drive()
    yield d
    d.close()


def test_a_move_waits_for_the_drive_and_reads_the_tap_back(drive: Drive) -> None:
    step_time = drive.bay.scenario.bay.tap_change_time
    assert drive.changer.identify().model == "SIM-TC6" and drive.changer.position() == 0
    watched: list[float] = []
    assert drive.changer.move_to(-2, watch=lambda: watched.append(drive.clock.now())) == -2
    assert drive.bay.tap == -2 and not drive.changer.is_moving()
    # Two steps take 2 x 3 s of bay time; the driver asks every 0.5 s, so it saw the end within one poll.
    assert 2 * step_time <= drive.clock.now() < 2 * step_time + POLL_INTERVAL_S + 1e-9
    assert len(watched) == round(2 * step_time / POLL_INTERVAL_S)


def test_the_drive_reports_its_range_and_the_unit_must_fit_in_it(drive: Drive) -> None:
    assert drive.changer.position_range() == (-2, 2)
    drive.changer.check_range()
    wider = TapChanger(drive.changer.transport, "tap changer", "generic", clock=drive.clock, taps=(-4, 2))
    with pytest.raises(NotReached, match="reaches taps -2 to 2, the unit has taps -4 to 2"):
        wider.check_range()


def test_a_tap_outside_the_units_range_is_refused_before_anything_is_sent() -> None:
    fake = FakeTransport(lambda c: "0")
    changer = TapChanger(fake, "tap changer", "generic", clock=SteppedClock(), taps=(-2, 2))
    for tap in (3, -3):
        with pytest.raises(ValueError, match=f"tap {tap} is outside the unit's taps -2 to 2; nothing sent"):
            changer.move_to(tap)
    with pytest.raises(ValueError, match="whole number"):
        changer.move_to(1.0)  # type: ignore[arg-type]
    assert fake.sent == []


def test_a_drive_still_moving_past_its_timeout_names_the_instrument_and_command() -> None:
    d = Drive(move_timeout_s=1.0)   # the simulated drive takes 3 s per step
    try:
        with pytest.raises(NotReached) as caught:
            d.changer.move_to(1)
        assert caught.value.instrument == "tap changer" and caught.value.command == "TAPChanger:POSition 1"
        assert "still moving 1 s after the command" in str(caught.value)
    finally:
        d.close()


def test_a_stuck_drive_is_an_instrument_error_naming_the_tap_it_stopped_on() -> None:
    d = Drive(faults=(FaultSpec(name="tap-changer-stuck"),))
    try:
        with pytest.raises(NotReached) as caught:
            d.changer.move_to(2)
        assert str(caught.value) == ("tap changer after 'TAPChanger:POSition 2': asked for tap 2, "
                                     "the drive stopped on tap 0")
        assert d.bay.tap == 0 and d.clock.now() >= 2 * d.bay.scenario.bay.tap_change_time  # it ran its time
    finally:
        d.close()


def test_a_move_the_drive_refuses_is_reported_from_its_error_queue(drive: Drive) -> None:
    unbounded = TapChanger(drive.changer.transport, "tap changer", "generic", clock=drive.clock, taps=(-5, 5))
    with pytest.raises(InstrumentReportedError, match=r"-222,\"Data out of range;tap 5 is not a tap of the unit"):
        unbounded.move_to(5)


@pytest.mark.parametrize("reply", ["1.5", "abc", ""])
def test_a_position_that_is_not_a_whole_number_is_a_protocol_error(reply: str) -> None:
    changer = TapChanger(FakeTransport(lambda c: reply), "tap changer", "generic", clock=SteppedClock())
    with pytest.raises(ProtocolError):
        changer.position()


def test_the_generic_profile_and_its_short_forms() -> None:
    profile = load_profile("generic", "tap_changer")
    assert profile.command("set_position") == "TAPChanger:POSition {value}"
    assert profile.command("moving") == "TAPChanger:MOVing?"
    assert short_form(profile.commands.lowest) == "TAPC:POS? MINimum"
    assert short_form(profile.commands.highest) == "TAPC:POS? MAXimum"


def test_the_dialogue_of_the_generic_profile_on_pyvisa_sim(sim_rm) -> None:
    with open_instrument("tap_changer", "TCPIP0::sim-tap-changer::5025::SOCKET", "generic", "tap changer",
                         rm=sim_rm("generic-tap-changer"), clock=SteppedClock(), taps=(-2, 2)) as changer:
        assert isinstance(changer, TapChanger) and changer.identify().model == "TC-SIM"
        assert changer.position_range() == (-4, 4)
        changer.check_range()
        assert changer.move_to(-2) == -2 and changer.move_to(2) == 2 and changer.position() == 2
