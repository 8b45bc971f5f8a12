"""Fixtures for the simulated bay: a bay on loopback sockets and pyvisa-py sessions to it.

The bay runs on a stepped clock: its time moves only when a test sleeps, so what a test sees
depends on the calls it makes, not on how fast the host runs them. Each write is confirmed
(``*OPC?`` on the connection that wrote) before the call returns: writes on different sockets
are otherwise not ordered, and a write not yet applied when the clock moves would take effect
late.
"""

from __future__ import annotations

import contextlib
from dataclasses import dataclass
from typing import Iterator

import pytest
import pyvisa

from harness.common.clock import SteppedClock
from harness.sim.bay import Bay
from harness.sim.scenario import Scenario, load_scenario
from harness.sim.server import SimServer

SNAPSHOT = ("MEASure:VOLTage:AC? (@1);:MEASure:VOLTage:MEAN? (@1);:MEASure:CURRent:AC? (@1);"
            ":MEASure:POWer:AC? (@1);:MEASure:FREQuency? (@1)")


class Session:
    """One instrument's pyvisa session whose ``write`` returns once the instrument has applied it."""

    def __init__(self, resource: pyvisa.resources.MessageBasedResource):
        self.resource = resource

    def write(self, command: str) -> None:
        reply = self.resource.query(f"{command};*OPC?")
        assert reply.rsplit(";", 1)[-1] == "1", f"'{command}' not confirmed: {reply!r}"

    def query(self, command: str) -> str:
        return self.resource.query(command)

    @property
    def timeout(self) -> float:
        return self.resource.timeout

    @timeout.setter
    def timeout(self, milliseconds: float) -> None:
        self.resource.timeout = milliseconds


@dataclass
class LiveBay:
    bay: Bay
    clock: SteppedClock
    resources: dict[str, str]
    sessions: dict[str, Session]

    def __getitem__(self, role: str) -> Session:
        return self.sessions[role]

    def snapshot(self) -> tuple[float, float, float, float, float]:
        u, um, i, p, f = (float(x) for x in self["analyser"].query(SNAPSHOT).split(";"))
        return u, um, i, p, f

    def settle_at(self, volts: float, bay_seconds: float = 2.0) -> tuple[float, ...]:
        """Set the source, wait for slew + settling, wait one update, read a snapshot."""
        src = self.bay.source
        self["source"].write(f"VOLT {volts:.6g}")
        span = abs(volts - src.output) / src.slew + 6 * src.spec.settling_time_constant
        self.clock.sleep(span + bay_seconds)
        return self.snapshot()


@contextlib.contextmanager
def live_bay(scenario: Scenario | str = "default", faults: tuple = ()) -> Iterator[LiveBay]:
    if isinstance(scenario, str):
        scenario = load_scenario(scenario)
    clock = SteppedClock()
    bay = Bay(scenario, clock, faults)
    rm = pyvisa.ResourceManager("@py")
    with SimServer(bay) as server:
        resources = server.resources()
        opened = {role: rm.open_resource(res, read_termination="\n", write_termination="\n", timeout=3000)
                  for role, res in resources.items()}
        sessions = {role: Session(resource) for role, resource in opened.items()}
        try:
            yield LiveBay(bay, clock, resources, sessions)
        finally:
            for resource in opened.values():
                with contextlib.suppress(Exception):
                    resource.close()
            rm.close()


@pytest.fixture
def default_bay() -> Iterator[LiveBay]:
    with live_bay() as lb:
        yield lb


@pytest.fixture
def make_bay():
    """``with make_bay(scenario, faults) as lb:`` for tests that need their own bay."""
    return live_bay
